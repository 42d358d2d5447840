/* Figures: time charts (stacked panels sharing the x axis) and plate heat maps, drawn with
 * PLplot's cairo driver from plain arrays and written atomically as PNG, SVG or PDF.
 * PLplot keeps process-wide state: draw figures from one thread only. */
#ifndef TP_PLOT_H
#define TP_PLOT_H

#include <stddef.h>

#include "diag.h"
#include "status.h"

#define TP_PLOT_CHART_WIDTH 1200 /* default chart width, px (PNG) or pt (SVG, PDF) */
#define TP_PLOT_CHART_HEIGHT 800 /* default chart height, px or pt */
#define TP_PLOT_MAP_WIDTH 1000   /* default heat-map width, px or pt */
#define TP_PLOT_MAP_HEIGHT 800   /* default heat-map height, px or pt */
#define TP_PLOT_SIZE_MIN 200     /* smallest width or height accepted, px or pt */
#define TP_PLOT_SIZE_MAX 6000    /* largest width or height accepted, px or pt */
#define TP_PLOT_LABEL_MAX 160    /* longest label drawn, bytes; longer ones are cut */
#define TP_PLOT_PANELS_MAX 8     /* panels in one chart */
#define TP_PLOT_LEGEND_MAX 12    /* legend entries per panel; further series get none */
#define TP_PLOT_CELLS_MAX 250000 /* cells in one heat map (nx * ny) */
#define TP_PLOT_TITLE_LINES 2    /* a long title wraps onto at most this many lines */
#define TP_PLOT_LINE_BYTES 640   /* bytes of one wrapped title line, NUL included */
#define TP_PLOT_VLINES_MAX 8     /* marked times (vertical lines) in one chart */
#define TP_PLOT_BARS_WIDTH 1000  /* default bar-chart width, px or pt */
#define TP_PLOT_BARS_MAX 24      /* bars in one bar chart */

/* One curve. Points with a non-finite x or y are skipped (a line breaks there). */
#define TP_PLOT_GAPS 8 /* tp_plot_series.dash flag: intended gaps */

typedef struct tp_plot_series {
    const char *label;   /* legend text; NULL: no legend entry */
    const double *x, *y; /* n points; x in the chart's x unit */
    size_t n;
    int dash;       /* 0 solid, 1 dashed, 2 dotted; with TP_PLOT_GAPS or'ed in, its non-finite
                       points are gaps meant as such (a heater switched off), not warned about */
    int markers;    /* nonzero: markers instead of a line (measured data) */
    int right_axis; /* nonzero: plotted against the panel's right axis (y2label) */
} tp_plot_series;

/* A horizontal reference line (setpoint, threshold), labelled, on the left axis. */
typedef struct tp_plot_hline {
    const char *label;
    double y;
} tp_plot_hline;

/* A vertical reference line across every panel (a time worth marking), labelled in the top
 * panel; x in the chart's x unit. A non-finite x is left out. */
typedef struct tp_plot_vline {
    const char *label;
    double x;
} tp_plot_vline;

/* One panel of a chart. */
typedef struct tp_plot_panel {
    const char *ylabel, *y2label; /* y2label NULL: no right axis */
    const tp_plot_series *series;
    size_t n_series;
    const tp_plot_hline *hlines;
    size_t n_hlines;
    double height_share; /* relative height of this panel; 0 = equal share */
} tp_plot_panel;

/* A chart: panels stacked vertically (the first on top), sharing the x axis. */
typedef struct tp_plot_chart {
    const char *title, *xlabel;
    const tp_plot_panel *panels;
    size_t n_panels;
    int width, height; /* pixels; 0 means TP_PLOT_CHART_WIDTH x TP_PLOT_CHART_HEIGHT */
} tp_plot_chart;

/* Break `title` into at most `max_lines` (1..TP_PLOT_TITLE_LINES) lines of at most `width`
 * characters (UTF-8 characters, width >= 8), at blanks (dropped) or after '/' (kept), or inside
 * a word longer than a line. When the text still does not fit, the last line keeps its start and
 * its end (a file name) and loses its middle to an ellipsis. Control characters count as
 * blanks. Returns the number of lines written into lines[0..] (0 for an empty title). */
int tp_plot_wrap_title(const char *title, size_t width, int max_lines,
                       char lines[][TP_PLOT_LINE_BYTES]);

/* A text label beside a marker, in a frame with the same scale on both axes (mm of the page). */
typedef struct tp_plot_label {
    double x, y;   /* the marker */
    double w, h;   /* size of the label's box */
    double x0, y0; /* out: lower-left corner of the placed box */
} tp_plot_label;

/* Place each label beside its marker, `gap` away from it: the first of right, left (centred on
 * the marker's height), above, below (centred on its x, clear of the side places), upper right,
 * lower right, upper left, lower left that stays inside [fx0, fx1] x [fy0, fy1], overlaps no
 * label placed before it and covers no marker (a square of half-side `gap` around each); when
 * every place collides, the one with the least overlap. Labels are placed in order, so the first
 * keeps its usual place. */
void tp_plot_place_labels(tp_plot_label *labels, size_t n, double gap, double fx0, double fy0,
                          double fx1, double fy1);

/* TP_OK when `path` names a figure format tepid can write (.png .svg .pdf), else
 * TP_ERR_USAGE with a message. Lets commands refuse a bad name before any work. */
tp_status tp_plot_check_path(const char *path, tp_diag *d);

/* Write `chart` to `path`; the format comes from the extension (.png .svg .pdf, any case).
 * A PNG is width x height pixels; SVG and PDF pages are width x height points. A title too
 * long for the width wraps (tp_plot_wrap_title) and is never clipped.
 * Checks the chart first: an unknown extension, missing arrays, a series without points, a
 * right-axis series in a panel without y2label, a negative or non-finite height share, a size
 * outside TP_PLOT_SIZE_MIN..TP_PLOT_SIZE_MAX, more than TP_PLOT_PANELS_MAX panels return
 * TP_ERR_USAGE; a series of more than INT_MAX points is TP_ERR_LIMIT. Non-finite points are
 * skipped (with a warning); a panel with nothing finite to draw is an error. A height share of 0
 * counts as 1.
 * Atomic: PLplot draws into a temporary file beside `path` (tp_outfile_reserve), which is renamed
 * onto `path` only when drawing succeeded and the file is complete; on any failure (TP_ERR_IO for
 * drawing and file errors) no file is left and an existing `path` is untouched.
 * Nothing is written to standard output. Not thread-safe: PLplot state is global. */
tp_status tp_plot_chart_write(const char *path, const tp_plot_chart *chart, tp_diag *d);

/* The same with marked times: `vlines[0..n_vlines)` (at most TP_PLOT_VLINES_MAX; further ones
 * are left out) are drawn as vertical lines through every panel and labelled along the line in
 * the top panel (tp_plot_place_labels). Legends and reference-line labels keep clear of the
 * marked times and their labels. */
tp_status tp_plot_chart_write_marked(const char *path, const tp_plot_chart *chart,
                                     const tp_plot_vline *vlines, size_t n_vlines, tp_diag *d);

/* Where tp_plot_chart_write puts each panel's legend and reference-line labels, and which
 * palette colour each series takes; boxes are normalised to the panel's plotting area (0 to 1
 * along x and y). */
typedef struct tp_plot_box {
    double x0, x1, y0, y1; /* x0 > x1: nothing there */
} tp_plot_box;

typedef struct tp_plot_panel_layout {
    double ylo, yhi;     /* the y axis as drawn (a legend may have grown it to clear the data) */
    double y2lo, y2hi;   /* the right axis as drawn (grown alike); 0 and 0 without one */
    int legend_columns;  /* 0: no legend */
    tp_plot_box legend;
    tp_plot_box *labels; /* per reference line: its label */
    int *label_on_line;  /* per reference line: nonzero when the label sits on its line */
    int *colour;         /* per series: palette index (series with one label share one) */
} tp_plot_panel_layout;

typedef struct tp_plot_layout {
    double xlo, xhi; /* the x axis as drawn */
    size_t n_panels;
    tp_plot_panel_layout *panels;
    /* per marked time (tp_plot_chart_layout_marked, in the order given): its label's box in
     * the top panel; x0 > x1 when it is left out (off the x range, unlabelled, beyond
     * TP_PLOT_VLINES_MAX) */
    tp_plot_box marks[TP_PLOT_VLINES_MAX];
} tp_plot_layout;

/* Lay `chart` out as tp_plot_chart_write would for `path` (its extension and size checked the
 * same way), without drawing; free with tp_plot_layout_clear. */
tp_status tp_plot_chart_layout(const char *path, const tp_plot_chart *chart, tp_plot_layout *out,
                               tp_diag *d);
/* The same for tp_plot_chart_write_marked. */
tp_status tp_plot_chart_layout_marked(const char *path, const tp_plot_chart *chart,
                                      const tp_plot_vline *vlines, size_t n_vlines,
                                      tp_plot_layout *out, tp_diag *d);
void tp_plot_layout_clear(tp_plot_layout *l);

/* A heat map of a plate. */
typedef struct tp_plot_map {
    const char *title, *xlabel, *ylabel, *zlabel; /* zlabel: colour-bar label */
    const double *z;                              /* z[j * nx + i] is cell (i, j) */
    size_t nx, ny;                                /* i along x, j along y */
    double x0, x1, y0, y1;                        /* extent of the cells (axis units, e.g. mm) */
    int contours;                                 /* nonzero: also draw labelled contour lines */
    const double *mark_x, *mark_y;                /* markers (sensor, hottest, coldest cell) ... */
    const char *const *mark_label; /* ... with labels (NULL array or entry: no label) */
    size_t n_marks;
    int width, height; /* pixels; 0 means TP_PLOT_MAP_WIDTH x TP_PLOT_MAP_HEIGHT */
    int free_aspect;   /* nonzero: x and y are unrelated quantities (a map over two swept
                          parameters): the map fills the frame instead of keeping the scale */
} tp_plot_map;

/* Write a heat map with a colour bar and the plate outline (the extent rectangle) to `path`,
 * with x and y drawn to the same scale (unless free_aspect). Format, size limits, atomic write and status as for
 * tp_plot_chart_write. Non-finite cells are left blank (and disable contours, with a warning);
 * markers off the map (or not finite) are left out with a warning;
 * a map without any finite cell, an extent that is not finite or has x1 < x0 or y1 < y0 is
 * TP_ERR_USAGE, more than TP_PLOT_CELLS_MAX cells TP_ERR_LIMIT. An extent of zero width is
 * widened. The plate keeps its shape unless it is so slender that a side would be unreadable. */
tp_status tp_plot_map_write(const char *path, const tp_plot_map *map, tp_diag *d);

/* A horizontal bar chart: one bar per category (top to bottom in the order given), each
 * labelled with its category on the left and its value at its end. */
typedef struct tp_plot_bars {
    const char *title, *xlabel;   /* xlabel: the value axis with its unit, e.g. "power (W)" */
    const char *const *label;     /* per bar: its category */
    const char *const *value_text; /* per bar: the text written at its end (NULL: the value) */
    const double *value;          /* per bar, in the axis unit */
    size_t n;
    int width, height; /* pixels; 0 means TP_PLOT_BARS_WIDTH and a height for n bars */
} tp_plot_bars;

/* Write a bar chart to `path`. Format, size limits, atomic write and status as for
 * tp_plot_chart_write; no bars, more than TP_PLOT_BARS_MAX, a missing label or a value that is
 * not finite is TP_ERR_USAGE. */
tp_status tp_plot_bars_write(const char *path, const tp_plot_bars *bars, tp_diag *d);

#endif

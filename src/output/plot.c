/* Figures with PLplot's cairo driver: time charts of stacked panels and plate heat maps, drawn
 * from plain arrays into a temporary file that is renamed onto the target only when complete.
 * PLplot keeps its state in globals, and so does this file: one thread only. */
#include "plot.h"

#include <fcntl.h>
#include <limits.h>
#include <math.h>
#include <setjmp.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <strings.h>
#include <unistd.h>

#include <plplot.h>

#include "dynlib.h"
#include "outfile.h"

/* ---- PLplot, opened at the first figure ---------------------------------------------------
 * tepid does not link PLplot: a run that draws nothing would pay at every start-up for loading
 * it and the dozen libraries it needs (a third of the 5-node demo's whole run before,
 * docs/performance.md). plot_run opens it (dynlib.h) under the name the build found
 * (TP_PLPLOT_SONAME, e.g. libplplot.so.17, in the Debian package TP_PLPLOT_PACKAGE) and fills
 * this table; the names plplot.h
 * gives PLplot's functions (plinit is c_plinit) then point into the table, so the drawing code
 * below reads as plain PLplot calls, each checked against plplot.h's prototype. */
#define PLOT_PLPLOT_API(X)                                                                         \
    X(c_pl_setcontlabelformat) X(c_pl_setcontlabelparam) X(c_pladv) X(c_plbox) X(c_plcol0)        \
    X(c_plcolorbar) X(c_plcont) X(c_plend) X(c_plfill) X(c_plimagefr) X(c_plinit) X(c_pllegend)    \
    X(c_plline) X(c_pllsty) X(c_plmtex) X(c_plptex) X(c_plschr) X(c_plscmap0n) X(c_plscmap1l)      \
    X(c_plscmap1n) X(c_plscol0) X(c_plsdev) X(c_plsfnam) X(c_plsfont) X(c_plslabelfunc)            \
    X(c_plspage) X(c_plspause) X(c_plstring) X(c_plsvpa) X(c_plwidth) X(c_plwind) X(plgFileDevs)   \
    X(plsabort) X(plsexit) X(pltr1)

static struct plot_plplot {
    PLOT_PLPLOT_API(TP_DYNLIB_MEMBER)
} plot_pl;
#define PLOT_API_ENTRY(f) TP_DYNLIB_ENTRY(struct plot_plplot, f)
static const tp_dynlib_fn plot_pl_fns[] = {PLOT_PLPLOT_API(PLOT_API_ENTRY)};

/* Open PLplot and fill plot_pl, once. Returns 0, or -1 with the reason in why. */
static int plot_load_plplot(char *why, size_t size)
{
    return tp_dynlib_load(TP_PLPLOT_SONAME, TP_PLPLOT_PACKAGE, &plot_pl, plot_pl_fns,
                          sizeof plot_pl_fns / sizeof plot_pl_fns[0], why, size);
}

/* From here on PLplot's names call through the table. */
#define c_pl_setcontlabelformat (*plot_pl.c_pl_setcontlabelformat)
#define c_pl_setcontlabelparam (*plot_pl.c_pl_setcontlabelparam)
#define c_pladv (*plot_pl.c_pladv)
#define c_plbox (*plot_pl.c_plbox)
#define c_plcol0 (*plot_pl.c_plcol0)
#define c_plcolorbar (*plot_pl.c_plcolorbar)
#define c_plcont (*plot_pl.c_plcont)
#define c_plend (*plot_pl.c_plend)
#define c_plfill (*plot_pl.c_plfill)
#define c_plimagefr (*plot_pl.c_plimagefr)
#define c_plinit (*plot_pl.c_plinit)
#define c_pllegend (*plot_pl.c_pllegend)
#define c_plline (*plot_pl.c_plline)
#define c_pllsty (*plot_pl.c_pllsty)
#define c_plmtex (*plot_pl.c_plmtex)
#define c_plptex (*plot_pl.c_plptex)
#define c_plschr (*plot_pl.c_plschr)
#define c_plscmap0n (*plot_pl.c_plscmap0n)
#define c_plscmap1l (*plot_pl.c_plscmap1l)
#define c_plscmap1n (*plot_pl.c_plscmap1n)
#define c_plscol0 (*plot_pl.c_plscol0)
#define c_plsdev (*plot_pl.c_plsdev)
#define c_plsfnam (*plot_pl.c_plsfnam)
#define c_plsfont (*plot_pl.c_plsfont)
#define c_plslabelfunc (*plot_pl.c_plslabelfunc)
#define c_plspage (*plot_pl.c_plspage)
#define c_plspause (*plot_pl.c_plspause)
#define c_plstring (*plot_pl.c_plstring)
#define c_plsvpa (*plot_pl.c_plsvpa)
#define c_plwidth (*plot_pl.c_plwidth)
#define c_plwind (*plot_pl.c_plwind)
#define plgFileDevs (*plot_pl.plgFileDevs)
#define plsabort (*plot_pl.plsabort)
#define plsexit (*plot_pl.plsexit)
#define pltr1 (*plot_pl.pltr1)

/* ---- look -------------------------------------------------------------------------------- */

#define PLOT_MM_PER_PX (25.4 / 72.0) /* page scale of PLplot's cairo driver (72 px/inch), mm/px */
#define PLOT_CHAR_MM 5.0        /* text height at the default size, mm of PLplot page (~14 px) */
#define PLOT_DIGIT_W 0.85       /* width of a digit in tick labels, character heights */
#define PLOT_TEXT_W 0.75        /* mean width of a letter in legend text, character heights */
#define PLOT_SCALE_MIN 0.6      /* smallest text and line scale for small figures, - */
#define PLOT_SCALE_MAX 4.0      /* largest text and line scale for large figures, - */
#define PLOT_LINE_W 2.0         /* series line width at the default size, PLplot width units */
#define PLOT_AXIS_W 1.0         /* frame and grid line width at the default size */
#define PLOT_OUTLINE_W 2.5      /* plate outline width at the default size */
#define PLOT_MARK_SCALE 0.7     /* marker glyph size, character heights */
#define PLOT_LEGEND_SCALE 0.9   /* legend text size, character heights */
#define PLOT_LEGEND_SPACING 1.9 /* legend line pitch, legend character heights */
#define PLOT_TITLE_SCALE 1.2    /* title size, character heights */
#define PLOT_TITLE_W 0.8        /* width of a title character, title character heights: the sans
                                   font measured 0.64 (prose) to 0.72 (a file path) on lines of
                                   95 characters; 0.8 leaves room for capitals */
#define PLOT_TITLE_PITCH 1.5    /* line pitch of a wrapped title, title character heights */
#define PLOT_TITLE_MARGIN 1.0   /* free room left and right of a title, character heights */
#define PLOT_LABEL_GAP 0.6      /* marker or line to its label, character heights */
#define PLOT_LABEL_APART 0.3    /* free room kept between two labels, character heights */
#define PLOT_VREF_STYLE 2       /* PLplot line style of marked times (short dashes) */
#define PLOT_LEGEND_CLEAR 0.02  /* data kept this far from a legend, share of the viewport */
#define PLOT_LEGEND_GAP 0.03    /* room left between a legend and the data it grew an axis to
                                   clear, share of the viewport (more than PLOT_LEGEND_CLEAR) */
#define PLOT_LEGEND_GROW 2.5    /* the most a panel's y range grows to clear its legend, times */
#define PLOT_PAD 0.05           /* room above and below the data in a panel, fraction of range */
#define PLOT_MAP_PAD 0.04       /* room around the plate in a heat map, fraction of longer side */
#define PLOT_LEVELS_MAX 32      /* contour levels at most */
#define PLOT_TEXT_SIZE (2 * TP_PLOT_LABEL_MAX + 24) /* escaped label plus a suffix, bytes */
#define PLOT_HEAD_SCAN 512 /* bytes read from the start of an output to find its magic */
#define PLOT_TAIL_SCAN 64  /* bytes read from the end of an output to find its trailer */

/* cmap0 entries. Series colours: the palette of Okabe and Ito (2008), "Color Universal Design",
 * safe for the common colour-vision deficiencies (RGB values from memory); its yellow is left
 * out (too pale on white), brown added as an eighth. */
enum { COL_BG, COL_INK, COL_GRID, COL_REF, COL_HALO, COL_SERIES, PLOT_NCOL0 = COL_SERIES + 8 };
static const PLINT plot_rgb[PLOT_NCOL0][3] = {
    {255, 255, 255}, /* background */
    {34, 34, 34},    /* frame, ticks, text */
    {222, 222, 222}, /* grid */
    {70, 70, 70},    /* reference lines */
    {255, 255, 255}, /* halo behind text on a heat map */
    {0, 114, 178},   /* blue */
    {213, 94, 0},    /* vermillion */
    {0, 158, 115},   /* bluish green */
    {204, 121, 167}, /* reddish purple */
    {230, 159, 0},   /* orange */
    {86, 180, 233},  /* sky blue */
    {0, 0, 0},       /* black */
    {140, 90, 40},   /* brown */
};

/* Marker glyphs, UTF-8: black circle, up triangle, square, diamond, down triangle. */
static const char *const plot_glyphs[] = {"\xe2\x97\x8f", "\xe2\x96\xb2", "\xe2\x96\xa0",
                                          "\xe2\x97\x86", "\xe2\x96\xbc"};
#define PLOT_NGLYPHS (sizeof plot_glyphs / sizeof plot_glyphs[0])

/* PLplot line styles (pllsty) for tp_plot_series.dash 0, 1, 2 and for reference lines. */
static const PLINT plot_dash_style[3] = {1, 3, 2};
#define PLOT_REF_STYLE 5

/* Heat-map colour scale, low to high: navy, teal blue, amber, red (our own choice, monotonic in
 * lightness up to amber so that the order reads in grey too). */
static const PLFLT plot_heat_pos[] = {0.0, 0.35, 0.7, 1.0};
static const PLFLT plot_heat_r[] = {0.10, 0.15, 0.98, 0.78};
static const PLFLT plot_heat_g[] = {0.15, 0.55, 0.78, 0.12};
static const PLFLT plot_heat_b[] = {0.45, 0.80, 0.25, 0.10};

/* ---- formats ----------------------------------------------------------------------------- */

typedef struct plot_format {
    const char *ext;    /* extension, lower case, with the dot */
    const char *device; /* PLplot device */
    const char *head;   /* what a complete file starts with ... */
    size_t head_len;
    int head_anywhere; /* ... or, when nonzero, holds within its first PLOT_HEAD_SCAN bytes */
    const char *tail;  /* found within the last PLOT_TAIL_SCAN bytes of a complete file */
} plot_format;

static const plot_format plot_formats[] = {
    /* PNG signature and the IEND chunk that ends every PNG: PNG specification (W3C, 2nd ed.,
     * ISO/IEC 15948:2003), sections 5.2 and 11.2.5. */
    {".png", "pngcairo", "\x89PNG\r\n\x1a\n", 8, 0, "IEND"},
    /* SVG: an XML document whose root element is svg (W3C SVG 1.1, section 5.1). */
    {".svg", "svgcairo", "<svg", 4, 1, "</svg>"},
    /* PDF header and end-of-file marker: ISO 32000-1:2008, sections 7.5.2 and 7.5.5. */
    {".pdf", "pdfcairo", "%PDF-", 5, 0, "%%EOF"},
};

/* The format for `path` from its extension, or NULL with an error reported. */
static const plot_format *format_for(const char *path, tp_diag *d)
{
    const char *dot = strrchr(path, '.');
    const char *slash = strrchr(path, '/');
    size_t i;
    if (dot && (!slash || dot > slash)) {
        for (i = 0; i < sizeof plot_formats / sizeof plot_formats[0]; i++)
            if (strcasecmp(dot, plot_formats[i].ext) == 0)
                return &plot_formats[i];
    }
    if (dot && (!slash || dot > slash))
        tp_diag_error(d, tp_diag_loc_none(), path, "name the figure file .png, .svg or .pdf",
                      "unknown figure format \"%s\"; allowed: .png .svg .pdf", dot);
    else
        tp_diag_error(d, tp_diag_loc_none(), path, "name the figure file .png, .svg or .pdf",
                      "no figure format in the file name; allowed: .png .svg .pdf");
    return NULL;
}

tp_status tp_plot_check_path(const char *path, tp_diag *d)
{
    return format_for(path, d) ? TP_OK : TP_ERR_USAGE;
}

/* The format for writing a `what` (`figure`, may be NULL) to `path` (may be NULL), or NULL with
 * an error reported. */
static const plot_format *figure_target(const char *path, const void *figure, const char *what,
                                        tp_diag *d)
{
    if (!path || !figure) {
        tp_diag_error(d, tp_diag_loc_none(), NULL, NULL, "no %s given for the %s",
                      path ? what : "file name", what);
        return NULL;
    }
    return format_for(path, d);
}

/* Nonzero when `file` looks like a complete output of format `f`: its magic bytes at the start
 * and its trailer at the end (a full disk leaves the trailer out). */
static int file_complete(const char *file, const plot_format *f)
{
    char head[PLOT_HEAD_SCAN + 1], tail[PLOT_TAIL_SCAN + 1];
    size_t nh, nt, i, tl = strlen(f->tail);
    long size;
    int ok = 0;
    FILE *fp = fopen(file, "rb");
    if (!fp)
        return 0;
    nh = fread(head, 1, PLOT_HEAD_SCAN, fp);
    if (fseek(fp, 0, SEEK_END) != 0 || (size = ftell(fp)) < 0)
        goto done;
    if (fseek(fp, size > PLOT_TAIL_SCAN ? size - PLOT_TAIL_SCAN : 0, SEEK_SET) != 0)
        goto done;
    nt = fread(tail, 1, PLOT_TAIL_SCAN, fp);
    if (f->head_anywhere) {
        for (i = 0; i + f->head_len <= nh && !ok; i++)
            ok = memcmp(head + i, f->head, f->head_len) == 0;
    } else {
        ok = nh >= f->head_len && memcmp(head, f->head, f->head_len) == 0;
    }
    if (ok) {
        ok = 0;
        for (i = 0; i + tl <= nt && !ok; i++)
            ok = memcmp(tail + i, f->tail, tl) == 0;
    }
done:
    fclose(fp);
    return ok;
}

/* ---- small helpers ----------------------------------------------------------------------- */

/* Copy `text` (may be NULL) for PLplot into `out` (PLOT_TEXT_SIZE bytes): PLplot's escape
 * character '#' doubled, control characters as spaces, cut at TP_PLOT_LABEL_MAX bytes on a
 * UTF-8 character boundary (the cairo driver refuses very long strings, on standard output). */
static void text_copy(char *out, const char *text)
{
    size_t n, i, o = 0;
    if (!text)
        text = "";
    n = strlen(text);
    if (n > TP_PLOT_LABEL_MAX) {
        n = TP_PLOT_LABEL_MAX;
        while (n > 0 && ((unsigned char)text[n] & 0xC0) == 0x80)
            n--;
    }
    for (i = 0; i < n; i++) {
        unsigned char c = (unsigned char)text[i];
        if (c == '#')
            out[o++] = '#';
        out[o++] = (char)(c < 0x20 || c == 0x7F ? ' ' : c);
    }
    out[o] = '\0';
}

/* Characters in a UTF-8 string (continuation bytes not counted). */
static size_t text_chars(const char *s)
{
    size_t n = 0;
    for (; s && *s; s++)
        n += ((unsigned char)*s & 0xC0) != 0x80;
    return n;
}

/* ---- title wrapping and label placement (no PLplot) --------------------------------------- */

static int blank_byte(unsigned char c)
{
    return c == ' ' || c < 0x20 || c == 0x7F;
}

/* Byte length of the UTF-8 character starting at s (1 for a stray continuation byte). */
static size_t char_bytes(const char *s)
{
    size_t n = 1;
    while (s[n] && ((unsigned char)s[n] & 0xC0) == 0x80)
        n++;
    return n;
}

/* Characters in s[0..len). */
static size_t span_chars(const char *s, size_t len)
{
    size_t i, n = 0;
    for (i = 0; i < len; i++)
        n += ((unsigned char)s[i] & 0xC0) != 0x80;
    return n;
}

/* Bytes of the first `chars` characters of s[0..len). */
static size_t span_bytes(const char *s, size_t len, size_t chars)
{
    size_t i = 0;
    while (i < len && chars > 0) {
        i += char_bytes(s + i);
        chars--;
    }
    return i < len ? i : len;
}

/* Copy s[0..len) into a line, control characters as blanks, blanks at both ends dropped. */
static void line_put(char *line, const char *s, size_t len)
{
    size_t i, o = 0;
    while (len > 0 && blank_byte((unsigned char)*s)) {
        s++;
        len--;
    }
    while (len > 0 && blank_byte((unsigned char)s[len - 1]))
        len--;
    for (i = 0; i < len && o + 1 < TP_PLOT_LINE_BYTES; i++)
        line[o++] = blank_byte((unsigned char)s[i]) ? ' ' : s[i];
    line[o] = '\0';
}

int tp_plot_wrap_title(const char *title, size_t width, int max_lines,
                       char lines[][TP_PLOT_LINE_BYTES])
{
    static const char ellipsis[] = "\xe2\x80\xa6"; /* U+2026, one character */
    size_t pos = 0, stop;
    int n = 0;
    if (!title)
        return 0;
    width = width < 8 ? 8 : width > TP_PLOT_LABEL_MAX - 1 ? TP_PLOT_LABEL_MAX - 1 : width;
    max_lines = max_lines < 1                     ? 1
                : max_lines > TP_PLOT_TITLE_LINES ? TP_PLOT_TITLE_LINES
                                                  : max_lines;
    stop = strlen(title);
    while (stop > 0 && blank_byte((unsigned char)title[stop - 1]))
        stop--;
    while (pos < stop && blank_byte((unsigned char)title[pos]))
        pos++;
    while (pos < stop && n < max_lines) {
        const char *s = title + pos;
        size_t len = stop - pos, cut = 0, i, chars;
        if (span_chars(s, len) <= width) {
            line_put(lines[n++], s, len);
            break;
        }
        if (n == max_lines - 1) {
            /* The last line: its start, an ellipsis, and its end (a file name stays whole). */
            size_t head = (width - 1) * 2 / 5, tail = width - 1 - head;
            size_t hb = span_bytes(s, len, head);
            size_t tb = span_bytes(s, len, span_chars(s, len) - tail);
            char *line = lines[n++];
            line_put(line, s, hb);
            strcat(line, ellipsis);
            line_put(line + strlen(line), s + tb, len - tb);
            break;
        }
        /* The last break within `width` characters: before a blank, or after a '/' when no
         * blank leaves at least half a line (a path is cut at its slashes, prose at its blanks). */
        {
            size_t blank = 0, slash = 0, blank_chars = 0;
            for (i = 0, chars = 0; i < len && chars <= width; i += char_bytes(s + i), chars++) {
                if (i > 0 && blank_byte((unsigned char)s[i])) {
                    blank = i;
                    blank_chars = chars;
                }
                if (i > 0 && s[i - 1] == '/')
                    slash = i;
            }
            cut = blank > 0 && 2 * blank_chars >= width ? blank : blank > slash ? blank : slash;
        }
        if (cut == 0)
            cut = span_bytes(s, len, width); /* one word longer than a line */
        line_put(lines[n++], s, cut);
        pos += cut;
        while (pos < stop && blank_byte((unsigned char)title[pos]))
            pos++;
    }
    return n;
}

/* Area of the intersection of two boxes given by their corners. */
static double box_overlap(double ax0, double ay0, double ax1, double ay1, double bx0, double by0,
                          double bx1, double by1)
{
    double w = fmin(ax1, bx1) - fmax(ax0, bx0), h = fmin(ay1, by1) - fmax(ay0, by0);
    return w > 0.0 && h > 0.0 ? w * h : 0.0;
}

void tp_plot_place_labels(tp_plot_label *labels, size_t n, double gap, double fx0, double fy0,
                          double fx1, double fy1)
{
    /* Candidate places: offsets of the box's lower-left corner from the marker, in units of
     * (w, h) and of gap: right, left, above, below, then the four corners. Places above and
     * below clear the band of the side places (half a height either way of the marker), so
     * three labels on one marker fit. */
    static const double place[8][4] = {
        /* x: w share, gaps; y: h share, gaps */
        {0.0, 1.0, -0.5, 0.0},  {-1.0, -1.0, -0.5, 0.0}, {-0.5, 0.0, 0.5, 0.5},
        {-0.5, 0.0, -1.5, -0.5}, {0.0, 1.0, 0.5, 0.5},   {0.0, 1.0, -1.5, -0.5},
        {-1.0, -1.0, 0.5, 0.5}, {-1.0, -1.0, -1.5, -0.5},
    };
    size_t i, j;
    int c;
    for (i = 0; i < n; i++) {
        tp_plot_label *l = &labels[i];
        double best = HUGE_VAL;
        for (c = 0; c < 8; c++) {
            double x0 = l->x + place[c][0] * l->w + place[c][1] * gap;
            double y0 = l->y + place[c][2] * l->h + place[c][3] * gap;
            double x1 = x0 + l->w, y1 = y0 + l->h, cost = 0.0;
            /* outside the frame: the area that sticks out */
            cost += l->w * l->h - box_overlap(x0, y0, x1, y1, fx0, fy0, fx1, fy1);
            for (j = 0; j < n; j++) {
                if (j < i)
                    cost += box_overlap(x0, y0, x1, y1, labels[j].x0, labels[j].y0,
                                        labels[j].x0 + labels[j].w, labels[j].y0 + labels[j].h);
                cost += box_overlap(x0, y0, x1, y1, labels[j].x - gap, labels[j].y - gap,
                                    labels[j].x + gap, labels[j].y + gap);
            }
            if (cost < best) {
                best = cost;
                l->x0 = x0;
                l->y0 = y0;
                if (cost == 0.0)
                    break;
            }
        }
    }
}

static double clampd(double v, double lo, double hi)
{
    return v < lo ? lo : v > hi ? hi : v;
}

/* Text and line scale for a figure of w x h against its default size: in proportion when
 * larger (the same figure at a higher resolution), more slowly when smaller so that text stays
 * readable. */
static double figure_scale(int w, int h, int w0, int h0)
{
    double r = fmin((double)w / w0, (double)h / h0);
    return clampd(r >= 1.0 ? r : sqrt(r), PLOT_SCALE_MIN, PLOT_SCALE_MAX);
}

/* Widen an empty or nearly empty range [lo, hi] around its value. */
static void range_widen(double *lo, double *hi)
{
    double w;
    if (*hi - *lo > 1e-9 * fmax(fabs(*lo), fabs(*hi)) && *hi > *lo)
        return;
    w = 0.05 * fabs(*lo);
    if (w == 0.0)
        w = 1.0;
    *lo -= w;
    *hi += w;
}

/* Figure size in pixels from the caller's (0: default); TP_ERR_USAGE when out of bounds. */
static tp_status figure_size(int *w, int *h, int w0, int h0, const char *path, tp_diag *d)
{
    if (*w == 0)
        *w = w0;
    if (*h == 0)
        *h = h0;
    if (*w < TP_PLOT_SIZE_MIN || *w > TP_PLOT_SIZE_MAX || *h < TP_PLOT_SIZE_MIN ||
        *h > TP_PLOT_SIZE_MAX) {
        tp_diag_error(d, tp_diag_loc_none(), path, NULL,
                      "figure size %d x %d is outside %d..%d pixels", *w, *h, TP_PLOT_SIZE_MIN,
                      TP_PLOT_SIZE_MAX);
        return TP_ERR_USAGE;
    }
    return TP_OK;
}

/* ---- axes -------------------------------------------------------------------------------- */

typedef struct plot_axis {
    double lo, hi; /* window */
    double step;   /* major tick interval */
    int decimals;  /* digits after the point in tick labels */
    int label_len; /* longest tick label, characters */
} plot_axis;

/* A "nice" interval (1, 2, 2.5 or 5 times a power of ten) giving about `target` steps. */
static double nice_step(double span, double target)
{
    double raw = span / target;
    double p = pow(10.0, floor(log10(raw)));
    double f = raw / p;
    double nf = f < 1.5 ? 1.0 : f < 2.25 ? 2.0 : f < 3.5 ? 2.5 : f < 7.5 ? 5.0 : 10.0;
    return nf * p;
}

/* Digits after the decimal point needed to write multiples of `step` exactly. */
static int step_decimals(double step)
{
    int dec;
    for (dec = 0; dec < 9; dec++) {
        double v = step * pow(10.0, dec);
        if (fabs(v - nearbyint(v)) < 1e-6 * v)
            return dec;
    }
    return dec;
}

static void tick_format(char *buf, size_t size, const plot_axis *a, double value)
{
    if (fabs(value) < 1e-9 * a->step)
        value = 0.0; /* no "-0" */
    snprintf(buf, size, "%.*f", a->decimals, value);
}

/* Fit an axis on [lo, hi] (padded by `pad` of the range on both sides) with about `target`
 * labelled ticks. */
static void axis_fit(plot_axis *a, double lo, double hi, double pad, double target)
{
    double k, k0, k1;
    char buf[64];
    range_widen(&lo, &hi);
    a->lo = lo - pad * (hi - lo);
    a->hi = hi + pad * (hi - lo);
    a->step = nice_step(a->hi - a->lo, clampd(target, 2.0, 10.0));
    a->decimals = step_decimals(a->step);
    a->label_len = 1;
    k0 = ceil(a->lo / a->step);
    k1 = floor(a->hi / a->step);
    for (k = k0; k <= k1 && k - k0 < 100.0; k += 1.0) {
        tick_format(buf, sizeof buf, a, k * a->step);
        if ((int)strlen(buf) > a->label_len)
            a->label_len = (int)strlen(buf);
    }
}

/* The axes that PLplot's custom tick labels (plbox option "o") refer to. */
static struct {
    const plot_axis *x, *y;
} plot_labels;

static void label_tick(PLINT axis, PLFLT value, PLCHAR_NC_VECTOR label, PLINT length,
                       PLPointer data)
{
    const plot_axis *a = axis == PL_X_AXIS ? plot_labels.x : plot_labels.y;
    (void)data;
    if (length <= 0)
        return;
    if (a)
        tick_format(label, (size_t)length, a, value);
    else
        snprintf(label, (size_t)length, "%g", value);
}

/* Box (frame, ticks, labels) with our tick labels for axes `x` and `y`. */
static void box_draw(const char *xopt, const plot_axis *x, const char *yopt, const plot_axis *y)
{
    plot_labels.x = x;
    plot_labels.y = y;
    plbox(xopt, x ? x->step : 0.0, 0, yopt, y ? y->step : 0.0, 0);
}

/* ---- running PLplot ---------------------------------------------------------------------- */

/* PLplot reports fatal errors through plexit(), which calls our handler and then exit(). The
 * handler jumps back to plot_run() instead, so that a failed figure is a status, not the end of
 * the process. Memory that PLplot held in the abandoned frames is lost; plend() closes the
 * stream and its file. Non-fatal errors (plabort) are recorded and fail the figure. */
static jmp_buf plot_jump;
static volatile int plot_armed;
static char plot_error[256];
static int plot_aborts;

static int on_plexit(PLCHAR_VECTOR msg)
{
    if (!plot_error[0])
        snprintf(plot_error, sizeof plot_error, "%s", msg ? msg : "");
    if (plot_armed)
        longjmp(plot_jump, 1);
    return 1;
}

static void on_plabort(PLCHAR_VECTOR msg)
{
    plot_aborts++;
    if (!plot_error[0])
        snprintf(plot_error, sizeof plot_error, "%s", msg ? msg : "");
}

/* Standard streams while PLplot runs. The library and the cairo driver print some messages
 * with printf, and tepid may be writing CSV to standard output: that descriptor points at
 * standard error (or /dev/null) meanwhile. PLplot prompts on stdin when it lacks a device or a
 * file: stdin reads /dev/null meanwhile, so a prompt ends at once instead of eating input. */
typedef struct plot_stdio {
    int saved_out, saved_in; /* the original descriptors, -1 when not diverted */
} plot_stdio;

static int fd_divert(int fd, int to, int flags)
{
    int saved = dup(fd), sink;
    if (saved < 0)
        return -1;
    if (to >= 0 && dup2(to, fd) >= 0)
        return saved;
    sink = open("/dev/null", flags);
    if (sink >= 0 && dup2(sink, fd) >= 0) {
        close(sink);
        return saved;
    }
    if (sink >= 0)
        close(sink);
    close(saved);
    return -1;
}

static void stdio_divert(plot_stdio *io)
{
    fflush(stdout);
    io->saved_out = fd_divert(STDOUT_FILENO, STDERR_FILENO, O_WRONLY);
    io->saved_in = fd_divert(STDIN_FILENO, -1, O_RDONLY);
}

static void stdio_restore(plot_stdio *io)
{
    fflush(stdout);
    if (io->saved_out >= 0) {
        dup2(io->saved_out, STDOUT_FILENO);
        close(io->saved_out);
    }
    if (io->saved_in >= 0) {
        dup2(io->saved_in, STDIN_FILENO);
        close(io->saved_in);
    }
    io->saved_out = io->saved_in = -1;
}

typedef void (*plot_draw_fn)(const void *plan);

/* Open the device before plinit (no prompt on stdin): file, page size, palette, background. */
static void page_open(const char *device, const char *file, int w, int h)
{
    PLINT i;
    plsdev(device);
    plsfnam(file);
    plspage(0.0, 0.0, w, h, 0, 0);
    plspause(0);
    plscmap0n(PLOT_NCOL0);
    for (i = 0; i < PLOT_NCOL0; i++)
        plscol0(i, plot_rgb[i][0], plot_rgb[i][1], plot_rgb[i][2]);
    plscmap1n(256);
    plscmap1l(1, (PLINT)(sizeof plot_heat_pos / sizeof plot_heat_pos[0]), plot_heat_pos,
              plot_heat_r, plot_heat_g, plot_heat_b, NULL);
    plinit();
    plsfont(PL_FCI_SANS, PL_FCI_UPRIGHT, PL_FCI_MEDIUM);
    plslabelfunc(label_tick, NULL);
    pladv(0);
}

#define PLOT_DEVICES_MAX 96 /* PLplot file devices listed when looking for ours */

/* Nonzero when PLplot has the file device `device` (its driver may not be installed). */
static int device_available(const char *device)
{
    const char *menu[PLOT_DEVICES_MAX + 1], *names[PLOT_DEVICES_MAX + 1];
    const char **pm = menu, **pn = names;
    int n = PLOT_DEVICES_MAX, i;
    plgFileDevs(&pm, &pn, &n);
    for (i = 0; i < n && i < PLOT_DEVICES_MAX; i++)
        if (names[i] && strcmp(names[i], device) == 0)
            return 1;
    return 0;
}

/* Draw one figure into `file` with `device`. Returns 0 when PLplot reported no error. */
static int plot_run(const char *device, const char *file, int w, int h, plot_draw_fn draw,
                    const void *plan)
{
    volatile int failed = 0;
    plot_error[0] = '\0';
    plot_aborts = 0;
    if (plot_load_plplot(plot_error, sizeof plot_error) != 0)
        return 1;
    plsexit(on_plexit);
    plsabort(on_plabort);
    if (setjmp(plot_jump) == 0) {
        plot_armed = 1;
        if (!device_available(device)) {
            /* without this check plinit would prompt for a device */
            char why[sizeof plot_error];
            snprintf(why, sizeof why, "%s", plot_error);
            snprintf(plot_error, sizeof plot_error,
                     "device %s is not available (Debian package plplot-driver-cairo)%s%.160s",
                     device, why[0] ? "; " : "", why);
            failed = 1;
        } else {
            page_open(device, file, w, h);
            draw(plan);
            plend();
        }
    } else {
        failed = 1;
        if (setjmp(plot_jump) == 0)
            plend(); /* close the stream and its file after PLplot gave up */
    }
    plot_armed = 0;
    plsexit(NULL);
    plsabort(NULL);
    return failed || plot_aborts > 0;
}

/* The atomic write shared by charts and maps: reserve a temporary file, draw into it with
 * PLplot, check it is complete, rename it onto `path`. */
static tp_status plot_write(const char *path, const plot_format *fmt, int w, int h,
                            plot_draw_fn draw, const void *plan, tp_diag *d)
{
    char tmp[TP_PATH_MAX];
    plot_stdio io;
    int failed;
    tp_status st = tp_outfile_reserve(path, tmp, sizeof tmp, d);
    if (st != TP_OK)
        return st;
    stdio_divert(&io);
    failed = plot_run(fmt->device, tmp, w, h, draw, plan);
    stdio_restore(&io);
    if (failed) {
        unlink(tmp);
        tp_diag_error(d, tp_diag_loc_none(), path, NULL, "cannot draw the figure: PLplot: %s",
                      plot_error[0] ? plot_error : "unknown error");
        return TP_ERR_IO;
    }
    if (!file_complete(tmp, fmt)) {
        unlink(tmp);
        tp_diag_error(d, tp_diag_loc_none(), path, "check free disk space",
                      "cannot write the figure: the %s file came out incomplete", fmt->ext);
        return TP_ERR_IO;
    }
    return tp_outfile_place(tmp, path, d);
}

/* Text along (dx, dy) with a white halo (copies offset by ox, oy world units), for labels
 * drawn over data. */
static void halo_text_dir(double x, double y, double dx, double dy, double ox, double oy,
                          double just, const char *text)
{
    int i, j;
    plcol0(COL_HALO);
    for (i = -1; i <= 1; i++)
        for (j = -1; j <= 1; j++)
            if (i || j)
                plptex(x + i * ox, y + j * oy, dx, dy, just, text);
    plcol0(COL_INK);
    plptex(x, y, dx, dy, just, text);
}

/* Horizontal text with a halo. */
static void halo_text(double x, double y, double ox, double oy, double just, const char *text)
{
    halo_text_dir(x, y, 1.0, 0.0, ox, oy, just, text);
}

/* ---- titles ------------------------------------------------------------------------------ */

/* A figure's title wrapped for a page `page_w` mm wide at character height `ht` mm. */
typedef struct title_plan {
    char line[TP_PLOT_TITLE_LINES][TP_PLOT_LINE_BYTES];
    int n;
} title_plan;

/* Wrap `title` (may be NULL) to the page's width; returns the room it needs above the top frame,
 * mm. */
static double title_fit(title_plan *tp, const char *title, double page_w, double ht)
{
    double cw = PLOT_TITLE_SCALE * PLOT_TITLE_W * ht;
    double chars = (page_w - 2.0 * PLOT_TITLE_MARGIN * ht) / cw;
    tp->n = title ? tp_plot_wrap_title(title, chars > 8.0 ? (size_t)chars : 8, TP_PLOT_TITLE_LINES,
                                       tp->line)
                  : 0;
    if (tp->n == 0)
        return 1.5 * ht;
    return (3.6 + (tp->n - 1) * PLOT_TITLE_PITCH * PLOT_TITLE_SCALE) * ht;
}

/* Draw the title above the current viewport (vx0..vx1 mm), centred on the page. */
static void title_draw(const title_plan *tp, double page_w, double vx0, double vx1)
{
    char text[PLOT_TEXT_SIZE];
    double pos = (0.5 * page_w - vx0) / (vx1 - vx0);
    int k;
    plschr(0.0, PLOT_TITLE_SCALE);
    for (k = 0; k < tp->n; k++) {
        text_copy(text, tp->line[k]);
        plmtex("t", 1.3 + (tp->n - 1 - k) * PLOT_TITLE_PITCH, pos, 0.5, text);
    }
    plschr(0.0, 1.0);
}

/* ---- charts ------------------------------------------------------------------------------ */

typedef struct legend_plan {
    PLINT n;
    PLINT position; /* PL_POSITION_* corner */
    double box[4];  /* its box x0, x1, y0, y1, normalised to the viewport */
    PLINT ncol;     /* columns (entries run down each column) */
    PLFLT sample_w; /* length of the line sample, fraction of the viewport width */
    PLINT opt[TP_PLOT_LEGEND_MAX], colour[TP_PLOT_LEGEND_MAX], ink[TP_PLOT_LEGEND_MAX];
    PLINT style[TP_PLOT_LEGEND_MAX], nsym[TP_PLOT_LEGEND_MAX];
    PLFLT width[TP_PLOT_LEGEND_MAX], sscale[TP_PLOT_LEGEND_MAX];
    const char *text[TP_PLOT_LEGEND_MAX], *glyph[TP_PLOT_LEGEND_MAX];
    char store[TP_PLOT_LEGEND_MAX][PLOT_TEXT_SIZE];
} legend_plan;

typedef struct panel_plan {
    const tp_plot_panel *p;
    size_t first;              /* chart-wide index of its first series (colours) */
    int right;                 /* has a right axis */
    plot_axis y, y2;           /* left and right axes */
    plot_axis y_fit, y2_fit;   /* the same fitted to the data, before a legend grew them */
    double ticks;              /* labelled ticks wanted on the y axes */
    double (*label_box)[4];    /* per reference line: its label's box x0, x1, y0, y1,
                                  normalised (x0 > x1: no label) */
    int *label_on;             /* per reference line: the label sits on its line */
    double vx0, vx1, vy0, vy1; /* viewport, mm from the lower-left corner of the page */
    legend_plan legend;
} panel_plan;

typedef struct chart_plan {
    const tp_plot_chart *c;
    int width, height; /* pixels */
    double scale;      /* text and line scale, - */
    double ht;         /* character height, mm */
    plot_axis x;
    double ylabel_disp, y2label_disp; /* axis titles from the frame, character heights */
    panel_plan *panels;
    size_t *key; /* per series (chart-wide index): whose colour and glyph it takes, the first
                    series with the same label, so that one quantity keeps its colour in every
                    panel */
    title_plan title;
    /* Marked times inside the x range, their indices among those given, and their labels
     * placed in the top panel (mm of the page). */
    const tp_plot_vline *vline[TP_PLOT_VLINES_MAX];
    size_t vline_from[TP_PLOT_VLINES_MAX];
    tp_plot_label vlabel[TP_PLOT_VLINES_MAX];
    size_t n_vlines;
} chart_plan;

static int series_colour(size_t k)
{
    return COL_SERIES + (int)(k % (PLOT_NCOL0 - COL_SERIES));
}

static const char *series_glyph(size_t k)
{
    return plot_glyphs[k % PLOT_NGLYPHS];
}

static PLINT series_style(const tp_plot_series *s)
{
    int dash = s->dash & ~TP_PLOT_GAPS;
    return plot_dash_style[dash >= 0 && dash <= 2 ? dash : 0];
}

/* Draw a series in the current window: polylines between non-finite points, or markers. */
static void series_draw(const chart_plan *cp, const tp_plot_series *s, size_t k)
{
    size_t i, start;
    plcol0(series_colour(k));
    if (s->markers) {
        plschr(0.0, PLOT_MARK_SCALE);
        for (i = 0; i < s->n; i++)
            if (isfinite(s->x[i]) && isfinite(s->y[i]))
                plstring(1, &s->x[i], &s->y[i], series_glyph(k));
        plschr(0.0, 1.0);
        return;
    }
    pllsty(series_style(s));
    plwidth(PLOT_LINE_W * cp->scale);
    for (start = 0; start < s->n;) {
        size_t end = start;
        while (end < s->n && isfinite(s->x[end]) && isfinite(s->y[end]))
            end++;
        if (end - start >= 2)
            plline((PLINT)(end - start), &s->x[start], &s->y[start]);
        start = end + 1;
    }
    pllsty(1);
}

/* Hit counts: which of up to PLOT_BOXES candidate boxes (a legend's corners, a label's places)
 * a normalised point falls in. */
#define PLOT_BOXES 16
typedef struct corner_boxes {
    int n;
    double x0[PLOT_BOXES], x1[PLOT_BOXES], y0[PLOT_BOXES], y1[PLOT_BOXES];
    size_t hits[PLOT_BOXES];
} corner_boxes;

static void corner_hit(corner_boxes *cb, double u, double v)
{
    int c;
    for (c = 0; c < cb->n; c++)
        if (u >= cb->x0[c] && u <= cb->x1[c] && v >= cb->y0[c] && v <= cb->y1[c])
            cb->hits[c]++;
}

/* Count where a series lies against the candidate boxes (coordinates normalised to the
 * viewport; line segments sampled every 1 % of the viewport). */
static void corner_series(corner_boxes *cb, const tp_plot_series *s, const plot_axis *x,
                          const plot_axis *y)
{
    double pu = (double)NAN, pv = (double)NAN;
    size_t i;
    for (i = 0; i < s->n; i++) {
        double u, v;
        if (!isfinite(s->x[i]) || !isfinite(s->y[i])) {
            pu = pv = (double)NAN;
            continue;
        }
        u = (s->x[i] - x->lo) / (x->hi - x->lo);
        v = (s->y[i] - y->lo) / (y->hi - y->lo);
        corner_hit(cb, u, v);
        if (!s->markers && isfinite(pu)) {
            double len = hypot(u - pu, v - pv);
            int k, m = (int)fmin(ceil(len / 0.01), 100.0);
            for (k = 1; k < m; k++)
                corner_hit(cb, pu + (u - pu) * k / m, pv + (v - pv) * k / m);
        }
        pu = u;
        pv = v;
    }
}

static void hline_line(const chart_plan *cp, const tp_plot_hline *h)
{
    PLFLT x[2], y[2];
    if (!isfinite(h->y))
        return;
    x[0] = cp->x.lo;
    x[1] = cp->x.hi;
    y[0] = y[1] = h->y;
    plcol0(COL_REF);
    pllsty(PLOT_REF_STYLE);
    plwidth(1.5 * PLOT_AXIS_W * cp->scale);
    plline(2, x, y);
    pllsty(1);
}

/* Whether two boxes (x0, x1, y0, y1, normalised) overlap. */
static int boxes_overlap(const double *a, const double *b)
{
    return a[0] < b[1] && b[0] < a[1] && a[2] < b[3] && b[2] < a[3];
}

/* What placing a label's `box` next to `other` (a label or legend already placed) costs: the
 * most when they overlap; when they only come closer than px, py (normalised), where the two
 * texts would read as one label, more than a place on the label's own line and less than one
 * with another line between label and line; nothing otherwise. */
static size_t label_clash(const double *box, const double *other, double px, double py)
{
    const double grown[4] = {other[0] - px, other[1] + px, other[2] - py, other[3] + py};
    if (boxes_overlap(box, other))
        return (size_t)1 << 24;
    return boxes_overlap(box, grown) ? (size_t)1 << 14 : 0;
}

/* A marked time's label box in the top panel, normalised to its viewport (x0, x1, y0, y1). */
static void vlabel_box(const chart_plan *cp, size_t i, double *box)
{
    const panel_plan *top = &cp->panels[0];
    const tp_plot_label *l = &cp->vlabel[i];
    double vw = top->vx1 - top->vx0, vh = top->vy1 - top->vy0;
    box[0] = (l->x0 - top->vx0) / vw;
    box[1] = (l->x0 + l->w - top->vx0) / vw;
    box[2] = (l->y0 - top->vy0) / vh;
    box[3] = (l->y0 + l->h - top->vy0) / vh;
}

/* Label every reference line of a panel. A label goes above or below its line, at one of the
 * ends or across the middle, where it covers the fewest data without another line between it
 * and its own; when every such place has one (lines a few units apart: a setpoint, its band, a
 * ceiling), it sits on its line, its halo cutting the line. It never covers a label already
 * placed, the legend or a marked time's label, keeps PLOT_LABEL_APART clear of them where it can,
 * and crosses a marked time only when every other place is worse. */
static void labels_plan(const chart_plan *cp, panel_plan *pp)
{
    static const double xs[4] = {0.99, 0.01, 0.62, 0.30}; /* anchors: right end, left end, ... */
    const tp_plot_panel *p = pp->p;
    double vw = pp->vx1 - pp->vx0, vh = pp->vy1 - pp->vy0;
    double lh = 1.3 * PLOT_LEGEND_SCALE * cp->ht / vh, off = 0.35 * cp->ht / vh;
    double px = PLOT_LABEL_APART * cp->ht / vw, py = PLOT_LABEL_APART * cp->ht / vh;
    size_t i, j, k;
    for (i = 0; i < p->n_hlines; i++) {
        const tp_plot_hline *h = &p->hlines[i];
        double v = (h->y - pp->y.lo) / (pp->y.hi - pp->y.lo), w;
        corner_boxes cb;
        size_t cost[PLOT_BOXES];
        int c, best = 0;
        pp->label_box[i][0] = 1.0;
        pp->label_box[i][1] = 0.0;
        pp->label_on[i] = 0;
        if (!isfinite(h->y) || !h->label || !*h->label)
            continue;
        w = ((double)text_chars(h->label) * PLOT_TEXT_W * PLOT_LEGEND_SCALE + 0.5) * cp->ht / vw;
        /* candidates: 4 anchors x (above, below, on the line) */
        cb.n = 0;
        for (c = 0; c < 12; c++) {
            int anchor = c % 4, place = c / 4; /* 0 above, 1 below, 2 on the line */
            double x = xs[anchor];
            cb.x0[cb.n] = anchor == 0 ? x - w : anchor == 1 ? x : x - w / 2;
            cb.x1[cb.n] = cb.x0[cb.n] + w;
            cb.y0[cb.n] = place == 0 ? v + off : place == 1 ? v - off - lh : v - lh / 2;
            cb.y1[cb.n] = cb.y0[cb.n] + lh;
            cb.hits[cb.n] = 0;
            cb.n++;
        }
        for (j = 0; j < p->n_series; j++) {
            const tp_plot_series *s = &p->series[j];
            corner_series(&cb, s, &cp->x, s->right_axis ? &pp->y2 : &pp->y);
        }
        for (c = 0; c < cb.n; c++) {
            double box[4] = {cb.x0[c], cb.x1[c], cb.y0[c], cb.y1[c]};
            double near = c < 4 ? v : box[2], far = c < 4 ? box[3] : v;
            cost[c] = cb.hits[c];
            if (c >= 8) {
                cost[c] += (size_t)1 << 12; /* on the line only when needed */
            } else {
                for (j = 0; j < p->n_hlines; j++) { /* another line between label and line */
                    double vj = (p->hlines[j].y - pp->y.lo) / (pp->y.hi - pp->y.lo);
                    if (j != i && vj >= near && vj <= far)
                        cost[c] += (size_t)1 << 16;
                }
            }
            if (box[2] < 0.0 || box[3] > 1.0 || box[0] < 0.0 || box[1] > 1.0)
                cost[c] = (size_t)-1 / 2;
            if (pp->legend.n > 0)
                cost[c] += label_clash(box, pp->legend.box, px, py);
            for (k = 0; k < i; k++)
                if (pp->label_box[k][0] < pp->label_box[k][1])
                    cost[c] += label_clash(box, pp->label_box[k], px, py);
            for (k = 0; k < cp->n_vlines; k++) { /* marked times and their labels */
                double u = (cp->vline[k]->x - cp->x.lo) / (cp->x.hi - cp->x.lo), lb[4];
                if (u >= box[0] && u <= box[1])
                    cost[c] += (size_t)1 << 10;
                if (pp != &cp->panels[0] || cp->vlabel[k].w <= 0.0)
                    continue;
                vlabel_box(cp, k, lb);
                cost[c] += label_clash(box, lb, px, py);
            }
        }
        for (c = 1; c < cb.n; c++)
            if (cost[c] < cost[best])
                best = c;
        pp->label_box[i][0] = cb.x0[best];
        pp->label_box[i][1] = cb.x1[best];
        pp->label_box[i][2] = cb.y0[best];
        pp->label_box[i][3] = cb.y1[best];
        pp->label_on[i] = best >= 8;
    }
}

/* Draw the labels placed by labels_plan. */
static void labels_draw(const chart_plan *cp, const panel_plan *pp)
{
    const tp_plot_panel *p = pp->p;
    double vw = pp->vx1 - pp->vx0, vh = pp->vy1 - pp->vy0;
    double lh = 1.3 * PLOT_LEGEND_SCALE * cp->ht / vh;
    double xspan = cp->x.hi - cp->x.lo, yspan = pp->y.hi - pp->y.lo;
    size_t i;
    for (i = 0; i < p->n_hlines; i++) {
        const double *b = pp->label_box[i];
        char text[PLOT_TEXT_SIZE];
        double u = 0.5 * (b[0] + b[1]), yc = 0.5 * (b[2] + b[3]);
        if (!(b[0] < b[1]))
            continue;
        text_copy(text, p->hlines[i].label);
        if (pp->label_on[i]) { /* on its line: a background box cuts the line under the text */
            PLFLT bx[4], by[4];
            bx[0] = bx[3] = cp->x.lo + b[0] * xspan;
            bx[1] = bx[2] = cp->x.lo + b[1] * xspan;
            by[0] = by[1] = pp->y.lo + (b[2] + 0.15 * lh) * yspan;
            by[2] = by[3] = pp->y.lo + (b[3] - 0.15 * lh) * yspan;
            plcol0(COL_BG);
            plfill(4, bx, by);
        }
        plschr(0.0, PLOT_LEGEND_SCALE);
        halo_text(cp->x.lo + u * xspan, pp->y.lo + yc * yspan, 0.08 * cp->ht / vw * xspan,
                  0.08 * cp->ht / vh * yspan, 0.5, text);
        plschr(0.0, 1.0);
    }
}

/* A marked time: a vertical line through the panel. */
static void vline_line(const chart_plan *cp, const panel_plan *pp, const tp_plot_vline *v)
{
    PLFLT x[2], y[2];
    x[0] = x[1] = v->x;
    y[0] = pp->y.lo;
    y[1] = pp->y.hi;
    plcol0(COL_REF);
    pllsty(PLOT_VREF_STYLE);
    plwidth(1.5 * PLOT_AXIS_W * cp->scale);
    plline(2, x, y);
    pllsty(1);
}

/* Its label, reading upwards along the line in the box placed for it (mm of the page). */
static void vline_label(const chart_plan *cp, const panel_plan *pp, const tp_plot_vline *v,
                        const tp_plot_label *l)
{
    char text[PLOT_TEXT_SIZE];
    double vw = pp->vx1 - pp->vx0, vh = pp->vy1 - pp->vy0;
    double xs = (cp->x.hi - cp->x.lo) / vw, ys = (pp->y.hi - pp->y.lo) / vh; /* per mm */
    double xc = cp->x.lo + (l->x0 + 0.5 * l->w - pp->vx0) * xs;
    double yc = pp->y.lo + (l->y0 + 0.5 * l->h - pp->vy0) * ys;
    if (!v->label || !*v->label)
        return;
    text_copy(text, v->label);
    plschr(0.0, PLOT_LEGEND_SCALE);
    halo_text_dir(xc, yc, 0.0, 1.0, 0.08 * cp->ht * xs, 0.08 * cp->ht * ys, 0.5, text);
    plschr(0.0, 1.0);
}

static void panel_draw(const chart_plan *cp, const panel_plan *pp, int top, int bottom)
{
    const tp_plot_panel *p = pp->p;
    const legend_plan *lg = &pp->legend;
    char text[PLOT_TEXT_SIZE];
    PLFLT lw, lh;
    size_t i;

    plsvpa(pp->vx0, pp->vx1, pp->vy0, pp->vy1);
    plwind(cp->x.lo, cp->x.hi, pp->y.lo, pp->y.hi);
    plcol0(COL_GRID);
    plwidth(PLOT_AXIS_W * cp->scale);
    box_draw("g", &cp->x, "g", &pp->y);
    for (i = 0; i < p->n_hlines; i++)
        hline_line(cp, &p->hlines[i]);
    for (i = 0; i < cp->n_vlines; i++)
        vline_line(cp, pp, cp->vline[i]);
    for (i = 0; i < p->n_series; i++)
        if (!p->series[i].right_axis)
            series_draw(cp, &p->series[i], cp->key[pp->first + i]);
    if (pp->right) {
        plwind(cp->x.lo, cp->x.hi, pp->y2.lo, pp->y2.hi);
        for (i = 0; i < p->n_series; i++)
            if (p->series[i].right_axis)
                series_draw(cp, &p->series[i], cp->key[pp->first + i]);
        plcol0(COL_INK);
        plwidth(PLOT_AXIS_W * cp->scale);
        box_draw("", NULL, "cmostv", &pp->y2);
        text_copy(text, p->y2label);
        plmtex("r", cp->y2label_disp, 0.5, 0.5, text);
        plwind(cp->x.lo, cp->x.hi, pp->y.lo, pp->y.hi);
    }
    labels_draw(cp, pp);
    for (i = 0; top && i < cp->n_vlines; i++)
        vline_label(cp, pp, cp->vline[i], &cp->vlabel[i]);
    plcol0(COL_INK);
    plwidth(PLOT_AXIS_W * cp->scale);
    box_draw(bottom ? "bcnost" : "bcst", &cp->x, pp->right ? "bnostv" : "bcnostv", &pp->y);
    text_copy(text, p->ylabel);
    plmtex("l", cp->ylabel_disp, 0.5, 0.5, text);
    if (top)
        title_draw(&cp->title, cp->width * PLOT_MM_PER_PX, pp->vx0, pp->vx1);
    if (bottom && cp->c->xlabel && *cp->c->xlabel) {
        text_copy(text, cp->c->xlabel);
        plmtex("b", 3.3, 0.5, 0.5, text);
    }
    if (lg->n > 0) {
        plwidth(PLOT_AXIS_W * cp->scale);
        pllegend(&lw, &lh, PL_LEGEND_BACKGROUND | PL_LEGEND_BOUNDING_BOX, lg->position, 0.012,
                 0.025, lg->sample_w, COL_BG, COL_INK, 1, (lg->n + lg->ncol - 1) / lg->ncol,
                 lg->ncol, lg->n, lg->opt, 1.0, PLOT_LEGEND_SCALE, PLOT_LEGEND_SPACING, 0.0,
                 lg->ink, lg->text, NULL, NULL, NULL, NULL, lg->colour, lg->style, lg->width,
                 lg->colour, lg->sscale, lg->nsym, lg->glyph);
    }
}

static void chart_draw(const void *plan)
{
    const chart_plan *cp = plan;
    size_t i;
    plschr(cp->ht, 1.0);
    for (i = 0; i < cp->c->n_panels; i++)
        panel_draw(cp, &cp->panels[i], i == 0, i + 1 == cp->c->n_panels);
}

/* Nonzero when `box` (normalised to the panel) lies across a marked time or (top panel) on a
 * marked time's label: things that stay where they are however the y axis grows. */
static int marks_in_box(const chart_plan *cp, const panel_plan *pp, const double *box)
{
    size_t i;
    for (i = 0; i < cp->n_vlines; i++) {
        double u = (cp->vline[i]->x - cp->x.lo) / (cp->x.hi - cp->x.lo), lb[4];
        if (u >= box[0] && u <= box[1])
            return 1;
        if (pp != &cp->panels[0] || cp->vlabel[i].w <= 0.0)
            continue;
        vlabel_box(cp, i, lb);
        if (boxes_overlap(box, lb))
            return 1;
    }
    return 0;
}

/* The data, reference lines, marked times and (top panel) their labels that a legend of
 * bw x bh (normalised) would hide in each corner (right top, left top, right bottom, left
 * bottom), each box with a clearance of PLOT_LEGEND_CLEAR on its inner sides: a curve along
 * the legend's border reads as part of it. */
static void legend_hits(const chart_plan *cp, const panel_plan *pp, double bw, double bh,
                        corner_boxes *cb)
{
    const tp_plot_panel *p = pp->p;
    size_t i;
    int c;
    cb->n = 4;
    for (c = 0; c < 4; c++) {
        int right = c == 0 || c == 2, topc = c < 2;
        cb->x0[c] = right ? 1.0 - bw - PLOT_LEGEND_CLEAR : 0.0;
        cb->x1[c] = right ? 1.0 : bw + PLOT_LEGEND_CLEAR;
        cb->y0[c] = topc ? 1.0 - bh - PLOT_LEGEND_CLEAR : 0.0;
        cb->y1[c] = topc ? 1.0 : bh + PLOT_LEGEND_CLEAR;
        cb->hits[c] = 0;
    }
    for (i = 0; i < p->n_series; i++) {
        const tp_plot_series *s = &p->series[i];
        corner_series(cb, s, &cp->x, s->right_axis ? &pp->y2 : &pp->y);
    }
    for (i = 0; i < p->n_hlines; i++) {
        double v = (p->hlines[i].y - pp->y.lo) / (pp->y.hi - pp->y.lo);
        int k;
        for (k = 0; k <= 100 && isfinite(v); k++)
            corner_hit(cb, k / 100.0, v);
    }
    for (i = 0; i < cp->n_vlines; i++) {
        double u = (cp->vline[i]->x - cp->x.lo) / (cp->x.hi - cp->x.lo), lb[4];
        int k, m;
        for (k = 0; k <= 100; k++)
            corner_hit(cb, u, k / 100.0);
        if (pp != &cp->panels[0] || cp->vlabel[i].w <= 0.0)
            continue;
        /* the top panel's labels of marked times: a legend on them would hide them */
        vlabel_box(cp, i, lb);
        for (k = 0; k <= 10; k++)
            for (m = 0; m <= 10; m++)
                corner_hit(cb, lb[0] + (lb[1] - lb[0]) * k / 10.0,
                           lb[2] + (lb[3] - lb[2]) * m / 10.0);
    }
}

/* The highest (top) or lowest (!top) normalised value of the panel's data (each series on its
 * own axis) and reference lines within [u0, u1] of the x axis (line segments sampled every 1 %
 * of the viewport). */
static double span_extreme(const chart_plan *cp, const panel_plan *pp, double u0, double u1,
                           int top)
{
    const tp_plot_panel *p = pp->p;
    double ext = top ? -HUGE_VAL : HUGE_VAL;
    size_t i, j;
    for (i = 0; i < p->n_hlines; i++) {
        double v = (p->hlines[i].y - pp->y.lo) / (pp->y.hi - pp->y.lo);
        if (isfinite(v))
            ext = top ? fmax(ext, v) : fmin(ext, v);
    }
    for (i = 0; i < p->n_series; i++) {
        const tp_plot_series *s = &p->series[i];
        const plot_axis *y = s->right_axis ? &pp->y2 : &pp->y;
        double pu = (double)NAN, pv = (double)NAN;
        for (j = 0; j < s->n; j++) {
            double u, v;
            int k, m;
            if (!isfinite(s->x[j]) || !isfinite(s->y[j])) {
                pu = pv = (double)NAN;
                continue;
            }
            u = (s->x[j] - cp->x.lo) / (cp->x.hi - cp->x.lo);
            v = (s->y[j] - y->lo) / (y->hi - y->lo);
            m = isfinite(pu) && !s->markers ? (int)fmin(ceil(fabs(u - pu) / 0.01), 100.0) : 0;
            for (k = 0; k <= m; k++) {
                double uu = m ? pu + (u - pu) * k / m : u, vv = m ? pv + (v - pv) * k / m : v;
                if (uu >= u0 && uu <= u1)
                    ext = top ? fmax(ext, vv) : fmin(ext, vv);
            }
            pu = u;
            pv = v;
        }
    }
    return ext;
}

/* How much a panel's y range (and its right axis alike) must grow (times) for a legend of
 * bw x bh to clear the data in one corner (upwards for a top corner, down for a bottom one),
 * and that corner; HUGE_VAL when no corner can be cleared within PLOT_LEGEND_GROW. A corner
 * across a marked time or on its label cannot be cleared by growing. */
static double legend_need(const chart_plan *cp, const panel_plan *pp, double bw, double bh,
                          int *corner)
{
    double need = HUGE_VAL, room = 1.0 - bh - PLOT_LEGEND_GAP;
    int c;
    *corner = -1;
    if (room <= 0.2)
        return HUGE_VAL;
    for (c = 0; c < 4; c++) {
        int right = c == 0 || c == 2, topc = c < 2;
        double u0 = right ? 1.0 - bw - PLOT_LEGEND_CLEAR : 0.0;
        double u1 = right ? 1.0 : bw + PLOT_LEGEND_CLEAR, grow;
        double box[4] = {u0, u1, topc ? 1.0 - bh - PLOT_LEGEND_CLEAR : 0.0,
                         topc ? 1.0 : bh + PLOT_LEGEND_CLEAR};
        double ext;
        if (marks_in_box(cp, pp, box))
            continue;
        ext = span_extreme(cp, pp, u0, u1, topc);
        /* the data must end below 1 - bh (top) or start above bh (bottom) of the new range */
        grow = fmax(1.0, topc ? ext / room : (1.0 - ext) / room);
        if (isfinite(grow) && grow < need) {
            need = grow;
            *corner = c;
        }
    }
    return need <= PLOT_LEGEND_GROW ? need : HUGE_VAL;
}

/* Grow the y range (and the right axis alike) by `need` (from legend_need) away from the
 * legend's corner. */
static void legend_room(panel_plan *pp, double need, int corner)
{
    plot_axis *axes[2] = {&pp->y, &pp->y2};
    int k;
    for (k = 0; k < (pp->right ? 2 : 1); k++) {
        plot_axis *a = axes[k];
        double span = a->hi - a->lo, lo = a->lo, hi = a->hi;
        if (corner < 2)
            hi = lo + need * span;
        else
            lo = hi - need * span;
        axis_fit(a, lo, hi, 0.0, pp->ticks);
    }
}

/* The estimated legend box of `ncol` columns, normalised to the viewport, with the offsets
 * given to pllegend (rows measured at 1.06 times the nominal pitch in the cairo output); 0
 * when it is wider than the panel. */
static int legend_size(const chart_plan *cp, const panel_plan *pp, PLINT n, PLINT ncol,
                       size_t longest, double *bw, double *bh)
{
    PLINT rows = (n + ncol - 1) / ncol;
    double vw = pp->vx1 - pp->vx0, vh = pp->vy1 - pp->vy0;
    *bw = (double)ncol * (3.5 + 2.0 + (double)longest * PLOT_TEXT_W * PLOT_LEGEND_SCALE) * cp->ht /
              vw +
          0.012;
    *bh =
        ((double)rows * 1.06 * PLOT_LEGEND_SPACING * PLOT_LEGEND_SCALE + 1.0) * cp->ht / vh + 0.025;
    if (ncol > 1 && *bw > 0.98)
        return 0;
    *bw = fmin(*bw, 1.0);
    *bh = fmin(*bh, 1.0);
    return 1;
}

/* Fill the legend of a panel and choose the corner where it hides the fewest data. */
static void legend_plan_fill(const chart_plan *cp, panel_plan *pp)
{
    static const PLINT corner_pos[4] = {
        PL_POSITION_TOP | PL_POSITION_RIGHT, PL_POSITION_TOP | PL_POSITION_LEFT,
        PL_POSITION_BOTTOM | PL_POSITION_RIGHT, PL_POSITION_BOTTOM | PL_POSITION_LEFT};
    const tp_plot_panel *p = pp->p;
    legend_plan *lg = &pp->legend;
    double vw = pp->vx1 - pp->vx0, bw, bh;
    size_t i, longest = 0;
    corner_boxes cb;
    int c, best = 0;

    lg->n = 0;
    lg->sample_w = 3.5 * cp->ht / vw;
    for (i = 0; i < p->n_series && lg->n < TP_PLOT_LEGEND_MAX; i++) {
        const tp_plot_series *s = &p->series[i];
        PLINT k = lg->n;
        if (!s->label || !*s->label)
            continue;
        text_copy(lg->store[k], s->label);
        if (s->right_axis)
            strcat(lg->store[k], " (right axis)");
        lg->text[k] = lg->store[k];
        lg->opt[k] = s->markers ? PL_LEGEND_SYMBOL : PL_LEGEND_LINE;
        lg->colour[k] = series_colour(cp->key[pp->first + i]);
        lg->ink[k] = COL_INK;
        lg->style[k] = series_style(s);
        lg->width[k] = PLOT_LINE_W * cp->scale;
        lg->sscale[k] = PLOT_MARK_SCALE / PLOT_LEGEND_SCALE;
        lg->nsym[k] = 2;
        lg->glyph[k] = series_glyph(cp->key[pp->first + i]);
        if (text_chars(lg->store[k]) > longest)
            longest = text_chars(lg->store[k]);
        lg->n++;
    }
    if (lg->n == 0)
        return;

    /* One column where a corner is free of data. Otherwise the number of columns (as many as
     * fit across) and the corner that need the y range to grow least to clear the data. */
    lg->ncol = 1;
    legend_size(cp, pp, lg->n, 1, longest, &bw, &bh);
    legend_hits(cp, pp, bw, bh, &cb);
    for (c = 1; c < 4; c++)
        if (cb.hits[c] < cb.hits[best])
            best = c;
    if (cb.hits[best] > 0) {
        double need = HUGE_VAL;
        PLINT ncol, pick_ncol = 1;
        int corner, pick = -1;
        for (ncol = 1; ncol <= lg->n && legend_size(cp, pp, lg->n, ncol, longest, &bw, &bh);
             ncol++) {
            double g = legend_need(cp, pp, bw, bh, &corner);
            if (g < need - 1e-9) {
                need = g;
                pick = corner;
                pick_ncol = ncol;
            }
        }
        if (pick >= 0) {
            lg->ncol = pick_ncol;
            legend_size(cp, pp, lg->n, lg->ncol, longest, &bw, &bh);
            legend_room(pp, need, pick);
            legend_hits(cp, pp, bw, bh, &cb);
            best = pick;
            for (c = 0; c < 4; c++)
                if (cb.hits[c] < cb.hits[best])
                    best = c;
        } else {
            legend_size(cp, pp, lg->n, 1, longest, &bw, &bh);
            legend_hits(cp, pp, bw, bh, &cb);
        }
    }
    lg->position = PL_POSITION_INSIDE | PL_POSITION_VIEWPORT | corner_pos[best];
    /* the box itself, without the clearance counted around it */
    lg->box[0] = best == 0 || best == 2 ? 1.0 - bw : 0.0;
    lg->box[1] = best == 0 || best == 2 ? 1.0 : bw;
    lg->box[2] = best < 2 ? 1.0 - bh : 0.0;
    lg->box[3] = best < 2 ? 1.0 : bh;
}

/* Finite range of a series' y values into [*lo, *hi]; returns the count of finite points and
 * adds the skipped ones to *skipped. */
static size_t series_range(const tp_plot_series *s, double *xlo, double *xhi, double *lo,
                           double *hi, size_t *skipped)
{
    size_t i, n = 0;
    for (i = 0; i < s->n; i++) {
        if (!isfinite(s->x[i]) || !isfinite(s->y[i])) {
            *skipped += !(s->dash & TP_PLOT_GAPS);
            continue;
        }
        *xlo = fmin(*xlo, s->x[i]);
        *xhi = fmax(*xhi, s->x[i]);
        *lo = fmin(*lo, s->y[i]);
        *hi = fmax(*hi, s->y[i]);
        n++;
    }
    return n;
}

static void chart_plan_free(chart_plan *cp)
{
    size_t i;
    for (i = 0; cp->panels && i < cp->c->n_panels; i++) {
        free(cp->panels[i].label_box);
        free(cp->panels[i].label_on);
    }
    free(cp->panels);
    free(cp->key);
    cp->panels = NULL;
    cp->key = NULL;
}

/* Keep the marked times inside the x range and place their labels along the lines, from the
 * bottom of the top panel up (mm of the page); an unlabelled mark's label takes no room. */
static void vlines_place(chart_plan *cp, const tp_plot_vline *vlines, size_t n)
{
    const panel_plan *top = &cp->panels[0];
    double lh = PLOT_LEGEND_SCALE * cp->ht, gap = 0.3 * cp->ht;
    size_t i;
    cp->n_vlines = 0;
    for (i = 0; vlines && i < n && cp->n_vlines < TP_PLOT_VLINES_MAX; i++) {
        const tp_plot_vline *v = &vlines[i];
        tp_plot_label *l = &cp->vlabel[cp->n_vlines];
        int labelled = v->label && *v->label;
        if (!isfinite(v->x) || v->x < cp->x.lo || v->x > cp->x.hi)
            continue;
        cp->vline_from[cp->n_vlines] = i;
        cp->vline[cp->n_vlines++] = v;
        l->w = labelled ? lh : 0.0;
        l->h = labelled ? ((double)text_chars(v->label) * PLOT_TEXT_W + 0.5) * lh : 0.0;
        l->x = top->vx0 + (v->x - cp->x.lo) / (cp->x.hi - cp->x.lo) * (top->vx1 - top->vx0);
        l->y = top->vy0 + 0.4 * cp->ht + 0.5 * l->h;
    }
    tp_plot_place_labels(cp->vlabel, cp->n_vlines, gap, top->vx0, top->vy0, top->vx1, top->vy1);
}

/* What the panels' checks gather for the layout: the x range of all data, the sum of the
 * height shares, the series count so far, and whether any panel has a right axis. */
typedef struct chart_ranges {
    double xlo, xhi, share;
    size_t first;
    int any_right;
} chart_ranges;

/* Check panel i and its series and reference lines (a usage error names the panel), and take
 * its data ranges: y on both axes into the panel's plan, x into r. */
static tp_status panel_check(chart_plan *cp, size_t i, chart_ranges *r, const char *path,
                             tp_diag *d)
{
    const tp_plot_panel *p = &cp->c->panels[i];
    panel_plan *pp = &cp->panels[i];
    double ylo = HUGE_VAL, yhi = -HUGE_VAL, rlo = HUGE_VAL, rhi = -HUGE_VAL;
    size_t finite = 0, skipped = 0, j;
    pp->p = p;
    pp->first = r->first;
    pp->label_box = calloc(p->n_hlines + 1, sizeof *pp->label_box);
    pp->label_on = calloc(p->n_hlines + 1, sizeof *pp->label_on);
    if (!pp->label_box || !pp->label_on) {
        tp_diag_error(d, tp_diag_loc_none(), path, NULL, "out of memory");
        return TP_ERR_NOMEM;
    }
    pp->right = p->y2label != NULL;
    r->any_right |= pp->right;
    r->first += p->n_series;
    if ((p->n_series > 0 && !p->series) || (p->n_hlines > 0 && !p->hlines)) {
        tp_diag_error(d, tp_diag_loc_none(), path, NULL, "panel %zu: missing %s array", i + 1,
                      p->n_series > 0 && !p->series ? "series" : "reference-line");
        return TP_ERR_USAGE;
    }
    if (!isfinite(p->height_share) || p->height_share < 0.0) {
        tp_diag_error(d, tp_diag_loc_none(), path, NULL,
                      "panel %zu: height share must be a finite number >= 0", i + 1);
        return TP_ERR_USAGE;
    }
    r->share += p->height_share > 0.0 ? p->height_share : 1.0;
    for (j = 0; j < p->n_series; j++) {
        const tp_plot_series *s = &p->series[j];
        if (s->n == 0 || !s->x || !s->y) {
            tp_diag_error(d, tp_diag_loc_none(), path, NULL, "panel %zu, series %zu (%s): %s",
                          i + 1, j + 1, s->label ? s->label : "unlabelled",
                          s->n == 0 ? "no points" : "missing x or y array");
            return TP_ERR_USAGE;
        }
        if (s->n > INT_MAX) {
            tp_diag_error(d, tp_diag_loc_none(), path, NULL,
                          "panel %zu, series %zu: more than %d points", i + 1, j + 1, INT_MAX);
            return TP_ERR_LIMIT;
        }
        if (s->right_axis && !pp->right) {
            tp_diag_error(d, tp_diag_loc_none(), path, "give the panel a y2label",
                          "panel %zu, series %zu (%s): on the right axis, but the panel "
                          "has none",
                          i + 1, j + 1, s->label ? s->label : "unlabelled");
            return TP_ERR_USAGE;
        }
        if (s->right_axis)
            finite += series_range(s, &r->xlo, &r->xhi, &rlo, &rhi, &skipped);
        else
            finite += series_range(s, &r->xlo, &r->xhi, &ylo, &yhi, &skipped);
    }
    for (j = 0; j < p->n_hlines; j++) {
        if (!isfinite(p->hlines[j].y)) {
            skipped++;
            continue;
        }
        ylo = fmin(ylo, p->hlines[j].y);
        yhi = fmax(yhi, p->hlines[j].y);
        finite++;
    }
    if (finite == 0) {
        tp_diag_error(d, tp_diag_loc_none(), path, NULL, "panel %zu (%s): nothing finite to draw",
                      i + 1, p->ylabel ? p->ylabel : "unlabelled");
        return TP_ERR_USAGE;
    }
    if (skipped > 0)
        tp_diag_warn(d, tp_diag_loc_none(), path, NULL,
                     "panel %zu: %zu non-finite point%s left out of the figure", i + 1, skipped,
                     skipped == 1 ? "" : "s");
    if (!(ylo <= yhi))
        ylo = yhi = 0.0; /* only right-axis data: an empty left axis */
    if (!(rlo <= rhi))
        rlo = rhi = 0.0;
    pp->y.lo = ylo; /* data ranges for now; fitted by the layout */
    pp->y.hi = yhi;
    pp->y2.lo = rlo;
    pp->y2.hi = rhi;
    return TP_OK;
}

/* Colour keys: a series takes the colour of the first series with its label. */
static tp_status colour_keys(chart_plan *cp, size_t n_series, const char *path, tp_diag *d)
{
    const tp_plot_chart *c = cp->c;
    size_t i, j, first;
    cp->key = malloc((n_series > 0 ? n_series : 1) * sizeof *cp->key);
    if (!cp->key) {
        tp_diag_error(d, tp_diag_loc_none(), path, NULL, "out of memory");
        return TP_ERR_NOMEM;
    }
    for (i = 0, first = 0; i < c->n_panels; i++) {
        for (j = 0; j < c->panels[i].n_series; j++, first++) {
            const char *label = c->panels[i].series[j].label;
            size_t a, b, k = first;
            cp->key[first] = first;
            for (a = 0; label && *label && a <= i && k == first; a++)
                for (b = 0; b < c->panels[a].n_series && (a < i || b < j); b++) {
                    const char *other = c->panels[a].series[b].label;
                    if (other && strcmp(other, label) == 0) {
                        k = cp->panels[a].first + b;
                        break;
                    }
                }
            cp->key[first] = cp->key[k];
        }
    }
    return TP_OK;
}

/* Vertical layout, mm from the bottom of the page: the title, the panels by their height
 * shares (`share` their sum) with gaps, the x-axis title; each panel's y axes fitted. */
static tp_status vertical_layout(chart_plan *cp, double share, const char *path, tp_diag *d)
{
    const tp_plot_chart *c = cp->c;
    double page_w = cp->width * PLOT_MM_PER_PX, page_h = cp->height * PLOT_MM_PER_PX;
    double top, bottom, gap, avail, ytop;
    size_t i;
    top = title_fit(&cp->title, c->title, page_w, cp->ht);
    bottom = (c->xlabel && *c->xlabel ? 4.8 : 2.8) * cp->ht;
    gap = 1.2 * cp->ht;
    avail = page_h - top - bottom - gap * (double)(c->n_panels - 1);
    ytop = page_h - top;
    for (i = 0; i < c->n_panels; i++) {
        panel_plan *pp = &cp->panels[i];
        double h = pp->p->height_share > 0.0 ? pp->p->height_share : 1.0;
        h *= avail / share;
        if (h < 4.0 * cp->ht) {
            tp_diag_error(d, tp_diag_loc_none(), path, "make the figure taller or the panels fewer",
                          "panel %zu would be too short to read", i + 1);
            return TP_ERR_USAGE;
        }
        pp->vy1 = ytop;
        pp->vy0 = ytop - h;
        ytop = pp->vy0 - gap;
        if (!isfinite(pp->y.hi - pp->y.lo) || !isfinite(pp->y2.hi - pp->y2.lo)) {
            tp_diag_error(d, tp_diag_loc_none(), path, NULL, "panel %zu: values too large to plot",
                          i + 1);
            return TP_ERR_USAGE;
        }
        pp->ticks = h / (3.5 * cp->ht);
        axis_fit(&pp->y, pp->y.lo, pp->y.hi, PLOT_PAD, pp->ticks);
        if (pp->right)
            axis_fit(&pp->y2, pp->y2.lo, pp->y2.hi, PLOT_PAD, pp->ticks);
        pp->y_fit = pp->y;
        pp->y2_fit = pp->y2;
    }
    return TP_OK;
}

/* Horizontal layout: room for the widest tick labels and the axis titles; again when a legend
 * made room for itself and lengthened a panel's tick labels (98 -> 100). The marked times'
 * labels go first: legends and reference-line labels keep clear of them. */
static tp_status horizontal_layout(chart_plan *cp, const chart_ranges *r,
                                   const tp_plot_vline *vlines, size_t n_vlines, const char *path,
                                   tp_diag *d)
{
    const tp_plot_chart *c = cp->c;
    double page_w = cp->width * PLOT_MM_PER_PX, left, right;
    int lchars = 1, rchars = 1, pass;
    size_t i;
    for (pass = 0; pass < 2; pass++) {
        int wider = 0;
        for (i = 0; i < c->n_panels; i++) {
            wider |= cp->panels[i].y.label_len > lchars ||
                     (cp->panels[i].right && cp->panels[i].y2.label_len > rchars);
            lchars = cp->panels[i].y.label_len > lchars ? cp->panels[i].y.label_len : lchars;
            if (cp->panels[i].right && cp->panels[i].y2.label_len > rchars)
                rchars = cp->panels[i].y2.label_len;
        }
        if (pass > 0 && !wider)
            break;
        cp->ylabel_disp = 0.8 + lchars * PLOT_DIGIT_W + 1.2;
        cp->y2label_disp = 0.8 + rchars * PLOT_DIGIT_W + 1.2;
        left = (cp->ylabel_disp + 1.2) * cp->ht;
        right = r->any_right ? (cp->y2label_disp + 1.2) * cp->ht : 2.5 * cp->ht;
        if (page_w - left - right < 10.0 * cp->ht) {
            tp_diag_error(d, tp_diag_loc_none(), path, "make the figure wider",
                          "the figure is too narrow for its axis labels");
            return TP_ERR_USAGE;
        }
        axis_fit(&cp->x, r->xlo, r->xhi, 0.0, (page_w - left - right) / (9.0 * cp->ht));
        for (i = 0; i < c->n_panels; i++) {
            cp->panels[i].vx0 = left;
            cp->panels[i].vx1 = page_w - right;
        }
        vlines_place(cp, vlines, n_vlines);
        for (i = 0; i < c->n_panels; i++) {
            cp->panels[i].y = cp->panels[i].y_fit; /* a legend grows the plain fit, once */
            cp->panels[i].y2 = cp->panels[i].y2_fit;
            legend_plan_fill(cp, &cp->panels[i]);
            labels_plan(cp, &cp->panels[i]);
        }
    }
    return TP_OK;
}

/* Check a chart and lay it out; on failure report and return non-OK (nothing allocated). */
static tp_status chart_plan_build(chart_plan *cp, const tp_plot_chart *c,
                                  const tp_plot_vline *vlines, size_t n_vlines, const char *path,
                                  tp_diag *d)
{
    chart_ranges r = {HUGE_VAL, -HUGE_VAL, 0.0, 0, 0};
    size_t i;
    tp_status st;

    memset(cp, 0, sizeof *cp);
    cp->c = c;
    if (n_vlines > 0 && !vlines) {
        tp_diag_error(d, tp_diag_loc_none(), path, NULL, "marked times without an array");
        return TP_ERR_USAGE;
    }
    if (!c->panels || c->n_panels == 0 || c->n_panels > TP_PLOT_PANELS_MAX) {
        tp_diag_error(d, tp_diag_loc_none(), path, NULL, "a chart needs 1 to %d panels (got %zu)",
                      TP_PLOT_PANELS_MAX, c->panels ? c->n_panels : 0);
        return TP_ERR_USAGE;
    }
    cp->width = c->width;
    cp->height = c->height;
    st = figure_size(&cp->width, &cp->height, TP_PLOT_CHART_WIDTH, TP_PLOT_CHART_HEIGHT, path, d);
    if (st != TP_OK)
        return st;
    cp->panels = calloc(c->n_panels, sizeof *cp->panels);
    if (!cp->panels) {
        tp_diag_error(d, tp_diag_loc_none(), path, NULL, "out of memory");
        return TP_ERR_NOMEM;
    }
    for (i = 0; st == TP_OK && i < c->n_panels; i++)
        st = panel_check(cp, i, &r, path, d);
    if (st == TP_OK)
        st = colour_keys(cp, r.first, path, d);
    if (st == TP_OK) {
        if (!(r.xlo <= r.xhi))
            r.xlo = r.xhi = 0.0; /* reference lines only */
        if (!isfinite(r.xhi - r.xlo)) {
            tp_diag_error(d, tp_diag_loc_none(), path, NULL, "x values too large to plot");
            st = TP_ERR_USAGE;
        }
    }
    if (st == TP_OK) {
        cp->scale = figure_scale(cp->width, cp->height, TP_PLOT_CHART_WIDTH, TP_PLOT_CHART_HEIGHT);
        cp->ht = PLOT_CHAR_MM * cp->scale;
        st = vertical_layout(cp, r.share, path, d);
    }
    if (st == TP_OK)
        st = horizontal_layout(cp, &r, vlines, n_vlines, path, d);
    if (st != TP_OK)
        chart_plan_free(cp);
    return st;
}

tp_status tp_plot_chart_write(const char *path, const tp_plot_chart *chart, tp_diag *d)
{
    return tp_plot_chart_write_marked(path, chart, NULL, 0, d);
}

/* A chart's plan on the heap (it holds the wrapped title and the labels), built; NULL with
 * *st set and the reason reported when it cannot be. Free with chart_plan_free and free. */
static chart_plan *chart_plan_new(const tp_plot_chart *chart, const tp_plot_vline *vlines,
                                  size_t n_vlines, const char *path, tp_diag *d, tp_status *st)
{
    chart_plan *cp = malloc(sizeof *cp);
    if (!cp) {
        tp_diag_error(d, tp_diag_loc_none(), path, NULL, "out of memory");
        *st = TP_ERR_NOMEM;
        return NULL;
    }
    *st = chart_plan_build(cp, chart, vlines, n_vlines, path, d);
    if (*st != TP_OK) {
        free(cp);
        return NULL;
    }
    return cp;
}

tp_status tp_plot_chart_write_marked(const char *path, const tp_plot_chart *chart,
                                     const tp_plot_vline *vlines, size_t n_vlines, tp_diag *d)
{
    const plot_format *fmt = figure_target(path, chart, "chart", d);
    chart_plan *cp;
    tp_status st;
    if (!fmt)
        return TP_ERR_USAGE;
    cp = chart_plan_new(chart, vlines, n_vlines, path, d, &st);
    if (!cp)
        return st;
    st = plot_write(path, fmt, cp->width, cp->height, chart_draw, cp, d);
    chart_plan_free(cp);
    free(cp);
    return st;
}

/* Copy a laid-out chart into `out` (allocated here). */
static tp_status layout_copy(const chart_plan *cp, tp_plot_layout *out)
{
    const tp_plot_chart *chart = cp->c;
    size_t i, k;
    out->panels = calloc(chart->n_panels, sizeof *out->panels);
    if (!out->panels)
        return TP_ERR_NOMEM;
    out->n_panels = chart->n_panels;
    out->xlo = cp->x.lo;
    out->xhi = cp->x.hi;
    for (k = 0; k < TP_PLOT_VLINES_MAX; k++)
        out->marks[k] = (tp_plot_box){1.0, 0.0, 1.0, 0.0};
    for (k = 0; k < cp->n_vlines; k++) {
        double b[4];
        if (cp->vlabel[k].w <= 0.0)
            continue;
        vlabel_box(cp, k, b);
        out->marks[cp->vline_from[k]] = (tp_plot_box){b[0], b[1], b[2], b[3]};
    }
    for (i = 0; i < chart->n_panels; i++) {
        const panel_plan *pp = &cp->panels[i];
        tp_plot_panel_layout *pl = &out->panels[i];
        pl->ylo = pp->y.lo;
        pl->yhi = pp->y.hi;
        pl->y2lo = pp->right ? pp->y2.lo : 0.0;
        pl->y2hi = pp->right ? pp->y2.hi : 0.0;
        pl->legend_columns = pp->legend.n > 0 ? (int)pp->legend.ncol : 0;
        pl->legend = (tp_plot_box){pp->legend.box[0], pp->legend.box[1], pp->legend.box[2],
                                   pp->legend.box[3]};
        pl->labels = calloc(pp->p->n_hlines + 1, sizeof *pl->labels);
        pl->label_on_line = calloc(pp->p->n_hlines + 1, sizeof *pl->label_on_line);
        pl->colour = calloc(pp->p->n_series + 1, sizeof *pl->colour);
        if (!pl->labels || !pl->label_on_line || !pl->colour)
            return TP_ERR_NOMEM;
        for (k = 0; k < pp->p->n_hlines; k++) {
            pl->labels[k] = (tp_plot_box){pp->label_box[k][0], pp->label_box[k][1],
                                          pp->label_box[k][2], pp->label_box[k][3]};
            pl->label_on_line[k] = pp->label_on[k];
        }
        for (k = 0; k < pp->p->n_series; k++)
            pl->colour[k] = series_colour(cp->key[pp->first + k]) - COL_SERIES;
    }
    return TP_OK;
}

tp_status tp_plot_chart_layout(const char *path, const tp_plot_chart *chart, tp_plot_layout *out,
                               tp_diag *d)
{
    return tp_plot_chart_layout_marked(path, chart, NULL, 0, out, d);
}

tp_status tp_plot_chart_layout_marked(const char *path, const tp_plot_chart *chart,
                                      const tp_plot_vline *vlines, size_t n_vlines,
                                      tp_plot_layout *out, tp_diag *d)
{
    chart_plan *cp;
    tp_status st;
    memset(out, 0, sizeof *out);
    if (!figure_target(path, chart, "chart", d))
        return TP_ERR_USAGE;
    cp = chart_plan_new(chart, vlines, n_vlines, path, d, &st);
    if (!cp)
        return st;
    if (layout_copy(cp, out) != TP_OK) {
        tp_diag_error(d, tp_diag_loc_none(), path, NULL, "out of memory");
        tp_plot_layout_clear(out);
        st = TP_ERR_NOMEM;
    }
    chart_plan_free(cp);
    free(cp);
    return st;
}

void tp_plot_layout_clear(tp_plot_layout *l)
{
    size_t i;
    for (i = 0; l->panels && i < l->n_panels; i++) {
        free(l->panels[i].labels);
        free(l->panels[i].label_on_line);
        free(l->panels[i].colour);
    }
    free(l->panels);
    memset(l, 0, sizeof *l);
}

/* ---- heat maps --------------------------------------------------------------------------- */

typedef struct map_plan {
    const tp_plot_map *m;
    int width, height;
    double scale, ht;
    PLFLT **grid;          /* grid[i][j] is cell (i, j), as plimagefr and plcont read it */
    PLFLT *cells;          /* storage behind grid */
    PLFLT *xc, *yc;        /* cell centres, for contours */
    double zlo, zhi;       /* colour scale */
    double x0, x1, y0, y1; /* the plate (extent, widened when empty) */
    plot_axis x, y;        /* window: the plate with a margin */
    PLFLT levels[PLOT_LEVELS_MAX];
    PLINT nlevels;             /* 0: no contours */
    PLINT sigdig;              /* significant digits of contour labels */
    double vx0, vx1, vy0, vy1; /* viewport, mm */
    double ylabel_disp;
    title_plan title;
    tp_plot_label *labels; /* n_marks: where each marker's label goes, mm of the page */
} map_plan;

static void map_plan_free(map_plan *mp)
{
    free(mp->grid);
    free(mp->cells);
    free(mp->xc);
    free(mp->yc);
    free(mp->labels);
    mp->grid = NULL;
    mp->cells = mp->xc = mp->yc = NULL;
    mp->labels = NULL;
}

/* Nonzero when marker k lies in the map's window (others are left out: text is not clipped). */
static int mark_inside(const map_plan *mp, size_t k)
{
    double x = mp->m->mark_x[k], y = mp->m->mark_y[k];
    return isfinite(x) && isfinite(y) && x >= mp->x.lo && x <= mp->x.hi && y >= mp->y.lo &&
           y <= mp->y.hi;
}

/* Cell corners for plimagefr: index space (0..nx, 0..ny) onto the plate. Given explicitly
 * because PLplot versions differ in how they spread cells over [xmin, xmax] without one. */
static void map_corner(PLFLT i, PLFLT j, PLFLT_NC_SCALAR tx, PLFLT_NC_SCALAR ty, PLPointer data)
{
    const map_plan *mp = data;
    *tx = mp->x0 + (mp->x1 - mp->x0) * i / (double)mp->m->nx;
    *ty = mp->y0 + (mp->y1 - mp->y0) * j / (double)mp->m->ny;
}

static void map_draw(const void *plan)
{
    const map_plan *mp = plan;
    const tp_plot_map *m = mp->m;
    char text[PLOT_TEXT_SIZE];
    PLFLT px[5] = {mp->x0, mp->x1, mp->x1, mp->x0, mp->x0}; /* the plate outline */
    PLFLT py[5] = {mp->y0, mp->y0, mp->y1, mp->y1, mp->y0};
    PLFLT cbw, cbh;
    size_t k;

    plschr(mp->ht, 1.0);
    plsvpa(mp->vx0, mp->vx1, mp->vy0, mp->vy1);
    plwind(mp->x.lo, mp->x.hi, mp->y.lo, mp->y.hi);
    plimagefr((PLFLT_MATRIX)mp->grid, (PLINT)m->nx, (PLINT)m->ny, mp->x0, mp->x1, mp->y0, mp->y1,
              mp->zlo, mp->zhi, mp->zlo, mp->zhi, map_corner, (PLPointer)mp);
    if (mp->nlevels > 0) {
        PLcGrid cg;
        cg.xg = mp->xc;
        cg.yg = mp->yc;
        cg.zg = NULL;
        cg.nx = (PLINT)m->nx;
        cg.ny = (PLINT)m->ny;
        cg.nz = 0;
        plcol0(COL_INK);
        plwidth(PLOT_AXIS_W * mp->scale);
        pl_setcontlabelformat(4, mp->sigdig);
        pl_setcontlabelparam(0.006, 0.8, 0.3, 1);
        plcont((PLFLT_MATRIX)mp->grid, (PLINT)m->nx, (PLINT)m->ny, 1, (PLINT)m->nx, 1, (PLINT)m->ny,
               mp->levels, mp->nlevels, pltr1, &cg);
        pl_setcontlabelparam(0.006, 0.3, 0.1, 0); /* PLplot's defaults: no labels */
    }
    plcol0(COL_INK);
    plwidth(PLOT_OUTLINE_W * mp->scale);
    plline(5, px, py);
    plwidth(PLOT_AXIS_W * mp->scale);
    box_draw("bcnost", &mp->x, "bcnostv", &mp->y);

    for (k = 0; k < m->n_marks; k++) {
        double mx = m->mark_x[k], my = m->mark_y[k];
        double xs = (mp->x.hi - mp->x.lo) / (mp->vx1 - mp->vx0); /* world per mm */
        double ys = (mp->y.hi - mp->y.lo) / (mp->vy1 - mp->vy0);
        double hx = 0.08 * mp->ht * xs, hy = 0.08 * mp->ht * ys;
        const tp_plot_label *l = &mp->labels[k];
        if (!mark_inside(mp, k))
            continue;
        plcol0(COL_HALO);
        plschr(0.0, 1.3 * PLOT_MARK_SCALE);
        plstring(1, &mx, &my, plot_glyphs[0]);
        plcol0(COL_INK);
        plschr(0.0, 0.9 * PLOT_MARK_SCALE);
        plstring(1, &mx, &my, plot_glyphs[0]);
        plschr(0.0, PLOT_LEGEND_SCALE);
        if (m->mark_label && m->mark_label[k] && *m->mark_label[k]) {
            /* The box placed for it (map_plan_build), text centred in it. */
            text_copy(text, m->mark_label[k]);
            halo_text(mp->x.lo + (l->x0 + 0.5 * l->w - mp->vx0) * xs,
                      mp->y.lo + (l->y0 + 0.5 * l->h - mp->vy0) * ys, hx, hy, 0.5, text);
        }
        plschr(0.0, 1.0);
    }

    text_copy(text, m->xlabel);
    plmtex("b", 3.3, 0.5, 0.5, text);
    text_copy(text, m->ylabel);
    plmtex("l", mp->ylabel_disp, 0.5, 0.5, text);
    title_draw(&mp->title, mp->width * PLOT_MM_PER_PX, mp->vx0, mp->vx1);
    {
        PLINT label_opts[1] = {PL_COLORBAR_LABEL_RIGHT};
        PLINT sub_ticks[1] = {0};
        PLINT n_values[1] = {2};
        PLFLT ticks[1] = {0.0};
        PLFLT range[2];
        const PLFLT *values[1];
        const char *labels[1], *axis_opts[1] = {"bcvtm"};
        range[0] = mp->zlo;
        range[1] = mp->zhi;
        values[0] = range;
        text_copy(text, m->zlabel);
        labels[0] = text;
        plcol0(COL_INK);
        plcolorbar(&cbw, &cbh, PL_COLORBAR_IMAGE | PL_COLORBAR_BOUNDING_BOX,
                   PL_POSITION_RIGHT | PL_POSITION_OUTSIDE | PL_POSITION_VIEWPORT,
                   2.0 * mp->ht / (mp->vx1 - mp->vx0), 0.0, 1.6 * mp->ht / (mp->vx1 - mp->vx0), 1.0,
                   COL_BG, COL_INK, 1, 0.0, 0.0, COL_INK, 0.0, 1, label_opts, labels, 1, axis_opts,
                   ticks, sub_ticks, n_values, values);
    }
}

/* Place the markers' labels (mm of the page) so that they overlap neither each other nor
 * another marker, inside the map's frame. Markers off the map take no room. */
static tp_status marks_place(map_plan *mp)
{
    const tp_plot_map *m = mp->m;
    double lh = PLOT_LEGEND_SCALE * mp->ht;
    size_t k, n = 0, *from;
    tp_plot_label *placed;
    if (m->n_marks == 0)
        return TP_OK;
    mp->labels = calloc(m->n_marks, sizeof *mp->labels);
    placed = calloc(m->n_marks, sizeof *placed);
    from = calloc(m->n_marks, sizeof *from);
    if (!mp->labels || !placed || !from) {
        free(placed);
        free(from);
        return TP_ERR_NOMEM;
    }
    for (k = 0; k < m->n_marks; k++) {
        const char *text = m->mark_label ? m->mark_label[k] : NULL;
        tp_plot_label *l = &placed[n];
        if (!mark_inside(mp, k))
            continue;
        l->x = mp->vx0 + (m->mark_x[k] - mp->x.lo) / (mp->x.hi - mp->x.lo) * (mp->vx1 - mp->vx0);
        l->y = mp->vy0 + (m->mark_y[k] - mp->y.lo) / (mp->y.hi - mp->y.lo) * (mp->vy1 - mp->vy0);
        l->w = text && *text ? ((double)text_chars(text) * PLOT_TEXT_W + 0.5) * lh : 0.0;
        l->h = text && *text ? 1.2 * lh : 0.0;
        from[n++] = k;
    }
    tp_plot_place_labels(placed, n, PLOT_LABEL_GAP * mp->ht, mp->vx0, mp->vy0, mp->vx1, mp->vy1);
    for (k = 0; k < n; k++)
        mp->labels[from[k]] = placed[k];
    free(placed);
    free(from);
    return TP_OK;
}

/* Check a map's cells, extent and markers; the figure's size. */
static tp_status map_check(map_plan *mp, const tp_plot_map *m, const char *path, tp_diag *d)
{
    if (!m->z || m->nx == 0 || m->ny == 0) {
        tp_diag_error(d, tp_diag_loc_none(), path, NULL, "heat map without cells");
        return TP_ERR_USAGE;
    }
    if (m->nx > TP_PLOT_CELLS_MAX || m->ny > TP_PLOT_CELLS_MAX / m->nx) {
        tp_diag_error(d, tp_diag_loc_none(), path, NULL, "heat map of %zu x %zu cells: at most %d",
                      m->nx, m->ny, TP_PLOT_CELLS_MAX);
        return TP_ERR_LIMIT;
    }
    if (!isfinite(m->x0) || !isfinite(m->x1) || !isfinite(m->y0) || !isfinite(m->y1) ||
        m->x1 < m->x0 || m->y1 < m->y0) {
        tp_diag_error(d, tp_diag_loc_none(), path, NULL,
                      "heat map extent [%g, %g] x [%g, %g] is not a rectangle", m->x0, m->x1, m->y0,
                      m->y1);
        return TP_ERR_USAGE;
    }
    if (m->n_marks > 0 && (!m->mark_x || !m->mark_y)) {
        tp_diag_error(d, tp_diag_loc_none(), path, NULL, "heat map markers without coordinates");
        return TP_ERR_USAGE;
    }
    mp->width = m->width;
    mp->height = m->height;
    return figure_size(&mp->width, &mp->height, TP_PLOT_MAP_WIDTH, TP_PLOT_MAP_HEIGHT, path, d);
}

/* The colour range of the finite cells, the cells in PLplot's layout with their centres, and
 * nice contour levels strictly inside the range (when asked and every cell is finite). */
static tp_status map_cells(map_plan *mp, const tp_plot_map *m, const char *path, tp_diag *d)
{
    size_t i, j, nonfinite = 0;
    mp->zlo = HUGE_VAL;
    mp->zhi = -HUGE_VAL;
    for (i = 0; i < m->nx * m->ny; i++) {
        if (isfinite(m->z[i])) {
            mp->zlo = fmin(mp->zlo, m->z[i]);
            mp->zhi = fmax(mp->zhi, m->z[i]);
        } else {
            nonfinite++;
        }
    }
    if (nonfinite == m->nx * m->ny || !isfinite(mp->zhi - mp->zlo)) {
        tp_diag_error(d, tp_diag_loc_none(), path, NULL, "heat map without finite values to show");
        return TP_ERR_USAGE;
    }
    range_widen(&mp->zlo, &mp->zhi);
    if (nonfinite > 0)
        tp_diag_warn(d, tp_diag_loc_none(), path, NULL, "%zu non-finite cell%s left blank%s",
                     nonfinite, nonfinite == 1 ? "" : "s",
                     m->contours ? ", contours left out" : "");
    mp->grid = malloc(m->nx * sizeof *mp->grid);
    mp->cells = malloc(m->nx * m->ny * sizeof *mp->cells);
    mp->xc = malloc(m->nx * sizeof *mp->xc);
    mp->yc = malloc(m->ny * sizeof *mp->yc);
    if (!mp->grid || !mp->cells || !mp->xc || !mp->yc) {
        tp_diag_error(d, tp_diag_loc_none(), path, NULL, "out of memory");
        return TP_ERR_NOMEM;
    }
    mp->x0 = m->x0;
    mp->x1 = m->x1;
    mp->y0 = m->y0;
    mp->y1 = m->y1;
    range_widen(&mp->x0, &mp->x1);
    range_widen(&mp->y0, &mp->y1);
    for (i = 0; i < m->nx; i++) {
        mp->grid[i] = mp->cells + i * m->ny;
        for (j = 0; j < m->ny; j++)
            mp->grid[i][j] = isfinite(m->z[j * m->nx + i]) ? m->z[j * m->nx + i] : (double)NAN;
        mp->xc[i] = mp->x0 + (mp->x1 - mp->x0) * ((double)i + 0.5) / (double)m->nx;
    }
    for (j = 0; j < m->ny; j++)
        mp->yc[j] = mp->y0 + (mp->y1 - mp->y0) * ((double)j + 0.5) / (double)m->ny;
    if (m->contours && nonfinite == 0 && m->nx >= 2 && m->ny >= 2) {
        double k, step = nice_step(mp->zhi - mp->zlo, 8.0);
        for (k = ceil(mp->zlo / step); k * step < mp->zhi && mp->nlevels < PLOT_LEVELS_MAX;
             k += 1.0)
            if (k * step > mp->zlo)
                mp->levels[mp->nlevels++] = k * step;
        /* enough digits for the largest level and the step's decimals (70, 72.5, 105) */
        mp->sigdig =
            (PLINT)(floor(log10(fmax(fabs(mp->zlo), fabs(mp->zhi)))) + 1.0) + step_decimals(step);
        mp->sigdig = mp->sigdig < 1 ? 1 : mp->sigdig > 8 ? 8 : mp->sigdig;
    }
    return TP_OK;
}

/* Layout: the plate to scale, centred in the room left by labels and the colour bar. */
static tp_status map_layout(map_plan *mp, const tp_plot_map *m, const char *path, tp_diag *d)
{
    double page_w, page_h, top, bottom, left, right, bw, bh, vw, vh, span, aspect;
    double pad_x, pad_y;
    mp->scale = figure_scale(mp->width, mp->height, TP_PLOT_MAP_WIDTH, TP_PLOT_MAP_HEIGHT);
    mp->ht = PLOT_CHAR_MM * mp->scale;
    page_w = mp->width * PLOT_MM_PER_PX;
    page_h = mp->height * PLOT_MM_PER_PX;
    span = fmax(mp->x1 - mp->x0, mp->y1 - mp->y0);
    /* A plate is padded by a share of its longer side on both axes; axes of unrelated
     * quantities (free_aspect) each by a share of their own range. */
    pad_x = PLOT_MAP_PAD * (m->free_aspect ? mp->x1 - mp->x0 : span);
    pad_y = PLOT_MAP_PAD * (m->free_aspect ? mp->y1 - mp->y0 : span);
    top = title_fit(&mp->title, m->title, page_w, mp->ht);
    bottom = 4.8 * mp->ht;
    axis_fit(&mp->y, mp->y0 - pad_y, mp->y1 + pad_y, 0.0,
             (page_h - top - bottom) / (4.0 * mp->ht));
    mp->ylabel_disp = 0.8 + mp->y.label_len * PLOT_DIGIT_W + 1.2;
    left = (mp->ylabel_disp + 1.2) * mp->ht;
    right = (2.0 + 1.6 + 1.0 + 6.0 * PLOT_DIGIT_W + 3.0) * mp->ht;
    bw = page_w - left - right;
    bh = page_h - top - bottom;
    if (bw < 10.0 * mp->ht || bh < 8.0 * mp->ht) {
        tp_diag_error(d, tp_diag_loc_none(), path, "make the figure larger",
                      "the figure is too small for a heat map");
        return TP_ERR_USAGE;
    }
    aspect = (mp->y.hi - mp->y.lo) / (mp->x1 - mp->x0 + 2.0 * pad_x);
    vw = bw;
    vh = m->free_aspect ? bh : bw * aspect;
    if (vh > bh) {
        vh = bh;
        vw = bh / aspect;
    }
    vw = fmax(vw, 0.3 * bw); /* a slender plate gives up its shape to stay readable */
    vh = fmax(vh, 0.3 * bh);
    mp->vx0 = left + 0.5 * (bw - vw);
    mp->vx1 = mp->vx0 + vw;
    mp->vy0 = bottom + 0.5 * (bh - vh);
    mp->vy1 = mp->vy0 + vh;
    axis_fit(&mp->x, mp->x0 - pad_x, mp->x1 + pad_x, 0.0, vw / (9.0 * mp->ht));
    axis_fit(&mp->y, mp->y0 - pad_y, mp->y1 + pad_y, 0.0, vh / (4.0 * mp->ht));
    return TP_OK;
}

/* Check a map and lay it out; on failure report and return non-OK (nothing allocated). */
static tp_status map_plan_build(map_plan *mp, const tp_plot_map *m, const char *path, tp_diag *d)
{
    tp_status st;
    size_t i;
    memset(mp, 0, sizeof *mp);
    mp->m = m;
    st = map_check(mp, m, path, d);
    if (st != TP_OK)
        return st;
    st = map_cells(mp, m, path, d);
    if (st == TP_OK)
        st = map_layout(mp, m, path, d);
    if (st == TP_OK) {
        for (i = 0; i < m->n_marks; i++)
            if (!mark_inside(mp, i))
                tp_diag_warn(d, tp_diag_loc_none(), path, NULL,
                             "marker %zu (%s) is not on the map; left out", i + 1,
                             m->mark_label && m->mark_label[i] ? m->mark_label[i] : "unlabelled");
        if (marks_place(mp) != TP_OK) {
            tp_diag_error(d, tp_diag_loc_none(), path, NULL, "out of memory");
            st = TP_ERR_NOMEM;
        }
    }
    if (st != TP_OK)
        map_plan_free(mp);
    return st;
}

tp_status tp_plot_map_write(const char *path, const tp_plot_map *map, tp_diag *d)
{
    const plot_format *fmt = figure_target(path, map, "heat map", d);
    map_plan mp;
    tp_status st;
    if (!fmt)
        return TP_ERR_USAGE;
    st = map_plan_build(&mp, map, path, d);
    if (st != TP_OK)
        return st;
    st = plot_write(path, fmt, mp.width, mp.height, map_draw, &mp, d);
    map_plan_free(&mp);
    return st;
}

/* ---- bar charts -------------------------------------------------------------------------- */

#define PLOT_BAR_CHAR_W 0.75 /* width of a label character, character heights (measured on the
                                sans font's digits and lower case, with room) */

typedef struct bars_plan {
    const tp_plot_bars *b;
    int width, height;
    double scale, ht;
    plot_axis x;
    double vx0, vx1, vy0, vy1; /* viewport, mm */
    title_plan title;
} bars_plan;

static void bars_value_text(const tp_plot_bars *b, size_t k, char *buf, size_t size)
{
    if (b->value_text && b->value_text[k])
        text_copy(buf, b->value_text[k]);
    else
        snprintf(buf, size, "%.4g", b->value[k]);
}

static void bars_draw(const void *plan)
{
    const bars_plan *bp = plan;
    const tp_plot_bars *b = bp->b;
    char text[PLOT_TEXT_SIZE];
    double n = (double)b->n, xs = (bp->x.hi - bp->x.lo) / (bp->vx1 - bp->vx0);
    size_t k;
    plschr(bp->ht, 1.0);
    plsvpa(bp->vx0, bp->vx1, bp->vy0, bp->vy1);
    plwind(bp->x.lo, bp->x.hi, 0.0, n);
    plcol0(COL_GRID);
    plwidth(PLOT_AXIS_W * bp->scale);
    box_draw("g", &bp->x, "", NULL);
    for (k = 0; k < b->n; k++) {
        double y0 = n - (double)k - 0.82, y1 = n - (double)k - 0.18, v = b->value[k];
        PLFLT px[4] = {0.0, v, v, 0.0}, py[4] = {y0, y0, y1, y1};
        plcol0(COL_SERIES);
        plfill(4, px, py);
        plcol0(COL_INK);
        bars_value_text(b, k, text, sizeof text);
        plptex(v >= 0 ? v + 0.8 * bp->ht * xs : v - 0.8 * bp->ht * xs, 0.5 * (y0 + y1) - 0.12,
               1.0, 0.0, v >= 0 ? 0.0 : 1.0, text);
        text_copy(text, b->label[k]);
        plmtex("lv", 0.8, 1.0 - ((double)k + 0.62) / n, 1.0, text);
    }
    plcol0(COL_INK);
    plwidth(PLOT_AXIS_W * bp->scale);
    box_draw("bcnst", &bp->x, "bc", NULL);
    text_copy(text, b->xlabel);
    plmtex("b", 3.3, 0.5, 0.5, text);
    title_draw(&bp->title, bp->width * PLOT_MM_PER_PX, bp->vx0, bp->vx1);
}

static tp_status bars_plan_build(bars_plan *bp, const tp_plot_bars *b, const char *path,
                                 tp_diag *d)
{
    double page_w, page_h, top, bottom, left, right, lo = 0.0, hi = 0.0;
    size_t k, longest = 1, longest_value = 1;
    char text[PLOT_TEXT_SIZE];
    tp_status st;
    memset(bp, 0, sizeof *bp);
    bp->b = b;
    if (b->n == 0 || b->n > TP_PLOT_BARS_MAX || !b->label || !b->value) {
        tp_diag_error(d, tp_diag_loc_none(), path, NULL, "a bar chart takes 1 to %d bars, got %zu",
                      TP_PLOT_BARS_MAX, b->n);
        return TP_ERR_USAGE;
    }
    for (k = 0; k < b->n; k++) {
        if (!b->label[k] || !isfinite(b->value[k])) {
            tp_diag_error(d, tp_diag_loc_none(), path, NULL,
                          "bar %zu has no label or a value that is not finite", k + 1);
            return TP_ERR_USAGE;
        }
        lo = fmin(lo, b->value[k]);
        hi = fmax(hi, b->value[k]);
        if (text_chars(b->label[k]) > longest)
            longest = text_chars(b->label[k]);
        bars_value_text(b, k, text, sizeof text);
        if (text_chars(text) > longest_value)
            longest_value = text_chars(text);
    }
    bp->width = b->width;
    bp->height = b->height ? b->height : (int)(170 + 56 * b->n);
    if (bp->height > TP_PLOT_SIZE_MAX)
        bp->height = TP_PLOT_SIZE_MAX;
    st = figure_size(&bp->width, &bp->height, TP_PLOT_BARS_WIDTH, 500, path, d);
    if (st != TP_OK)
        return st;
    bp->scale = figure_scale(bp->width, bp->height, TP_PLOT_BARS_WIDTH, 500);
    bp->ht = PLOT_CHAR_MM * bp->scale;
    page_w = bp->width * PLOT_MM_PER_PX;
    page_h = bp->height * PLOT_MM_PER_PX;
    top = title_fit(&bp->title, b->title, page_w, bp->ht);
    bottom = 4.8 * bp->ht;
    left = (1.6 + PLOT_BAR_CHAR_W * (double)longest) * bp->ht;
    right = 2.0 * bp->ht;
    if (left > 0.45 * page_w)
        left = 0.45 * page_w;
    bp->vx0 = left;
    bp->vx1 = page_w - right;
    bp->vy0 = bottom;
    bp->vy1 = page_h - top;
    if (bp->vx1 - bp->vx0 < 10.0 * bp->ht || bp->vy1 - bp->vy0 < 2.0 * bp->ht) {
        tp_diag_error(d, tp_diag_loc_none(), path, "make the figure larger",
                      "the figure is too small for its bars");
        return TP_ERR_USAGE;
    }
    /* Room at the end of the longest bar for its value. */
    {
        double room = (1.4 + PLOT_BAR_CHAR_W * (double)longest_value) * bp->ht / (bp->vx1 - bp->vx0);
        double span = hi - lo > 0 ? hi - lo : 1.0;
        if (room > 0.6)
            room = 0.6;
        axis_fit(&bp->x, lo < 0 ? lo - span * room / (1.0 - room) : 0.0,
                 hi > 0 ? hi + span * room / (1.0 - room) : 0.0, 0.0,
                 (bp->vx1 - bp->vx0) / (9.0 * bp->ht));
    }
    return TP_OK;
}

tp_status tp_plot_bars_write(const char *path, const tp_plot_bars *bars, tp_diag *d)
{
    const plot_format *fmt = figure_target(path, bars, "bar chart", d);
    bars_plan bp;
    tp_status st;
    if (!fmt)
        return TP_ERR_USAGE;
    st = bars_plan_build(&bp, bars, path, d);
    if (st != TP_OK)
        return st;
    return plot_write(path, fmt, bp.width, bp.height, bars_draw, &bp, d);
}

/* The design-review report as a document: a title and a list of sections, each a list of
 * blocks (paragraphs, bullet items, tables, figures, preformatted text), written as one
 * self-contained HTML page (inline SVG figures, print CSS, no scripts, nothing fetched) or as
 * Markdown with the figures as SVG files in a folder beside it. What goes in the sections is
 * reportsections.h's business; this file only holds and writes them. */
#ifndef TP_REPORT_H
#define TP_REPORT_H

#include <stddef.h>

#include "diag.h"
#include "hardlimits.h"
#include "status.h"

/* How a section is set. */
typedef enum tp_report_style {
    TP_REPORT_PLAIN,    /* a section of the review */
    TP_REPORT_SUMMARY,  /* the summary box at the top */
    TP_REPORT_CAUTIONS  /* the cautions: framed and set apart */
} tp_report_style;

typedef struct tp_report tp_report;
typedef struct tp_report_section tp_report_section;
typedef struct tp_report_table tp_report_table;

/* A new, empty report titled `title`; NULL when memory runs out. Figures are drawn into a
 * scratch folder the report makes on first use (tp_report_figure_path) and removes when it is
 * destroyed. */
tp_report *tp_report_create(const char *title);

/* Free the report and its scratch folder; NULLs the handle. Accepts NULL. */
void tp_report_destroy(tp_report **r);

/* Append a section with anchor `id` (letters, digits, '-') and heading `heading`. Returns it,
 * or NULL when memory ran out (then the report remembers the failure: every later call on a
 * NULL section does nothing, and the writers return TP_ERR_NOMEM). */
tp_report_section *tp_report_add_section(tp_report *r, const char *id, const char *heading,
                                         tp_report_style style);

/* A paragraph, printf-style. */
void tp_report_para(tp_report_section *s, const char *fmt, ...)
    __attribute__((format(printf, 2, 3)));

/* A bullet item, printf-style; consecutive items form one list. */
void tp_report_item(tp_report_section *s, const char *fmt, ...)
    __attribute__((format(printf, 2, 3)));

/* A sub-heading within the section. */
void tp_report_subhead(tp_report_section *s, const char *text);

/* Preformatted text shown as given (the input file). */
void tp_report_pre(tp_report_section *s, const char *text);

/* A table of `cols` columns headed `head[0..cols)` (units in the headers, as "power (W)"),
 * captioned `caption` (may be NULL). Fill it with tp_report_cell, row by row. Returns NULL
 * when memory ran out (tp_report_cell then does nothing). */
tp_report_table *tp_report_table_add(tp_report_section *s, const char *caption, int cols,
                                     const char *const *head);

/* The next cell of the table, printf-style; a row ends after `cols` cells. A cell that is
 * PASS, WARN or FAIL (or starts with one of them and a blank or colon) is set as a verdict:
 * the word itself, marked, never colour alone. */
void tp_report_cell(tp_report_table *t, const char *fmt, ...)
    __attribute__((format(printf, 2, 3)));

/* Where a figure named `name` (letters, digits, '-') should be drawn as SVG: a path in the
 * report's scratch folder, into buf. TP_ERR_IO with a message when the folder cannot be made. */
tp_status tp_report_figure_path(tp_report *r, const char *name, char *buf, size_t size,
                                tp_diag *d);

/* Read the SVG drawn at tp_report_figure_path(name) into the section as figure `name` with
 * `caption` (alternative text and caption). The file is removed. */
tp_status tp_report_figure(tp_report *r, tp_report_section *s, const char *name,
                           const char *caption, tp_diag *d);

/* The number of sections and figures (tests, messages). */
size_t tp_report_sections(const tp_report *r);
size_t tp_report_figures(const tp_report *r);

/* Write the report to `path` as one HTML page. Atomic (outfile.h). */
tp_status tp_report_write_html(const tp_report *r, const char *path, tp_diag *d);

/* Write the report to `path` as Markdown (GitHub-flavoured tables), its figures as SVG files
 * in the folder named after it ("review.md": "review-files/"), referenced relatively. The
 * folder is written in full beside it under a temporary name and then takes the place of an
 * existing one as a whole (an exchange of names, then the old one removed); the Markdown file
 * is written atomically after it. On failure neither is left half-written. */
tp_status tp_report_write_markdown(const tp_report *r, const char *path, tp_diag *d);

/* The figure folder of a Markdown report at `path` ("dir/review.md": "dir/review-files") into
 * buf; -1 when it does not fit. */
int tp_report_files_dir(const char *path, char *buf, size_t size);

#endif

/* The design-review report as a document, and its two writers: one self-contained HTML page
 * (HTML5, inline SVG, print CSS for A4 and Letter, no scripts, no external resources) and
 * Markdown with the figures in a folder beside it. */
#define _GNU_SOURCE /* renameat2 (exchange the figure folders), nftw */
#include "report.h"

#include <ctype.h>
#include <errno.h>
#include <fcntl.h>
#include <ftw.h>
#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <unistd.h>

#include "array.h"
#include "hardlimits.h"
#include "infile.h"
#include "outfile.h"

typedef enum block_kind { B_PARA, B_ITEM, B_SUBHEAD, B_PRE, B_TABLE, B_FIGURE } block_kind;

typedef struct block {
    block_kind kind;
    char *text;            /* paragraph, item, sub-heading, preformatted text; figure caption */
    tp_report_table *table;
    char *svg;             /* figure: the SVG document as drawn */
    char name[48];         /* figure: its name (anchor, file name) */
} block;

struct tp_report_table {
    tp_report *r;
    int cols;
    char *caption;
    char **head;  /* cols */
    char **cells; /* row by row */
    size_t n, cap;
};

struct tp_report_section {
    tp_report *r;
    char id[48];
    char *heading;
    tp_report_style style;
    block *blocks;
    size_t n, cap;
};

struct tp_report {
    char *title;
    tp_report_section **sections;
    size_t n, cap;
    int nomem;                    /* an allocation failed: the writers refuse */
    char scratch[TP_PATH_MAX];    /* the figures' scratch folder ("" until made) */
    size_t n_figures;
};

/* ---- building ----------------------------------------------------------------------------- */

static char *dup_text(tp_report *r, const char *s)
{
    size_t n = strlen(s ? s : "");
    char *p = malloc(n + 1);
    if (!p) {
        r->nomem = 1;
        return NULL;
    }
    memcpy(p, s ? s : "", n + 1);
    return p;
}

static char *vformat(tp_report *r, const char *fmt, va_list ap)
    __attribute__((format(printf, 2, 0)));

static char *vformat(tp_report *r, const char *fmt, va_list ap)
{
    va_list aq;
    int n;
    char *p;
    va_copy(aq, ap);
    n = vsnprintf(NULL, 0, fmt, aq);
    va_end(aq);
    if (n < 0 || !(p = malloc((size_t)n + 1))) {
        r->nomem = 1;
        return NULL;
    }
    vsnprintf(p, (size_t)n + 1, fmt, ap);
    return p;
}

tp_report *tp_report_create(const char *title)
{
    tp_report *r = calloc(1, sizeof *r);
    if (!r)
        return NULL;
    r->title = dup_text(r, title);
    if (!r->title) {
        free(r);
        return NULL;
    }
    return r;
}

static void table_free(tp_report_table *t)
{
    size_t i;
    int k;
    if (!t)
        return;
    for (i = 0; i < t->n; i++)
        free(t->cells[i]);
    for (k = 0; t->head && k < t->cols; k++)
        free(t->head[k]);
    free(t->cells);
    free(t->head);
    free(t->caption);
    free(t);
}

static int remove_entry(const char *path, const struct stat *sb, int flag, struct FTW *ftw)
{
    (void)sb;
    (void)flag;
    (void)ftw;
    return remove(path) == 0 ? 0 : -1;
}

/* Remove a folder and everything below it (symbolic links removed, never followed). */
static void remove_tree(const char *path)
{
    nftw(path, remove_entry, 16, FTW_DEPTH | FTW_PHYS);
}

void tp_report_destroy(tp_report **rp)
{
    tp_report *r = rp ? *rp : NULL;
    size_t i, j;
    if (!r)
        return;
    for (i = 0; i < r->n; i++) {
        tp_report_section *s = r->sections[i];
        for (j = 0; j < s->n; j++) {
            free(s->blocks[j].text);
            free(s->blocks[j].svg);
            table_free(s->blocks[j].table);
        }
        free(s->blocks);
        free(s->heading);
        free(s);
    }
    if (r->scratch[0])
        remove_tree(r->scratch);
    free(r->sections);
    free(r->title);
    free(r);
    *rp = NULL;
}

tp_report_section *tp_report_add_section(tp_report *r, const char *id, const char *heading,
                                         tp_report_style style)
{
    tp_report_section *s;
    if (!r)
        return NULL;
    if (tp_array_reserve(&r->sections, &r->cap, r->n + 1, sizeof *r->sections, 16) != 0 ||
        !(s = calloc(1, sizeof *s))) {
        r->nomem = 1;
        return NULL;
    }
    s->r = r;
    snprintf(s->id, sizeof s->id, "%s", id);
    s->style = style;
    s->heading = dup_text(r, heading);
    if (!s->heading) {
        free(s);
        return NULL;
    }
    r->sections[r->n++] = s;
    return s;
}

/* A new block at the end of the section (zeroed), or NULL. */
static block *block_add(tp_report_section *s, block_kind kind)
{
    block *b;
    if (!s)
        return NULL;
    if (tp_array_reserve(&s->blocks, &s->cap, s->n + 1, sizeof *s->blocks, 8) != 0) {
        s->r->nomem = 1;
        return NULL;
    }
    b = &s->blocks[s->n++];
    memset(b, 0, sizeof *b);
    b->kind = kind;
    return b;
}

static void text_block(tp_report_section *s, block_kind kind, const char *fmt, va_list ap)
    __attribute__((format(printf, 3, 0)));

static void text_block(tp_report_section *s, block_kind kind, const char *fmt, va_list ap)
{
    block *b = block_add(s, kind);
    if (b)
        b->text = vformat(s->r, fmt, ap);
}

void tp_report_para(tp_report_section *s, const char *fmt, ...)
{
    va_list ap;
    va_start(ap, fmt);
    text_block(s, B_PARA, fmt, ap);
    va_end(ap);
}

void tp_report_item(tp_report_section *s, const char *fmt, ...)
{
    va_list ap;
    va_start(ap, fmt);
    text_block(s, B_ITEM, fmt, ap);
    va_end(ap);
}

void tp_report_subhead(tp_report_section *s, const char *text)
{
    block *b = block_add(s, B_SUBHEAD);
    if (b)
        b->text = dup_text(s->r, text);
}

void tp_report_pre(tp_report_section *s, const char *text)
{
    block *b = block_add(s, B_PRE);
    if (b)
        b->text = dup_text(s->r, text);
}

tp_report_table *tp_report_table_add(tp_report_section *s, const char *caption, int cols,
                                     const char *const *head)
{
    block *b = block_add(s, B_TABLE);
    tp_report_table *t;
    int k;
    if (!b)
        return NULL;
    t = calloc(1, sizeof *t);
    if (!t || !(t->head = calloc((size_t)cols, sizeof *t->head))) {
        free(t);
        s->r->nomem = 1;
        return NULL;
    }
    b->table = t;
    t->r = s->r;
    t->cols = cols;
    t->caption = caption ? dup_text(s->r, caption) : NULL;
    for (k = 0; k < cols; k++)
        t->head[k] = dup_text(s->r, head[k]);
    return t;
}

void tp_report_cell(tp_report_table *t, const char *fmt, ...)
{
    va_list ap;
    char *c;
    if (!t)
        return;
    if (tp_array_reserve(&t->cells, &t->cap, t->n + 1, sizeof *t->cells, 32) != 0) {
        t->r->nomem = 1;
        return;
    }
    va_start(ap, fmt);
    c = vformat(t->r, fmt, ap);
    va_end(ap);
    if (c)
        t->cells[t->n++] = c;
}

tp_status tp_report_figure_path(tp_report *r, const char *name, char *buf, size_t size,
                                tp_diag *d)
{
    if (!r->scratch[0]) {
        const char *tmp = getenv("TMPDIR");
        char dir[TP_PATH_MAX];
        int n = snprintf(dir, sizeof dir, "%s/tepid-report-XXXXXX", tmp && *tmp ? tmp : "/tmp");
        if (n < 0 || (size_t)n >= sizeof dir || !mkdtemp(dir)) {
            tp_diag_error(d, tp_diag_loc_none(), tmp && *tmp ? tmp : "/tmp",
                          "set TMPDIR to a writable folder",
                          "cannot make a scratch folder for the report's figures: %s",
                          strerror(errno));
            return TP_ERR_IO;
        }
        memcpy(r->scratch, dir, sizeof dir);
    }
    if ((size_t)snprintf(buf, size, "%s/%s.svg", r->scratch, name) >= size) {
        tp_diag_error(d, tp_diag_loc_none(), r->scratch, NULL, "path too long");
        return TP_ERR_IO;
    }
    return TP_OK;
}

tp_status tp_report_figure(tp_report *r, tp_report_section *s, const char *name,
                           const char *caption, tp_diag *d)
{
    char path[TP_PATH_MAX];
    char *svg = NULL;
    size_t len = 0;
    block *b;
    tp_status st = tp_report_figure_path(r, name, path, sizeof path, d);
    if (st != TP_OK)
        return st;
    st = tp_infile_read(path, TP_REPORT_SVG_MAX, &svg, &len, d);
    remove(path);
    if (st == TP_ERR_LIMIT)
        tp_diag_error(d, tp_diag_loc_none(), path, NULL, "the figure is larger than %ld bytes",
                      TP_REPORT_SVG_MAX);
    if (st != TP_OK)
        return st;
    b = block_add(s, B_FIGURE);
    if (!b) {
        free(svg);
        return TP_ERR_NOMEM;
    }
    b->svg = svg;
    b->text = dup_text(r, caption);
    snprintf(b->name, sizeof b->name, "%s", name);
    r->n_figures++;
    return r->nomem ? TP_ERR_NOMEM : TP_OK;
}

size_t tp_report_sections(const tp_report *r)
{
    return r->n;
}

size_t tp_report_figures(const tp_report *r)
{
    return r->n_figures;
}

/* ---- shared by the writers ---------------------------------------------------------------- */

/* PASS, WARN or FAIL at the start of a cell (alone, or followed by a blank or a colon), else
 * NULL. */
static const char *verdict_of(const char *cell)
{
    static const char *const words[] = {"PASS", "WARN", "FAIL"};
    size_t k;
    for (k = 0; k < 3; k++)
        if (strncmp(cell, words[k], 4) == 0 &&
            (cell[4] == '\0' || cell[4] == ' ' || cell[4] == ':'))
            return words[k];
    return NULL;
}

/* A cell that starts with a number (set right-aligned). */
static int numeric(const char *cell)
{
    const char *p = cell;
    if (*p == '-' || *p == '+')
        p++;
    return *p >= '0' && *p <= '9';
}

static const char *table_cell(const tp_report_table *t, size_t row, int col)
{
    size_t i = row * (size_t)t->cols + (size_t)col;
    return i < t->n ? t->cells[i] : "";
}

static size_t table_rows(const tp_report_table *t)
{
    return (t->n + (size_t)t->cols - 1) / (size_t)t->cols;
}

/* Every cell of column k a number or "-" (and at least one a number). */
static int numeric_column(const tp_report_table *t, int k)
{
    size_t row, rows = table_rows(t);
    int any = 0;
    for (row = 0; row < rows; row++) {
        const char *c = table_cell(t, row, k);
        if (numeric(c))
            any = 1;
        else if (strcmp(c, "-") != 0)
            return 0;
    }
    return any;
}

/* ---- HTML --------------------------------------------------------------------------------- */

static void html_text(FILE *fp, const char *s)
{
    for (; s && *s; s++) {
        switch (*s) {
        case '&':
            fputs("&amp;", fp);
            break;
        case '<':
            fputs("&lt;", fp);
            break;
        case '>':
            fputs("&gt;", fp);
            break;
        case '"':
            fputs("&quot;", fp);
            break;
        default:
            fputc(*s, fp);
        }
    }
}

/* The style sheet: screen and print (A4 and Letter alike: the page size is the printer's, the
 * margins fixed), page breaks between sections, tables that wrap rather than clip. */
static const char html_css[] =
    "body{font-family:\"DejaVu Sans\",\"Liberation Sans\",Arial,sans-serif;color:#1a1a1a;"
    "line-height:1.45;max-width:62rem;margin:1.5rem auto;padding:0 1rem}\n"
    "h1{font-size:1.6rem;margin:0 0 .3rem}\n"
    "h2{font-size:1.3rem;border-bottom:2px solid #333;padding-bottom:.15rem;"
    "margin:2.2rem 0 .6rem}\n"
    "h3{font-size:1.05rem;margin:1.3rem 0 .4rem}\n"
    "p.meta{color:#444;margin:.2rem 0 1rem}\n"
    "table{border-collapse:collapse;margin:.5rem 0 1.1rem;font-size:.88rem}\n"
    "caption{text-align:left;font-weight:bold;padding:.2rem 0 .3rem}\n"
    "th,td{border:1px solid #b5b5b5;padding:.2rem .5rem;vertical-align:top;text-align:left;"
    "overflow-wrap:break-word}\n"
    "th{background:#ececec}\n"
    "td.num{text-align:right;font-variant-numeric:tabular-nums;white-space:nowrap}\n"
    ".verdict{font-weight:bold;padding:0 .3rem;border:1px solid #777;border-radius:3px;"
    "white-space:nowrap}\n"
    ".v-pass{background:#dcefd6}.v-warn{background:#fbeec4}.v-fail{background:#f5cdc8}\n"
    "section.summary{border:2px solid #333;border-radius:4px;padding:0 1rem .6rem;"
    "background:#f6f6f6}\n"
    "section.summary h2{margin-top:.8rem}\n"
    "section.summary table{width:100%}\n"
    "section.summary th{background:#e6e6e6}\n"
    "section.summary td:first-child{width:30%;font-weight:bold}\n"
    "section.summary td.num{text-align:left;white-space:normal}\n"
    "section.cautions{border:3px solid #a00;border-radius:4px;padding:0 1rem .5rem;"
    "background:#fff4f1;margin-top:1.2rem}\n"
    "section.cautions h2{color:#8b0000;border-color:#a00;margin-top:.8rem}\n"
    "section.cautions li{margin:.35rem 0}\n"
    "figure{margin:.8rem 0 1.2rem}\n"
    "figure svg{display:block;width:100%;height:auto;border:1px solid #d5d5d5}\n"
    "figcaption{font-size:.85rem;color:#333;margin-top:.3rem}\n"
    "pre{background:#f4f4f4;border:1px solid #d5d5d5;padding:.6rem;font-size:.8rem;"
    "white-space:pre-wrap;overflow-wrap:anywhere}\n"
    "nav ol{columns:2;font-size:.9rem}\n"
    "@media print{\n"
    "@page{margin:14mm 12mm}\n"
    "body{max-width:none;margin:0;padding:0;font-size:9.5pt}\n"
    "nav{display:none}\n"
    "section.brk{break-before:page}\n"
    "h2,h3,caption{break-after:avoid}\n"
    "table{width:100%;font-size:8.5pt}\n"
    "thead{display:table-header-group}\n"
    "tr,figure{break-inside:avoid}\n"
    "figure svg{max-height:125mm;width:auto;max-width:100%}\n"
    "section.summary,section.cautions{break-inside:avoid}\n"
    "}\n";

/* Rewrite an SVG document for inlining: drop the XML declaration and the root's fixed size
 * (the style sheet sizes it), and give every id and reference to one the figure's own prefix,
 * so that two figures' glyph and clip ids do not collide in one page. */
static void html_svg(FILE *fp, const char *svg, const char *prefix)
{
    const char *p = strstr(svg, "<svg");
    const char *root_end = p ? strchr(p, '>') : NULL;
    if (!p || !root_end)
        return;
    /* The root element without width and height. */
    {
        const char *q = p;
        while (q < root_end) {
            if ((strncmp(q, " width=\"", 8) == 0 || strncmp(q, " height=\"", 9) == 0)) {
                const char *e = strchr(strchr(q, '"') + 1, '"');
                if (e && e < root_end) {
                    q = e + 1;
                    continue;
                }
            }
            fputc(*q++, fp);
        }
        fprintf(fp, " role=\"img\" aria-labelledby=\"%s-cap\"", prefix);
    }
    for (p = root_end; *p; p++) {
        static const char *const marks[] = {"id=\"", "href=\"#", "url(#"};
        size_t k, hit = 0;
        for (k = 0; k < 3; k++) {
            size_t n = strlen(marks[k]);
            if (strncmp(p, marks[k], n) == 0) {
                fwrite(p, 1, n, fp);
                fprintf(fp, "%s-", prefix);
                p += n - 1;
                hit = 1;
                break;
            }
        }
        if (!hit)
            fputc(*p, fp);
    }
    fputc('\n', fp);
}

/* Prose: text with `code` spans set as code. */
static void html_prose(FILE *fp, const char *s)
{
    int code = 0;
    char piece[2] = {0, 0};
    for (; s && *s; s++) {
        if (*s == '`' && (code || strchr(s + 1, '`'))) {
            fputs(code ? "</code>" : "<code>", fp);
            code = !code;
            continue;
        }
        piece[0] = *s;
        html_text(fp, piece);
    }
    if (code)
        fputs("</code>", fp);
}

static void html_table(FILE *fp, const tp_report_table *t)
{
    size_t row, rows = table_rows(t);
    int k;
    fputs("<table>\n", fp);
    if (t->caption) {
        fputs("<caption>", fp);
        html_text(fp, t->caption);
        fputs("</caption>\n", fp);
    }
    fputs("<thead><tr>", fp);
    for (k = 0; k < t->cols; k++) {
        fputs("<th scope=\"col\">", fp);
        html_text(fp, t->head[k]);
        fputs("</th>", fp);
    }
    fputs("</tr></thead>\n<tbody>\n", fp);
    for (row = 0; row < rows; row++) {
        fputs("<tr>", fp);
        for (k = 0; k < t->cols; k++) {
            const char *c = table_cell(t, row, k), *v = verdict_of(c);
            if (v) {
                char lower[5] = {(char)(v[0] | 0x20), (char)(v[1] | 0x20), (char)(v[2] | 0x20),
                                 (char)(v[3] | 0x20), '\0'};
                fprintf(fp, "<td><span class=\"verdict v-%s\">%s</span>", lower, v);
                html_text(fp, c + 4);
                fputs("</td>", fp);
            } else {
                fputs(numeric_column(t, k) ? "<td class=\"num\">" : "<td>", fp);
                html_text(fp, c);
                fputs("</td>", fp);
            }
        }
        fputs("</tr>\n", fp);
    }
    fputs("</tbody>\n</table>\n", fp);
}

static void html_section(FILE *fp, const tp_report_section *s, size_t index)
{
    static const char *const classes[] = {"", "summary", "cautions"};
    size_t i;
    int in_list = 0;
    fprintf(fp, "<section id=\"%s\" class=\"%s%s\">\n<h2>", s->id, classes[s->style],
            index > 1 ? " brk" : "");
    html_text(fp, s->heading);
    fputs("</h2>\n", fp);
    for (i = 0; i < s->n; i++) {
        const block *b = &s->blocks[i];
        if (in_list && b->kind != B_ITEM) {
            fputs("</ul>\n", fp);
            in_list = 0;
        }
        switch (b->kind) {
        case B_PARA:
            fputs("<p>", fp);
            html_prose(fp, b->text);
            fputs("</p>\n", fp);
            break;
        case B_ITEM:
            if (!in_list)
                fputs("<ul>\n", fp);
            in_list = 1;
            fputs("<li>", fp);
            html_prose(fp, b->text);
            fputs("</li>\n", fp);
            break;
        case B_SUBHEAD:
            fputs("<h3>", fp);
            html_text(fp, b->text);
            fputs("</h3>\n", fp);
            break;
        case B_PRE:
            fputs("<pre>", fp);
            html_text(fp, b->text);
            fputs("</pre>\n", fp);
            break;
        case B_TABLE:
            html_table(fp, b->table);
            break;
        case B_FIGURE:
            fprintf(fp, "<figure id=\"fig-%s\">\n", b->name);
            {
                char prefix[64];
                snprintf(prefix, sizeof prefix, "fig-%s", b->name);
                html_svg(fp, b->svg, prefix);
                fprintf(fp, "<figcaption id=\"%s-cap\">", prefix);
            }
            html_text(fp, b->text);
            fputs("</figcaption>\n</figure>\n", fp);
            break;
        }
    }
    if (in_list)
        fputs("</ul>\n", fp);
    fputs("</section>\n", fp);
}

tp_status tp_report_write_html(const tp_report *r, const char *path, tp_diag *d)
{
    tp_outfile o;
    tp_status st;
    size_t i;
    if (r->nomem)
        return TP_ERR_NOMEM;
    st = tp_outfile_open(&o, path, d);
    if (st != TP_OK)
        return st;
    fputs("<!DOCTYPE html>\n<html lang=\"en\">\n<head>\n<meta charset=\"utf-8\">\n"
          "<meta name=\"viewport\" content=\"width=device-width, initial-scale=1\">\n"
          "<meta name=\"generator\" content=\"tepid report\">\n<title>",
          o.fp);
    html_text(o.fp, r->title);
    fprintf(o.fp, "</title>\n<style>\n%s</style>\n</head>\n<body>\n<main>\n<h1>", html_css);
    html_text(o.fp, r->title);
    fputs("</h1>\n<nav aria-label=\"contents\"><ol>\n", o.fp);
    for (i = 0; i < r->n; i++) {
        fprintf(o.fp, "<li><a href=\"#%s\">", r->sections[i]->id);
        html_text(o.fp, r->sections[i]->heading);
        fputs("</a></li>\n", o.fp);
    }
    fputs("</ol></nav>\n", o.fp);
    for (i = 0; i < r->n; i++)
        html_section(o.fp, r->sections[i], i);
    fputs("</main>\n</body>\n</html>\n", o.fp);
    return tp_outfile_commit(&o, d);
}

/* ---- Markdown ----------------------------------------------------------------------------- */

/* Text in a paragraph, list item or table cell: the characters Markdown would read as markup
 * escaped, but for `code` spans (kept) and an underscore within a word (no emphasis there). */
static void md_text(FILE *fp, const char *s, int in_table)
{
    const char *start = s;
    for (; s && *s; s++) {
        int inword = *s == '_' && s > start && isalnum((unsigned char)s[-1]) &&
                     isalnum((unsigned char)s[1]);
        if (strchr("\\*_[]<>#|", *s) && (*s != '#' || !in_table) && !inword)
            fputc('\\', fp);
        if (*s == '\n')
            fputs(in_table ? "<br>" : "  \n", fp);
        else
            fputc(*s, fp);
    }
}

static void md_table(FILE *fp, const tp_report_table *t)
{
    size_t row, rows = table_rows(t);
    int k;
    if (t->caption) {
        fputs("**", fp);
        md_text(fp, t->caption, 0);
        fputs("**\n\n", fp);
    }
    fputc('|', fp);
    for (k = 0; k < t->cols; k++) {
        fputc(' ', fp);
        md_text(fp, t->head[k], 1);
        fputs(" |", fp);
    }
    fputs("\n|", fp);
    for (k = 0; k < t->cols; k++) {
        /* a column of numbers is right-aligned */
        fputs(numeric_column(t, k) ? " ---: |" : " --- |", fp);
    }
    fputc('\n', fp);
    for (row = 0; row < rows; row++) {
        fputc('|', fp);
        for (k = 0; k < t->cols; k++) {
            const char *c = table_cell(t, row, k);
            fputc(' ', fp);
            if (verdict_of(c)) {
                fprintf(fp, "**%.4s**", c);
                md_text(fp, c + 4, 1);
            } else {
                md_text(fp, c, 1);
            }
            fputs(" |", fp);
        }
        fputc('\n', fp);
    }
    fputc('\n', fp);
}

/* A fence longer than any run of backticks in `text`. */
static void md_fence(FILE *fp, const char *text)
{
    size_t run = 0, longest = 0, k;
    for (; *text; text++) {
        run = *text == '`' ? run + 1 : 0;
        if (run > longest)
            longest = run;
    }
    for (k = 0; k < (longest < 3 ? 3 : longest + 1); k++)
        fputc('`', fp);
}

static void md_section(FILE *fp, const tp_report_section *s, const char *files)
{
    size_t i;
    fputs("## ", fp);
    md_text(fp, s->heading, 0);
    fputs("\n\n", fp);
    for (i = 0; i < s->n; i++) {
        const block *b = &s->blocks[i];
        int last_item = b->kind == B_ITEM && (i + 1 == s->n || s->blocks[i + 1].kind != B_ITEM);
        switch (b->kind) {
        case B_PARA:
            md_text(fp, b->text, 0);
            fputs("\n\n", fp);
            break;
        case B_ITEM:
            fputs(s->style == TP_REPORT_CAUTIONS ? "- **CAUTION:** " : "- ", fp);
            md_text(fp, b->text, 0);
            fputs(last_item ? "\n\n" : "\n", fp);
            break;
        case B_SUBHEAD:
            fputs("### ", fp);
            md_text(fp, b->text, 0);
            fputs("\n\n", fp);
            break;
        case B_PRE:
            md_fence(fp, b->text);
            fputc('\n', fp);
            fputs(b->text, fp);
            if (b->text[0] && b->text[strlen(b->text) - 1] != '\n')
                fputc('\n', fp);
            md_fence(fp, b->text);
            fputs("\n\n", fp);
            break;
        case B_TABLE:
            md_table(fp, b->table);
            break;
        case B_FIGURE:
            fputs("![", fp);
            md_text(fp, b->text, 0);
            fprintf(fp, "](%s/%s.svg)\n\n", files, b->name);
            fputs("*", fp);
            md_text(fp, b->text, 0);
            fputs("*\n\n", fp);
            break;
        }
    }
}

int tp_report_files_dir(const char *path, char *buf, size_t size)
{
    const char *slash = strrchr(path, '/'), *dot = strrchr(path, '.');
    size_t stem = dot && (!slash || dot > slash) ? (size_t)(dot - path) : strlen(path);
    int n = snprintf(buf, size, "%.*s-files", (int)stem, path);
    return n < 0 || (size_t)n >= size ? -1 : 0;
}

/* Write every figure into a new folder beside `dir`, then put it in the place of `dir` as a
 * whole. */
static tp_status md_figures(const tp_report *r, const char *dir, tp_diag *d)
{
    char tmp[TP_PATH_MAX], file[TP_PATH_MAX];
    struct stat sb;
    size_t i, j;
    tp_status st = TP_OK;
    if ((size_t)snprintf(tmp, sizeof tmp, "%s.tmpXXXXXX", dir) >= sizeof tmp || !mkdtemp(tmp)) {
        tp_diag_error(d, tp_diag_loc_none(), dir, "check that its folder is writable",
                      "cannot make the figure folder: %s", strerror(errno));
        return TP_ERR_IO;
    }
    {
        mode_t mask = umask(0); /* mkdtemp makes it 0700: give it the usual mode instead */
        umask(mask);
        chmod(tmp, 0777 & ~mask);
    }
    for (i = 0; st == TP_OK && i < r->n; i++) {
        const tp_report_section *s = r->sections[i];
        for (j = 0; st == TP_OK && j < s->n; j++) {
            tp_outfile o;
            if (s->blocks[j].kind != B_FIGURE)
                continue;
            if ((size_t)snprintf(file, sizeof file, "%s/%s.svg", tmp, s->blocks[j].name) >=
                sizeof file) {
                tp_diag_error(d, tp_diag_loc_none(), dir, NULL, "path too long");
                st = TP_ERR_USAGE;
                break;
            }
            st = tp_outfile_open(&o, file, d);
            if (st != TP_OK)
                break;
            fputs(s->blocks[j].svg, o.fp);
            st = tp_outfile_commit(&o, d);
        }
    }
    if (st == TP_OK && lstat(dir, &sb) == 0) {
        if (!S_ISDIR(sb.st_mode)) {
            tp_diag_error(d, tp_diag_loc_none(), dir, "remove it or choose another report name",
                          "exists and is not a folder: the report's figures go there");
            st = TP_ERR_USAGE;
        } else if (renameat2(AT_FDCWD, tmp, AT_FDCWD, dir, RENAME_EXCHANGE) == 0) {
            remove_tree(tmp); /* now the old folder */
            return TP_OK;
        } else {
            /* No exchange on this file system: move the old one aside, then the new one in. */
            char old[TP_PATH_MAX];
            int made = (size_t)snprintf(old, sizeof old, "%s.oldXXXXXX", dir) < sizeof old &&
                       mkdtemp(old) != NULL;
            int moved = made && rename(dir, old) == 0, err;
            if (moved && rename(tmp, dir) == 0) {
                remove_tree(old);
                return TP_OK;
            }
            err = errno;
            if (moved)
                rename(old, dir); /* the old folder back in its place */
            else if (made)
                rmdir(old);
            tp_diag_error(d, tp_diag_loc_none(), dir, NULL, "cannot replace the figure folder: %s",
                          strerror(err));
            st = TP_ERR_IO;
        }
    } else if (st == TP_OK && rename(tmp, dir) != 0) {
        tp_diag_error(d, tp_diag_loc_none(), dir, NULL, "cannot write the figure folder: %s",
                      strerror(errno));
        st = TP_ERR_IO;
    } else if (st == TP_OK) {
        return TP_OK;
    }
    remove_tree(tmp);
    return st;
}

tp_status tp_report_write_markdown(const tp_report *r, const char *path, tp_diag *d)
{
    char dir[TP_PATH_MAX];
    const char *files, *slash;
    tp_outfile o;
    tp_status st;
    size_t i;
    if (r->nomem)
        return TP_ERR_NOMEM;
    if (tp_report_files_dir(path, dir, sizeof dir) != 0) {
        tp_diag_error(d, tp_diag_loc_none(), path, NULL, "path too long");
        return TP_ERR_USAGE;
    }
    slash = strrchr(dir, '/');
    files = slash ? slash + 1 : dir;
    /* The text first into its temporary file, then the figures (the folder replaced as a
     * whole), then the text's rename: a failure before the exchange leaves the old report and
     * its folder as they were. */
    st = tp_outfile_open(&o, path, d);
    if (st != TP_OK)
        return st;
    fputs("# ", o.fp);
    md_text(o.fp, r->title, 0);
    fputs("\n\n", o.fp);
    for (i = 0; i < r->n; i++)
        md_section(o.fp, r->sections[i], files);
    st = md_figures(r, dir, d);
    if (st != TP_OK) {
        tp_outfile_abort(&o);
        return st;
    }
    return tp_outfile_commit(&o, d);
}

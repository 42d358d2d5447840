/* Benchmark figure: wall time against unknowns on log-log axes, one line per series, drawn with
 * tepid's own plot module from the long-format CSV tests/bench/run.sh writes
 * (series,unknowns,seconds). Built by CMake as bench_plot (not a test; it checks no values, the
 * figures' source is the measured results file).
 *
 *   bench_plot OUT.png|svg|pdf SCALING.csv [TITLE] */
#include <errno.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "plot.h"

#define BP_SERIES_MAX 8   /* series in one figure (the chart's legend holds 12) */
#define BP_POINTS_MAX 64  /* points per series */
#define BP_LINE_MAX 512   /* longest CSV line, bytes */
#define BP_LABEL_MAX 96   /* longest series label, bytes */

typedef struct bp_series {
    char label[BP_LABEL_MAX];
    double x[BP_POINTS_MAX], y[BP_POINTS_MAX]; /* log10 unknowns, log10 seconds */
    size_t n;
} bp_series;

/* Strict number: the whole field, finite. */
static int parse_number(const char *s, double *out)
{
    char *end;
    errno = 0;
    *out = strtod(s, &end);
    return end != s && *end == '\0' && errno == 0 && isfinite(*out);
}

/* Add one point to the series called `label` (created on first sight). */
static int add_point(bp_series *all, size_t *n_series, const char *label, double x, double y)
{
    size_t i;
    for (i = 0; i < *n_series; i++)
        if (strcmp(all[i].label, label) == 0)
            break;
    if (i == *n_series) {
        if (*n_series == BP_SERIES_MAX)
            return -1;
        size_t len = strlen(label);
        if (len >= sizeof all[i].label)
            len = sizeof all[i].label - 1; /* a long label is cut */
        memcpy(all[i].label, label, len);
        all[i].label[len] = '\0';
        all[i].n = 0;
        (*n_series)++;
    }
    if (all[i].n == BP_POINTS_MAX)
        return -1;
    all[i].x[all[i].n] = log10(x);
    all[i].y[all[i].n] = log10(y);
    all[i].n++;
    return 0;
}

/* Order each series' points by x (insertion sort: a few points each). */
static void sort_points(bp_series *all, size_t n_series)
{
    size_t s, i, j;
    for (s = 0; s < n_series; s++)
        for (i = 1; i < all[s].n; i++)
            for (j = i; j > 0 && all[s].x[j - 1] > all[s].x[j]; j--) {
                double tx = all[s].x[j], ty = all[s].y[j];
                all[s].x[j] = all[s].x[j - 1];
                all[s].y[j] = all[s].y[j - 1];
                all[s].x[j - 1] = tx;
                all[s].y[j - 1] = ty;
            }
}

/* Read series,unknowns,seconds rows (after a header); rows with a non-positive or missing
 * number are skipped (a benchmark that did not run). Returns 0, or -1 with a message. */
static int read_csv(const char *path, bp_series *all, size_t *n_series)
{
    char line[BP_LINE_MAX];
    FILE *fp = fopen(path, "r");
    int lineno = 0;
    if (!fp) {
        fprintf(stderr, "bench_plot: %s: %s\n", path, strerror(errno));
        return -1;
    }
    *n_series = 0;
    while (fgets(line, sizeof line, fp)) {
        char *label, *xs, *ys, *nl;
        double x, y;
        lineno++;
        if ((nl = strchr(line, '\n')))
            *nl = '\0';
        if (lineno == 1 || line[0] == '\0')
            continue;
        label = line;
        xs = strchr(label, ',');
        ys = xs ? strchr(xs + 1, ',') : NULL;
        if (!xs || !ys) {
            fprintf(stderr, "bench_plot: %s:%d: expected series,unknowns,seconds\n", path, lineno);
            fclose(fp);
            return -1;
        }
        *xs++ = '\0';
        *ys++ = '\0';
        if (!parse_number(xs, &x) || !parse_number(ys, &y) || x <= 0 || y <= 0)
            continue;
        if (add_point(all, n_series, label, x, y) != 0) {
            fprintf(stderr, "bench_plot: %s:%d: more than %d series or %d points\n", path,
                    lineno, BP_SERIES_MAX, BP_POINTS_MAX);
            fclose(fp);
            return -1;
        }
    }
    fclose(fp);
    sort_points(all, *n_series);
    if (*n_series == 0) {
        fprintf(stderr, "bench_plot: %s: no points\n", path);
        return -1;
    }
    return 0;
}

int main(int argc, char **argv)
{
    static bp_series all[BP_SERIES_MAX];
    tp_plot_series series[BP_SERIES_MAX + 1];
    double gx[2], gy[2], xlo = HUGE_VAL, xhi = -HUGE_VAL;
    tp_plot_panel panel;
    tp_plot_chart chart;
    tp_diag d;
    size_t n = 0, i, k = 0, j;
    if (argc < 3 || argc > 4) {
        fprintf(stderr, "usage: bench_plot OUT.png|svg|pdf SCALING.csv [TITLE]\n");
        return 2;
    }
    if (read_csv(argv[2], all, &n) != 0)
        return 1;
    memset(series, 0, sizeof series);
    for (i = 0; i < n; i++) {
        /* One line per series through its measured points (the plot module colours series by
         * their order, so markers of their own would take another colour). */
        series[k].label = all[i].label;
        series[k].x = all[i].x;
        series[k].y = all[i].y;
        series[k].n = all[i].n;
        series[k++].dash = (int)(i % 2);
        for (j = 0; j < all[i].n; j++) {
            xlo = fmin(xlo, all[i].x[j]);
            xhi = fmax(xhi, all[i].x[j]);
        }
    }
    /* A guide of slope 1 through the first series' first point: time proportional to size. */
    gx[0] = xlo;
    gx[1] = xhi;
    gy[0] = all[0].y[0] + (xlo - all[0].x[0]);
    gy[1] = gy[0] + (xhi - xlo);
    series[k].label = "slope 1 (time proportional to unknowns)";
    series[k].x = gx;
    series[k].y = gy;
    series[k].n = 2;
    series[k++].dash = 2;
    memset(&panel, 0, sizeof panel);
    panel.ylabel = "log10 of wall time, s";
    panel.series = series;
    panel.n_series = k;
    memset(&chart, 0, sizeof chart);
    chart.title = argc == 4 ? argv[3] : "wall time against unknowns";
    chart.xlabel = "log10 of unknowns (free temperatures)";
    chart.panels = &panel;
    chart.n_panels = 1;
    chart.width = 1000;
    chart.height = 700;
    tp_diag_init(&d, stderr);
    return tp_plot_chart_write(argv[1], &chart, &d) == TP_OK ? 0 : 1;
}

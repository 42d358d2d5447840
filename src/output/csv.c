/* CSV output of a run's history, written through an atomic output file. A gridded plate's
 * columns are each layer's mean, min and max, the nodes outside the grid, and the working
 * surface's mean, min and max (docs/grid.md). */
#include "csv.h"

#include <math.h>

#include "grid.h"
#include "outfile.h"
#include "units.h"


void tp_csv_real(FILE *fp, double v)
{
    if (isfinite(v))
        fprintf(fp, TP_REAL_FMT, v);
}

tp_status tp_csv_write_history(const char *path, const tp_history *h, tp_diag *d)
{
    const tp_network *net = h->net;
    tp_outfile o;
    long i;
    int k;
    tp_status st = tp_outfile_open(&o, path, d);
    if (st != TP_OK)
        return st;
    fputs("time_s", o.fp);
    for (k = 0; k < h->n_out; k++) {
        char label[TP_ID_MAX + 8];
        fprintf(o.fp, ",%s_C", tp_history_label(h, k, label, sizeof label));
    }
    if (h->surface_min)
        fputs(",surface_mean_C,surface_min_C,surface_max_C", o.fp);
    for (k = 0; k < net->n_sources; k++)
        fprintf(o.fp, ",%s_W", net->sources[k].id);
    if (net->has_control)
        fputs(",duty,reading_C", o.fp);
    if (net->has_control && h->schedule)
        fputs(",setpoint_C", o.fp);
    fputc('\n', o.fp);
    for (i = 0; i < h->n; i++) {
        tp_csv_real(o.fp, h->t[i]);
        for (k = 0; k < h->n_out; k++) {
            fputc(',', o.fp);
            tp_csv_real(o.fp, tp_history_temp(h, i, k) - TP_KELVIN_0C);
        }
        if (h->surface_min) {
            fputc(',', o.fp);
            tp_csv_real(o.fp, h->surface[i] - TP_KELVIN_0C);
            fputc(',', o.fp);
            tp_csv_real(o.fp, h->surface_min[i] - TP_KELVIN_0C);
            fputc(',', o.fp);
            tp_csv_real(o.fp, h->surface_max[i] - TP_KELVIN_0C);
        }
        for (k = 0; k < net->n_sources; k++) {
            fputc(',', o.fp);
            tp_csv_real(o.fp, h->power[i * net->n_sources + k]);
        }
        if (net->has_control) {
            fputc(',', o.fp);
            tp_csv_real(o.fp, h->duty[i]);
            fputc(',', o.fp);
            tp_csv_real(o.fp, h->reading[i] - TP_KELVIN_0C);
        }
        if (net->has_control && h->schedule) {
            fputc(',', o.fp);
            tp_csv_real(o.fp, h->setpoint[i] - TP_KELVIN_0C);
        }
        fputc('\n', o.fp);
    }
    return tp_outfile_commit(&o, d);
}

tp_status tp_csv_write_maps(const char *path, const tp_net_grid *g, const double *const *maps,
                           const char *const *names, int n_maps, tp_diag *d)
{
    tp_outfile o;
    int i, j, k;
    tp_status st = tp_outfile_open(&o, path, d);
    if (st != TP_OK)
        return st;
    fputs("i,j,x_mm,y_mm", o.fp);
    for (k = 0; k < n_maps; k++)
        fprintf(o.fp, ",%s_C", names[k]);
    fputc('\n', o.fp);
    for (j = 0; j < g->ny; j++) {
        for (i = 0; i < g->nx; i++) {
            double x, y;
            tp_grid_cell_centre(g, i, j, &x, &y);
            fprintf(o.fp, "%d,%d,", i, j);
            tp_csv_real(o.fp, x * 1e3);
            fputc(',', o.fp);
            tp_csv_real(o.fp, y * 1e3);
            for (k = 0; k < n_maps; k++) {
                fputc(',', o.fp);
                if (maps[k])
                    tp_csv_real(o.fp, maps[k][j * g->nx + i] - TP_KELVIN_0C);
            }
            fputc('\n', o.fp);
        }
    }
    return tp_outfile_commit(&o, d);
}

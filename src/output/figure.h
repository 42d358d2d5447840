/* Figures of study records: the warm-up chart and the working-surface heat map, drawn with
 * plot.h from what the studies computed (they never draw). */
#ifndef TP_FIGURE_H
#define TP_FIGURE_H

#include <stddef.h>

#include "diag.h"
#include "guard.h"
#include "metrics.h"
#include "network.h"
#include "plot.h"
#include "size.h"
#include "status.h"
#include "steadyreport.h"
#include "warmup.h"

/* Draw a warm-up run under `title`: temperatures, surface estimate, reading and setpoint over
 * power and duty, with the times of tp_figure_warmup_marks marked; the format follows the
 * extension. Atomic (plot.h). */
tp_status tp_figure_warmup(const char *path, const char *title, const tp_network *net,
                           const tp_warmup *w, tp_diag *d);

/* The height of a warm-up chart whose temperature panel has `curves` curves: 0 (the default)
 * for a few; taller for many, so that their legend finds room beside the curves without the
 * temperature axis growing far past the data. */
int tp_figure_warmup_height(size_t curves);

#define TP_FIGURE_MARKS 2         /* times marked on the warm-up chart */
#define TP_FIGURE_MARK_TEXT 64    /* bytes of a mark's label */

/* The times worth marking on the warm-up chart, as the metrics report them (m->t_setpoint,
 * m->t_surface_ready; those that exist), in minutes, labelled with the time into text[k]:
 * fills marks[0..) and returns the count. */
size_t tp_figure_warmup_marks(const tp_metrics *m, tp_plot_vline marks[TP_FIGURE_MARKS],
                              char text[TP_FIGURE_MARKS][TP_FIGURE_MARK_TEXT]);

/* Draw how a scheduled warm-up (w->history.schedule set) followed its programme under
 * `title`: the setpoint as it moved with the reading and the working surface above, their
 * tracking errors (minus the setpoint; gaps while the heater is off) below, each segment's
 * start marked with its number and kind. Atomic (plot.h). */
tp_status tp_figure_programme(const char *path, const char *title, const tp_warmup *w,
                              tp_diag *d);

/* Draw a working-surface `map` (K, nx * ny cells of grid g) as a heat map in degC with the
 * plate outline, the sensor and the hottest and coldest cells marked; the format follows the
 * extension (tp_plot_map_write). */
tp_status tp_figure_surface(const char *path, const tp_net_grid *g, const double *map,
                            const char *title, tp_diag *d);

/* Draw a heater sizing `r` (size.h, with its curves) under `title`: the time to the target
 * against the heater's power for the nominal corner and the slowest one, the time allowed as a
 * reference line and the answer marked; the format follows the extension. Atomic (plot.h). */
tp_status tp_figure_size(const char *path, const char *title, const tp_size_result *r,
                         double within, tp_diag *d);

/* Draw guard's study under the title "guard: <title_of_case>": the nominal, slowest and
 * deepest-dipping healthy readings, and every fault's reading from cold and from hold, with the
 * setpoint, ceiling, end of the rise check and hold band (as `tepid guard --plot` draws it).
 * Atomic (plot.h). */
tp_status tp_figure_guard(const char *path, const char *title_of_case, const tp_guard_study *st,
                          tp_diag *d);

/* Draw where the watts of a steady state go (r->flows by loss path, as `tepid steady` lists
 * them: the paths that carry any, the enclosure's walls left out) as horizontal bars labelled
 * "12.34 W (56.7 %)" under `title`. Atomic (plot.h). */
tp_status tp_figure_losses(const char *path, const char *title, const tp_steadyreport *r,
                           tp_diag *d);

#endif

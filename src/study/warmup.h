/* A warm-up run packaged for reuse (warmup, tune, sweep): the history, the steady states
 * around it, the solver statistics and the metrics. */
#ifndef TP_WARMUP_H
#define TP_WARMUP_H

#include "caution.h"
#include "diag.h"
#include "history.h"
#include "integrate.h"
#include "metrics.h"
#include "network.h"
#include "status.h"
#include "steady.h"
#include "surfacemap.h"

typedef struct tp_warmup {
    tp_history history;
    tp_steady full;   /* equilibrium at full power (valid when has_full) */
    tp_steady hold;   /* holding point (valid when has_hold) */
    int has_full, has_hold;
    tp_integrate_stats stats;
    tp_metrics metrics;
    double *peak;     /* per node index: the hottest it got, K (fixed nodes: their value;
                         cells of a gridded plate: NaN, see layer_peak) */
    /* Gridded plates (docs/grid.md); NULL or NaN otherwise. */
    double *layer_peak;   /* per layer: its hottest cell over the run, K */
    double *map_hold;     /* the working-surface map at the holding point, K */
    double *map_setpoint; /* the map when the reading reached the setpoint (history) */
    double *map_final;    /* the map at the end of the run (history) */
    tp_surfacemap_stats stats_hold, stats_setpoint, stats_final;
    double t_all_ready; /* s: from here on every cell is within TP_SURFACEMAP_READY_BAND of its
                           holding value; NaN: not in the simulated time */
} tp_warmup;

/* Run the warm-up of `net` (only read) from its initial state with the description's run
 * settings `run` and compute the metrics. On failure the diagnostics say why; call
 * tp_warmup_clear in every case. */
tp_status tp_warmup_run(const tp_network *net, const tp_run *run, tp_warmup *w, tp_diag *d);

/* The same following a setpoint schedule (NULL: the controller's fixed setpoint); `schedule`
 * is borrowed by the history and must outlive it. */
tp_status tp_warmup_run_schedule(const tp_network *net, const tp_run *run,
                                 const tp_schedule *schedule, tp_warmup *w, tp_diag *d);

/* Free what a run holds. */
void tp_warmup_clear(tp_warmup *w);

/* The recorded column whose curve is also the controller's reading (the sensor node's, when no
 * thermistor, ADC or offset stands between them: one curve serves for both), or -1 when the
 * reading differs from every column or there is no controller. */
int tp_warmup_reading_column(const tp_network *net, const tp_history *h);

/* The safety cautions of a run (caution.h), from what it reached: the hottest working surface
 * (on a gridded plate its hottest cell, not the mean), the hottest node, the peak current and
 * each node's and layer's peak. Returns how many were written to out. */
int tp_warmup_cautions(const tp_description *desc, const tp_network *net, const tp_warmup *w,
                       tp_caution out[TP_CAUTIONS_MAX]);

#endif

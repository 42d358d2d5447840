/* A warm-up run packaged for reuse (warmup, tune, sweep): the history, the steady states
 * around it, the solver statistics and the metrics. */
#ifndef TP_WARMUP_H
#define TP_WARMUP_H

#include "diag.h"
#include "history.h"
#include "integrate.h"
#include "network.h"
#include "results.h"
#include "session.h"
#include "status.h"
#include "steady.h"

typedef struct tp_warmup {
    tp_history history;
    tp_steady full;   /* equilibrium at full power (valid when has_full) */
    tp_steady hold;   /* holding point (valid when has_hold) */
    int has_full, has_hold;
    tp_integrate_stats stats;
    tp_metrics metrics;
    double *peak;     /* per node index: the hottest it got, K (fixed nodes: their value) */
} tp_warmup;

/* Run the warm-up of `net` from its initial state over run.duration and compute the metrics.
 * On failure the diagnostics say why; call tp_warmup_clear in every case. */
tp_status tp_warmup_run(tp_network *net, tp_warmup *w, tp_diag *d);

/* Free what a run holds. */
void tp_warmup_clear(tp_warmup *w);

/* Draw the run: temperatures, surface estimate, reading and setpoint over power and duty. */
tp_status tp_warmup_plot(const char *path, const tp_session *s, const tp_warmup *w, tp_diag *d);

#endif

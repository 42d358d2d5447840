/* The history of a run: what the integrator reports at each output time, kept for metrics,
 * CSV, JSON and plots. */
#ifndef TP_HISTORY_H
#define TP_HISTORY_H

#include "integrate.h"
#include "network.h"
#include "status.h"

typedef struct tp_history {
    const tp_network *net;
    long n, cap;       /* rows */
    int n_out;         /* recorded nodes: every node with capacity, in declaration order */
    int *out_nodes;    /* their node indices */
    double *t;         /* s */
    double *temps;     /* n x n_out, K */
    double *power;     /* n x n_sources, W delivered */
    double *wire;      /* n: W lost in wiring, all sources */
    double *current;   /* n: A through the controlled (or first electrical) source when on */
    double *duty;      /* n: the controlled source's duty */
    double *reading;   /* n: K (NaN without a controller) */
    double *surface;   /* n: working-surface estimate, K (NaN for the raw form) */
    double *energy;    /* n x TP_N_QUAD, J */
    int failed;        /* an allocation failed while recording */
} tp_history;

/* Prepare an empty history for `net` (borrowed; must outlive the history). */
tp_status tp_history_init(tp_history *h, const tp_network *net);

/* The tp_output_fn that records a sample; `user` is the tp_history. Stops the run (returns
 * nonzero) only when memory runs out (h->failed set). */
int tp_history_record(void *user, const tp_sample *s);

/* Free the rows. */
void tp_history_clear(tp_history *h);

/* Temperature of recorded node column `col` at row `i`. */
double tp_history_temp(const tp_history *h, long i, int col);

/* Column of node `node` in the history, or -1 when it is not recorded. */
int tp_history_column(const tp_history *h, int node);

#endif

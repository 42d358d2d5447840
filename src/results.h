/* Metrics from a run's history: crossing times, extremes, energy and power statistics. The
 * definitions are in docs/metrics.md. */
#ifndef TP_RESULTS_H
#define TP_RESULTS_H

#include "history.h"

/* The first time the series v (n samples at times t) reaches `level` going up, linearly
 * interpolated between samples; NaN when it never does. */
double tp_first_rise(const double *t, const double *v, long n, long stride, double level);

/* Same for a series going down through `level`. */
double tp_first_fall(const double *t, const double *v, long n, long stride, double level);

/* The largest value of a strided series. */
double tp_series_max(const double *v, long n, long stride);

#endif

/* Strided time series: n samples of v at times t, every `stride`-th value of an array (the
 * columns of a history). Crossing times, settling, interpolation and extremes. */
#ifndef TP_SERIES_H
#define TP_SERIES_H

/* The first time the series v (n samples at times t) reaches `level` going up, linearly
 * interpolated between samples; NaN when it never does. */
double tp_series_first_rise(const double *t, const double *v, long n, long stride, double level);

/* Same for a series going down through `level`. */
double tp_series_first_fall(const double *t, const double *v, long n, long stride, double level);

/* The time after which |v - target| <= band holds to the end; NaN when it does not hold at the
 * last sample. Interpolated at the last exit from the band. */
double tp_series_settle_time(const double *t, const double *v, long n, long stride, double target,
                             double band);

/* The same for the band [lo, hi]. */
double tp_series_settle_range(const double *t, const double *v, long n, long stride, double lo,
                              double hi);

/* The value of the series at time `at`, linearly interpolated (NaN outside the samples). */
double tp_series_at(const double *t, const double *v, long n, long stride, double at);

/* The largest value of a strided series. */
double tp_series_max(const double *v, long n, long stride);

#endif

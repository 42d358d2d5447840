/* Strided time series: crossing times, settling, interpolation and extremes, as the metrics
 * and the studies read them from a history. */
#include "series.h"

#include <math.h>

#include "description.h"

double tp_series_first_rise(const double *t, const double *v, long n, long stride, double level)
{
    long i;
    if (n <= 0)
        return TP_UNSET;
    if (v[0] >= level)
        return t[0];
    for (i = 1; i < n; i++) {
        double a = v[(i - 1) * stride], b = v[i * stride];
        if (b >= level && a < level)
            return t[i - 1] + (t[i] - t[i - 1]) * (level - a) / (b - a);
    }
    return TP_UNSET;
}

double tp_series_first_fall(const double *t, const double *v, long n, long stride, double level)
{
    long i;
    if (n <= 0)
        return TP_UNSET;
    if (v[0] <= level)
        return t[0];
    for (i = 1; i < n; i++) {
        double a = v[(i - 1) * stride], b = v[i * stride];
        if (b <= level && a > level)
            return t[i - 1] + (t[i] - t[i - 1]) * (a - level) / (a - b);
    }
    return TP_UNSET;
}

double tp_series_settle_time(const double *t, const double *v, long n, long stride, double target,
                             double band)
{
    return tp_series_settle_range(t, v, n, stride, target - band, target + band);
}

double tp_series_settle_range(const double *t, const double *v, long n, long stride, double lo,
                              double hi)
{
    long i;
    if (n <= 0 || !(v[(n - 1) * stride] >= lo && v[(n - 1) * stride] <= hi))
        return TP_UNSET;
    for (i = n - 1; i > 0; i--) {
        double a = v[(i - 1) * stride], b = v[i * stride];
        if (!(a >= lo && a <= hi)) {
            /* Interpolate where the series enters the band between samples i-1 and i. */
            double edge = a > hi ? hi : lo;
            return t[i - 1] + (t[i] - t[i - 1]) * (a - edge) / (a - b);
        }
    }
    return t[0];
}

double tp_series_at(const double *t, const double *v, long n, long stride, double at)
{
    long i;
    if (n <= 0 || !(at >= t[0] && at <= t[n - 1]))
        return TP_UNSET;
    for (i = 1; i < n; i++)
        if (t[i] >= at)
            return v[(i - 1) * stride] +
                   (v[i * stride] - v[(i - 1) * stride]) * (at - t[i - 1]) / (t[i] - t[i - 1]);
    return v[(n - 1) * stride];
}

double tp_series_max(const double *v, long n, long stride)
{
    long i;
    double m = -HUGE_VAL;
    for (i = 0; i < n; i++)
        if (v[i * stride] > m)
            m = v[i * stride];
    return n > 0 ? m : TP_UNSET;
}

/* Metrics from a run's history. */
#include "results.h"

#include <math.h>

#include "desc.h"

double tp_first_rise(const double *t, const double *v, long n, long stride, double level)
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

double tp_first_fall(const double *t, const double *v, long n, long stride, double level)
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

double tp_series_max(const double *v, long n, long stride)
{
    long i;
    double m = -HUGE_VAL;
    for (i = 0; i < n; i++)
        if (v[i * stride] > m)
            m = v[i * stride];
    return n > 0 ? m : TP_UNSET;
}

/* Gray-body radiation: Stefan-Boltzmann flux, linearised coefficient, two-surface enclosures.
 * Formulas: Incropera, DeWitt, Bergman & Lavine, Fundamentals of Heat and Mass Transfer,
 * 7th ed., Wiley 2011, Eqs. 1.7 and 1.9 and the two-surface enclosure of §13.3 (equation
 * numbers from memory); see docs/correlations.md. */
#include "radiation.h"

#include <math.h>

double tp_radiation_h(double eps, double t_a, double t_b)
{
    return eps * TP_STEFAN_BOLTZMANN * (t_a * t_a + t_b * t_b) * (t_a + t_b);
}

double tp_radiation_flux(double eps, double t_a, double t_b)
{
    /* t_a^4 - t_b^4 = (t_a^2 + t_b^2)(t_a + t_b)(t_a - t_b): the subtraction is exact when the
     * temperatures are within a factor 2 (Sterbenz), so no cancellation near equilibrium. */
    return tp_radiation_h(eps, t_a, t_b) * (t_a - t_b);
}

static double clamp_unit(double e)
{
    return fmin(fmax(e, 0.0), 1.0); /* fmax(NaN, 0) is 0 */
}

double tp_radiation_eps_parallel(double e1, double e2)
{
    e1 = clamp_unit(e1);
    e2 = clamp_unit(e2);
    if (e1 == 0.0 || e2 == 0.0)
        return 0.0;
    return 1.0 / (1.0 / e1 + 1.0 / e2 - 1.0);
}

double tp_radiation_eps_enclosed(double e1, double a1, double e2, double a2)
{
    double ratio = 1.0;
    e1 = clamp_unit(e1);
    e2 = clamp_unit(e2);
    if (e1 == 0.0 || e2 == 0.0)
        return 0.0;
    if (a1 >= 0.0 && a2 > 0.0)
        ratio = fmin(a1 / a2, 1.0);
    return 1.0 / (1.0 / e1 + ratio * (1.0 / e2 - 1.0));
}

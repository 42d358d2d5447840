/* Dry air properties: ideal-gas density, cp from NASA 7-coefficient polynomials of the
 * constituents, viscosity and conductivity from Sutherland's law. Sources are named beside
 * each constant; docs/correlations.md lists them with their accuracy. */
#include "air.h"

#include <math.h>

/* Composition of dry air used by Lemmon, Jacobsen, Penoncello & Friend, J. Phys. Chem. Ref.
 * Data 29:331 (2000), mole fractions N2/O2/Ar (from memory; with molar masses 28.0135, 31.9988 and
 * 39.948 g/mol they reproduce that paper's M = 28.9586 g/mol to every printed digit). */
#define X_N2 0.7812 /* mole fraction of nitrogen, - */
#define X_O2 0.2096 /* mole fraction of oxygen, - */
#define X_AR 0.0092 /* mole fraction of argon, - */

/* Ideal-gas cp/R of N2 and O2, 200..1000 K range of the NASA 7-coefficient polynomials
 * cp/R = a1 + a2 T + a3 T^2 + a4 T^3 + a5 T^4 (McBride, Gordon & Reno, NASA TM-4513, 1993
 * form) as tabulated in Burcat & Ruscic's Third Millennium thermochemical database (ANL-05/20,
 * 2005; citation from memory): N2 entry "G 8/02", O2 entry "RUS 89". Coefficients checked
 * digit by digit against open copies of that database. Argon is monatomic: cp/R = 5/2 exactly. */
static const double nasa_n2[5] = {3.53100528e+00, -1.23660988e-04, -5.02999433e-07, 2.43530612e-09,
                                  -1.40881235e-12};
static const double nasa_o2[5] = {3.78245636e+00, -2.99673416e-03, 9.84730201e-06, -9.68129509e-09,
                                  3.24372837e-12};
#define CP_R_AR 2.5 /* cp/R of a monatomic ideal gas, - */

/* Sutherland's law q = q0 (T/T0)^(3/2) (T0 + S)/(T + S), coefficients for air from White,
 * Viscous Fluid Flow, 3rd ed., McGraw-Hill 2006, p. 28 (viscosity) and the conductivity table
 * that follows it (quoted with that page by the open gdtk code). White gives about 2 % accuracy
 * for air over 170..1900 K (from memory); against Lemmon & Jacobsen (2004), Int. J. Thermophys.
 * 25:21, the fits are within 1.4 % (mu) and 1.6 % (k) over 250..500 K (hand calculation). */
#define SUTH_MU0 1.716e-5 /* viscosity at SUTH_T0, Pa.s */
#define SUTH_T0 273.0     /* reference temperature of both laws, K */
#define SUTH_S_MU 111.0   /* Sutherland temperature for viscosity, K */
#define SUTH_K0 0.0241    /* conductivity at SUTH_T0, W/(m.K) */
#define SUTH_S_K 194.0    /* Sutherland temperature for conductivity, K */

static double clamp(double x, double lo, double hi)
{
    /* A NaN `x` fails the first comparison and lands on the lower bound. (Comparisons, not
     * fmin/fmax: those are library calls, and this runs in every right-hand side.) */
    return x > lo ? (x < hi ? x : hi) : lo;
}

static double horner5(const double *a, double t)
{
    return a[0] + t * (a[1] + t * (a[2] + t * (a[3] + t * a[4])));
}

/* Ideal-gas specific heat of the N2/O2/Ar mixture, J/(kg.K). The real-gas correction at
 * 1 atm is below 0.2 % here (Lemmon et al. 2000, J. Phys. Chem. Ref. Data 29:331: cp 1006.6 vs
 * 1005.0 J/(kg.K) at 300 K, hand calculation). */
static double heat_capacity(double t)
{
    double cp_r = X_N2 * horner5(nasa_n2, t) + X_O2 * horner5(nasa_o2, t) + X_AR * CP_R_AR;
    return cp_r * TP_GAS_CONSTANT / TP_AIR_MOLAR_MASS;
}

void tp_air_props(double t, double p, tp_air *out)
{
    /* Four divisions instead of nine: this runs in every right-hand side, through the
     * convection correlations. Reciprocals are formed once and multiplied. */
    double inv_t, inv_p, r, r15, inv_sums, inv_cp_k;
    t = clamp(t, TP_AIR_T_MIN, TP_AIR_T_MAX);
    p = clamp(p, TP_AIR_P_MIN, TP_AIR_P_MAX);
    inv_t = 1.0 / t;
    inv_p = 1.0 / p;
    /* Ideal gas: beta = 1/T is within 0.3 % of the real-gas value at 1 atm and 300..400 K
     * (beta T = 1.0027 at 300 K and 1.0010 at 400 K from the Lemmon et al. (2000) equation of
     * state, hand calculation); the ideal-gas density is within 0.1 % of Lemmon et al. (2000) at
     * 1 atm over 250..500 K (hand calculation). */
    out->rho = p * (TP_AIR_MOLAR_MASS / TP_GAS_CONSTANT) * inv_t;
    out->cp = heat_capacity(t);
    /* Sutherland's law for both: q0 (T/T0)^(3/2) (T0 + S)/(T + S). */
    r = t * (1.0 / SUTH_T0);
    r15 = r * sqrt(r);
    inv_sums = 1.0 / ((t + SUTH_S_MU) * (t + SUTH_S_K));
    out->mu = SUTH_MU0 * (SUTH_T0 + SUTH_S_MU) * r15 * (t + SUTH_S_K) * inv_sums;
    out->k = SUTH_K0 * (SUTH_T0 + SUTH_S_K) * r15 * (t + SUTH_S_MU) * inv_sums;
    /* 1/rho = R T / (M p); 1/cp = k/(cp k) and 1/k = cp/(cp k). */
    inv_cp_k = 1.0 / (out->cp * out->k);
    out->nu = out->mu * t * (TP_GAS_CONSTANT / TP_AIR_MOLAR_MASS) * inv_p;
    out->alpha = out->k * t * (TP_GAS_CONSTANT / TP_AIR_MOLAR_MASS) * inv_p * out->k * inv_cp_k;
    out->pr = out->mu * out->cp * out->cp * inv_cp_k;
    out->beta = inv_t;
}

int tp_air_in_range(double t, double p)
{
    return t >= TP_AIR_T_MIN && t <= TP_AIR_T_MAX && p >= TP_AIR_P_MIN && p <= TP_AIR_P_MAX;
}

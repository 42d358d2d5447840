/* Convection coefficients of plate faces in air.
 * "Incropera" below is Incropera, DeWitt, Bergman & Lavine, Fundamentals of Heat and Mass
 * Transfer, 7th ed., Wiley 2011. Equation numbers: see docs/correlations.md for which are
 * confirmed and which are from memory. */
#include "convection.h"

#include <math.h>

#include "air.h"

/* Natural convection, horizontal plates, L = A/P (Incropera Eq. 9.29). The 7th edition's
 * lower-face form 0.52 Ra^1/5 replaces the 6th edition's 0.27 Ra^1/4 (1e5..1e10, from memory); they
 * agree within 1 % below Ra = 1e6, the bed-size range (hand calculation). */
#define C_UP_LAMINAR 0.54   /* upper face of hot plate, Incropera Eq. 9.30, - */
#define C_UP_TURBULENT 0.15 /* upper face of hot plate, Incropera Eq. 9.31, - */
#define C_DOWN 0.52         /* lower face of hot plate, Incropera Eq. 9.32, - */

/* Churchill & Chu, Int. J. Heat Mass Transfer 18(11):1323-1329 (1975), full-range form
 * (Incropera Eq. 9.26). */
#define CC_A 0.825  /* Nu at Ra = 0 is CC_A^2, - */
#define CC_B 0.387  /* coefficient of Ra^1/6, - */
#define CC_PR 0.492 /* Prandtl-function constant, - */

/* Flat plate in parallel flow, average over the length (Incropera Eq. 7.30 laminar, Eq. 7.38
 * mixed boundary layer with Re_x,c = 5e5: 871 = 0.037 Re_x,c^4/5 - 0.664 Re_x,c^1/2 rounded,
 * Eq. 7.39). Rounding 871.35 to 871 leaves a +0.069 % step at Re = 5e5. */
#define C_LAMINAR 0.664   /* laminar average, - */
#define C_TURBULENT 0.037 /* turbulent part, - */
#define A_MIXED 871.0     /* laminar-run correction for Re_x,c = 5e5, - */

#define RA_CAP 1.0e30 /* Ra and Re are capped here so absurd inputs stay finite, - */

enum natural_branch { NAT_UP_LAMINAR, NAT_UP_TURBULENT, NAT_DOWN, NAT_VERTICAL, NAT_COUNT };
enum forced_branch { FORCED_NONE, FORCED_LAMINAR, FORCED_MIXED, FORCED_COUNT };

/* Method names reported in tp_convection_info: natural branch, then forced branch and combination.
 */
#define S_UP_LAM                                                                                   \
    "upper face of hot (lower of cold) plate, Nu = 0.54 Ra^1/4 (Incropera 7th ed. Eq. 9.30)"
#define S_UP_TURB                                                                                  \
    "upper face of hot (lower of cold) plate, Nu = 0.15 Ra^1/3 (Incropera 7th ed. Eq. 9.31)"
#define S_DOWN                                                                                     \
    "lower face of hot (upper of cold) plate, Nu = 0.52 Ra^1/5 (Incropera 7th ed. Eq. 9.32)"
#define S_VERT "vertical plate, Churchill-Chu full range (Incropera 7th ed. Eq. 9.26)"
#define S_F_LAM "; parallel flow, Nu = 0.664 Re^1/2 Pr^1/3 (Incropera 7th ed. Eq. 7.30)"
#define S_F_MIX "; parallel flow, Nu = (0.037 Re^4/5 - 871) Pr^1/3 (Incropera 7th ed. Eq. 7.38)"
#define S_MIXED "; h = (h_forced^3 + h_natural^3)^1/3 (Churchill 1977; Incropera 7th ed. Sec. 9.9)"

static const char *const method_name[NAT_COUNT][FORCED_COUNT] = {
    {S_UP_LAM, S_UP_LAM S_F_LAM S_MIXED, S_UP_LAM S_F_MIX S_MIXED},
    {S_UP_TURB, S_UP_TURB S_F_LAM S_MIXED, S_UP_TURB S_F_MIX S_MIXED},
    {S_DOWN, S_DOWN S_F_LAM S_MIXED, S_DOWN S_F_MIX S_MIXED},
    {S_VERT, S_VERT S_F_LAM S_MIXED, S_VERT S_F_MIX S_MIXED},
};

/* x^a for x >= 0 as exp(a ln x): 2 to 3 times faster than pow here (convection is evaluated
 * in every right-hand side), within a few units in the last place for the exponents and
 * ranges used (a ln x stays below 15: Ra and Re are capped at 1e30). x = 0 gives 0 and x = inf
 * gives inf, as pow does. */
static double power(double x, double a)
{
    return exp(a * log(x));
}

static void set_flag(int *out_of_range, int value)
{
    if (out_of_range)
        *out_of_range = value;
}

double tp_convection_nu_horizontal_up(double ra, int *out_of_range)
{
    if (!(ra > 0.0))
        ra = 0.0;
    set_flag(out_of_range, ra < TP_RA_UP_MIN || ra > TP_RA_UP_MAX);
    if (ra < TP_RA_UP_SWITCH)
        return C_UP_LAMINAR * sqrt(sqrt(ra));
    return C_UP_TURBULENT * cbrt(ra);
}

double tp_convection_nu_horizontal_down(double ra, int *out_of_range)
{
    if (!(ra > 0.0))
        ra = 0.0;
    set_flag(out_of_range, ra < TP_RA_DOWN_MIN || ra > TP_RA_DOWN_MAX);
    return C_DOWN * power(ra, 0.2);
}

double tp_convection_nu_vertical_churchill_chu(double ra, double pr, int *out_of_range)
{
    double root;
    if (!(ra > 0.0))
        ra = 0.0;
    if (!(pr > 0.0)) {
        /* [1 + (0.492/Pr)^(9/16)] grows without bound: only the Ra-free term is left. */
        set_flag(out_of_range, 1);
        return CC_A * CC_A;
    }
    set_flag(out_of_range, ra < TP_RA_VERTICAL_MIN || ra > TP_RA_VERTICAL_MAX);
    /* CC_B Ra^1/6 / [1 + (CC_PR/Pr)^9/16]^8/27 as one exponential of the logarithms. */
    root = CC_A + CC_B * exp(log(ra) / 6.0 - 8.0 / 27.0 * log(1.0 + power(CC_PR / pr, 9.0 / 16.0)));
    return root * root;
}

double tp_convection_nu_flat_plate_forced(double re, double pr, int *out_of_range)
{
    if (!(re > 0.0))
        re = 0.0;
    if (!(pr > 0.0)) {
        set_flag(out_of_range, 1);
        return 0.0;
    }
    if (re < TP_RE_CRITICAL) {
        set_flag(out_of_range, pr < TP_PR_FORCED_MIN);
        return C_LAMINAR * sqrt(re) * cbrt(pr);
    }
    set_flag(out_of_range, pr < TP_PR_FORCED_MIN || pr > TP_PR_FORCED_MAX || re > TP_RE_FORCED_MAX);
    return (C_TURBULENT * power(re, 0.8) - A_MIXED) * cbrt(pr);
}

double tp_convection_mixed(double h_forced, double h_natural)
{
    double big, ratio;
    h_forced = fmax(h_forced, 0.0); /* fmax(NaN, 0) is 0 */
    h_natural = fmax(h_natural, 0.0);
    big = fmax(h_forced, h_natural);
    /* Scale by the larger term so the cubes cannot overflow, and return a lone term exactly. */
    if (big == 0.0 || isinf(big))
        return big;
    ratio = fmin(h_forced, h_natural) / big;
    if (ratio == 0.0)
        return big;
    return big * cbrt(1.0 + ratio * ratio * ratio);
}

double tp_convection_length_horizontal(double width, double depth)
{
    if (!(width > 0.0) || !(depth > 0.0))
        return 0.0;
    /* Written as 1/(2 (1/w + 1/d)) so an infinite side gives the strip value d/2. */
    return 0.5 / (1.0 / width + 1.0 / depth);
}

static double clamp_length(double length, int *out_of_range)
{
    if (!(length >= TP_CONVECTION_LENGTH_MIN)) {
        *out_of_range = 1;
        return TP_CONVECTION_LENGTH_MIN;
    }
    if (length > TP_CONVECTION_LENGTH_MAX) {
        *out_of_range = 1;
        return TP_CONVECTION_LENGTH_MAX;
    }
    return length;
}

static double cap(double x)
{
    return x < RA_CAP ? x : RA_CAP;
}

/* Natural convection from horizontal faces (Incropera §9.6.2, section number from memory):
 * warm air rising off a hot upward face and cool air sinking off a cold downward face are the
 * same flow mirrored, so they share the "upper face of a hot plate" forms; a hot downward face
 * and a cold upward face, where the plate blocks the buoyant flow, share the "lower face" form.
 * At t_s == t_inf (`hotter` 0) Ra is 0 and every horizontal form gives 0, so the choice made
 * there does not matter. */
static enum natural_branch natural_branch(tp_face face, int hotter, double ra)
{
    int up_form;
    if (face == TP_FACE_VERTICAL)
        return NAT_VERTICAL;
    up_form = (face == TP_FACE_UP) == hotter;
    if (!up_form)
        return NAT_DOWN;
    return ra < TP_RA_UP_SWITCH ? NAT_UP_LAMINAR : NAT_UP_TURBULENT;
}

double tp_convection_h(const tp_convection_case *c, double t_s, double t_inf,
                       tp_convection_info *info)
{
    tp_air air;
    int oor = 0, flag = 0;
    enum natural_branch nb;
    enum forced_branch fb = FORCED_NONE;
    double t_film = 0.5 * t_s + 0.5 * t_inf; /* halves first: no overflow for finite input */
    double length = clamp_length(c->length, &oor);
    double dt = fabs(t_s - t_inf);
    double ra, re = 0.0, nu_n, nu_f = 0.0, h_n, h_f = 0.0, h;

    if (!tp_air_in_range(t_film, c->pressure))
        oor = 1;
    tp_air_props(t_film, c->pressure, &air);

    /* Rayleigh number on the characteristic length (Incropera Eq. 9.25), beta = 1/T_film. */
    ra = cap(TP_GRAVITY * air.beta * dt * length * length * length / (air.nu * air.alpha));
    nb = natural_branch(c->face, t_s > t_inf, ra);
    switch (nb) {
    case NAT_UP_LAMINAR:
    case NAT_UP_TURBULENT:
        nu_n = tp_convection_nu_horizontal_up(ra, &flag);
        break;
    case NAT_DOWN:
        nu_n = tp_convection_nu_horizontal_down(ra, &flag);
        break;
    default:
        nu_n = tp_convection_nu_vertical_churchill_chu(ra, air.pr, &flag);
        break;
    }
    oor |= flag;
    h_n = nu_n * air.k / length;

    if (c->airflow != 0.0) {
        double flow_length = clamp_length(c->flow_length, &oor);
        re = cap(fabs(c->airflow) * flow_length / air.nu);
        nu_f = tp_convection_nu_flat_plate_forced(re, air.pr, &flag);
        oor |= flag;
        h_f = nu_f * air.k / flow_length;
        fb = re < TP_RE_CRITICAL ? FORCED_LAMINAR : FORCED_MIXED;
    }
    h = fb == FORCED_NONE ? h_n : tp_convection_mixed(h_f, h_n);

    if (info) {
        info->ra = ra;
        info->re = re;
        info->nu_natural = nu_n;
        info->nu_forced = nu_f;
        info->h_natural = h_n;
        info->h_forced = h_f;
        info->method = method_name[nb][fb];
        info->out_of_range = oor;
    }
    return h;
}

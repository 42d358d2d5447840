/* Convection coefficients of plate faces in air: published natural, forced and mixed
 * correlations by name, with film-temperature properties. docs/correlations.md lists them. */
#ifndef TP_CONVECTION_H
#define TP_CONVECTION_H

#define TP_GRAVITY 9.80665 /* standard gravity, m/s2 (CGPM 1901) */

/* Validity ranges of the correlations (Incropera, DeWitt, Bergman & Lavine, Fundamentals of
 * Heat and Mass Transfer, 7th ed., Wiley 2011; see convection.c for equation numbers). */
#define TP_RA_UP_MIN 1.0e4        /* lower end of Eq. 9.30, - */
#define TP_RA_UP_SWITCH 1.0e7     /* Eq. 9.30 below, Eq. 9.31 from here on, - */
#define TP_RA_UP_MAX 1.0e11       /* upper end of Eq. 9.31, - */
#define TP_RA_DOWN_MIN 1.0e4      /* lower end of Eq. 9.32, - */
#define TP_RA_DOWN_MAX 1.0e9      /* upper end of Eq. 9.32, - */
#define TP_RA_VERTICAL_MIN 1.0e-1 /* lower end of the Churchill-Chu data, - (from memory) */
#define TP_RA_VERTICAL_MAX 1.0e12 /* upper end of the Churchill-Chu data, - (from memory) */
#define TP_RE_CRITICAL 5.0e5      /* flat-plate transition Reynolds number Re_x,c, - */
#define TP_RE_FORCED_MAX 1.0e8    /* upper end of the mixed-boundary-layer form, - */
#define TP_PR_FORCED_MIN 0.6      /* lowest Prandtl number of the flat-plate forms, - */
#define TP_PR_FORCED_MAX 60.0     /* highest Prandtl number of the mixed form, - */
#define TP_CONVECTION_LENGTH_MIN 1.0e-4 /* shortest length accepted by tp_convection_h, m */
#define TP_CONVECTION_LENGTH_MAX 1.0e3  /* longest length accepted by tp_convection_h, m */

/* Outward normal of the surface. */
typedef enum tp_face { TP_FACE_UP, TP_FACE_DOWN, TP_FACE_VERTICAL } tp_face;

typedef struct tp_convection_case {
    tp_face face;
    double length;  /* characteristic length, m: A/P for horizontal faces, height for vertical */
    double airflow; /* forced air speed parallel to the face, m/s; 0 = natural convection only */
    double flow_length; /* length of the face along the flow, m (forced convection only) */
    double pressure;    /* Pa */
} tp_convection_case;

typedef struct tp_convection_info {
    double ra, re;                /* Rayleigh (natural) and Reynolds (forced) numbers, - */
    double nu_natural, nu_forced; /* Nusselt numbers on `length` and `flow_length`, - */
    double h_natural, h_forced;   /* the two coefficients before combination, W/(m2.K) */
    const char *method;           /* static string naming the branches used */
    /* 1 when Ra, Re, Pr, a length, the pressure or the film temperature lies outside the
     * validity range of what was used (or was clamped), else 0 */
    int out_of_range;
} tp_convection_info;

/* Coefficient h in W/(m2.K) between a face at `t_s` and air at `t_inf` (both K), with air
 * properties at the film temperature (t_s + t_inf)/2 and beta = 1/T_film (ideal gas).
 * A hot face up behaves as a cold face down and vice versa: when t_s < t_inf the up and down
 * correlations are swapped. With airflow != 0 the forced coefficient (on flow_length, speed
 * |airflow|) is combined with the natural one by tp_convection_mixed.
 * Lengths are clamped to [TP_CONVECTION_LENGTH_MIN, TP_CONVECTION_LENGTH_MAX] (NaN and non-positive
 * lengths become the minimum, +inf the maximum), pressure and film temperature as in tp_air_props;
 * each clamp sets info->out_of_range. The result is finite and >= 0 for every finite input. As t_s
 * -> t_inf the natural part goes continuously to its limit: 0 for horizontal faces, 0.680625 k/L
 * for vertical ones (Churchill-Chu at Ra = 0, approached steeply, as |t_s - t_inf|^(1/6)). h is
 * continuous in t_s except at the branch switches of the textbook forms: +6.4 % at
 * Ra = TP_RA_UP_SWITCH (hot face up) and +0.069 % at Re = TP_RE_CRITICAL (the film temperature
 * moves Re). `info` may be NULL. */
double tp_convection_h(const tp_convection_case *c, double t_s, double t_inf,
                       tp_convection_info *info);

/* Average Nusselt number of the upper face of a hot plate (or lower face of a cold one), L = A/P:
 * 0.54 Ra^1/4 below TP_RA_UP_SWITCH, 0.15 Ra^1/3 from it on. Outside [TP_RA_UP_MIN, TP_RA_UP_MAX]
 * the nearest form is used and *out_of_range is set to 1 (else 0). Ra <= 0 or NaN gives 0.
 * `out_of_range` may be NULL. */
double tp_convection_nu_horizontal_up(double ra, int *out_of_range);

/* Average Nusselt number of the lower face of a hot plate (or upper face of a cold one),
 * L = A/P: 0.52 Ra^1/5, in range on [TP_RA_DOWN_MIN, TP_RA_DOWN_MAX]. Same conventions. */
double tp_convection_nu_horizontal_down(double ra, int *out_of_range);

/* Average Nusselt number of a vertical plate of height L, Churchill & Chu (1975) full-range
 * form {0.825 + 0.387 Ra^1/6 / [1 + (0.492/Pr)^(9/16)]^(8/27)}^2, in range on
 * [TP_RA_VERTICAL_MIN, TP_RA_VERTICAL_MAX]. Ra <= 0 or NaN counts as 0 (Nu = 0.680625);
 * Pr <= 0 or NaN gives the Pr -> 0 limit (Nu = 0.680625) and out of range. */
double tp_convection_nu_vertical_churchill_chu(double ra, double pr, int *out_of_range);

/* Average Nusselt number of a flat plate in parallel flow, on the plate length:
 * 0.664 Re^1/2 Pr^1/3 (laminar) below TP_RE_CRITICAL, (0.037 Re^4/5 - 871) Pr^1/3 (laminar then
 * turbulent boundary layer, Re_x,c = 5e5) from it on. Out of range when Pr < TP_PR_FORCED_MIN,
 * or above TP_RE_CRITICAL when Pr > TP_PR_FORCED_MAX or Re > TP_RE_FORCED_MAX. Re <= 0 or NaN
 * gives 0; Pr <= 0 or NaN gives 0 and out of range. */
double tp_convection_nu_flat_plate_forced(double re, double pr, int *out_of_range);

/* Mixed convection, transverse or assisting flow: (h_forced^3 + h_natural^3)^(1/3)
 * (Churchill 1977 rule with n = 3, as in Incropera 7th ed. §9.9). Negative or NaN inputs count
 * as 0; when one input is 0 the other is returned exactly. */
double tp_convection_mixed(double h_forced, double h_natural);

/* Characteristic length L = A/P = w d / (2 (w + d)) of a `width` x `depth` rectangle, m.
 * An infinite side gives half the other; a non-positive or NaN side gives 0. */
double tp_convection_length_horizontal(double width, double depth);

#endif

/* Dry air: density, heat capacity and transport properties versus temperature and pressure,
 * from published closed forms (ideal gas, NASA polynomials, Sutherland's law). */
#ifndef TP_AIR_H
#define TP_AIR_H

#define TP_AIR_PRESSURE 101325.0         /* standard atmosphere, Pa */
#define TP_AIR_T_MIN 200.0               /* lowest temperature the fits are used at, K */
#define TP_AIR_T_MAX 900.0               /* highest temperature the fits are used at, K */
#define TP_AIR_P_MIN 1.0e3               /* lowest pressure accepted, Pa */
#define TP_AIR_P_MAX 1.0e6               /* highest pressure accepted, Pa */
#define TP_AIR_MOLAR_MASS 28.9586e-3     /* dry air, kg/mol (Lemmon et al. 2000) */
#define TP_GAS_CONSTANT 8.31446261815324 /* N_A k, J/(mol.K), exact in the 2019 SI */

typedef struct tp_air {
    double rho;   /* density, kg/m3 */
    double cp;    /* specific heat at constant pressure, J/(kg.K) */
    double k;     /* thermal conductivity, W/(m.K) */
    double mu;    /* dynamic viscosity, Pa.s */
    double nu;    /* kinematic viscosity, m2/s */
    double alpha; /* thermal diffusivity, m2/s */
    double pr;    /* Prandtl number, - */
    double beta;  /* volumetric expansion coefficient, 1/K (ideal gas: 1/T) */
} tp_air;

/* Fill `out` with the properties of dry air at temperature `t` (K) and pressure `p` (Pa).
 * `t` is clamped to [TP_AIR_T_MIN, TP_AIR_T_MAX] and `p` to [TP_AIR_P_MIN, TP_AIR_P_MAX] (NaN
 * counts as the lower bound), so every field is finite and positive for any input; beta is
 * 1/T at the clamped temperature. Only rho, nu and alpha depend on pressure. `out` must not be
 * NULL. */
void tp_air_props(double t, double p, tp_air *out);

/* Nonzero when (t, p) lies inside the range tp_air_props uses without clamping. */
int tp_air_in_range(double t, double p);

#endif

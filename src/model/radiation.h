/* Thermal radiation between gray, diffuse surfaces: Stefan-Boltzmann flux, its linearised
 * coefficient, and effective emissivities of two-surface enclosures. */
#ifndef TP_RADIATION_H
#define TP_RADIATION_H

/* CODATA 2018 value, exact from the SI defining constants as 2 pi^5 k^4 / (15 h^3 c^2) =
 * 5.670374419184...e-8; the 10 printed digits are within 4e-11 relative of it. */
#define TP_STEFAN_BOLTZMANN 5.670374419e-8 /* Stefan-Boltzmann constant, W/(m2.K4) */

/* Net flux from a gray surface of emissivity `eps` at `t_a` to large surroundings at `t_b`
 * (kelvin): eps sigma (t_a^4 - t_b^4), W/m2. Evaluated in the factored form
 * eps sigma (t_a^2 + t_b^2)(t_a + t_b)(t_a - t_b), which keeps full relative accuracy when
 * t_a is close to t_b. No argument is clamped. */
double tp_radiation_flux(double eps, double t_a, double t_b);

/* Linearised radiation coefficient eps sigma (t_a^2 + t_b^2)(t_a + t_b), W/(m2.K), so that
 * tp_radiation_flux(eps, t_a, t_b) == tp_radiation_h(eps, t_a, t_b) (t_a - t_b). No argument is
 * clamped. */
double tp_radiation_h(double eps, double t_a, double t_b);

/* Effective emissivity of two infinite parallel gray plates, 1/(1/e1 + 1/e2 - 1), for use as
 * `eps` above. Emissivities are clamped to [0, 1] (NaN counts as 0); a zero emissivity gives 0. */
double tp_radiation_eps_parallel(double e1, double e2);

/* Effective emissivity of a convex body 1 (area a1) enclosed by surface 2 (area a2),
 * 1/(1/e1 + (a1/a2)(1/e2 - 1)), referred to a1. Emissivities are clamped as above; the ratio
 * a1/a2 is clamped to [0, 1] (a convex body cannot exceed its enclosure) and counts as 1 when
 * either area is negative or NaN or a2 is 0. a2 = infinity gives e1 (a body in a large room). */
double tp_radiation_eps_enclosed(double e1, double a1, double e2, double a2);

#endif

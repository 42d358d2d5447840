/* Tests for radiation.c: Stefan-Boltzmann flux, linearised coefficient and effective
 * emissivities against published check values and closed forms. */
#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>
#include <setjmp.h>
#include <cmocka.h>

#include <math.h>

#include "radiation.h"

#define T0C 273.15                /* 0 degC in kelvin, K */
#define PI 3.14159265358979323846 /* pi, - */

static void check_abs(const char *what, double actual, double expected, double tol)
{
    if (!(fabs(actual - expected) <= tol)) {
        print_error("%s: got %.17g, expected %.17g (absolute tolerance %g)\n", what, actual,
                    expected, tol);
        fail();
    }
}

static void check_rel(const char *what, double actual, double expected, double tol)
{
    check_abs(what, actual, expected, tol * fabs(expected));
}

static double pow4(double t)
{
    return t * t * t * t;
}

/* The constant: CODATA 2018, sigma = 2 pi^5 k^4 / (15 h^3 c^2) with the exact SI values of
 * h, k, c is 5.670374419184429e-8 (hand calculation); the 10-digit value agrees to
 * 4e-11 relative. */
static void test_rad_constant_codata_2018(void **state)
{
    (void)state;
    check_rel("sigma", TP_STEFAN_BOLTZMANN, 5.670374419184429e-8, 4.0e-11);
}

/* Black body at 400 K into 0 K: sigma 400^4 = 1451.615851 W/m2, the CalebBell/ht doctest
 * q_rad(1, 400) re-evaluated with the 2018 sigma (hand calculation). Tolerance 5e-10: the
 * printed digits. */
static void test_rad_flux_black_400k(void **state)
{
    (void)state;
    check_rel("q", tp_radiation_flux(1.0, 400.0, 0.0), 1451.615851, 5.0e-10);
}

/* Incropera, DeWitt, Bergman & Lavine, Fundamentals of Heat and Mass Transfer, 7th ed.,
 * Example 1.2 (uninsulated steam pipe; inputs and answers from memory):
 * D = 70 mm, T_s = 200 degC, T_sur = T_inf = 25 degC, eps = 0.8, h = 15 W/(m2.K).
 * Book: E = 2270 W/m2, G = 448 W/m2, q'_rad = 421 W/m, q' = 577 + 421 = 998 W/m. Tolerances:
 * half a unit of the book's last printed digit (E printed to 3 figures: +-5 W/m2). */
static void test_rad_flux_incropera_example_1_2(void **state)
{
    const double ts = 200.0 + T0C, tsur = 25.0 + T0C, d = 0.07;
    double q_rad;
    (void)state;
    check_abs("E", tp_radiation_flux(0.8, ts, 0.0), 2270.0, 5.0);
    check_abs("G", tp_radiation_flux(1.0, tsur, 0.0), 448.0, 0.5);
    q_rad = tp_radiation_flux(0.8, ts, tsur) * PI * d;
    check_abs("q'_rad", q_rad, 421.0, 0.5);
    check_abs("q'", q_rad + 15.0 * PI * d * (ts - tsur), 998.0, 0.5);
    /* Equivalent h_r = q'_rad / (pi D (T_s - T_sur)) = 10.94 W/(m2.K) (hand
     * calculation); tolerance half a unit of the last digit. */
    check_abs("h_r", tp_radiation_h(0.8, ts, tsur), 10.94, 0.005);
}

/* Hand calculation: h_r = eps sigma (T_s + T_sur)(T_s^2 + T_sur^2) for
 * T_sur = 298.15 K, printed to 3 decimals; tolerance half a unit of the last digit. */
static void test_rad_h_reference_table(void **state)
{
    static const double rows[][3] = {
        /* T_s degC, eps, h_r W/(m2.K) */
        {60.0, 0.05, 0.358},  {60.0, 0.9, 6.440},  {100.0, 0.1, 0.868},
        {100.0, 0.95, 8.250}, {110.0, 0.9, 8.195}, {110.0, 0.95, 8.650},
    };
    (void)state;
    for (size_t i = 0; i < sizeof rows / sizeof rows[0]; i++)
        check_abs("h_r", tp_radiation_h(rows[i][1], rows[i][0] + T0C, 298.15), rows[i][2], 0.0005);
}

/* Linearisation identity (algebra): eps sigma (T^2 + Ts^2)(T + Ts)(T - Ts) equals
 * eps sigma (T^4 - Ts^4). The right side is evaluated here directly; for |T - Ts| >= 1 K at
 * these temperatures its cancellation costs at most T/(4 |T - Ts|) ~ 300 ulps, well inside
 * 1e-12 relative. */
static void test_rad_linearisation_identity(void **state)
{
    static const double pairs[][3] = {
        {0.9, 373.15, 298.15}, {0.05, 333.15, 298.15}, {1.0, 1000.0, 300.0},
        {0.6, 250.0, 310.0},   {0.8, 298.15, 297.15},  {0.3, 0.0, 500.0},
    };
    (void)state;
    for (size_t i = 0; i < sizeof pairs / sizeof pairs[0]; i++) {
        double eps = pairs[i][0], ta = pairs[i][1], tb = pairs[i][2];
        double direct = eps * TP_STEFAN_BOLTZMANN * (pow4(ta) - pow4(tb));
        check_rel("h dT", tp_radiation_h(eps, ta, tb) * (ta - tb), direct, 1.0e-12);
        check_rel("flux", tp_radiation_flux(eps, ta, tb), direct, 1.0e-12);
    }
}

/* Near equilibrium the flux keeps full relative accuracy. With b = 300 K and d = a - b
 * (exact), a^4 - b^4 = 4 b^3 d + 6 b^2 d^2 + 4 b d^3 + d^4 (binomial expansion), evaluated
 * here with no cancellation; the direct difference would lose about 8 digits at d ~ 1e-6. */
static void test_rad_flux_near_equilibrium(void **state)
{
    const double b = 300.0, a = 300.0 + 1.0e-6, d = a - b;
    double expected =
        0.9 * TP_STEFAN_BOLTZMANN *
        (4.0 * b * b * b * d + 6.0 * b * b * d * d + 4.0 * b * d * d * d + d * d * d * d);
    (void)state;
    check_rel("flux", tp_radiation_flux(0.9, a, b), expected, 1.0e-13);
    assert_true(tp_radiation_flux(0.9, b, b) == 0.0);
    assert_true(tp_radiation_flux(0.9, b, a) == -tp_radiation_flux(0.9, a, b));
}

/* Infinite parallel gray plates, 1/(1/e1 + 1/e2 - 1) (Incropera 7th ed. Table 13.3, from
 * memory). Hand calculations: (0.9, 0.9) -> 9/11; (0.05, 0.9) -> 9/181;
 * black plates -> 1. */
static void test_rad_eps_parallel_closed_form(void **state)
{
    (void)state;
    check_rel("0.9/0.9", tp_radiation_eps_parallel(0.9, 0.9), 9.0 / 11.0, 1.0e-14);
    check_rel("0.05/0.9", tp_radiation_eps_parallel(0.05, 0.9), 9.0 / 181.0, 1.0e-14);
    check_rel("0.9/0.05", tp_radiation_eps_parallel(0.9, 0.05), 9.0 / 181.0, 1.0e-14);
    check_rel("1/1", tp_radiation_eps_parallel(1.0, 1.0), 1.0, 1.0e-15);
    /* Clamps (contract): a non-emitting plate exchanges nothing; eps > 1 counts as 1. */
    assert_true(tp_radiation_eps_parallel(0.0, 0.9) == 0.0);
    assert_true(tp_radiation_eps_parallel((double)NAN, 0.9) == 0.0);
    check_rel("1.2/0.5", tp_radiation_eps_parallel(1.2, 0.5), 0.5, 1.0e-15);
}

/* Body 1 enclosed by surface 2, 1/(1/e1 + (A1/A2)(1/e2 - 1)) (Incropera 7th ed. Table 13.3,
 * from memory; the same formula as Kreith, Principles of Heat Transfer, 7th ed., Eq. 9.74,
 * from memory). Hand calculation: e1 = 0.8, A1/A2 = 1/4, e2 = 0.5 -> 1/1.5. Limits
 * (closed form): A1/A2 -> 0 gives e1 (a small body in a large room); A1 = A2 gives the
 * parallel-plate value. */
static void test_rad_eps_enclosed_closed_form(void **state)
{
    (void)state;
    check_rel("0.8 in 0.5", tp_radiation_eps_enclosed(0.8, 1.0, 0.5, 4.0), 2.0 / 3.0, 1.0e-14);
    check_rel("large room", tp_radiation_eps_enclosed(0.8, 1.0, 0.5, (double)INFINITY), 0.8,
              1.0e-15);
    check_rel("A1 = A2", tp_radiation_eps_enclosed(0.05, 2.0, 0.9, 2.0), 9.0 / 181.0, 1.0e-14);
    /* A black enclosure absorbs everything: e1 whatever the areas. */
    check_rel("black", tp_radiation_eps_enclosed(0.3, 1.0, 1.0, 1.5), 0.3, 1.0e-15);
    /* Clamps (contract): A1/A2 above 1 and nonsense areas count as 1. */
    check_rel("ratio > 1", tp_radiation_eps_enclosed(0.05, 5.0, 0.9, 2.0), 9.0 / 181.0, 1.0e-14);
    check_rel("a2 = 0", tp_radiation_eps_enclosed(0.05, 1.0, 0.9, 0.0), 9.0 / 181.0, 1.0e-14);
    check_rel("a1 < 0", tp_radiation_eps_enclosed(0.05, -1.0, 0.9, 2.0), 9.0 / 181.0, 1.0e-14);
    assert_true(tp_radiation_eps_enclosed(0.0, 1.0, 0.9, 2.0) == 0.0);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_rad_constant_codata_2018),
        cmocka_unit_test(test_rad_flux_black_400k),
        cmocka_unit_test(test_rad_flux_incropera_example_1_2),
        cmocka_unit_test(test_rad_h_reference_table),
        cmocka_unit_test(test_rad_linearisation_identity),
        cmocka_unit_test(test_rad_flux_near_equilibrium),
        cmocka_unit_test(test_rad_eps_parallel_closed_form),
        cmocka_unit_test(test_rad_eps_enclosed_closed_form),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}

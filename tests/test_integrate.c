/* Tests for integrate.c (with eval.c and history.c): CVODE runs against closed-form
 * lumped-capacitance solutions, the energy totals against the stored energy, and the CSV
 * written by `tepid warmup` against the contract of docs/user-guide.md. */
#include "tp_test.h"

#include "history.h"
#include "integrate.h"

#define SIGMA 5.670374419e-8 /* W/(m2.K4), CODATA 2018 */

/* Global error bound used throughout. CVODE keeps each step's local error estimate within
 * rtol |T| + atol, atol = rtol x 10 K on temperatures (integrate.c, TP_ATOL_KELVIN). All the
 * test problems are stable (every eigenvalue of the Jacobian is negative), so earlier errors
 * decay instead of growing; allowing ten local tolerances at the largest temperature of the
 * run covers the accumulation seen with BDF at these step counts. The bound is checked at two
 * tolerances below (1e-6 and 1e-9), so an integrator that ignored rtol would fail. */
static double error_bound(double rtol, double t_max)
{
    return 10.0 * (rtol * t_max + rtol * 10.0);
}

/* Integrate `net` from its initial state into `h`. */
static void run_net(const tp_network *net, double t_end, double step, double rtol,
                    tp_history *h, tp_integrate_stats *st)
{
    const tp_run run = {t_end, step, rtol, 1000000.0, 120.0, TP_UNSET};
    tp_integrate_opts o;
    tp_diag d;
    tp_diag_init(&d, stderr);
    tp_integrate_defaults(&run, &o);
    assert_int_equal(tp_history_init(h, net), TP_OK);
    o.out = tp_history_record;
    o.user = h;
    assert_int_equal(tp_integrate(net, &o, st, &d), TP_OK);
    assert_false(h->failed);
}

/* ---- one node, constant power, linear loss -------------------------------------------------- */

#define ONE_C 800.0   /* J/K */
#define ONE_G 1.6     /* W/K: tau = C/G = 500 s */
#define ONE_P 120.0   /* W: rise P/G = 75 K */
#define ONE_TA 294.15 /* K, 21 degC */

/* plate (C) --G-- room (fixed Ta), P into the plate; built with the network API. */
static tp_network *one_node(void)
{
    tp_network *net = tp_network_create();
    tp_net_link *l;
    tp_net_source *s;
    int p, r;
    assert_non_null(net);
    p = tp_network_add_node(net, "plate", ONE_C, ONE_TA);
    r = tp_network_add_node(net, "room", 0.0, ONE_TA);
    l = tp_network_add_link(net, p, r, TP_LAW_CONDUCTION);
    assert_non_null(l);
    l->g = ONE_G;
    s = tp_network_add_source(net, "pad", p);
    assert_non_null(s);
    s->kind = TP_SRC_POWER;
    s->power = ONE_P;
    assert_int_equal(tp_network_finish(net), TP_OK);
    return net;
}

/* Lumped capacitance with constant heating: T(t) = Ta + (P/G)(1 - exp(-t/tau)), tau = C/G
 * (Incropera, Fundamentals of Heat and Mass Transfer, 7th ed., §5.2, Eqs. 5.6-5.7, from memory).
 * Every 10 s sample over 5 tau, at rtol 1e-6 and at 1e-9. */
static void test_integrate_one_node_closed_form(void **state)
{
    static const double rtols[] = {1.0e-6, 1.0e-9};
    const double tau = ONE_C / ONE_G, rise = ONE_P / ONE_G;
    (void)state;
    for (size_t k = 0; k < 2; k++) {
        tp_network *net = one_node();
        tp_history h;
        tp_integrate_stats st;
        double tol = error_bound(rtols[k], ONE_TA + rise);
        run_net(net, 5.0 * tau, 10.0, rtols[k], &h, &st);
        assert_int_equal(h.n, 251);
        for (long i = 0; i < h.n; i++) {
            double exact = ONE_TA + rise * (1.0 - exp(-h.t[i] / tau));
            tp_check_abs("T(t)", tp_history_temp(&h, i, 0), exact, tol);
        }
        tp_history_clear(&h);
        tp_network_destroy(&net);
    }
}

/* The first-order response reaches 1 - e^-n of its rise after n time constants: 0.632121 at
 * tau, 0.950213 at 3 tau, 0.993262 at 5 tau (closed form; the 63.2 % rule,
 * Incropera 7th ed. §5.2, from memory). Run at rtol 1e-9: tolerance half a unit of the sixth
 * decimal plus the integration bound divided by the 75 K rise. */
static void test_integrate_one_node_time_constant(void **state)
{
    static const struct {
        double n, response;
    } rows[] = {{1.0, 0.632121}, {3.0, 0.950213}, {5.0, 0.993262}};
    const double tau = ONE_C / ONE_G, rise = ONE_P / ONE_G;
    tp_network *net = one_node();
    tp_history h;
    tp_integrate_stats st;
    double tol = 5.0e-7 + error_bound(1.0e-9, ONE_TA + rise) / rise;
    (void)state;
    run_net(net, 5.0 * tau, 10.0, 1.0e-9, &h, &st);
    for (size_t k = 0; k < sizeof rows / sizeof rows[0]; k++) {
        long i = (long)(rows[k].n * tau / 10.0 + 0.5);
        assert_true(h.t[i] == rows[k].n * tau);
        tp_check_abs("response", (tp_history_temp(&h, i, 0) - ONE_TA) / rise, rows[k].response,
                     tol);
    }
    tp_history_clear(&h);
    tp_network_destroy(&net);
}

/* ---- two coupled nodes ---------------------------------------------------------------------- */

/* Heater 1 - plate 2 - ambient (a hand-built case), C1 = 50 J/K, C2 = 800 J/K, G12 = 5 W/K,
 * G1a = 0.05 W/K, G2a = 0.8 W/K, P = 200 W into node 1, Ta = T1(0) = T2(0) = 25 degC. Written
 * in the raw network form so the config reader and assembly are on the path too. */
#define TWO_NODE_YAML                                                                              \
    "network:\n"                                                                                   \
    "  nodes:\n"                                                                                   \
    "    - {id: heater, capacity: 50 J/K, initial: 25 degC}\n"                                     \
    "    - {id: plate, capacity: 800 J/K, initial: 25 degC}\n"                                     \
    "    - {id: room, fixed: 25 degC}\n"                                                           \
    "  links:\n"                                                                                   \
    "    - {between: [heater, plate], conductance: 5 W/K}\n"                                       \
    "    - {between: [heater, room], conductance: 0.05 W/K}\n"                                     \
    "    - {between: [plate, room], conductance: 0.8 W/K}\n"                                       \
    "  sources:\n"                                                                                 \
    "    - {id: element, node: heater, power: 200 W}\n"                                            \
    "run: {duration: 1 h, step: 10 s, tolerance: %s}\n"

/* The eigen-solution of x' = A x + b for the 2x2 system above (standard linear ODE theory,
 * closed form): T(t) = T_ss + sum_i c_i v_i exp(lambda_i t), temperatures in degC. */
typedef struct eigen2 {
    double lambda[2], v[2][2], c[2], tss[2];
} eigen2;

static void eigen2_solve(eigen2 *e, double c1, double c2, double g12, double g1a, double g2a,
                         double p, double ta, double t10, double t20)
{
    double a = -(g12 + g1a) / c1, b = g12 / c1, c = g12 / c2, d = -(g12 + g2a) / c2;
    double tr = a + d, det = a * d - b * c, disc = sqrt(tr * tr - 4.0 * det);
    /* Steady state: [[g12+g1a, -g12], [-g12, g12+g2a]] T = [P + g1a Ta, g2a Ta]. */
    double m11 = g12 + g1a, m12 = -g12, m22 = g12 + g2a, r1 = p + g1a * ta, r2 = g2a * ta;
    double dm = m11 * m22 - m12 * m12, x1, x2, dv;
    e->tss[0] = (r1 * m22 - m12 * r2) / dm;
    e->tss[1] = (m11 * r2 - m12 * r1) / dm;
    e->lambda[0] = 0.5 * (tr + disc);
    e->lambda[1] = 0.5 * (tr - disc);
    for (int i = 0; i < 2; i++) {
        /* From the first row: (a - lambda) v1 + b v2 = 0. */
        e->v[i][0] = b;
        e->v[i][1] = e->lambda[i] - a;
    }
    x1 = t10 - e->tss[0];
    x2 = t20 - e->tss[1];
    dv = e->v[0][0] * e->v[1][1] - e->v[1][0] * e->v[0][1];
    e->c[0] = (x1 * e->v[1][1] - e->v[1][0] * x2) / dv;
    e->c[1] = (e->v[0][0] * x2 - x1 * e->v[0][1]) / dv;
}

static double eigen2_at(const eigen2 *e, int node, double t)
{
    return e->tss[node] + e->c[0] * e->v[0][node] * exp(e->lambda[0] * t) +
           e->c[1] * e->v[1][node] * exp(e->lambda[1] * t);
}

/* The eigen-solution above evaluated by hand calculation (lambda = -0.0010000 and -0.10725 1/s,
 * T_ss = 295.39627 and 258.10023 degC), values in degC printed to 5 decimals. */
static const double two_node_table[][3] = {
    {10.0, 50.43309, 25.89797},    {60.0, 73.74830, 36.51210},     {300.0, 121.08610, 83.79006},
    {600.0, 166.26412, 128.96808}, {1800.0, 256.50241, 219.20638}, {3600.0, 288.96716, 251.67112},
};
#define N_TABLE (sizeof two_node_table / sizeof two_node_table[0])

/* The in-test eigen-solution reproduces the published figures: lambda = -0.001 and -0.10725
 * 1/s, T_ss = (295.39627, 258.10023) degC and the table, to half a unit of the last printed
 * digit (a check of the test's own reference before it is used). */
static void test_integrate_two_node_eigen_reference(void **state)
{
    eigen2 e;
    (void)state;
    eigen2_solve(&e, 50.0, 800.0, 5.0, 0.05, 0.8, 200.0, 25.0, 25.0, 25.0);
    tp_check_abs("lambda1", e.lambda[0], -0.0010000, 5.0e-8);
    tp_check_abs("lambda2", e.lambda[1], -0.10725, 5.0e-6);
    tp_check_abs("T1 ss", e.tss[0], 295.39627, 5.0e-6);
    tp_check_abs("T2 ss", e.tss[1], 258.10023, 5.0e-6);
    for (size_t k = 0; k < N_TABLE; k++) {
        tp_check_abs("T1 table", eigen2_at(&e, 0, two_node_table[k][0]), two_node_table[k][1],
                     5.0e-6);
        tp_check_abs("T2 table", eigen2_at(&e, 1, two_node_table[k][0]), two_node_table[k][2],
                     5.0e-6);
    }
}

/* CVODE against the table at run.tolerance 1e-10 (tolerance: 5e-6 K of table rounding plus
 * the integration bound, 6e-7 K), and against the eigen-solution at every 10 s sample at the
 * default 1e-6 (tolerance: the integration bound at the hottest temperature, 296 degC). */
static void test_integrate_two_node_eigen(void **state)
{
    static const char *const rtols[] = {"1e-10", "1e-6"};
    eigen2 e;
    char yaml[2048];
    (void)state;
    eigen2_solve(&e, 50.0, 800.0, 5.0, 0.05, 0.8, 200.0, 25.0, 25.0, 25.0);
    for (int k = 0; k < 2; k++) {
        tp_yaml_net y;
        tp_history h;
        tp_integrate_stats st;
        double rtol = k == 0 ? 1.0e-10 : 1.0e-6;
        double bound = error_bound(rtol, 296.0 + TP_TEST_KELVIN);
        snprintf(yaml, sizeof yaml, TWO_NODE_YAML, rtols[k]);
        assert_int_equal(tp_yaml_net_open(&y, yaml), TP_OK);
        run_net(y.net, y.desc.run.duration, y.desc.run.step, y.desc.run.tolerance, &h, &st);
        assert_int_equal(h.n, 361);
        for (long i = 0; i < h.n; i++) {
            double t1 = tp_history_temp(&h, i, 0) - TP_TEST_KELVIN;
            double t2 = tp_history_temp(&h, i, 1) - TP_TEST_KELVIN;
            if (k == 0) {
                for (size_t j = 0; j < N_TABLE; j++) {
                    if (h.t[i] != two_node_table[j][0])
                        continue;
                    tp_check_abs("T1 vs table", t1, two_node_table[j][1], 5.0e-6 + bound);
                    tp_check_abs("T2 vs table", t2, two_node_table[j][2], 5.0e-6 + bound);
                }
            } else {
                tp_check_abs("T1 vs eigen", t1, eigen2_at(&e, 0, h.t[i]), bound);
                tp_check_abs("T2 vs eigen", t2, eigen2_at(&e, 1, h.t[i]), bound);
            }
        }
        tp_history_clear(&h);
        tp_yaml_net_close(&y);
    }
}

/* ---- radiation-only cooling --------------------------------------------------------------- */

/* Time for a lumped body (capacity per area k = rho V c / A, emissivity eps) to cool by
 * radiation alone from Ti to T in surroundings at Tsur (Bejan & Kraus, Heat Transfer Handbook,
 * Wiley 2003, Eq. 3.283; the same form as Incropera 7th ed. Eq. 5.18, from memory):
 *   t = k / (4 eps sigma Tsur^3) { ln|(Tsur + T)/(Tsur - T)| - ln|(Tsur + Ti)/(Tsur - Ti)|
 *                                  + 2 [atan(T/Tsur) - atan(Ti/Tsur)] } */
static double radiative_cooling_time(double k, double eps, double ti, double tsur, double t)
{
    return k / (4.0 * eps * SIGMA * tsur * tsur * tsur) *
           (log(fabs((tsur + t) / (tsur - t))) - log(fabs((tsur + ti) / (tsur - ti))) +
            2.0 * (atan(t / tsur) - atan(ti / tsur)));
}

/* Check value (the closed form above, hand calculation):
 * eps = 1, rho V c / A = 5000 J/(m2.K), Ti = 400 K, Tsur = 300 K: t(350 K) = 399.0762 s.
 * Here a 1 m2 node of 5000 J/K. (1) the closed form above gives 399.0762 s to half a unit of
 * the last digit; (2) CVODE at rtol 1e-10 ends at 350 K after 399.0762 s, within the rounding
 * of the time (5e-5 s times the cooling rate 0.0783 K/s at 350 K) plus the integration bound;
 * (3) at the default rtol 1e-6 every 1 s sample lies on the closed form: its temperature's
 * closed-form time equals the sample time within the integration bound divided by the local
 * cooling rate. */
static void test_integrate_radiation_cooling_closed_form(void **state)
{
    const double k = 5000.0, ti = 400.0, tsur = 300.0, t350 = 399.0762;
    (void)state;
    tp_check_abs("closed form t(350 K)", radiative_cooling_time(k, 1.0, ti, tsur, 350.0), t350,
                 5.0e-5);
    for (int run = 0; run < 2; run++) {
        tp_network *net = tp_network_create();
        tp_net_link *l;
        tp_history h;
        tp_integrate_stats st;
        double rtol = run == 0 ? 1.0e-10 : 1.0e-6, bound = error_bound(rtol, ti);
        int a, b;
        a = tp_network_add_node(net, "body", k, ti);
        b = tp_network_add_node(net, "surroundings", 0.0, tsur);
        l = tp_network_add_link(net, a, b, TP_LAW_RADIATION);
        l->area = 1.0;
        l->eps = 1.0;
        assert_int_equal(tp_network_finish(net), TP_OK);
        run_net(net, t350, 1.0, rtol, &h, &st);
        if (run == 0) {
            double rate = SIGMA * (pow(350.0, 4) - pow(tsur, 4)) / k;
            assert_true(h.t[h.n - 1] == t350);
            tp_check_abs("T(399.0762 s)", tp_history_temp(&h, h.n - 1, 0), 350.0,
                         5.0e-5 * rate + bound);
        } else {
            for (long i = 1; i < h.n; i++) {
                double t = tp_history_temp(&h, i, 0);
                double rate = SIGMA * (pow(t, 4) - pow(tsur, 4)) / k;
                tp_check_abs("t(T)", radiative_cooling_time(k, 1.0, ti, tsur, t), h.t[i],
                             bound / rate);
            }
        }
        tp_history_clear(&h);
        tp_network_destroy(&net);
    }
}

/* ---- energy balance ----------------------------------------------------------------------- */

/* A plate under on-off control losing by convection and radiation, a sensor node radiating
 * too (an invented case; round numbers). */
static const char *const balance_yaml =
    "network:\n"
    "  nodes:\n"
    "    - {id: plate, capacity: 900 J/K, initial: 20 degC}\n"
    "    - {id: sensor, capacity: 0.3 J/K, initial: 20 degC}\n"
    "    - {id: room, fixed: 20 degC}\n"
    "  links:\n"
    "    - {between: [plate, sensor], conductance: 0.05 W/K}\n"
    "    - {between: [plate, room], convection: {area: 0.04 m2, coefficient: 8 W/(m2.K)}}\n"
    "    - {between: [plate, room], radiation: {area: 0.04 m2, emissivity: 0.9}}\n"
    "    - {between: [sensor, room], radiation: {area: 0.0001 m2, emissivity: 0.9}}\n"
    "  sources:\n"
    "    - {id: pad, node: plate, power: 150 W}\n"
    "control: {source: pad, sensor: sensor, mode: on-off, setpoint: 120 degC, band: 2 K,"
    " period: 1 s}\n"
    "run: {duration: 1 h, step: 1 s}\n";

/* Conservation of energy (first law): the energy the sources delivered equals the change of
 * stored energy sum C_i (T_i(end) - T_i(0)) plus the energy that left into fixed nodes, within
 * 1e-4 of the delivered energy (issue 2). The totals are integrated by CVODE beside the
 * temperatures (network.h TP_Q_*), the stored energy comes from the temperatures alone, so a
 * missing or mis-signed flow in either breaks the balance. Independently, the controlled
 * constant-power source delivered P x (time on): the duty recorded at each 1 s tick holds
 * until the next, so its energy is 150 W x sum of duties x 1 s; checked to 1e-6 relative
 * (the total of a piecewise-constant rate is integrated exactly up to the 1e-6 J absolute
 * tolerance per step). */
static void test_integrate_energy_balance_onoff_radiation(void **state)
{
    tp_yaml_net y;
    tp_history h;
    tp_integrate_stats st;
    const tp_network *net;
    double stored = 0.0, on_time = 0.0, e_src, e_lost;
    long last;
    (void)state;
    assert_int_equal(tp_yaml_net_open(&y, balance_yaml), TP_OK);
    net = y.net;
    run_net(y.net, y.desc.run.duration, y.desc.run.step, y.desc.run.tolerance, &h, &st);
    last = h.n - 1;
    assert_true(h.t[last] == 3600.0);
    assert_true(st.restarts > 10); /* the controller did switch: the case tests what it says */
    for (int c = 0; c < h.n_out; c++)
        stored += net->nodes[h.out_nodes[c]].capacity *
                  (tp_history_temp(&h, last, c) - tp_history_temp(&h, 0, c));
    e_src = h.energy[last * TP_N_QUAD + TP_Q_SOURCE];
    e_lost = h.energy[last * TP_N_QUAD + TP_Q_LOST];
    assert_true(e_lost > 0.1 * e_src); /* radiation and convection carried real energy */
    tp_check_rel("delivered = stored + lost", stored + e_lost, e_src, 1.0e-4);
    for (long i = 0; i < last; i++)
        on_time += h.duty[i] * (h.t[i + 1] - h.t[i]);
    tp_check_rel("delivered = P x time on", e_src, 150.0 * on_time, 1.0e-6);
    tp_history_clear(&h);
    tp_yaml_net_close(&y);
}

/* The same with the coil alone (an electric source whose power falls as its resistance rises,
 * P = V^2 / (R0 (1 + alpha (T - Tref))), docs/control.md), so the delivered total is compared with
 * an independent quadrature: the trapezoidal rule over the 1 s samples of the recorded power,
 * whose error is below (t_end h^2 / 12) max|P''| ~ 5e-3 J here (P falls by tens of watts over
 * a time constant of about 1800 s). The delivered total is itself a CVODE state with local
 * error rtol |E| + atol per step, so it is held to the same ten-local-tolerance allowance as
 * the temperatures: 10 x rtol = 1e-5 relative. */
static void test_integrate_energy_balance_electric(void **state)
{
    static const char *const yaml =
        "network:\n"
        "  nodes:\n"
        "    - {id: plate, capacity: 900 J/K, initial: 20 degC}\n"
        "    - {id: room, fixed: 20 degC}\n"
        "  links:\n"
        "    - {between: [plate, room], radiation: {area: 0.04 m2, emissivity: 0.9}}\n"
        "    - {between: [plate, room], conductance: 0.2 W/K}\n"
        "  sources:\n"
        "    - {id: coil, node: plate, supply: 24 V, resistance: 4.8 ohm, tempco: 0.0039 1/K,"
        " reference: 20 degC}\n"
        "run: {duration: 1 h, step: 1 s}\n";
    tp_yaml_net y;
    tp_history h;
    tp_integrate_stats st;
    double trap = 0.0, stored;
    long last;
    (void)state;
    assert_int_equal(tp_yaml_net_open(&y, yaml), TP_OK);
    run_net(y.net, 3600.0, 1.0, 1.0e-6, &h, &st);
    last = h.n - 1;
    stored = 900.0 * (tp_history_temp(&h, last, 0) - tp_history_temp(&h, 0, 0));
    tp_check_rel("delivered = stored + lost", stored + h.energy[last * TP_N_QUAD + TP_Q_LOST],
                 h.energy[last * TP_N_QUAD + TP_Q_SOURCE], 1.0e-4);
    for (long i = 0; i < last; i++)
        trap += 0.5 * (h.power[i] + h.power[i + 1]) * (h.t[i + 1] - h.t[i]);
    tp_check_rel("delivered = trapezoid of P", h.energy[last * TP_N_QUAD + TP_Q_SOURCE], trap,
                 10.0 * 1.0e-6);
    tp_history_clear(&h);
    tp_yaml_net_close(&y);
}

/* ---- the CSV written by tepid warmup ------------------------------------------------------ */

/* Split `line` at commas in place; returns the number of fields (at most max). */
static int split_csv(char *line, char **fields, int max)
{
    int n = 0;
    char *p = line;
    while (n < max) {
        fields[n++] = p;
        p = strchr(p, ',');
        if (!p)
            break;
        *p++ = '\0';
    }
    return n;
}

static double cell(const char *text)
{
    char *end;
    double v = strtod(text, &end);
    assert_true(end != text && *end == '\0');
    return v;
}

/* Nodes a, room (fixed), b in that order; sources p1 (constant) and p2 (electric); on-off
 * control of p1 reading b. An invented case. */
#define CSV_YAML                                                                                   \
    "network:\n"                                                                                   \
    "  nodes:\n"                                                                                   \
    "    - {id: a, capacity: 400 J/K, initial: 21 degC}\n"                                         \
    "    - {id: room, fixed: 21 degC}\n"                                                           \
    "    - {id: b, capacity: 2 J/K, initial: 30 degC}\n"                                           \
    "  links:\n"                                                                                   \
    "    - {between: [a, room], conductance: 1.2 W/K}\n"                                           \
    "    - {between: [a, b], conductance: 0.1 W/K}\n"                                              \
    "  sources:\n"                                                                                 \
    "    - {id: p1, node: a, power: 80 W}\n"                                                       \
    "    - {id: p2, node: b, supply: 24 V, resistance: 480 ohm, tempco: 0.004 1/K,"                \
    " reference: 20 degC}\n"                                                                       \
    "%s"                                                                                           \
    "run: {duration: 1 min, step: 5 s}\n"

/* Run warmup on CSV_YAML with `control` spliced in; returns the CSV text (caller frees). */
static char *warmup_csv(tp_scratch *s, const char *control)
{
    char yaml[2048], cfg[TP_TEST_PATH], csv[TP_TEST_PATH];
    tp_run_result r;
    char *text;
    snprintf(yaml, sizeof yaml, CSV_YAML, control);
    tp_scratch_write(s, "plate.yaml", yaml, cfg);
    tp_scratch_path(s, "out.csv", csv, sizeof csv);
    {
        const char *args[] = {"warmup", cfg, "--csv", csv, "-q", NULL};
        tp_run_tepid(s, args, &r);
    }
    if (r.status != 0)
        print_error("tepid warmup: exit %d\n%s", r.status, r.err);
    assert_int_equal(r.status, 0);
    assert_string_equal(r.out, ""); /* -q: no summary */
    tp_run_clear(&r);
    text = tp_read_file(csv);
    assert_non_null(text);
    return text;
}

/* docs/user-guide.md "Outputs": a header row, then one row per output step; columns time_s,
 * <id>_C for every node with capacity in declaration order (the fixed node is skipped),
 * <source-id>_W for every source, then duty (and reading_C) with a controller; decimal point,
 * comma separator, no units in cells. Rows on the run.step grid: 1 min at 5 s is 13 rows at
 * t = 0, 5, ..., 60 s. First-row values by hand: a at 21 degC, b at 30 degC; p1 fully on
 * (the reading 30 degC is below the 60 degC setpoint, docs/control.md: "at t = 0 on when the
 * reading is below the setpoint") gives 80 W; p2 = V^2 / (R0 (1 + alpha (T - Tref))) =
 * 576 / (480 x 1.04) = 1.15384615 W. Tolerance 1e-8 relative: the cells carry 9 significant
 * digits. */
static void test_integrate_csv_columns_with_control(void **state)
{
    static const char *const header[] = {"time_s", "a_C",  "b_C",      "p1_W",
                                         "p2_W",   "duty", "reading_C"};
    static const double first[] = {0.0, 21.0, 30.0, 80.0, 576.0 / (480.0 * 1.04), 1.0, 30.0};
    tp_scratch s;
    char *text, *line, *save = NULL, *f[16];
    int row = 0;
    (void)state;
    tp_scratch_create(&s);
    text = warmup_csv(&s, "control: {source: p1, sensor: b, mode: on-off, setpoint: 60 degC,"
                          " band: 2 K, period: 1 s}\n");
    for (line = strtok_r(text, "\n", &save); line; line = strtok_r(NULL, "\n", &save), row++) {
        int n = split_csv(line, f, 16);
        assert_int_equal(n, 7);
        if (row == 0) {
            for (int k = 0; k < 7; k++)
                assert_string_equal(f[k], header[k]);
            continue;
        }
        assert_true(cell(f[0]) == 5.0 * (row - 1));
        if (row == 1)
            for (int k = 1; k < 7; k++)
                tp_check_rel(header[k], cell(f[k]), first[k], 1.0e-8);
    }
    assert_int_equal(row, 1 + 13);
    free(text);
    tp_scratch_destroy(&s);
}

/* Without a controller there is no duty column (docs/user-guide.md), and every source is fully
 * on. */
static void test_integrate_csv_columns_without_control(void **state)
{
    tp_scratch s;
    char *text, *nl;
    (void)state;
    tp_scratch_create(&s);
    text = warmup_csv(&s, "");
    nl = strchr(text, '\n');
    assert_non_null(nl);
    *nl = '\0';
    assert_string_equal(text, "time_s,a_C,b_C,p1_W,p2_W");
    free(text);
    tp_scratch_destroy(&s);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_integrate_one_node_closed_form),
        cmocka_unit_test(test_integrate_one_node_time_constant),
        cmocka_unit_test(test_integrate_two_node_eigen_reference),
        cmocka_unit_test(test_integrate_two_node_eigen),
        cmocka_unit_test(test_integrate_radiation_cooling_closed_form),
        cmocka_unit_test(test_integrate_energy_balance_onoff_radiation),
        cmocka_unit_test(test_integrate_energy_balance_electric),
        cmocka_unit_test(test_integrate_csv_columns_with_control),
        cmocka_unit_test(test_integrate_csv_columns_without_control),
    };
    int rc = cmocka_run_group_tests(tests, NULL, NULL);
    tp_units_shutdown();
    return rc;
}

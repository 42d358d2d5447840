/* Tests of sweeps and tolerance studies: the random streams against published test vectors,
 * the statistics against hand calculations, grid and spread parsing, a swept first-order
 * warm-up against its closed form, sample statistics against the input distribution's
 * moments, failed samples, and byte-identical output for 1 and 2 jobs. */
#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>
#include <setjmp.h>
#include <cmocka.h>

#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "config.h"
#include "sweep.h"
#include "tp_test.h"
#include "yamltree.h"

#define KELVIN 273.15

/* Read a description from YAML text; fails the test on any error. */
static void load(const char *yaml, tp_description *desc)
{
    tp_diag d;
    tp_yamltree *doc = NULL;
    tp_diag_init(&d, stderr);
    assert_int_equal(tp_yamltree_load_text("test.yaml", yaml, strlen(yaml), &doc, &d), TP_OK);
    assert_int_equal(tp_config_read(doc, desc, &d), TP_OK);
    tp_yamltree_destroy(&doc);
}

/* Run a plan on `jobs` threads into a fresh results array (caller frees). */
static tp_sweep_result *run_plan(const tp_sweep_plan *plan, const tp_description *desc, int jobs,
                                 tp_sweep_totals *tot)
{
    long n = tp_sweep_count(plan);
    tp_sweep_result *res = calloc((size_t)n, sizeof *res);
    assert_non_null(res);
    assert_int_equal(tp_sweep_run(plan, desc, jobs, res, NULL, NULL, tot), TP_OK);
    return res;
}

/* A single node (C, G to a fixed room, a constant-power pad) under on-off control. */
static const char *single_node =
    "network:\n"
    "  nodes:\n"
    "    - {id: plate, capacity: 1000 J/K, initial: 20 degC}\n"
    "    - {id: room, fixed: 20 degC}\n"
    "  links:\n"
    "    - {between: [plate, room], conductance: 2 W/K}\n"
    "    - {between: [plate, room], radiation: {area: 0.01 m2, emissivity: 0.8}}\n"
    "  sources:\n"
    "    - {id: pad, node: plate, power: 200 W}\n"
    "control: {source: pad, sensor: plate, mode: on-off, setpoint: 70 degC, band: 2 K,"
    " period: 0.5 s}\n"
    "run: {duration: 20 min, step: 1 s, tolerance: 1e-9}\n";

/* The same without the radiation link (a linear plant), short run: for statistics. */
static const char *linear_node =
    "network:\n"
    "  nodes:\n"
    "    - {id: plate, capacity: 200 J/K, initial: 20 degC}\n"
    "    - {id: room, fixed: 20 degC}\n"
    "  links:\n"
    "    - {between: [plate, room], conductance: 2 W/K}\n"
    "  sources:\n"
    "    - {id: pad, node: plate, power: 400 W}\n"
    "control: {source: pad, sensor: plate, mode: on-off, setpoint: 70 degC, band: 2 K,"
    " period: 1 s}\n"
    "run: {duration: 20 s, step: 1 s}\n";

/* ---- random streams ------------------------------------------------------------------------ */

static void test_splitmix64_reference_outputs(void **state)
{
    /* The first five outputs for seed 1234567, from the Rosetta Code task "Pseudo-random
     * numbers/Splitmix64" (algorithm of Steele, Lea & Flood, OOPSLA 2014). */
    static const uint64_t want[5] = {6457827717110365317ULL, 3203168211198807973ULL,
                                     9817491932198370423ULL, 4593380528125082431ULL,
                                     16408922859458223821ULL};
    uint64_t s = 1234567;
    int i;
    (void)state;
    for (i = 0; i < 5; i++)
        assert_true(tp_sweep_splitmix64(&s) == want[i]);
}

static void test_unit_interval_is_open(void **state)
{
    (void)state;
    /* Closed form: ((bits >> 12) + 1/2) / 2^52 lies in [2^-53, 1 - 2^-53], both exact. */
    assert_true(tp_sweep_unit(0) == ldexp(1.0, -53));
    assert_true(tp_sweep_unit(UINT64_MAX) == 1.0 - ldexp(1.0, -53));
    assert_true(tp_sweep_unit(UINT64_MAX) < 1.0);
    assert_true(tp_sweep_unit(1ULL << 63) == 0.5 + ldexp(1.0, -53));
}

static void test_box_muller_hand_values(void **state)
{
    (void)state;
    /* Hand calculation: u1 = exp(-2) gives sqrt(-2 ln u1) = 2; cos(0) = 1, cos(pi) = -1,
     * cos(pi/3) = 1/2 (Box & Muller 1958). */
    assert_true(fabs(tp_sweep_box_muller(exp(-2.0), 0.0) - 2.0) < 1e-15);
    assert_true(fabs(tp_sweep_box_muller(exp(-2.0), 0.5) + 2.0) < 1e-15);
    assert_true(fabs(tp_sweep_box_muller(exp(-2.0), 1.0 / 6.0) - 1.0) < 1e-14);
    /* u1 = exp(-1/2): sqrt(1) = 1. */
    assert_true(fabs(tp_sweep_box_muller(exp(-0.5), 0.0) - 1.0) < 1e-15);
}

static void test_hash_depends_on_every_coordinate(void **state)
{
    uint64_t h = tp_sweep_hash(1, 2, 3);
    (void)state;
    /* Changing any coordinate changes the output (a collision of 64-bit outputs here would
     * have probability about 2^-64; common practice, no source). */
    assert_true(h != tp_sweep_hash(2, 2, 3));
    assert_true(h != tp_sweep_hash(1, 3, 3));
    assert_true(h != tp_sweep_hash(1, 2, 4));
    assert_true(h == tp_sweep_hash(1, 2, 3));
}

static void test_normal_draws_match_standard_normal(void **state)
{
    /* Spread a key normal with sd 10 % and look at the drawn values themselves: their mean,
     * sd and the share within one sd must match N(mu, sigma) within sampling error. */
    tp_description desc;
    tp_sweep_plan plan;
    tp_diag d;
    const long n = 20000;
    double *v = malloc((size_t)n * sizeof *v), mean, sd;
    long i, inside = 0;
    (void)state;
    assert_non_null(v);
    tp_diag_init(&d, stderr);
    load(linear_node, &desc);
    tp_sweep_plan_init(&plan, TP_SWEEP_SPREAD);
    plan.n_samples = n;
    plan.seed = 42;
    assert_int_equal(
        tp_sweep_add_spread(&plan, &desc, "network.links.0.conductance=normal:10%", &d), TP_OK);
    for (i = 0; i < n; i++) {
        v[i] = tp_sweep_value(&plan, i, 0);
        inside += fabs(v[i] - 2.0) <= 0.2;
    }
    tp_sweep_mean_sd(v, (size_t)n, &mean, &sd);
    /* mu = 2, sigma = 0.2. Standard error of the mean sigma/sqrt(N) = 1.41e-3, of the sd
     * about sigma/sqrt(2N) = 1.0e-3 (normal data); allow 4 standard errors. P(|Z| <= 1) =
     * 0.682689 (standard normal table), binomial standard error sqrt(p(1-p)/N) = 3.3e-3. */
    assert_true(fabs(mean - 2.0) < 4.0 * 0.2 / sqrt((double)n));
    assert_true(fabs(sd - 0.2) < 4.0 * 0.2 / sqrt(2.0 * (double)n));
    assert_true(fabs((double)inside / (double)n - 0.682689) <
                4.0 * sqrt(0.682689 * 0.317311 / (double)n));
    free(v);
    tp_sweep_plan_clear(&plan);
    tp_config_clear(&desc);
}

/* ---- statistics ---------------------------------------------------------------------------- */

static void test_mean_sd_hand_example(void **state)
{
    static const double x[8] = {2, 4, 4, 4, 5, 5, 7, 9};
    double mean, sd;
    (void)state;
    /* Hand calculation: sum 40, mean 5; squared deviations 9+1+1+1+0+0+4+16 = 32, sample
     * variance 32/7. */
    tp_sweep_mean_sd(x, 8, &mean, &sd);
    assert_true(fabs(mean - 5.0) < 1e-15);
    assert_true(fabs(sd - sqrt(32.0 / 7.0)) < 1e-15);
    tp_sweep_mean_sd(x, 1, &mean, &sd);
    assert_true(mean == 2.0 && sd == 0.0);
}

static void test_quantile_hand_examples(void **state)
{
    static const double five[5] = {1, 2, 3, 4, 5};
    static const double eight[8] = {1, 1, 2, 3, 4, 5, 6, 9}; /* 3 1 4 1 5 9 2 6, sorted */
    (void)state;
    /* Hyndman & Fan (1996) definition 7, h = (n - 1) p, worked by hand:
     * n = 5: p = 0.05 -> h = 0.2 -> 1 + 0.2 (2 - 1) = 1.2; p = 0.5 -> 3; p = 0.95 -> h = 3.8
     * -> 4 + 0.8 (5 - 4) = 4.8. */
    assert_true(fabs(tp_sweep_quantile(five, 5, 0.05) - 1.2) < 1e-14);
    assert_true(fabs(tp_sweep_quantile(five, 5, 0.50) - 3.0) < 1e-14);
    assert_true(fabs(tp_sweep_quantile(five, 5, 0.95) - 4.8) < 1e-14);
    /* n = 8: p = 0.05 -> h = 0.35 -> 1 + 0.35 (1 - 1) = 1; p = 0.5 -> h = 3.5 -> 3 + 0.5 = 3.5;
     * p = 0.95 -> h = 6.65 -> 6 + 0.65 (9 - 6) = 7.95. */
    assert_true(fabs(tp_sweep_quantile(eight, 8, 0.05) - 1.0) < 1e-14);
    assert_true(fabs(tp_sweep_quantile(eight, 8, 0.50) - 3.5) < 1e-14);
    assert_true(fabs(tp_sweep_quantile(eight, 8, 0.95) - 7.95) < 1e-14);
    /* The ends are the extremes; one value is every quantile. */
    assert_true(tp_sweep_quantile(eight, 8, 0.0) == 1.0);
    assert_true(tp_sweep_quantile(eight, 8, 1.0) == 9.0);
    assert_true(tp_sweep_quantile(five + 2, 1, 0.95) == 3.0);
    assert_true(isnan(tp_sweep_quantile(five, 0, 0.5)));
}

static void test_ranks_average_ties(void **state)
{
    static const double x[5] = {30, 10, 20, 20, 5};
    double r[5];
    (void)state;
    /* Hand calculation: 5 -> 1, 10 -> 2, the two 20s share ranks 3 and 4 -> 3.5, 30 -> 5. */
    assert_int_equal(tp_sweep_ranks(x, 5, r), TP_OK);
    assert_true(r[0] == 5.0 && r[1] == 2.0 && r[2] == 3.5 && r[3] == 3.5 && r[4] == 1.0);
}

static void test_spearman_hand_examples(void **state)
{
    static const double x[5] = {1, 2, 3, 4, 5};
    static const double y[5] = {5, 6, 7, 8, 7};
    static const double cube[5] = {-8, -1, 0, 27, 1000};
    static const double flat[5] = {3, 3, 3, 3, 3};
    double rev[5];
    int i;
    (void)state;
    /* Hand calculation: ranks of y are 1, 2, 3.5, 5, 3.5 (the 7s tie); deviations from the
     * mean rank 3 are x: -2 -1 0 1 2, y: -2 -1 0.5 2 0.5; sum of products 4+1+0+2+1 = 8, sums of
     * squares 10 and 9.5; rho = 8 / sqrt(95) = 0.8207826816681233. */
    assert_true(fabs(tp_sweep_spearman(x, y, 5) - 8.0 / sqrt(95.0)) < 1e-14);
    /* Any increasing relation has rho = 1, any decreasing one -1 (definition). */
    assert_true(fabs(tp_sweep_spearman(x, cube, 5) - 1.0) < 1e-15);
    for (i = 0; i < 5; i++)
        rev[i] = -cube[i];
    assert_true(fabs(tp_sweep_spearman(x, rev, 5) + 1.0) < 1e-15);
    /* No spread, no correlation. */
    assert_true(isnan(tp_sweep_spearman(x, flat, 5)));
    assert_true(isnan(tp_sweep_spearman(x, y, 1)));
}

/* ---- plans --------------------------------------------------------------------------------- */

static void test_vary_range_with_units(void **state)
{
    tp_description desc;
    tp_sweep_plan plan;
    tp_diag d;
    int i;
    (void)state;
    tp_diag_init(&d, NULL);
    load(single_node, &desc);
    tp_sweep_plan_init(&plan, TP_SWEEP_GRID);
    /* 150 W to 400 W by 25 W: 11 values, the last exactly 400 W (hand count). */
    assert_int_equal(tp_sweep_add_vary(&plan, &desc, "network.sources.pad.power=150W:400W:25W", &d),
                     TP_OK);
    assert_int_equal(plan.params[0].n_values, 11);
    for (i = 0; i < 11; i++)
        assert_true(fabs(plan.params[0].values[i] - (150.0 + 25.0 * i)) < 1e-12);
    assert_true(plan.params[0].values[10] == 400.0);
    /* An absolute temperature range with an interval step: 16 degC to 28 degC by 2 K is
     * 289.15 K .. 301.15 K in 7 values (hand calculation; 2 K is never offset). */
    assert_int_equal(
        tp_sweep_add_vary(&plan, &desc, "network.nodes.room.fixed = 16 degC : 28 degC : 2 K", &d),
        TP_OK);
    assert_int_equal(plan.params[1].n_values, 7);
    assert_true(fabs(plan.params[1].values[0] - 289.15) < 1e-9);
    assert_true(fabs(plan.params[1].values[6] - 301.15) < 1e-9);
    /* Points: the first axis varies slowest; point 8 of 11 x 7 is (1, 1), point 76 (10, 6). */
    assert_int_equal(tp_sweep_count(&plan), 77);
    assert_int_equal(tp_sweep_axis_index(&plan, 8, 0), 1);
    assert_int_equal(tp_sweep_axis_index(&plan, 8, 1), 1);
    assert_int_equal(tp_sweep_axis_index(&plan, 76, 0), 10);
    assert_int_equal(tp_sweep_axis_index(&plan, 76, 1), 6);
    assert_true(tp_sweep_value(&plan, 8, 0) == 175.0);
    tp_sweep_plan_clear(&plan);
    /* A list with mixed units: 0.1 kW is 100 W. A downward range works too. */
    assert_int_equal(tp_sweep_add_vary(&plan, &desc, "network.sources.pad.power=0.1kW,250 W", &d),
                     TP_OK);
    assert_true(plan.params[0].n_values == 2 && plan.params[0].values[0] == 100.0 &&
                plan.params[0].values[1] == 250.0);
    tp_sweep_plan_clear(&plan);
    assert_int_equal(
        tp_sweep_add_vary(&plan, &desc, "network.links.0.conductance=3W/K:1W/K:-0.5W/K", &d),
        TP_OK);
    assert_int_equal(plan.params[0].n_values, 5);
    assert_true(plan.params[0].values[4] == 1.0);
    tp_sweep_plan_clear(&plan);
    tp_config_clear(&desc);
}

static void test_vary_refuses_bad_input(void **state)
{
    static const char *bad[] = {
        "network.sources.pad.power=150:400:25",             /* bare numbers for a power */
        "network.sources.pad.power=150W:400W:0W",           /* zero step */
        "network.sources.pad.power=150W:400W:-25W",         /* away from TO */
        "network.sources.pad.power=150W:400W",              /* two parts */
        "network.sources.pad.power=150V:400V:25V",          /* wrong dimension */
        "network.sources.pad.supply=10V:20V:1V",            /* not set in this file */
        "heater.power=1W:2W:1W",                            /* not in this form */
        "network.links.1.radiation.emissivity=0.5:1.2:0.1", /* beyond (0, 1] */
        "network.sources.pad.power=-50W:50W:50W",           /* negative power */
        "network.sources.pad.power",                        /* no '=' */
    };
    tp_description desc;
    tp_sweep_plan plan;
    tp_diag d;
    size_t i;
    (void)state;
    load(single_node, &desc);
    for (i = 0; i < sizeof bad / sizeof bad[0]; i++) {
        tp_diag_init(&d, NULL);
        tp_sweep_plan_init(&plan, TP_SWEEP_GRID);
        assert_int_equal(tp_sweep_add_vary(&plan, &desc, bad[i], &d), TP_ERR_USAGE);
        assert_int_equal(plan.n_params, 0);
        tp_sweep_plan_clear(&plan);
    }
    /* A step in degF is an interval too: 10 K in steps of 5/9 K is 19 values (hand count). */
    tp_diag_init(&d, NULL);
    tp_sweep_plan_init(&plan, TP_SWEEP_GRID);
    assert_int_equal(
        tp_sweep_add_vary(&plan, &desc, "network.nodes.room.fixed=20degC:30degC:1degF", &d), TP_OK);
    assert_int_equal(plan.params[0].n_values, 19);
    tp_sweep_plan_clear(&plan);
    /* A key varied twice. */
    tp_diag_init(&d, NULL);
    tp_sweep_plan_init(&plan, TP_SWEEP_GRID);
    assert_int_equal(tp_sweep_add_vary(&plan, &desc, "network.sources.pad.power=1W,2W", &d), TP_OK);
    assert_int_equal(tp_sweep_add_vary(&plan, &desc, "network.sources.pad.power=3W", &d),
                     TP_ERR_USAGE);
    tp_sweep_plan_clear(&plan);
    tp_config_clear(&desc);
}

static void test_spread_forms(void **state)
{
    tp_description desc;
    tp_sweep_plan plan;
    tp_diag d;
    static const char *bad[] = {
        "network.nodes.room.fixed=normal:5%",                   /* % of an absolute temperature */
        "network.links.0.conductance=uniform:-10%:0.1W/K",      /* mixed */
        "network.links.0.conductance=uniform:10%:-10%",         /* LOW above HIGH */
        "network.links.0.conductance=normal:0%",                /* no spread */
        "network.links.0.conductance=lognormal:5%",             /* unknown law */
        "network.links.1.radiation.emissivity=uniform:0.7:1.1", /* a bound beyond (0, 1] */
    };
    size_t i;
    (void)state;
    tp_diag_init(&d, NULL);
    load(single_node, &desc);
    tp_sweep_plan_init(&plan, TP_SWEEP_SPREAD);
    assert_int_equal(tp_sweep_add_spread(&plan, &desc, "network.links.0.conductance=normal:5%", &d),
                     TP_OK);
    assert_true(plan.params[0].relative && plan.params[0].sigma == 0.05);
    /* An absolute sd of a temperature is an interval: 2 K. */
    assert_int_equal(tp_sweep_add_spread(&plan, &desc, "network.nodes.room.fixed=normal:2K", &d),
                     TP_OK);
    assert_true(!plan.params[1].relative && plan.params[1].sigma == 2.0);
    /* Uniform bounds with units are absolute temperatures: 16 degC = 289.15 K. */
    assert_int_equal(
        tp_sweep_add_spread(&plan, &desc, "network.nodes.plate.initial=uniform:16degC:28degC", &d),
        TP_OK);
    assert_true(fabs(plan.params[2].low - 289.15) < 1e-9);
    assert_int_equal(
        tp_sweep_add_spread(&plan, &desc, "network.sources.pad.power=uniform:-10%:+10%", &d),
        TP_OK);
    /* Every uniform draw stays in [180 W, 220 W] (10 % of 200 W either side). */
    plan.n_samples = 1000;
    for (i = 0; i < 1000; i++) {
        double v = tp_sweep_value(&plan, (long)i, 3), t = tp_sweep_value(&plan, (long)i, 2);
        assert_true(v > 180.0 && v < 220.0);
        assert_true(t > 289.15 && t < 301.15);
    }
    tp_sweep_plan_clear(&plan);
    for (i = 0; i < sizeof bad / sizeof bad[0]; i++) {
        tp_diag_init(&d, NULL);
        tp_sweep_plan_init(&plan, TP_SWEEP_SPREAD);
        assert_int_equal(tp_sweep_add_spread(&plan, &desc, bad[i], &d), TP_ERR_USAGE);
        tp_sweep_plan_clear(&plan);
    }
    tp_config_clear(&desc);
}

static void test_draws_do_not_depend_on_option_order(void **state)
{
    tp_description desc;
    tp_sweep_plan a, b;
    tp_diag d;
    long i;
    (void)state;
    tp_diag_init(&d, stderr);
    load(single_node, &desc);
    tp_sweep_plan_init(&a, TP_SWEEP_SPREAD);
    tp_sweep_plan_init(&b, TP_SWEEP_SPREAD);
    a.n_samples = b.n_samples = 50;
    assert_int_equal(tp_sweep_add_spread(&a, &desc, "network.links.0.conductance=normal:5%", &d),
                     TP_OK);
    assert_int_equal(tp_sweep_add_spread(&a, &desc, "network.sources.pad.power=normal:5%", &d),
                     TP_OK);
    assert_int_equal(tp_sweep_add_spread(&b, &desc, "network.sources.pad.power=normal:5%", &d),
                     TP_OK);
    assert_int_equal(tp_sweep_add_spread(&b, &desc, "network.links.0.conductance=normal:5%", &d),
                     TP_OK);
    /* Each parameter's stream follows its key, not its position. */
    for (i = 0; i < 50; i++) {
        assert_true(tp_sweep_value(&a, i, 0) == tp_sweep_value(&b, i, 1));
        assert_true(tp_sweep_value(&a, i, 1) == tp_sweep_value(&b, i, 0));
    }
    /* Another seed, other draws. */
    b.seed = 2;
    assert_true(tp_sweep_value(&a, 0, 0) != tp_sweep_value(&b, 0, 1));
    tp_sweep_plan_clear(&a);
    tp_sweep_plan_clear(&b);
    tp_config_clear(&desc);
}

static void test_config_check_uses_schema_bounds(void **state)
{
    tp_description desc;
    char msg[256];
    (void)state;
    load(single_node, &desc);
    /* The schema's bounds (src/input/config.c): emissivity in (0, 1], power >= 0, capacity > 0. */
    assert_int_equal(
        tp_config_check(&desc, "network.links.1.radiation.emissivity", 1.0, msg, sizeof msg),
        TP_OK);
    assert_int_equal(
        tp_config_check(&desc, "network.links.1.radiation.emissivity", 1.01, msg, sizeof msg),
        TP_ERR_CONFIG);
    assert_non_null(strstr(msg, "outside (0, 1]"));
    assert_int_equal(tp_config_check(&desc, "network.sources.pad.power", -1.0, msg, sizeof msg),
                     TP_ERR_CONFIG);
    assert_int_equal(tp_config_check(&desc, "network.nodes.plate.capacity", 0.0, msg, sizeof msg),
                     TP_ERR_CONFIG);
    assert_int_equal(
        tp_config_check(&desc, "network.nodes.plate.capacity", (double)NAN, msg, sizeof msg),
        TP_ERR_CONFIG);
    assert_int_equal(tp_config_check(&desc, "network.nodes.nothing.capacity", 1.0, msg, sizeof msg),
                     TP_ERR_CONFIG);
    tp_config_clear(&desc);
}

/* ---- runs ----------------------------------------------------------------------------------- */

static void test_first_order_time_at_every_power(void **state)
{
    /* Single node, full power until the reading reaches the setpoint (on-off stays on below
     * it): T(t) = Ta + (P/G)(1 - exp(-t/tau)), tau = C/G = 1000/2 = 500 s, so the setpoint
     * 50 K above the room is reached at t = -tau ln(1 - 50 G / P) (closed form of the lumped
     * first-order response, Incropera 7th ed. Sec. 5.2; from memory). The plant is linear
     * (no radiation link); C is raised to 1000 J/K for a 500 s time constant. */
    tp_description desc;
    tp_sweep_plan plan;
    tp_sweep_totals tot;
    tp_sweep_result *res;
    tp_diag d;
    long i;
    (void)state;
    tp_diag_init(&d, stderr);
    load(linear_node, &desc);
    desc.network.nodes[0].capacity = 1000.0;
    desc.run.duration = 1200.0;
    desc.run.tolerance = 1e-9;
    tp_sweep_plan_init(&plan, TP_SWEEP_GRID);
    assert_int_equal(tp_sweep_add_vary(&plan, &desc, "network.sources.pad.power=150W:400W:50W", &d),
                     TP_OK);
    res = run_plan(&plan, &desc, 2, &tot);
    assert_int_equal(tot.failed, 0);
    for (i = 0; i < tp_sweep_count(&plan); i++) {
        double p = tp_sweep_value(&plan, i, 0);
        double t = -500.0 * log(1.0 - 50.0 * 2.0 / p);
        assert_true(res[i].ok);
        /* Linear interpolation between 1 s samples of this concave curve errs by at most
         * dt^2 / (8 tau) = 2.5e-4 s; CVODE at rtol 1e-9 adds well under 1e-4 s. */
        assert_true(fabs(res[i].metric[TP_MET_TIME_SETPOINT] - t) < 1e-3);
        /* Holding power G (Tset - Ta) = 100 W, margin P / 100 W (hand calculation). */
        assert_true(fabs(res[i].metric[TP_MET_HOLD_POWER] - 100.0) < 1e-6);
        assert_true(fabs(res[i].metric[TP_MET_MARGIN] - p / 100.0) < 1e-8);
        /* Highest reachable: Ta + P/G (closed form steady state). */
        assert_true(fabs(res[i].metric[TP_MET_HIGHEST] - (20.0 + KELVIN + p / 2.0)) < 1e-6);
    }
    free(res);
    tp_sweep_plan_clear(&plan);
    tp_config_clear(&desc);
}

/* Check the statistics of holding power G (Tset - Ta) = 50 G with G spread. The sample mean
 * has standard error sigma/sqrt(N); the sample sd has standard error sqrt((mu4/sigma^4 - 1)/(4N))
 * sigma for large N (the variance of the sample variance is (mu4 - sigma^4)/N; Kendall & Stuart,
 * The Advanced Theory of Statistics, Vol. 1, Sec. 10.5; from memory), which is sigma/sqrt(2N)
 * for normal data (kurtosis 3) and sigma sqrt(0.2/N) for uniform data (kurtosis 9/5). Checks
 * allow 4 standard errors; with the fixed seed they are deterministic. */
static void check_holding_stats(const char *spread, double mu, double sigma, double kurtosis)
{
    tp_description desc;
    tp_sweep_plan plan;
    tp_sweep_totals tot;
    tp_sweep_result *res;
    tp_sweep_summary sum;
    tp_diag d;
    const long n = 2000;
    double se_mean = sigma / sqrt((double)n);
    double se_sd = sigma * sqrt((kurtosis - 1.0) / (4.0 * (double)n));
    tp_diag_init(&d, stderr);
    load(linear_node, &desc);
    tp_sweep_plan_init(&plan, TP_SWEEP_SPREAD);
    plan.n_samples = n;
    plan.seed = 2024;
    assert_int_equal(tp_sweep_add_spread(&plan, &desc, spread, &d), TP_OK);
    res = run_plan(&plan, &desc, 2, &tot);
    assert_int_equal(tot.failed, 0);
    assert_int_equal(tp_sweep_summarise(&plan, res, TP_MET_HOLD_POWER, &sum), TP_OK);
    assert_int_equal(sum.n, n);
    assert_true(fabs(sum.mean - mu) < 4.0 * se_mean);
    assert_true(fabs(sum.sd - sigma) < 4.0 * se_sd);
    /* The holding power rises with G exactly: rank correlation 1, and G drives it. */
    assert_true(fabs(sum.rho[0] - 1.0) < 1e-12);
    assert_int_equal(sum.driver, 0);
    /* The worst (largest) holding power is the largest drawn G times 50 K. */
    assert_true(sum.p5 < sum.p50 && sum.p50 < sum.p95 && sum.p95 <= sum.worst);
    free(res);
    tp_sweep_plan_clear(&plan);
    tp_config_clear(&desc);
}

static void test_holding_power_statistics_normal(void **state)
{
    (void)state;
    /* G ~ N(2, 0.2) W/K: holding power 50 G ~ N(100, 10) W (closed form, linear map). */
    check_holding_stats("network.links.0.conductance=normal:10%", 100.0, 10.0, 3.0);
}

static void test_holding_power_statistics_uniform(void **state)
{
    (void)state;
    /* G ~ U(1.6, 2.4) W/K: holding power 50 G ~ U(80, 120) W, mean 100 W, sd 40/sqrt(12) W
     * (closed form of the uniform distribution). */
    check_holding_stats("network.links.0.conductance=uniform:-20%:20%", 100.0, 40.0 / sqrt(12.0),
                        9.0 / 5.0);
}

static void test_driver_and_constant_metrics(void **state)
{
    /* Capacity and conductance spread together: the holding power G (Tset - Ta) depends on G
     * only (closed form of the steady state), so G drives it; the time to the setpoint
     * -C/G ln(1 - 50 G/P) rises with C. A spread of the capacity alone leaves the holding power
     * constant up to solver noise: no driver is named. */
    tp_description desc;
    tp_sweep_plan plan;
    tp_sweep_totals tot;
    tp_sweep_result *res;
    tp_sweep_summary sum;
    tp_diag d;
    (void)state;
    tp_diag_init(&d, stderr);
    load(linear_node, &desc);
    tp_sweep_plan_init(&plan, TP_SWEEP_SPREAD);
    plan.n_samples = 64;
    assert_int_equal(
        tp_sweep_add_spread(&plan, &desc, "network.nodes.plate.capacity=uniform:-20%:20%", &d),
        TP_OK);
    assert_int_equal(tp_sweep_add_spread(&plan, &desc, "network.links.0.conductance=normal:5%", &d),
                     TP_OK);
    res = run_plan(&plan, &desc, 2, &tot);
    assert_int_equal(tp_sweep_summarise(&plan, res, TP_MET_HOLD_POWER, &sum), TP_OK);
    assert_int_equal(sum.driver, 1);
    assert_true(fabs(sum.rho[1] - 1.0) < 1e-12);
    free(res);
    tp_sweep_plan_clear(&plan);
    tp_sweep_plan_init(&plan, TP_SWEEP_SPREAD);
    plan.n_samples = 16;
    assert_int_equal(
        tp_sweep_add_spread(&plan, &desc, "network.nodes.plate.capacity=uniform:-20%:20%", &d),
        TP_OK);
    res = run_plan(&plan, &desc, 2, &tot);
    assert_int_equal(tp_sweep_summarise(&plan, res, TP_MET_HOLD_POWER, &sum), TP_OK);
    assert_true(fabs(sum.mean - 100.0) < 1e-6);
    assert_int_equal(sum.driver, -1);
    assert_true(isnan(sum.rho[0]));
    free(res);
    tp_sweep_plan_clear(&plan);
    tp_config_clear(&desc);
}

/* Each metric's worst value follows its stated direction (src/study/metricdef.h): the highest
 * reachable temperature is worst when hottest (a heater stuck on), the margin when smallest,
 * the steady offset when farthest from zero either way, a time when longest. Values chosen by
 * hand; the expected worst of each column by inspection. A sample without the metric (NaN) is
 * absent, not worst. */
static void test_worst_follows_each_metric_direction(void **state)
{
    static const struct {
        int metric;
        double v[4];
        double worst;
        long index;
    } cols[] = {
        {TP_MET_HIGHEST, {420.0, 450.0, 430.0, 410.0}, 450.0, 1},
        {TP_MET_MARGIN, {2.5, 3.0, 1.4, 2.0}, 1.4, 2},
        {TP_MET_STEADY_OFFSET, {1.0, 1.5, 0.0, -2.0}, -2.0, 3},
        {TP_MET_TIME_SETPOINT, {100.0, (double)NAN, 300.0, 200.0}, 300.0, 2},
    };
    tp_description desc;
    tp_sweep_plan plan;
    tp_sweep_result res[4];
    tp_sweep_summary sum;
    tp_diag d;
    size_t c;
    int i, m;
    (void)state;
    tp_diag_init(&d, stderr);
    load(linear_node, &desc);
    tp_sweep_plan_init(&plan, TP_SWEEP_SPREAD);
    plan.n_samples = 4;
    assert_int_equal(tp_sweep_add_spread(&plan, &desc, "network.links.0.conductance=normal:5%", &d),
                     TP_OK);
    memset(res, 0, sizeof res);
    for (i = 0; i < 4; i++) {
        res[i].ok = 1;
        for (m = 0; m < TP_MET_SWEPT; m++)
            res[i].metric[m] = (double)NAN;
        for (c = 0; c < sizeof cols / sizeof cols[0]; c++)
            res[i].metric[cols[c].metric] = cols[c].v[i];
    }
    for (c = 0; c < sizeof cols / sizeof cols[0]; c++) {
        assert_int_equal(tp_sweep_summarise(&plan, res, cols[c].metric, &sum), TP_OK);
        assert_true(sum.worst == cols[c].worst);
        assert_int_equal(sum.worst_index, cols[c].index);
    }
    assert_int_equal(tp_sweep_summarise(&plan, res, TP_MET_TIME_SETPOINT, &sum), TP_OK);
    assert_int_equal(sum.absent, 1);
    assert_int_equal(sum.n, 3);
    tp_sweep_plan_clear(&plan);
    tp_config_clear(&desc);
}

/* The metric table is the one place a metric's direction is stated, and docs/sweep.md says the
 * same: every metric has a reason for its direction, and its row in the documentation's metric
 * table names the direction word ("highest", "lowest", "farthest from 0"). */
static void test_metric_directions_documented(void **state)
{
    char path[TP_TEST_PATH], row[128];
    char *doc;
    int m;
    (void)state;
    snprintf(path, sizeof path, "%s/docs/sweep.md", TP_SOURCE_DIR);
    doc = tp_read_file(path);
    assert_non_null(doc);
    for (m = 0; m < TP_MET_SWEPT; m++) {
        const tp_metricdef *md = tp_metricdef_get(m);
        const char *at, *end;
        assert_non_null(md->why);
        assert_true(md->why[0] != '\0');
        assert_int_equal(tp_metricdef_find(md->key), m);
        snprintf(row, sizeof row, "\n| `%s`", md->key);
        at = strstr(doc, row);
        if (!at)
            print_error("docs/sweep.md has no row for %s\n", md->key);
        assert_non_null(at);
        end = strchr(at + 1, '\n');
        assert_non_null(end);
        snprintf(row, sizeof row, "| %s |", tp_metricdef_worse_name(md->worse));
        if (!strstr(at, row) || strstr(at, row) > end)
            print_error("docs/sweep.md: the row of %s does not say \"%s\"\n", md->key,
                        tp_metricdef_worse_name(md->worse));
        assert_true(strstr(at, row) && strstr(at, row) < end);
    }
    /* The segment metrics: one row per figure, `segment<N>.<key>`, with its direction. */
    for (m = TP_MET_SWEPT; m < TP_MET_SWEPT + TP_SEGMET_COUNT; m++) {
        const tp_metricdef *md = tp_metricdef_swept(m);
        const char *at, *end;
        assert_int_equal(tp_metricdef_find(md->key), m);
        assert_int_equal(strncmp(md->key, "segment1.", 9), 0);
        snprintf(row, sizeof row, "\n| `segment<N>.%s`", md->key + 9);
        at = strstr(doc, row);
        if (!at)
            print_error("docs/sweep.md has no row for segment<N>.%s\n", md->key + 9);
        assert_non_null(at);
        end = strchr(at + 1, '\n');
        snprintf(row, sizeof row, "| %s |", tp_metricdef_worse_name(md->worse));
        assert_true(end && strstr(at, row) && strstr(at, row) < end);
    }
    free(doc);
}

/* The achieved rate of a ramp, swept: one node of C = 1000 J/K through G = 2 W/K to a 20 degC
 * room with 400 W, read directly, PI control, a ramp from 20 to 100 degC then a hold. Lumped
 * energy balance, by hand: at full power C dT/dt = P - G (T - 20), so the plate can follow at
 * most (P - G (T - 20)) / C: 0.4 K/s at 20 degC, 0.24 K/s at 100 degC. A ramp slower than that
 * is followed at its own rate; a faster one is limited, and the reading then follows the closed
 * form T = 220 - 200 exp(-t / 500 s) (degC, t from the start at 20 degC). */
static void test_segment_rate_swept_matches_the_energy_balance(void **state)
{
    static const char *cfg =
        TP_TEST_FIRST_ORDER
        "control:\n"
        "  source: pad\n"
        "  sensor: plate\n"
        "  mode: pid\n"
        "  kp: 2 1/K\n"
        "  ki: 0.02 1/(K.s)\n"
        "  period: 1 s\n"
        "  schedule:\n"
        "    - {to: 100 degC, ramp: 0.1 K/s}\n"
        "    - {hold: 5 min}\n"
        "run: {duration: 40 min, step: 1 s}\n";
    const double P = 400.0, G = 2.0, C = 1000.0;
    char path[TP_TEST_PATH], json[TP_TEST_PATH], stats[TP_TEST_PATH];
    const char *grid[] = {"sweep", path, "-q", "--vary",
                          "control.schedule.0.ramp=0.05K/s,0.1K/s,1K/s,2K/s", "--json", json,
                          NULL};
    const char *spread[] = {"sweep", path, "-q", "--spread",
                            "control.schedule.0.ramp=uniform:0.05K/s:0.15K/s", "--samples", "8",
                            "--stats", stats, NULL};
    cJSON *root, *pt;
    char *text;
    int n = 0;
    (void)state;
    tp_scratch_write(tp_group_scratch(), "ramp.yaml", cfg, path);
    tp_scratch_path(tp_group_scratch(), "ramp.json", json, sizeof json);
    tp_scratch_path(tp_group_scratch(), "ramp-stats.csv", stats, sizeof stats);
    assert_int_equal(tp_run_status(tp_group_scratch(), grid), 0);
    root = tp_read_json(json);
    cJSON_ArrayForEach(pt, cJSON_GetObjectItemCaseSensitive(root, "points"))
    {
        const cJSON *m = cJSON_GetObjectItemCaseSensitive(pt, "metrics");
        double rate = cJSON_GetObjectItemCaseSensitive(
                          cJSON_GetObjectItemCaseSensitive(pt, "parameters"),
                          "control.schedule.0.ramp")->valuedouble;
        double got = cJSON_GetObjectItemCaseSensitive(m, "segment1.rate_reading_K_per_s")
                         ->valuedouble;
        const cJSON *fr = cJSON_GetObjectItemCaseSensitive(m, "segment1.followable_rate_K_per_s");
        const cJSON *fa = cJSON_GetObjectItemCaseSensitive(m, "segment1.followable_at_C");
        /* The hold after it exists too, and a third segment does not. */
        assert_non_null(cJSON_GetObjectItemCaseSensitive(m, "segment2.error_reading_max_K"));
        assert_null(cJSON_GetObjectItemCaseSensitive(m, "segment3.rate_reading_K_per_s"));
        if (rate < 0.2) {
            /* Followed: the requested rate (the PI loop's start-up lag costs under 2 %). */
            tp_check_rel("followed ramp", got, rate, 0.02);
        } else {
            /* Limited: the rate at the limit is the energy balance at that temperature, and
             * the achieved rate the mean slope of the closed form over the segment, t1 =
             * 80 K / rate: (T(t1) - 20) / t1 (a least-squares slope of a nearly straight curve;
             * within 3 %). */
            double t1 = 80.0 / rate, mean = (200.0 - 200.0 * exp(-t1 / 500.0)) / t1;
            assert_true(cJSON_IsNumber(fr) && cJSON_IsNumber(fa));
            tp_check_rel("followable rate", fr->valuedouble,
                         (P - G * (fa->valuedouble - 20.0)) / C, 0.005);
            tp_check_rel("limited ramp", got, mean, 0.03);
            assert_true(got < rate * 0.9);
        }
        print_message("ramp %.2f K/s: achieved %.4f K/s\n", rate, got);
        n++;
    }
    assert_int_equal(n, 4);
    cJSON_Delete(root);
    /* The statistics cover the segment metrics like any other: rows for mean and p5 .. p95,
     * every achieved rate inside the spread's range. */
    assert_int_equal(tp_run_status(tp_group_scratch(), spread), 0);
    text = tp_read_file(stats);
    assert_non_null(text);
    {
        const char *at = strstr(text, "\nsegment1.rate_reading_K_per_s,mean,8,");
        double v;
        assert_non_null(at);
        v = strtod(at + strlen("\nsegment1.rate_reading_K_per_s,mean,8,"), NULL);
        assert_true(v > 0.05 * 0.98 && v < 0.15);
        assert_non_null(strstr(text, "\nsegment1.rate_reading_K_per_s,p95,8,"));
        assert_non_null(strstr(text, "\nsegment2.error_reading_max_K,p50,8,"));
    }
    free(text);
}

static void test_same_results_for_any_jobs(void **state)
{
    tp_description desc;
    tp_sweep_plan plan;
    tp_sweep_totals t1, t2, t3;
    tp_sweep_result *r1, *r2, *r3;
    tp_diag d;
    long n;
    (void)state;
    tp_diag_init(&d, stderr);
    load(single_node, &desc);
    desc.run.tolerance = 1e-6;
    tp_sweep_plan_init(&plan, TP_SWEEP_SPREAD);
    plan.n_samples = 24;
    plan.seed = 7;
    assert_int_equal(
        tp_sweep_add_spread(&plan, &desc, "network.links.0.conductance=normal:10%", &d), TP_OK);
    assert_int_equal(tp_sweep_add_spread(&plan, &desc,
                                         "network.nodes.room.fixed=uniform:10degC:"
                                         "30degC",
                                         &d),
                     TP_OK);
    n = tp_sweep_count(&plan);
    r1 = run_plan(&plan, &desc, 1, &t1);
    r2 = run_plan(&plan, &desc, 2, &t2);
    r3 = run_plan(&plan, &desc, 3, &t3);
    /* Bit for bit: each sample depends only on its index. */
    assert_memory_equal(r1, r2, (size_t)n * sizeof *r1);
    assert_memory_equal(r1, r3, (size_t)n * sizeof *r1);
    assert_int_equal(t1.n_cautions, t2.n_cautions);
    assert_memory_equal(t1.cautions, t2.cautions, sizeof t1.cautions);
    assert_memory_equal(t1.cautions, t3.cautions, sizeof t1.cautions);
    free(r1);
    free(r2);
    free(r3);
    tp_sweep_plan_clear(&plan);
    tp_config_clear(&desc);
}

static void test_failed_samples_are_reported(void **state)
{
    /* Emissivity 0.8 with sd 30 %: draws above 1 are refused by the schema. Each is marked
     * failed with a reason naming the value, counted, and left out of the statistics. */
    tp_description desc;
    tp_sweep_plan plan;
    tp_sweep_totals tot;
    tp_sweep_result *res;
    tp_sweep_summary sum;
    tp_diag d;
    long i, n, refused = 0;
    (void)state;
    tp_diag_init(&d, stderr);
    load(single_node, &desc);
    desc.run.duration = 60.0;
    desc.run.tolerance = 1e-6;
    tp_sweep_plan_init(&plan, TP_SWEEP_SPREAD);
    plan.n_samples = 60;
    assert_int_equal(
        tp_sweep_add_spread(&plan, &desc, "network.links.1.radiation.emissivity=normal:30%", &d),
        TP_OK);
    n = tp_sweep_count(&plan);
    res = run_plan(&plan, &desc, 2, &tot);
    for (i = 0; i < n; i++) {
        double e = tp_sweep_value(&plan, i, 0);
        int bad = !(e > 0.0 && e <= 1.0);
        refused += bad;
        assert_int_equal(res[i].ok, !bad);
        if (bad)
            assert_non_null(strstr(res[i].reason, "outside (0, 1]"));
    }
    /* P(Z > 0.2/0.24) = 0.20 (standard normal table): some of 60 fail, most do not. */
    assert_true(refused > 0 && refused < n / 2);
    assert_int_equal(tot.failed, refused);
    assert_int_equal(tp_sweep_summarise(&plan, res, TP_MET_HOLD_POWER, &sum), TP_OK);
    assert_int_equal(sum.n + sum.absent, n - refused);
    free(res);
    tp_sweep_plan_clear(&plan);
    /* An integration that hits its step limit fails the same way, with the solver's reason. */
    tp_sweep_plan_init(&plan, TP_SWEEP_GRID);
    assert_int_equal(tp_sweep_add_vary(&plan, &desc, "run.max_steps=3,1000000", &d), TP_OK);
    res = run_plan(&plan, &desc, 2, &tot);
    assert_int_equal(res[0].ok, 0);
    assert_non_null(strstr(res[0].reason, "integration steps"));
    assert_int_equal(res[1].ok, 1);
    assert_int_equal(tot.failed, 1);
    free(res);
    tp_sweep_plan_clear(&plan);
    tp_config_clear(&desc);
}

typedef struct seen {
    long calls, last_done, total;
    int monotone;
} seen;

static void count_progress(void *user, long done, long total, double elapsed)
{
    seen *s = user;
    (void)elapsed;
    s->monotone &= done >= s->last_done;
    s->last_done = done;
    s->total = total;
    s->calls++;
}

static void test_progress_ends_complete(void **state)
{
    tp_description desc;
    tp_sweep_plan plan;
    tp_sweep_totals tot;
    tp_sweep_result res[3];
    tp_diag d;
    seen s = {0, 0, 0, 1};
    (void)state;
    tp_diag_init(&d, stderr);
    load(linear_node, &desc);
    tp_sweep_plan_init(&plan, TP_SWEEP_GRID);
    assert_int_equal(
        tp_sweep_add_vary(&plan, &desc, "network.sources.pad.power=300W,350W,400W", &d), TP_OK);
    assert_int_equal(tp_sweep_run(&plan, &desc, 2, res, count_progress, &s, &tot), TP_OK);
    assert_true(s.calls >= 1 && s.monotone);
    assert_int_equal(s.last_done, 3);
    assert_int_equal(s.total, 3);
    assert_int_equal(tot.jobs, 2);
    tp_sweep_plan_clear(&plan);
    tp_config_clear(&desc);
}

/* ---- the command line ------------------------------------------------------------------------ */

/* The group's scratch directory (tp_test.h). */
static const char *scratch_dir(void)
{
    return tp_group_scratch()->dir;
}

/* Run tepid with a command line of space-separated arguments (none contains a space) through
 * tp_run_status; the exit status. */
static int run_tepid(const char *args)
{
    char buf[4096], *tok, *save = NULL;
    const char *argv[64];
    int n = 0;
    assert_true(strlen(args) < sizeof buf);
    snprintf(buf, sizeof buf, "%s", args);
    for (tok = strtok_r(buf, " ", &save); tok; tok = strtok_r(NULL, " ", &save)) {
        assert_true(n < 63);
        argv[n++] = tok;
    }
    argv[n] = NULL;
    return tp_run_status(tp_group_scratch(), argv);
}

/* Whole-file comparison; 1 when equal and non-empty. */
static int same_bytes(const char *a, const char *b)
{
    char *ta = tp_read_file(a), *tb = tp_read_file(b);
    int equal = ta && tb && ta[0] != '\0' && strcmp(ta, tb) == 0;
    free(ta);
    free(tb);
    return equal;
}

static void test_cli_files_identical_for_1_and_2_jobs(void **state)
{
    char args[2048], c1[512], c2[512], j1[512], j2[512];
    const char *spread = "--spread network.links.0.conductance=normal:10% "
                         "--spread network.nodes.room.fixed=uniform:15degC:25degC "
                         "--spread network.sources.heater.resistance=normal:3% "
                         "--samples 16 --seed 11";
    (void)state;
    snprintf(c1, sizeof c1, "%s/j1.csv", scratch_dir());
    snprintf(c2, sizeof c2, "%s/j2.csv", scratch_dir());
    snprintf(j1, sizeof j1, "%s/j1.json", scratch_dir());
    snprintf(j2, sizeof j2, "%s/j2.json", scratch_dir());
    snprintf(args, sizeof args,
             "sweep %s/configs/raw-five-node.yaml -q %s --jobs 1 --csv %s "
             "--json %s",
             TP_SOURCE_DIR, spread, c1, j1);
    assert_int_equal(run_tepid(args), 0);
    snprintf(args, sizeof args,
             "sweep %s/configs/raw-five-node.yaml -q %s --jobs 2 --csv %s "
             "--json %s",
             TP_SOURCE_DIR, spread, c2, j2);
    assert_int_equal(run_tepid(args), 0);
    assert_true(same_bytes(c1, c2));
    assert_true(same_bytes(j1, j2));
}

/* A sweep point and the warm-up of the same case report the same cautions: on a gridded plate
 * both quote the hottest cell of the working surface (the sweep once quoted the hottest mean,
 * 66 degC against warmup's 73 degC on this demo; rule: two verbs that report the same figure
 * agree). Coarse cells and a short run keep it quick. */
static void test_cli_cautions_agree_with_warmup_on_a_grid(void **state)
{
    char args[2048], w[512], s[512];
    const char *fast = "--set bed.grid=[12,12] --set run.duration=20min";
    cJSON *jw, *js, *cw, *cs;
    (void)state;
    snprintf(w, sizeof w, "%s/grid-warmup.json", scratch_dir());
    snprintf(s, sizeof s, "%s/grid-sweep.json", scratch_dir());
    snprintf(args, sizeof args, "warmup %s/configs/small-pad-grid.yaml -q %s --json %s",
             TP_SOURCE_DIR, fast, w);
    assert_int_equal(run_tepid(args), 0);
    snprintf(args, sizeof args,
             "sweep %s/configs/small-pad-grid.yaml -q %s --vary room.temperature=20degC "
             "--json %s",
             TP_SOURCE_DIR, fast, s);
    assert_int_equal(run_tepid(args), 0);
    jw = tp_read_json(w);
    js = tp_read_json(s);
    cw = cJSON_GetObjectItemCaseSensitive(jw, "cautions");
    cs = cJSON_GetObjectItemCaseSensitive(js, "cautions");
    assert_true(cJSON_IsArray(cw) && cJSON_GetArraySize(cw) >= 2);
    tp_check_contains("warmup's first caution", cJSON_GetArrayItem(cw, 0)->valuestring,
                      "Hot surface");
    if (!cJSON_Compare(cw, cs, 1))
        print_error("warmup: %s\nsweep:  %s\n", cJSON_GetArrayItem(cw, 0)->valuestring,
                    cJSON_GetArrayItem(cs, 0)->valuestring);
    assert_true(cJSON_Compare(cw, cs, 1));
    cJSON_Delete(jw);
    cJSON_Delete(js);
}

static void test_cli_usage_errors(void **state)
{
    char args[1024];
    const char *cfg = TP_SOURCE_DIR "/configs/raw-five-node.yaml";
    struct stat sb;
    char out[512];
    (void)state;
    snprintf(out, sizeof out, "%s/never.csv", scratch_dir());
    /* Exit 2, before any work, and no file written. */
    snprintf(args, sizeof args, "sweep %s --csv %s", cfg, out);
    assert_int_equal(run_tepid(args), 2);
    snprintf(args, sizeof args,
             "sweep %s --vary network.sources.heater.supply=20V,24V "
             "--spread network.links.0.conductance=normal:5%% --csv %s",
             cfg, out);
    assert_int_equal(run_tepid(args), 2);
    snprintf(args, sizeof args,
             "sweep %s --vary network.sources.heater.supply=20V,24V "
             "--samples 10 --csv %s",
             cfg, out);
    assert_int_equal(run_tepid(args), 2);
    snprintf(args, sizeof args,
             "sweep %s --vary network.sources.heater.supply=20V,24V "
             "--vary network.links.0.conductance=5W/K,6W/K,8W/K --plot %s/m.png --csv %s",
             cfg, scratch_dir(), out);
    assert_int_equal(run_tepid(args), 2); /* a heat map needs evenly spaced values */
    snprintf(args, sizeof args,
             "sweep %s --spread network.links.0.conductance=normal:5%% "
             "--jobs 0 --csv %s",
             cfg, out);
    assert_int_equal(run_tepid(args), 2);
    snprintf(args, sizeof args,
             "sweep %s --spread network.links.0.conductance=normal:5%% "
             "--metric nothing --csv %s",
             cfg, out);
    assert_int_equal(run_tepid(args), 2);
    assert_int_not_equal(stat(out, &sb), 0);
}

/* Whether a file starts with the PNG signature (ISO/IEC 15948 Sec. 5.2). */
static int is_png(const char *path)
{
    static const unsigned char sig[8] = {0x89, 'P', 'N', 'G', 0x0d, 0x0a, 0x1a, 0x0a};
    unsigned char buf[8];
    FILE *fp = fopen(path, "rb");
    size_t got;
    if (!fp)
        return 0;
    got = fread(buf, 1, 8, fp);
    fclose(fp);
    return got == 8 && memcmp(buf, sig, 8) == 0;
}

static void test_cli_figures(void **state)
{
    /* The three figures on the raw form, which has no working surface: the default metric
     * falls back to the time to the setpoint, so the heat map and the distribution draw. */
    char args[2048], path[512];
    const char *cfg = TP_SOURCE_DIR "/configs/raw-five-node.yaml";
    (void)state;
    snprintf(path, sizeof path, "%s/line.png", scratch_dir());
    snprintf(args, sizeof args,
             "sweep %s -q --vary network.sources.heater.supply=20V:28V:4V --plot %s", cfg, path);
    assert_int_equal(run_tepid(args), 0);
    assert_true(is_png(path));
    snprintf(path, sizeof path, "%s/map.png", scratch_dir());
    snprintf(args, sizeof args,
             "sweep %s -q --vary network.sources.heater.supply=28V:20V:-4V "
             "--vary network.nodes.room.fixed=15degC:25degC:5K --plot %s",
             cfg, path);
    assert_int_equal(run_tepid(args), 0);
    assert_true(is_png(path));
    snprintf(path, sizeof path, "%s/dist.png", scratch_dir());
    snprintf(args, sizeof args,
             "sweep %s -q --spread network.links.0.conductance=normal:10%% --samples 12 "
             "--plot %s",
             cfg, path);
    assert_int_equal(run_tepid(args), 0);
    assert_true(is_png(path));
}

/* The text shows swept values in the unit the user wrote (the option's, else the config's),
 * and times as warmup writes them ("7 min 20 s"); the files keep SI. */
static void test_cli_text_in_user_units(void **state)
{
    char csv[512];
    char *text;
    tp_run_result r;
    const char *grid[] = {"sweep", TP_SOURCE_DIR "/configs/workshop-bed-24v.yaml",
                          "--vary", "bed.layers.plate.thickness=3mm:4mm:1mm", "--csv", csv, NULL};
    const char *spread[] = {"sweep", TP_SOURCE_DIR "/configs/workshop-bed-24v.yaml", "--spread",
                            "bed.layers.plate.thickness=normal:5%", "--samples", "3", NULL};
    (void)state;
    snprintf(csv, sizeof csv, "%s/units.csv", scratch_dir());
    tp_run_tepid(tp_group_scratch(), grid, &r);
    assert_int_equal(r.status, 0);
    tp_check_contains("grid summary", r.out, "3 .. 4 mm (config: 6 mm)");
    tp_check_contains("grid header", r.out, "(mm)");
    tp_check_contains("grid row", r.out, "\n                           3 ");
    assert_null(strstr(r.out, "0.003"));
    assert_null(strstr(r.out, "(min)"));
    /* A duration as "N min SS s" in the to-setpoint column. */
    tp_check_contains("grid time", r.out, " min ");
    text = tp_read_file(csv);
    assert_non_null(text);
    tp_check_contains("csv in SI", text, "\n1,0.003,1,");
    free(text);
    tp_run_clear(&r);
    tp_run_tepid(tp_group_scratch(), spread, &r);
    assert_int_equal(r.status, 0);
    tp_check_contains("spread summary", r.out, "normal, sd 5 % of 6 mm");
    tp_check_contains("spread time", r.out, " min ");
    tp_check_contains("spread direction", r.out, "highest");
    tp_run_clear(&r);
}

/* A point that never reaches the setpoint (8 V into 2.4 ohm is 27 W, against about 98 W to
 * hold 90 degC on the 24 V demo: docs of the demo and tepid steady) has no overshoot: "-" in
 * the table and an empty cell in the CSV, not 0. */
static void test_cli_unreached_point_shows_dash(void **state)
{
    char csv[512];
    char *text, *row;
    tp_run_result r;
    const char *args[] = {"sweep", TP_SOURCE_DIR "/configs/workshop-bed-24v.yaml", "--vary",
                          "heater.supply=8V,24V", "--csv", csv, NULL};
    (void)state;
    snprintf(csv, sizeof csv, "%s/unreached.csv", scratch_dir());
    tp_run_tepid(tp_group_scratch(), args, &r);
    assert_int_equal(r.status, 0);
    row = strstr(r.out, "\n               8 ");
    assert_non_null(row);
    assert_null(strstr(row, "0.00\n"));
    assert_true(strncmp(row, "\n               8              -              -              -",
                        60) == 0);
    assert_null(strstr(r.out, "0.00 "));
    text = tp_read_file(csv);
    assert_non_null(text);
    /* point 1, 8 V, ok: time, ready and both overshoots empty. */
    tp_check_contains("csv row", text, "\n1,8,1,,,,,");
    free(text);
    tp_run_clear(&r);
}

/* A heater given as sold (heater.rated_power, rated_voltage): --vary and --spread accept its
 * rated power. On 20 V a heater rated P at 24 V draws P (20 / 24)^2 and P 20 / 24^2 A (its
 * resistance is 24^2 / P; Ohm's law, hand calculation): the peak power and current of every
 * point follow its rated power. */
static void test_cli_rated_power_varies_and_spreads(void **state)
{
    static const char *cfg =
        "room: {temperature: 20 degC}\n"
        "bed:\n"
        "  size: [150 mm, 150 mm]\n"
        "  layers:\n"
        "    - {id: plate, material: aluminium-6061, thickness: 4 mm}\n"
        "heater: {layer: plate, rated_power: 120 W, rated_voltage: 24 V, supply: 20 V}\n"
        "sensor: {layer: plate, coupling: 0.05 W/K, capacity: 0.2 J/K}\n"
        "control: {mode: on-off, setpoint: 60 degC, band: 2 K}\n"
        "run: {duration: 10 min, step: 1 s}\n";
    char path[TP_TEST_PATH], json[TP_TEST_PATH];
    const char *grid[] = {"sweep", path, "-q", "--vary", "heater.rated_power=60W,150W",
                          "--json", json, NULL};
    const char *spread[] = {"sweep", path, "-q", "--spread", "heater.rated_power=normal:10%",
                            "--samples", "6", "--json", json, NULL};
    const char *const *runs[] = {grid, spread};
    size_t k;
    (void)state;
    tp_scratch_write(tp_group_scratch(), "rated.yaml", cfg, path);
    tp_scratch_path(tp_group_scratch(), "rated.json", json, sizeof json);
    for (k = 0; k < 2; k++) {
        cJSON *root, *pt;
        int n = 0;
        assert_int_equal(tp_run_status(tp_group_scratch(), runs[k]), 0);
        root = tp_read_json(json);
        cJSON_ArrayForEach(pt, cJSON_GetObjectItemCaseSensitive(root, "points"))
        {
            const cJSON *m = cJSON_GetObjectItemCaseSensitive(pt, "metrics");
            double p = cJSON_GetObjectItemCaseSensitive(
                           cJSON_GetObjectItemCaseSensitive(pt, "parameters"),
                           "heater.rated_power")->valuedouble;
            tp_check_rel("peak power",
                         cJSON_GetObjectItemCaseSensitive(m, "power_peak_W")->valuedouble,
                         p * (20.0 / 24.0) * (20.0 / 24.0), 1e-9);
            tp_check_rel("peak current",
                         cJSON_GetObjectItemCaseSensitive(m, "current_peak_A")->valuedouble,
                         p * 20.0 / 576.0, 1e-9);
            n++;
        }
        assert_int_equal(n, k == 0 ? 2 : 6);
        cJSON_Delete(root);
    }
}

static void test_cli_readme_commands(void **state)
{
    /* The two sweep commands of README.md, on the 24 V demo, succeed. */
    char args[1024];
    (void)state;
    snprintf(args, sizeof args,
             "sweep %s/configs/workshop-bed-24v.yaml --vary heater.supply=20V:28V:2V",
             TP_SOURCE_DIR);
    assert_int_equal(run_tepid(args), 0);
    snprintf(args, sizeof args,
             "sweep %s/configs/workshop-bed-24v.yaml --spread heater.resistance=normal:5%% "
             "--spread room.temperature=uniform:16degC:28degC --samples 200",
             TP_SOURCE_DIR);
    assert_int_equal(run_tepid(args), 0);
}

/* ---- confidence intervals, designs, --until, shards (issue 21) ---------------------------- */

static void test_ci_mean_and_sd_table_values(void **state)
{
    double lo, hi;
    (void)state;
    /* n = 10, mean 10, sd 2. t(0.975, 9) = 2.262157 (Student's t table, e.g. Hahn & Meeker,
     * "Statistical Intervals", Wiley 1991, Table A.12, from memory; also in any t table):
     * half-width 2.262157 * 2 / sqrt(10) = 1.430714 (hand calculation). */
    tp_sweep_ci_mean(10.0, 2.0, 10, &lo, &hi);
    tp_check_abs("mean lo", lo, 10.0 - 1.430714, 2e-6);
    tp_check_abs("mean hi", hi, 10.0 + 1.430714, 2e-6);
    /* chi2(0.025, 9) = 2.700389, chi2(0.975, 9) = 19.022768 (chi-square table, e.g. Hahn &
     * Meeker Table A.11, from memory): sd bounds 2 sqrt(9 / 19.022768) = 1.375671 and
     * 2 sqrt(9 / 2.700389) = 3.651220 (hand calculation). */
    tp_sweep_ci_sd(2.0, 10, &lo, &hi);
    tp_check_abs("sd lo", lo, 1.375671, 2e-6);
    tp_check_abs("sd hi", hi, 3.651220, 2e-6);
    /* One value: no interval. */
    tp_sweep_ci_mean(10.0, 0.0, 1, &lo, &hi);
    assert_true(isnan(lo) && isnan(hi));
}

static void test_ci_ranks_binomial_hand_values(void **state)
{
    long l = 0, u = 0;
    (void)state;
    /* Median of 100 values: ranks 40 and 61, the interval tabulated for n = 100 (Conover,
     * "Practical Nonparametric Statistics", 3rd ed., Wiley 1999, Sec. 3.2 and Table A3; from
     * memory), by hand: P(Bin(100, 1/2) <= 39) = 0.0176 <= 0.025 < P(<= 40) = 0.0284;
     * P(<= 59) = 0.9716 < 0.975 <= P(<= 60) = 0.9824. */
    assert_int_equal(tp_sweep_ci_ranks(100, 0.5, &l, &u), 0);
    assert_int_equal(l, 40);
    assert_int_equal(u, 61);
    /* The 95th percentile of 110 values: ranks 100 and 109 (binomial sums by hand, coverage
     * P(100 <= Bin(110, 0.95) <= 108) = 0.9539). */
    assert_int_equal(tp_sweep_ci_ranks(110, 0.95, &l, &u), 0);
    assert_int_equal(l, 100);
    assert_int_equal(u, 109);
    /* The 5th percentile needs 0.95^n <= 0.025: n >= 72 (0.95^72 = 0.0249, 0.95^71 = 0.0262,
     * hand calculation); then X(1) .. X(9), as P(Bin(72, 0.05) <= 7) = 0.9728 < 0.975 <=
     * P(<= 8) = 0.9904 (binomial sums by hand). The median needs 0.5^n <= 0.025: n >= 6. */
    assert_int_equal(tp_sweep_ci_ranks(71, 0.05, &l, &u), -1);
    assert_int_equal(tp_sweep_ci_ranks(72, 0.05, &l, &u), 0);
    assert_int_equal(l, 1);
    assert_int_equal(u, 9);
    assert_int_equal(tp_sweep_ci_ranks(5, 0.5, &l, &u), -1);
    assert_int_equal(tp_sweep_ci_ranks(6, 0.5, &l, &u), 0);
    assert_int_equal(l, 1);
    assert_int_equal(u, 6);
}

/* Results of a linear metric, holding power = 50 W/K times the drawn conductance (no warm-up
 * is run: the statistics see exactly a linear map of the plan's draws). */
static tp_sweep_result *linear_results(const tp_sweep_plan *plan)
{
    long n = tp_sweep_count(plan), i;
    int k;
    tp_sweep_result *res = calloc((size_t)n, sizeof *res);
    assert_non_null(res);
    for (i = 0; i < n; i++) {
        double f = 0.0;
        for (k = 0; k < TP_MET_SWEPT; k++)
            res[i].metric[k] = (double)NAN;
        for (k = 0; k < plan->n_params; k++)
            f += k == 0 ? 50.0 * tp_sweep_value(plan, i, 0)
                        : 3.0 * (tp_sweep_value(plan, i, k) - KELVIN);
        res[i].ok = 1;
        res[i].metric[TP_MET_HOLD_POWER] = f;
    }
    return res;
}

/* A plan over the linear node's conductance (and optionally the room) with a design. */
static void design_plan(tp_sweep_plan *plan, const tp_description *desc, const char *spread,
                        const char *spread2, long n, long reps, uint64_t seed, int design)
{
    tp_diag d;
    tp_diag_init(&d, stderr);
    tp_sweep_plan_init(plan, TP_SWEEP_SPREAD);
    plan->n_samples = n;
    plan->seed = seed;
    assert_int_equal(tp_sweep_add_spread(plan, desc, spread, &d), TP_OK);
    if (spread2)
        assert_int_equal(tp_sweep_add_spread(plan, desc, spread2, &d), TP_OK);
    assert_int_equal(tp_sweep_design_build(plan, (tp_sweep_design)design, reps, &d), TP_OK);
}

static void test_samples_needed_for_a_halfwidth(void **state)
{
    /* sd 10 over 100 random samples, half-width 1 wanted: the normal approximation asks
     * (1.96 * 10 / 1)^2 = 384.1 samples; with Student's t at about 386 degrees of freedom
     * (t(0.975, 386) = 1.966, t table, from memory) (1.966 * 10)^2 = 386.5, so 387 (hand
     * calculation). A 95th percentile never needs fewer than the 72 its interval needs. */
    tp_sweep_plan plan;
    tp_sweep_summary sum;
    double n;
    (void)state;
    tp_sweep_plan_init(&plan, TP_SWEEP_SPREAD);
    memset(&sum, 0, sizeof sum);
    sum.n = 100;
    sum.mean = 50.0;
    sum.sd = 10.0;
    n = tp_sweep_needed(&plan, &sum, TP_STAT_MEAN, 1.0);
    assert_true(n >= 386.0 && n <= 388.0);
    sum.lo[TP_STAT_P95] = 60.0;
    sum.hi[TP_STAT_P95] = 61.0; /* half-width 0.5: 100 (0.5 / 5)^2 = 1 sample by scaling */
    n = tp_sweep_needed(&plan, &sum, TP_STAT_P95, 5.0);
    tp_check_abs("p95 needs its 72", n, 72.0, 0.0);
    sum.hi[TP_STAT_P95] = 64.0; /* half-width 2: 100 (2 / 1)^2 = 400 */
    tp_check_abs("p95 by scaling", tp_sweep_needed(&plan, &sum, TP_STAT_P95, 1.0), 400.0, 0.0);
    tp_sweep_plan_clear(&plan);
}

static void test_ci_coverage_on_a_linear_metric(void **state)
{
    /* G ~ N(2, 0.2) W/K, f = 50 G ~ N(100, 10) W (closed form): the true mean is 100 W, the
     * true sd 10 W, the true 95th percentile 100 + 10 z(0.95) = 116.448536 W (z(0.95) =
     * 1.6448536, standard normal table). Over 1000 seeds of 110 samples each, the t interval
     * must cover the mean in 95 % +- 3 standard errors (sqrt(0.95 0.05 / 1000) = 0.0069) of
     * the studies; the order-statistic interval of the 95th percentile has the exact coverage
     * 0.9539 at n = 110 (test_ci_ranks_binomial_hand_values) and must fall in both bands. */
    const int seeds = 1000;
    const double se = sqrt(0.95 * 0.05 / seeds);
    tp_description desc;
    int s, cover_mean = 0, cover_p95 = 0, cover_sd = 0;
    double rate;
    (void)state;
    load(linear_node, &desc);
    for (s = 0; s < seeds; s++) {
        tp_sweep_plan plan;
        tp_sweep_summary sum;
        tp_sweep_result *res;
        design_plan(&plan, &desc, "network.links.0.conductance=normal:10%", NULL, 110, 1,
                    (uint64_t)s + 1, TP_DESIGN_RANDOM);
        res = linear_results(&plan);
        assert_int_equal(tp_sweep_summarise(&plan, res, TP_MET_HOLD_POWER, &sum), TP_OK);
        cover_mean += sum.lo[TP_STAT_MEAN] <= 100.0 && 100.0 <= sum.hi[TP_STAT_MEAN];
        cover_sd += sum.lo[TP_STAT_SD] <= 10.0 && 10.0 <= sum.hi[TP_STAT_SD];
        cover_p95 += sum.lo[TP_STAT_P95] <= 116.448536 && 116.448536 <= sum.hi[TP_STAT_P95];
        free(res);
        tp_sweep_plan_clear(&plan);
    }
    rate = (double)cover_mean / seeds;
    assert_true(fabs(rate - 0.95) <= 3.0 * se);
    rate = (double)cover_sd / seeds;
    assert_true(fabs(rate - 0.95) <= 3.0 * se);
    rate = (double)cover_p95 / seeds;
    assert_true(fabs(rate - 0.95) <= 3.0 * se);
    assert_true(fabs(rate - 0.9539) <= 3.0 * sqrt(0.9539 * 0.0461 / seeds));
    tp_config_clear(&desc);
}

/* The standard normal distribution function. */
static double phi(double z)
{
    return 0.5 * erfc(-z / sqrt(2.0));
}

static void test_lhs_one_sample_per_stratum(void **state)
{
    /* Latin hypercube (McKay, Beckman & Conover, Technometrics 21 (1979) 239): in each
     * replicate of m samples, each parameter's distribution is cut into m strata of equal
     * probability and every stratum holds exactly one sample. */
    const long m = 25, reps = 3;
    tp_description desc;
    tp_sweep_plan plan;
    long r, i;
    int k;
    (void)state;
    load(linear_node, &desc);
    design_plan(&plan, &desc, "network.links.0.conductance=normal:10%",
                "network.nodes.room.fixed=uniform:15degC:25degC", m * reps, reps, 7,
                TP_DESIGN_LHS);
    for (r = 0; r < reps; r++)
        for (k = 0; k < 2; k++) {
            int hits[25] = {0};
            for (i = r * m; i < (r + 1) * m; i++) {
                double v = tp_sweep_value(&plan, i, k), u;
                long stratum;
                /* The probability below the value: Phi(z) of the normal, the fraction of the
                 * uniform's range. */
                u = k == 0 ? phi((v - 2.0) / 0.2) : (v - (KELVIN + 15.0)) / 10.0;
                stratum = (long)floor(u * (double)m);
                assert_true(stratum >= 0 && stratum < m);
                hits[stratum]++;
            }
            for (i = 0; i < m; i++)
                assert_int_equal(hits[i], 1);
        }
    tp_sweep_plan_clear(&plan);
    tp_config_clear(&desc);
}

/* The variance over seeds of the mean of the linear metric of 100 samples by a design. */
static double mean_variance(const tp_description *desc, int design, int seeds, double *grand)
{
    double sum = 0.0, ss = 0.0, *means = calloc((size_t)seeds, sizeof *means);
    int s;
    assert_non_null(means);
    for (s = 0; s < seeds; s++) {
        tp_sweep_plan plan;
        tp_sweep_summary sum_;
        tp_sweep_result *res;
        design_plan(&plan, desc, "network.links.0.conductance=normal:10%",
                    "network.nodes.room.fixed=uniform:15degC:25degC", 100, 1, (uint64_t)s + 100,
                    design);
        res = linear_results(&plan);
        assert_int_equal(tp_sweep_summarise(&plan, res, TP_MET_HOLD_POWER, &sum_), TP_OK);
        means[s] = sum_.mean;
        sum += sum_.mean;
        free(res);
        tp_sweep_plan_clear(&plan);
    }
    *grand = sum / seeds;
    for (s = 0; s < seeds; s++)
        ss += (means[s] - *grand) * (means[s] - *grand);
    free(means);
    return ss / (seeds - 1);
}

static void test_designs_reduce_variance_without_bias(void **state)
{
    /* f = 50 G + 3 (T - 0 degC), G ~ N(2, 0.2) W/K, T ~ U(15, 25) degC: mean 100 + 60 =
     * 160 W, variance 10^2 + 3^2 100/12 = 175 W^2 (closed form). Random sampling's mean of 100
     * has variance 1.75 W^2; an additive function's LHS mean loses the main effects'
     * variance (McKay, Beckman & Conover 1979; Stein, Technometrics 29 (1987) 143): at least
     * 5 times less is asked by issue 21. Scrambled Sobol points are unbiased (Owen 1995):
     * the mean over 200 seeds within 3 standard errors of 160 W. */
    const int seeds = 200;
    tp_description desc;
    double v_random, v_lhs, v_sobol, g;
    (void)state;
    load(linear_node, &desc);
    v_random = mean_variance(&desc, TP_DESIGN_RANDOM, seeds, &g);
    assert_true(fabs(g - 160.0) <= 3.0 * sqrt(v_random / seeds));
    tp_check_rel("random variance of the mean", v_random, 1.75, 0.3); /* chi2(199) spread */
    v_lhs = mean_variance(&desc, TP_DESIGN_LHS, seeds, &g);
    assert_true(fabs(g - 160.0) <= 3.0 * sqrt(v_lhs / seeds));
    v_sobol = mean_variance(&desc, TP_DESIGN_SOBOL, seeds, &g);
    assert_true(fabs(g - 160.0) <= 3.0 * sqrt(v_sobol / seeds));
    assert_true(v_sobol > 0.0); /* scrambling varies the estimate: not a fixed point set */
    print_message("variance of the mean of 100: random %.3g, lhs %.3g, sobol %.3g W^2\n",
                  v_random, v_lhs, v_sobol);
    assert_true(v_lhs * 5.0 <= v_random);
    assert_true(v_sobol * 5.0 <= v_random);
    tp_config_clear(&desc);
}

static void test_sobol_points_match_published_direction_numbers(void **state)
{
    /* The first 64 points of the Sobol sequence in 5 dimensions, in Gray-code order (Antonov &
     * Saleev 1979), built here from the primitive polynomials and initial direction numbers
     * of Bratley & Fox, ACM TOMS 14 (1988) 88 (Algorithm 659, after Sobol & Levitan 1976),
     * which GSL's gsl_qrng_sobol uses: dimension 1 van der Corput's; x + 1 with m = 1;
     * x^2 + x + 1 with m = 1, 1; x^3 + x + 1 with m = 1, 3, 7; x^3 + x^2 + 1 with m = 1, 1, 5
     * (the table's first columns, as reprinted in many Sobol programs). Dimensions 1 and 2
     * are also those of Joe & Kuo's new-joe-kuo-6.21201 (S. Joe and F. Y. Kuo, SIAM J. Sci.
     * Comput. 30 (2008) 2635: d = 2, s = 1, a = 0, m = 1); from the third on GSL's initial
     * numbers differ from Joe & Kuo's (their d = 3 has m = 1, 3 where Bratley & Fox have 1,
     * 1). Closed-form check of the first points in dimensions 1 and 2: (0, 0), (1/2, 1/2),
     * (3/4, 1/4), (1/4, 3/4), (3/8, 3/8), (7/8, 7/8). */
    static const int deg[5] = {0, 1, 2, 3, 3};       /* primitive polynomial degrees */
    static const unsigned poly_a[5] = {0, 0, 1, 1, 2}; /* interior coefficients a1 .. a(s-1) */
    static const unsigned m_init[5][3] = {{1, 0, 0}, {1, 0, 0}, {1, 1, 0}, {1, 3, 7}, {1, 1, 5}};
    static const double first[6][2] = {{0, 0}, {0.5, 0.5}, {0.75, 0.25},
                                       {0.25, 0.75}, {0.375, 0.375}, {0.875, 0.875}};
    uint32_t got[64 * 5], v[5][31];
    int k, j, i;
    (void)state;
    for (k = 0; k < 5; k++) {
        unsigned m[31];
        for (j = 1; j <= 30; j++) {
            if (deg[k] == 0) {
                m[j] = 1;
            } else if (j <= deg[k]) {
                m[j] = m_init[k][j - 1];
            } else {
                /* m_j = 2 a1 m_{j-1} ^ 4 a2 m_{j-2} ^ ... ^ 2^s m_{j-s} ^ m_{j-s} */
                int s = deg[k], q;
                m[j] = m[j - s] ^ (m[j - s] << s);
                for (q = 1; q < s; q++)
                    if ((poly_a[k] >> (s - 1 - q)) & 1u)
                        m[j] ^= m[j - q] << q;
            }
            v[k][j] = m[j] << (30 - j);
        }
    }
    assert_int_equal(tp_sweep_sobol_points(64, 5, got), TP_OK);
    for (i = 0; i < 64; i++) {
        unsigned gray = (unsigned)i ^ ((unsigned)i >> 1);
        for (k = 0; k < 5; k++) {
            uint32_t x = 0;
            for (j = 1; j <= 6; j++)
                if ((gray >> (j - 1)) & 1u)
                    x ^= v[k][j];
            assert_int_equal(got[i * 5 + k], x);
        }
    }
    for (i = 0; i < 6; i++)
        for (k = 0; k < 2; k++)
            tp_check_abs("first points", ldexp((double)got[i * 5 + k], -30), first[i][k], 0.0);
}

static void test_owen_scrambling_keeps_the_net(void **state)
{
    /* Nested scrambling permutes the digits of points that share their leading digits alike
     * (Owen, "Randomly permuted (t,m,s)-nets", 1995): it is a bijection, and the first 2^5
     * Sobol points, one in each interval [j/32, (j+1)/32) of each coordinate, stay so. */
    uint32_t pts[32 * 3];
    uint64_t key;
    int k, i;
    (void)state;
    assert_int_equal(tp_sweep_sobol_points(32, 3, pts), TP_OK);
    for (key = 1; key < 200; key += 37)
        for (k = 0; k < 3; k++) {
            int hits[32] = {0}, moved = 0;
            for (i = 0; i < 32; i++) {
                uint32_t y = tp_sweep_owen(pts[i * 3 + k], key);
                hits[y >> 25]++;
                moved += y != pts[i * 3 + k];
            }
            for (i = 0; i < 32; i++)
                assert_int_equal(hits[i], 1);
            assert_true(moved > 0);
        }
    /* A bijection of 2^30: distinct inputs give distinct outputs (checked on 4096 of them). */
    {
        uint32_t *out = calloc(4096, sizeof *out);
        int a, b;
        assert_non_null(out);
        for (a = 0; a < 4096; a++)
            out[a] = tp_sweep_owen((uint32_t)a * 262139u & 0x3fffffffu, 99);
        for (a = 0; a < 4096; a++)
            for (b = 0; b < a; b++)
                assert_true(out[a] != out[b]);
        free(out);
    }
}

/* Write the linear node into the group scratch under `name`; its path into path. */
static void scratch_linear(const char *name, char *path)
{
    tp_scratch_write(tp_group_scratch(), name, linear_node, path);
}

static void test_cli_shards_merge_byte_identical(void **state)
{
    /* For every design: one run (2 jobs) and three shards (1 job each) merged give the same
     * CSV, JSON and statistics, byte for byte; the same with 3 jobs. A missing, duplicated or
     * foreign shard is refused (exit 2). */
    static const char *const designs[] = {"random", "lhs", "sobol"};
    char cfg[TP_TEST_PATH], args[4096], f[8][512];
    const char *dir = scratch_dir();
    const char *study = "--spread network.links.0.conductance=normal:10% "
                        "--spread network.nodes.room.fixed=uniform:15degC:25degC "
                        "--samples 24 --replicates 4 --seed 5";
    size_t dsg;
    int k;
    (void)state;
    scratch_linear("shard-linear.yaml", cfg);
    for (dsg = 0; dsg < 3; dsg++) {
        const char *dn = designs[dsg];
        snprintf(f[0], sizeof f[0], "%s/one.csv", dir);
        snprintf(f[1], sizeof f[1], "%s/one.json", dir);
        snprintf(f[2], sizeof f[2], "%s/one-stats.csv", dir);
        snprintf(f[3], sizeof f[3], "%s/m.csv", dir);
        snprintf(f[4], sizeof f[4], "%s/m.json", dir);
        snprintf(f[5], sizeof f[5], "%s/m-stats.csv", dir);
        snprintf(args, sizeof args, "sweep %s -q %s --design %s --jobs 2 --csv %s --json %s "
                 "--stats %s", cfg, study, dn, f[0], f[1], f[2]);
        assert_int_equal(run_tepid(args), 0);
        for (k = 1; k <= 3; k++) {
            snprintf(args, sizeof args, "sweep %s -q %s --design %s --jobs 1 --shard %d/3 "
                     "--json %s/s%d.json", cfg, study, dn, k, dir, k);
            assert_int_equal(run_tepid(args), 0);
        }
        snprintf(args, sizeof args, "sweep -q --merge %s/s3.json %s/s1.json %s/s2.json --csv %s "
                 "--json %s --stats %s", dir, dir, dir, f[3], f[4], f[5]);
        assert_int_equal(run_tepid(args), 0);
        for (k = 0; k < 3; k++)
            assert_true(same_bytes(f[k], f[k + 3]));
        /* --jobs 3: the same files again. */
        snprintf(args, sizeof args, "sweep %s -q %s --design %s --jobs 3 --csv %s --json %s "
                 "--stats %s", cfg, study, dn, f[3], f[4], f[5]);
        assert_int_equal(run_tepid(args), 0);
        for (k = 0; k < 3; k++)
            assert_true(same_bytes(f[k], f[k + 3]));
    }
    /* Refusals: a missing shard, a shard given twice, a shard of another study (seed 6). */
    snprintf(args, sizeof args, "sweep -q --merge %s/s1.json %s/s3.json --json %s/x.json", dir,
             dir, dir);
    assert_int_equal(run_tepid(args), 2);
    snprintf(args, sizeof args, "sweep -q --merge %s/s1.json %s/s1.json %s/s3.json --json %s/x.json",
             dir, dir, dir, dir);
    assert_int_equal(run_tepid(args), 2);
    snprintf(args, sizeof args, "sweep %s -q --spread network.links.0.conductance=normal:10%% "
             "--spread network.nodes.room.fixed=uniform:15degC:25degC --samples 24 "
             "--replicates 4 --seed 6 --design sobol --shard 2/3 --json %s/o2.json", cfg, dir);
    assert_int_equal(run_tepid(args), 0);
    snprintf(args, sizeof args, "sweep -q --merge %s/s1.json %s/o2.json %s/s3.json --json %s/x.json",
             dir, dir, dir, dir);
    assert_int_equal(run_tepid(args), 2);
    snprintf(args, sizeof args, "%s/x.json", dir);
    assert_false(tp_file_exists(args));
}

static void test_cli_fitted_percentiles_merge_and_refusals(void **state)
{
    /* --percentiles fitted is a choice of the statistics: a merge of three shards given it
     * writes the single run's files byte for byte (random and lhs); the JSON names the method,
     * and the holding power (50 G + ..., smooth) gets fitted percentiles. Refused with exit 2
     * and no file: an unknown method, a grid, a shard. */
    static const char *const designs[] = {"random", "lhs"};
    char cfg[TP_TEST_PATH], args[4096], f[4][512];
    cJSON *json, *hold;
    const char *dir = scratch_dir();
    const char *study = "--spread network.links.0.conductance=normal:10% "
                        "--spread network.nodes.room.fixed=uniform:15degC:25degC "
                        "--samples 120 --replicates 4 --seed 9";
    size_t dsg;
    int k;
    (void)state;
    scratch_linear("fitted-linear.yaml", cfg);
    snprintf(f[0], sizeof f[0], "%s/fit-one.json", dir);
    snprintf(f[1], sizeof f[1], "%s/fit-one-stats.csv", dir);
    snprintf(f[2], sizeof f[2], "%s/fit-m.json", dir);
    snprintf(f[3], sizeof f[3], "%s/fit-m-stats.csv", dir);
    for (dsg = 0; dsg < 2; dsg++) {
        snprintf(args, sizeof args, "sweep %s -q %s --design %s --percentiles fitted --jobs 2 "
                 "--json %s --stats %s", cfg, study, designs[dsg], f[0], f[1]);
        assert_int_equal(run_tepid(args), 0);
        for (k = 1; k <= 3; k++) {
            snprintf(args, sizeof args, "sweep %s -q %s --design %s --jobs 1 --shard %d/3 "
                     "--json %s/fs%d.json", cfg, study, designs[dsg], k, dir, k);
            assert_int_equal(run_tepid(args), 0);
        }
        snprintf(args, sizeof args, "sweep -q --merge %s/fs2.json %s/fs1.json %s/fs3.json "
                 "--percentiles fitted --json %s --stats %s", dir, dir, dir, f[2], f[3]);
        assert_int_equal(run_tepid(args), 0);
        assert_true(same_bytes(f[0], f[2]));
        assert_true(same_bytes(f[1], f[3]));
    }
    json = tp_read_json(f[0]);
    assert_string_equal(cJSON_GetStringValue(cJSON_GetObjectItem(json, "percentiles")), "fitted");
    hold = cJSON_GetObjectItem(cJSON_GetObjectItem(json, "statistics"), "holding_power_W");
    assert_string_equal(cJSON_GetStringValue(cJSON_GetObjectItem(hold, "percentile_method")),
                        "fitted");
    assert_true(cJSON_GetNumberValue(cJSON_GetObjectItem(hold, "surface_r2")) > 0.999);
    cJSON_Delete(json);
    snprintf(args, sizeof args, "sweep %s -q %s --percentiles tails --json %s/fx.json", cfg,
             study, dir);
    assert_int_equal(run_tepid(args), 2);
    snprintf(args, sizeof args, "sweep %s -q --vary network.links.0.conductance=1W/K,2W/K "
             "--percentiles fitted --json %s/fx.json", cfg, dir);
    assert_int_equal(run_tepid(args), 2);
    snprintf(args, sizeof args, "sweep %s -q %s --shard 1/3 --percentiles fitted "
             "--json %s/fx.json", cfg, study, dir);
    assert_int_equal(run_tepid(args), 2);
    snprintf(args, sizeof args, "%s/fx.json", dir);
    assert_false(tp_file_exists(args));
}

static void test_cli_until_stops_within_one_batch(void **state)
{
    /* f = holding power = 50 G, G ~ N(2, 0.2) W/K: sd 10 W (closed form). For a 95 % half-
     * width of 1 W the mean needs about (1.96 * 10 / 1)^2 = 384 samples (closed form, normal
     * approximation). In batches of 50 the study must stop at the first batch whose t interval
     * (tp_sweep_ci_mean, checked against the t table above) is narrow enough: the one before
     * was not, and the count is within a batch of what the samples' own sd asks. */
    char cfg[TP_TEST_PATH], args[2048], json[512];
    double *x;
    cJSON *root, *pts, *pt;
    long n_stop, i = 0;
    double mean, sd, lo, hi, hw_stop, hw_before, needed;
    (void)state;
    scratch_linear("until-linear.yaml", cfg);
    snprintf(json, sizeof json, "%s/until.json", scratch_dir());
    snprintf(args, sizeof args,
             "sweep %s -q --spread network.links.0.conductance=normal:10%% --samples 2000 "
             "--replicates 40 --seed 3 --until holding_power_W.mean=+-1W --json %s",
             cfg, json);
    assert_int_equal(run_tepid(args), 0);
    root = tp_read_json(json);
    n_stop = (long)cJSON_GetObjectItem(root, "samples")->valuedouble;
    assert_string_equal(
        cJSON_GetObjectItem(cJSON_GetObjectItem(root, "until"), "stopped")->valuestring,
        "targets met");
    assert_int_equal(n_stop % 50, 0);
    pts = cJSON_GetObjectItem(root, "points");
    assert_int_equal(cJSON_GetArraySize(pts), n_stop);
    x = calloc((size_t)n_stop, sizeof *x);
    assert_non_null(x);
    cJSON_ArrayForEach(pt, pts) x[i++] =
        cJSON_GetObjectItem(cJSON_GetObjectItem(pt, "metrics"), "holding_power_W")->valuedouble;
    tp_sweep_mean_sd(x, (size_t)n_stop, &mean, &sd);
    tp_sweep_ci_mean(mean, sd, n_stop, &lo, &hi);
    hw_stop = 0.5 * (hi - lo);
    needed = pow(1.96 * sd / 1.0, 2);
    tp_sweep_mean_sd(x, (size_t)(n_stop - 50), &mean, &sd);
    tp_sweep_ci_mean(mean, sd, n_stop - 50, &lo, &hi);
    hw_before = 0.5 * (hi - lo);
    print_message("--until stopped at %ld samples (needed by its sd: %.0f; closed form 384)\n",
                  n_stop, needed);
    assert_true(hw_stop <= 1.0);
    assert_true(hw_before > 1.0);
    assert_true((double)n_stop - 50.0 < needed * 1.01 && needed <= (double)n_stop * 1.01);
    assert_true(fabs((double)n_stop - 384.0) <= 50.0 + 0.15 * 384.0);
    free(x);
    cJSON_Delete(root);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_splitmix64_reference_outputs),
        cmocka_unit_test(test_unit_interval_is_open),
        cmocka_unit_test(test_box_muller_hand_values),
        cmocka_unit_test(test_hash_depends_on_every_coordinate),
        cmocka_unit_test(test_normal_draws_match_standard_normal),
        cmocka_unit_test(test_mean_sd_hand_example),
        cmocka_unit_test(test_quantile_hand_examples),
        cmocka_unit_test(test_ranks_average_ties),
        cmocka_unit_test(test_spearman_hand_examples),
        cmocka_unit_test(test_vary_range_with_units),
        cmocka_unit_test(test_vary_refuses_bad_input),
        cmocka_unit_test(test_spread_forms),
        cmocka_unit_test(test_draws_do_not_depend_on_option_order),
        cmocka_unit_test(test_config_check_uses_schema_bounds),
        cmocka_unit_test(test_first_order_time_at_every_power),
        cmocka_unit_test(test_holding_power_statistics_normal),
        cmocka_unit_test(test_holding_power_statistics_uniform),
        cmocka_unit_test(test_driver_and_constant_metrics),
        cmocka_unit_test(test_worst_follows_each_metric_direction),
        cmocka_unit_test(test_metric_directions_documented),
        cmocka_unit_test(test_segment_rate_swept_matches_the_energy_balance),
        cmocka_unit_test(test_same_results_for_any_jobs),
        cmocka_unit_test(test_failed_samples_are_reported),
        cmocka_unit_test(test_progress_ends_complete),
        cmocka_unit_test(test_cli_files_identical_for_1_and_2_jobs),
        cmocka_unit_test(test_cli_cautions_agree_with_warmup_on_a_grid),
        cmocka_unit_test(test_cli_usage_errors),
        cmocka_unit_test(test_cli_figures),
        cmocka_unit_test(test_cli_text_in_user_units),
        cmocka_unit_test(test_cli_unreached_point_shows_dash),
        cmocka_unit_test(test_cli_rated_power_varies_and_spreads),
        cmocka_unit_test(test_cli_readme_commands),
        cmocka_unit_test(test_ci_mean_and_sd_table_values),
        cmocka_unit_test(test_ci_ranks_binomial_hand_values),
        cmocka_unit_test(test_samples_needed_for_a_halfwidth),
        cmocka_unit_test(test_ci_coverage_on_a_linear_metric),
        cmocka_unit_test(test_cli_fitted_percentiles_merge_and_refusals),
        cmocka_unit_test(test_lhs_one_sample_per_stratum),
        cmocka_unit_test(test_designs_reduce_variance_without_bias),
        cmocka_unit_test(test_sobol_points_match_published_direction_numbers),
        cmocka_unit_test(test_owen_scrambling_keeps_the_net),
        cmocka_unit_test(test_cli_shards_merge_byte_identical),
        cmocka_unit_test(test_cli_until_stops_within_one_batch),
    };
    return cmocka_run_group_tests(tests, tp_scratch_group_setup, tp_scratch_group_teardown);
}

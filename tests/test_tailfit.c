/* Fitted percentiles of tolerance studies (src/study/tailfit.c, --percentiles fitted): the
 * surface's terms, exactness on a metric the surface can represent, coverage of the intervals on
 * metrics with known quantiles that it cannot (a smooth curve, a jump), the fall-back to order
 * statistics, and the samples a half-width needs. No warm-up runs: the metric is a known
 * function of the plan's own draws. */
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
#include "tailfit.h"
#include "tp_test.h"
#include "yamltree.h"

#define Z95 1.6448536269514722 /* z(0.95), standard normal table (Abramowitz & Stegun 26.2) */

/* One node and its room: the conductance and the room temperature are spread. */
static const char *two_keys =
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

typedef double (*metric_fn)(double z, double room_c);

static void load(tp_description *desc)
{
    tp_diag d;
    tp_yamltree *doc = NULL;
    tp_diag_init(&d, stderr);
    assert_int_equal(
        tp_yamltree_load_text("two-keys.yaml", two_keys, strlen(two_keys), &doc, &d), TP_OK);
    assert_int_equal(tp_config_read(doc, desc, &d), TP_OK);
    tp_yamltree_destroy(&doc);
}

/* G ~ N(2, 0.2) W/K (normal:10 %), the room ~ U(15, 25) degC; `design`, `reps` replicates. */
static void make_plan(tp_sweep_plan *plan, const tp_description *desc, long n, long reps,
                      uint64_t seed, int design, tp_sweep_pct pct)
{
    tp_diag d;
    tp_diag_init(&d, stderr);
    tp_sweep_plan_init(plan, TP_SWEEP_SPREAD);
    plan->n_samples = n;
    plan->seed = seed;
    assert_int_equal(tp_sweep_add_spread(plan, desc, "network.links.0.conductance=normal:10%", &d),
                     TP_OK);
    assert_int_equal(
        tp_sweep_add_spread(plan, desc, "network.nodes.room.fixed=uniform:15degC:25degC", &d),
        TP_OK);
    assert_int_equal(tp_sweep_design_build(plan, (tp_sweep_design)design, reps, &d), TP_OK);
    plan->percentiles = pct;
}

/* The metric f(z, room) of every sample, z = (G - 2) / 0.2 standard normal, in the holding
 * power's slot. */
static tp_sweep_result *results_of(const tp_sweep_plan *plan, metric_fn f)
{
    long n = tp_sweep_count(plan), i;
    int k;
    tp_sweep_result *res = calloc((size_t)n, sizeof *res);
    assert_non_null(res);
    for (i = 0; i < n; i++) {
        for (k = 0; k < TP_MET_SWEPT; k++)
            res[i].metric[k] = (double)NAN;
        res[i].ok = 1;
        res[i].metric[TP_MET_HOLD_POWER] =
            f((tp_sweep_value(plan, i, 0) - 2.0) / 0.2, tp_sweep_value(plan, i, 1) - 273.15);
    }
    return res;
}

static double linear(double z, double room_c)
{
    return 100.0 + 10.0 * z + 0.0 * room_c;
}

static double lognormal(double z, double room_c)
{
    (void)room_c;
    return exp(0.5 * z);
}

static double jump(double z, double room_c)
{
    (void)room_c;
    return z + (z > 1.2 ? 3.0 : 0.0);
}

static void test_terms_hand_counts(void **state)
{
    /* 1 + d + d (d + 1) / 2 with every cross term; 1 + 2 d beyond 8 parameters (hand counts). */
    (void)state;
    assert_int_equal(tp_tailfit_terms(1), 3);
    assert_int_equal(tp_tailfit_terms(4), 15);
    assert_int_equal(tp_tailfit_terms(8), 45);
    assert_int_equal(tp_tailfit_terms(9), 19);
    assert_int_equal(tp_tailfit_terms(16), 33);
}

static void test_exact_on_a_metric_the_surface_holds(void **state)
{
    /* f = 100 + 10 z ~ N(100, 10) (closed form): p95 = 100 + 10 z(0.95) = 116.448536, p5 =
     * 83.551464, p50 = 100. The surface holds f exactly (R^2 = 1), so the real samples never
     * disagree with it and the percentiles are those of its 2 x 131072 draws: within 3.5 of
     * their standard errors, 10 sqrt(0.95 0.05 / 262144) / phi(1.645) = 0.041 for p5 and p95,
     * 10 sqrt(0.25 / 262144) / phi(0) = 0.024 for p50 (asymptotic error of a sample quantile,
     * sqrt(p (1 - p) / N) / density; hand calculation). */
    tp_description desc;
    tp_sweep_plan plan;
    tp_sweep_summary sum;
    tp_sweep_result *res;
    (void)state;
    load(&desc);
    make_plan(&plan, &desc, 400, 1, 3, TP_DESIGN_RANDOM, TP_PCT_FITTED);
    res = results_of(&plan, linear);
    assert_int_equal(tp_sweep_summarise(&plan, res, TP_MET_HOLD_POWER, &sum), TP_OK);
    assert_int_equal(sum.fitted, 1);
    tp_check_abs("R^2", sum.fit_r2, 1.0, 1e-12);
    tp_check_abs("p95", sum.p95, 100.0 + 10.0 * Z95, 3.5 * 0.041);
    tp_check_abs("p5", sum.p5, 100.0 - 10.0 * Z95, 3.5 * 0.041);
    tp_check_abs("p50", sum.p50, 100.0, 3.5 * 0.024);
    assert_true(sum.lo[TP_STAT_P95] <= 100.0 + 10.0 * Z95 &&
                100.0 + 10.0 * Z95 <= sum.hi[TP_STAT_P95]);
    /* Order statistics of 400 samples give a half-width of about 1.96 x 10 sqrt(0.95 0.05 /
     * 400) / phi(1.645) = 2.07 (hand calculation); the fitted one is under half that. */
    print_message("fitted p95 half-width %.3f\n", 0.5 * (sum.hi[TP_STAT_P95] - sum.lo[TP_STAT_P95]));
    assert_true(0.5 * (sum.hi[TP_STAT_P95] - sum.lo[TP_STAT_P95]) < 1.0);
    free(res);
    tp_sweep_plan_clear(&plan);
    tp_config_clear(&desc);
}

/* Over `seeds` studies of n samples: how often the fitted intervals of p5, p50 and p95 hold the
 * true values; the mean p95 estimate; the mean half-widths of p95, fitted and by order. */
static void coverage(const tp_description *desc, metric_fn f, const double truth[3], int seeds,
                     long n, int design, long reps, int cover[3], double *mean_p95,
                     double *hw_fitted, double *hw_order)
{
    int s, k;
    *mean_p95 = *hw_fitted = *hw_order = 0.0;
    cover[0] = cover[1] = cover[2] = 0;
    for (s = 0; s < seeds; s++) {
        tp_sweep_plan plan;
        tp_sweep_summary fit, ord;
        tp_sweep_result *res;
        make_plan(&plan, desc, n, reps, (uint64_t)s + 11, design, TP_PCT_FITTED);
        res = results_of(&plan, f);
        assert_int_equal(tp_sweep_summarise(&plan, res, TP_MET_HOLD_POWER, &fit), TP_OK);
        assert_int_equal(fit.fitted, 1);
        plan.percentiles = TP_PCT_ORDER;
        assert_int_equal(tp_sweep_summarise(&plan, res, TP_MET_HOLD_POWER, &ord), TP_OK);
        assert_int_equal(ord.fitted, 0);
        for (k = 0; k < 3; k++)
            cover[k] += fit.lo[TP_STAT_P5 + k] <= truth[k] && truth[k] <= fit.hi[TP_STAT_P5 + k];
        *mean_p95 += fit.p95 / seeds;
        *hw_fitted += 0.5 * (fit.hi[TP_STAT_P95] - fit.lo[TP_STAT_P95]) / seeds;
        *hw_order += 0.5 * (ord.hi[TP_STAT_P95] - ord.lo[TP_STAT_P95]) / seeds;
        free(res);
        tp_sweep_plan_clear(&plan);
    }
}

/* Coverage at least 95 % less 3 standard errors of a proportion over `seeds` studies: the
 * intervals may be conservative (tailfit.c counts one more discordant sample than seen), never
 * short. */
static void check_coverage(const char *what, const int cover[3], int seeds)
{
    const double se = sqrt(0.95 * 0.05 / seeds);
    int k;
    for (k = 0; k < 3; k++) {
        double rate = (double)cover[k] / seeds;
        print_message("%s: coverage of p%s %.3f\n", what, k == 0 ? "5" : k == 1 ? "50" : "95",
                      rate);
        assert_true(rate >= 0.95 - 3.0 * se);
    }
}

static void test_coverage_on_a_smooth_metric(void **state)
{
    /* f = exp(z / 2), lognormal (closed form): p5 = exp(-z95 / 2) = 0.4393, p50 = 1, p95 =
     * exp(z95 / 2) = 2.2761. A quadratic surface does not hold it. Over 200 seeds of 400
     * samples: coverage >= 95 % - 3 se (se = sqrt(0.95 0.05 / 200) = 0.0154); the mean estimate
     * of p95 within 1 % of the truth (its bias is of order 1/n); and the fitted interval of p95
     * at most half as wide as the order statistics' on average. */
    const double truth[3] = {exp(-0.5 * Z95), 1.0, exp(0.5 * Z95)};
    const int seeds = 200;
    tp_description desc;
    int cover[3];
    double mean_p95, hw_fit, hw_ord;
    (void)state;
    load(&desc);
    coverage(&desc, lognormal, truth, seeds, 400, TP_DESIGN_RANDOM, 1, cover, &mean_p95, &hw_fit,
             &hw_ord);
    check_coverage("random, lognormal", cover, seeds);
    print_message("p95 mean %.5f (true %.5f); half-width fitted %.4f, order %.4f\n", mean_p95,
                  truth[2], hw_fit, hw_ord);
    tp_check_rel("mean p95", mean_p95, truth[2], 0.01);
    assert_true(hw_fit * 2.0 <= hw_ord);
    tp_config_clear(&desc);
}

static void test_coverage_on_a_jump(void **state)
{
    /* f = z + 3 [z > 1.2] (closed form: for t >= 4.2, P(f <= t) = Phi(t - 3); below 1.2,
     * f = z): p95 = 3 + z95 = 4.6449, p5 = -z95, p50 = 0. The surface cannot follow the jump,
     * so the real samples' correction carries the estimate: coverage >= 95 % - 3 se over 200
     * seeds of 400 samples, with lhs in 10 replicates too (halves of whole replicates). */
    const double truth[3] = {-Z95, 0.0, 3.0 + Z95};
    const int seeds = 200;
    tp_description desc;
    int cover[3];
    double mean_p95, hw_fit, hw_ord;
    (void)state;
    load(&desc);
    coverage(&desc, jump, truth, seeds, 400, TP_DESIGN_RANDOM, 1, cover, &mean_p95, &hw_fit,
             &hw_ord);
    check_coverage("random, jump", cover, seeds);
    tp_check_abs("mean p95 (random)", mean_p95, truth[2], 0.05);
    coverage(&desc, jump, truth, seeds, 400, TP_DESIGN_LHS, 10, cover, &mean_p95, &hw_fit,
             &hw_ord);
    check_coverage("lhs, jump", cover, seeds);
    tp_check_abs("mean p95 (lhs)", mean_p95, truth[2], 0.05);
    tp_config_clear(&desc);
}

static void test_falls_back_to_order_statistics(void **state)
{
    /* The surface cannot know a failed sample, an absent metric, or a single replicate's
     * halves: the percentiles are then the order statistics' (definition 7 of Hyndman & Fan). */
    tp_description desc;
    tp_sweep_plan plan;
    tp_sweep_summary sum;
    tp_sweep_result *res;
    (void)state;
    load(&desc);
    make_plan(&plan, &desc, 400, 1, 5, TP_DESIGN_RANDOM, TP_PCT_FITTED);
    res = results_of(&plan, linear);
    res[17].ok = 0;
    assert_int_equal(tp_sweep_summarise(&plan, res, TP_MET_HOLD_POWER, &sum), TP_OK);
    assert_int_equal(sum.fitted, 0);
    assert_true(isnan(sum.fit_r2));
    res[17].ok = 1;
    res[18].metric[TP_MET_HOLD_POWER] = (double)NAN;
    assert_int_equal(tp_sweep_summarise(&plan, res, TP_MET_HOLD_POWER, &sum), TP_OK);
    assert_int_equal(sum.fitted, 0);
    free(res);
    tp_sweep_plan_clear(&plan);
    make_plan(&plan, &desc, 400, 1, 5, TP_DESIGN_LHS, TP_PCT_FITTED);
    res = results_of(&plan, linear);
    assert_int_equal(tp_sweep_summarise(&plan, res, TP_MET_HOLD_POWER, &sum), TP_OK);
    assert_int_equal(sum.fitted, 0);
    free(res);
    tp_sweep_plan_clear(&plan);
    /* Too few: 2 parameters have 6 terms, a half needs max(40, 5 x 6) = 40 samples. */
    make_plan(&plan, &desc, 78, 1, 5, TP_DESIGN_RANDOM, TP_PCT_FITTED);
    res = results_of(&plan, linear);
    assert_int_equal(tp_sweep_summarise(&plan, res, TP_MET_HOLD_POWER, &sum), TP_OK);
    assert_int_equal(sum.fitted, 0);
    free(res);
    tp_sweep_plan_clear(&plan);
    make_plan(&plan, &desc, 80, 1, 5, TP_DESIGN_RANDOM, TP_PCT_FITTED);
    res = results_of(&plan, linear);
    assert_int_equal(tp_sweep_summarise(&plan, res, TP_MET_HOLD_POWER, &sum), TP_OK);
    assert_int_equal(sum.fitted, 1);
    free(res);
    tp_sweep_plan_clear(&plan);
    tp_config_clear(&desc);
}

static void test_samples_needed_above_the_floor(void **state)
{
    /* Half-width 2 from 100 samples, of which 1 is the draws' floor: the part that shrinks is
     * sqrt(4 - 1) = 1.732; for a half-width of 1.5, N = 100 (4 - 1) / (2.25 - 1) = 240 (hand
     * calculation); a half-width at or below the floor cannot be reached (NaN). */
    tp_sweep_plan plan;
    tp_sweep_summary sum;
    (void)state;
    tp_sweep_plan_init(&plan, TP_SWEEP_SPREAD);
    memset(&sum, 0, sizeof sum);
    sum.n = 100;
    sum.fitted = 1;
    sum.lo[TP_STAT_P95] = 10.0;
    sum.hi[TP_STAT_P95] = 14.0;
    sum.floor_hw[TP_STAT_P95] = 1.0;
    tp_check_abs("needed", tp_sweep_needed(&plan, &sum, TP_STAT_P95, 1.5), 240.0, 0.0);
    assert_true(isnan(tp_sweep_needed(&plan, &sum, TP_STAT_P95, 1.0)));
    tp_sweep_plan_clear(&plan);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_terms_hand_counts),
        cmocka_unit_test(test_exact_on_a_metric_the_surface_holds),
        cmocka_unit_test(test_coverage_on_a_smooth_metric),
        cmocka_unit_test(test_coverage_on_a_jump),
        cmocka_unit_test(test_falls_back_to_order_statistics),
        cmocka_unit_test(test_samples_needed_above_the_floor),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}

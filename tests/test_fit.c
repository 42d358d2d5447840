/* Tests of `tepid fit`: a first-order plate against its closed-form solution (estimates and the
 * covariance), synthetic logs from tepid's own model with known parameters and Gaussian noise
 * (two and three parameters, standard errors against the scatter over 20 noise seeds), logs
 * driven by logged duty, by logged power and by the controller, --free parsing, and the command
 * line with --write-config. Also writes the demo log (see docs/fit.md). */
#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>
#include <setjmp.h>
#include <cmocka.h>

#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include <cjson/cJSON.h>

#include "assemble.h"
#include "config.h"
#include "eval.h"
#include "fit.h"
#include "integrate.h"
#include "network.h"
#include "templog.h"
#include "tp_test.h"
#include "yamltree.h"

#define KELVIN 273.15 /* K at 0 degC */
#define PI 3.14159265358979323846

/* ---- Gaussian noise with a fixed seed ------------------------------------------------------ */

/* splitmix64 (Steele, Lea & Flood, "Fast splittable pseudorandom number generators", OOPSLA
 * 2014; constants from memory): a reproducible stream on every platform. */
static uint64_t splitmix(uint64_t *s)
{
    uint64_t z = (*s += 0x9E3779B97F4A7C15ULL);
    z = (z ^ (z >> 30)) * 0xBF58476D1CE4E5B9ULL;
    z = (z ^ (z >> 27)) * 0x94D049BB133111EBULL;
    return z ^ (z >> 31);
}

/* A standard normal deviate by the Box-Muller transform (Box & Muller, Ann. Math. Statist. 29
 * (1958) 610): sqrt(-2 ln u1) cos(2 pi u2) with u1, u2 uniform in (0, 1]. */
static double gauss(uint64_t *s)
{
    double u1 = ((double)(splitmix(s) >> 11) + 1.0) / 9007199254740992.0;
    double u2 = ((double)(splitmix(s) >> 11) + 1.0) / 9007199254740992.0;
    return sqrt(-2.0 * log(u1)) * cos(2.0 * PI * u2);
}

/* ---- synthetic logs ------------------------------------------------------------------------ */

typedef struct truth {
    double *t, *y, *duty, *power;
    long n, cap;
    int sensor, source;
    double offset;
    const tp_network *net;
} truth;

static int record_truth(void *user, const tp_sample *s)
{
    truth *tr = user;
    if (tr->n < tr->cap) {
        tr->t[tr->n] = s->t;
        tr->y[tr->n] = s->temps[tr->sensor] + tr->offset;
        tr->duty[tr->n] = s->duty;
        tr->power[tr->n] = tp_network_source_power(&tr->net->sources[tr->source], s->temps,
                                                   tp_eval_duty(s->eval, tr->source), NULL);
        tr->n++;
    }
    return 0;
}

/* Load YAML text with overrides into a description (and its document). */
static void load(const char *yaml, const char *const *sets, int n_sets, tp_yamltree **doc,
                 tp_description *desc)
{
    tp_diag d;
    int i;
    tp_diag_init(&d, stderr);
    d.quiet = 1;
    assert_int_equal(tp_yamltree_load_text("test.yaml", yaml, strlen(yaml), doc, &d), TP_OK);
    for (i = 0; i < n_sets; i++)
        assert_int_equal(tp_yamltree_set(*doc, sets[i], &d), TP_OK);
    assert_int_equal(tp_config_read(*doc, desc, &d), TP_OK);
}

/* Simulate `yaml` with the true values `sets` over run.duration every run.step, and render a
 * CSV log of the reading (the sensor node plus offset, plus Gaussian noise of `sigma` K from
 * `seed`) with a duty column (drive 1), a power column (drive 2) or none (drive 0), each
 * reading written with `decimals` decimals. Returns the text (caller frees). */
static char *synth_text(const char *yaml, const char *const *sets, int n_sets, double sigma,
                        uint64_t seed, int drive, int decimals, const char *preamble)
{
    tp_yamltree *doc = NULL;
    tp_description desc;
    const tp_network *net = NULL;
    tp_integrate_opts o;
    tp_integrate_stats st;
    tp_diag d;
    truth tr;
    char *text;
    size_t cap, len = 0;
    long i;
    load(yaml, sets, n_sets, &doc, &desc);
    tp_diag_init(&d, stderr);
    d.quiet = 1;
    assert_int_equal(tp_assemble(&desc, doc, &d, &net), TP_OK);
    memset(&tr, 0, sizeof tr);
    tr.cap = (long)ceil(desc.run.duration / desc.run.step) + 2;
    tr.t = calloc((size_t)tr.cap, sizeof *tr.t);
    tr.y = calloc((size_t)tr.cap, sizeof *tr.y);
    tr.duty = calloc((size_t)tr.cap, sizeof *tr.duty);
    tr.power = calloc((size_t)tr.cap, sizeof *tr.power);
    assert_true(tr.t && tr.y && tr.duty && tr.power);
    tr.net = net;
    if (net->has_control) {
        tr.sensor = net->control.sensor;
        tr.source = net->control.source;
        tr.offset = net->control.reading.offset;
    } else {
        tr.sensor = tp_network_find_node(net, "sensor");
        if (tr.sensor < 0)
            tr.sensor = net->free_nodes[0];
        tr.source = 0;
    }
    tp_integrate_defaults(&desc.run, &o);
    o.out = record_truth;
    o.user = &tr;
    assert_int_equal(tp_integrate(net, &o, &st, &d), TP_OK);
    cap = 256 + strlen(preamble ? preamble : "") + (size_t)tr.n * 64;
    text = malloc(cap);
    assert_non_null(text);
    len += (size_t)snprintf(text + len, cap - len, "%stime_s,temp_C%s\n", preamble ? preamble : "",
                            drive == 1   ? ",duty"
                            : drive == 2 ? ",power_W"
                                         : "");
    for (i = 0; i < tr.n; i++) {
        double y = tr.y[i] - KELVIN + sigma * gauss(&seed);
        len += (size_t)snprintf(text + len, cap - len, "%g,%.*f", tr.t[i], decimals, y);
        if (drive == 1)
            len += (size_t)snprintf(text + len, cap - len, ",%.3f", tr.duty[i]);
        else if (drive == 2)
            len += (size_t)snprintf(text + len, cap - len, ",%.4f", tr.power[i]);
        len += (size_t)snprintf(text + len, cap - len, "\n");
    }
    free(tr.t);
    free(tr.y);
    free(tr.duty);
    free(tr.power);
    tp_network_release(&net);
    tp_config_clear(&desc);
    tp_yamltree_destroy(&doc);
    return text;
}

static void synth(const char *yaml, const char *const *sets, int n_sets, double sigma,
                  uint64_t seed, int drive, tp_templog *log)
{
    char *text = synth_text(yaml, sets, n_sets, sigma, seed, drive, 6, NULL);
    tp_diag d;
    tp_diag_init(&d, stderr);
    assert_int_equal(tp_templog_parse("synthetic.csv", text, strlen(text), NULL, log, &d), TP_OK);
    free(text);
}

/* A fit of `yaml` (as configured) against `log` with the keys in `free_list`. */
typedef struct fitting {
    tp_yamltree *doc;
    tp_description desc;
    tp_fit_param params[TP_FIT_MAX_PARAMS];
    int n;
    tp_fit_problem pb;
    tp_fit_result res;
} fitting;

static tp_status fit(fitting *f, const char *yaml, const char *free_list, const tp_templog *log,
                     int starts)
{
    tp_diag d;
    memset(f, 0, sizeof *f);
    load(yaml, NULL, 0, &f->doc, &f->desc);
    tp_diag_init(&d, stderr);
    d.quiet = 1;
    assert_int_equal(
        tp_fit_parse_free(free_list, &f->desc, f->params, &f->n, TP_FIT_MAX_PARAMS, &d), TP_OK);
    f->pb.desc = &f->desc;
    f->pb.doc = f->doc;
    f->pb.log = log;
    f->pb.params = f->params;
    f->pb.n_params = f->n;
    f->pb.starts = starts;
    return tp_fit_run(&f->pb, &f->res, &d);
}

static void fit_clear(fitting *f)
{
    tp_fit_result_clear(&f->res);
    tp_config_clear(&f->desc);
    tp_yamltree_destroy(&f->doc);
}

/* |estimate - truth| within k standard errors, on the scale the fit searched (ln x for log-scaled
 * keys). Prints the numbers on failure. */
static void assert_within_se(const tp_fit_param *q, double truth_si, double k)
{
    double dev = q->scale == TP_FIT_LOG ? log(q->value / truth_si) : q->value - truth_si;
    if (!(fabs(dev) <= k * q->se_scaled)) {
        fprintf(stderr, "%s: fitted %.6g, true %.6g, deviation %.3g, standard error %.3g\n",
                q->path, q->value, truth_si, dev, q->se_scaled);
        fail();
    }
}

/* ---- a first-order plate against its closed form ------------------------------------------ */

/* One node of capacity C losing G to a 20 degC room, heated by P = 100 W from 20 degC. */
static const char *rc_yaml = "network:\n"
                             "  nodes:\n"
                             "    - {id: plate, capacity: 900 J/K, initial: 20 degC}\n"
                             "    - {id: room, fixed: 20 degC}\n"
                             "  links:\n"
                             "    - {between: [plate, room], conductance: 1.5 W/K}\n"
                             "  sources:\n"
                             "    - {id: pad, node: plate, power: 100 W}\n"
                             "run: {duration: 40 min, step: 5 s}\n";

static void test_fit_first_order_against_closed_form(void **state)
{
    /* Closed form of C dT/dt = P - G (T - Ta), T(0) = Ta (first-order lumped system, Incropera
     * 6th ed. Sec. 5.3 with a source; hand calculation):
     *   T(t) = Ta + (P/G) (1 - e), e = exp(-G t / C)
     *   dT/dlnG = -(P/G)(1 - e) + (P t / C) e,   dT/dlnC = -(P t / C) e. */
    const double C = 600.0, G = 1.2, P = 100.0, sigma = 0.1;
    const long n = 481; /* 0 .. 2400 s every 5 s */
    double a11 = 0, a12 = 0, a22 = 0, det, se_lnc, se_lng;
    size_t cap = (size_t)n * 40 + 64, len = 0;
    char *text = malloc(cap);
    uint64_t seed = 7;
    tp_templog lg;
    tp_diag d;
    fitting f;
    long i;
    (void)state;
    assert_non_null(text);
    len += (size_t)snprintf(text, cap, "time_s,temp_C\n");
    for (i = 0; i < n; i++) {
        double t = 5.0 * (double)i, e = exp(-G * t / C);
        double y = 20.0 + P / G * (1.0 - e);
        double jc = -(P * t / C) * e, jg = -(P / G) * (1.0 - e) + (P * t / C) * e;
        a11 += jc * jc;
        a12 += jc * jg;
        a22 += jg * jg;
        len += (size_t)snprintf(text + len, cap - len, "%g,%.6f\n", t, y + sigma * gauss(&seed));
    }
    tp_diag_init(&d, stderr);
    assert_int_equal(tp_templog_parse("rc.csv", text, len, NULL, &lg, &d), TP_OK);
    free(text);
    /* Covariance sigma^2 (J^T J)^-1 of (ln C, ln G) with the true sigma (Seber & Wild,
     * Nonlinear Regression, Wiley 1989, Sec. 2.1; from memory). */
    det = a11 * a22 - a12 * a12;
    se_lnc = sigma * sqrt(a22 / det);
    se_lng = sigma * sqrt(a11 / det);
    assert_int_equal(
        fit(&f, rc_yaml, "network.nodes.plate.capacity,network.links.0.conductance", &lg, 3),
        TP_OK);
    {
        /* The forward model at the true values is the closed form. Tolerance 0.01 K: CVODE at
         * rtol 1e-6 on temperatures of 300..400 K (atol 1e-5 K), accumulated over some hundreds
         * of steps, plus the linear interpolation between 1 s outputs of a curve whose second
         * derivative is at most P G / C^2 = 0.33 mK/s^2, i.e. 1/8 x 0.33 mK (hand calculation). */
        double x[2] = {C, G}, *model = malloc((size_t)lg.n * sizeof *model);
        assert_non_null(model);
        assert_int_equal(tp_fit_model(&f.pb, x, model, &d), TP_OK);
        for (i = 0; i < lg.n; i++) {
            double t = lg.t[i], y = 20.0 + KELVIN + P / G * (1.0 - exp(-G * t / C));
            assert_true(fabs(model[i] - y) < 0.01);
        }
        free(model);
    }
    assert_int_equal(f.res.drive, TP_FIT_FULL_POWER);
    /* Truth within 3 standard errors: 99.7 % of fits for a Gaussian estimate. */
    assert_within_se(&f.params[0], C, 3.0);
    assert_within_se(&f.params[1], G, 3.0);
    /* The reported standard errors use s = sqrt(RSS / (m - p)) instead of sigma; with 479
     * degrees of freedom s / sigma has a spread of about 1/sqrt(2 x 479) = 3 %, so 12 % allows
     * four of those plus the finite-difference Jacobian. */
    assert_true(fabs(f.params[0].se_scaled / se_lnc - 1.0) < 0.12);
    assert_true(fabs(f.params[1].se_scaled / se_lng - 1.0) < 0.12);
    /* The noise estimate is the noise put in (same 3 % spread). */
    assert_true(fabs(f.res.sigma / sigma - 1.0) < 0.12);
    /* All three starting points find the one minimum of this well-posed problem. */
    assert_int_equal(f.res.starts_at_best, 3);
    fit_clear(&f);
    tp_templog_clear(&lg);
}

/* ---- a physical plate: synthetic logs from tepid's own model -------------------------------- */

static const char *plate_yaml =
    "title: test plate\n"
    "room: {temperature: 20 degC}\n"
    "bed:\n"
    "  size: [200 mm, 200 mm]\n"
    "  layers:\n"
    "    - {id: pad, material: silicone-rubber, thickness: 1.5 mm}\n"
    "    - {id: plate, material: aluminium-6061, thickness: 3 mm, contact: 3000 W/(m2.K)}\n"
    "  top: {emissivity: 0.9}\n"
    "heater: {layer: pad, power: 150 W}\n"
    "sensor: {layer: plate, coupling: 0.02 W/K, time_constant: 6 s}\n"
    "control: {mode: pid, setpoint: 80 degC, period: 1 s, kp: 0.08 1/K, ki: 0.001 1/(K.s),"
    " kd: 0.2 s/K}\n"
    "run: {duration: 12 min, step: 2 s}\n";

/* The same plate with a very different controller (the duty log must override it). */
static const char *plate_other_pid_yaml =
    "title: test plate\n"
    "room: {temperature: 20 degC}\n"
    "bed:\n"
    "  size: [200 mm, 200 mm]\n"
    "  layers:\n"
    "    - {id: pad, material: silicone-rubber, thickness: 1.5 mm}\n"
    "    - {id: plate, material: aluminium-6061, thickness: 3 mm, contact: 3000 W/(m2.K)}\n"
    "  top: {emissivity: 0.9}\n"
    "heater: {layer: pad, power: 150 W}\n"
    "sensor: {layer: plate, coupling: 0.02 W/K, time_constant: 6 s}\n"
    "control: {mode: on-off, setpoint: 60 degC, period: 1 s, band: 4 K}\n"
    "run: {duration: 12 min, step: 2 s}\n";

static const char *const truth2[] = {"heater.power=120 W", "losses.convection_scale=1.4"};
static const char *const truth3[] = {"heater.power=120 W", "losses.convection_scale=1.4",
                                     "sensor.time_constant=10 s"};

static void test_fit_two_parameters_recovered(void **state)
{
    tp_templog lg;
    fitting f;
    (void)state;
    synth(plate_yaml, truth2, 2, 0.2, 11, 1, &lg);
    assert_int_equal(fit(&f, plate_yaml, "heater.power,losses.convection_scale", &lg, 3), TP_OK);
    assert_int_equal(f.res.drive, TP_FIT_BY_DUTY);
    assert_within_se(&f.params[0], 120.0, 3.0);
    assert_within_se(&f.params[1], 1.4, 3.0);
    assert_int_equal(f.res.rank, 2);
    fit_clear(&f);
    tp_templog_clear(&lg);
}

/* The plate with its heater given as sold ("24 V, 150 W"): --free accepts heater.rated_power.
 * On its rated 24 V without tempco or series path the element delivers exactly its rated power
 * (R = V^2 / P, Ohm's law), so a log made with 120 W must give back 120 W. */
static const char *plate_rated_yaml =
    "title: test plate\n"
    "room: {temperature: 20 degC}\n"
    "bed:\n"
    "  size: [200 mm, 200 mm]\n"
    "  layers:\n"
    "    - {id: pad, material: silicone-rubber, thickness: 1.5 mm}\n"
    "    - {id: plate, material: aluminium-6061, thickness: 3 mm, contact: 3000 W/(m2.K)}\n"
    "  top: {emissivity: 0.9}\n"
    "heater: {layer: pad, rated_power: 150 W, rated_voltage: 24 V}\n"
    "sensor: {layer: plate, coupling: 0.02 W/K, time_constant: 6 s}\n"
    "control: {mode: pid, setpoint: 80 degC, period: 1 s, kp: 0.08 1/K, ki: 0.001 1/(K.s),"
    " kd: 0.2 s/K}\n"
    "run: {duration: 12 min, step: 2 s}\n";

static void test_fit_rated_power_recovered(void **state)
{
    static const char *const truth_rated[] = {"heater.rated_power=120 W"};
    tp_templog lg;
    fitting f;
    (void)state;
    synth(plate_rated_yaml, truth_rated, 1, 0.2, 21, 1, &lg);
    assert_int_equal(fit(&f, plate_rated_yaml, "heater.rated_power", &lg, 3), TP_OK);
    assert_within_se(&f.params[0], 120.0, 3.0);
    tp_check_rel("rated power", f.params[0].value, 120.0, 0.02);
    fit_clear(&f);
    tp_templog_clear(&lg);
}

static void test_fit_three_parameters_recovered(void **state)
{
    tp_templog lg;
    fitting f;
    (void)state;
    synth(plate_yaml, truth3, 3, 0.2, 12, 1, &lg);
    assert_int_equal(
        fit(&f, plate_yaml, "heater.power,losses.convection_scale,sensor.time_constant", &lg, 3),
        TP_OK);
    assert_within_se(&f.params[0], 120.0, 3.0);
    assert_within_se(&f.params[1], 1.4, 3.0);
    assert_within_se(&f.params[2], 10.0, 3.0);
    assert_int_equal(f.res.rank, 3);
    fit_clear(&f);
    tp_templog_clear(&lg);
}

static void test_fit_standard_errors_match_scatter(void **state)
{
    /* Over 20 noise seeds the estimates of ln(x) scatter with a standard deviation that the
     * reported standard errors should match: the covariance s^2 (J^T J)^-1 is the asymptotic
     * covariance of the least-squares estimate (Seber & Wild 1989, Sec. 2.1; from memory). With
     * 20 samples the sample standard deviation itself is uncertain by about 1/sqrt(2 x 19) =
     * 16 %, so a factor of 2 either way is a safe band that still catches a wrong formula (a
     * missing s^2, a wrong scale, a Jacobian in the wrong variable). */
    enum { SEEDS = 20, P = 3 };
    double est[SEEDS][P], se_sum[P] = {0}, mean[P] = {0}, sd[P] = {0};
    int s, k;
    (void)state;
    for (s = 0; s < SEEDS; s++) {
        tp_templog lg;
        fitting f;
        synth(plate_yaml, truth3, 3, 0.2, 1000 + (uint64_t)s, 1, &lg);
        assert_int_equal(fit(&f, plate_yaml,
                             "heater.power,losses.convection_scale,sensor.time_constant", &lg, 1),
                         TP_OK);
        for (k = 0; k < P; k++) {
            est[s][k] = log(f.params[k].value);
            se_sum[k] += f.params[k].se_scaled;
        }
        fit_clear(&f);
        tp_templog_clear(&lg);
    }
    for (k = 0; k < P; k++) {
        double ratio;
        for (s = 0; s < SEEDS; s++)
            mean[k] += est[s][k] / SEEDS;
        for (s = 0; s < SEEDS; s++)
            sd[k] += (est[s][k] - mean[k]) * (est[s][k] - mean[k]) / (SEEDS - 1);
        sd[k] = sqrt(sd[k]);
        ratio = (se_sum[k] / SEEDS) / sd[k];
        if (!(ratio > 0.5 && ratio < 2.0)) {
            fprintf(stderr, "parameter %d: mean standard error %.3g, scatter %.3g\n", k,
                    se_sum[k] / SEEDS, sd[k]);
            fail();
        }
    }
    /* And the mean of the estimates sits on the truth within 3 standard errors of a mean. */
    assert_true(fabs(mean[0] - log(120.0)) < 3.0 * sd[0] / sqrt(SEEDS));
    assert_true(fabs(mean[1] - log(1.4)) < 3.0 * sd[1] / sqrt(SEEDS));
    assert_true(fabs(mean[2] - log(10.0)) < 3.0 * sd[2] / sqrt(SEEDS));
}

static void test_fit_duty_log_drives_open_loop(void **state)
{
    tp_templog lg;
    fitting f;
    (void)state;
    /* The log comes from the PID plate; the config to calibrate has an on-off controller at
     * another setpoint. With the duty logged, the heater follows the log and the controller
     * plays no part, so the truth is found; run by the on-off controller the model would heat
     * to 60 degC instead of 80 degC. */
    synth(plate_yaml, truth2, 2, 0.2, 21, 1, &lg);
    assert_int_equal(fit(&f, plate_other_pid_yaml, "heater.power,losses.convection_scale", &lg, 3),
                     TP_OK);
    assert_int_equal(f.res.drive, TP_FIT_BY_DUTY);
    assert_within_se(&f.params[0], 120.0, 3.0);
    assert_within_se(&f.params[1], 1.4, 3.0);
    fit_clear(&f);
    tp_templog_clear(&lg);
}

static void test_fit_controller_log_runs_the_controller(void **state)
{
    tp_templog lg;
    fitting f;
    (void)state;
    /* No duty column: the configured PID runs in every model run, as it did in the log. */
    synth(plate_yaml, truth2, 2, 0.2, 31, 0, &lg);
    assert_int_equal(lg.drive_kind, TP_TEMPLOG_DRIVE_NONE);
    assert_int_equal(fit(&f, plate_yaml, "heater.power,losses.convection_scale", &lg, 3), TP_OK);
    assert_int_equal(f.res.drive, TP_FIT_BY_CONTROLLER);
    assert_within_se(&f.params[0], 120.0, 3.0);
    assert_within_se(&f.params[1], 1.4, 3.0);
    fit_clear(&f);
    tp_templog_clear(&lg);
    /* The same log with the on-off controller of the other config cannot be matched: the fit
     * ends with residuals far above the 0.2 K noise (the model holds 60 degC, the log 80). */
    synth(plate_yaml, truth2, 2, 0.2, 31, 0, &lg);
    assert_int_equal(fit(&f, plate_other_pid_yaml, "losses.convection_scale", &lg, 1), TP_OK);
    assert_true(f.res.rms > 2.0);
    fit_clear(&f);
    tp_templog_clear(&lg);
}

static void test_fit_power_log_and_unidentifiable_parameter(void **state)
{
    tp_templog lg;
    fitting f;
    (void)state;
    /* With the delivered power logged, the model's heater follows it: the losses are found,
     * and heater.power cannot change any model run, so its standard error is undetermined and
     * it is flagged (the log cannot depend on it). */
    synth(plate_yaml, truth2, 2, 0.2, 41, 2, &lg);
    assert_int_equal(lg.drive_kind, TP_TEMPLOG_DRIVE_POWER);
    /* The config's on-off controller (60 degC) would give another run: the log must drive. */
    assert_int_equal(fit(&f, plate_other_pid_yaml, "losses.convection_scale,heater.power", &lg, 1),
                     TP_OK);
    assert_int_equal(f.res.drive, TP_FIT_BY_POWER);
    assert_within_se(&f.params[0], 1.4, 3.0);
    assert_false(f.params[0].weak);
    assert_true(f.params[1].weak);
    assert_true(isinf(f.params[1].se));
    assert_int_equal(f.res.rank, 1);
    fit_clear(&f);
    tp_templog_clear(&lg);
}

static void test_fit_strongly_correlated_pair_flagged(void **state)
{
    tp_templog lg;
    fitting f;
    (void)state;
    /* Convection and radiation both scale a loss to the room that grows with the plate's
     * temperature; over one warm-up their effects differ only by the curvature of T^4 against
     * the convection law, so the pair is nearly interchangeable (correlation well beyond 0.95)
     * and both are flagged. */
    synth(plate_yaml, truth2, 2, 0.2, 51, 1, &lg);
    assert_int_equal(fit(&f, plate_yaml, "losses.convection_scale,losses.radiation_scale", &lg, 1),
                     TP_OK);
    assert_true(fabs(f.res.corr[1]) > TP_FIT_CORR_MAX);
    assert_true(f.params[0].weak);
    assert_true(f.params[1].weak);
    fit_clear(&f);
    tp_templog_clear(&lg);
}

/* ---- --free -------------------------------------------------------------------------------- */

static void test_fit_parse_free_bounds_and_errors(void **state)
{
    tp_yamltree *doc = NULL;
    tp_description desc;
    tp_fit_param q[TP_FIT_MAX_PARAMS];
    tp_diag d;
    int n = 0;
    (void)state;
    load(plate_yaml, NULL, 0, &doc, &desc);
    tp_diag_init(&d, NULL);
    assert_int_equal(tp_fit_parse_free("heater.power,room.temperature", &desc, q, &n, 8, &d),
                     TP_OK);
    assert_int_equal(tp_fit_parse_free("sensor.offset", &desc, q, &n, 8, &d), TP_OK);
    assert_int_equal(tp_fit_parse_free("bed.top.emissivity", &desc, q, &n, 8, &d), TP_OK);
    assert_int_equal(tp_fit_parse_free("bed.layers.plate.contact=0.5 kW/(m2.K):5e4 W/(m2.K)", &desc,
                                       q, &n, 8, &d),
                     TP_OK);
    assert_int_equal(n, 5);
    /* Default bounds (docs/fit.md): 150 W / 5 = 30 W to 150 W x 5 = 750 W, log-scaled. */
    assert_true(fabs(q[0].lo - 30.0) < 1e-12 && fabs(q[0].hi - 750.0) < 1e-12);
    assert_int_equal(q[0].scale, TP_FIT_LOG);
    /* 20 degC = 293.15 K +- 20 K, linear. */
    assert_true(fabs(q[1].lo - 273.15) < 1e-9 && fabs(q[1].hi - 313.15) < 1e-9);
    assert_int_equal(q[1].scale, TP_FIT_LINEAR);
    /* The offset defaults to 0 K: -10 K .. +10 K, linear. */
    assert_true(fabs(q[2].lo + 10.0) < 1e-12 && fabs(q[2].hi - 10.0) < 1e-12);
    /* Emissivity: 0.02 .. 1. */
    assert_true(fabs(q[3].lo - 0.02) < 1e-12 && fabs(q[3].hi - 1.0) < 1e-12);
    /* Given bounds with units: 0.5 kW/(m2.K) = 500 W/(m2.K). */
    assert_true(fabs(q[4].lo - 500.0) < 1e-9 && fabs(q[4].hi - 5.0e4) < 1e-6);
    assert_true(q[4].user_bounds);
    assert_true(fabs(q[4].start - 3000.0) < 1e-9);

    n = 0;
    assert_int_equal(tp_fit_parse_free("heater.pwr", &desc, q, &n, 8, &d), TP_ERR_USAGE);
    assert_non_null(strstr(d.log, "heater.pwr: not a numeric key of this config"));
    assert_int_equal(tp_fit_parse_free("heater.power=400W:100W", &desc, q, &n, 8, &d),
                     TP_ERR_USAGE);
    assert_non_null(strstr(d.log, "the bounds are empty or reversed"));
    assert_int_equal(tp_fit_parse_free("heater.power=100W", &desc, q, &n, 8, &d), TP_ERR_USAGE);
    assert_non_null(strstr(d.log, "bounds need a colon"));
    assert_int_equal(tp_fit_parse_free("heater.power=1m:2m", &desc, q, &n, 8, &d), TP_ERR_USAGE);
    assert_non_null(strstr(d.log, "bad bound"));
    assert_int_equal(tp_fit_parse_free("run.step", &desc, q, &n, 8, &d), TP_ERR_USAGE);
    assert_non_null(strstr(d.log, "run settings are numerical choices"));
    assert_int_equal(tp_fit_parse_free("heater.power,heater.power", &desc, q, &n, 8, &d),
                     TP_ERR_USAGE);
    assert_non_null(strstr(d.log, "heater.power: given twice"));
    /* The config gives heater.power, so heater.supply is unset: no default bounds. */
    assert_int_equal(tp_fit_parse_free("heater.supply", &desc, q, &n, 8, &d), TP_ERR_USAGE);
    assert_non_null(strstr(d.log, "does not set this key"));
    assert_int_equal(n, 0);
    tp_config_clear(&desc);
    tp_yamltree_destroy(&doc);
}

static void test_fit_warns_when_log_starts_warm(void **state)
{
    static const char *const warm[] = {"room.temperature=35 degC"};
    tp_templog lg;
    fitting f;
    tp_diag d;
    (void)state;
    /* A log that starts at 35 degC against a model starting at the 20 degC room. */
    synth(plate_yaml, warm, 1, 0.1, 3, 1, &lg);
    memset(&f, 0, sizeof f);
    load(plate_yaml, NULL, 0, &f.doc, &f.desc);
    tp_diag_init(&d, NULL);
    assert_int_equal(tp_fit_parse_free("losses.convection_scale", &f.desc, f.params, &f.n, 8, &d),
                     TP_OK);
    f.pb = (tp_fit_problem){&f.desc, f.doc, &lg, f.params, f.n, 1};
    assert_int_equal(tp_fit_run(&f.pb, &f.res, &d), TP_OK);
    assert_non_null(strstr(d.log, "degC but the model starts at 20.0 degC"));
    assert_non_null(strstr(d.log, "warning: the log starts at 3"));
    fit_clear(&f);
    tp_templog_clear(&lg);
}

/* ---- the command line and the demo log ----------------------------------------------------- */

#define DEMO_CONFIG TP_SOURCE_DIR "/configs/workshop-bed-24v.yaml"
#define DEMO_LOG TP_SOURCE_DIR "/configs/workshop-bed-24v-log.csv"

/* The true values behind the demo log (docs/fit.md). */
static const char *const demo_truth[] = {"heater.resistance=2.6 ohm", "losses.convection_scale=1.3",
                                         "sensor.time_constant=11 s"};
#define DEMO_SIGMA 0.15     /* K, noise on the demo log's reading */
#define DEMO_SEED 20240607u /* the demo log's noise seed */

static const char *demo_preamble =
    "# SYNTHETIC LOG - not a measurement. Generated by tepid's own model from\n"
    "# configs/workshop-bed-24v.yaml with heater.resistance = 2.6 ohm,\n"
    "# losses.convection_scale = 1.3 and sensor.time_constant = 11 s (the config says 2.4 ohm,\n"
    "# 1 and 8 s), the PID controller running, plus Gaussian noise (sigma 0.15 K, seed 20240607)\n"
    "# on the reading. Regenerate with (docs/fit.md):\n"
    "#   TEPID_WRITE_DEMO_LOG=$PWD/configs/workshop-bed-24v-log.csv ./build/tests/test_fit\n";

static void test_fit_demo_log_matches_its_generator(void **state)
{
    /* A golden-file check: the shipped demo log is what this generator writes (up to the last
     * printed digit, since optimised and debug builds may round differently). Set
     * TEPID_WRITE_DEMO_LOG to a path to write the log there instead. */
    const char *out = getenv("TEPID_WRITE_DEMO_LOG");
    char *config = tp_read_file(DEMO_CONFIG), *text;
    (void)state;
    assert_non_null(config);
    text = synth_text(config, demo_truth, 3, DEMO_SIGMA, DEMO_SEED, 1, 2, demo_preamble);
    free(config);
    if (out && *out) {
        FILE *fp = fopen(out, "wb");
        assert_non_null(fp);
        fputs(text, fp);
        assert_int_equal(fclose(fp), 0);
    } else {
        tp_templog shipped, now;
        tp_diag d;
        char *file = tp_read_file(DEMO_LOG);
        long i, differ = 0;
        assert_non_null(file);
        tp_diag_init(&d, stderr);
        assert_int_equal(tp_templog_parse("shipped", file, strlen(file), NULL, &shipped, &d),
                         TP_OK);
        assert_int_equal(tp_templog_parse("now", text, strlen(text), NULL, &now, &d), TP_OK);
        assert_int_equal(shipped.n, now.n);
        for (i = 0; i < now.n; i++)
            differ += fabs(shipped.reading[i] - now.reading[i]) > 0.011 ||
                      fabs(shipped.drive[i] - now.drive[i]) > 0.0011;
        /* A reading may round the other way in a different build; a handful may differ. */
        assert_true(differ <= now.n / 100);
        tp_templog_clear(&shipped);
        tp_templog_clear(&now);
        free(file);
    }
    free(text);
}

static void test_fit_command_line_demo(void **state)
{
    tp_scratch sc;
    char cfg[TP_TEST_PATH], json[TP_TEST_PATH], csv[TP_TEST_PATH];
    char *text;
    cJSON *root, *params, *p;
    tp_yamltree *doc = NULL;
    tp_description desc;
    tp_diag d;
    static const double demo_values[3] = {2.6, 1.3, 11.0};
    int i;
    (void)state;
    tp_scratch_create(&sc);
    tp_scratch_path(&sc, "calibrated.yaml", cfg, sizeof cfg);
    tp_scratch_path(&sc, "fit.json", json, sizeof json);
    tp_scratch_path(&sc, "fit.csv", csv, sizeof csv);
    {
        const char *args[] = {"fit", DEMO_CONFIG, "--log", DEMO_LOG, "--free", "heater.resistance",
                              "--free", "losses.convection_scale,sensor.time_constant",
                              "--write-config", cfg, "--json", json, "--csv", csv, NULL};
        assert_int_equal(tp_run_status(&sc, args), 0);
    }
    /* The estimates are within 3 standard errors of the values the demo log was made with. */
    root = tp_read_json(json);
    params = cJSON_GetObjectItem(root, "parameters");
    assert_int_equal(cJSON_GetArraySize(params), 3);
    for (i = 0; i < 3; i++) {
        double v, se;
        p = cJSON_GetArrayItem(params, i);
        v = cJSON_GetObjectItem(p, "value")->valuedouble;
        se = cJSON_GetObjectItem(p, "standard_error")->valuedouble;
        if (!(fabs(v - demo_values[i]) < 3.0 * se)) {
            fprintf(stderr, "parameter %d: %g +- %g, true %g\n", i, v, se, demo_values[i]);
            fail();
        }
    }
    cJSON_Delete(root);
    /* The written config reads back with the fitted values in the file's own units. */
    text = tp_read_file(cfg);
    assert_non_null(text);
    assert_non_null(strstr(text, "# Calibrated with 'tepid fit' against"));
    assert_non_null(strstr(text, "\nlosses: {convection_scale: "));
    assert_null(strstr(text, "resistance: 2.4 ohm, tempco")); /* replaced in place */
    free(text);
    tp_diag_init(&d, stderr);
    assert_int_equal(tp_config_load(cfg, NULL, 0, &doc, &desc, &d), TP_OK);
    assert_true(fabs(desc.heater.resistance - 2.6) < 0.01);
    assert_true(fabs(desc.losses.convection_scale - 1.3) < 0.01);
    assert_true(fabs(desc.sensor.time_constant - 11.0) < 0.3);
    tp_config_clear(&desc);
    tp_yamltree_destroy(&doc);
    /* Refusals: an output onto the log or the config, a missing --log or --free. */
    {
        const char *args[] = {"fit",    DEMO_CONFIG,         "--log",          DEMO_LOG,
                              "--free", "heater.resistance", "--write-config", DEMO_LOG,
                              NULL};
        assert_int_equal(tp_run_status(&sc, args), 2);
    }
    {
        const char *args[] = {"fit",    DEMO_CONFIG,         "--log",          DEMO_LOG,
                              "--free", "heater.resistance", "--write-config", DEMO_CONFIG,
                              NULL};
        assert_int_equal(tp_run_status(&sc, args), 2);
    }
    {
        const char *args[] = {"fit", DEMO_CONFIG, "--free", "heater.resistance", NULL};
        assert_int_equal(tp_run_status(&sc, args), 2);
    }
    {
        const char *args[] = {"fit", DEMO_CONFIG, "--log", DEMO_LOG, NULL};
        assert_int_equal(tp_run_status(&sc, args), 2);
    }
    tp_scratch_destroy(&sc);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_fit_first_order_against_closed_form),
        cmocka_unit_test(test_fit_two_parameters_recovered),
        cmocka_unit_test(test_fit_rated_power_recovered),
        cmocka_unit_test(test_fit_three_parameters_recovered),
        cmocka_unit_test(test_fit_standard_errors_match_scatter),
        cmocka_unit_test(test_fit_duty_log_drives_open_loop),
        cmocka_unit_test(test_fit_controller_log_runs_the_controller),
        cmocka_unit_test(test_fit_power_log_and_unidentifiable_parameter),
        cmocka_unit_test(test_fit_strongly_correlated_pair_flagged),
        cmocka_unit_test(test_fit_parse_free_bounds_and_errors),
        cmocka_unit_test(test_fit_warns_when_log_starts_warm),
        cmocka_unit_test(test_fit_demo_log_matches_its_generator),
        cmocka_unit_test(test_fit_command_line_demo),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}

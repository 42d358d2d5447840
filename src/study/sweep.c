/* Sweeps and tolerance studies.
 *
 * A plan is a list of numeric config keys, each with either grid values (--vary) or a
 * distribution (--spread). Point i of a grid takes axis values by mixed-radix decomposition of
 * i; sample i of a spread draws every parameter from a counter-based stream: the draw is a hash
 * of (seed, i, parameter), so it does not depend on which thread runs the sample, in which
 * order, or how many threads there are. Workers take point indices from a shared atomic
 * counter, each with its own description copy and its own network per point (networks hold
 * scratch buffers and are not shared), and write only their points' result slots. */
#include "sweep.h"

#include "program.h"

#include <float.h>
#include <math.h>
#include <pthread.h>
#include <stdatomic.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>
#include <unistd.h>

#include "assemble.h"
#include "config.h"
#include "gsllib.h"
#include "tailfit.h"
#include "network.h"
#include "warmup.h"

#define GOLDEN_GAMMA 0x9e3779b97f4a7c15ULL /* SplitMix64 increment, 2^64 / golden ratio */
#define FNV_OFFSET 14695981039346656037ULL /* FNV-1a 64-bit offset basis (from memory) */
#define FNV_PRIME 1099511628211ULL         /* FNV-1a 64-bit prime (from memory) */
#define GRID_EPS 1e-9               /* relative slack when a range's last step lands on TO, - */
#define TWO_PI 6.283185307179586477 /* 2 pi, - */
#define POLL_NS 10000000L           /* ns between checks of the waiting thread */
#define SOBOL_BITS 30                /* bits of GSL's Sobol integers (SOBOL_BIT_COUNT in GSL) */
#define LHS_SALT 0x4c48532d7065726dULL   /* separates the LHS permutations' streams, any constant */
#define OWEN_SALT 0x4f77656e2d736372ULL  /* separates the scrambles' streams, any constant */
#define JITTER_SALT 0x6a69747465722d31ULL /* separates the in-cell uniforms, any constant */

/* ---- plans -------------------------------------------------------------------------------- */

void tp_sweep_plan_init(tp_sweep_plan *plan, tp_sweep_mode mode)
{
    memset(plan, 0, sizeof *plan);
    plan->mode = mode;
    plan->seed = 1;
    plan->design = TP_DESIGN_RANDOM;
    plan->replicates = 1;
    plan->n_metrics = TP_MET_SWEPT;
}

void tp_sweep_plan_metrics(tp_sweep_plan *plan, const tp_description *desc)
{
    plan->n_metrics = tp_metricdef_swept_count(tp_description_mode_holds(desc->control.mode)
                                                   ? (int)desc->control.n_schedule
                                                   : 0);
}

void tp_sweep_plan_clear(tp_sweep_plan *plan)
{
    int k;
    for (k = 0; k < plan->n_params; k++)
        free(plan->params[k].values);
    free(plan->table);
    tp_tailfit_memo_free(plan->memo);
    tp_sweep_plan_init(plan, plan->mode);
}

/* Copy `text` without surrounding blanks into buf; 0 on success, -1 when it does not fit. */
static int trimmed(const char *text, size_t len, char *buf, size_t size)
{
    while (len > 0 && (*text == ' ' || *text == '\t')) {
        text++;
        len--;
    }
    while (len > 0 && (text[len - 1] == ' ' || text[len - 1] == '\t'))
        len--;
    if (len >= size)
        return -1;
    memcpy(buf, text, len);
    buf[len] = '\0';
    return 0;
}

/* Split "key=spec"; check the key names a number that is set in desc and is not yet in the
 * plan. `opt` names the option for messages. */
static tp_status parse_key(const tp_sweep_plan *plan, const tp_description *desc, const char *text,
                           const char *opt, tp_sweep_param *p, const char **spec, tp_diag *d)
{
    const char *eq = strchr(text, '=');
    tp_loc loc = {opt, 1, 1};
    int k;
    memset(p, 0, sizeof *p);
    if (!eq || trimmed(text, (size_t)(eq - text), p->path, sizeof p->path) != 0 || !p->path[0]) {
        tp_diag_error(d, loc, NULL, "write KEY=VALUES, e.g. heater.power=150W:400W:25W",
                      "expected a key path and '=' in '%s'", text);
        return TP_ERR_USAGE;
    }
    if (tp_config_key_dim(desc, p->path, opt, &p->dim, d) != TP_OK)
        return TP_ERR_USAGE;
    if (tp_config_get(desc, p->path, &p->nominal) != TP_OK || !isfinite(p->nominal)) {
        tp_diag_error(d, loc, p->path,
                      "give it a value in the file (or with --set) first: varying a key the "
                      "file leaves out could change what the file describes",
                      "the config does not set this key");
        return TP_ERR_USAGE;
    }
    for (k = 0; k < plan->n_params; k++)
        if (strcmp(plan->params[k].path, p->path) == 0) {
            tp_diag_error(d, loc, p->path, "give each key once", "the key is varied twice");
            return TP_ERR_USAGE;
        }
    *spec = eq + 1;
    return TP_OK;
}

/* Parse one quantity of dimension dim from text[0..len); its unit text into `unit`
 * (TP_SWEEP_UNIT_MAX bytes) unless NULL. */
static tp_status parse_qty(const char *text, size_t len, tp_dim dim, double *out, const char *opt,
                           const char *path, char *unit, tp_diag *d)
{
    char buf[128], msg[256];
    const char *hint = NULL;
    tp_loc loc = {opt, 1, 1};
    if (trimmed(text, len, buf, sizeof buf) != 0 || !buf[0]) {
        tp_diag_error(d, loc, path, tp_units_example(dim), "a value is missing or too long");
        return TP_ERR_USAGE;
    }
    if (tp_units_parse(buf, dim, out, msg, sizeof msg, &hint) != TP_OK) {
        tp_diag_error(d, loc, path, hint, "%s", msg);
        return TP_ERR_USAGE;
    }
    if (unit)
        tp_units_unit_text(buf, unit, TP_SWEEP_UNIT_MAX);
    return TP_OK;
}

static tp_status check_value(const tp_description *desc, const tp_sweep_param *p, double v,
                             const char *opt, tp_diag *d)
{
    char msg[256];
    if (tp_config_check(desc, p->path, v, msg, sizeof msg) != TP_OK) {
        tp_diag_error(d, (tp_loc){opt, 1, 1}, NULL, "keep the range inside what the key allows",
                      "%s", msg);
        return TP_ERR_USAGE;
    }
    return TP_OK;
}

/* Split spec at `sep` into at most max pieces (start, length). Returns the piece count. */
static int split(const char *spec, char sep, const char **start, size_t *len, int max)
{
    int n = 0;
    const char *s = spec;
    for (;;) {
        const char *e = strchr(s, sep);
        if (n == max)
            return max + 1;
        start[n] = s;
        len[n] = e ? (size_t)(e - s) : strlen(s);
        n++;
        if (!e)
            return n;
        s = e + 1;
    }
}

#define LIST_MAX 4096 /* values in one A,B,C list */

tp_status tp_sweep_add_vary(tp_sweep_plan *plan, const tp_description *desc, const char *text,
                            tp_diag *d)
{
    tp_sweep_param p;
    const char *spec, *start[LIST_MAX + 1];
    size_t len[LIST_MAX + 1];
    long n, i, total = 1;
    int k, pieces;
    tp_loc loc = {"--vary", 1, 1};
    tp_status st;
    if (plan->n_params >= TP_SWEEP_MAX_AXES) {
        tp_diag_error(d, loc, NULL, "a grid has one or two axes", "too many --vary options");
        return TP_ERR_USAGE;
    }
    st = parse_key(plan, desc, text, "--vary", &p, &spec, d);
    if (st != TP_OK)
        return st;
    if (strchr(spec, ':')) {
        double from, to, step, span;
        tp_dim step_dim = p.dim == TP_DIM_TEMPERATURE ? TP_DIM_INTERVAL : p.dim;
        if (split(spec, ':', start, len, 3) != 3) {
            tp_diag_error(d, loc, p.path, "FROM:TO:STEP, e.g. heater.power=150W:400W:25W",
                          "a range has three parts");
            return TP_ERR_USAGE;
        }
        if (parse_qty(start[0], len[0], p.dim, &from, "--vary", p.path, p.unit, d) != TP_OK ||
            parse_qty(start[1], len[1], p.dim, &to, "--vary", p.path, NULL, d) != TP_OK ||
            parse_qty(start[2], len[2], step_dim, &step, "--vary", p.path, NULL, d) != TP_OK)
            return TP_ERR_USAGE;
        span = (to - from) / step;
        if (step == 0.0 || !(span >= -GRID_EPS)) {
            tp_diag_error(d, loc, p.path, "STEP must lead from FROM towards TO",
                          "the range never reaches TO");
            return TP_ERR_USAGE;
        }
        if (!(span < (double)TP_SWEEP_MAX_POINTS)) {
            tp_diag_error(d, loc, p.path, "use a larger STEP", "the range has more than %d points",
                          TP_SWEEP_MAX_POINTS);
            return TP_ERR_USAGE;
        }
        n = (long)floor(span * (1.0 + GRID_EPS) + GRID_EPS) + 1;
        if (n < 1)
            n = 1; /* TO a rounding error short of FROM: the single value FROM */
        p.values = malloc((size_t)n * sizeof *p.values);
        if (!p.values)
            return TP_ERR_NOMEM;
        /* From FROM by whole steps, never by accumulation (no drift); a last point within
         * rounding of TO is TO itself. */
        for (i = 0; i < n; i++)
            p.values[i] = from + (double)i * step;
        if (fabs(p.values[n - 1] - to) <= GRID_EPS * fabs(step) * (double)n)
            p.values[n - 1] = to;
    } else {
        pieces = split(spec, ',', start, len, LIST_MAX);
        if (pieces > LIST_MAX) {
            tp_diag_error(d, loc, p.path, "use FROM:TO:STEP", "more than %d values", LIST_MAX);
            return TP_ERR_USAGE;
        }
        n = pieces;
        p.values = malloc((size_t)n * sizeof *p.values);
        if (!p.values)
            return TP_ERR_NOMEM;
        for (i = 0; i < n; i++)
            if (parse_qty(start[i], len[i], p.dim, &p.values[i], "--vary", p.path,
                          i == 0 ? p.unit : NULL, d) != TP_OK) {
                free(p.values);
                return TP_ERR_USAGE;
            }
    }
    p.n_values = n;
    for (i = 0; i < n; i++)
        if (check_value(desc, &p, p.values[i], "--vary", d) != TP_OK) {
            free(p.values);
            return TP_ERR_USAGE;
        }
    for (k = 0; k < plan->n_params; k++)
        total *= plan->params[k].n_values;
    if (total * n > TP_SWEEP_MAX_POINTS) {
        tp_diag_error(d, loc, p.path, "use fewer values", "the grid has more than %d points",
                      TP_SWEEP_MAX_POINTS);
        free(p.values);
        return TP_ERR_USAGE;
    }
    plan->params[plan->n_params++] = p;
    return TP_OK;
}

/* A spread number: "10%" (relative, as a fraction) or a quantity of `dim` (its unit text into
 * `unit` unless NULL). */
static tp_status spread_number(const char *text, size_t len, tp_dim dim, double *v, int *rel,
                               const char *path, char *unit, tp_diag *d)
{
    char buf[128];
    if (trimmed(text, len, buf, sizeof buf) == 0 && buf[0] && buf[strlen(buf) - 1] == '%') {
        buf[strlen(buf) - 1] = '\0';
        if (tp_units_parse_double(buf, v) != 0) {
            tp_diag_error(d, (tp_loc){"--spread", 1, 1}, path, "e.g. 10%", "bad percentage '%s%%'",
                          buf);
            return TP_ERR_USAGE;
        }
        *v /= 100.0;
        *rel = 1;
        return TP_OK;
    }
    *rel = 0;
    return parse_qty(text, len, dim, v, "--spread", path, unit, d);
}

tp_status tp_sweep_add_spread(tp_sweep_plan *plan, const tp_description *desc, const char *text,
                              tp_diag *d)
{
    tp_sweep_param p;
    const char *spec, *start[4];
    size_t len[4];
    int pieces, rel_a = 0, rel_b = 0;
    tp_loc loc = {"--spread", 1, 1};
    tp_status st;
    if (plan->n_params >= TP_SWEEP_MAX_PARAMS) {
        tp_diag_error(d, loc, NULL, NULL, "more than %d --spread options", TP_SWEEP_MAX_PARAMS);
        return TP_ERR_USAGE;
    }
    st = parse_key(plan, desc, text, "--spread", &p, &spec, d);
    if (st != TP_OK)
        return st;
    pieces = split(spec, ':', start, len, 3);
    if (pieces == 2 && len[0] == 6 && strncmp(start[0], "normal", 6) == 0) {
        tp_dim dim = p.dim == TP_DIM_TEMPERATURE ? TP_DIM_INTERVAL : p.dim;
        p.kind = TP_SPREAD_NORMAL;
        /* A temperature's SIGMA is an interval ("2K"): not the unit to show values in. */
        if (spread_number(start[1], len[1], dim, &p.sigma, &p.relative, p.path,
                          p.dim == TP_DIM_TEMPERATURE ? NULL : p.unit, d) != TP_OK)
            return TP_ERR_USAGE;
        if (!(p.sigma > 0)) {
            tp_diag_error(d, loc, p.path, "e.g. normal:5% or normal:0.1 ohm",
                          "the standard deviation must be above zero");
            return TP_ERR_USAGE;
        }
    } else if (pieces == 3 && len[0] == 7 && strncmp(start[0], "uniform", 7) == 0) {
        p.kind = TP_SPREAD_UNIFORM;
        if (spread_number(start[1], len[1], p.dim, &p.low, &rel_a, p.path, p.unit, d) != TP_OK ||
            spread_number(start[2], len[2], p.dim, &p.high, &rel_b, p.path, NULL, d) != TP_OK)
            return TP_ERR_USAGE;
        if (rel_a != rel_b) {
            tp_diag_error(d, loc, p.path,
                          "both in % of the config's value (-10%:10%) or both with units "
                          "(16degC:28degC)",
                          "mixed relative and absolute bounds");
            return TP_ERR_USAGE;
        }
        p.relative = rel_a;
        if (!(p.low < p.high)) {
            tp_diag_error(d, loc, p.path, "give LOW before HIGH", "LOW is not below HIGH");
            return TP_ERR_USAGE;
        }
    } else {
        tp_diag_error(d, loc, p.path,
                      "normal:SIGMA or uniform:LOW:HIGH, e.g. normal:5% or uniform:16degC:28degC",
                      "unknown distribution '%s'", spec);
        return TP_ERR_USAGE;
    }
    if (p.relative && p.dim == TP_DIM_TEMPERATURE) {
        tp_diag_error(d, loc, p.path,
                      "give an absolute temperature spread, e.g. normal:2K or "
                      "uniform:16degC:28degC",
                      "a percentage of an absolute temperature has no meaning");
        return TP_ERR_USAGE;
    }
    if (p.relative && p.nominal == 0.0) {
        tp_diag_error(d, loc, p.path, "give the spread with units", "a percentage of zero is zero");
        return TP_ERR_USAGE;
    }
    if (p.kind == TP_SPREAD_UNIFORM) {
        double lo = p.relative ? p.nominal + p.low * fabs(p.nominal) : p.low;
        double hi = p.relative ? p.nominal + p.high * fabs(p.nominal) : p.high;
        if (check_value(desc, &p, lo, "--spread", d) != TP_OK ||
            check_value(desc, &p, hi, "--spread", d) != TP_OK)
            return TP_ERR_USAGE;
    }
    plan->params[plan->n_params++] = p;
    return TP_OK;
}

long tp_sweep_count(const tp_sweep_plan *plan)
{
    long n = 1;
    int k;
    if (plan->mode == TP_SWEEP_SPREAD)
        return plan->n_samples;
    if (plan->n_params == 0)
        return 0;
    for (k = 0; k < plan->n_params; k++)
        n *= plan->params[k].n_values;
    return n;
}

long tp_sweep_axis_index(const tp_sweep_plan *plan, long point, int k)
{
    int j;
    for (j = plan->n_params - 1; j > k; j--)
        point /= plan->params[j].n_values;
    return point % plan->params[k].n_values;
}

/* ---- random streams ----------------------------------------------------------------------- */

/* The SplitMix64 output function (Stafford's "Mix13" variant of the MurmurHash3 finaliser). */
static uint64_t mix64(uint64_t z)
{
    z = (z ^ (z >> 30)) * 0xbf58476d1ce4e5b9ULL;
    z = (z ^ (z >> 27)) * 0x94d049bb133111ebULL;
    return z ^ (z >> 31);
}

uint64_t tp_sweep_splitmix64(uint64_t *state)
{
    *state += GOLDEN_GAMMA;
    return mix64(*state);
}

uint64_t tp_sweep_hash(uint64_t seed, uint64_t sample, uint64_t stream)
{
    /* Each coordinate enters through its own Weyl step and a full mix, so neighbouring seeds,
     * samples and streams give unrelated outputs. */
    uint64_t h = mix64(seed + GOLDEN_GAMMA);
    h = mix64(h + (sample + 1) * GOLDEN_GAMMA);
    return mix64(h ^ mix64((stream + 1) * GOLDEN_GAMMA));
}

double tp_sweep_unit(uint64_t bits)
{
    /* 52 bits, not 53: k + 0.5 must be exact, and for k < 2^52 it is (doubles in
     * [2^51, 2^52) are spaced 0.5), so the result never rounds to 1. */
    return ((double)(bits >> 12) + 0.5) * 0x1.0p-52;
}

double tp_sweep_box_muller(double u1, double u2)
{
    return sqrt(-2.0 * log(u1)) * cos(TWO_PI * u2);
}

/* A parameter's stream: FNV-1a of its key path, so a parameter draws the same numbers
 * whatever other parameters are spread and in whatever order they are given. */
static uint64_t path_stream(const char *path)
{
    uint64_t h = FNV_OFFSET;
    for (; *path; path++) {
        h ^= (unsigned char)*path;
        h *= FNV_PRIME;
    }
    return h & ~1ULL; /* even: draw 0 and draw 1 of the Box-Muller pair */
}

/* The uniform number in (0, 1) that places sample `point` of parameter k: a hash for random
 * draws; for LHS the sample's stratum plus a uniform position inside it; for Sobol the
 * replicate's scrambled point plus a uniform position inside its 2^-30 cell. */
static double design_unit(const tp_sweep_plan *plan, long point, int k, uint64_t stream)
{
    uint64_t i = (uint64_t)point;
    double v;
    if (plan->design == TP_DESIGN_RANDOM || !plan->table)
        return tp_sweep_unit(tp_sweep_hash(plan->seed, i, stream));
    v = tp_sweep_unit(tp_sweep_hash(plan->seed ^ JITTER_SALT, i, stream));
    if (plan->design == TP_DESIGN_LHS)
        return ((double)plan->table[(size_t)point * (size_t)plan->n_params + (size_t)k] + v) /
               (double)plan->rep_size;
    {
        long r = point / plan->rep_size, j = point % plan->rep_size;
        uint32_t x = plan->table[(size_t)j * (size_t)plan->n_params + (size_t)k];
        uint64_t key = tp_sweep_hash(plan->seed ^ OWEN_SALT, (uint64_t)r, stream);
        return ((double)tp_sweep_owen(x, key) + v) * 0x1.0p-30;
    }
}

double tp_sweep_value(const tp_sweep_plan *plan, long point, int k)
{
    const tp_sweep_param *p = &plan->params[k];
    if (plan->mode == TP_SWEEP_GRID)
        return p->values[tp_sweep_axis_index(plan, point, k)];
    {
        uint64_t s = path_stream(p->path);
        double u1 = design_unit(plan, point, k, s);
        double scale = p->relative ? fabs(p->nominal) : 1.0;
        if (p->kind == TP_SPREAD_NORMAL) {
            double z;
            if (plan->design == TP_DESIGN_RANDOM) {
                double u2 = tp_sweep_unit(tp_sweep_hash(plan->seed, (uint64_t)point, s + 1));
                z = tp_sweep_box_muller(u1, u2);
            } else {
                /* One uniform per parameter keeps the stratum or the point's place: the
                 * inverse of the normal distribution function (GSL). */
                z = gsl_cdf_ugaussian_Pinv(u1);
            }
            return p->nominal + p->sigma * scale * z;
        } else {
            double lo = p->relative ? p->nominal + p->low * scale : p->low;
            double hi = p->relative ? p->nominal + p->high * scale : p->high;
            return lo + (hi - lo) * u1;
        }
    }
}

/* ---- designs ------------------------------------------------------------------------------ */

static const char *const design_names[] = {"random", "lhs", "sobol"};

int tp_sweep_design_find(const char *name)
{
    int k;
    for (k = 0; k < (int)(sizeof design_names / sizeof design_names[0]); k++)
        if (strcmp(name, design_names[k]) == 0)
            return k;
    return -1;
}

const char *tp_sweep_design_name(tp_sweep_design design)
{
    return design_names[design];
}

uint32_t tp_sweep_owen(uint32_t x, uint64_t key)
{
    uint32_t y = 0;
    int b;
    for (b = 0; b < SOBOL_BITS; b++) {
        /* The node of the scrambling tree: depth b and the b leading bits of x. */
        uint64_t node = ((uint64_t)1 << b) | (uint64_t)(x >> (SOBOL_BITS - b));
        uint32_t flip = (uint32_t)(mix64(key ^ mix64(node * GOLDEN_GAMMA)) >> 63);
        uint32_t bit = (x >> (SOBOL_BITS - 1 - b)) & 1u;
        y |= (bit ^ flip) << (SOBOL_BITS - 1 - b);
    }
    return y;
}

tp_status tp_sweep_sobol_points(long n, int dim, uint32_t *out)
{
    gsl_qrng *q;
    double v[TP_SWEEP_MAX_PARAMS];
    long j;
    int k;
    if (dim < 1 || dim > TP_SWEEP_MAX_PARAMS)
        return TP_ERR_USAGE;
    q = gsl_qrng_alloc(gsl_qrng_sobol, (unsigned)dim);
    if (!q)
        return TP_ERR_NOMEM;
    for (k = 0; k < dim && n > 0; k++)
        out[k] = 0; /* GSL starts after the origin; with it the first 2^m points form a net */
    for (j = 1; j < n; j++) {
        gsl_qrng_get(q, v);
        for (k = 0; k < dim; k++)
            out[(size_t)j * (size_t)dim + (size_t)k] = (uint32_t)ldexp(v[k], SOBOL_BITS);
    }
    gsl_qrng_free(q);
    return TP_OK;
}

/* The LHS table: for each replicate and parameter an independent random permutation of the
 * strata 0..m-1 (Fisher-Yates over a SplitMix64 stream of the seed, replicate and key path). */
static void lhs_table(tp_sweep_plan *plan)
{
    long m = plan->rep_size, r, j;
    int k, np = plan->n_params;
    for (r = 0; r < plan->replicates; r++)
        for (k = 0; k < np; k++) {
            uint64_t state = tp_sweep_hash(plan->seed ^ LHS_SALT, (uint64_t)r,
                                           path_stream(plan->params[k].path));
            uint32_t *col = plan->table + (size_t)(r * m) * (size_t)np + (size_t)k;
            for (j = 0; j < m; j++)
                col[(size_t)j * (size_t)np] = (uint32_t)j;
            for (j = m - 1; j > 0; j--) {
                /* Modulo bias below m / 2^64 < 1e-13: immaterial. */
                long t = (long)(tp_sweep_splitmix64(&state) % (uint64_t)(j + 1));
                uint32_t tmp = col[(size_t)j * (size_t)np];
                col[(size_t)j * (size_t)np] = col[(size_t)t * (size_t)np];
                col[(size_t)t * (size_t)np] = tmp;
            }
        }
}

tp_status tp_sweep_design_build(tp_sweep_plan *plan, tp_sweep_design design, long replicates,
                                tp_diag *d)
{
    size_t cells;
    free(plan->table);
    plan->table = NULL;
    tp_tailfit_memo_free(plan->memo);
    plan->memo = tp_tailfit_memo_new(); /* NULL (no memory) only costs time */
    plan->design = design;
    if (replicates < 1 || replicates > plan->n_samples || plan->n_samples % replicates != 0) {
        tp_diag_error(d, (tp_loc){"--replicates", 1, 1}, NULL,
                      "give --samples as a multiple of --replicates, e.g. --samples 1000 "
                      "--replicates 10",
                      "%ld replicates do not divide %ld samples", replicates, plan->n_samples);
        return TP_ERR_USAGE;
    }
    plan->replicates = replicates;
    plan->rep_size = plan->n_samples / replicates;
    if (design == TP_DESIGN_RANDOM || plan->n_params == 0)
        return TP_OK;
    cells = (size_t)(design == TP_DESIGN_LHS ? plan->n_samples : plan->rep_size) *
            (size_t)plan->n_params;
    plan->table = malloc(cells * sizeof *plan->table);
    if (!plan->table)
        return TP_ERR_NOMEM;
    if (design == TP_DESIGN_LHS) {
        lhs_table(plan);
        return TP_OK;
    }
    if (tp_sweep_sobol_points(plan->rep_size, plan->n_params, plan->table) != TP_OK) {
        free(plan->table);
        plan->table = NULL;
        return TP_ERR_NOMEM;
    }
    return TP_OK;
}

/* ---- statistics ---------------------------------------------------------------------------- */

void tp_sweep_mean_sd(const double *x, size_t n, double *mean, double *sd)
{
    size_t i;
    double sum = 0.0, ss = 0.0, m;
    if (n == 0) {
        *mean = TP_UNSET;
        *sd = TP_UNSET;
        return;
    }
    for (i = 0; i < n; i++)
        sum += x[i];
    m = sum / (double)n;
    for (i = 0; i < n; i++)
        ss += (x[i] - m) * (x[i] - m);
    *mean = m;
    *sd = n > 1 ? sqrt(ss / (double)(n - 1)) : 0.0;
}

double tp_sweep_quantile(const double *sorted, size_t n, double p)
{
    double h, f;
    size_t lo;
    if (n == 0)
        return TP_UNSET;
    p = fmin(fmax(p, 0.0), 1.0);
    h = (double)(n - 1) * p;
    f = floor(h);
    lo = (size_t)f;
    if (lo + 1 >= n)
        return sorted[n - 1];
    return sorted[lo] + (h - f) * (sorted[lo + 1] - sorted[lo]);
}

static int cmp_double(const void *a, const void *b)
{
    double x = *(const double *)a, y = *(const double *)b;
    return (x > y) - (x < y);
}

typedef struct ranked {
    double v;
    size_t i;
} ranked;

static int cmp_ranked(const void *a, const void *b)
{
    const ranked *x = a, *y = b;
    if (x->v != y->v)
        return (x->v > y->v) - (x->v < y->v);
    return (x->i > y->i) - (x->i < y->i); /* stable: equal values keep their order */
}

tp_status tp_sweep_ranks(const double *x, size_t n, double *rank)
{
    ranked *r = malloc((n > 0 ? n : 1) * sizeof *r);
    size_t i, j, k;
    if (!r)
        return TP_ERR_NOMEM;
    for (i = 0; i < n; i++)
        r[i] = (ranked){x[i], i};
    qsort(r, n, sizeof *r, cmp_ranked);
    for (i = 0; i < n; i = j) {
        double mean_rank;
        for (j = i + 1; j < n && r[j].v == r[i].v; j++)
            ;
        /* Positions i..j-1 (0-based) hold ranks i+1..j: their mean is (i + 1 + j) / 2. */
        mean_rank = 0.5 * (double)(i + 1 + j);
        for (k = i; k < j; k++)
            rank[r[k].i] = mean_rank;
    }
    free(r);
    return TP_OK;
}

double tp_sweep_spearman(const double *x, const double *y, size_t n)
{
    double *rx, *ry, mx, my, sxy = 0.0, sxx = 0.0, syy = 0.0, rho = TP_UNSET;
    size_t i;
    if (n < 2)
        return TP_UNSET;
    rx = malloc(2 * n * sizeof *rx);
    if (!rx)
        return TP_UNSET;
    ry = rx + n;
    if (tp_sweep_ranks(x, n, rx) == TP_OK && tp_sweep_ranks(y, n, ry) == TP_OK) {
        mx = 0.5 * (double)(n + 1); /* ranks 1..n always average (n + 1) / 2, ties or not */
        my = mx;
        for (i = 0; i < n; i++) {
            sxy += (rx[i] - mx) * (ry[i] - my);
            sxx += (rx[i] - mx) * (rx[i] - mx);
            syy += (ry[i] - my) * (ry[i] - my);
        }
        if (sxx > 0 && syy > 0)
            rho = sxy / sqrt(sxx * syy);
    }
    free(rx);
    return rho;
}

/* ---- confidence intervals ------------------------------------------------------------------ */

#define TAIL (0.5 * (1.0 - TP_SWEEP_LEVEL)) /* -, probability in each tail: 0.025 */

static const char *const stat_names[TP_STAT_COUNT] = {"mean", "sd", "p5", "p50", "p95"};
static const double stat_p[TP_STAT_COUNT] = {0, 0, 0.05, 0.50, 0.95};

static const char *const pct_names[] = {"order", "fitted"};

int tp_sweep_pct_find(const char *name)
{
    int k;
    for (k = 0; k < (int)(sizeof pct_names / sizeof pct_names[0]); k++)
        if (strcmp(name, pct_names[k]) == 0)
            return k;
    return -1;
}

const char *tp_sweep_pct_name(tp_sweep_pct pct)
{
    return pct_names[pct];
}

int tp_sweep_stat_find(const char *name)
{
    int k;
    for (k = 0; k < TP_STAT_COUNT; k++)
        if (strcmp(name, stat_names[k]) == 0)
            return k;
    return -1;
}

const char *tp_sweep_stat_name(int stat)
{
    return stat_names[stat];
}

/* The upper TAIL point of Student's t with dof degrees of freedom (GSL). */
static double t_quantile(double dof)
{
    return gsl_cdf_tdist_Qinv(TAIL, dof);
}

void tp_sweep_ci_mean(double m, double s, long n, double *lo, double *hi)
{
    double h;
    *lo = *hi = TP_UNSET;
    if (n < 2 || !isfinite(m) || !isfinite(s))
        return;
    h = t_quantile((double)(n - 1)) * s / sqrt((double)n);
    *lo = m - h;
    *hi = m + h;
}

void tp_sweep_ci_sd(double s, long n, double *lo, double *hi)
{
    double dof = (double)(n - 1);
    *lo = *hi = TP_UNSET;
    if (n < 2 || !isfinite(s))
        return;
    *lo = s * sqrt(dof / gsl_cdf_chisq_Qinv(TAIL, dof));
    *hi = s * sqrt(dof / gsl_cdf_chisq_Pinv(TAIL, dof));
}

/* P(Bin(n, p) <= k), 0 for k < 0. */
static double binom_cdf(long k, double p, long n)
{
    if (k < 0)
        return 0.0;
    if (k >= n)
        return 1.0;
    return gsl_cdf_binomial_P((unsigned)k, p, (unsigned)n);
}

int tp_sweep_ci_ranks(long n, double p, long *l, long *u)
{
    long a, b;
    /* X(l) <= Q_p exactly when at least l of the n values are <= Q_p, which has probability
     * P(Bin(n, p) >= l); so P(X(l) <= Q_p <= X(u)) >= F(u - 1) - F(l - 1), F the binomial
     * distribution function, and each tail gets at most TAIL. F rises with its argument:
     * bisection. */
    if (n < 1 || binom_cdf(0, p, n) > TAIL || binom_cdf(n - 1, p, n) < 1.0 - TAIL)
        return -1;
    a = 1; /* F(a - 1) <= TAIL holds; find the largest such a */
    b = n + 1;
    while (b - a > 1) {
        long c = a + (b - a) / 2;
        if (binom_cdf(c - 1, p, n) <= TAIL)
            a = c;
        else
            b = c;
    }
    *l = a;
    a = 0; /* F(b - 1) >= 1 - TAIL holds at b = n; find the smallest such b */
    b = n;
    while (b - a > 1) {
        long c = a + (b - a) / 2;
        if (binom_cdf(c - 1, p, n) >= 1.0 - TAIL)
            b = c;
        else
            a = c;
    }
    *u = b;
    return 0;
}

double tp_sweep_summary_value(const tp_sweep_summary *s, int stat)
{
    switch (stat) {
    case TP_STAT_MEAN:
        return s->mean;
    case TP_STAT_SD:
        return s->sd;
    case TP_STAT_P5:
        return s->p5;
    case TP_STAT_P50:
        return s->p50;
    default:
        return s->p95;
    }
}

/* The chi-square interval's half-width for n samples of sd s. */
static double sd_halfwidth(double s, long n)
{
    double lo, hi;
    tp_sweep_ci_sd(s, n, &lo, &hi);
    return 0.5 * (hi - lo);
}

#define NEEDED_MAX 1e9 /* samples: beyond this the estimate is given as is */

double tp_sweep_needed(const tp_sweep_plan *plan, const tp_sweep_summary *s, int stat,
                       double halfwidth)
{
    double sd, per, units, hw;
    long a, b, rank_lo, rank_hi;
    int it;
    if (!(halfwidth > 0) || s->n < 2)
        return TP_UNSET;
    if (stat == TP_STAT_MEAN) {
        /* Units of the interval: samples (random), or replicates of rep_size (lhs, sobol).
         * Smallest count k with t(k - 1) sd / sqrt(k) <= halfwidth, by fixed point from the
         * normal approximation (t falls as k grows, so a few rounds settle it). */
        int reps = s->reps >= 2;
        sd = reps ? s->rep_sd : s->sd;
        per = reps ? (double)plan->rep_size : 1.0;
        if (!isfinite(sd))
            return TP_UNSET;
        units = fmax(2.0, ceil(pow(1.96 * sd / halfwidth, 2)));
        for (it = 0; it < 8 && units < NEEDED_MAX; it++)
            units = fmax(2.0, ceil(pow(t_quantile(units - 1.0) * sd / halfwidth, 2)));
        return units * per;
    }
    if (stat == TP_STAT_SD) {
        if (!(s->sd > 0))
            return 2.0;
        a = 1;
        b = 2;
        while (sd_halfwidth(s->sd, b) > halfwidth && (double)b < NEEDED_MAX) {
            a = b;
            b *= 2;
        }
        while (b - a > 1) {
            long c = a + (b - a) / 2;
            if (sd_halfwidth(s->sd, c) > halfwidth)
                a = c;
            else
                b = c;
        }
        return (double)b;
    }
    /* A percentile: the interval's width shrinks as 1 / sqrt(n) (asymptotically normal order
     * statistics), so scale the half-width measured now. */
    hw = 0.5 * (s->hi[stat] - s->lo[stat]);
    if (!isfinite(hw))
        return TP_UNSET;
    if (s->fitted) {
        /* Only the real samples' part shrinks; the surrogate draws' part stays. */
        double fl = isfinite(s->floor_hw[stat]) ? s->floor_hw[stat] : 0.0;
        if (halfwidth <= fl)
            return TP_UNSET;
        return fmax(2.0, ceil((double)s->n * (hw * hw - fl * fl) /
                              (halfwidth * halfwidth - fl * fl)));
    }
    /* Never fewer than the interval itself needs (72 for p5 and p95, 6 for the median). */
    for (a = 1; tp_sweep_ci_ranks(a, stat_p[stat], &rank_lo, &rank_hi) != 0; a++)
        ;
    if (hw == 0.0)
        return fmax((double)a, (double)s->n);
    return fmax((double)a, ceil((double)s->n * pow(hw / halfwidth, 2)));
}

/* The mean's interval from the replicates' means (lhs, sobol): each replicate is an
 * independent randomisation of the design, so their means are independent and identically
 * distributed, and Student's t over them holds whatever the design's correlations inside a
 * replicate. Replicates without a value are left out. */
static void replicate_interval(const tp_sweep_plan *plan, const tp_sweep_result *results, long n,
                               int metric, tp_sweep_summary *out)
{
    long r, reps = 0, m = plan->rep_size;
    double sum = 0.0, ss = 0.0, mean, *means = malloc((size_t)plan->replicates * sizeof *means);
    if (!means)
        return;
    for (r = 0; r * m < n && r < plan->replicates; r++) {
        long i, c = 0;
        double acc = 0.0;
        for (i = r * m; i < (r + 1) * m && i < n; i++)
            if (results[i].ok && isfinite(results[i].metric[metric])) {
                acc += results[i].metric[metric];
                c++;
            }
        if (c > 0)
            means[reps++] = acc / (double)c;
    }
    out->reps = reps;
    if (reps >= 2) {
        for (r = 0; r < reps; r++)
            sum += means[r];
        mean = sum / (double)reps;
        for (r = 0; r < reps; r++)
            ss += (means[r] - mean) * (means[r] - mean);
        out->rep_sd = sqrt(ss / (double)(reps - 1));
        tp_sweep_ci_mean(out->mean, out->rep_sd, reps, &out->lo[TP_STAT_MEAN],
                         &out->hi[TP_STAT_MEAN]);
    } else {
        out->lo[TP_STAT_MEAN] = out->hi[TP_STAT_MEAN] = TP_UNSET;
    }
    free(means);
}

/* --percentiles fitted: the fitted percentiles and intervals replace the order statistics'
 * where the method applies (tailfit.h). */
static tp_status fitted_percentiles(const tp_sweep_plan *plan, const tp_sweep_result *results,
                                    long total, tp_sweep_summary *out, int metric)
{
    tp_tailfit_q q[3];
    int k, used;
    tp_status st = tp_tailfit_percentiles(plan, results, total, metric, 3, &stat_p[TP_STAT_P5], q,
                                          &out->fit_r2, &used);
    if (st != TP_OK || !used)
        return st;
    out->fitted = 1;
    out->p5 = q[0].value;
    out->p50 = q[1].value;
    out->p95 = q[2].value;
    for (k = 0; k < 3; k++) {
        out->lo[TP_STAT_P5 + k] = q[k].lo;
        out->hi[TP_STAT_P5 + k] = q[k].hi;
        out->floor_hw[TP_STAT_P5 + k] = q[k].floor_hw;
    }
    return TP_OK;
}

static void intervals(const tp_sweep_plan *plan, const tp_sweep_result *results, long total,
                      const double *sorted, tp_sweep_summary *out, int metric)
{
    int k;
    long n = out->n, l, u;
    for (k = 0; k < TP_STAT_COUNT; k++)
        out->lo[k] = out->hi[k] = out->floor_hw[k] = TP_UNSET;
    out->fit_r2 = TP_UNSET;
    out->rep_sd = TP_UNSET;
    tp_sweep_ci_mean(out->mean, out->sd, n, &out->lo[TP_STAT_MEAN], &out->hi[TP_STAT_MEAN]);
    if (plan->mode == TP_SWEEP_SPREAD && plan->design != TP_DESIGN_RANDOM && plan->rep_size > 0)
        replicate_interval(plan, results, total, metric, out);
    tp_sweep_ci_sd(out->sd, n, &out->lo[TP_STAT_SD], &out->hi[TP_STAT_SD]);
    for (k = TP_STAT_P5; k < TP_STAT_COUNT; k++)
        if (tp_sweep_ci_ranks(n, stat_p[k], &l, &u) == 0) {
            out->lo[k] = sorted[l - 1];
            out->hi[k] = sorted[u - 1];
        }
}

tp_status tp_sweep_summarise(const tp_sweep_plan *plan, const tp_sweep_result *results, int metric,
                             tp_sweep_summary *out)
{
    return tp_sweep_summarise_first(plan, results, tp_sweep_count(plan), metric, 1, out);
}

tp_status tp_sweep_summarise_first(const tp_sweep_plan *plan, const tp_sweep_result *results,
                                   long total, int metric, int with_rho, tp_sweep_summary *out)
{
    long i, n = 0;
    int k;
    tp_metricdef_worse worse = tp_metricdef_swept(metric)->worse;
    double *x = malloc(((size_t)total + 1) * 3 * sizeof *x), *sorted, *pv;
    double best_abs = -1.0;
    memset(out, 0, sizeof *out);
    out->worst = TP_UNSET;
    out->worst_index = -1;
    out->driver = -1;
    out->mean = out->sd = out->p5 = out->p50 = out->p95 = TP_UNSET;
    for (k = 0; k < TP_SWEEP_MAX_PARAMS; k++)
        out->rho[k] = TP_UNSET;
    for (k = 0; k < TP_STAT_COUNT; k++)
        out->lo[k] = out->hi[k] = out->floor_hw[k] = TP_UNSET;
    out->rep_sd = out->fit_r2 = TP_UNSET;
    if (!x)
        return TP_ERR_NOMEM;
    sorted = x + total + 1;
    pv = sorted + total + 1;
    for (i = 0; i < total; i++) {
        double v = results[i].metric[metric];
        if (!results[i].ok)
            continue;
        if (!isfinite(v)) {
            out->absent++;
            continue;
        }
        if (out->worst_index < 0 || tp_metricdef_worse_than(v, out->worst, worse)) {
            out->worst = v;
            out->worst_index = i;
        }
        x[n++] = v;
    }
    out->n = n;
    if (n > 0) {
        tp_sweep_mean_sd(x, (size_t)n, &out->mean, &out->sd);
        memcpy(sorted, x, (size_t)n * sizeof *x);
        qsort(sorted, (size_t)n, sizeof *sorted, cmp_double);
        out->p5 = tp_sweep_quantile(sorted, (size_t)n, 0.05);
        out->p50 = tp_sweep_quantile(sorted, (size_t)n, 0.50);
        out->p95 = tp_sweep_quantile(sorted, (size_t)n, 0.95);
        intervals(plan, results, total, sorted, out, metric);
        if (plan->mode == TP_SWEEP_SPREAD && plan->percentiles == TP_PCT_FITTED &&
            fitted_percentiles(plan, results, total, out, metric) != TP_OK) {
            free(x);
            return TP_ERR_NOMEM;
        }
    }
    /* A metric that does not vary beyond solver noise (a holding power that no spread
     * parameter affects) has no driver: ranks of rounding errors mean nothing. */
    if (!with_rho || !(n > 1 && out->sd > TP_SWEEP_NOISE * fmax(fabs(out->mean), DBL_MIN))) {
        free(x);
        return TP_OK;
    }
    for (k = 0; k < plan->n_params; k++) {
        long m = 0;
        for (i = 0; i < total; i++)
            if (results[i].ok && isfinite(results[i].metric[metric]))
                pv[m++] = tp_sweep_value(plan, i, k);
        out->rho[k] = tp_sweep_spearman(pv, x, (size_t)n);
        if (isfinite(out->rho[k]) && fabs(out->rho[k]) > best_abs) {
            best_abs = fabs(out->rho[k]);
            out->driver = k;
        }
    }
    free(x);
    return TP_OK;
}

/* ---- the worker pool ----------------------------------------------------------------------- */

typedef struct pool {
    const tp_sweep_plan *plan;
    const tp_description *base;
    tp_sweep_result *results;
    long total;
    atomic_long next; /* the next point to take */
    atomic_long done; /* points finished */
} pool;

/* The worst record seen of one caution, and the point it came from. */
typedef struct caution_slot {
    tp_caution c;
    long index;
} caution_slot;

typedef struct worker {
    pool *p;
    pthread_t thread;
    int started;
    double cpu; /* s of CPU this worker used */
    caution_slot cautions[TP_SWEEP_CAUTIONS_MAX];
    int n_cautions;
    tp_diag diag; /* messages of the current point, never printed */
} worker;

/* Merge one caution into a table of slots: a new caution takes a slot, a known one keeps the
 * worse figures (tp_caution_worse), the lower point index on ties. */
static void caution_merge(caution_slot *table, int *n, const caution_slot *c)
{
    int i;
    for (i = 0; i < *n; i++)
        if (tp_caution_same(&table[i].c, &c->c)) {
            if (tp_caution_worse(&c->c, &table[i].c) ||
                (!tp_caution_worse(&table[i].c, &c->c) && c->index < table[i].index))
                table[i] = *c;
            return;
        }
    if (*n < TP_SWEEP_CAUTIONS_MAX)
        table[(*n)++] = *c;
}

static int cmp_caution(const void *a, const void *b)
{
    const caution_slot *x = a, *y = b;
    return tp_caution_compare(&x->c, &y->c);
}

static void point_cautions(worker *wk, const tp_description *desc, const tp_network *net,
                           const tp_warmup *w, long index)
{
    tp_caution list[TP_CAUTIONS_MAX];
    int n = tp_warmup_cautions(desc, net, w, list), i;
    for (i = 0; i < n; i++) {
        caution_slot c;
        memset(&c, 0, sizeof c); /* whole records defined: results compare bytewise */
        c.c = list[i];
        c.index = index;
        caution_merge(wk->cautions, &wk->n_cautions, &c);
    }
}

static double now_seconds(clockid_t clock)
{
    struct timespec ts;
    clock_gettime(clock, &ts);
    return (double)ts.tv_sec + 1e-9 * (double)ts.tv_nsec;
}

/* The first error of a diagnostics log, without the "tepid: " prefix, into buf. */
static void first_error(const tp_diag *d, char *buf, size_t size)
{
    const char *line = d->log;
    while (*line) {
        const char *end = strchr(line, '\n');
        size_t len = end ? (size_t)(end - line) : strlen(line);
        const char *warn = strstr(line, "warning: ");
        if (strncmp(line, "  hint:", 7) != 0 && !(warn && warn < line + len)) {
            if (strncmp(line, "tepid: ", 7) == 0) {
                line += 7;
                len -= 7;
            }
            if (len >= size)
                len = size - 1;
            memcpy(buf, line, len);
            buf[len] = '\0';
            return;
        }
        if (!end)
            break;
        line = end + 1;
    }
    snprintf(buf, size, "failed without a message");
}

/* A point's metrics: the warm-up's, and with a schedule each segment's figures (`sched`, NULL:
 * none) from the run's programme report. */
static tp_status take_metrics(const tp_warmup *w, const tp_schedule *sched, tp_sweep_result *res)
{
    const tp_metrics *m = &w->metrics;
    double *v = res->metric;
    int k;
    for (k = 0; k < TP_MET_SWEPT; k++)
        v[k] = tp_metricdef_value(tp_metricdef_swept(k), m);
    /* An overshoot exists only once the setpoint was reached: a point that never got there
     * has none (shown "-"), not an overshoot of 0. */
    if (!isfinite(m->t_setpoint))
        v[TP_MET_OVERSHOOT_READING] = v[TP_MET_OVERSHOOT_SURFACE] = TP_UNSET;
    if (sched) {
        tp_program *prog = malloc(sizeof *prog);
        if (!prog)
            return TP_ERR_NOMEM;
        tp_program_compute(&w->history, sched, NULL, 0, prog);
        for (k = TP_MET_SWEPT; k < TP_MET_SWEPT_MAX; k++)
            v[k] = tp_metricdef_segment_value(k, prog);
        free(prog);
    }
    return TP_OK;
}

static void run_point(worker *wk, tp_description *desc, long i)
{
    const tp_sweep_plan *plan = wk->p->plan;
    tp_sweep_result *res = &wk->p->results[i];
    const tp_network *net = NULL;
    tp_warmup w;
    tp_schedule sched;
    char msg[TP_SWEEP_REASON_MAX - 32]; /* room for the prefix */
    int k, scheduled;
    memset(res, 0, sizeof *res);
    memset(&w, 0, sizeof w);
    for (k = 0; k < TP_MET_SWEPT_MAX; k++)
        res->metric[k] = TP_UNSET;
    for (k = 0; k < plan->n_params; k++) {
        double v = tp_sweep_value(plan, i, k);
        if (tp_config_check(desc, plan->params[k].path, v, msg, sizeof msg) != TP_OK) {
            snprintf(res->reason, sizeof res->reason, "value refused: %s", msg);
            return;
        }
        tp_config_set(desc, plan->params[k].path, v);
    }
    tp_diag_init(&wk->diag, NULL);
    wk->diag.quiet = 1;
    if (tp_assemble(desc, NULL, &wk->diag, &net) != TP_OK) {
        first_error(&wk->diag, msg, sizeof msg);
        snprintf(res->reason, sizeof res->reason, "assembly: %s", msg);
        return;
    }
    /* A scheduled point follows its own schedule (a swept segment's values included). */
    scheduled = tp_program_plan(desc, net, &sched) == 0;
    if (tp_warmup_run_schedule(net, &desc->run, scheduled ? &sched : NULL, &w, &wk->diag) !=
        TP_OK) {
        first_error(&wk->diag, msg, sizeof msg);
        snprintf(res->reason, sizeof res->reason, "%s", msg);
    } else if (take_metrics(&w, scheduled ? &sched : NULL, res) != TP_OK) {
        snprintf(res->reason, sizeof res->reason, "out of memory");
    } else {
        res->ok = 1;
        point_cautions(wk, desc, net, &w, i);
    }
    tp_warmup_clear(&w);
    tp_network_release(&net);
}

static void *work(void *arg)
{
    worker *wk = arg;
    pool *p = wk->p;
    tp_description desc;
    double cpu0 = now_seconds(CLOCK_THREAD_CPUTIME_ID);
    int have_desc = tp_config_copy(&desc, p->base) == TP_OK;
    for (;;) {
        long i = atomic_fetch_add(&p->next, 1);
        if (i >= p->total)
            break;
        if (have_desc) {
            run_point(wk, &desc, i);
        } else {
            int k;
            memset(&p->results[i], 0, sizeof p->results[i]);
            for (k = 0; k < TP_MET_SWEPT_MAX; k++)
                p->results[i].metric[k] = TP_UNSET;
            snprintf(p->results[i].reason, sizeof p->results[i].reason, "out of memory");
        }
        atomic_fetch_add(&p->done, 1);
    }
    if (have_desc)
        tp_config_clear(&desc);
    wk->cpu = now_seconds(CLOCK_THREAD_CPUTIME_ID) - cpu0;
    return NULL;
}

int tp_sweep_default_jobs(void)
{
    long n = sysconf(_SC_NPROCESSORS_ONLN);
    if (n < 1)
        return 1;
    return n > TP_SWEEP_MAX_JOBS ? TP_SWEEP_MAX_JOBS : (int)n;
}

tp_status tp_sweep_run(const tp_sweep_plan *plan, const tp_description *base, int jobs,
                       tp_sweep_result *results, tp_sweep_progress_fn progress, void *user,
                       tp_sweep_totals *totals)
{
    return tp_sweep_run_range(plan, base, jobs, 0, tp_sweep_count(plan), results, progress, user,
                              totals);
}

void tp_sweep_totals_merge(tp_sweep_totals *into, const tp_sweep_totals *from)
{
    caution_slot all[TP_SWEEP_CAUTIONS_MAX];
    int n = 0, k;
    for (k = 0; k < into->n_cautions; k++) {
        memset(&all[n], 0, sizeof all[n]);
        all[n].c = into->cautions[k];
        all[n++].index = into->caution_point[k];
    }
    for (k = 0; k < from->n_cautions; k++) {
        caution_slot c;
        memset(&c, 0, sizeof c);
        c.c = from->cautions[k];
        c.index = from->caution_point[k];
        caution_merge(all, &n, &c);
    }
    qsort(all, (size_t)n, sizeof *all, cmp_caution);
    for (k = 0; k < n; k++) {
        into->cautions[k] = all[k].c;
        into->caution_point[k] = all[k].index;
    }
    into->n_cautions = n;
    into->failed += from->failed;
    into->wall += from->wall;
    into->cpu += from->cpu;
    if (from->jobs > into->jobs)
        into->jobs = from->jobs;
}

tp_status tp_sweep_run_range(const tp_sweep_plan *plan, const tp_description *base, int jobs,
                             long first, long end, tp_sweep_result *results,
                             tp_sweep_progress_fn progress, void *user, tp_sweep_totals *totals)
{
    pool p;
    worker *wk;
    int j, started = 0;
    long i, count;
    double t0 = now_seconds(CLOCK_MONOTONIC), last = t0;
    memset(totals, 0, sizeof *totals);
    if (first < 0)
        first = 0;
    if (end > tp_sweep_count(plan))
        end = tp_sweep_count(plan);
    if (end < first)
        end = first;
    count = end - first;
    p.plan = plan;
    p.base = base;
    p.results = results;
    p.total = end;
    atomic_init(&p.next, first);
    atomic_init(&p.done, 0);
    if (jobs < 1)
        jobs = 1;
    if (jobs > TP_SWEEP_MAX_JOBS)
        jobs = TP_SWEEP_MAX_JOBS;
    if ((long)jobs > count)
        jobs = count > 0 ? (int)count : 1;
    wk = calloc((size_t)jobs, sizeof *wk);
    if (!wk)
        return TP_ERR_NOMEM;
    for (j = 0; j < jobs; j++)
        wk[j].p = &p;
    for (j = 0; j < jobs; j++) {
        wk[j].started = pthread_create(&wk[j].thread, NULL, work, &wk[j]) == 0;
        started += wk[j].started;
    }
    if (started == 0) {
        /* No thread could be made: run everything here, without progress reports. */
        work(&wk[0]);
    } else {
        struct timespec nap = {0, POLL_NS};
        while (atomic_load(&p.done) < count) {
            double now;
            nanosleep(&nap, NULL);
            now = now_seconds(CLOCK_MONOTONIC);
            if (progress && now - last >= 1e-3 * TP_SWEEP_TICK_MS) {
                progress(user, atomic_load(&p.done), count, now - t0);
                last = now;
            }
        }
        for (j = 0; j < jobs; j++)
            if (wk[j].started)
                pthread_join(wk[j].thread, NULL);
    }
    if (progress)
        progress(user, count, count, now_seconds(CLOCK_MONOTONIC) - t0);
    totals->jobs = started;
    totals->wall = now_seconds(CLOCK_MONOTONIC) - t0;
    for (i = first; i < end; i++)
        totals->failed += !results[i].ok;
    {
        /* Merged in worker order; the merge keeps the worst line of each kind with ties
         * broken by point index, so the outcome does not depend on the split. */
        caution_slot all[TP_SWEEP_CAUTIONS_MAX];
        int n = 0, k;
        for (j = 0; j < jobs; j++) {
            totals->cpu += wk[j].cpu;
            for (k = 0; k < wk[j].n_cautions; k++)
                caution_merge(all, &n, &wk[j].cautions[k]);
        }
        qsort(all, (size_t)n, sizeof *all, cmp_caution);
        for (k = 0; k < n; k++) {
            totals->cautions[k] = all[k].c;
            totals->caution_point[k] = all[k].index;
        }
        totals->n_cautions = n;
    }
    free(wk);
    return TP_OK;
}

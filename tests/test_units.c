/* Tests for units.c: quantities with units into SI, absolute temperatures against intervals,
 * the forms a config value may not take (with their messages), and tepid's own unit database
 * (models/units.txt) against udunits2's complete one. Unit definitions: BIPM,
 * The International System of Units (SI Brochure), 9th ed. 2019, and NIST Special Publication
 * 811 (2008 ed.), Guide for the Use of the SI, Appendix B (conversion factors). */
#include "tp_test.h"

#include <ctype.h>
#include <libgen.h>

#include <udunits2.h>
#include <yaml.h>

#include "units.h"

/* Accepted values are checked to 1e-12 relative. udunits2 composes each unit from its
 * definition and units.c recovers the affine map SI = offset + scale x from the converted
 * values at 0 and 1, so a unit with an offset (degC, degF) loses the digits of the offset in
 * the difference: 255.37 K / 0.5556 K x 2.2e-16 ~ 1e-13 relative for degF. The exact factors
 * below are definitions, so any real mistake (a missing offset, a wrong prefix) is off by
 * orders of magnitude more. */
#define UNIT_TOL 1.0e-12

typedef struct accepted {
    const char *text;
    tp_dim dim;
    double si;
    const char *source;
} accepted;

/* Each row: the text, its kind, the SI value worked by hand, and the definition used. */
static const accepted accepted_forms[] = {
    /* Absolute temperatures: T/K = t/degC + 273.15 (SI Brochure 9th ed. §2.3.1);
     * T/K = (t/degF + 459.67) / 1.8 (NIST SP 811 §B.9, "degree Fahrenheit to kelvin"). */
    {"21 degC", TP_DIM_TEMPERATURE, 294.15, "SI Brochure 2.3.1"},
    {"0 degC", TP_DIM_TEMPERATURE, 273.15, "SI Brochure 2.3.1"},
    {"300 K", TP_DIM_TEMPERATURE, 300.0, "SI base unit"},
    {"32 degF", TP_DIM_TEMPERATURE, 273.15, "(32 + 459.67) / 1.8, SP 811 B.9"},
    {"212 degF", TP_DIM_TEMPERATURE, 373.15, "(212 + 459.67) / 1.8, SP 811 B.9"},
    {"-40 degF", TP_DIM_TEMPERATURE, 233.15, "(-40 + 459.67) / 1.8 = 233.15, SP 811 B.9"},
    /* Temperature intervals: 1 degC of difference = 1 K; 1 degF of difference = 1/1.8 K
     * (SP 811 §B.9 note; SI Brochure 2.3.1: "a temperature difference ... in degC or K"). */
    {"2 K", TP_DIM_INTERVAL, 2.0, "SI base unit"},
    {"2 degC", TP_DIM_INTERVAL, 2.0, "interval, SI Brochure 2.3.1"},
    {"3.6 degF", TP_DIM_INTERVAL, 2.0, "3.6 / 1.8, SP 811 B.9"},
    /* Lengths and areas: inch = 2.54e-2 m, foot = 0.3048 m exactly (SP 811 B.8); prefixes
     * milli 1e-3, centi 1e-2 (SI Brochure Table 7). */
    {"4 mm", TP_DIM_LENGTH, 0.004, "milli, SI Table 7"},
    {"4mm", TP_DIM_LENGTH, 0.004, "no space needed"},
    {"1 in", TP_DIM_LENGTH, 0.0254, "SP 811 B.8"},
    {"1 ft", TP_DIM_LENGTH, 0.3048, "SP 811 B.8"},
    {"25 cm", TP_DIM_LENGTH, 0.25, "centi, SI Table 7"},
    {"1e-3 m", TP_DIM_LENGTH, 0.001, "exponent form"},
    {".5 mm", TP_DIM_LENGTH, 0.0005, "leading point"},
    {"0.05 m2", TP_DIM_AREA, 0.05, "SI derived"},
    {"3 mm2", TP_DIM_AREA, 3.0e-6, "(1e-3 m)^2"},
    {"1 L", TP_DIM_VOLUME, 1.0e-3, "litre = 1e-3 m3, SI Brochure Table 8"},
    /* Time: min = 60 s, h = 3600 s (SI Brochure Table 8). */
    {"30 min", TP_DIM_TIME, 1800.0, "SI Table 8"},
    {"1.5 h", TP_DIM_TIME, 5400.0, "SI Table 8"},
    {"1 km/h", TP_DIM_SPEED, 1000.0 / 3600.0, "kilo and hour, SI Tables 7-8"},
    /* Thermal and electrical quantities (SI coherent derived units, SI Brochure Table 4). */
    {"1.2 kW", TP_DIM_POWER, 1200.0, "kilo, SI Table 7"},
    {"5 kJ", TP_DIM_ENERGY, 5000.0, "kilo"},
    {"0.896 kJ/(kg.K)", TP_DIM_SPECIFIC_HEAT, 896.0, "kilo"},
    {"8 W/(m2.K)", TP_DIM_HTC, 8.0, "coherent"},
    {"8 W m-2 K-1", TP_DIM_HTC, 8.0, "exponent notation"},
    {"167 W/(m.K)", TP_DIM_CONDUCTIVITY, 167.0, "coherent"},
    {"1.6 W/K", TP_DIM_CONDUCTANCE, 1.6, "coherent"},
    {"640 J/K", TP_DIM_CAPACITY, 640.0, "coherent"},
    {"2.7 g/cm3", TP_DIM_DENSITY, 2700.0, "1e-3 kg / 1e-6 m3"},
    {"0.0039 1/K", TP_DIM_PER_KELVIN, 0.0039, "coherent"},
    {"0.0039 1/degC", TP_DIM_PER_KELVIN, 0.0039, "per degC of difference = per K"},
    {"0.4 s/K", TP_DIM_SEC_PER_KELVIN, 0.4, "coherent"},
    {"0.0015 1/(K.s)", TP_DIM_PER_KELVIN_SEC, 0.0015, "coherent"},
    {"1 K/min", TP_DIM_RATE, 1.0 / 60.0, "min = 60 s"},
    {"100 kohm", TP_DIM_RESISTANCE, 1.0e5, "kilo"},
    {"24 V", TP_DIM_VOLTAGE, 24.0, "coherent"},
    {"1 atm", TP_DIM_PRESSURE, 101325.0, "standard atmosphere, SP 811 B.8 (exact)"},
    /* Customary units of models/units.txt, each worked from exact definitions (SP 811 B.8:
     * pound 0.45359237 kg, standard gravity 9.80665 m/s2, inch 0.0254 m, foot 0.3048 m,
     * Btu (IT) 1055.05585262 J, conventional mercury 13595.1 kg/m3); SP 811 B.8 quotes them
     * rounded: psi 6.894757e3 Pa, Btu/(h.ft2.degF) 5.678263 W/(m2.K), mmHg 1.333224e2 Pa. */
    {"1 psi", TP_DIM_PRESSURE, 0.45359237 * 9.80665 / (0.0254 * 0.0254), "closed form"},
    {"760 mmHg", TP_DIM_PRESSURE, 760.0 * 13595.1 * 9.80665 * 1.0e-3, "closed form"},
    {"1 Btu/(h.ft2.degF)", TP_DIM_HTC, 1055.05585262 * 1.8 / (3600.0 * 0.3048 * 0.3048),
     "closed form: Btu / (3600 s x 0.3048^2 m2 x K/1.8)"},
    {"3900 ppm/K", TP_DIM_PER_KELVIN, 0.0039, "ppm = 1e-6"},
    {"4 millimeters", TP_DIM_LENGTH, 0.004, "a prefixed name"},
    {"2 \xc2\xb5m", TP_DIM_LENGTH, 2.0e-6, "micro sign, SI Table 7"},
    {"20 celsius", TP_DIM_TEMPERATURE, 293.15, "SI Brochure 2.3.1"},
    /* Dimensionless: a bare number, or % = 0.01 (SI Brochure 9th ed. §5.4.7). */
    {"0.9", TP_DIM_NONE, 0.9, "bare number"},
    {"90 %", TP_DIM_NONE, 0.9, "SI Brochure 5.4.7"},
    {"1e5", TP_DIM_NONE, 1.0e5, "exponent form"},
};

/* At least 20 accepted forms (issue 2), each converted to SI as worked by hand. */
static void test_units_accepted_forms(void **state)
{
    (void)state;
    assert_true(sizeof accepted_forms / sizeof accepted_forms[0] >= 20);
    for (size_t i = 0; i < sizeof accepted_forms / sizeof accepted_forms[0]; i++) {
        const accepted *a = &accepted_forms[i];
        char msg[256] = "";
        const char *hint = NULL;
        double si = (double)NAN;
        tp_status st = tp_units_parse(a->text, a->dim, &si, msg, sizeof msg, &hint);
        if (st != TP_OK)
            print_error("'%s' rejected: %s\n", a->text, msg);
        assert_int_equal(st, TP_OK);
        tp_check_rel(a->text, si, a->si, UNIT_TOL);
    }
}

/* The same temperature text means different things as an absolute value and as an interval
 * (docs/user-guide.md, "Quantities and units"): 2 degC is 275.15 K as a temperature and 2 K as
 * a difference; 3.6 degF of difference is 2 K while 3.6 degF as a temperature is
 * (3.6 + 459.67) / 1.8 = 257.3722 K (SP 811 B.9). */
static void test_units_absolute_versus_interval(void **state)
{
    char msg[256];
    const char *hint;
    double abs_k, int_k;
    (void)state;
    assert_int_equal(tp_units_parse("2 degC", TP_DIM_TEMPERATURE, &abs_k, msg, sizeof msg, &hint),
                     TP_OK);
    assert_int_equal(tp_units_parse("2 degC", TP_DIM_INTERVAL, &int_k, msg, sizeof msg, &hint),
                     TP_OK);
    tp_check_rel("2 degC absolute", abs_k, 275.15, UNIT_TOL);
    tp_check_rel("2 degC interval", int_k, 2.0, UNIT_TOL);
    assert_int_equal(tp_units_parse("3.6 degF", TP_DIM_TEMPERATURE, &abs_k, msg, sizeof msg, &hint),
                     TP_OK);
    tp_check_rel("3.6 degF absolute", abs_k, (3.6 + 459.67) / 1.8, UNIT_TOL);
}

typedef struct rejected {
    const char *text;
    tp_dim dim;
    const char *message; /* a fragment the one-line reason must contain */
} rejected;

/* Each row: what a config might say, the kind the key wants, and the reason given. */
static const rejected rejected_forms[] = {
    /* A bare number for a dimensional key (docs/user-guide.md: an error). */
    {"4", TP_DIM_LENGTH, "'4' has no unit; expected a quantity in m, e.g. '4 mm'"},
    /* The wrong dimension. */
    {"4 W", TP_DIM_LENGTH, "'4 W' has the wrong kind of unit; expected a quantity in m"},
    {"2 K/s", TP_DIM_INTERVAL, "wrong kind of unit"},
    /* udunits converts between reciprocals (1/K <-> K): never accepted as the same kind. */
    {"0.5 1/K", TP_DIM_INTERVAL, "'0.5 1/K' has the wrong kind of unit; expected a quantity in K"},
    {"0.5 1/K", TP_DIM_TEMPERATURE, "wrong kind of unit"},
    {"2 K", TP_DIM_PER_KELVIN, "'2 K' has the wrong kind of unit; expected a quantity in 1/K"},
    {"2 degC", TP_DIM_PER_KELVIN, "wrong kind of unit"},
    /* Unknown units, udunits offset syntax, a decimal comma. */
    {"4 blorf", TP_DIM_LENGTH, "unknown unit 'blorf' in '4 blorf'"},
    {"1 K @ 273.15", TP_DIM_TEMPERATURE, "unknown unit"},
    {"1,5 mm", TP_DIM_LENGTH, "unknown unit ',5 mm'"},
    /* Not numbers: NaN, infinity, overflow, empty. */
    {"nan mm", TP_DIM_LENGTH, "'nan mm' is not a number"},
    {"NaN", TP_DIM_NONE, "'NaN' is not a number"},
    {".nan", TP_DIM_NONE, "is not a number"},
    {"inf W", TP_DIM_POWER, "'inf W' is not a number"},
    {"-infinity", TP_DIM_NONE, "is not a number"},
    {"1e999 W", TP_DIM_POWER, "is not a number"},
    {"", TP_DIM_LENGTH, "'' is not a number with a unit"},
    {"   ", TP_DIM_NONE, "is not a number"},
    /* Hexadecimal: the digits after 0x are not a unit, and a bare hex is not a decimal. */
    {"0x10 mm", TP_DIM_LENGTH, "unknown unit 'x10 mm'"},
    {"0x10", TP_DIM_NONE, "'0x10' should be a plain number"},
    /* At or below absolute zero: T/K = t/degC + 273.15 <= 0. */
    {"-300 degC", TP_DIM_TEMPERATURE, "'-300 degC' is at or below absolute zero"},
    {"0 K", TP_DIM_TEMPERATURE, "at or below absolute zero"},
    {"-460 degF", TP_DIM_TEMPERATURE, "at or below absolute zero"},
    /* Trailing garbage. */
    {"4 mm x", TP_DIM_LENGTH, "unknown unit 'mm x'"},
    {"4 mm, 3", TP_DIM_LENGTH, "unknown unit"},
    /* A unit on a dimensionless key. */
    {"0.9 m", TP_DIM_NONE, "'0.9 m' should be a plain number (this key is dimensionless)"},
    /* A unit of udunits2's complete database that tepid's does not carry (models/units.txt);
     * test_units_database_matches_udunits2 checks that udunits2 itself knows it. */
    {"1 furlong", TP_DIM_LENGTH, "unknown unit 'furlong' in '1 furlong'"},
};

/* At least 10 rejections (issue 2), each with its message and a non-empty hint. */
static void test_units_rejected_forms(void **state)
{
    (void)state;
    assert_true(sizeof rejected_forms / sizeof rejected_forms[0] >= 10);
    for (size_t i = 0; i < sizeof rejected_forms / sizeof rejected_forms[0]; i++) {
        const rejected *r = &rejected_forms[i];
        char msg[256] = "";
        const char *hint = NULL;
        double si = -1.0;
        tp_status st = tp_units_parse(r->text, r->dim, &si, msg, sizeof msg, &hint);
        if (st != TP_ERR_CONFIG)
            print_error("'%s' accepted as %.17g\n", r->text, si);
        assert_int_equal(st, TP_ERR_CONFIG);
        tp_check_contains(r->text, msg, r->message);
        assert_non_null(hint);
        assert_true(hint[0] != '\0');
    }
}

/* Whitespace around a quantity is not part of it (a quoted YAML value keeps it): "  21 degC  "
 * reads as 294.15 K. */
static void test_units_surrounding_whitespace(void **state)
{
    char msg[256] = "";
    const char *hint;
    double si = (double)NAN;
    (void)state;
    assert_int_equal(tp_units_parse("  21 degC  ", TP_DIM_TEMPERATURE, &si, msg, sizeof msg, &hint),
                     TP_OK);
    tp_check_rel("21 degC", si, 294.15, UNIT_TOL);
    assert_int_equal(tp_units_parse("4 mm ", TP_DIM_LENGTH, &si, msg, sizeof msg, &hint), TP_OK);
    tp_check_rel("4 mm", si, 0.004, UNIT_TOL);
}

/* Back from SI into the unit a user wrote (used when writing configs): 294.15 K is 21 degC;
 * 2 K of difference is 3.6 degF (x 1.8, SP 811 B.9); 0.0254 m is 1 in; 0.9 is 90 %. */
static void test_units_from_si(void **state)
{
    double v;
    (void)state;
    assert_int_equal(tp_units_from_si(294.15, "degC", TP_DIM_TEMPERATURE, &v), TP_OK);
    tp_check_rel("degC", v, 21.0, UNIT_TOL);
    assert_int_equal(tp_units_from_si(2.0, "degF", TP_DIM_INTERVAL, &v), TP_OK);
    tp_check_rel("degF interval", v, 3.6, UNIT_TOL);
    assert_int_equal(tp_units_from_si(0.0254, "in", TP_DIM_LENGTH, &v), TP_OK);
    tp_check_rel("in", v, 1.0, UNIT_TOL);
    assert_int_equal(tp_units_from_si(0.9, "%", TP_DIM_NONE, &v), TP_OK);
    tp_check_rel("%", v, 90.0, UNIT_TOL);
    assert_int_equal(tp_units_from_si(1.0, "W", TP_DIM_LENGTH, &v), TP_ERR_CONFIG);
}

/* Strict number parsing (docs/limits.md: reject empty, trailing characters, ERANGE, NaN,
 * inf; the config takes plain decimals only). */
static void test_units_parse_double_strict(void **state)
{
    static const char *const bad[] = {"",          "  ",    "0x10", "0x1p3", "nan", "(double)NAN", "inf",
                                      "-Infinity", "1e999", "3 x",  "1,5",   "1e",  "--1"};
    double v;
    (void)state;
    assert_int_equal(tp_units_parse_double(" 3.5 ", &v), 0);
    assert_true(v == 3.5);
    assert_int_equal(tp_units_parse_double("-2e-3", &v), 0);
    assert_true(v == -2e-3);
    for (size_t i = 0; i < sizeof bad / sizeof bad[0]; i++) {
        if (tp_units_parse_double(bad[i], &v) == 0)
            print_error("'%s' accepted as %.17g\n", bad[i], v);
        assert_int_not_equal(tp_units_parse_double(bad[i], &v), 0);
    }
}

/* ---- tepid's unit database against udunits2's complete database ---------------------------
 *
 * tepid reads its own short unit database (models/units.txt) instead of udunits2's installed
 * one, for start-up time (docs/performance.md). Its definitions are copied from udunits2's, so
 * the reference here is udunits2 itself: every quantity is parsed through tp_units_parse once
 * with each database (tp_units_select_db), as every dimension, and the outcomes compared. The
 * expressions come from three places:
 *   - generated from models/units.txt: every name and symbol, each with every prefix, in upper
 *     case, with a no-break space for '_', and in powers, products and quotients; these must
 *     give the same outcome in every dimension (status, message, and the SI value, bit for bit:
 *     the same definitions make the same arithmetic);
 *   - every "number unit" text in the repository's docs, configs, models, sources and tests
 *     (and the fuzzer's unit dictionary): those that udunits2's database accepts for some key
 *     must give the same outcome, and the rest must be refused by both;
 *   - every name and symbol of udunits2's database (and the plural udunits2 forms for it):
 *     whatever tepid's database accepts must mean what udunits2's means (no name may read as a
 *     prefixed unit of another kind, as "nmile", the nautical mile, would read as a nano-mile).
 */

/* Where an expression comes from (a bit each), which sets the rule it is held to. */
enum origin {
    FROM_UDUNITS2 = 1,  /* a name of udunits2's database: tepid accepts it only as udunits2 does */
    FROM_REPOSITORY = 2, /* if udunits2's database accepts it, so does tepid's, identically */
    FROM_GENERATED = 4   /* identical outcome in every dimension */
};

typedef struct expr {
    char *unit;
    unsigned origin;
} expr;

typedef struct expr_list {
    expr *items;
    size_t n, cap;
    size_t added[5]; /* additions per origin bit, before duplicates are merged */
} expr_list;

typedef struct outcome {
    tp_status st;
    double si[2];      /* SI value of 1 and of 1000 of the unit */
    uint64_t msg_hash; /* FNV-1a of the message on failure */
} outcome;

static void list_add(expr_list *l, const char *unit, enum origin origin)
{
    size_t len = strlen(unit);
    if (len == 0 || len >= 63) /* units.c refuses longer unit texts before udunits2 sees them */
        return;
    if (l->n == l->cap) {
        l->cap = l->cap ? 2 * l->cap : 1024;
        l->items = realloc(l->items, l->cap * sizeof *l->items);
        assert_non_null(l->items);
    }
    l->items[l->n].unit = strdup(unit);
    assert_non_null(l->items[l->n].unit);
    l->items[l->n].origin = origin;
    l->n++;
    l->added[origin]++;
}

static void list_add_n(expr_list *l, const char *text, size_t len)
{
    char buf[64];
    if (len >= sizeof buf)
        return;
    memcpy(buf, text, len);
    buf[len] = '\0';
    list_add(l, buf, FROM_REPOSITORY);
}

static int expr_cmp(const void *a, const void *b)
{
    return strcmp(((const expr *)a)->unit, ((const expr *)b)->unit);
}

/* Sort and merge duplicates, keeping every origin. */
static void list_unique(expr_list *l)
{
    size_t i, out = 0;
    qsort(l->items, l->n, sizeof *l->items, expr_cmp);
    for (i = 0; i < l->n; i++) {
        if (out > 0 && strcmp(l->items[out - 1].unit, l->items[i].unit) == 0) {
            l->items[out - 1].origin |= l->items[i].origin;
            free(l->items[i].unit);
            continue;
        }
        l->items[out++] = l->items[i];
    }
    l->n = out;
}

static void list_free(expr_list *l)
{
    size_t i;
    for (i = 0; i < l->n; i++)
        free(l->items[i].unit);
    free(l->items);
}

static uint64_t fnv1a(const char *s)
{
    uint64_t h = 1469598103934665603u;
    for (; *s; s++)
        h = (h ^ (unsigned char)*s) * 1099511628211u;
    return h;
}

/* Every expression as every dimension under the selected database, into out[i * dims + d]. */
static void evaluate(const expr_list *l, tp_units_db db, outcome *out)
{
    size_t i;
    int d, k;
    assert_int_equal(tp_units_select_db(db), TP_OK);
    for (i = 0; i < l->n; i++) {
        for (d = 0; d < TP_DIM_COUNT; d++) {
            outcome *o = &out[i * TP_DIM_COUNT + (size_t)d];
            memset(o, 0, sizeof *o);
            for (k = 0; k < 2; k++) {
                char text[96], msg[256] = "";
                const char *hint;
                double si = 0.0;
                tp_status st;
                snprintf(text, sizeof text, "%s %s", k == 0 ? "1" : "1000", l->items[i].unit);
                st = tp_units_parse(text, (tp_dim)d, &si, msg, sizeof msg, &hint);
                if (k == 0) {
                    o->st = st;
                    o->msg_hash = st == TP_OK ? 0 : fnv1a(msg);
                }
                o->si[k] = st == TP_OK ? si : 0.0;
            }
        }
    }
    assert_int_equal(tp_units_select_db(TP_UNITS_DB_BUILTIN), TP_OK);
}

/* ---- expressions from models/units.txt ---- */

/* The names and symbols of models/units.txt (its format is at its top), and its prefixes. */
typedef struct db_ids {
    char *words[1024];
    int is_name[1024];
    size_t n;
    char *prefix_names[32], *prefix_symbols[32];
    size_t n_prefix_names, n_prefix_symbols;
} db_ids;

static void db_ids_read(db_ids *ids)
{
    char *text = tp_read_file(TP_SOURCE_DIR "/models/units.txt");
    char *line, *next, *save = NULL, *w;
    assert_non_null(text);
    memset(ids, 0, sizeof *ids);
    for (line = text; line; line = next) {
        char *bar, *names;
        next = strchr(line, '\n');
        if (next)
            *next++ = '\0';
        line[strcspn(line, "#")] = '\0';
        if (strncmp(line, "prefix ", 7) == 0) {
            strtok_r(line + 7, " \t", &save); /* the value */
            w = strtok_r(NULL, " \t", &save);
            assert_non_null(w);
            ids->prefix_names[ids->n_prefix_names++] = strdup(w);
            while ((w = strtok_r(NULL, " \t", &save)))
                ids->prefix_symbols[ids->n_prefix_symbols++] = strdup(w);
            continue;
        }
        if (!(bar = strchr(line, '|')))
            continue;
        *bar = '\0';
        names = strchr(line, '=');
        names = names ? names + 1 : strchr(line, ' '); /* base, dimensionless: after the kind */
        assert_non_null(names);
        for (w = strtok_r(names, " \t", &save); w; w = strtok_r(NULL, " \t", &save)) {
            assert_true(ids->n < 1024);
            ids->is_name[ids->n] = 1;
            ids->words[ids->n++] = strdup(w);
        }
        for (w = strtok_r(bar + 1, " \t", &save); w; w = strtok_r(NULL, " \t", &save)) {
            assert_true(ids->n < 1024);
            ids->is_name[ids->n] = 0;
            ids->words[ids->n++] = strdup(w);
        }
    }
    free(text);
    /* SI Table 7 has 20 prefixes (9th ed.); micro has three symbols here (µ, μ, u). */
    assert_int_equal(ids->n_prefix_names, 20);
    assert_int_equal(ids->n_prefix_symbols, 22);
}

static void db_ids_free(db_ids *ids)
{
    size_t i;
    for (i = 0; i < ids->n; i++)
        free(ids->words[i]);
    for (i = 0; i < ids->n_prefix_names; i++)
        free(ids->prefix_names[i]);
    for (i = 0; i < ids->n_prefix_symbols; i++)
        free(ids->prefix_symbols[i]);
}

static void add_generated(expr_list *l)
{
    /* Each unit u as: text before u, text after u. */
    static const char *const forms[][2] = {{"", "2"},   {"", "^3"},  {"", "-1"},
                                           {"1/", ""},  {"", "/s"},  {"", ".m"},
                                           {"W/", ""},  {"", "/(m2.K)"}, {"(", ")^2"},
                                           {"", " h-1"}};
    /* Quantities of the trade written with several units, offsets and ratios among them. */
    static const char *const trade[] = {
        "degC/min", "1/degF", "degF/h", "K/min", "W/degC", "W/(m2.degF)", "%/K", "%/degC",
        "ppm/K", "ppm/degF", "kJ/(kg.degC)", "Btu/(h.ft2.degF)", "Btu/(lb.degF)",
        "cal/(g.degC)", "W/(m.degC)", "mW/(cm.K)", "W/(cm2)", "kW.h", "W.h", "Btu/h", "hp",
        "psi", "inHg", "mmHg", "torr", "hPa", "mbar", "kPa", "atm", "kcal", "km/h", "mi/h",
        "ft/min", "ft/s", "ohm.m", "kohm", "Mohm", "mohm", "uohm", "µm", "μm", "um", "mil",
        "g/cm3", "lb/ft3", "lb/in3", "kg/L", "°C", "℃", "°F", "℉", "°K", "°R", "Ω", "Ω", "kΩ",
        "s.degC/W", "1/(degC.s)", "s/degF", "degC/s", "J/degC", "kJ/K", "W m-2 K-1",
        "W/(m^2.K)", "W·m-2·K-1", "m2.K/W", "percent", "lbs", "degrees_Celsius", "Celsius",
        "DEGC", "Kelvin", "ohms", "amps", "volts", "watts", "hours", "minutes", "seconds"};
    db_ids ids;
    size_t i, j, f;
    char buf[160];
    db_ids_read(&ids);
    for (i = 0; i < ids.n; i++) {
        const char *w = ids.words[i];
        list_add(l, w, FROM_GENERATED);
        for (f = 0; f < sizeof forms / sizeof forms[0]; f++) {
            snprintf(buf, sizeof buf, "%s%s%s", forms[f][0], w, forms[f][1]);
            list_add(l, buf, FROM_GENERATED);
        }
        if (ids.is_name[i]) {
            size_t k;
            for (k = 0; w[k] && k + 1 < sizeof buf; k++)
                buf[k] = (char)toupper((unsigned char)w[k]);
            buf[k] = '\0';
            list_add(l, buf, FROM_GENERATED);
            if (strchr(w, '_')) { /* the no-break-space form */
                size_t n = 0;
                for (k = 0; w[k] && n + 3 < sizeof buf; k++) {
                    if (w[k] == '_') {
                        buf[n++] = (char)0xC2;
                        buf[n++] = (char)0xA0;
                    } else {
                        buf[n++] = w[k];
                    }
                }
                buf[n] = '\0';
                list_add(l, buf, FROM_GENERATED);
            }
        }
        /* Prefixes: names before names, symbols before symbols (udunits2 takes no mix). */
        if (ids.is_name[i]) {
            for (j = 0; j < ids.n_prefix_names; j++) {
                snprintf(buf, sizeof buf, "%s%s", ids.prefix_names[j], w);
                list_add(l, buf, FROM_GENERATED);
            }
        } else {
            for (j = 0; j < ids.n_prefix_symbols; j++) {
                snprintf(buf, sizeof buf, "%s%s", ids.prefix_symbols[j], w);
                list_add(l, buf, FROM_GENERATED);
            }
        }
    }
    for (i = 0; i < sizeof trade / sizeof trade[0]; i++)
        list_add(l, trade[i], FROM_GENERATED);
    db_ids_free(&ids);
}

/* ---- expressions from the repository ---- */

/* The unit of `text` when the whole of it is one quantity ("4 mm", "8 W m-2 K-1"). */
static void add_whole(const char *text, size_t len, expr_list *l)
{
    char buf[128], unit[64];
    if (len >= sizeof buf)
        return;
    memcpy(buf, text, len);
    buf[len] = '\0';
    if (tp_units_unit_text(buf, unit, sizeof unit) == TP_OK && unit[0] != '\0')
        list_add(l, unit, FROM_REPOSITORY);
}

static int unit_byte(unsigned char c)
{
    return isalnum(c) || c >= 0x80 || strchr("./()^_-%", c) != NULL;
}

/* Each "number unit" of a line of example text (a number not inside a word, at most one blank,
 * then a unit text up to a blank or punctuation that no unit contains). */
static void scan_line(const char *text, size_t size, expr_list *l)
{
    const unsigned char *p = (const unsigned char *)text, *stop = p + size;
    for (; p < stop; p++) {
        const unsigned char *q, *u, *end;
        if (!(isdigit(*p) || (*p == '.' && p + 1 < stop && isdigit(p[1]))))
            continue;
        if (p > (const unsigned char *)text && (isalnum(p[-1]) || strchr("_.-", p[-1])))
            continue;
        for (q = p; q < stop && strchr("0123456789.eE+-", *q); q++)
            ;
        while (q > p && strchr("eE+-", q[-1])) /* "2 e": the letter belongs to the unit */
            q--;
        u = q < stop && *q == ' ' ? q + 1 : q;
        if (u >= stop || !(isalpha(*u) || *u == '%' || *u >= 0x80))
            continue;
        for (end = u; end < stop && unit_byte(*end); end++)
            ;
        while (end > u && strchr(".-_", end[-1])) /* sentence punctuation */
            end--;
        if (end > u && end[-1] == ')' && !memchr(u, '(', (size_t)(end - u)))
            end--; /* a ')' that closes the surrounding text */
        add_whole((const char *)p, (size_t)(end - p), l);
        p = end - 1;
    }
}

/* Markdown: the whole of each `code span`, and each line of a fenced code block (YAML and
 * output examples). Prose is left alone: "at", "a" and "are" are units to udunits2. */
static void scan_markdown(const char *text, expr_list *l)
{
    const char *line = text;
    int fenced = 0;
    while (*line) {
        const char *eol = strchr(line, '\n'), *p;
        size_t len = eol ? (size_t)(eol - line) : strlen(line);
        if (strncmp(line, "```", 3) == 0) {
            fenced = !fenced;
        } else if (fenced) {
            scan_line(line, len, l);
        } else {
            for (p = line; (p = memchr(p, '`', (size_t)(line + len - p))); p++) {
                const char *close = memchr(p + 1, '`', (size_t)(line + len - p - 1));
                if (!close)
                    break;
                add_whole(p + 1, (size_t)(close - p - 1), l);
                p = close;
            }
        }
        line += len + (eol ? 1 : 0);
    }
}

/* C: the whole of each string literal. */
static void scan_c(const char *text, expr_list *l)
{
    const char *p = text;
    while ((p = strchr(p, '"'))) {
        const char *e = p + 1;
        while (*e && *e != '"' && *e != '\n')
            e += e[0] == '\\' && e[1] ? 2 : 1;
        if (*e != '"')
            break;
        add_whole(p + 1, (size_t)(e - p - 1), l);
        p = e + 1;
    }
}

/* The value after each '=' of a "# args:" directive (tests/bad/README.md), split at ':' as
 * --vary and --spread values are. */
static void scan_args(const char *line, size_t len, expr_list *l)
{
    const char *p, *stop = line + len;
    for (p = line; (p = memchr(p, '=', (size_t)(stop - p))); ) {
        const char *end = ++p;
        while (end < stop && !isspace((unsigned char)*end) && *end != '"' && *end != '\'')
            end++;
        while (p < end) {
            const char *colon = memchr(p, ':', (size_t)(end - p));
            const char *piece_end = colon ? colon : end;
            add_whole(p, (size_t)(piece_end - p), l);
            p = piece_end + (colon ? 1 : 0);
        }
    }
}

/* YAML: every scalar that is one quantity (up to the first syntax error: some bad-input cases
 * are broken on purpose), the quantities of comments ("0.6 W/cm2 on the pad"), and the values
 * of the "# args:" directives. */
static void scan_yaml(const char *text, expr_list *l)
{
    yaml_parser_t parser;
    yaml_event_t event;
    const char *line;
    int done = 0;
    assert_true(yaml_parser_initialize(&parser));
    yaml_parser_set_input_string(&parser, (const unsigned char *)text, strlen(text));
    while (!done && yaml_parser_parse(&parser, &event)) {
        if (event.type == YAML_SCALAR_EVENT)
            add_whole((const char *)event.data.scalar.value, event.data.scalar.length, l);
        done = event.type == YAML_STREAM_END_EVENT;
        yaml_event_delete(&event);
    }
    yaml_parser_delete(&parser);
    for (line = text; line; line = strchr(line, '\n') ? strchr(line, '\n') + 1 : NULL) {
        const char *eol = strchr(line, '\n'), *hash;
        size_t len = eol ? (size_t)(eol - line) : strlen(line);
        if (strncmp(line, "# args:", 7) == 0)
            scan_args(line, len, l);
        else if ((hash = memchr(line, '#', len)) && (hash == line || hash[-1] == ' '))
            scan_line(hash, len - (size_t)(hash - line), l); /* a comment: "0.6 W/cm2 on the pad" */
    }
}

/* The manual-page template: each quoted \(lq...\(rq example. */
static void scan_roff(const char *text, expr_list *l)
{
    const char *p = text;
    while ((p = strstr(p, "\\(lq"))) {
        const char *e = strstr(p + 4, "\\(rq");
        if (!e)
            break;
        add_whole(p + 4, (size_t)(e - p - 4), l);
        p = e + 4;
    }
}

/* A libFuzzer unit dictionary: each "quoted" token that starts like a unit. Seeds: each line. */
static void scan_fuzz(const char *text, int dictionary, expr_list *l)
{
    const char *p = text;
    if (!dictionary) {
        while (*p) {
            const char *eol = strchr(p, '\n');
            size_t len = eol ? (size_t)(eol - p) : strlen(p);
            add_whole(p, len, l);
            p += len + (eol ? 1 : 0);
        }
        return;
    }
    while ((p = strchr(p, '"'))) {
        const char *e = strchr(p + 1, '"');
        if (!e)
            break;
        if (isalpha((unsigned char)p[1]) || (unsigned char)p[1] >= 0x80)
            list_add_n(l, p + 1, (size_t)(e - p - 1));
        p = e + 1;
    }
}

static int has_suffix(const char *name, const char *suffix)
{
    size_t n = strlen(name), m = strlen(suffix);
    return n >= m && strcmp(name + n - m, suffix) == 0;
}

/* Every file under `path` (a file or a directory, recursively) of a kind above. Returns the
 * number of files read. */
static int scan_tree(const char *path, expr_list *l)
{
    struct stat st;
    DIR *dp;
    struct dirent *de;
    int files = 0;
    if (stat(path, &st) != 0)
        return 0;
    if (S_ISREG(st.st_mode)) {
        char *text = NULL;
        if (!has_suffix(path, ".md") && !has_suffix(path, ".c") && !has_suffix(path, ".h") &&
            !has_suffix(path, ".yaml") && !has_suffix(path, ".case") &&
            !has_suffix(path, ".in") && !has_suffix(path, ".dict") &&
            !has_suffix(path, ".seeds"))
            return 0;
        if (!(text = tp_read_file(path)))
            return 0;
        if (has_suffix(path, ".md"))
            scan_markdown(text, l);
        else if (has_suffix(path, ".c") || has_suffix(path, ".h"))
            scan_c(text, l);
        else if (has_suffix(path, ".in"))
            scan_roff(text, l);
        else if (has_suffix(path, ".dict") || has_suffix(path, ".seeds"))
            scan_fuzz(text, has_suffix(path, ".dict"), l);
        else
            scan_yaml(text, l);
        free(text);
        return 1;
    }
    if (!S_ISDIR(st.st_mode) || !(dp = opendir(path)))
        return 0;
    while ((de = readdir(dp))) {
        char child[TP_TEST_PATH];
        /* This file names units tepid does not carry on purpose (its rejected forms); its
         * accepted forms are checked against published values above. */
        if (de->d_name[0] == '.' || strcmp(de->d_name, "test_units.c") == 0)
            continue;
        snprintf(child, sizeof child, "%s/%s", path, de->d_name);
        files += scan_tree(child, l);
    }
    closedir(dp);
    return files;
}

/* ---- the names and symbols of udunits2's database ---- */

/* Append the UTF-8 encoding of code point c. */
static size_t put_utf8(char *out, unsigned long c)
{
    if (c < 0x80) {
        out[0] = (char)c;
        return 1;
    }
    if (c < 0x800) {
        out[0] = (char)(0xC0 | (c >> 6));
        out[1] = (char)(0x80 | (c & 0x3F));
        return 2;
    }
    out[0] = (char)(0xE0 | (c >> 12));
    out[1] = (char)(0x80 | ((c >> 6) & 0x3F));
    out[2] = (char)(0x80 | (c & 0x3F));
    return 3;
}

/* udunits2's plural of a singular name (ut_form_plural in its lib/xml.c): "s" after one
 * letter; "ies" for a consonant and "y"; "es" after s, x, z, ch, sh; else "s". */
static void plural_of(const char *singular, char *out, size_t size)
{
    size_t n = strlen(singular);
    if (n == 0 || n + 4 > size) {
        out[0] = '\0';
        return;
    }
    memcpy(out, singular, n + 1);
    if (n == 1)
        strcat(out, "s");
    else if (singular[n - 1] == 'y' && !strchr("aeiou", singular[n - 2]))
        strcpy(out + n - 1, "ies");
    else if (strchr("sxz", singular[n - 1]) || has_suffix(singular, "ch") ||
             has_suffix(singular, "sh"))
        strcat(out, "es");
    else
        strcat(out, "s");
}

/* The text of each <singular>, <plural> and <symbol> element of one udunits2 XML file, with
 * character references decoded; the file's <import>s are read too. Returns the count. */
static int scan_udunits_xml(const char *path, expr_list *l)
{
    char *text = tp_read_file(path), *p;
    char copy[TP_TEST_PATH], dir[TP_TEST_PATH];
    int count = 0;
    if (!text)
        return 0;
    snprintf(copy, sizeof copy, "%s", path);
    snprintf(dir, sizeof dir, "%s", dirname(copy));
    for (p = text; (p = strchr(p, '<')); p++) {
        static const char *const tags[] = {"<singular", "<plural", "<symbol", "<import"};
        char word[128];
        size_t t, n = 0;
        const char *q;
        for (t = 0; t < 4 && strncmp(p, tags[t], strlen(tags[t])) != 0; t++)
            ;
        if (t == 4 || !(q = strchr(p, '>')))
            continue;
        for (q++; isspace((unsigned char)*q); q++)
            ;
        while (*q && *q != '<' && n + 4 < sizeof word) {
            if (q[0] == '&' && q[1] == '#') {
                char *end;
                unsigned long c = q[2] == 'x' ? strtoul(q + 3, &end, 16) : strtoul(q + 2, &end, 10);
                n += put_utf8(word + n, c);
                q = *end == ';' ? end + 1 : end;
            } else {
                word[n++] = *q++;
            }
        }
        while (n > 0 && isspace((unsigned char)word[n - 1]))
            n--;
        word[n] = '\0';
        if (n == 0)
            continue;
        if (t == 3) {
            char child[TP_TEST_PATH];
            if (snprintf(child, sizeof child, "%s/%s", dir, word) < (int)sizeof child)
                count += scan_udunits_xml(child, l);
            continue;
        }
        list_add(l, word, FROM_UDUNITS2);
        count++;
        if (t == 0) {
            char plural[160];
            plural_of(word, plural, sizeof plural);
            list_add(l, plural, FROM_UDUNITS2);
        }
    }
    free(text);
    return count;
}

static int outcome_same(const outcome *a, const outcome *b)
{
    if (a->st != b->st)
        return 0;
    if (a->st != TP_OK)
        return a->msg_hash == b->msg_hash;
    /* Bit for bit: both databases define the unit by the same expression. */
    return a->si[0] == b->si[0] && a->si[1] == b->si[1];
}

static int accepted_somewhere(const outcome *o)
{
    int d;
    for (d = 0; d < TP_DIM_COUNT; d++)
        if (o[d].st == TP_OK)
            return 1;
    return 0;
}

/* One expression's outcomes under both databases against the rule of its origin; prints what
 * differs and returns 1 for a mismatch. */
static int judge(const expr *e, const outcome *mine, const outcome *full)
{
    int d, bad = 0;
    int same = (e->origin & FROM_GENERATED) ||
               ((e->origin & FROM_REPOSITORY) && accepted_somewhere(full));
    for (d = 0; d < TP_DIM_COUNT; d++) {
        int ok = same ? outcome_same(&mine[d], &full[d])
                      : mine[d].st != TP_OK || outcome_same(&mine[d], &full[d]);
        if (!ok) {
            print_error("'%s' as %s: tepid's database %s (%.17g), udunits2's %s (%.17g)\n",
                        e->unit, tp_units_si_name((tp_dim)d),
                        mine[d].st == TP_OK ? "accepts" : "refuses", mine[d].si[0],
                        full[d].st == TP_OK ? "accepts" : "refuses", full[d].si[0]);
            bad = 1;
        }
    }
    return bad;
}

/* The embedded database against udunits2's complete one, over every expression above. */
static void test_units_database_matches_udunits2(void **state)
{
    expr_list l = {0};
    outcome *mine, *full;
    ut_status where;
    const char *xml = ut_get_path_xml(NULL, &where);
    size_t i, n_doc = 0, dropped = 0;
    int files, bad = 0;
    char msg[256];
    const char *hint;
    double si;
    (void)state;

    add_generated(&l);
    files = scan_tree(TP_SOURCE_DIR "/docs", &l) + scan_tree(TP_SOURCE_DIR "/README.md", &l) +
            scan_tree(TP_SOURCE_DIR "/configs", &l) + scan_tree(TP_SOURCE_DIR "/models", &l) +
            scan_tree(TP_SOURCE_DIR "/src", &l) + scan_tree(TP_SOURCE_DIR "/tests", &l);
    assert_true(scan_udunits_xml(xml, &l) > 500); /* udunits2 2.2.28 has about 900 */
    /* Enough of each kind that the comparison means something (a scan that found nothing would
     * pass trivially): the docs and configs alone hold well over a hundred quantities. */
    assert_true(files > 200);
    assert_true(l.added[FROM_GENERATED] > 3000);
    assert_true(l.added[FROM_REPOSITORY] > 1000);
    list_unique(&l);

    mine = calloc(l.n * TP_DIM_COUNT, sizeof *mine);
    full = calloc(l.n * TP_DIM_COUNT, sizeof *full);
    assert_non_null(mine);
    assert_non_null(full);
    evaluate(&l, TP_UNITS_DB_BUILTIN, mine);
    evaluate(&l, TP_UNITS_DB_UDUNITS2, full);
    for (i = 0; i < l.n; i++) {
        const outcome *m = &mine[i * TP_DIM_COUNT], *f = &full[i * TP_DIM_COUNT];
        bad += judge(&l.items[i], m, f);
        n_doc += (l.items[i].origin & FROM_REPOSITORY) && accepted_somewhere(f);
        dropped += (l.items[i].origin & FROM_UDUNITS2) && accepted_somewhere(f) &&
                   !accepted_somewhere(m);
    }
    print_message("units: %zu expressions x %d dimensions; %zu distinct repository quantities "
                  "udunits2 accepts; %zu udunits2 names and symbols tepid does not carry\n",
                  l.n, TP_DIM_COUNT, n_doc, dropped);
    /* The databases do differ, and the comparison sees it: udunits2's has a furlong
     * (660 US survey feet, SP811 B.8), tepid's does not. */
    assert_true(dropped > 300);
    assert_int_equal(tp_units_select_db(TP_UNITS_DB_UDUNITS2), TP_OK);
    assert_int_equal(tp_units_parse("1 furlong", TP_DIM_LENGTH, &si, msg, sizeof msg, &hint),
                     TP_OK);
    tp_check_rel("furlong", si, 660.0 * 1200.0 / 3937.0, 1e-12);
    assert_int_equal(tp_units_select_db(TP_UNITS_DB_BUILTIN), TP_OK);
    free(mine);
    free(full);
    list_free(&l);
    assert_int_equal(bad, 0);
    assert_true(n_doc > 30);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_units_accepted_forms),
        cmocka_unit_test(test_units_absolute_versus_interval),
        cmocka_unit_test(test_units_rejected_forms),
        cmocka_unit_test(test_units_surrounding_whitespace),
        cmocka_unit_test(test_units_from_si),
        cmocka_unit_test(test_units_parse_double_strict),
        cmocka_unit_test(test_units_database_matches_udunits2),
    };
    int rc = cmocka_run_group_tests(tests, NULL, NULL);
    tp_units_shutdown();
    return rc;
}

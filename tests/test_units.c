/* Tests for units.c: quantities with units into SI, absolute temperatures against intervals,
 * and the forms a config value may not take (with their messages). Unit definitions: BIPM,
 * The International System of Units (SI Brochure), 9th ed. 2019, and NIST Special Publication
 * 811 (2008 ed.), Guide for the Use of the SI, Appendix B (conversion factors). */
#include "tp_test.h"

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

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_units_accepted_forms),
        cmocka_unit_test(test_units_absolute_versus_interval),
        cmocka_unit_test(test_units_rejected_forms),
        cmocka_unit_test(test_units_surrounding_whitespace),
        cmocka_unit_test(test_units_from_si),
        cmocka_unit_test(test_units_parse_double_strict),
    };
    int rc = cmocka_run_group_tests(tests, NULL, NULL);
    tp_units_shutdown();
    return rc;
}

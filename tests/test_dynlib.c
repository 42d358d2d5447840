/* Tests of the libraries opened at their first use (src/base/dynlib.h, and the GSL and Nettle
 * tables built on it): a missing library or function is a message naming it and its package,
 * with the table left untouched; a library found fills the table once, and calls through it
 * give the library's answers, checked against published values. */
#include "tp_test.h"

#include "dynlib.h"
#include "gsllib.h"
#include "nettlelib.h"

/* A table of two functions of the C maths library, which every build has. */
#define MATH_API(X) X(cos) X(ldexp)
typedef struct math_api {
    MATH_API(TP_DYNLIB_MEMBER)
} math_api;
#define MATH_ENTRY(f) TP_DYNLIB_ENTRY(math_api, f)

/* A library that is not installed: -1, and the message names it and its package. */
static void test_dynlib_missing_library_is_named(void **state)
{
    math_api t;
    static const tp_dynlib_fn fns[] = {MATH_API(MATH_ENTRY)};
    char why[320];
    (void)state;
    memset(&t, 0, sizeof t);
    assert_int_equal(tp_dynlib_load("libtepid-no-such-library.so.9", "libtepid-none9", &t, fns,
                                    2, why, sizeof why),
                     -1);
    assert_non_null(strstr(why, "cannot load libtepid-no-such-library.so.9"));
    assert_non_null(strstr(why, "Debian package libtepid-none9"));
    assert_null(t.cos);
}

/* A library without one of the functions: -1 naming the function, and no pointer written (a
 * half-filled table would call through NULL later). */
static void test_dynlib_missing_function_leaves_the_table(void **state)
{
    math_api t;
    static const tp_dynlib_fn fns[] = {{"cos", offsetof(math_api, cos)},
                                       {"tepid_no_such_function", offsetof(math_api, ldexp)}};
    char why[320];
    (void)state;
    memset(&t, 0, sizeof t);
    assert_int_equal(tp_dynlib_load("libm.so.6", "libc6", &t, fns, 2, why, sizeof why), -1);
    assert_non_null(strstr(why, "has no function tepid_no_such_function"));
    assert_null(t.cos);
    assert_null(t.ldexp);
}

/* A library found: the table calls the library; cos 0 = 1 and ldexp(3, 4) = 48 exactly
 * (ISO C 7.12.4.5 and 7.12.6.6: the definitions). A second load keeps the table. */
static void test_dynlib_fills_the_table_once(void **state)
{
    static math_api t;
    static const tp_dynlib_fn fns[] = {MATH_API(MATH_ENTRY)};
    char why[320] = "";
    double (*first)(double);
    (void)state;
    assert_int_equal(tp_dynlib_load("libm.so.6", "libc6", &t, fns, 2, why, sizeof why), 0);
    assert_non_null(t.cos);
    assert_true(t.cos(0.0) == 1.0);
    assert_true(t.ldexp(3.0, 4) == 48.0);
    first = t.cos;
    t.cos = NULL; /* a second load does not open or look up again */
    assert_int_equal(tp_dynlib_load("libm.so.6", "libc6", &t, fns, 2, why, sizeof why), 0);
    assert_null(t.cos);
    t.cos = first;
}

/* GSL opened by the build's name: the standard normal's 97.5 % quantile is 1.959964 (any table
 * of the normal distribution, e.g. NIST/SEMATECH e-Handbook of Statistical Methods, 1.3.6.7.1),
 * and Student's t with 10 degrees of freedom has its upper 2.5 % point at 2.228 (the same
 * handbook, table 1.3.6.7.2). */
static void test_gsllib_answers_as_the_tables(void **state)
{
    tp_diag d;
    (void)state;
    tp_diag_init(&d, stderr);
    assert_int_equal(tp_gsllib_load(&d), TP_OK);
    tp_check_abs("z(0.975)", gsl_cdf_ugaussian_Pinv(0.975), 1.959964, 5e-7);
    tp_check_abs("t(0.025, 10)", gsl_cdf_tdist_Qinv(0.025, 10.0), 2.228, 5e-4);
}

/* Nettle opened by the build's name: SHA-256 of "abc" is the example of FIPS 180-2, appendix
 * B.1. */
static void test_nettlelib_hashes_the_fips_example(void **state)
{
    static const uint8_t expected[32] = {
        0xba, 0x78, 0x16, 0xbf, 0x8f, 0x01, 0xcf, 0xea, 0x41, 0x41, 0x40,
        0xde, 0x5d, 0xae, 0x22, 0x23, 0xb0, 0x03, 0x61, 0xa3, 0x96, 0x17,
        0x7a, 0x9c, 0xb4, 0x10, 0xff, 0x61, 0xf2, 0x00, 0x15, 0xad};
    struct sha256_ctx ctx;
    uint8_t digest[SHA256_DIGEST_SIZE];
    tp_diag d;
    (void)state;
    tp_diag_init(&d, stderr);
    assert_int_equal(tp_nettlelib_load(&d), TP_OK);
    sha256_init(&ctx);
    sha256_update(&ctx, 3, (const uint8_t *)"abc");
    sha256_digest(&ctx, SHA256_DIGEST_SIZE, digest);
    assert_memory_equal(digest, expected, 32);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_dynlib_missing_library_is_named),
        cmocka_unit_test(test_dynlib_missing_function_leaves_the_table),
        cmocka_unit_test(test_dynlib_fills_the_table_once),
        cmocka_unit_test(test_gsllib_answers_as_the_tables),
        cmocka_unit_test(test_nettlelib_hashes_the_fips_example),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}

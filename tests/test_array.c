/* Tests of the growable array (src/base/array.h): contents kept across resizes, geometric growth
 * from the first capacity, and failures that leave the array as it was. */
#include "tp_test.h"

#include "array.h"

/* Contents survive growing and shrinking; a new array starts from a NULL pointer. */
static void test_array_resize_keeps_contents(void **state)
{
    double *v = NULL;
    size_t i;
    (void)state;
    assert_int_equal(tp_array_resize(&v, 3, sizeof *v), 0);
    for (i = 0; i < 3; i++)
        v[i] = (double)i + 0.5;
    assert_int_equal(tp_array_resize(&v, 1000, sizeof *v), 0);
    assert_true(v[0] == 0.5 && v[1] == 1.5 && v[2] == 2.5);
    assert_int_equal(tp_array_resize(&v, 2, sizeof *v), 0);
    assert_true(v[0] == 0.5 && v[1] == 1.5);
    free(v);
}

/* count * size past SIZE_MAX is refused before any allocation: the pointer and its block stay
 * as they were (the caller still owns them). */
static void test_array_resize_overflow_leaves_the_array(void **state)
{
    int *v = NULL, *before;
    (void)state;
    assert_int_equal(tp_array_resize(&v, 4, sizeof *v), 0);
    v[3] = 7;
    before = v;
    assert_int_equal(tp_array_resize(&v, SIZE_MAX / 2, sizeof *v), -1);
    assert_ptr_equal(v, before);
    assert_int_equal(v[3], 7);
    free(v);
}

/* Appending one element at a time from an empty array with first = 8 gives the capacities
 * 8, 16, 32, 64 (closed form: 8 * 2^k, the smallest that holds n); a need far beyond doubles
 * until it fits (8 -> 16 -> ... -> 1024 for 1000); a need already met changes nothing. */
static void test_array_reserve_doubles_from_first(void **state)
{
    char *s = NULL;
    size_t cap = 0, n;
    static const size_t expected[] = {8, 8, 8, 8, 8, 8, 8, 8, 16, 16};
    (void)state;
    for (n = 1; n <= 10; n++) {
        assert_int_equal(tp_array_reserve(&s, &cap, n, 1, 8), 0);
        assert_int_equal(cap, expected[n - 1]);
    }
    assert_int_equal(tp_array_reserve(&s, &cap, 40, 1, 8), 0);
    assert_int_equal(cap, 64);
    assert_int_equal(tp_array_reserve(&s, &cap, 1000, 1, 8), 0);
    assert_int_equal(cap, 1024);
    s[999] = 'x';
    assert_int_equal(tp_array_reserve(&s, &cap, 12, 1, 8), 0);
    assert_int_equal(cap, 1024);
    assert_int_equal(s[999], 'x');
    free(s);
}

/* A reservation that cannot be made changes neither the array nor its capacity. */
static void test_array_reserve_failure_changes_nothing(void **state)
{
    double *v = NULL, *before;
    size_t cap = 0;
    (void)state;
    assert_int_equal(tp_array_reserve(&v, &cap, 5, sizeof *v, 4), 0);
    assert_int_equal(cap, 8);
    before = v;
    assert_int_equal(tp_array_reserve(&v, &cap, SIZE_MAX / 4, sizeof *v, 4), -1);
    assert_int_equal(cap, 8);
    assert_ptr_equal(v, before);
    free(v);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_array_resize_keeps_contents),
        cmocka_unit_test(test_array_resize_overflow_leaves_the_array),
        cmocka_unit_test(test_array_reserve_doubles_from_first),
        cmocka_unit_test(test_array_reserve_failure_changes_nothing),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}

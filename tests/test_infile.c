/* Tests of the whole-file reader shared by configs and logs: the bytes come back exactly and
 * NUL-terminated, the size bound is inclusive, and unopenable or unreadable paths are reported
 * in the one wording. All expected values are the test's own inputs (no published source
 * needed: byte counts and strings written by the test). */
#include "tp_test.h"

#include "infile.h"

/* The file's bytes, including an embedded NUL, come back with their length and a NUL after
 * them (the reader promises text the parsers can scan either way). */
static void test_infile_read_returns_bytes_and_terminator(void **state)
{
    static const char bytes[] = {'a', ':', ' ', '1', '\n', '\0', 'z'}; /* 7 bytes */
    tp_scratch s;
    char path[TP_TEST_PATH], *buf = NULL;
    size_t len = 0;
    FILE *fp;
    tp_diag d;
    (void)state;
    tp_scratch_create(&s);
    tp_scratch_path(&s, "seven.bin", path, sizeof path);
    fp = fopen(path, "wb");
    assert_non_null(fp);
    assert_int_equal(fwrite(bytes, 1, sizeof bytes, fp), sizeof bytes);
    assert_int_equal(fclose(fp), 0);
    tp_diag_init(&d, NULL);
    assert_int_equal(tp_infile_read(path, 1024, &buf, &len, &d), TP_OK);
    assert_int_equal(len, 7);
    assert_memory_equal(buf, bytes, sizeof bytes);
    assert_int_equal(buf[7], '\0');
    assert_int_equal(d.errors, 0);
    free(buf);
    tp_scratch_destroy(&s);
}

/* An empty file is an empty text, not an error. */
static void test_infile_read_empty_file(void **state)
{
    tp_scratch s;
    char path[TP_TEST_PATH], *buf = NULL;
    size_t len = 1;
    tp_diag d;
    (void)state;
    tp_scratch_create(&s);
    tp_scratch_write(&s, "empty.txt", "", path);
    tp_diag_init(&d, NULL);
    assert_int_equal(tp_infile_read(path, 16, &buf, &len, &d), TP_OK);
    assert_int_equal(len, 0);
    assert_non_null(buf);
    assert_string_equal(buf, "");
    free(buf);
    tp_scratch_destroy(&s);
}

/* The bound is inclusive: a file of exactly max_bytes is read, one byte more is TP_ERR_LIMIT
 * with nothing reported (the caller words the limit) and no buffer. 20000 bytes crosses the
 * first 8192-byte buffer twice, so the growth path is taken too. */
static void test_infile_read_bound_is_inclusive(void **state)
{
    enum { SIZE = 20000 };
    tp_scratch s;
    char path[TP_TEST_PATH], *text = malloc(SIZE + 1), *buf = NULL;
    size_t len = 0;
    tp_diag d;
    (void)state;
    assert_non_null(text);
    memset(text, 'x', SIZE);
    text[SIZE] = '\0';
    tp_scratch_create(&s);
    tp_scratch_write(&s, "big.txt", text, path);
    tp_diag_init(&d, NULL);
    assert_int_equal(tp_infile_read(path, SIZE, &buf, &len, &d), TP_OK);
    assert_int_equal(len, SIZE);
    assert_memory_equal(buf, text, SIZE);
    free(buf);
    buf = text; /* a non-NULL value the call must clear */
    assert_int_equal(tp_infile_read(path, SIZE - 1, &buf, &len, &d), TP_ERR_LIMIT);
    assert_null(buf);
    assert_int_equal(len, 0);
    assert_int_equal(d.errors, 0);
    free(text);
    tp_scratch_destroy(&s);
}

/* A missing file and a directory: TP_ERR_IO with "PATH: cannot open" (and the hint) or
 * "PATH: cannot read", the wording both the config and the log reader used before sharing. */
static void test_infile_read_failures_are_reported(void **state)
{
    tp_scratch s;
    char path[TP_TEST_PATH], *buf = NULL;
    size_t len = 0;
    tp_diag d;
    (void)state;
    tp_scratch_create(&s);
    tp_scratch_path(&s, "missing.yaml", path, sizeof path);
    tp_diag_init(&d, NULL);
    assert_int_equal(tp_infile_read(path, 16, &buf, &len, &d), TP_ERR_IO);
    assert_null(buf);
    assert_int_equal(d.errors, 1);
    tp_check_contains("missing", d.log, "missing.yaml: cannot open: ");
    tp_check_contains("missing hint", d.log, "check the file name");
    tp_diag_init(&d, NULL);
    /* The scratch directory itself opens for reading on Linux but fails at fread (EISDIR). */
    assert_int_equal(tp_infile_read(s.dir, 16, &buf, &len, &d), TP_ERR_IO);
    assert_null(buf);
    assert_int_equal(d.errors, 1);
    tp_check_contains("directory", d.log, ": cannot read: ");
    tp_scratch_destroy(&s);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_infile_read_returns_bytes_and_terminator),
        cmocka_unit_test(test_infile_read_empty_file),
        cmocka_unit_test(test_infile_read_bound_is_inclusive),
        cmocka_unit_test(test_infile_read_failures_are_reported),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}

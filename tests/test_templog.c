/* Tests of the measured-log reader: every error of the log format by message and line, the
 * time formats, reading units, duty and power columns, column choice, and the size limits. */
#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>
#include <setjmp.h>
#include <cmocka.h>

#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "templog.h"

#define KELVIN 273.15 /* K at 0 degC (definition of the Celsius scale) */

/* Twelve rows of a clean log (more than the 10-row minimum) after `header`: time i s, reading
 * 20 + i, and when `drive` is given a third cell with that text. */
static char *rows12(const char *header, const char *drive)
{
    size_t cap = 4096, len = 0;
    char *s = malloc(cap);
    int i;
    assert_non_null(s);
    len += (size_t)snprintf(s + len, cap - len, "%s\n", header);
    for (i = 0; i < 12; i++)
        len += (size_t)snprintf(s + len, cap - len, "%d,%.1f%s%s\n", i, 20.0 + i, drive ? "," : "",
                                drive ? drive : "");
    return s;
}

/* Replace the first `from` in the heap string *s by `to`, keeping the rest. */
static void replace_first(char **s, const char *from, const char *to)
{
    char *at = strstr(*s, from), *out;
    size_t head;
    assert_non_null(at);
    head = (size_t)(at - *s);
    out = malloc(strlen(*s) - strlen(from) + strlen(to) + 1);
    assert_non_null(out);
    memcpy(out, *s, head);
    strcpy(out + head, to);
    strcat(out, at + strlen(from));
    free(*s);
    *s = out;
}

static tp_status parse(const char *text, const tp_templog_opts *o, tp_templog *log, tp_diag *d)
{
    tp_diag_init(d, NULL);
    return tp_templog_parse("log.csv", text, strlen(text), o, log, d);
}

/* The diagnostics contain `fragment`. */
static void assert_says(const tp_diag *d, const char *fragment)
{
    if (!strstr(d->log, fragment)) {
        fprintf(stderr, "expected '%s' in:\n%s", fragment, d->log);
        fail();
    }
}

/* ---- the errors of the format (issue 7, item 1), each by message and line --------------- */

static void test_log_non_increasing_time_names_line(void **state)
{
    tp_templog log;
    tp_diag d;
    /* Line 1 header, rows on lines 2..13; the time on line 6 repeats line 5's. */
    const char *text = "time_s,temp_C\n0,20\n1,20.1\n2,20.2\n3,20.3\n3,20.4\n5,20.5\n6,20.6\n"
                       "7,20.7\n8,20.8\n9,20.9\n10,21\n11,21.1\n";
    (void)state;
    assert_int_equal(parse(text, NULL, &log, &d), TP_ERR_CONFIG);
    assert_says(&d, "log.csv:6:1: time does not increase: '3' follows the row on line 5");
    assert_null(log.t);
}

static void test_log_non_numeric_cell_names_line_and_column(void **state)
{
    tp_templog log;
    tp_diag d;
    const char *text = "time_s,temp_C\n0,20\n1,20.1\n2,abc\n3,20.3\n4,20.4\n5,20.5\n6,20.6\n"
                       "7,20.7\n8,20.8\n9,20.9\n10,21\n";
    (void)state;
    assert_int_equal(parse(text, NULL, &log, &d), TP_ERR_CONFIG);
    /* "2,abc": the reading starts at byte column 3 of line 4. */
    assert_says(&d, "log.csv:4:3: 'abc' in column 'temp_C' is not a number");
}

static void test_log_non_numeric_time_and_nan_rejected(void **state)
{
    tp_templog log;
    tp_diag d;
    const char *text = "time_s,temp_C\n0,20\n1,nan\nx,20.2\n3,20.3\n4,20.4\n5,20.5\n6,20.6\n"
                       "7,20.7\n8,20.8\n9,20.9\n10,21\n";
    (void)state;
    assert_int_equal(parse(text, NULL, &log, &d), TP_ERR_CONFIG);
    assert_says(&d, "log.csv:3:3: 'nan' in column 'temp_C' is not a number");
    assert_says(&d, "log.csv:4:1: 'x' in column 'time_s' is not a number of seconds");
}

static void test_log_fewer_than_ten_rows(void **state)
{
    tp_templog log;
    tp_diag d;
    const char *text = "time_s,temp_C\n0,20\n1,20.1\n2,20.2\n3,20.3\n4,20.4\n5,20.5\n6,20.6\n"
                       "7,20.7\n8,20.8\n";
    (void)state;
    assert_int_equal(parse(text, NULL, &log, &d), TP_ERR_CONFIG);
    /* Nine data rows, the last on line 10. */
    assert_says(&d, "log.csv:10:1: only 9 data rows; a fit needs at least 10");
}

static void test_log_gap_longer_than_tenth_warns(void **state)
{
    tp_templog log;
    tp_diag d;
    /* Rows every 10 s to 90 s, then 200 s: the log spans 200 s and the 110 s gap before line 12
     * is more than 10 % of it (hand calculation); the log is still read. */
    const char *text = "time_s,temp_C\n0,20\n10,21\n20,22\n30,23\n40,24\n50,25\n60,26\n70,27\n"
                       "80,28\n90,29\n200,30\n";
    (void)state;
    assert_int_equal(parse(text, NULL, &log, &d), TP_OK);
    assert_int_equal(d.warnings, 1);
    assert_says(&d, "log.csv:12:1: warning: a gap of 110.0 s before this row, more than 10 % of "
                    "the log");
    assert_int_equal(log.n, 11);
    tp_templog_clear(&log);
}

static void test_log_reading_outside_range(void **state)
{
    tp_templog log;
    tp_diag d;
    const char *text = "time_s,temp_C\n0,20\n1,20.1\n2,20.2\n3,-51\n4,20.4\n5,20.5\n6,501\n"
                       "7,20.7\n8,20.8\n9,20.9\n10,21\n";
    (void)state;
    assert_int_equal(parse(text, NULL, &log, &d), TP_ERR_CONFIG);
    assert_says(&d, "log.csv:5:3: reading -51 degC (-51.0 degC) is outside -50..500 degC");
    assert_says(&d, "log.csv:8:3: reading 501 degC (501.0 degC) is outside -50..500 degC");
}

static void test_log_reading_range_applies_after_unit(void **state)
{
    tp_templog log;
    tp_diag d;
    /* 950 degF = (950 - 32) 5/9 = 510 degC: outside (hand calculation). */
    char *text = rows12("time_s,temp_F", NULL);
    (void)state;
    replace_first(&text, "5,25.0", "5,950");
    assert_int_equal(parse(text, NULL, &log, &d), TP_ERR_CONFIG);
    assert_says(&d, "reading 950 degF (510.0 degC) is outside -50..500 degC");
    free(text);
}

/* ---- formats ------------------------------------------------------------------------------ */

static void test_log_fahrenheit_and_kelvin_headers(void **state)
{
    tp_templog log;
    tp_diag d;
    char *text = rows12("time_s,temp_F", NULL);
    (void)state;
    assert_int_equal(parse(text, NULL, &log, &d), TP_OK);
    /* 20 degF = (20 - 32) 5/9 degC = -6.6667 degC = 266.4833 K (hand calculation). */
    assert_true(fabs(log.reading[0] - ((20.0 - 32.0) * 5.0 / 9.0 + KELVIN)) < 1e-9);
    assert_string_equal(log.temp_unit, "degF");
    tp_templog_clear(&log);
    free(text);
    text = strdup("t (s),reading [K]\n0,300\n1,300.5\n2,301\n3,301.5\n4,302\n5,302.5\n6,303\n"
                  "7,303\n8,303\n9,303\n");
    assert_non_null(text);
    /* A bare 300 in a kelvin column is 300 K. */
    assert_int_equal(parse(text, NULL, &log, &d), TP_OK);
    assert_true(fabs(log.reading[0] - 300.0) < 1e-12);
    assert_string_equal(log.temp_col, "reading [K]");
    tp_templog_clear(&log);
    free(text);
}

static void test_log_clock_times_wrap_midnight(void **state)
{
    tp_templog log;
    tp_diag d;
    const char *text = "clock,temp\n23:59:55,20\n23:59:56.5,20.1\n23:59:58,20.2\n23:59:59,20.3\n"
                       "0:00:00,20.4\n00:00:01,20.5\n00:00:02,20.6\n00:00:03,20.7\n00:00:04,20.8\n"
                       "00:00:05,20.9\n";
    (void)state;
    assert_int_equal(parse(text, NULL, &log, &d), TP_OK);
    assert_int_equal(log.time_format, TP_TEMPLOG_TIME_CLOCK);
    /* 23:59:56.5 is 1.5 s after 23:59:55; 00:00:05 the next day is 10 s after it. */
    assert_true(fabs(log.t[1] - 1.5) < 1e-9);
    assert_true(fabs(log.t[9] - 10.0) < 1e-9);
    tp_templog_clear(&log);
}

static void test_log_iso_timestamps_with_offsets(void **state)
{
    tp_templog log;
    tp_diag d;
    /* The same instant written in UTC and at +02:00: 2024-03-01T10:00:10Z = 12:00:10+02:00.
     * Row 3 crosses into a leap day: 2024-02-29 exists (2024 is divisible by 4, not by 100). */
    const char *text = "timestamp;temp_C;duty_pct\n"
                       "2024-02-29T23:59:50Z;20.0;100\n"
                       "2024-03-01T00:00:00Z;20.5;100\n"
                       "2024-03-01 02:00:05+02:00;21.0;100\n"
                       "2024-03-01T10:00:10+0000;30.0;50\n"
                       "2024-03-01T12:00:20+02:00;30.1;40\n"
                       "2024-03-01T10:00:30Z;30.2;40\n"
                       "2024-03-01T10:00:40Z;30.3;40\n"
                       "2024-03-01T10:00:50Z;30.4;40\n"
                       "2024-03-01T10:01:00.5Z;30.5;40\n"
                       "2024-03-01T10:01:10Z;30.6;40\n";
    (void)state;
    assert_int_equal(parse(text, NULL, &log, &d), TP_OK);
    assert_int_equal(log.time_format, TP_TEMPLOG_TIME_ISO);
    /* Hand calculation: 10 s to midnight; 02:00:05+02:00 is 00:00:05Z, 15 s after the first;
     * 10:00:10Z is 10 h 0 min 20 s = 36020 s after it; 12:00:20+02:00 = 10:00:20Z. */
    assert_true(fabs(log.t[1] - 10.0) < 1e-6);
    assert_true(fabs(log.t[2] - 15.0) < 1e-6);
    assert_true(fabs(log.t[3] - 36020.0) < 1e-6);
    assert_true(fabs(log.t[4] - 36030.0) < 1e-6);
    assert_true(fabs(log.t[8] - 36070.5) < 1e-6);
    /* duty_pct: 40 % is 0.4. */
    assert_int_equal(log.drive_kind, TP_TEMPLOG_DRIVE_DUTY);
    assert_true(log.duty_percent);
    assert_true(fabs(log.drive[4] - 0.4) < 1e-12);
    assert_int_equal(d.warnings, 1); /* the 10 h jump is a gap (warned), the rest is fine */
    tp_templog_clear(&log);
}

static void test_log_bad_iso_date_rejected(void **state)
{
    tp_templog log;
    tp_diag d;
    /* 2023 is not a leap year: 2023-02-29 does not exist. */
    const char *text = "timestamp,temp_C\n2023-02-28T23:59:58Z,20\n2023-02-29T00:00:00Z,20\n";
    (void)state;
    assert_int_equal(parse(text, NULL, &log, &d), TP_ERR_CONFIG);
    assert_says(&d, "log.csv:3:1: '2023-02-29T00:00:00Z' in column 'timestamp' is not an ISO "
                    "timestamp");
}

static void test_log_duty_fraction_percent_and_power(void **state)
{
    tp_templog log;
    tp_diag d;
    char *text = rows12("time_s,temp_C,duty", "0.5");
    (void)state;
    assert_int_equal(parse(text, NULL, &log, &d), TP_OK);
    assert_int_equal(log.drive_kind, TP_TEMPLOG_DRIVE_DUTY);
    assert_false(log.duty_percent);
    assert_true(fabs(log.drive[0] - 0.5) < 1e-12);
    tp_templog_clear(&log);
    free(text);
    /* Percent declared in the header. */
    text = rows12("time_s,temp_C,pwm (%)", "0");
    replace_first(&text, "0,20.0,0", "0,20.0,75");
    assert_int_equal(parse(text, NULL, &log, &d), TP_OK);
    assert_true(log.duty_percent);
    assert_true(fabs(log.drive[0] - 0.75) < 1e-12);
    tp_templog_clear(&log);
    free(text);
    /* A power column in kW. */
    text = rows12("time_s,temp_C,power (kW)", "0.5");
    assert_int_equal(parse(text, NULL, &log, &d), TP_OK);
    assert_int_equal(log.drive_kind, TP_TEMPLOG_DRIVE_POWER);
    assert_true(fabs(log.drive[0] - 500.0) < 1e-9);
    tp_templog_clear(&log);
    free(text);
}

/* Issue 15 item 23: a duty logged as PWM counts (0..255) whose values stay at or below 100 was
 * read as percent. Values above 1 need a declared scale; counts declare their full scale. */
static void test_log_duty_scale_must_be_declared(void **state)
{
    tp_templog log;
    tp_diag d;
    char *text = rows12("time_s,temp_C,pwm", "0");
    (void)state;
    /* 87 counts of 255: no scale declared, ambiguous: refused at the column's name (line 1,
     * column 15: "time_s,temp_C," is 14 characters). */
    replace_first(&text, "0,20.0,0", "0,20.0,87");
    assert_int_equal(parse(text, NULL, &log, &d), TP_ERR_CONFIG);
    assert_says(&d, "log.csv:1:15: the duty column 'pwm' has values up to 87 and no declared "
                    "scale: percent, or PWM counts?");
    assert_says(&d, "pwm (of 255)");
    free(text);
    /* 255 (above 100) is no clearer. */
    text = rows12("time_s,temp_C,duty", "0");
    replace_first(&text, "0,20.0,0", "0,20.0,255");
    assert_int_equal(parse(text, NULL, &log, &d), TP_ERR_CONFIG);
    assert_says(&d, "log.csv:1:15: the duty column 'duty' has values up to 255");
    free(text);
    /* Declared: 87 counts of 255 is 87/255 = 0.341176 (hand calculation), 255 is full duty. */
    text = rows12("time_s,temp_C,pwm (of 255)", "0");
    replace_first(&text, "0,20.0,0", "0,20.0,87");
    replace_first(&text, "1,21.0,0", "1,21.0,255");
    assert_int_equal(parse(text, NULL, &log, &d), TP_OK);
    assert_int_equal(log.drive_kind, TP_TEMPLOG_DRIVE_DUTY);
    assert_false(log.duty_percent);
    assert_true(fabs(log.drive[0] - 87.0 / 255.0) < 1e-12);
    assert_true(fabs(log.drive[1] - 1.0) < 1e-12);
    assert_true(log.duty_full_scale == 255.0);
    tp_templog_clear(&log);
    free(text);
    /* Square brackets, another full scale (a 10-bit register); a count above it is an error at
     * its row. */
    text = rows12("time_s,temp_C,duty [of 1023]", "0");
    replace_first(&text, "0,20.0,0", "0,20.0,1024");
    assert_int_equal(parse(text, NULL, &log, &d), TP_ERR_CONFIG);
    assert_says(&d, "log.csv:2:1: duty 1024 in column 'duty [of 1023]' is outside 0..1023");
    free(text);
    /* A full scale that is not a whole count. */
    text = rows12("time_s,temp_C,pwm (of 25.5)", "0");
    assert_int_equal(parse(text, NULL, &log, &d), TP_ERR_CONFIG);
    assert_says(&d, "log.csv:1:15: 'of 25.5' in column 'pwm (of 25.5)' is not a full scale of "
                    "counts");
    free(text);
    /* Percent declared, above 100. */
    text = rows12("time_s,temp_C,duty_%", "0");
    replace_first(&text, "0,20.0,0", "0,20.0,101");
    assert_int_equal(parse(text, NULL, &log, &d), TP_ERR_CONFIG);
    assert_says(&d, "log.csv:2:1: duty 101 in column 'duty_%' is outside 0..100");
    free(text);
}

static void test_log_column_options_and_errors(void **state)
{
    tp_templog log;
    tp_diag d;
    tp_templog_opts o = {"Seconds", "plate", "heat"};
    const char *text =
        "sensor,plate,heat,seconds\n"
        "19,20,0.5,0\n19,20.1,0.5,1\n19,20.2,0.5,2\n19,20.3,0.5,3\n19,20.4,0.5,4\n"
        "19,20.5,0.5,5\n19,20.6,0.5,6\n19,20.7,0.5,7\n19,20.8,0.5,8\n19,20.9,0.5,9\n";
    (void)state;
    assert_int_equal(parse(text, &o, &log, &d), TP_OK);
    assert_string_equal(log.time_col, "seconds");
    assert_string_equal(log.temp_col, "plate");
    assert_string_equal(log.drive_col, "heat");
    assert_true(fabs(log.reading[2] - (20.2 + KELVIN)) < 1e-9);
    assert_true(fabs(log.t[9] - 9.0) < 1e-12);
    tp_templog_clear(&log);
    o.temp_col = "bed";
    assert_int_equal(parse(text, &o, &log, &d), TP_ERR_CONFIG);
    assert_says(&d, "log.csv:1:1: --temp-col: no column named 'bed' in the header");
    /* Automatic: 'seconds' is the time, 'sensor' the reading (first by name), no drive. */
    assert_int_equal(parse(text, NULL, &log, &d), TP_OK);
    assert_string_equal(log.time_col, "seconds");
    assert_string_equal(log.temp_col, "sensor");
    assert_int_equal(log.drive_kind, TP_TEMPLOG_DRIVE_NONE);
    tp_templog_clear(&log);
}

static void test_log_comments_crlf_bom_and_minutes(void **state)
{
    tp_templog log;
    tp_diag d;
    const char *text = "\xEF\xBB\xBF# synthetic\r\n\r\ntime_min,temp_C\r\n0,20\r\n0.5,21\r\n"
                       "# a note\r\n1,22\r\n1.5,23\r\n2,24\r\n2.5,25\r\n3,26\r\n3.5,27\r\n4,28\r\n"
                       "4.5,29";
    (void)state;
    assert_int_equal(parse(text, NULL, &log, &d), TP_OK);
    assert_int_equal(log.n, 10);
    /* 4.5 min = 270 s; the row "1,22" is on line 7 (after two comments and a blank line). */
    assert_true(fabs(log.t[9] - 270.0) < 1e-9);
    assert_int_equal(log.line[2], 7);
    tp_templog_clear(&log);
}

static void test_log_short_row_and_empty_and_binary(void **state)
{
    tp_templog log;
    tp_diag d;
    (void)state;
    assert_int_equal(parse("time_s,temp_C\n0,20\n1\n", NULL, &log, &d), TP_ERR_CONFIG);
    assert_says(&d, "log.csv:3:1: the row has 1 cell but the reading column is number 2");
    assert_int_equal(parse("# only a comment\n", NULL, &log, &d), TP_ERR_CONFIG);
    assert_says(&d, "the log is empty");
    assert_int_equal(parse("time_s\n0\n", NULL, &log, &d), TP_ERR_CONFIG);
    assert_says(&d, "the header has only one column");
    tp_diag_init(&d, NULL);
    assert_int_equal(tp_templog_parse("log.csv", "t,x\n0\0,1\n", 9, NULL, &log, &d), TP_ERR_CONFIG);
    assert_says(&d, "binary data");
}

static void test_log_row_limit_checked_before_reading(void **state)
{
    tp_templog log;
    tp_diag d;
    size_t n = (size_t)TP_TEMPLOG_MAX_ROWS + 1, i, len;
    char *text = malloc(16 + 2 * n);
    (void)state;
    assert_non_null(text);
    len = (size_t)sprintf(text, "t,x\n");
    /* Rows "1\n": not even valid, but the count is refused before any row is parsed. */
    for (i = 0; i < n; i++) {
        text[len++] = '1';
        text[len++] = '\n';
    }
    tp_diag_init(&d, NULL);
    assert_int_equal(tp_templog_parse("big.csv", text, len, NULL, &log, &d), TP_ERR_LIMIT);
    assert_says(&d, "big.csv:1000002:1: more than 1000000 data rows");
    free(text);
}

static void test_log_long_line_refused(void **state)
{
    tp_templog log;
    tp_diag d;
    char *text = malloc(TP_TEMPLOG_LINE_MAX + 32);
    (void)state;
    assert_non_null(text);
    strcpy(text, "t,x\n");
    memset(text + 4, '1', TP_TEMPLOG_LINE_MAX + 1);
    text[TP_TEMPLOG_LINE_MAX + 5] = '\n';
    tp_diag_init(&d, NULL);
    assert_int_equal(tp_templog_parse("log.csv", text, TP_TEMPLOG_LINE_MAX + 6, NULL, &log, &d),
                     TP_ERR_LIMIT);
    assert_says(&d, "log.csv:2:4097: line longer than 4096 bytes");
    free(text);
}

static void test_log_drive_is_held_between_rows(void **state)
{
    tp_templog log;
    tp_diag d;
    const char *text = "time_s,temp_C,duty\n0,20,1\n10,21,0.5\n20,22,0.25\n30,23,0\n40,24,0\n"
                       "50,25,0\n60,26,0\n70,27,0\n80,28,0\n90,29,0.125\n";
    (void)state;
    assert_int_equal(parse(text, NULL, &log, &d), TP_OK);
    /* Zero-order hold: the row at or before t. */
    assert_true(tp_templog_drive_at(&log, 0.0) == 1.0);
    assert_true(tp_templog_drive_at(&log, 9.999) == 1.0);
    assert_true(tp_templog_drive_at(&log, 10.0) == 0.5);
    assert_true(tp_templog_drive_at(&log, 25.0) == 0.25);
    assert_true(tp_templog_drive_at(&log, 1000.0) == 0.125);
    tp_templog_clear(&log);
}

/* An unreadable log is an input error, as an unreadable config is (exit 2; issue 15 item 24). */
static void test_log_load_missing_file(void **state)
{
    tp_templog log;
    tp_diag d;
    (void)state;
    tp_diag_init(&d, NULL);
    assert_int_equal(tp_templog_load("/nonexistent/log.csv", NULL, &log, &d), TP_ERR_CONFIG);
    assert_says(&d, "/nonexistent/log.csv: cannot open");
    tp_diag_init(&d, NULL);
    assert_int_equal(tp_templog_load("/", NULL, &log, &d), TP_ERR_CONFIG);
    assert_says(&d, "/: cannot read");
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_log_non_increasing_time_names_line),
        cmocka_unit_test(test_log_non_numeric_cell_names_line_and_column),
        cmocka_unit_test(test_log_non_numeric_time_and_nan_rejected),
        cmocka_unit_test(test_log_fewer_than_ten_rows),
        cmocka_unit_test(test_log_gap_longer_than_tenth_warns),
        cmocka_unit_test(test_log_reading_outside_range),
        cmocka_unit_test(test_log_reading_range_applies_after_unit),
        cmocka_unit_test(test_log_fahrenheit_and_kelvin_headers),
        cmocka_unit_test(test_log_clock_times_wrap_midnight),
        cmocka_unit_test(test_log_iso_timestamps_with_offsets),
        cmocka_unit_test(test_log_bad_iso_date_rejected),
        cmocka_unit_test(test_log_duty_fraction_percent_and_power),
        cmocka_unit_test(test_log_duty_scale_must_be_declared),
        cmocka_unit_test(test_log_column_options_and_errors),
        cmocka_unit_test(test_log_comments_crlf_bom_and_minutes),
        cmocka_unit_test(test_log_short_row_and_empty_and_binary),
        cmocka_unit_test(test_log_row_limit_checked_before_reading),
        cmocka_unit_test(test_log_long_line_refused),
        cmocka_unit_test(test_log_drive_is_held_between_rows),
        cmocka_unit_test(test_log_load_missing_file),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}

/* Measured logs: a CSV of a plate's reading over time (optionally the heater's duty or power),
 * parsed from memory into SI arrays with FILE:LINE diagnostics. No global state, so the parser
 * can be fed arbitrary bytes (fuzzing). The accepted format is described in docs/fit.md. */
#ifndef TP_TEMPLOG_H
#define TP_TEMPLOG_H

#include <stddef.h>

#include "diag.h"
#include "status.h"

#define TP_TEMPLOG_MAX_ROWS 1000000              /* data rows accepted in one log (checked first) */
#define TP_TEMPLOG_MAX_BYTES (64L * 1024 * 1024) /* largest log file read, bytes */
#define TP_TEMPLOG_MAX_COLS 64                   /* columns in one log */
#define TP_TEMPLOG_LINE_MAX 4096                 /* longest line, bytes */
#define TP_TEMPLOG_MIN_ROWS 10                   /* data rows a fit needs at least */
#define TP_TEMPLOG_GAP_FRACTION 0.1   /* -, a gap longer than this share of the log warns */
#define TP_TEMPLOG_READING_MIN 223.15 /* K, -50 degC: lowest plausible reading */
#define TP_TEMPLOG_READING_MAX 773.15 /* K, 500 degC: highest plausible reading */
#define TP_TEMPLOG_NAME_MAX 64        /* longest column name kept, bytes incl. NUL */
#define TP_TEMPLOG_ERRORS_MAX 20      /* row errors reported before giving up */

/* What the optional third column holds. */
typedef enum tp_templog_drive {
    TP_TEMPLOG_DRIVE_NONE, /* no drive column: the configured controller runs */
    TP_TEMPLOG_DRIVE_DUTY, /* the heater's duty, 0..1 (converted from percent or counts) */
    TP_TEMPLOG_DRIVE_POWER /* the power delivered into the heater, W */
} tp_templog_drive;

/* How the time column was written. */
typedef enum tp_templog_time_format {
    TP_TEMPLOG_TIME_NUMBER, /* seconds (or the unit in the header: ms, s, min, h) */
    TP_TEMPLOG_TIME_CLOCK,  /* H:MM:SS(.f) or M:SS(.f) */
    TP_TEMPLOG_TIME_ISO     /* YYYY-MM-DD[T ]HH:MM:SS(.f)[Z|+HH:MM] */
} tp_templog_time_format;

/* Column choices by header name (NULL: automatic, see docs/fit.md). */
typedef struct tp_templog_opts {
    const char *time_col;
    const char *temp_col;
    const char *duty_col;
} tp_templog_opts;

typedef struct tp_templog {
    char *name;      /* the file name used in messages (owned) */
    long n;          /* data rows */
    double *t;       /* s since the first row, strictly increasing */
    double *reading; /* K */
    double *drive;   /* duty (0..1) or power (W) per row; NULL without a drive column */
    int *line;       /* 1-based line of each row in the text */
    tp_templog_drive drive_kind;
    tp_templog_time_format time_format;
    int duty_percent;       /* the duty column was in percent (converted to 0..1) */
    double duty_full_scale; /* what full duty was written as: 1, 100 (percent) or the
                               declared count, e.g. 255 for "pwm (of 255)" */
    char time_col[TP_TEMPLOG_NAME_MAX];
    char temp_col[TP_TEMPLOG_NAME_MAX];
    char drive_col[TP_TEMPLOG_NAME_MAX];
    char temp_unit[8]; /* "degC", "degF" or "K": how the readings were written */
} tp_templog;

/* Parse `len` bytes of `text` (need not be NUL-terminated) named `name` in messages. On
 * success fills *log (the caller calls tp_templog_clear) and returns TP_OK; warnings (long gaps)
 * go to `d`. On failure every problem is reported to `d` as NAME:LINE:COL, *log is left
 * cleared, and the status is TP_ERR_CONFIG (bad content) or TP_ERR_LIMIT (more than
 * TP_TEMPLOG_MAX_ROWS rows, or a line longer than TP_TEMPLOG_LINE_MAX) or TP_ERR_NOMEM. `opts` may
 * be NULL. */
tp_status tp_templog_parse(const char *name, const char *text, size_t len,
                           const tp_templog_opts *opts, tp_templog *log, tp_diag *d);

/* Read a file (at most TP_TEMPLOG_MAX_BYTES) and parse it as tp_templog_parse does. An unreadable
 * file (missing, a directory, no permission) is reported and is TP_ERR_CONFIG, an input error
 * like an unreadable config. */
tp_status tp_templog_load(const char *path, const tp_templog_opts *opts, tp_templog *log,
                          tp_diag *d);

/* Free what a log owns and clear it; accepts a cleared log. */
void tp_templog_clear(tp_templog *log);

/* The drive value in force at time t (s since the first row): the row at or before t
 * (zero-order hold), the first row before it. NaN without a drive column. */
double tp_templog_drive_at(const tp_templog *log, double t);

#endif

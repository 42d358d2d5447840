/* Diagnostics: errors and warnings that name FILE:LINE:COL, the key path and a hint. */
#ifndef TP_DIAG_H
#define TP_DIAG_H

#include <stdio.h>

/* A position in an input: file name (borrowed), 1-based line and column; 0 when unknown. */
typedef struct tp_loc {
    const char *file;
    int line;
    int col;
} tp_loc;

#define TP_DIAG_LOG_MAX 16384 /* bytes of messages kept for tests and reports */
#define TP_DIAG_SHOW_MAX 50    /* errors, and separately warnings, printed before the rest are
                                  only counted (a broken file must not flood the terminal) */

/* A diagnostics sink. Messages go to `stream` (may be NULL) and are kept in `log`. */
typedef struct tp_diag {
    FILE *stream;
    int errors;
    int warnings;
    int quiet;                  /* nonzero: warnings are counted and logged but not printed */
    int held;                   /* errors and warnings beyond TP_DIAG_SHOW_MAX, counted only */
    char log[TP_DIAG_LOG_MAX];  /* every message, newline separated, truncated when full */
    size_t log_len;
} tp_diag;

/* Start a sink writing to `stream` (NULL: keep messages in the log only). */
void tp_diag_init(tp_diag *d, FILE *stream);

/* An error at `loc` about `path` (may be NULL), with an optional `hint` (may be NULL).
 * Past TP_DIAG_SHOW_MAX errors (or warnings) one line says so and later ones are only
 * counted in `errors` (`warnings`) and `held`. */
void tp_diag_error(tp_diag *d, tp_loc loc, const char *path, const char *hint, const char *fmt,
                   ...) __attribute__((format(printf, 5, 6)));

/* A warning: the run goes on. Same arguments as tp_diag_error. */
void tp_diag_warn(tp_diag *d, tp_loc loc, const char *path, const char *hint, const char *fmt,
                  ...) __attribute__((format(printf, 5, 6)));

/* A note without location (for example the reason a computation failed). */
void tp_diag_note(tp_diag *d, const char *fmt, ...) __attribute__((format(printf, 2, 3)));

/* A location with no file position. */
tp_loc tp_diag_loc_none(void);

/* The index of the name in `names` closest to `word` (edit distance, case-insensitive, a
 * swapped pair counting 1), or -1 when none is within 1 edit (words of up to 4 characters) or
 * 2 edits (longer words). */
int tp_diag_closest(const char *word, const char *const *names, size_t n);

/* "did you mean 'NAME'?" for the tp_diag_closest name into `hint`; empty when nothing is close.
 * Used for config keys, modes, verbs and options. */
void tp_diag_suggest(const char *word, const char *const *names, size_t n, char *hint,
                     size_t size);

#endif

/* Diagnostics: formatting of errors and warnings, kept in a log and printed to a stream. */
#include "diag.h"

#include <ctype.h>
#include <stdarg.h>
#include <string.h>

void tp_diag_init(tp_diag *d, FILE *stream)
{
    memset(d, 0, sizeof *d);
    d->stream = stream;
}

tp_loc tp_diag_loc_none(void)
{
    tp_loc loc = {NULL, 0, 0};
    return loc;
}

static void append(tp_diag *d, const char *text, int print)
{
    size_t n = strlen(text);
    size_t room = sizeof d->log - 1 - d->log_len;
    if (n > room)
        n = room;
    memcpy(d->log + d->log_len, text, n);
    d->log_len += n;
    d->log[d->log_len] = '\0';
    if (print && d->stream)
        fputs(text, d->stream);
}

static void emit(tp_diag *d, int is_error, tp_loc loc, const char *path, const char *hint,
                 const char *fmt, va_list ap) __attribute__((format(printf, 6, 0)));
static void emit(tp_diag *d, int is_error, tp_loc loc, const char *path, const char *hint,
                 const char *fmt, va_list ap)
{
    char head[600], body[1024], line[1800];
    int print = is_error || !d->quiet;
    int count = is_error ? d->errors : d->warnings;

    if (count > TP_DIAG_SHOW_MAX) {
        if (count == TP_DIAG_SHOW_MAX + 1) {
            snprintf(line, sizeof line, "tepid: more than %d %s; the rest are not shown\n",
                     TP_DIAG_SHOW_MAX, is_error ? "errors" : "warnings");
            append(d, line, print);
        }
        d->held++;
        return;
    }

    if (loc.file && loc.line > 0)
        snprintf(head, sizeof head, "%s:%d:%d: ", loc.file, loc.line, loc.col > 0 ? loc.col : 1);
    else if (loc.file)
        snprintf(head, sizeof head, "%s: ", loc.file);
    else
        snprintf(head, sizeof head, "tepid: ");
    vsnprintf(body, sizeof body, fmt, ap);
    snprintf(line, sizeof line, "%s%s%s%s%s\n", head, is_error ? "" : "warning: ",
             path && *path ? path : "", path && *path ? ": " : "", body);
    append(d, line, print);
    if (hint && *hint) {
        snprintf(line, sizeof line, "  hint: %s\n", hint);
        append(d, line, print);
    }
}

void tp_diag_error(tp_diag *d, tp_loc loc, const char *path, const char *hint, const char *fmt,
                   ...)
{
    va_list ap;
    d->errors++;
    va_start(ap, fmt);
    emit(d, 1, loc, path, hint, fmt, ap);
    va_end(ap);
}

void tp_diag_warn(tp_diag *d, tp_loc loc, const char *path, const char *hint, const char *fmt,
                  ...)
{
    va_list ap;
    d->warnings++;
    va_start(ap, fmt);
    emit(d, 0, loc, path, hint, fmt, ap);
    va_end(ap);
}

void tp_diag_note(tp_diag *d, const char *fmt, ...)
{
    char body[1024], line[1100];
    va_list ap;
    va_start(ap, fmt);
    vsnprintf(body, sizeof body, fmt, ap);
    va_end(ap);
    snprintf(line, sizeof line, "tepid: %s\n", body);
    append(d, line, 1);
}

/* Edit distance with adjacent transpositions (optimal string alignment), case-insensitive,
 * capped: enough to suggest a key name. A swapped pair ("stpe" for "step") costs 1, as the
 * commonest typo should; plain Levenshtein counts it 2. */
static int distance(const char *a, const char *b)
{
    size_t la = strlen(a), lb = strlen(b), i, j;
    int rows[3][64], *back2, *back, *row, *t;
    if (la >= 63 || lb >= 63)
        return 99;
    back2 = rows[0];
    back = rows[1];
    row = rows[2];
    for (j = 0; j <= lb; j++)
        back[j] = (int)j;
    for (i = 1; i <= la; i++) {
        int ai = tolower((unsigned char)a[i - 1]);
        row[0] = (int)i;
        for (j = 1; j <= lb; j++) {
            int bj = tolower((unsigned char)b[j - 1]);
            int best = back[j - 1] + (ai != bj);
            if (back[j] + 1 < best)
                best = back[j] + 1;
            if (row[j - 1] + 1 < best)
                best = row[j - 1] + 1;
            if (i > 1 && j > 1 && ai == tolower((unsigned char)b[j - 2]) &&
                tolower((unsigned char)a[i - 2]) == bj && back2[j - 2] + 1 < best)
                best = back2[j - 2] + 1;
            row[j] = best;
        }
        t = back2;
        back2 = back;
        back = row;
        row = t;
    }
    return back[lb];
}

int tp_diag_closest(const char *word, const char *const *names, size_t n)
{
    size_t i, best = n;
    int bestd = 99, limit = strlen(word) <= 4 ? 1 : 2;
    for (i = 0; i < n; i++) {
        int dd = distance(word, names[i]);
        if (dd < bestd) {
            bestd = dd;
            best = i;
        }
    }
    return best < n && bestd <= limit ? (int)best : -1;
}

void tp_diag_suggest(const char *word, const char *const *names, size_t n, char *hint,
                     size_t size)
{
    int best = tp_diag_closest(word, names, n);
    hint[0] = '\0';
    if (best >= 0)
        snprintf(hint, size, "did you mean '%s'?", names[best]);
}

/* Diagnostics: formatting of errors and warnings, kept in a log and printed to a stream. */
#include "diag.h"

#include <stdarg.h>
#include <string.h>

void tp_diag_init(tp_diag *d, FILE *stream)
{
    memset(d, 0, sizeof *d);
    d->stream = stream;
}

tp_loc tp_loc_none(void)
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

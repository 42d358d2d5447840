/* Shared libraries opened at their first use (dlopen) instead of linked: a run that does not
 * need a library does not pay for mapping and relocating it at start-up (docs/performance.md,
 * "Start-up"). A user keeps the functions it calls in a table of function pointers, declared and
 * listed with X-macros, and has the library's names call through the table:
 *
 *     #define MY_API(X) X(foo_open) X(foo_close)
 *     static struct my_api { MY_API(TP_DYNLIB_MEMBER) } my;
 *     #define MY_ENTRY(f) TP_DYNLIB_ENTRY(struct my_api, f)
 *     static const tp_dynlib_fn my_fns[] = {MY_API(MY_ENTRY)};
 *     ... tp_dynlib_load("libfoo.so.1", "libfoo1", &my, my_fns, n, why, sizeof why) ...
 *     #define foo_open (*my.foo_open)
 *
 * Each member has the type of the function the library's header declares, so every call is
 * checked against the prototype. */
#ifndef TP_DYNLIB_H
#define TP_DYNLIB_H

#include <stddef.h>

#include "diag.h"
#include "status.h"

/* A function to look up: its name and where its pointer goes in the table. */
typedef struct tp_dynlib_fn {
    const char *name;
    size_t offset;
} tp_dynlib_fn;

#define TP_DYNLIB_MEMBER(f) __typeof__(f) *f;
#define TP_DYNLIB_ENTRY(type, f) {#f, offsetof(type, f)},

/* Open `soname` (once per process: a table already filled is kept) and fill the function
 * pointers of `table` listed in fns[0..n-1]; `package` names the Debian package that holds the
 * library, for the message. The library stays open to the end of the process. 0, or -1 with
 * the reason in why (a missing library or function), the table untouched. Thread-safe; a
 * caller reads the table only after its own call returned 0. */
int tp_dynlib_load(const char *soname, const char *package, void *table, const tp_dynlib_fn *fns,
                   size_t n, char *why, size_t size);

/* tp_dynlib_load for a command that needs the library: TP_OK, or `fail` with the error "the
 * WHAT is not available: <why>" and a hint to install the package reported in d. */
tp_status tp_dynlib_require(const char *soname, const char *package, void *table,
                            const tp_dynlib_fn *fns, size_t n, const char *what, tp_status fail,
                            tp_diag *d);

#endif

/* Shared libraries opened at their first use: dlopen, and a table of function pointers filled
 * with dlsym (dynlib.h says why and how). */
#include "dynlib.h"

#include <dlfcn.h>
#include <pthread.h>
#include <stdio.h>
#include <string.h>

/* The tables already filled, so that a second load is free; a handful at most. */
#define TP_DYNLIB_MAX 8
static const void *dynlib_loaded[TP_DYNLIB_MAX];
static size_t dynlib_n_loaded;
static pthread_mutex_t dynlib_lock = PTHREAD_MUTEX_INITIALIZER; /* studies load from threads */

static int dynlib_is_loaded(const void *table)
{
    size_t i;
    for (i = 0; i < dynlib_n_loaded; i++)
        if (dynlib_loaded[i] == table)
            return 1;
    return 0;
}

static int dynlib_load_locked(const char *soname, const char *package, void *table,
                              const tp_dynlib_fn *fns, size_t n, char *why, size_t size)
{
    void *handle, *sym;
    size_t i;
    if (dynlib_is_loaded(table))
        return 0;
    handle = dlopen(soname, RTLD_NOW | RTLD_LOCAL);
    if (!handle) {
        snprintf(why, size, "cannot load %s (Debian package %s): %.160s", soname, package,
                 dlerror());
        return -1;
    }
    /* Look every name up before writing any: a missing one leaves the table untouched. */
    for (i = 0; i < n; i++)
        if (!dlsym(handle, fns[i].name)) {
            snprintf(why, size, "%s (Debian package %s) has no function %s", soname, package,
                     fns[i].name);
            dlclose(handle);
            return -1;
        }
    for (i = 0; i < n; i++) {
        sym = dlsym(handle, fns[i].name);
        memcpy((char *)table + fns[i].offset, &sym, sizeof sym); /* POSIX: a data pointer
                                                                   holds a function's address */
    }
    if (dynlib_n_loaded < TP_DYNLIB_MAX)
        dynlib_loaded[dynlib_n_loaded++] = table;
    return 0;
}

int tp_dynlib_load(const char *soname, const char *package, void *table, const tp_dynlib_fn *fns,
                   size_t n, char *why, size_t size)
{
    int rc;
    pthread_mutex_lock(&dynlib_lock);
    rc = dynlib_load_locked(soname, package, table, fns, n, why, size);
    pthread_mutex_unlock(&dynlib_lock);
    return rc;
}

tp_status tp_dynlib_require(const char *soname, const char *package, void *table,
                            const tp_dynlib_fn *fns, size_t n, const char *what, tp_status fail,
                            tp_diag *d)
{
    char why[320];
    if (tp_dynlib_load(soname, package, table, fns, n, why, sizeof why) == 0)
        return TP_OK;
    tp_diag_error(d, tp_diag_loc_none(), NULL, "install the package named",
                  "the %s is not available: %s", what, why);
    return fail;
}

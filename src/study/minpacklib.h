/* cminpack's Levenberg-Marquardt, opened at the first fit (study support): only `tepid fit`
 * calls it, so the other verbs do not map the library at start-up (docs/performance.md,
 * "Start-up"). After this header cminpack's name calls through a table that
 * tp_minpacklib_load fills; call it before the first call. */
#ifndef TP_MINPACKLIB_H
#define TP_MINPACKLIB_H

#include <cminpack.h>

#include "diag.h"
#include "dynlib.h"
#include "status.h"

#define TP_MINPACKLIB_API(X) X(lmder)

typedef struct tp_minpacklib_api {
    TP_MINPACKLIB_API(TP_DYNLIB_MEMBER)
} tp_minpacklib_api;

/* The table; filled by tp_minpacklib_load. */
extern tp_minpacklib_api tp_minpacklib_fns;

/* Open cminpack once. TP_OK, or TP_ERR_SOLVER with the reason (the library and its Debian
 * package) reported in d. */
tp_status tp_minpacklib_load(tp_diag *d);

#ifndef TP_MINPACKLIB_NO_REDIRECT /* minpacklib.c itself needs the plain name */
#define lmder (*tp_minpacklib_fns.lmder)
#endif

#endif

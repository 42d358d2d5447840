/* Nettle's SHA-256, opened at the first report (command-line support): only `tepid report`
 * hashes its input, so the other verbs do not map the library at start-up
 * (docs/performance.md, "Start-up"). After this header Nettle's names call through a table
 * that tp_nettlelib_load fills; call it before the first of them. */
#ifndef TP_NETTLELIB_H
#define TP_NETTLELIB_H

#include <nettle/sha2.h>

#include "diag.h"
#include "dynlib.h"
#include "status.h"

#define TP_NETTLELIB_API(X) X(nettle_sha256_digest) X(nettle_sha256_init) X(nettle_sha256_update)

typedef struct tp_nettlelib_api {
    TP_NETTLELIB_API(TP_DYNLIB_MEMBER)
} tp_nettlelib_api;

/* The table; filled by tp_nettlelib_load. */
extern tp_nettlelib_api tp_nettlelib_fns;

/* Open Nettle once. TP_OK, or TP_ERR_IO with the reason (the library and its Debian package)
 * reported in d. */
tp_status tp_nettlelib_load(tp_diag *d);

#ifndef TP_NETTLELIB_NO_REDIRECT /* nettlelib.c itself needs the plain names */
#define nettle_sha256_digest (*tp_nettlelib_fns.nettle_sha256_digest)
#define nettle_sha256_init (*tp_nettlelib_fns.nettle_sha256_init)
#define nettle_sha256_update (*tp_nettlelib_fns.nettle_sha256_update)
#endif

#endif

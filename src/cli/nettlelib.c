/* Nettle, opened at the first report (nettlelib.h says why). TP_NETTLE_SONAME and
 * TP_NETTLE_PACKAGE come from the build (CMakeLists.txt). */
#define TP_NETTLELIB_NO_REDIRECT
#include "nettlelib.h"

#include <stddef.h>

tp_nettlelib_api tp_nettlelib_fns;

#define TP_NETTLELIB_ENTRY(f) TP_DYNLIB_ENTRY(tp_nettlelib_api, f)
static const tp_dynlib_fn nettlelib_list[] = {TP_NETTLELIB_API(TP_NETTLELIB_ENTRY)};

tp_status tp_nettlelib_load(tp_diag *d)
{
    return tp_dynlib_require(TP_NETTLE_SONAME, TP_NETTLE_PACKAGE, &tp_nettlelib_fns,
                             nettlelib_list, sizeof nettlelib_list / sizeof nettlelib_list[0],
                             "hashing library", TP_ERR_IO, d);
}

/* cminpack, opened at the first fit (minpacklib.h says why). TP_CMINPACK_SONAME and
 * TP_CMINPACK_PACKAGE come from the build (CMakeLists.txt). */
#define TP_MINPACKLIB_NO_REDIRECT
#include "minpacklib.h"

#include <stddef.h>

tp_minpacklib_api tp_minpacklib_fns;

#define TP_MINPACKLIB_ENTRY(f) TP_DYNLIB_ENTRY(tp_minpacklib_api, f)
static const tp_dynlib_fn minpacklib_list[] = {TP_MINPACKLIB_API(TP_MINPACKLIB_ENTRY)};

tp_status tp_minpacklib_load(tp_diag *d)
{
    return tp_dynlib_require(TP_CMINPACK_SONAME, TP_CMINPACK_PACKAGE, &tp_minpacklib_fns,
                             minpacklib_list, sizeof minpacklib_list / sizeof minpacklib_list[0],
                             "least-squares library", TP_ERR_SOLVER, d);
}

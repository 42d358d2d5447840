/* KLU and SUNDIALS's sparse matrix and KLU solver, opened at the first sparse solve (klulib.h
 * says why). TP_KLU_SONAME and TP_KLU_PACKAGE come from the build (CMakeLists.txt). */
#define TP_KLULIB_NO_REDIRECT
#include "klulib.h"

#include <stddef.h>

tp_klulib_api tp_klulib_fns;

#define TP_KLULIB_ENTRY(f) TP_DYNLIB_ENTRY(tp_klulib_api, f)
static const tp_dynlib_fn klulib_fns[] = {TP_KLULIB_API(TP_KLULIB_ENTRY)};

tp_status tp_klulib_load(tp_diag *d)
{
    return tp_dynlib_require(TP_KLU_SONAME, TP_KLU_PACKAGE, &tp_klulib_fns, klulib_fns,
                             sizeof klulib_fns / sizeof klulib_fns[0],
                             "sparse solver (large and gridded networks)", TP_ERR_SOLVER, d);
}

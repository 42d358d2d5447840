/* GSL, opened at the first sweep (gsllib.h says why). TP_GSL_SONAME and TP_GSL_PACKAGE come
 * from the build (CMakeLists.txt). */
#define TP_GSLLIB_NO_REDIRECT
#include "gsllib.h"

#include <pthread.h>
#include <stddef.h>
#include <stdio.h>
#include <stdlib.h>

static tp_gsllib_api gsllib_fns;
#define TP_GSLLIB_ENTRY(f) TP_DYNLIB_ENTRY(tp_gsllib_api, f)
static const tp_dynlib_fn gsllib_list[] = {TP_GSLLIB_API(TP_GSLLIB_ENTRY)};

static pthread_once_t gsllib_once = PTHREAD_ONCE_INIT;
static int gsllib_rc = -1;
static char gsllib_why[320];

static void gsllib_open(void)
{
    gsllib_rc = tp_dynlib_load(TP_GSL_SONAME, TP_GSL_PACKAGE, &gsllib_fns, gsllib_list,
                               sizeof gsllib_list / sizeof gsllib_list[0], gsllib_why,
                               sizeof gsllib_why);
    if (gsllib_rc == 0)
        gsllib_fns.gsl_set_error_handler_off();
}

tp_status tp_gsllib_load(tp_diag *d)
{
    pthread_once(&gsllib_once, gsllib_open);
    if (gsllib_rc == 0)
        return TP_OK;
    if (d)
        tp_diag_error(d, tp_diag_loc_none(), NULL, "install the package named",
                      "the statistics library is not available: %s", gsllib_why);
    return TP_ERR_SOLVER;
}

const tp_gsllib_api *tp_gsllib_table(void)
{
    if (tp_gsllib_load(NULL) != TP_OK) {
        fprintf(stderr, "tepid: the statistics library is not available: %s\n", gsllib_why);
        exit(1); /* TP_EXIT_FAILED; reached only when a command skipped tp_gsllib_load */
    }
    return &gsllib_fns;
}

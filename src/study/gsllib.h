/* The GNU Scientific Library, opened at the first sweep (study support): only `tepid sweep`
 * uses it (Sobol' points, the quantiles of its intervals and the least-squares fit of
 * its fitted percentiles), so the other verbs do not map it
 * and its BLAS at start-up (docs/performance.md, "Start-up"). After this header GSL's names
 * call through a table that tp_gsllib_table fills at its first call. */
#ifndef TP_GSLLIB_H
#define TP_GSLLIB_H

#include <gsl/gsl_cdf.h>
#include <gsl/gsl_errno.h>
#include <gsl/gsl_multifit.h>
#include <gsl/gsl_qrng.h>

#include "diag.h"
#include "dynlib.h"
#include "status.h"

#define TP_GSLLIB_API(X)                                                                           \
    X(gsl_cdf_binomial_P) X(gsl_cdf_chisq_Pinv) X(gsl_cdf_chisq_Qinv) X(gsl_cdf_tdist_Qinv)        \
    X(gsl_cdf_ugaussian_Pinv) X(gsl_qrng_alloc) X(gsl_qrng_free) X(gsl_qrng_get)                   \
    X(gsl_qrng_sobol) X(gsl_set_error_handler_off) X(gsl_matrix_alloc) X(gsl_matrix_free)          \
    X(gsl_vector_alloc) X(gsl_vector_free) X(gsl_multifit_linear_alloc)                            \
    X(gsl_multifit_linear_free) X(gsl_multifit_linear)

typedef struct tp_gsllib_api {
    TP_GSLLIB_API(TP_DYNLIB_MEMBER)
} tp_gsllib_api;

/* Open GSL once (thread-safe) and turn its aborting error handler off: every call checks its
 * arguments and results. TP_OK, or TP_ERR_SOLVER with the reason (the library and its Debian
 * package) reported in d (d may be NULL). A command that uses GSL calls this first, so that a
 * missing library is reported as an error, not met in the middle of a study. */
tp_status tp_gsllib_load(tp_diag *d);

/* The table, opened if need be; when GSL cannot be opened (tp_gsllib_load was not called, or
 * failed and was ignored) the reason is printed and the process exits with status 1. */
const tp_gsllib_api *tp_gsllib_table(void);

#ifndef TP_GSLLIB_NO_REDIRECT /* gsllib.c itself needs the plain names */
#define gsl_cdf_binomial_P (*tp_gsllib_table()->gsl_cdf_binomial_P)
#define gsl_cdf_chisq_Pinv (*tp_gsllib_table()->gsl_cdf_chisq_Pinv)
#define gsl_cdf_chisq_Qinv (*tp_gsllib_table()->gsl_cdf_chisq_Qinv)
#define gsl_cdf_tdist_Qinv (*tp_gsllib_table()->gsl_cdf_tdist_Qinv)
#define gsl_cdf_ugaussian_Pinv (*tp_gsllib_table()->gsl_cdf_ugaussian_Pinv)
#define gsl_qrng_alloc (*tp_gsllib_table()->gsl_qrng_alloc)
#define gsl_qrng_free (*tp_gsllib_table()->gsl_qrng_free)
#define gsl_qrng_get (*tp_gsllib_table()->gsl_qrng_get)
#define gsl_qrng_sobol (*tp_gsllib_table()->gsl_qrng_sobol)
#define gsl_set_error_handler_off (*tp_gsllib_table()->gsl_set_error_handler_off)
#define gsl_matrix_alloc (*tp_gsllib_table()->gsl_matrix_alloc)
#define gsl_matrix_free (*tp_gsllib_table()->gsl_matrix_free)
#define gsl_vector_alloc (*tp_gsllib_table()->gsl_vector_alloc)
#define gsl_vector_free (*tp_gsllib_table()->gsl_vector_free)
#define gsl_multifit_linear_alloc (*tp_gsllib_table()->gsl_multifit_linear_alloc)
#define gsl_multifit_linear_free (*tp_gsllib_table()->gsl_multifit_linear_free)
#define gsl_multifit_linear (*tp_gsllib_table()->gsl_multifit_linear)
#endif

#endif

/* KLU sparse direct solves, opened at the first sparse solve (solver support): SuiteSparse's KLU,
 * SUNDIALS's sparse matrix and SUNDIALS's KLU linear solver are one library and its two
 * dependencies, opened with dlopen (dynlib.h) by tp_klulib_load, so that the runs of small
 * networks, which solve dense, do not map the seven shared objects at start-up
 * (docs/performance.md, "Start-up"). After this header the names of those libraries call
 * through the table; call tp_klulib_load before the first of them. */
#ifndef TP_KLULIB_H
#define TP_KLULIB_H

#include <klu.h>
#include <sunlinsol/sunlinsol_klu.h>
#include <sunmatrix/sunmatrix_sparse.h>

#include "diag.h"
#include "dynlib.h"
#include "status.h"

#define TP_KLULIB_API(X)                                                                           \
    X(klu_l_analyze) X(klu_l_defaults) X(klu_l_factor) X(klu_l_free_numeric)                       \
    X(klu_l_free_symbolic) X(klu_l_rcond) X(klu_l_refactor) X(klu_l_solve) X(SUNLinSol_KLU)       \
    X(SUNSparseMatrix) X(SUNSparseMatrix_Columns) X(SUNSparseMatrix_Data)                          \
    X(SUNSparseMatrix_IndexPointers) X(SUNSparseMatrix_IndexValues) X(SUNSparseMatrix_NNZ)

typedef struct tp_klulib_api {
    TP_KLULIB_API(TP_DYNLIB_MEMBER)
} tp_klulib_api;

/* The table; filled by tp_klulib_load. */
extern tp_klulib_api tp_klulib_fns;

/* Open the libraries once. TP_OK, or TP_ERR_SOLVER with the reason (the library and its
 * Debian package) reported in d. */
tp_status tp_klulib_load(tp_diag *d);

#ifndef TP_KLULIB_NO_REDIRECT /* klulib.c itself needs the plain names */
#define klu_l_analyze (*tp_klulib_fns.klu_l_analyze)
#define klu_l_defaults (*tp_klulib_fns.klu_l_defaults)
#define klu_l_factor (*tp_klulib_fns.klu_l_factor)
#define klu_l_free_numeric (*tp_klulib_fns.klu_l_free_numeric)
#define klu_l_free_symbolic (*tp_klulib_fns.klu_l_free_symbolic)
#define klu_l_rcond (*tp_klulib_fns.klu_l_rcond)
#define klu_l_refactor (*tp_klulib_fns.klu_l_refactor)
#define klu_l_solve (*tp_klulib_fns.klu_l_solve)
#define SUNLinSol_KLU (*tp_klulib_fns.SUNLinSol_KLU)
#define SUNSparseMatrix (*tp_klulib_fns.SUNSparseMatrix)
#define SUNSparseMatrix_Columns (*tp_klulib_fns.SUNSparseMatrix_Columns)
#define SUNSparseMatrix_Data (*tp_klulib_fns.SUNSparseMatrix_Data)
#define SUNSparseMatrix_IndexPointers (*tp_klulib_fns.SUNSparseMatrix_IndexPointers)
#define SUNSparseMatrix_IndexValues (*tp_klulib_fns.SUNSparseMatrix_IndexValues)
#define SUNSparseMatrix_NNZ (*tp_klulib_fns.SUNSparseMatrix_NNZ)
#endif

#endif

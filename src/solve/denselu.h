/* The compiled dense LU for the linear systems of small networks (solver support of the CVODE
 * driver; SUNDIALS types stay in the solve files). */
#ifndef TP_DENSELU_H
#define TP_DENSELU_H

#include <nvector/nvector_serial.h>
#include <sundials/sundials_context.h>
#include <sundials/sundials_linearsolver.h>
#include <sunmatrix/sunmatrix_dense.h>

#include "status.h"

/* A dense matrix *a of the size of `y` and SUNDIALS's dense linear solver on it, with the
 * matrix operations (zero, copy, I + c A, and those of its clones) and the LU factorisation and
 * solves (SUNDlsMat_denseGETRF's column-oriented algorithm with partial pivoting) replaced by
 * compiled ones. TP_OK, or TP_ERR_NOMEM with *a and *ls NULL. The caller frees both
 * (SUNLinSolFree, SUNMatDestroy). */
tp_status tp_denselu_create(N_Vector y, SUNContext ctx, SUNMatrix *a, SUNLinearSolver *ls);

#endif

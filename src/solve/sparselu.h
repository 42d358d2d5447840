/* A KLU sparse direct solver for CVODE that analyses the pattern once and keeps its numeric
 * factorization across restarts (solver support of the CVODE driver; SUNDIALS types stay in the
 * solve files). */
#ifndef TP_SPARSELU_H
#define TP_SPARSELU_H

#include <sundials/sundials_context.h>
#include <sundials/sundials_linearsolver.h>

/* A direct linear solver for CSC sparse matrices (SUNSparseMatrix) whose pattern never changes:
 * AMD ordering, one symbolic analysis, a refactorization on the same pivots while KLU's
 * reciprocal condition estimate allows, and no factorization at all when the matrix is
 * bitwise the one factored last. NULL when out of memory; SUNLinSolFree frees it. */
SUNLinearSolver tp_sparselu_create(SUNContext ctx);

/* Numeric factorizations and refactorizations so far into *factors, and setups that found the
 * matrix unchanged into *skips. */
void tp_sparselu_counts(SUNLinearSolver S, long *factors, long *skips);

#endif

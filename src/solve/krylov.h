/* The multigrid-preconditioned linear solver of CVODE's Newton iteration on large gridded
 * networks (solver support of the CVODE driver; SUNDIALS types stay in the solve files).
 * M = I - gamma J is preconditioned by one V-cycle of tp_multigrid on C M (capacities times M: the
 * network's own symmetric form) for the temperatures, then solved exactly for the energy totals
 * (their rows only read temperatures). docs/grid.md, "Solver". */
#ifndef TP_KRYLOV_H
#define TP_KRYLOV_H

#include <sundials/sundials_context.h>
#include <sundials/sundials_linearsolver.h>

#include "network.h"

#define TP_MULTIGRID_CYCLES 1 /* V-cycles per preconditioner solve (docs/grid.md, "Solver") */

typedef struct tp_krylov tp_krylov;

/* The preconditioner of M = I - gamma J for `net` (borrowed) on its Jacobian pattern. NULL when
 * out of memory. */
tp_krylov *tp_krylov_create(const tp_network *net);

/* Free it and NULL the handle; accepts NULL. */
void tp_krylov_destroy(tp_krylov **k);

/* Set the preconditioner up for the Jacobian values `jvals` (pattern order) of version
 * `jversion` and `gamma`; nothing is done when both are those of the last setup. 0, or 1 when
 * the hierarchy cannot be set up (recoverable: CVODE retries with a smaller step). */
int tp_krylov_setup(tp_krylov *k, const double *jvals, long jversion, double gamma);

/* z approximating M^-1 r (state vectors) with the setup's values; `jvals` and `gamma` as given
 * to the last setup. */
void tp_krylov_solve(tp_krylov *k, const double *jvals, double gamma, const double *r,
                     double *z);

/* Setups of the hierarchy so far. */
long tp_krylov_setups(const tp_krylov *k);

/* A SUNDIALS iterative linear solver that returns the preconditioner's answer x = P^-1 b: the
 * V-cycle is a close approximation of M^-1 (it shrinks the error about tenfold), so GMRES would
 * spend most of its work on vector operations and a second preconditioner solve to form the
 * same answer. An inexact solve only slows Newton's convergence; CVODE's nonlinear test still
 * decides when a step is solved. NULL when out of memory; SUNLinSolFree frees it. */
SUNLinearSolver tp_krylov_solver(SUNContext ctx);

#endif

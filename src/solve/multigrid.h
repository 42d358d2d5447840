/* Aggregation multigrid for the linear systems of gridded plates: a hierarchy of coarser
 * networks built by joining 2 x 2 cells of a layer per level (2 x 1 while cells are slender;
 * Galerkin products with piecewise-constant transfer), Gauss-Seidel smoothing and a dense LU at the coarsest level. Used as a
 * preconditioner by the integrator and the steady-state solver (docs/grid.md). Plain arrays
 * only: no SUNDIALS types. */
#ifndef TP_MULTIGRID_H
#define TP_MULTIGRID_H

#include "network.h"
#include "status.h"

#define TP_MULTIGRID_COARSE_MAX 100 /* unknowns at most on the coarsest level (dense LU there) */
#define TP_MULTIGRID_MIN_UNKNOWNS                                                                  \
    1000 /* free nodes of a gridded network from which the integrator and                          \
     the steady-state solver use GMRES with this multigrid                                         \
     preconditioner instead of KLU (docs/grid.md) */
#define TP_MULTIGRID_LEVELS_MAX 12 /* levels at most */
#define TP_MULTIGRID_SWEEPS                                                                        \
    2 /* Gauss-Seidel sweeps before and after each coarse correction                               \
  (measured best per unit of work: docs/grid.md) */

typedef struct tp_multigrid tp_multigrid;

/* A hierarchy for n unknowns with the square CSR pattern (rowptr[n + 1], colind; every row
 * holds its diagonal). Unknown k sits in cell (ci[k], cj[k]) of layer layer[k] >= 0, or outside
 * the grid (layer[k] < 0), where it stays alone at every level. `aspect` is the cells' width
 * (along i) over their depth (along j): slender cells are joined across their short side first.
 * Returns NULL when out of memory. The arrays are copied. */
tp_multigrid *tp_multigrid_create(int n, const int *rowptr, const int *colind, const int *layer,
                                  const int *ci, const int *cj, double aspect);

/* A hierarchy for the temperature block (the first n_free states) of a network's Jacobian
 * pattern: the cells of a gridded network aggregate per layer, other nodes stay alone. For
 * each slot k of the network's CSC pattern, map[k] (net->nnz entries) receives the slot of the
 * hierarchy's fine matrix, or -1 for entries outside the temperature block. NULL when out of
 * memory. */
tp_multigrid *tp_multigrid_for_network(const tp_network *net, int *map);

/* Free a hierarchy and NULL the handle; accepts NULL. */
void tp_multigrid_destroy(tp_multigrid **mg);

/* Load the fine matrix's values (in the order of colind) and compute the coarse matrices and
 * the coarsest LU. TP_ERR_SOLVER when a diagonal or a pivot is zero or not finite. */
tp_status tp_multigrid_setup(tp_multigrid *mg, const double *values);

/* One V-cycle for A x = b from x = 0 (TP_MULTIGRID_SWEEPS Gauss-Seidel sweeps before and after each
 * coarse correction, forward then backward, so the cycle is symmetric for a symmetric A). */
void tp_multigrid_vcycle(tp_multigrid *mg, const double *b, double *x);

/* x approximating A^-1 b by `cycles` V-cycles, each after the first correcting from the
 * residual of the one before (the error shrinks by the cycle's contraction each time). */
void tp_multigrid_solve(tp_multigrid *mg, const double *b, double *x, int cycles);

/* r = b - A x on the fine level. */
void tp_multigrid_residual(const tp_multigrid *mg, const double *b, const double *x, double *r);

/* Number of levels, and the unknowns on level `k` (0 is the fine one). */
int tp_multigrid_levels(const tp_multigrid *mg);
int tp_multigrid_size(const tp_multigrid *mg, int k);

#endif

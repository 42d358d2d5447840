/* Aggregation multigrid.
 *
 * Level 0 is the fine matrix A (n x n, CSR). Level k+1 has one unknown per aggregate of level
 * k: the cells (i, j) of one layer with the same (i / fx, j / fy), fx = fy = 2 for cells about
 * square, only the short side joined (2 x 1 or 1 x 2) for slender ones; unknowns outside the
 * grid stay alone. With P the piecewise-constant prolongation (P_iI = 1 when i belongs to
 * aggregate I), the coarse matrix is the Galerkin product A_c = P^T A P: for a thermal network
 * (C + gamma K, or the conductance matrix K of a steady state) it is the network of the
 * aggregates, with their capacities and the conductances between them summed (in-plane ones
 * then halved, see tp_multigrid_setup). A V-cycle smooths with TP_MULTIGRID_SWEEPS red-black
 * Gauss-Seidel sweeps, restricts the residual by summing it over each aggregate, corrects from the
 * next level, prolongs by injection and smooths with as many backward sweeps. The coarsest level
 * (at most TP_MULTIGRID_COARSE_MAX unknowns) is solved by dense LU with partial pivoting. */
#include "multigrid.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>

typedef struct level {
    int n, nnz;
    int *rowptr, *colind;
    int *diag;     /* slot of each row's diagonal */
    double *val;
    double *inv_diag;
    double *dval;    /* diagonal */
    int *optr, *ocol; /* the off-diagonal entries by row, for the sweeps */
    float *oval;     /* their values in single precision: a preconditioner needs no more,
                        and the sweeps read half the memory */
    int *agg;      /* n: the aggregate (unknown of the next level) of each unknown */
    int *cslot;    /* nnz: the next level's slot each entry adds to */
    char *inplane; /* nnz: the entry couples two different aggregates of one layer (coarse
                      levels; their Galerkin value is halved, see tp_multigrid_setup) */
    int *layer, *ci, *cj;
    double aspect; /* width / depth of this level's cells */
    int n0;        /* unknowns of the first colour (they come first) */
    int fx, fy;    /* cells joined along x and y into the next level (1 or 2) */
    double *x, *b, *r; /* work vectors */
} level;

struct tp_multigrid {
    int n_levels;
    level lv[TP_MULTIGRID_LEVELS_MAX];
    double *lu;    /* coarsest level, dense LU (row major) */
    int *piv;
    int *perm;     /* fine level: the caller's unknown of each internal one (colour order) */
    int *vmap;     /* fine level: the caller's slot of each internal entry */
    double *b0, *x0; /* the caller's vectors in internal order */
};

static void level_free(level *l)
{
    free(l->rowptr);
    free(l->colind);
    free(l->diag);
    free(l->val);
    free(l->inv_diag);
    free(l->dval);
    free(l->optr);
    free(l->ocol);
    free(l->oval);
    free(l->agg);
    free(l->cslot);
    free(l->inplane);
    free(l->layer);
    free(l->ci);
    free(l->cj);
    free(l->x);
    free(l->b);
    free(l->r);
}

void tp_multigrid_destroy(tp_multigrid **mg)
{
    int k;
    if (!mg || !*mg)
        return;
    for (k = 0; k < (*mg)->n_levels; k++)
        level_free(&(*mg)->lv[k]);
    free((*mg)->lu);
    free((*mg)->piv);
    free((*mg)->perm);
    free((*mg)->vmap);
    free((*mg)->b0);
    free((*mg)->x0);
    free(*mg);
    *mg = NULL;
}

int tp_multigrid_levels(const tp_multigrid *mg)
{
    return mg->n_levels;
}

int tp_multigrid_size(const tp_multigrid *mg, int k)
{
    return k >= 0 && k < mg->n_levels ? mg->lv[k].n : 0;
}

static int level_alloc(level *l, int n, int nnz)
{
    l->n = n;
    l->nnz = nnz;
    l->rowptr = malloc((size_t)(n + 1) * sizeof *l->rowptr);
    l->colind = malloc((size_t)(nnz > 0 ? nnz : 1) * sizeof *l->colind);
    l->diag = malloc((size_t)(n > 0 ? n : 1) * sizeof *l->diag);
    l->val = calloc((size_t)(nnz > 0 ? nnz : 1), sizeof *l->val);
    l->inv_diag = malloc((size_t)(n > 0 ? n : 1) * sizeof *l->inv_diag);
    l->dval = malloc((size_t)(n > 0 ? n : 1) * sizeof *l->dval);
    l->optr = malloc((size_t)(n + 1) * sizeof *l->optr);
    l->ocol = malloc((size_t)(nnz > 0 ? nnz : 1) * sizeof *l->ocol);
    l->oval = malloc((size_t)(nnz > 0 ? nnz : 1) * sizeof *l->oval);
    l->layer = malloc((size_t)(n > 0 ? n : 1) * sizeof *l->layer);
    l->ci = malloc((size_t)(n > 0 ? n : 1) * sizeof *l->ci);
    l->cj = malloc((size_t)(n > 0 ? n : 1) * sizeof *l->cj);
    l->x = malloc((size_t)(n > 0 ? n : 1) * sizeof *l->x);
    l->b = malloc((size_t)(n > 0 ? n : 1) * sizeof *l->b);
    l->r = malloc((size_t)(n > 0 ? n : 1) * sizeof *l->r);
    return l->rowptr && l->colind && l->diag && l->val && l->inv_diag && l->dval && l->optr &&
                   l->ocol && l->oval && l->layer &&
                   l->ci && l->cj && l->x && l->b && l->r
               ? 0
               : -1;
}

/* Every level numbers its unknowns by colour: (layer + i + j) even, odd, then the unknowns off
 * the grid. Unknowns of one colour do not couple (cells meet their four neighbours and the
 * cells above and below), so a Gauss-Seidel sweep in this order has no chain of dependent
 * updates and reads the matrix front to back. */
static int colour(int layer, int i, int j)
{
    return layer < 0 ? 2 : (layer + i + j) % 2;
}

/* The diagonal slot of every row, and the off-diagonal pattern. */
static int find_diag(level *l)
{
    int i, k, m = 0;
    for (i = 0; i < l->n; i++) {
        l->diag[i] = -1;
        l->optr[i] = m;
        for (k = l->rowptr[i]; k < l->rowptr[i + 1]; k++) {
            if (l->colind[k] == i)
                l->diag[i] = k;
            else
                l->ocol[m++] = l->colind[k];
        }
        if (l->diag[i] < 0)
            return -1;
    }
    l->optr[l->n] = m;
    for (l->n0 = 0; l->n0 < l->n &&
                    colour(l->layer[l->n0], l->ci[l->n0], l->cj[l->n0]) == 0; l->n0++)
        ;
    return 0;
}

/* A stable ordering by colour of n unknowns: perm[new] = old. */
static void colour_order(int n, const int *layer, const int *ci, const int *cj, int *perm)
{
    int c, i, m = 0;
    for (c = 0; c < 3; c++)
        for (i = 0; i < n; i++)
            if (colour(layer[i], ci[i], cj[i]) == c)
                perm[m++] = i;
}

/* Aggregates of level f into f->agg; returns the number of aggregates. Unknowns are visited in
 * order, so an aggregate's index is that of its first member's first appearance. */
static int aggregate(level *f, int *key_first)
{
    const int fx = f->fx, fy = f->fy;
    int i, m = 0, maxi = 0, maxj = 0, maxl = 0;
    int *seen;
    for (i = 0; i < f->n; i++) {
        if (f->layer[i] < 0)
            continue;
        if (f->ci[i] / fx > maxi)
            maxi = f->ci[i] / fx;
        if (f->cj[i] / fy > maxj)
            maxj = f->cj[i] / fy;
        if (f->layer[i] > maxl)
            maxl = f->layer[i];
    }
    seen = malloc((size_t)(maxl + 1) * (size_t)(maxi + 1) * (size_t)(maxj + 1) * sizeof *seen);
    if (!seen)
        return -1;
    for (i = 0; i < (maxl + 1) * (maxi + 1) * (maxj + 1); i++)
        seen[i] = -1;
    for (i = 0; i < f->n; i++) {
        if (f->layer[i] < 0) {
            f->agg[i] = m;
            key_first[m++] = i;
            continue;
        }
        {
            int key = (f->layer[i] * (maxj + 1) + f->cj[i] / fy) * (maxi + 1) + f->ci[i] / fx;
            if (seen[key] < 0) {
                seen[key] = m;
                key_first[m++] = i;
            }
            f->agg[i] = seen[key];
        }
    }
    free(seen);
    return m;
}

static int cmp_int(const void *a, const void *b)
{
    int x = *(const int *)a, y = *(const int *)b;
    return x < y ? -1 : x > y;
}

/* The next level's pattern (and f's cslot map) from f's aggregates. */
static int coarsen(level *f, level *c)
{
    int *first = malloc((size_t)f->n * sizeof *first), m, i, k, nnz = 0;
    int *cnt = NULL, *fill = NULL, *rows = NULL, *start = NULL;
    int rc = -1;
    f->agg = malloc((size_t)f->n * sizeof *f->agg);
    f->cslot = malloc((size_t)(f->nnz > 0 ? f->nnz : 1) * sizeof *f->cslot);
    if (!first || !f->agg || !f->cslot)
        goto done;
    m = aggregate(f, first);
    if (m < 0)
        goto done;
    /* Renumber the aggregates by colour (their representative's position, halved). */
    {
        int *lay = malloc((size_t)m * sizeof *lay), *ai = malloc((size_t)m * sizeof *ai);
        int *aj = malloc((size_t)m * sizeof *aj), *perm = malloc((size_t)m * sizeof *perm);
        int *inv = malloc((size_t)m * sizeof *inv), *first2 = malloc((size_t)m * sizeof *first2);
        int ok = lay && ai && aj && perm && inv && first2;
        for (i = 0; ok && i < m; i++) {
            int p = first[i];
            lay[i] = f->layer[p];
            ai[i] = f->layer[p] >= 0 ? f->ci[p] / f->fx : 0;
            aj[i] = f->layer[p] >= 0 ? f->cj[p] / f->fy : 0;
        }
        if (ok) {
            colour_order(m, lay, ai, aj, perm);
            for (i = 0; i < m; i++) {
                inv[perm[i]] = i;
                first2[i] = first[perm[i]];
            }
            for (i = 0; i < f->n; i++)
                f->agg[i] = inv[f->agg[i]];
            memcpy(first, first2, (size_t)m * sizeof *first);
        }
        free(lay);
        free(ai);
        free(aj);
        free(perm);
        free(inv);
        free(first2);
        if (!ok)
            goto done;
    }
    /* Members of each aggregate, then each coarse row's columns (sorted, unique). */
    cnt = calloc((size_t)m + 1, sizeof *cnt);
    fill = calloc((size_t)m + 1, sizeof *fill);
    rows = malloc((size_t)f->n * sizeof *rows);
    start = malloc(((size_t)m + 1) * sizeof *start);
    if (!cnt || !fill || !rows || !start)
        goto done;
    for (i = 0; i < f->n; i++)
        cnt[f->agg[i] + 1]++;
    for (i = 0; i < m; i++)
        cnt[i + 1] += cnt[i];
    for (i = 0; i < f->n; i++)
        rows[cnt[f->agg[i]] + fill[f->agg[i]]++] = i;
    /* Upper bound of the coarse nonzeros: the fine ones. */
    {
        int *cols = malloc((size_t)(f->nnz > 0 ? f->nnz : 1) * sizeof *cols);
        int *crow = malloc((size_t)(m + 1) * sizeof *crow);
        int I;
        if (!cols || !crow) {
            free(cols);
            free(crow);
            goto done;
        }
        crow[0] = 0;
        for (I = 0; I < m; I++) {
            int a = nnz, u;
            for (k = cnt[I]; k < cnt[I + 1]; k++) {
                int r = rows[k], s;
                for (s = f->rowptr[r]; s < f->rowptr[r + 1]; s++)
                    cols[nnz++] = f->agg[f->colind[s]];
            }
            qsort(cols + a, (size_t)(nnz - a), sizeof *cols, cmp_int);
            for (k = a, u = a; k < nnz; k++)
                if (u == a || cols[k] != cols[u - 1])
                    cols[u++] = cols[k];
            nnz = u;
            crow[I + 1] = nnz;
        }
        if (level_alloc(c, m, nnz) != 0) {
            free(cols);
            free(crow);
            goto done;
        }
        memcpy(c->rowptr, crow, (size_t)(m + 1) * sizeof *crow);
        memcpy(c->colind, cols, (size_t)(nnz > 0 ? nnz : 1) * sizeof *cols);
        free(cols);
        free(crow);
    }
    /* Where each fine entry lands. */
    for (i = 0; i < f->n; i++) {
        int I = f->agg[i], s;
        for (s = f->rowptr[i]; s < f->rowptr[i + 1]; s++) {
            int J = f->agg[f->colind[s]], lo = c->rowptr[I], hi = c->rowptr[I + 1] - 1;
            while (lo < hi) {
                int mid = (lo + hi) / 2;
                if (c->colind[mid] < J)
                    lo = mid + 1;
                else
                    hi = mid;
            }
            f->cslot[s] = lo;
        }
    }
    for (i = 0; i < m; i++) {
        int p = first[i];
        c->layer[i] = f->layer[p];
        c->ci[i] = f->layer[p] >= 0 ? f->ci[p] / f->fx : 0;
        c->cj[i] = f->layer[p] >= 0 ? f->cj[p] / f->fy : 0;
    }
    c->aspect = f->aspect * f->fx / f->fy;
    c->inplane = malloc((size_t)(c->nnz > 0 ? c->nnz : 1));
    if (!c->inplane)
        goto done;
    /* Which coarse links join aggregates along a direction in which cells were joined. */
    for (i = 0; i < m; i++)
        for (k = c->rowptr[i]; k < c->rowptr[i + 1]; k++) {
            int J = c->colind[k], same = J != i && c->layer[i] >= 0 && c->layer[i] == c->layer[J];
            int along_x = same && c->ci[i] != c->ci[J] && c->cj[i] == c->cj[J];
            int along_y = same && c->cj[i] != c->cj[J] && c->ci[i] == c->ci[J];
            c->inplane[k] = (along_x && f->fx == 2) || (along_y && f->fy == 2);
        }
    rc = find_diag(c);
done:
    free(first);
    free(cnt);
    free(fill);
    free(rows);
    free(start);
    return rc;
}

#define TP_MULTIGRID_SLENDER                                                                       \
    0.5 /* -, cells narrower than this (width / depth, or its inverse) are                         \
    joined across their short side only */

tp_multigrid *tp_multigrid_create(int n, const int *rowptr, const int *colind, const int *layer,
                                  const int *ci, const int *cj, double aspect)
{
    tp_multigrid *mg = calloc(1, sizeof *mg);
    level *l;
    int nnz = rowptr[n];
    if (!mg)
        return NULL;
    l = &mg->lv[0];
    mg->n_levels = 1;
    mg->perm = malloc((size_t)(n > 0 ? n : 1) * sizeof *mg->perm);
    mg->vmap = malloc((size_t)(nnz > 0 ? nnz : 1) * sizeof *mg->vmap);
    mg->b0 = malloc((size_t)(n > 0 ? n : 1) * sizeof *mg->b0);
    mg->x0 = malloc((size_t)(n > 0 ? n : 1) * sizeof *mg->x0);
    if (!mg->perm || !mg->vmap || !mg->b0 || !mg->x0 || level_alloc(l, n, nnz) != 0)
        goto fail;
    /* The fine level in colour order: row r is the caller's row perm[r], its columns renumbered
     * and sorted, vmap[k] the caller's slot of entry k. */
    {
        int *inv = malloc((size_t)(n > 0 ? n : 1) * sizeof *inv), r, k, m = 0;
        if (!inv)
            goto fail;
        colour_order(n, layer, ci, cj, mg->perm);
        for (r = 0; r < n; r++)
            inv[mg->perm[r]] = r;
        l->rowptr[0] = 0;
        for (r = 0; r < n; r++) {
            int o = mg->perm[r], a = m;
            for (k = rowptr[o]; k < rowptr[o + 1]; k++, m++) {
                int c = inv[colind[k]], q = m;
                /* insertion into the sorted row */
                while (q > a && l->colind[q - 1] > c) {
                    l->colind[q] = l->colind[q - 1];
                    mg->vmap[q] = mg->vmap[q - 1];
                    q--;
                }
                l->colind[q] = c;
                mg->vmap[q] = k;
            }
            l->rowptr[r + 1] = m;
            l->layer[r] = layer[o];
            l->ci[r] = ci[o];
            l->cj[r] = cj[o];
        }
        free(inv);
    }
    if (find_diag(l) != 0)
        goto fail;
    l->aspect = aspect > 0 && isfinite(aspect) ? aspect : 1.0;
    while (mg->n_levels < TP_MULTIGRID_LEVELS_MAX &&
           mg->lv[mg->n_levels - 1].n > TP_MULTIGRID_COARSE_MAX) {
        level *f = &mg->lv[mg->n_levels - 1], *c = &mg->lv[mg->n_levels];
        /* Join cells across their short side only while they are slender (semi-coarsening:
         * conduction is strong across the short side), both ways once they are about square. */
        f->fx = f->aspect < TP_MULTIGRID_SLENDER         ? 2
                : f->aspect > 1.0 / TP_MULTIGRID_SLENDER ? 1
                                                         : 2;
        f->fy = f->aspect > 1.0 / TP_MULTIGRID_SLENDER ? 2
                : f->aspect < TP_MULTIGRID_SLENDER     ? 1
                                                       : 2;
        if (coarsen(f, c) != 0) {
            mg->n_levels++;
            goto fail;
        }
        mg->n_levels++;
        if (c->n >= f->n) /* nothing left to join */
            break;
    }
    l = &mg->lv[mg->n_levels - 1];
    mg->lu = malloc((size_t)l->n * (size_t)l->n * sizeof *mg->lu);
    mg->piv = malloc((size_t)(l->n > 0 ? l->n : 1) * sizeof *mg->piv);
    if (!mg->lu || !mg->piv)
        goto fail;
    return mg;
fail:
    tp_multigrid_destroy(&mg);
    return NULL;
}

/* Dense LU with partial pivoting of the coarsest level. */
static int factor_coarsest(tp_multigrid *mg)
{
    level *l = &mg->lv[mg->n_levels - 1];
    int n = l->n, i, j, k;
    double *a = mg->lu;
    memset(a, 0, (size_t)n * (size_t)n * sizeof *a);
    for (i = 0; i < n; i++)
        for (k = l->rowptr[i]; k < l->rowptr[i + 1]; k++)
            a[(size_t)i * n + l->colind[k]] += l->val[k];
    for (k = 0; k < n; k++) {
        int p = k;
        double best = fabs(a[(size_t)k * n + k]);
        for (i = k + 1; i < n; i++)
            if (fabs(a[(size_t)i * n + k]) > best) {
                best = fabs(a[(size_t)i * n + k]);
                p = i;
            }
        if (!(best > 0) || !isfinite(best))
            return -1;
        mg->piv[k] = p;
        if (p != k)
            for (j = 0; j < n; j++) {
                double t = a[(size_t)k * n + j];
                a[(size_t)k * n + j] = a[(size_t)p * n + j];
                a[(size_t)p * n + j] = t;
            }
        for (i = k + 1; i < n; i++) {
            double f = a[(size_t)i * n + k] / a[(size_t)k * n + k];
            a[(size_t)i * n + k] = f;
            if (f != 0.0)
                for (j = k + 1; j < n; j++)
                    a[(size_t)i * n + j] -= f * a[(size_t)k * n + j];
        }
    }
    return 0;
}

static void solve_coarsest(const tp_multigrid *mg, const double *b, double *x)
{
    const level *l = &mg->lv[mg->n_levels - 1];
    int n = l->n, i, j;
    const double *a = mg->lu;
    memcpy(x, b, (size_t)n * sizeof *x);
    for (i = 0; i < n; i++) {
        int p = mg->piv[i];
        if (p != i) {
            double t = x[i];
            x[i] = x[p];
            x[p] = t;
        }
    }
    for (i = 0; i < n; i++)
        for (j = 0; j < i; j++)
            x[i] -= a[(size_t)i * n + j] * x[j];
    for (i = n - 1; i >= 0; i--) {
        for (j = i + 1; j < n; j++)
            x[i] -= a[(size_t)i * n + j] * x[j];
        x[i] /= a[(size_t)i * n + i];
    }
}

tp_status tp_multigrid_setup(tp_multigrid *mg, const double *values)
{
    int k, i, k2;
    level *f = &mg->lv[0];
    for (i = 0; i < f->nnz; i++)
        f->val[i] = values[mg->vmap[i]];
    for (k = 0; k + 1 < mg->n_levels; k++) {
        level *a = &mg->lv[k], *c = &mg->lv[k + 1];
        memset(c->val, 0, (size_t)(c->nnz > 0 ? c->nnz : 1) * sizeof *c->val);
        for (i = 0; i < a->nnz; i++)
            c->val[a->cslot[i]] += a->val[i];
        /* Joining cells along a direction, the Galerkin product with piecewise-constant
         * transfer keeps the conductance of the links that cross the new cell boundary, where
         * the coarse cells' centres are twice as far apart: it doubles the in-plane conduction
         * along that direction. Halving those links (the diagonal keeping the row sum) restores
         * the coarse network's conduction, so the coarse correction of smooth errors is not too
         * small by a factor two. Links across a direction that was not joined are exact. */
        for (i = 0; i < c->n; i++) {
            int s;
            for (s = c->rowptr[i]; s < c->rowptr[i + 1]; s++)
                if (c->inplane[s]) {
                    double half = 0.5 * c->val[s];
                    c->val[s] -= half;
                    c->val[c->diag[i]] += half;
                }
        }
    }
    for (k = 0; k < mg->n_levels; k++) {
        level *l = &mg->lv[k];
        for (i = 0; i < l->n; i++) {
            int m = l->optr[i];
            if (!(l->val[l->diag[i]] != 0.0) || !isfinite(l->val[l->diag[i]]))
                return TP_ERR_SOLVER;
            l->dval[i] = l->val[l->diag[i]];
            l->inv_diag[i] = 1.0 / l->dval[i];
            for (k2 = l->rowptr[i]; k2 < l->rowptr[i + 1]; k2++)
                if (k2 != l->diag[i])
                    l->oval[m++] = (float)l->val[k2];
        }
    }
    return factor_coarsest(mg) == 0 ? TP_OK : TP_ERR_SOLVER;
}

/* b_i - sum of the off-diagonal a_ij x_j, with two partial sums (a shorter chain of dependent
 * additions). */
static double row_off(const level *l, const double *b, const double *x, int i)
{
    int k = l->optr[i], end = l->optr[i + 1];
    double s0 = b[i], s1 = 0.0;
    const float *v = l->oval + k;
    const int *c = l->ocol + k;
    /* The usual rows of a grid (four neighbours in the layer, one or two across) unrolled. */
    switch (end - k) {
    case 5:
        return (s0 - (double)v[0] * x[c[0]] - (double)v[2] * x[c[2]] - (double)v[4] * x[c[4]]) -
               ((double)v[1] * x[c[1]] + (double)v[3] * x[c[3]]);
    case 6:
        return (s0 - (double)v[0] * x[c[0]] - (double)v[2] * x[c[2]] - (double)v[4] * x[c[4]]) -
               ((double)v[1] * x[c[1]] + (double)v[3] * x[c[3]] + (double)v[5] * x[c[5]]);
    default:
        break;
    }
    for (; k + 1 < end; k += 2) {
        s0 -= (double)l->oval[k] * x[l->ocol[k]];
        s1 -= (double)l->oval[k + 1] * x[l->ocol[k + 1]];
    }
    if (k < end)
        s0 -= (double)l->oval[k] * x[l->ocol[k]];
    return s0 + s1;
}

/* b_i - (A x)_i. */
static double row_residual(const level *l, const double *b, const double *x, int i)
{
    return row_off(l, b, x, i) - l->dval[i] * x[i];
}

static void gs_row(const level *l, const double *b, double *x, int i)
{
    x[i] = row_off(l, b, x, i) * l->inv_diag[i];
}

static void gs_forward(const level *l, const double *b, double *x)
{
    int i;
    for (i = 0; i < l->n; i++)
        gs_row(l, b, x, i);
}

static void gs_backward(const level *l, const double *b, double *x)
{
    int i;
    for (i = l->n - 1; i >= 0; i--)
        gs_row(l, b, x, i);
}

static void residual(const level *l, const double *b, const double *x, double *r)
{
    int i;
    for (i = 0; i < l->n; i++)
        r[i] = row_residual(l, b, x, i);
}

void tp_multigrid_residual(const tp_multigrid *mg, const double *b, const double *x, double *r)
{
    const level *l = &mg->lv[0];
    int i;
    for (i = 0; i < l->n; i++) {
        mg->b0[i] = b[mg->perm[i]];
        mg->x0[i] = x[mg->perm[i]];
    }
    residual(l, mg->b0, mg->x0, l->r);
    for (i = 0; i < l->n; i++)
        r[mg->perm[i]] = l->r[i];
}

static void cycle(tp_multigrid *mg, int k, const double *b, double *x)
{
    level *l = &mg->lv[k], *c;
    int i;
    if (k == mg->n_levels - 1) {
        solve_coarsest(mg, b, x);
        return;
    }
    c = &mg->lv[k + 1];
    /* From x = 0 the first colour's rows see no neighbour yet. */
    for (i = 0; i < l->n0; i++)
        x[i] = b[i] * l->inv_diag[i];
    for (; i < l->n; i++)
        x[i] = 0.0;
    for (i = l->n0; i < l->n; i++)
        gs_row(l, b, x, i);
    for (i = 1; i < TP_MULTIGRID_SWEEPS; i++)
        gs_forward(l, b, x);
    memset(c->b, 0, (size_t)c->n * sizeof *c->b);
    for (i = 0; i < l->n; i++)
        c->b[l->agg[i]] += row_residual(l, b, x, i);
    cycle(mg, k + 1, c->b, c->x);
    for (i = 0; i < l->n; i++)
        x[i] += c->x[l->agg[i]];
    for (i = 0; i < TP_MULTIGRID_SWEEPS; i++)
        gs_backward(l, b, x);
}

void tp_multigrid_vcycle(tp_multigrid *mg, const double *b, double *x)
{
    tp_multigrid_solve(mg, b, x, 1);
}

void tp_multigrid_solve(tp_multigrid *mg, const double *b, double *x, int cycles)
{
    level *l = &mg->lv[0];
    int i, k, n = l->n;
    for (i = 0; i < n; i++)
        mg->b0[i] = b[mg->perm[i]];
    cycle(mg, 0, mg->b0, mg->x0);
    for (k = 1; k < cycles; k++) {
        /* Correct from the residual; the fine level's work vectors are free here. */
        residual(l, mg->b0, mg->x0, l->r);
        cycle(mg, 0, l->r, l->b);
        for (i = 0; i < n; i++)
            mg->x0[i] += l->b[i];
    }
    for (i = 0; i < n; i++)
        x[mg->perm[i]] = mg->x0[i];
}

tp_multigrid *tp_multigrid_for_network(const tp_network *net, int *map)
{
    int nf = net->n_free, c, k, i, j, l;
    int *rowptr = calloc((size_t)nf + 1, sizeof *rowptr), *fill = calloc((size_t)nf + 1, sizeof *fill);
    int *colind = malloc((size_t)(net->nnz > 0 ? net->nnz : 1) * sizeof *colind);
    int *layer = malloc((size_t)(nf > 0 ? nf : 1) * sizeof *layer);
    int *ci = calloc((size_t)(nf > 0 ? nf : 1), sizeof *ci);
    int *cj = calloc((size_t)(nf > 0 ? nf : 1), sizeof *cj);
    tp_multigrid *mg = NULL;
    if (!rowptr || !fill || !colind || !layer || !ci || !cj)
        goto done;
    /* CSC columns in increasing order give each CSR row its columns sorted. */
    for (c = 0; c < nf; c++)
        for (k = net->colptr[c]; k < net->colptr[c + 1]; k++)
            if (net->rowind[k] < nf)
                rowptr[net->rowind[k] + 1]++;
    for (i = 0; i < nf; i++)
        rowptr[i + 1] += rowptr[i];
    for (k = 0; k < net->nnz; k++)
        map[k] = -1;
    for (c = 0; c < nf; c++)
        for (k = net->colptr[c]; k < net->colptr[c + 1]; k++) {
            int r = net->rowind[k];
            if (r >= nf)
                continue;
            map[k] = rowptr[r] + fill[r]++;
            colind[map[k]] = c;
        }
    for (i = 0; i < nf; i++)
        layer[i] = -1;
    if (net->grid) {
        const tp_net_grid *g = net->grid;
        for (l = 0; l < g->n_layers; l++)
            for (j = 0; j < g->ny; j++)
                for (i = 0; i < g->nx; i++) {
                    int node = g->cell[(l * g->ny + j) * g->nx + i], s;
                    if (node < 0 || (s = net->nodes[node].state) < 0)
                        continue;
                    layer[s] = l;
                    ci[s] = i;
                    cj[s] = j;
                }
    }
    mg = tp_multigrid_create(
        nf, rowptr, colind, layer, ci, cj,
        net->grid ? (net->grid->width / net->grid->nx) / (net->grid->depth / net->grid->ny) : 1.0);
done:
    free(rowptr);
    free(fill);
    free(colind);
    free(layer);
    free(ci);
    free(cj);
    return mg;
}

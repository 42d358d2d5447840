/* Tests of the multigrid solver support (src/solve/multigrid.c) and of the GMRES path that
 * uses it as preconditioner (src/solve/krylov.c through tp_integrate): repeated V-cycles solve
 * a two-dimensional heat system to its closed-form solution, the hierarchy coarsens as
 * documented (2 x 2 for square cells, across the short side for slender ones, unknowns outside
 * the grid alone), one V-cycle shrinks the residual severalfold and is a symmetric operator, a
 * singular matrix is refused, and a gridded transient solved with the multigrid-preconditioned
 * Krylov solver agrees with the same run solved by KLU. (test_grid.c checks the gridded answers
 * against series solutions and a chain against its residual.) */
#include "tp_test.h"

#include "integrate.h"
#include "multigrid.h"

#define PI 3.14159265358979323846

/* A one-layer grid of nx x ny cells: the matrix c I + g L in CSR (columns ascending), L the
 * graph Laplacian of the five-point stencil with insulated (Neumann) edges: the system
 * (C + gamma K) x = b of one implicit time step of a plate with cell capacity c and in-plane
 * conductance g / gamma. `extra` unknowns outside the grid follow, each joined with
 * conductance g to cell 0 (c on its diagonal too). */
typedef struct heat {
    int n, nx, ny;
    int *rowptr, *colind, *layer, *ci, *cj;
    double *val;
} heat;

static void heat_build(heat *h, int nx, int ny, int extra, double c, double g)
{
    int i, j, m = 0, k, e;
    h->nx = nx;
    h->ny = ny;
    h->n = nx * ny + extra;
    h->rowptr = malloc((size_t)(h->n + 1) * sizeof *h->rowptr);
    h->colind = malloc((size_t)(5 * h->n + 2 * extra) * sizeof *h->colind);
    h->val = malloc((size_t)(5 * h->n + 2 * extra) * sizeof *h->val);
    h->layer = malloc((size_t)h->n * sizeof *h->layer);
    h->ci = malloc((size_t)h->n * sizeof *h->ci);
    h->cj = malloc((size_t)h->n * sizeof *h->cj);
    assert_true(h->rowptr && h->colind && h->val && h->layer && h->ci && h->cj);
    for (k = 0; k < h->n; k++) {
        int nb[5], nn = 0, t, deg = 0;
        h->rowptr[k] = m;
        if (k < nx * ny) {
            i = k % nx;
            j = k / nx;
            h->layer[k] = 0;
            h->ci[k] = i;
            h->cj[k] = j;
            if (j > 0)
                nb[nn++] = k - nx;
            if (i > 0)
                nb[nn++] = k - 1;
            if (i + 1 < nx)
                nb[nn++] = k + 1;
            if (j + 1 < ny)
                nb[nn++] = k + nx;
            deg = nn;
            if (k == 0)
                for (e = 0; e < extra; e++, deg++)
                    nb[nn++] = nx * ny + e;
        } else {
            h->layer[k] = -1;
            h->ci[k] = h->cj[k] = 0;
            nb[nn++] = 0;
            deg = 1;
        }
        /* The neighbours come ascending except the extras of cell 0 (after k + nx); the
         * diagonal goes in order. */
        for (t = 0; t < nn && nb[t] < k; t++) {
            h->colind[m] = nb[t];
            h->val[m++] = -g;
        }
        h->colind[m] = k;
        h->val[m++] = c + g * deg;
        for (; t < nn; t++) {
            h->colind[m] = nb[t];
            h->val[m++] = -g;
        }
    }
    h->rowptr[h->n] = m;
}

static void heat_free(heat *h)
{
    free(h->rowptr);
    free(h->colind);
    free(h->val);
    free(h->layer);
    free(h->ci);
    free(h->cj);
}

/* y = A x, from the CSR arrays (independent of the solver's own residual). */
static void heat_apply(const heat *h, const double *x, double *y)
{
    int k, s;
    for (k = 0; k < h->n; k++) {
        y[k] = 0.0;
        for (s = h->rowptr[k]; s < h->rowptr[k + 1]; s++)
            y[k] += h->val[s] * x[h->colind[s]];
    }
}

static double max_abs(const double *v, int n)
{
    double m = 0.0;
    int i;
    for (i = 0; i < n; i++)
        m = fmax(m, fabs(v[i]));
    return m;
}

/* Cosine mode (p, q) of the insulated grid at cell (i, j): cos(pi p (i + 1/2) / nx)
 * cos(pi q (j + 1/2) / ny). Closed form: it is an eigenvector of the five-point graph Laplacian
 * with insulated edges, eigenvalue (2 - 2 cos(pi p / nx)) + (2 - 2 cos(pi q / ny)) (the
 * discrete cosine transform of type II diagonalises the path graph's Laplacian; Strang, "The
 * discrete cosine transform", SIAM Review 41 (1999) 135-147, Sec. 2). So A x = b for
 * b = mode has the solution x = mode / (c + g lambda). */
static double mode(int nx, int ny, int p, int q, int i, int j)
{
    return cos(PI * p * (i + 0.5) / nx) * cos(PI * q * (j + 0.5) / ny);
}

static double mode_lambda(int nx, int ny, int p, int q)
{
    return (2.0 - 2.0 * cos(PI * p / nx)) + (2.0 - 2.0 * cos(PI * q / ny));
}

/* 40 x 40 cells (1600 unknowns, 3 levels), c = 0.01 and g = 1: a stiff step (gamma K a hundred
 * times C), the hard case for a preconditioner. b is the sum of four modes, from the smoothest
 * (uniform) to the roughest (39, 39); 40 V-cycles from the residual reach the closed-form
 * solution to 1e-9 of its size. */
static void test_multigrid_solves_heat_system_to_closed_form(void **state)
{
    enum { NX = 40, NY = 40 };
    static const int pq[4][2] = {{0, 0}, {1, 2}, {7, 20}, {39, 39}};
    const double c = 0.01, g = 1.0;
    heat h;
    tp_multigrid *mg;
    double *b, *x, *want, *r, *ax;
    int k, m;
    (void)state;
    heat_build(&h, NX, NY, 0, c, g);
    b = calloc((size_t)h.n, sizeof *b);
    x = calloc((size_t)h.n, sizeof *x);
    want = calloc((size_t)h.n, sizeof *want);
    r = calloc((size_t)h.n, sizeof *r);
    ax = calloc((size_t)h.n, sizeof *ax);
    assert_true(b && x && want && r && ax);
    for (k = 0; k < h.n; k++)
        for (m = 0; m < 4; m++) {
            double v = mode(NX, NY, pq[m][0], pq[m][1], k % NX, k / NX);
            b[k] += v;
            want[k] += v / (c + g * mode_lambda(NX, NY, pq[m][0], pq[m][1]));
        }
    mg = tp_multigrid_create(h.n, h.rowptr, h.colind, h.layer, h.ci, h.cj, 1.0);
    assert_non_null(mg);
    assert_int_equal(tp_multigrid_setup(mg, h.val), TP_OK);
    tp_multigrid_solve(mg, b, x, 40);
    for (k = 0; k < h.n; k++)
        r[k] = x[k] - want[k];
    tp_check_abs("largest error against the closed form", max_abs(r, h.n), 0.0,
                 1e-9 * max_abs(want, h.n));
    /* The residual the solver reports is b - A x computed here. */
    tp_multigrid_residual(mg, b, x, r);
    heat_apply(&h, x, ax);
    for (k = 0; k < h.n; k++)
        tp_check_abs("residual", r[k], b[k] - ax[k], 1e-12 * max_abs(b, h.n));
    tp_multigrid_destroy(&mg);
    heat_free(&h);
    free(b);
    free(x);
    free(want);
    free(r);
    free(ax);
}

/* The hierarchy's sizes (multigrid.h: 2 x 2 cells joined per level for square cells, only the
 * short side while width / depth < 0.5, levels until at most TP_MULTIGRID_COARSE_MAX unknowns),
 * by hand:
 *   32 x 32 square:     1024 -> 16 x 16 = 256 -> 8 x 8 = 64 (<= 100): 3 levels;
 *   64 x 16, aspect 0.25 (cells four times deeper than wide, joined along i only):
 *                       1024 -> 32 x 16 = 512 (aspect 0.5, now joined both ways)
 *                       -> 16 x 8 = 128 -> 8 x 4 = 32: 4 levels;
 *   32 x 32 plus 3 unknowns outside the grid: each stays alone, 1027 -> 259 -> 67. */
static void test_multigrid_coarsens_as_documented(void **state)
{
    static const struct {
        int nx, ny, extra;
        double aspect;
        int levels, size[4];
    } cases[] = {
        {32, 32, 0, 1.0, 3, {1024, 256, 64, 0}},
        {64, 16, 0, 0.25, 4, {1024, 512, 128, 32}},
        {16, 64, 0, 4.0, 4, {1024, 512, 128, 32}},
        {32, 32, 3, 1.0, 3, {1027, 259, 67, 0}},
    };
    size_t t;
    int k;
    (void)state;
    for (t = 0; t < sizeof cases / sizeof cases[0]; t++) {
        heat h;
        tp_multigrid *mg;
        heat_build(&h, cases[t].nx, cases[t].ny, cases[t].extra, 0.1, 1.0);
        mg = tp_multigrid_create(h.n, h.rowptr, h.colind, h.layer, h.ci, h.cj, cases[t].aspect);
        assert_non_null(mg);
        assert_int_equal(tp_multigrid_levels(mg), cases[t].levels);
        for (k = 0; k < cases[t].levels; k++)
            assert_int_equal(tp_multigrid_size(mg, k), cases[t].size[k]);
        assert_true(tp_multigrid_size(mg, cases[t].levels - 1) <= TP_MULTIGRID_COARSE_MAX);
        tp_multigrid_destroy(&mg);
        heat_free(&h);
    }
}

/* A grid too small to coarsen (10 x 10 = 100 unknowns, TP_MULTIGRID_COARSE_MAX) is one level,
 * solved by dense LU: one V-cycle is then the exact solution (to rounding). Checked against the
 * closed form of mode (3, 5): x = mode / (c + g lambda). */
static void test_multigrid_single_level_is_exact(void **state)
{
    heat h;
    tp_multigrid *mg;
    double b[100], x[100], err = 0.0, lam = mode_lambda(10, 10, 3, 5);
    int k;
    (void)state;
    heat_build(&h, 10, 10, 0, 0.5, 2.0);
    mg = tp_multigrid_create(h.n, h.rowptr, h.colind, h.layer, h.ci, h.cj, 1.0);
    assert_non_null(mg);
    assert_int_equal(tp_multigrid_levels(mg), 1);
    assert_int_equal(tp_multigrid_setup(mg, h.val), TP_OK);
    for (k = 0; k < 100; k++)
        b[k] = mode(10, 10, 3, 5, k % 10, k / 10);
    tp_multigrid_vcycle(mg, b, x);
    for (k = 0; k < 100; k++)
        err = fmax(err, fabs(x[k] - b[k] / (0.5 + 2.0 * lam)));
    tp_check_abs("one-level solve", err, 0.0, 1e-13);
    tp_multigrid_destroy(&mg);
    heat_free(&h);
}

/* One V-cycle shrinks the residual of a rough right-hand side (a fixed pseudo-random sequence)
 * at least fivefold per cycle on 64 x 64 cells at every stiffness from c = 1 (mild) to
 * c = 1e-4 (nearly the steady conduction problem). krylov.h relies on "about tenfold"; five is
 * the margin this test allows. */
static void test_multigrid_vcycle_contracts(void **state)
{
    static const double cs[3] = {1.0, 1e-2, 1e-4};
    int t, k, cyc;
    (void)state;
    for (t = 0; t < 3; t++) {
        heat h;
        tp_multigrid *mg;
        double *b, *x, *dx, *r;
        unsigned long seed = 12345;
        heat_build(&h, 64, 64, 0, cs[t], 1.0);
        b = malloc((size_t)h.n * sizeof *b);
        x = calloc((size_t)h.n, sizeof *x);
        dx = malloc((size_t)h.n * sizeof *dx);
        r = malloc((size_t)h.n * sizeof *r);
        assert_true(b && x && dx && r);
        for (k = 0; k < h.n; k++) {
            seed = seed * 6364136223846793005UL + 1442695040888963407UL;
            b[k] = (double)(seed >> 33) / (double)(1UL << 31) - 0.5;
        }
        mg = tp_multigrid_create(h.n, h.rowptr, h.colind, h.layer, h.ci, h.cj, 1.0);
        assert_non_null(mg);
        assert_int_equal(tp_multigrid_setup(mg, h.val), TP_OK);
        memcpy(r, b, (size_t)h.n * sizeof *r);
        for (cyc = 0; cyc < 4; cyc++) {
            double before = max_abs(r, h.n), after;
            tp_multigrid_vcycle(mg, r, dx);
            for (k = 0; k < h.n; k++)
                x[k] += dx[k];
            tp_multigrid_residual(mg, b, x, r);
            after = max_abs(r, h.n);
            if (!(after <= 0.2 * before)) {
                print_error("c = %g, cycle %d: residual %g -> %g\n", cs[t], cyc, before, after);
                fail();
            }
        }
        tp_multigrid_destroy(&mg);
        heat_free(&h);
        free(b);
        free(x);
        free(dx);
        free(r);
    }
}

/* The V-cycle as an operator B (column j = vcycle(e_j)) is symmetric for a symmetric A
 * (forward sweeps before, backward after: multigrid.h), which is what lets it precondition a
 * symmetric system. 16 x 16 cells (two levels); the off-diagonal entries are held in single
 * precision, so symmetry to 1e-5 of the largest entry. */
static void test_multigrid_vcycle_is_symmetric(void **state)
{
    enum { N = 256 };
    static double B[N][N];
    double e[N], worst = 0.0, big = 0.0;
    heat h;
    tp_multigrid *mg;
    int i, j;
    (void)state;
    heat_build(&h, 16, 16, 0, 0.05, 1.0);
    mg = tp_multigrid_create(h.n, h.rowptr, h.colind, h.layer, h.ci, h.cj, 1.0);
    assert_non_null(mg);
    assert_int_equal(tp_multigrid_levels(mg), 2);
    assert_int_equal(tp_multigrid_setup(mg, h.val), TP_OK);
    for (j = 0; j < N; j++) {
        memset(e, 0, sizeof e);
        e[j] = 1.0;
        tp_multigrid_vcycle(mg, e, B[j]);
    }
    for (i = 0; i < N; i++)
        for (j = 0; j < N; j++) {
            worst = fmax(worst, fabs(B[i][j] - B[j][i]));
            big = fmax(big, fabs(B[i][j]));
        }
    tp_check_abs("|B - B^T|", worst, 0.0, 1e-5 * big);
    tp_multigrid_destroy(&mg);
    heat_free(&h);
}

/* A zero or non-finite diagonal is refused by setup (TP_ERR_SOLVER), not divided by. */
static void test_multigrid_refuses_bad_diagonal(void **state)
{
    heat h;
    tp_multigrid *mg;
    int d;
    (void)state;
    heat_build(&h, 20, 20, 0, 0.1, 1.0);
    mg = tp_multigrid_create(h.n, h.rowptr, h.colind, h.layer, h.ci, h.cj, 1.0);
    assert_non_null(mg);
    for (d = h.rowptr[5]; h.colind[d] != 5; d++)
        ;
    h.val[d] = 0.0;
    assert_int_equal(tp_multigrid_setup(mg, h.val), TP_ERR_SOLVER);
    h.val[d] = (double)NAN;
    assert_int_equal(tp_multigrid_setup(mg, h.val), TP_ERR_SOLVER);
    h.val[d] = 0.1 + 4.0;
    assert_int_equal(tp_multigrid_setup(mg, h.val), TP_OK);
    tp_multigrid_destroy(&mg);
    heat_free(&h);
}

/* ---- the preconditioned Krylov solver against KLU ------------------------------------------ */

/* Final temperatures of a run, with the solver statistics. */
typedef struct last {
    int n;
    double *temps;
} last;

static int keep_last(void *user, const tp_sample *s)
{
    last *l = user;
    memcpy(l->temps, s->temps, (size_t)l->n * sizeof *l->temps);
    return 0;
}

static void run_with(const tp_yaml_net *y, int ls, last *l, tp_integrate_stats *st)
{
    tp_integrate_opts o;
    tp_diag d;
    tp_diag_init(&d, NULL);
    tp_integrate_defaults(&y->desc.run, &o);
    o.rtol = 1e-8;
    o.linear_solver = ls;
    o.out = keep_last;
    o.user = l;
    if (tp_integrate(y->net, &o, st, &d) != TP_OK) {
        print_error("%s", d.log);
        fail();
    }
}

/* A 40 x 30 gridded aluminium-like plate (1200 cells, above TP_MULTIGRID_MIN_UNKNOWNS) on an
 * insulating sheet, heated by a patterned heater with convection and radiation on: the
 * integrator's automatic choice is GMRES with the multigrid preconditioner, and the same run
 * with KLU (a direct sparse solver, independent of multigrid.c and krylov.c) gives the same
 * temperatures after 120 s: both solve the same ODE at rtol 1e-8, so they may differ only by
 * the integration error (about rtol times the 100 K rise: 1e-6 K; tolerance 1e-3 K). */
static void test_multigrid_krylov_matches_klu(void **state)
{
    static const char text[] =
        "materials:\n"
        "  metal: {density: 2700 kg/m3, specific_heat: 900 J/(kg.K), conductivity: 150 W/(m.K),\n"
        "          emissivity: 0.1, max_temperature: 300 degC, source: test values}\n"
        "  sheet: {density: 1000 kg/m3, specific_heat: 1200 J/(kg.K), conductivity: 0.3 W/(m.K),\n"
        "          emissivity: 0.9, max_temperature: 300 degC, source: test values}\n"
        "room: {temperature: 20 degC}\n"
        "bed:\n"
        "  size: [200 mm, 150 mm]\n"
        "  grid: [40, 30]\n"
        "  layers:\n"
        "    - {id: base, material: sheet, thickness: 1 mm}\n"
        "    - {id: top, material: metal, thickness: 3 mm}\n"
        "heater: {layer: base, power: 150 W, pattern: {border: 20 mm, border_share: 0.4}}\n"
        "run: {duration: 120 s, step: 30 s}\n";
    tp_yaml_net y;
    last a, b;
    tp_integrate_stats sa, sb;
    int k;
    double worst = 0.0, rise = 0.0;
    (void)state;
    if (tp_yaml_net_open(&y, text) != TP_OK) {
        print_error("%s", y.diag.log);
        fail();
    }
    assert_true(y.net->n_free >= TP_MULTIGRID_MIN_UNKNOWNS);
    a.n = b.n = y.net->n_nodes;
    a.temps = calloc((size_t)a.n, sizeof *a.temps);
    b.temps = calloc((size_t)b.n, sizeof *b.temps);
    assert_true(a.temps && b.temps);
    run_with(&y, TP_LS_AUTO, &a, &sa);
    run_with(&y, TP_LS_SPARSE, &b, &sb);
    assert_int_equal(sa.iterative, 1);
    assert_int_equal(sb.iterative, 0);
    assert_int_equal(sb.sparse, 1);
    for (k = 0; k < a.n; k++) {
        worst = fmax(worst, fabs(a.temps[k] - b.temps[k]));
        rise = fmax(rise, b.temps[k] - (20.0 + TP_TEST_KELVIN));
    }
    assert_true(rise > 5.0); /* the plate did warm: the comparison is not of two cold states */
    tp_check_abs("largest difference, multigrid GMRES - KLU (K)", worst, 0.0, 1e-3);
    free(a.temps);
    free(b.temps);
    tp_yaml_net_close(&y);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_multigrid_solves_heat_system_to_closed_form),
        cmocka_unit_test(test_multigrid_coarsens_as_documented),
        cmocka_unit_test(test_multigrid_single_level_is_exact),
        cmocka_unit_test(test_multigrid_vcycle_contracts),
        cmocka_unit_test(test_multigrid_vcycle_is_symmetric),
        cmocka_unit_test(test_multigrid_refuses_bad_diagonal),
        cmocka_unit_test(test_multigrid_krylov_matches_klu),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}

/* Tests of gridded plates (bed.grid, src/model/grid.c, src/study/surfacemap.c,
 * src/solve/multigrid.c): conduction in a strip and a rectangle against their series solutions, the
 * geometry of the cells by hand, the lumped limit (a 1 x 1 grid), grid convergence and energy
 * balance on the demo, the map statistics, and the command line (maps, CSV, messages). */
#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>
#include <setjmp.h>
#include <cmocka.h>

#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>

#include "assemble.h"
#include "config.h"
#include "grid.h"
#include "history.h"
#include "integrate.h"
#include "multigrid.h"
#include "plate.h"
#include "steady.h"
#include "surfacemap.h"
#include "tp_test.h"

#define T0C 273.15 /* 0 degC in kelvin, K */
#define PI 3.14159265358979323846

/* Invented materials with round values (every number below is a hand calculation). */
#define TEST_MATERIALS                                                                            \
    "materials:\n"                                                                                \
    "  slab:  {density: 2000 kg/m3, specific_heat: 1000 J/(kg.K), conductivity: 10 W/(m.K),\n"  \
    "          emissivity: 0.5, max_temperature: 300 degC, source: test values}\n"               \
    "  metal: {density: 2500 kg/m3, specific_heat: 800 J/(kg.K), conductivity: 100 W/(m.K),\n"  \
    "          emissivity: 0.1, max_temperature: 300 degC, source: test values}\n"               \
    "  soft:  {density: 1000 kg/m3, specific_heat: 1000 J/(kg.K), conductivity: 0.5 W/(m.K),\n" \
    "          emissivity: 0.9, max_temperature: 300 degC, source: test values}\n"

/* A description lowered into a network that is not finished yet, so a test can add fixed
 * boundaries before tp_network_finish. */
typedef struct built {
    tp_yamltree *doc;
    tp_description desc;
    tp_network *net;
    tp_diag diag;
} built;

static void lower_open(const char *text, built *b)
{
    memset(b, 0, sizeof *b);
    tp_diag_init(&b->diag, NULL);
    assert_int_equal(tp_yamltree_load_text("test.yaml", text, strlen(text), &b->doc, &b->diag),
                     TP_OK);
    if (tp_config_read(b->doc, &b->desc, &b->diag) != TP_OK) {
        print_error("%s", b->diag.log);
        fail();
    }
    b->net = tp_network_create();
    assert_non_null(b->net);
    if (tp_plate_lower(&b->desc, b->doc, b->net, &b->diag) != TP_OK) {
        print_error("%s", b->diag.log);
        fail();
    }
}

static void lower_finish(built *b)
{
    assert_int_equal(tp_network_finish(b->net), TP_OK);
    b->net->run = b->desc.run;
}

/* The whole assembly (controller attached), as the verbs do it. */
static void assemble(const char *text, built *b)
{
    memset(b, 0, sizeof *b);
    tp_diag_init(&b->diag, NULL);
    assert_int_equal(tp_yamltree_load_text("test.yaml", text, strlen(text), &b->doc, &b->diag),
                     TP_OK);
    if (tp_config_read(b->doc, &b->desc, &b->diag) != TP_OK ||
        tp_assemble(&b->desc, b->doc, &b->diag, &b->net) != TP_OK) {
        print_error("%s", b->diag.log);
        fail();
    }
}

static void release(built *b)
{
    tp_network_destroy(&b->net);
    tp_config_clear(&b->desc);
    tp_yamltree_destroy(&b->doc);
}

static int cell(const tp_network *net, int layer, int i, int j)
{
    const tp_net_grid *g = net->grid;
    return g->cell[(layer * g->ny + j) * g->nx + i];
}

/* A fixed node `id` at `t` (K); returns its index. */
static int fixed_node(tp_network *net, const char *id, double t)
{
    int n = tp_network_add_node(net, id, 0.0, t);
    assert_true(n >= 0);
    return n;
}

static void conduction(tp_network *net, int a, int b, double g)
{
    tp_net_link *l = tp_network_add_link(net, a, b, TP_LAW_CONDUCTION);
    assert_non_null(l);
    l->g = g;
    snprintf(l->label, sizeof l->label, "test boundary");
}

/* Temperatures at chosen output times, captured by the integrator's output callback. */
typedef struct capture {
    int n_nodes;
    const double *times; /* s, ascending */
    int n_times;
    double *temps;       /* n_times x n_nodes, K */
    double *y_last;      /* the last state vector */
    int n_state;
} capture;

static int capture_fn(void *user, const tp_sample *s)
{
    capture *c = user;
    int k;
    for (k = 0; k < c->n_times; k++)
        if (fabs(s->t - c->times[k]) < 1e-9)
            memcpy(c->temps + (size_t)k * (size_t)c->n_nodes, s->temps,
                   (size_t)c->n_nodes * sizeof *s->temps);
    memcpy(c->y_last, s->y, (size_t)c->n_state * sizeof *s->y);
    return 0;
}

static void integrate(built *b, double t_end, double step, double rtol, capture *c)
{
    tp_integrate_opts o;
    tp_integrate_stats stats;
    c->n_nodes = b->net->n_nodes;
    c->n_state = tp_network_state_size(b->net);
    c->temps = calloc((size_t)c->n_times * (size_t)c->n_nodes, sizeof *c->temps);
    c->y_last = calloc((size_t)c->n_state, sizeof *c->y_last);
    assert_non_null(c->temps);
    assert_non_null(c->y_last);
    tp_integrate_defaults(b->net, &o);
    o.t_end = t_end;
    o.step = step;
    o.rtol = rtol;
    o.out = capture_fn;
    o.user = c;
    if (tp_integrate(b->net, &o, &stats, &b->diag) != TP_OK || (getenv("TP_STATS") && fprintf(stderr, "steps %ld rhs %ld newton %ld lin %ld setups %ld fails %ld %ld\n", stats.steps, stats.rhs_evals, stats.newton_iters, stats.lin_iters, stats.factorizations, stats.error_test_fails, stats.nonlin_fails) < 0)) {
        print_error("%s", b->diag.log);
        fail();
    }
}

/* ---- one-dimensional transient conduction --------------------------------------------------- */

/* A slab of thickness L = 100 mm, insulated at x = L, initially at T_i = 20 degC, whose face at
 * x = 0 is held at T_s = 120 degC from t = 0. Series solution (Carslaw & Jaeger, Conduction of
 * Heat in Solids, 2nd ed., Sec. 3.3; Incropera 7th ed. Eq. 5.39 with Bi -> infinity; both from
 * memory), with x* = (L - x)/L measured from the insulated face and Fo = alpha t / L^2:
 *   (T - T_s)/(T_i - T_s) = sum_n C_n exp(-z_n^2 Fo) cos(z_n x*),
 *   z_n = (2n - 1) pi/2,  C_n = 4 sin z_n / (2 z_n + sin 2 z_n) = 2 (-1)^(n+1) / z_n. */
static double slab_series(double x, double t)
{
    const double L = 0.1, alpha = 10.0 / (2000.0 * 1000.0); /* k / (rho c), m2/s */
    double fo = alpha * t / (L * L), xs = (L - x) / L, sum = 0.0;
    int n;
    for (n = 1; n <= 4000; n++) {
        double z = (2 * n - 1) * PI / 2.0;
        sum += 2.0 * ((n % 2) ? 1.0 : -1.0) / z * exp(-z * z * fo) * cos(z * xs);
    }
    return 120.0 + (20.0 - 120.0) * sum;
}

/* The strip is a gridded plate of n x m cells (100 x 10 mm, 5 mm thick) with every surface
 * loss switched off and the heater at zero power; the test adds the fixed face as a node at
 * T_s joined to each cell of the first column by the half-cell conductance 2 k A / dx
 * (A = 5 mm x 10 mm / m). The solution does not depend on y. */
static void slab_strip(int n, int m, double rtol, double tol)
{
    char text[1024];
    built b;
    capture c;
    const double times[3] = {200.0, 400.0, 800.0}; /* Fo = 0.1, 0.2, 0.4 */
    double dx = 0.1 / n, worst = 0.0;
    int face, k, i, j;
    snprintf(text, sizeof text,
             TEST_MATERIALS
             "room: {temperature: 20 degC}\n"
             "bed:\n"
             "  size: [100 mm, 10 mm]\n"
             "  grid: [%d, %d]\n"
             "  layers:\n"
             "    - {id: strip, material: slab, thickness: 5 mm}\n"
             "heater: {layer: strip, power: 1 W}\n"
             "losses: {convection_scale: 0, radiation_scale: 0}\n",
             n, m);
    lower_open(text, &b);
    b.net->sources[0].power = 0.0;
    face = fixed_node(b.net, "face", 120.0 + T0C);
    for (j = 0; j < m; j++)
        conduction(b.net, face, cell(b.net, 0, 0, j), 2.0 * 10.0 * 0.005 * 0.01 / m / dx);
    lower_finish(&b);
    memset(&c, 0, sizeof c);
    c.times = times;
    c.n_times = 3;
    integrate(&b, 800.0, 100.0, rtol, &c);
    for (k = 0; k < 3; k++)
        for (j = 0; j < m; j++)
            for (i = 0; i < n; i++) {
                double got =
                    c.temps[(size_t)k * (size_t)c.n_nodes + (size_t)cell(b.net, 0, i, j)];
                double want = slab_series((i + 0.5) * dx, times[k]) + T0C;
                worst = fmax(worst, fabs(got - want));
            }
    if (!(worst <= tol)) {
        print_error("%d x %d cells: largest difference from the series %g K\n", n, m, worst);
        fail();
    }
    free(c.temps);
    free(c.y_last);
    release(&b);
}

/* 50 cells: the finite-volume solution itself differs from the series by at most 0.013 K over
 * these times (its exact semi-discrete solution, computed once by eigen-decomposition of the
 * 50 x 50 system); rtol 1e-8 adds nothing visible. Tolerance 0.05 K (of a 100 K step). */
static void test_grid_slab_transient_series(void **state)
{
    (void)state;
    slab_strip(50, 1, 1e-8, 0.05);
}

/* 400 x 8 = 3200 cells take the multigrid path (TP_MULTIGRID_MIN_UNKNOWNS), with cells five times
 * longer than wide (joined along x first). With 400 columns the finite-volume error is below
 * 1e-3 K (it falls as the square of the cell width: 0.013 K at 50 columns). At rtol 1e-7 the
 * time integration adds about as much (at the grid default 1e-5 it reaches 0.05 K on this stiff
 * strip, whose fastest cells relax in 12 ms). Tolerance 0.005 K. */
static void test_grid_slab_transient_multigrid(void **state)
{
    (void)state;
    assert_true(400 * 8 >= TP_MULTIGRID_MIN_UNKNOWNS);
    slab_strip(400, 8, 1e-7, 0.005);
}

/* ---- two-dimensional steady conduction ------------------------------------------------------ */

/* A W x H = 100 x 50 mm rectangle with the edge y = H at T1 = 120 degC and the other three at
 * T0 = 20 degC. Series solution (Incropera 7th ed. Sec. 4.2, Eq. 4.19; from memory):
 *   (T - T0)/(T1 - T0) = (2/pi) sum_n ((-1)^(n+1) + 1)/n sin(n pi x/W) sinh(n pi y/W)/sinh(n pi H/W).
 * Checked at the cell centres with y <= 0.8 H (the hot corners, where the edge temperature
 * jumps, converge slowly in every discretisation). */
static double rect_series(double x, double y)
{
    const double W = 0.1, H = 0.05;
    double sum = 0.0;
    int n;
    for (n = 1; n < 400; n += 2)
        sum += (2.0 / n) * sin(n * PI * x / W) * sinh(n * PI * y / W) / sinh(n * PI * H / W);
    return 20.0 + 100.0 * (2.0 / PI) * sum;
}

static void rectangle(int nx, int ny, double tol)
{
    char text[1024];
    built b;
    tp_steady st;
    double dx = 0.1 / nx, dy = 0.05 / ny, k = 10.0, t = 0.001, worst = 0.0;
    int hot, cold, i, j;
    snprintf(text, sizeof text,
             TEST_MATERIALS
             "room: {temperature: 20 degC}\n"
             "bed:\n"
             "  size: [100 mm, 50 mm]\n"
             "  grid: [%d, %d]\n"
             "  layers:\n"
             "    - {id: sheet, material: slab, thickness: 1 mm}\n"
             "heater: {layer: sheet, power: 1 W}\n"
             "losses: {convection_scale: 0, radiation_scale: 0}\n",
             nx, ny);
    lower_open(text, &b);
    b.net->sources[0].power = 0.0;
    hot = fixed_node(b.net, "hot", 120.0 + T0C);
    cold = fixed_node(b.net, "cold", 20.0 + T0C);
    /* Each boundary cell meets its edge through half a cell: 2 k t (face length) / (width). */
    for (j = 0; j < ny; j++) {
        conduction(b.net, cell(b.net, 0, 0, j), cold, 2.0 * k * t * dy / dx);
        conduction(b.net, cell(b.net, 0, nx - 1, j), cold, 2.0 * k * t * dy / dx);
    }
    for (i = 0; i < nx; i++) {
        conduction(b.net, cell(b.net, 0, i, 0), cold, 2.0 * k * t * dx / dy);
        conduction(b.net, cell(b.net, 0, i, ny - 1), hot, 2.0 * k * t * dx / dy);
    }
    lower_finish(&b);
    if (tp_steady_full(b.net, 1.0, &st, &b.diag) != TP_OK) {
        print_error("%s", b.diag.log);
        fail();
    }
    for (j = 0; j < ny && (j + 0.5) * dy <= 0.8 * 0.05; j++)
        for (i = 0; i < nx; i++)
            worst = fmax(worst, fabs(st.temps[cell(b.net, 0, i, j)] - T0C -
                                     rect_series((i + 0.5) * dx, (j + 0.5) * dy)));
    if (!(worst <= tol)) {
        print_error("%d x %d cells: largest difference from the series %g K\n", nx, ny, worst);
        fail();
    }
    tp_steady_clear(&st);
    release(&b);
}

/* 40 x 20 cells of 2.5 mm (KLU): the five-point finite-volume solution differs from the series
 * by at most 0.24 K in that region (computed once with a dense solve of the same 800 equations);
 * tolerance 0.5 K of the 100 K difference. */
static void test_grid_rectangle_steady_series(void **state)
{
    (void)state;
    rectangle(40, 20, 0.5);
}

/* 80 x 40 cells (the Newton-Krylov steady solver with the multigrid preconditioner): the
 * finite-volume error there is 0.063 K (second order: a quarter of the above); tolerance
 * 0.15 K. */
static void test_grid_rectangle_steady_multigrid(void **state)
{
    (void)state;
    assert_true(80 * 40 >= TP_MULTIGRID_MIN_UNKNOWNS);
    rectangle(80, 40, 0.15);
}

/* ---- geometry by hand ----------------------------------------------------------------------- */

/* A 60 mm layer centred on a 100 mm bed cut into 4 columns of 25 mm covers [20, 80] mm: the
 * first and last columns by 5/25 = 0.2, the middle ones fully (hand calculation). Capacities
 * rho c t (covered area): metal 2500 * 800 * 0.002 m = 4000 J/(m2.K), so the edge cells have
 * 4000 * 0.005 * 0.01 = 0.2 J/K and the middle ones 4000 * 0.025 * 0.01 = 1.0 J/K; the cells sum
 * to the layer's lumped 4000 * 0.06 * 0.01 = 2.4 J/K. In-plane conduction between the first two
 * cells, finite volumes between their covered centroids 2.5 + 12.5 = 15 mm apart:
 * k t d / 15 mm = 100 * 0.002 * 0.01 / 0.015 = 0.13333 W/K; between the middle two
 * 100 * 0.002 * 0.01 / 0.025 = 0.08 W/K. */
static void test_grid_partial_cells_by_hand(void **state)
{
    static const char text[] =
        TEST_MATERIALS
        "room: {temperature: 20 degC}\n"
        "bed:\n"
        "  size: [100 mm, 10 mm]\n"
        "  grid: [4, 1]\n"
        "  layers:\n"
        "    - {id: base, material: soft, thickness: 2 mm}\n"
        "    - {id: top, material: metal, thickness: 2 mm, size: [60 mm, 10 mm]}\n"
        "heater: {layer: base, power: 10 W}\n";
    built b;
    int i;
    double g01 = -1.0, g12 = -1.0;
    (void)state;
    assemble(text, &b);
    tp_check_rel("C edge", b.net->nodes[cell(b.net, 1, 0, 0)].capacity, 0.2, 1e-12);
    tp_check_rel("C middle", b.net->nodes[cell(b.net, 1, 1, 0)].capacity, 1.0, 1e-12);
    tp_check_rel("C layer", b.net->grid->layer_capacity[1], 2.4, 1e-12);
    for (i = 0; i < b.net->n_links; i++) {
        const tp_net_link *l = &b.net->links[i];
        if (l->law != TP_LAW_CONDUCTION)
            continue;
        if (l->a == cell(b.net, 1, 0, 0) && l->b == cell(b.net, 1, 1, 0))
            g01 = l->g;
        if (l->a == cell(b.net, 1, 1, 0) && l->b == cell(b.net, 1, 2, 0))
            g12 = l->g;
    }
    tp_check_rel("G 0-1", g01, 100.0 * 0.002 * 0.01 / 0.015, 1e-12);
    tp_check_rel("G 1-2", g12, 100.0 * 0.002 * 0.01 / 0.025, 1e-12);
    /* Cell ids name layer, column and row. */
    assert_string_equal(b.net->nodes[cell(b.net, 1, 2, 0)].id, "top:2:0");
    release(&b);
}

/* heater.pattern on a 100 x 100 mm heater cut into 10 x 10 cells of 10 mm, border 20 mm, share
 * 0.3: the band (the two outer rings, 64 cells) has 100^2 - 60^2 = 6400 mm2 and the inside
 * (36 cells) 3600 mm2, so a band cell gets 0.3 * 100/6400 = 0.0046875 of the power and an inner
 * one 0.7 * 100/3600 = 0.019444 (hand calculation); they sum to 0.3 and 0.7. */
static void test_grid_heater_pattern_by_hand(void **state)
{
    static const char text[] =
        TEST_MATERIALS
        "room: {temperature: 20 degC}\n"
        "bed:\n"
        "  size: [100 mm, 100 mm]\n"
        "  grid: [10, 10]\n"
        "  layers:\n"
        "    - {id: plate, material: metal, thickness: 3 mm}\n"
        "heater: {layer: plate, power: 100 W, pattern: {border: 20 mm, border_share: 0.3}}\n";
    built b;
    const tp_net_source *s;
    double band = 0.0, inner = 0.0;
    int k;
    (void)state;
    assemble(text, &b);
    s = &b.net->sources[0];
    assert_int_equal(s->n_nodes, 100);
    for (k = 0; k < s->n_nodes; k++) {
        int i, j, c;
        for (c = 0; c < 100 && b.net->grid->cell[c] != s->nodes[k]; c++)
            ;
        i = c % 10;
        j = c / 10;
        if (i < 2 || i > 7 || j < 2 || j > 7) {
            tp_check_rel("band weight", s->weights[k], 0.3 * 100.0 / 6400.0, 1e-12);
            band += s->weights[k];
        } else {
            tp_check_rel("inner weight", s->weights[k], 0.7 * 100.0 / 3600.0, 1e-12);
            inner += s->weights[k];
        }
    }
    tp_check_rel("band share", band, 0.3, 1e-12);
    tp_check_rel("inner share", inner, 0.7, 1e-12);
    release(&b);
}

/* The sensor at the centre of an even grid lies on the corner of four cells and couples to
 * each with a quarter of its coupling; at the centre of an odd grid, to the one central cell
 * (hand calculation: 0.02 W/K / 4 = 0.005 W/K). The mounts spread over the bottom layer by
 * area: 0.16 W/K over 16 equal cells is 0.01 W/K each. */
static void test_grid_sensor_and_mounts(void **state)
{
    static const char even[] =
        TEST_MATERIALS
        "room: {temperature: 20 degC}\n"
        "bed:\n"
        "  size: [100 mm, 100 mm]\n"
        "  grid: [4, 4]\n"
        "  layers:\n"
        "    - {id: plate, material: metal, thickness: 3 mm}\n"
        "  mounts: {conductance: 0.16 W/K}\n"
        "heater: {layer: plate, power: 10 W}\n"
        "sensor: {layer: plate, coupling: 0.02 W/K, capacity: 0.1 J/K}\n";
    built b;
    int i, n = 0, mounts = 0, sensor;
    (void)state;
    assemble(even, &b);
    sensor = tp_network_find_node(b.net, "sensor");
    for (i = 0; i < b.net->n_links; i++) {
        const tp_net_link *l = &b.net->links[i];
        if (l->a == sensor || l->b == sensor) {
            int other = l->a == sensor ? l->b : l->a;
            assert_true(other == cell(b.net, 0, 1, 1) || other == cell(b.net, 0, 2, 1) ||
                        other == cell(b.net, 0, 1, 2) || other == cell(b.net, 0, 2, 2));
            tp_check_rel("sensor share", l->g, 0.005, 1e-12);
            n++;
        }
        if (l->path == TP_PATH_MOUNTS) {
            tp_check_rel("mount share", l->g, 0.01, 1e-12);
            mounts++;
        }
    }
    assert_int_equal(n, 4);
    assert_int_equal(mounts, 16);
    tp_check_rel("sensor x", b.net->grid->sensor_x, 0.05, 1e-12);
    release(&b);
}

/* ---- the lumped limit ----------------------------------------------------------------------- */

/* A three-layer plate with a smaller middle layer (a closed gap), an enclosure-free room, a PID
 * controller and an electric heater with a tempco: with bed.grid [1, 1] every cell is its whole
 * layer and every link is split with share 1, so the network is the lumped one (requirement of
 * issue 9). Both run at rtol 1e-9 from the same initial state; the reading is not quantised
 * (no thermistor), so the controller sees the same values. Equal within 0.01 K at every output
 * (the differences are rounding in sums taken in another order, and the group coefficient at a
 * mean of one cell). */
static const char stack_text[] =
    TEST_MATERIALS
    "room: {temperature: 20 degC}\n"
    "bed:\n"
    "  size: [200 mm, 150 mm]\n"
    "  layers:\n"
    "    - {id: base,  material: soft,  thickness: 3 mm}\n"
    "    - {id: pad,   material: soft,  thickness: 1 mm, size: [160 mm, 120 mm]}\n"
    "    - {id: plate, material: metal, thickness: 4 mm, contact: 3000 W/(m2.K)}\n"
    "  mounts: {conductance: 0.1 W/K}\n"
    "heater: {layer: pad, supply: 24 V, resistance: 4 ohm, tempco: 0.001 1/K}\n"
    "sensor: {layer: plate, coupling: 0.02 W/K, time_constant: 5 s}\n"
    "control: {mode: pid, setpoint: 80 degC, period: 1 s, kp: 0.05 1/K, ki: 0.0005 1/(K.s),\n"
    "          kd: 0.2 s/K}\n"
    "run: {duration: 25 min, step: 5 s, tolerance: 1e-9}\n";

static void test_grid_one_cell_equals_lumped(void **state)
{
    char text[2048];
    built a, b;
    tp_history ha, hb;
    tp_integrate_opts o;
    tp_integrate_stats st;
    tp_steady sa, sb;
    long i;
    int k;
    double worst = 0.0;
    (void)state;
    snprintf(text, sizeof text, "%s", stack_text);
    assemble(text, &a);
    {
        char *p = strstr(text, "  layers:");
        char tail[2048];
        snprintf(tail, sizeof tail, "%s", p);
        snprintf(p, sizeof text - (size_t)(p - text), "  grid: [1, 1]\n%s", tail);
    }
    assemble(text, &b);
    assert_non_null(b.net->grid);
    assert_int_equal(b.net->n_free, a.net->n_free);
    assert_int_equal(tp_history_init(&ha, a.net), TP_OK);
    assert_int_equal(tp_history_init(&hb, b.net), TP_OK);
    tp_integrate_defaults(a.net, &o);
    o.out = tp_history_record;
    o.user = &ha;
    assert_int_equal(tp_integrate(a.net, &o, &st, &a.diag), TP_OK);
    tp_integrate_defaults(b.net, &o);
    o.out = tp_history_record;
    o.user = &hb;
    assert_int_equal(tp_integrate(b.net, &o, &st, &b.diag), TP_OK);
    assert_int_equal(ha.n, hb.n);
    for (i = 0; i < ha.n; i++) {
        for (k = 0; k < 3; k++) /* lumped column k against the grid's layer mean */
            worst = fmax(worst, fabs(tp_history_temp(&ha, i, k) - tp_history_temp(&hb, i, 3 * k)));
        worst = fmax(worst, fabs(tp_history_temp(&ha, i, 3) - tp_history_temp(&hb, i, 9)));
        worst = fmax(worst, fabs(ha.surface[i] - hb.surface[i]));
    }
    if (!(worst <= 0.01)) {
        print_error("largest difference %g K\n", worst);
        fail();
    }
    /* Not vacuous: the plate warmed by tens of kelvin and the controller regulated. */
    assert_true(tp_history_temp(&ha, ha.n - 1, 2) > T0C + 60.0);
    /* The holding points agree too (duty within 1e-6, surface within 0.01 K). */
    assert_int_equal(tp_steady_hold(a.net, &sa, &a.diag), TP_OK);
    assert_int_equal(tp_steady_hold(b.net, &sb, &b.diag), TP_OK);
    assert_true(fabs(sa.duty - sb.duty) < 1e-6);
    assert_true(fabs(tp_network_surface(a.net, sa.temps) - tp_network_surface(b.net, sb.temps)) <
                0.01);
    tp_steady_clear(&sa);
    tp_steady_clear(&sb);
    tp_history_clear(&ha);
    tp_history_clear(&hb);
    release(&a);
    release(&b);
}

/* ---- the demo: convergence and energy ------------------------------------------------------- */

static char *demo_text(int nx)
{
    char path[1024], *text, *p;
    size_t cap;
    snprintf(path, sizeof path, "%s/configs/small-pad-grid.yaml", TP_SOURCE_DIR);
    text = tp_read_file(path);
    assert_non_null(text);
    cap = strlen(text) + 64; /* room for a longer grid line */
    text = realloc(text, cap);
    assert_non_null(text);
    p = strstr(text, "grid: [40, 40]");
    assert_non_null(p);
    {
        char repl[32];
        int w = snprintf(repl, sizeof repl, "grid: [%d, %d]", nx, nx);
        char tail[65536];
        snprintf(tail, sizeof tail, "%s", p + strlen("grid: [40, 40]"));
        memcpy(p, repl, (size_t)w);
        snprintf(p + w, cap - (size_t)(p + w - text), "%s", tail);
    }
    return text;
}

/* The spread (hottest minus coldest cell) of the working surface at the holding point. */
static double demo_spread(int nx)
{
    char *text = demo_text(nx);
    built b;
    tp_steady hold;
    tp_surfacemap_stats st;
    double *map;
    assemble(text, &b);
    assert_int_equal(tp_steady_hold(b.net, &hold, &b.diag), TP_OK);
    map = malloc((size_t)(nx * nx) * sizeof *map);
    assert_non_null(map);
    tp_network_surface_map(b.net, hold.temps, map);
    tp_surfacemap_compute(b.net->grid, map, &st);
    free(map);
    tp_steady_clear(&hold);
    release(&b);
    free(text);
    return st.spread;
}

/* Requirement of issue 9: the spread at 80 x 80 within 2 % of 40 x 40 on the demo. It is not
 * vacuous: the spread is about 8 K (the pad's unheated margin), and 10 x 10 differs by 4 %. */
static void test_grid_convergence_demo(void **state)
{
    double s40, s80, s10;
    (void)state;
    s10 = demo_spread(10);
    s40 = demo_spread(40);
    s80 = demo_spread(80);
    assert_true(s40 > 5.0);
    if (!(fabs(s80 - s40) <= 0.02 * s40) || !(fabs(s10 - s40) > 0.02 * s40)) {
        print_error("spread 10: %g K, 40: %g K, 80: %g K\n", s10, s40, s80);
        fail();
    }
}

/* Energy balance (the state carries the energy totals, network.h TP_Q_*): what the sources
 * delivered minus what left into fixed nodes equals the heat stored, sum C_i (T_i - T_i0),
 * within 1e-4 of the delivered energy, over 10 minutes of the demo at 30 x 30 under PID. */
static void test_grid_energy_balance(void **state)
{
    char *text = demo_text(30);
    built b;
    capture c;
    const double times[1] = {600.0};
    double stored = 0.0, src, lost;
    int i;
    (void)state;
    assemble(text, &b);
    memset(&c, 0, sizeof c);
    c.times = times;
    c.n_times = 1;
    integrate(&b, 600.0, 1.0, b.net->run.tolerance, &c);
    for (i = 0; i < b.net->n_nodes; i++)
        if (b.net->nodes[i].capacity > 0)
            stored += b.net->nodes[i].capacity * (c.temps[i] - b.net->nodes[i].t0);
    src = c.y_last[b.net->n_free + TP_Q_SOURCE];
    lost = c.y_last[b.net->n_free + TP_Q_LOST];
    assert_true(src > 5e4); /* tens of kilojoules went in */
    if (!(fabs(src - lost - stored) <= 1e-4 * src)) {
        print_error("delivered %.6f J, lost %.6f J, stored %.6f J\n", src, lost, stored);
        fail();
    }
    free(c.temps);
    free(c.y_last);
    release(&b);
    free(text);
}

/* ---- map statistics ------------------------------------------------------------------------- */

/* A 3 x 2 map of 10 mm cells with equal areas (hand calculation):
 *   row 1: 30 40 50      row 0: 10 20 60     (degC, i = 0..2 left to right)
 * mean 35, population standard deviation sqrt(((25^2 + 15^2 + 25^2) + (5^2 + 5^2 + 15^2))/6)
 * = sqrt(1750/6) = 17.0783; coldest cell (0, 0) centred at 5, 5 mm; hottest (2, 0) at 25, 5 mm;
 * spread 50 K; the bed's centre (15, 10) mm is the centre of column i = 1 half-way between its
 * two cell centres (y = 5 and 15 mm), so bilinear interpolation gives (20 + 40)/2 = 30; the
 * corner cells hold 10, 60, 30, 50, mean 37.5; centre - corners = -7.5 K. */
static void test_grid_map_stats_by_hand(void **state)
{
    tp_net_grid g;
    double area[6], map[6] = {10, 20, 60, 30, 40, 50};
    tp_surfacemap_stats st;
    int k;
    (void)state;
    memset(&g, 0, sizeof g);
    g.nx = 3;
    g.ny = 2;
    g.width = 0.03;
    g.depth = 0.02;
    for (k = 0; k < 6; k++) {
        area[k] = 1e-4;
        map[k] += T0C;
    }
    g.top_area = area;
    tp_surfacemap_compute(&g, map, &st);
    assert_int_equal(st.cells, 6);
    tp_check_rel("mean", st.mean, 35.0 + T0C, 1e-14);
    tp_check_rel("std", st.std, sqrt(1750.0 / 6.0), 1e-12);
    tp_check_rel("min", st.min, 10.0 + T0C, 1e-14);
    tp_check_rel("max", st.max, 60.0 + T0C, 1e-14);
    tp_check_rel("spread", st.spread, 50.0, 1e-12);
    assert_int_equal(st.min_i, 0);
    assert_int_equal(st.min_j, 0);
    assert_int_equal(st.max_i, 2);
    assert_int_equal(st.max_j, 0);
    tp_check_rel("max x", st.max_x, 0.025, 1e-12);
    tp_check_rel("centre", st.centre, 30.0 + T0C, 1e-12);
    tp_check_rel("corners", st.corner, 37.5 + T0C, 1e-12);
    tp_check_rel("centre - corners", st.centre_corner, -7.5, 1e-10);
}

/* ---- multigrid ------------------------------------------------------------------------------ */

/* A chain of 2000 unknowns, A = tridiag(-1, 2 + 0.01, -1) (a conduction chain with a small loss
 * to a fixed node from each, laid out as a 2000 x 1 grid): repeated V-cycles from the residual
 * reach the solution of A x = 1 to 1e-10 relative. The exact solution is checked through the
 * residual computed here independently: |1 - (A x)_i| <= 1e-8 for every row. */
static void test_grid_multigrid_chain(void **state)
{
    enum { N = 2000 };
    static int rowptr[N + 1], colind[3 * N], layer[N], ci[N], cj[N];
    static double val[3 * N], b[N], x[N];
    tp_multigrid *mg;
    int i, m = 0;
    double worst = 0.0;
    (void)state;
    for (i = 0; i < N; i++) {
        rowptr[i] = m;
        if (i > 0) {
            colind[m] = i - 1;
            val[m++] = -1.0;
        }
        colind[m] = i;
        val[m++] = 2.01;
        if (i + 1 < N) {
            colind[m] = i + 1;
            val[m++] = -1.0;
        }
        layer[i] = 0;
        ci[i] = i;
        cj[i] = 0;
        b[i] = 1.0;
    }
    rowptr[N] = m;
    mg = tp_multigrid_create(N, rowptr, colind, layer, ci, cj, 1.0);
    assert_non_null(mg);
    assert_true(tp_multigrid_levels(mg) > 2);
    assert_int_equal(tp_multigrid_setup(mg, val), TP_OK);
    tp_multigrid_solve(mg, b, x, 60);
    for (i = 0; i < N; i++) {
        double ax = 2.01 * x[i] - (i > 0 ? x[i - 1] : 0.0) - (i + 1 < N ? x[i + 1] : 0.0);
        worst = fmax(worst, fabs(1.0 - ax));
    }
    if (!(worst <= 1e-8)) {
        print_error("largest residual %g\n", worst);
        fail();
    }
    tp_multigrid_destroy(&mg);
}

/* ---- the command line ----------------------------------------------------------------------- */

static long count_lines(const char *path)
{
    char *buf = tp_read_file(path);
    long n = 0, i;
    assert_non_null(buf);
    for (i = 0; buf[i]; i++)
        n += buf[i] == '\n';
    free(buf);
    return n;
}

/* tepid warmup on the demo at 12 x 12 writes both maps, the map CSV (a header and one row per
 * cell) and the history CSV with per-layer and surface columns, and reports the map. */
static void test_grid_warmup_cli_maps(void **state)
{
    char cfg[512], map[512], reach[512], cells[512], csv[512], head[4096];
    const char *args[] = {"warmup", cfg, "--set", "bed.grid=[12, 12]", "--map", map,
                          "--map-setpoint", reach, "--map-csv", cells, "--csv", csv, NULL};
    tp_run_result r;
    struct stat sb;
    FILE *fp;
    (void)state;
    snprintf(cfg, sizeof cfg, "%s/configs/small-pad-grid.yaml", TP_SOURCE_DIR);
    tp_scratch_path(tp_group_scratch(), "hold.png", map, sizeof map);
    tp_scratch_path(tp_group_scratch(), "reach.svg", reach, sizeof reach);
    tp_scratch_path(tp_group_scratch(), "cells.csv", cells, sizeof cells);
    tp_scratch_path(tp_group_scratch(), "run.csv", csv, sizeof csv);
    tp_run_tepid(tp_group_scratch(), args, &r);
    if (r.status != 0) {
        print_error("status %d\n%s", r.status, r.err);
        fail();
    }
    assert_int_equal(stat(map, &sb), 0);
    assert_true(sb.st_size > 1000);
    assert_int_equal(stat(reach, &sb), 0);
    assert_int_equal(count_lines(cells), 1 + 12 * 12);
    fp = fopen(csv, "r");
    assert_non_null(fp);
    assert_non_null(fgets(head, sizeof head, fp));
    fclose(fp);
    assert_non_null(strstr(head, "time_s,pad_mean_C,pad_min_C,pad_max_C,plate_mean_C"));
    assert_non_null(strstr(head, ",sensor_C,surface_mean_C,surface_min_C,surface_max_C,heater_W"));
    assert_non_null(strstr(r.out, "working surface, 12 x 12 cells of 25.00 x 25.00 mm"));
    assert_non_null(strstr(r.out, "all of it ready"));
    tp_run_clear(&r);
}

/* The map options need a grid: on a lumped plate they are a usage error (exit 2). */
static void test_grid_map_needs_grid(void **state)
{
    char cfg[512], map[512];
    const char *args[] = {"warmup", cfg, "--map", map, NULL};
    tp_run_result r;
    (void)state;
    snprintf(cfg, sizeof cfg, "%s/configs/workshop-bed-24v.yaml", TP_SOURCE_DIR);
    tp_scratch_path(tp_group_scratch(), "lumped.png", map, sizeof map);
    tp_run_tepid(tp_group_scratch(), args, &r);
    assert_int_equal(r.status, 2);
    assert_non_null(strstr(r.err, "--map draws the working surface of a gridded plate"));
    tp_run_clear(&r);
}

/* Input errors of a grid, each at its key and with exit status 2: a sensor off its host layer,
 * a pattern border that leaves nothing inside the heater, a layer larger than the bed. */
static void test_grid_messages(void **state)
{
#define GRID_BASE(layers, extra)                                                                  \
    TEST_MATERIALS "room: {temperature: 20 degC}\nbed:\n  size: [100 mm, 100 mm]\n"               \
                   "  grid: [10, 10]\n  layers:\n" layers extra
    static const struct {
        const char *name, *yaml, *fragment;
    } cases[] = {
        {"sensor.yaml",
         GRID_BASE("    - {id: base, material: soft, thickness: 2 mm}\n"
                   "    - {id: plate, material: metal, thickness: 3 mm, size: [50 mm, 50 mm]}\n",
                   "heater: {layer: base, power: 10 W}\n"
                   "sensor: {layer: plate, coupling: 0.02 W/K, capacity: 0.1 J/K,"
                   " position: [10 mm, 50 mm]}\n"),
         "sensor.position: the sensor at [10 mm, 50 mm] lies outside its host layer 'plate'"},
        {"border.yaml",
         GRID_BASE("    - {id: plate, material: metal, thickness: 3 mm}\n",
                   "heater: {layer: plate, power: 10 W, pattern: {border: 60 mm,"
                   " border_share: 0.5}}\n"),
         "heater.pattern.border: a border of 60 mm leaves nothing inside"},
        {"wide.yaml",
         GRID_BASE("    - {id: plate, material: metal, thickness: 3 mm, size: [120 mm, 100 mm]}\n",
                   "heater: {layer: plate, power: 10 W}\n"),
         "layer 'plate' (120 x 100 mm) is larger than the bed"},
    };
    size_t i;
    (void)state;
    for (i = 0; i < sizeof cases / sizeof cases[0]; i++) {
        char path[TP_TEST_PATH];
        const char *args[] = {"check", path, NULL};
        tp_run_result r;
        tp_scratch_write(tp_group_scratch(), cases[i].name, cases[i].yaml, path);
        tp_run_tepid(tp_group_scratch(), args, &r);
        if (r.status != 2 || !strstr(r.err, cases[i].fragment)) {
            print_error("%s: status %d\n%s", cases[i].name, r.status, r.err);
            fail();
        }
        tp_run_clear(&r);
    }
#undef GRID_BASE
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_grid_slab_transient_series),
        cmocka_unit_test(test_grid_slab_transient_multigrid),
        cmocka_unit_test(test_grid_rectangle_steady_series),
        cmocka_unit_test(test_grid_rectangle_steady_multigrid),
        cmocka_unit_test(test_grid_partial_cells_by_hand),
        cmocka_unit_test(test_grid_heater_pattern_by_hand),
        cmocka_unit_test(test_grid_sensor_and_mounts),
        cmocka_unit_test(test_grid_one_cell_equals_lumped),
        cmocka_unit_test(test_grid_convergence_demo),
        cmocka_unit_test(test_grid_energy_balance),
        cmocka_unit_test(test_grid_map_stats_by_hand),
        cmocka_unit_test(test_grid_multigrid_chain),
        cmocka_unit_test(test_grid_warmup_cli_maps),
        cmocka_unit_test(test_grid_map_needs_grid),
        cmocka_unit_test(test_grid_messages),
    };
    return cmocka_run_group_tests(tests, tp_scratch_group_setup, tp_scratch_group_teardown);
}

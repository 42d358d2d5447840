/* Benchmark: dense LU against KLU for the CVODE Newton systems, on square grids of n = k x k
 * nodes (a plate of cells linked to neighbours, each losing to a fixed room, one heater), to
 * choose TP_DENSE_MAX in src/solve/integrate.h. Prints n, the wall time of each solver and their
 * ratio. Built by CMake as bench_solvers (not a test). */
#include <math.h>
#include <stdio.h>
#include <string.h>
#include <time.h>

#include "integrate.h"
#include "network.h"

static double now(void)
{
    struct timespec ts;
    clock_gettime(CLOCK_MONOTONIC, &ts);
    return (double)ts.tv_sec + 1e-9 * (double)ts.tv_nsec;
}

static tp_network *grid(int k)
{
    tp_network *net = tp_network_create();
    int i, j, room;
    char id[32];
    tp_net_source *s;
    for (i = 0; i < k; i++)
        for (j = 0; j < k; j++) {
            snprintf(id, sizeof id, "c%d_%d", i, j);
            tp_network_add_node(net, id, 20.0, 293.15);
        }
    room = tp_network_add_node(net, "room", 0.0, 293.15);
    for (i = 0; i < k; i++)
        for (j = 0; j < k; j++) {
            tp_net_link *l;
            if (i + 1 < k && (l = tp_network_add_link(net, i * k + j, (i + 1) * k + j,
                                                       TP_LAW_CONDUCTION)))
                l->g = 2.0;
            if (j + 1 < k && (l = tp_network_add_link(net, i * k + j, i * k + j + 1,
                                                       TP_LAW_CONDUCTION)))
                l->g = 2.0;
            if ((l = tp_network_add_link(net, i * k + j, room, TP_LAW_RADIATION))) {
                l->area = 1e-3;
                l->eps = 0.9;
            }
            if ((l = tp_network_add_link(net, i * k + j, room, TP_LAW_CONVECTION))) {
                l->area = 1e-3;
                l->h = 8.0;
            }
        }
    s = tp_network_add_source(net, "heater", 0);
    s->kind = TP_SRC_POWER;
    s->power = 5.0 * k * k;
    tp_network_finish(net);
    return net;
}

static double time_run(const tp_network *net, int solver, long *steps)
{
    const tp_run run = {1800.0, 10.0, 1e-6, 1e7, 600.0, TP_UNSET}; /* duration, step, tolerance,
                                                                 limits, initial */
    tp_integrate_opts o;
    tp_integrate_stats st;
    tp_diag d;
    double t0, best = 1e30;
    int rep;
    tp_diag_init(&d, stderr);
    for (rep = 0; rep < 3; rep++) {
        tp_integrate_defaults(&run, &o);
        o.linear_solver = solver;
        t0 = now();
        if (tp_integrate(net, &o, &st, &d) != TP_OK)
            return NAN;
        best = fmin(best, now() - t0);
    }
    *steps = st.steps;
    return best;
}

int main(void)
{
    static const int sizes[] = {2, 3, 4, 5, 6, 7, 8, 10, 12, 16, 20};
    size_t i;
    printf("%6s %8s %12s %12s %8s\n", "nodes", "steps", "dense (ms)", "KLU (ms)", "KLU/dense");
    for (i = 0; i < sizeof sizes / sizeof sizes[0]; i++) {
        tp_network *net = grid(sizes[i]);
        long s1, s2;
        double td = time_run(net, TP_LS_DENSE, &s1), tk = time_run(net, TP_LS_SPARSE, &s2);
        printf("%6d %8ld %12.2f %12.2f %8.2f\n", sizes[i] * sizes[i], s1, 1e3 * td, 1e3 * tk,
               tk / td);
        tp_network_destroy(&net);
    }
    return 0;
}

/* The thermal network: nodes with heat capacity or fixed temperature, links with one law each
 * (conduction, convection, radiation), heat sources, and the controller that switches one of
 * them. It evaluates the right-hand side C_i dT_i/dt = sum_j Q_ji + P_i and its Jacobian.
 * Everything tepid computes lowers to this structure. */
#ifndef TP_NETWORK_H
#define TP_NETWORK_H

#include <stddef.h>

#include "control.h"
#include "convection.h"
#include "description.h"
#include "diag.h"
#include "status.h"

/* Extra states appended after the free temperatures: running energy totals, J. */
enum {
    TP_Q_SOURCE = 0, /* energy delivered by all sources into nodes */
    TP_Q_LOST,       /* energy that left into fixed nodes */
    TP_Q_WIRE,       /* energy dissipated in supply wiring (supply_resistance) */
    TP_N_QUAD
};

typedef enum tp_law { TP_LAW_CONDUCTION, TP_LAW_CONVECTION, TP_LAW_RADIATION } tp_law;

/* Where a link's heat goes, for the loss breakdown of `steady`. */
typedef enum tp_loss_path {
    TP_PATH_INTERNAL = 0, /* between two free nodes of the plate */
    TP_PATH_TOP_CONV,
    TP_PATH_TOP_RAD,
    TP_PATH_BOTTOM_CONV,
    TP_PATH_BOTTOM_RAD,
    TP_PATH_EDGE,
    TP_PATH_MOUNTS,
    TP_PATH_WALLS,        /* enclosure walls to the room */
    TP_PATH_OTHER,        /* raw-form links to fixed nodes */
    TP_PATH_COUNT
} tp_loss_path;

typedef struct tp_net_node {
    char id[TP_ID_MAX];
    double capacity; /* J/K; 0 for a fixed node */
    double t0;       /* K: the initial temperature, or the fixed one */
    int state;       /* index in the state vector; -1 for a fixed node */
    int output;      /* nonzero: reported in CSV/plots (every node with capacity) */
} tp_net_node;

typedef struct tp_net_link {
    int a, b;            /* node indices; convection and radiation: a is the surface */
    tp_law law;
    double g;            /* conduction conductance, W/K */
    double area;         /* convection and radiation area, m2 */
    double h;            /* fixed convection coefficient, W/(m2.K) (when !correlated) */
    int correlated;      /* convection: h = tp_convection_h(&conv, T_a, T_b) */
    tp_convection_case conv;
    double eps;          /* radiation: effective emissivity */
    double scale;        /* multiplier from losses.*_scale */
    tp_loss_path path;
    int group;           /* convection: index of the coefficient group it shares (gridded faces,
                            tp_network_add_group), -1 when the link has its own */
    char label[128];
} tp_net_link;

/* Convection links that share one coefficient: the cells of one face of a gridded layer. The
 * coefficient is the correlation's h at the area-weighted mean temperature of the members'
 * surface nodes against their common sink; each member carries h A s (T_a - T_b). */
typedef struct tp_net_group {
    tp_convection_case conv;
    int sink;          /* the node every member convects to */
    double area;       /* m2, the members' total area (set by tp_network_finish) */
    int first, count;  /* members: group_links[first .. first + count - 1] */
    double h;          /* W/(m2.K) at the last evaluation (scratch) */
    double dh_ds;      /* dh/dT of the mean surface temperature, W/(m2.K2) (scratch) */
    double dh_db;      /* dh/dT of the sink, W/(m2.K2) (scratch) */
    double h_secant;   /* h for the secant Jacobian, W/(m2.K) (scratch) */
} tp_net_group;

/* The cells of a gridded plate (bed.grid): which node sits at each cell of each layer, and the
 * working surface as a map. Cell (i, j) spans [i dx, (i+1) dx] x [j dy, (j+1) dy] from the bed's
 * lower-left corner, dx = width / nx, dy = depth / ny. */
typedef struct tp_net_grid {
    int nx, ny;                 /* cells along the bed's first (x) and second (y) side */
    int n_layers;
    double width, depth;        /* m */
    char (*layer_id)[TP_ID_MAX];
    int *cell;                  /* n_layers * nx * ny: node of (layer l, i, j) at
                                   (l * ny + j) * nx + i; -1 where the layer has no cell */
    double *layer_capacity;     /* n_layers: J/K, the layer's cells together */
    double *top_area;           /* nx * ny: exposed top area of the top layer's cell, m2 */
    int *top_link;              /* 2 * nx * ny: that face's convection and radiation link of
                                   each cell (-1 when none) */
    double sensor_x, sensor_y;  /* m: where the sensor sits (NaN without a sensor) */
    struct tp_network *lumped;  /* the lumped network it was refined from (owned, finished):
                                   its steady states start the grid's */
    int *from;                  /* per node: the node of `lumped` it was refined from */
} tp_net_grid;

/* Compact arrays for evaluating a network fast; private to network.c. */
typedef struct tp_net_fast tp_net_fast;

typedef enum tp_source_kind { TP_SRC_POWER, TP_SRC_ELECTRIC } tp_source_kind;

typedef struct tp_net_source {
    char id[TP_ID_MAX];
    tp_source_kind kind;
    double power;    /* W (TP_SRC_POWER) */
    double supply;   /* V */
    double r0;       /* ohm at tref */
    double tempco;   /* 1/K */
    double tref;     /* K */
    double r_series; /* ohm in series with the element (circuit.h: heater.supply_resistance,
                        supply output, wiring loop, switch) */
    double max_duty; /* fully on means this duty */
    double rated_power, rated_voltage; /* W, V of a heater given as sold (heater.rated_*; its
                                          r0 is rated_voltage^2 / rated_power); 0: not rated */
    int n_nodes;     /* nodes the power lands in: 1 when lumped */
    int *nodes;      /* node indices */
    double *weights; /* share of the element in each node; sums to 1 */
} tp_net_source;

typedef struct tp_network {
    tp_net_node *nodes;
    int n_nodes;
    int *id_index;      /* open-addressing hash of node ids: node index + 1, 0 empty */
    int id_slots;       /* its size, a power of two kept above twice n_nodes */
    tp_net_link *links;
    int n_links;
    tp_net_source *sources;
    int n_sources;
    int n_free;         /* free temperatures; the state has n_free + TP_N_QUAD entries */
    int *free_nodes;    /* state index -> node index */
    double *duty;       /* per source, 0..1: the held controller output (set by the integrator) */
    int has_control;
    tp_control control;
    /* The working surface (physical form): the top face of the top layer, estimated from the
     * top node as T_s = T_top - q'' t / (2 k) with q'' the flux leaving that face. */
    int top_node;       /* node index, -1 when unknown (raw form) or gridded */
    double top_area;    /* m2 */
    double top_half_r;  /* t / (2 k) of the top layer, K.m2/W (gridded plates too) */
    tp_net_grid *grid;  /* gridded plate (owned), NULL when lumped */
    tp_net_group *groups; /* convection coefficient groups */
    int n_groups, cap_groups;
    int *group_links;   /* members of every group, by group (built by tp_network_finish) */
    int cap_nodes, cap_links, cap_sources; /* allocated entries */
    tp_net_fast *fast;  /* compact arrays (owned); NULL only when they could not be built */
    tp_run run;
    /* Jacobian sparsity (compressed sparse columns over the whole state), built once. */
    int nnz;
    int *colptr;        /* n_state + 1 */
    int *rowind;        /* nnz */
    int (*link_slot)[6]; /* per link: aa, ab, ba, bb, lost-a, lost-b (-1 when absent) */
    int *src_slot;      /* per source node entry: the diagonal, then the quadrature rows */
    int *src_first;     /* per source: first index into src_slot (3 entries per node) */
    double *work;       /* n_nodes temperatures, scratch for evaluations */
    double *src_work;   /* 3 x the largest source's node count, scratch */
} tp_network;

/* Snapshot of the heat flows at one state. */
typedef struct tp_flows {
    double *q;          /* n_nodes: net heat into each node, W (fixed nodes: into the boundary) */
    double *src_power;  /* n_sources: delivered into nodes, W */
    double *src_wire;   /* n_sources: lost in wiring, W */
    double lost;        /* W into fixed nodes */
    double path[TP_PATH_COUNT]; /* W by each loss path, pointing away from the plate. The plate
                                   paths (all but TP_PATH_WALLS) sum to the power at steady
                                   state; with an enclosure TP_PATH_WALLS is what leaves it */
} tp_flows;

/* An empty network; add nodes, links, sources, then tp_network_finish. */
tp_network *tp_network_create(void);

/* Free a network and NULL the handle; accepts NULL. */
void tp_network_destroy(tp_network **net);

/* One change a copy makes to the network it copies (tp_network_copy): the only way to get a
 * varied network (a fault, a disturbance) without editing a shared one. */
typedef enum tp_net_change_kind {
    TP_CHANGE_ADD_CONDUCTION, /* a new conduction link between nodes a and b of conductance
                                 `value` (W/K), labelled `label` (may be NULL); it is the last
                                 link of the copy */
    TP_CHANGE_ISOLATE,        /* every link between node a and a free node carries nothing
                                 (conductance, coefficient and emissivity 0); links to fixed
                                 nodes stay */
    TP_CHANGE_TOP_AIRFLOW,    /* the working surface's correlated convection (its links and
                                 coefficient groups) at airflow `value` (m/s) */
    TP_CHANGE_TOP_CAPACITY    /* `value` (J/K) more heat capacity on the top layer: its node, or
                                 its cells in proportion to their top area */
} tp_net_change_kind;

typedef struct tp_net_change {
    tp_net_change_kind kind;
    int a, b;          /* node indices of the source network (ADD_CONDUCTION: both, ISOLATE: a) */
    double value;      /* W/K, m/s or J/K as the kind says */
    const char *label; /* ADD_CONDUCTION: the new link's label, copied; NULL: "a - b" */
} tp_net_change;

/* A deep copy of the finished network `src` (nodes, links, sources with their node lists,
 * coefficient groups, controller, run, working surface, and the grid with its lumped twin),
 * with `changes[0 .. n_changes - 1]` applied in order, then finished: its compact arrays and
 * Jacobian pattern are its own and its duties are reset to each source's max_duty. `src` is
 * only read. Node and state numbering are those of `src` (an added link changes neither), so a
 * state vector of `src` is one of the copy. A gridded copy's twin gets the same changes where
 * they name no cell (nodes mapped through grid->from). Returns TP_OK with *out set, or
 * TP_ERR_CONFIG for a change that cannot apply (a node index out of range, a top-layer change
 * on a network without a physical top layer) and TP_ERR_NOMEM; *out is NULL on failure. */
tp_status tp_network_copy(const tp_network *src, const tp_net_change *changes, int n_changes,
                          tp_network **out);

/* Append a node (capacity > 0 with its initial temperature, or capacity 0 and fixed t0).
 * Returns its index, or -1 when out of memory. */
int tp_network_add_node(tp_network *net, const char *id, double capacity, double t0);

/* Append a link; returns a pointer to fill in (a, b, law set), or NULL when out of memory.
 * Defaults: scale 1, path TP_PATH_INTERNAL. */
tp_net_link *tp_network_add_link(tp_network *net, int a, int b, tp_law law);

/* Append a source landing in one node; returns it (kind and parameters to fill in) or NULL. */
tp_net_source *tp_network_add_source(tp_network *net, const char *id, int node);

/* Spread a source over several nodes with weights (copied; normalised to sum 1). */
tp_status tp_network_spread_source(tp_network *net, tp_net_source *src, const int *nodes,
                                   const double *weights, int n);

/* Add a coefficient group for convection links (copied case; sink: the node all its links
 * convect to). Returns its index, or -1 when out of memory. Links join it by setting their
 * `group` (law convection, `correlated` 1 with the same case, b == sink). */
int tp_network_add_group(tp_network *net, const tp_convection_case *conv, int sink);

/* Index of a node by id, or -1. */
int tp_network_find_node(const tp_network *net, const char *id);

/* Index of a source by id, or -1. */
int tp_network_find_source(const tp_network *net, const char *id);

/* The heater: the controlled source, else the source "heater", else the first electrical one,
 * else the first source; -1 when there is none. Its circuit (circuit.h) is the supply's. */
int tp_network_heater(const tp_network *net);

/* The heater (tp_network_heater) full on at the network's initial state, the cold start every
 * verb reports: its on-current into *current (NaN for a constant-power heater), the power into
 * the heater into *power, and the loss in its series path into *series (each may be NULL).
 * Returns the heater's index, or -1 (outputs NaN) when there is none. */
int tp_network_cold_start(const tp_network *net, double *current, double *power, double *series);

/* The room temperature, K: the fixed node `room` (both forms have one unless a raw network
 * names its boundaries otherwise); NaN when there is none. */
double tp_network_room(const tp_network *net);

/* Nonzero when a controller holds a setpoint (mode on-off or pid, with a setpoint): the
 * network has a holding point, and warm-ups have a time to setpoint. */
int tp_network_holds(const tp_network *net);

/* Which nodes reach a fixed node: a new array of n_nodes flags (the caller frees it), 1 for a
 * fixed node (capacity <= 0) and for every node joined to one through links, 0 for the rest.
 * NULL when memory runs out. */
int *tp_network_grounded(const tp_network *net);

/* Number the free nodes, build the Jacobian pattern, set every duty to the source's max_duty.
 * Call once after the last node, link and source. */
tp_status tp_network_finish(tp_network *net);

/* Copy edited link and node parameters into the compact evaluation arrays (after a break hook
 * changed them). */
void tp_network_refresh(tp_network *net);

/* Size of the state vector: free temperatures then TP_N_QUAD energy totals. */
int tp_network_state_size(const tp_network *net);

/* The initial state vector (n_state entries). */
void tp_network_initial_state(const tp_network *net, double *y);

/* All node temperatures from a state vector, into `t` (n_nodes). */
void tp_network_temperatures(const tp_network *net, const double *y, double *t);

/* The heat flow through a link from a to b, W, at node temperatures ta, tb (kelvin), and its
 * partial derivatives (either pointer may be NULL). A link of a coefficient group is evaluated
 * here as if its own surface were the group's mean (uniform face). */
double tp_network_link_flow(const tp_net_link *l, double ta, double tb, double *dqa,
                            double *dqb);

/* The power a source delivers into its nodes at node temperatures `t`, at duty `duty`, W;
 * *wire gets the wiring loss (may be NULL). */
double tp_network_source_power(const tp_net_source *s, const double *t, double duty,
                               double *wire);

/* The right-hand side dy/dt at state y (CVODE contract: 0 ok, 1 when a value is not finite).
 * Uses the network's scratch arrays: one network per thread. */
int tp_network_rhs(const tp_network *net, const double *y, double *ydot);

/* The Jacobian d(dy/dt)/dy at y, written into `values` in the order of the pattern
 * (colptr/rowind). Returns 0, or 1 when a value is not finite. */
int tp_network_jacobian(const tp_network *net, const double *y, double *values);

/* The same with `use_secant` nonzero: each link's derivative replaced by its secant
 * conductance Q / dT (robust first iterations of the steady-state solver). */
int tp_network_jacobian_mode(const tp_network *net, const double *y, double *values,
                             int use_secant);

/* A source's power split over its nodes at duty `duty` into `pk` (n_nodes of the source);
 * returns the total, W. */
double tp_network_source_split(const tp_net_source *s, const double *t, double duty, double *pk);

/* Heat flows at all-node temperatures `t` with the current duties. `f` arrays must be sized
 * (q: n_nodes, src_power and src_wire: n_sources). */
void tp_network_flows(const tp_network *net, const double *t, tp_flows *f);

/* Allocate / free the arrays of a tp_flows for this network. */
tp_status tp_network_flows_init(tp_flows *f, const tp_network *net);
void tp_network_flows_clear(tp_flows *f);

/* The linearised conductance of a link at temperatures ta, tb (W/K): conduction g, convection
 * h A, radiation eps sigma A (ta^2 + tb^2)(ta + tb); and the coefficient h used (W/(m2.K)). */
double tp_network_link_conductance(const tp_net_link *l, double ta, double tb, double *h);

/* The on-current of one source at node temperatures `t`: V / (R(T) + R_series), A; NaN for a
 * constant-power source. */
double tp_network_source_current(const tp_net_source *s, const double *t);

/* The current through the controlled source (or the first electrical one) while it is on, at
 * node temperatures `t`: V / (R(T) + R_series), A. NaN when no source is electrical. */
double tp_network_current(const tp_network *net, const double *t);

/* For a recorded sample: every source's power at its held duty into power[] (W), their wiring
 * loss into *wire and tp_network_current's value into *current, in one pass over each source's
 * nodes (the same values as tp_network_source_power and tp_network_current, summed in another
 * order for gridded networks). */
void tp_network_sample_sources(const tp_network *net, const double *t, double *power,
                               double *wire, double *current);

/* The working-surface temperature at node temperatures `t` (K); NaN when the network has no
 * physical top layer. A gridded plate gives the area-weighted mean of its map. */
double tp_network_surface(const tp_network *net, const double *t);

/* The working-surface map of a gridded plate at node temperatures `t`: map[j * nx + i] is the
 * top face of the top layer's cell (i, j), K, estimated as for the lumped surface from that
 * cell's node and the flux leaving its top face; NaN where the top layer has no cell. Returns
 * the area-weighted mean, or NaN (map untouched) when the network is not gridded. */
double tp_network_surface_map(const tp_network *net, const double *t, double *map);

/* Name of a law as in explain output: "conduction", "convection", "radiation". */
const char *tp_network_law_name(tp_law law);

/* Name of a loss path as in steady output ("top_convection", ...). */
const char *tp_network_loss_path_name(tp_loss_path p);

#endif

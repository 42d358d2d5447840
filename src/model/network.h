/* The thermal network: nodes with heat capacity or fixed temperature, links with one law each
 * (conduction, convection, radiation), heat sources, and the controller that switches one of
 * them, with the pattern of the Jacobian of C_i dT_i/dt = sum_j Q_ji + P_i. Everything tepid
 * computes lowers to this structure. Once tp_network_finish has run, a network is frozen: its
 * topology and parameters are only read (every study takes a const pointer), and what changes
 * during a run (duties, the compact evaluation arrays, scratch) lives in an evaluator (eval.h).
 * A varied network is a copy (tp_network_copy). */
#ifndef TP_NETWORK_H
#define TP_NETWORK_H

#include <stddef.h>

#include "control.h"
#include "convection.h"
#include "description.h"
#include "diag.h"
#include "status.h"

#define TP_NET_DH_STEP 1.0e-3 /* K, central-difference step for d(h A dT)/dT of correlations */
#define TP_NET_R_FLOOR 1.0e-2 /* -, lowest R(T)/R0 accepted (a very negative tempco) */

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
} tp_net_group;

/* The cells of a gridded plate (bed.grid): which node sits at each cell of each layer, and the
 * working surface as a map. Cell (i, j) spans [i dx, (i+1) dx] x [j dy, (j+1) dy] from the bed's
 * lower-left corner, dx = width / nx, dy = depth / ny. */
typedef struct tp_net_grid {
    int nx, ny;                 /* cells along the bed's first (x) and second (y) side */
    int n_layers;
    double width, depth;        /* m */
    const char (*layer_id)[TP_ID_MAX];
    const int *cell;            /* n_layers * nx * ny: node of (layer l, i, j) at
                                   (l * ny + j) * nx + i; -1 where the layer has no cell */
    const double *layer_capacity; /* n_layers: J/K, the layer's cells together */
    const double *top_area;     /* nx * ny: exposed top area of the top layer's cell, m2 */
    const int *top_link;        /* 2 * nx * ny: that face's convection and radiation link of
                                   each cell (-1 when none) */
    double sensor_x, sensor_y;  /* m: where the sensor sits (NaN without a sensor) */
    const struct tp_network *lumped; /* the lumped network it was refined from (owned,
                                   finished): its steady states start the grid's */
    const int *from;            /* per node: the node of `lumped` it was refined from */
} tp_net_grid;

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
    const int *nodes;      /* node indices */
    const double *weights; /* share of the element in each node; sums to 1 */
} tp_net_source;

/* The arrays a network points to are const, as the network itself is to every study: even
 * through a pointer member nothing outside network.c writes to a network. Assembly, which
 * holds a network under construction (tp_network *), writes through the builders below and
 * the mutable accessors (tp_network_node_mut ...). */
typedef struct tp_network {
    const tp_net_node *nodes;
    int n_nodes;
    const int *id_index; /* open-addressing hash of node ids: node index + 1, 0 empty */
    int id_slots;       /* its size, a power of two kept above twice n_nodes */
    const tp_net_link *links;
    int n_links;
    const tp_net_source *sources;
    int n_sources;
    int n_free;         /* free temperatures; the state has n_free + TP_N_QUAD entries */
    const int *free_nodes; /* state index -> node index */
    int has_control;
    tp_control control;
    /* The working surface (physical form): the top face of the top layer, estimated from the
     * top node as T_s = T_top - q'' t / (2 k) with q'' the flux leaving that face. */
    int top_node;       /* node index, -1 when unknown (raw form) or gridded */
    double top_area;    /* m2 */
    double top_half_r;  /* t / (2 k) of the top layer, K.m2/W (gridded plates too) */
    const tp_net_grid *grid; /* gridded plate (owned), NULL when lumped */
    const tp_net_group *groups; /* convection coefficient groups */
    int n_groups, cap_groups;
    const int *group_links; /* members of every group, by group (built by tp_network_finish) */
    int cap_nodes, cap_links, cap_sources; /* allocated entries */
    /* Jacobian sparsity (compressed sparse columns over the whole state), built once. */
    int nnz;
    const int *colptr;  /* n_state + 1 */
    const int *rowind;  /* nnz */
    const int (*link_slot)[6]; /* per link: aa, ab, ba, bb, lost-a, lost-b (-1 when absent) */
    const int *src_slot; /* per source node entry: the diagonal, then the quadrature rows */
    const int *src_first; /* per source: first index into src_slot (3 entries per node) */
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

/* Free a network under construction (assembly) and NULL the handle; accepts NULL. A finished
 * network is freed by tp_network_release. */
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
    TP_CHANGE_TOP_CAPACITY,   /* `value` (J/K) more heat capacity on the top layer: its node, or
                                 its cells in proportion to their top area */
    TP_CHANGE_CONTROL,        /* the controller `control` (copied) in place of the network's:
                                 other gains, mode or setpoint; its source and sensor are node
                                 and source indices of the source network */
    TP_CHANGE_SOURCE_POWER,   /* source a becomes a constant-power source of `value` W, fully
                                 on at duty 1, with no series resistance (a logged power drives
                                 it); the controller switching it, if any, at max_duty 1 */
    TP_CHANGE_SOURCE_SCALE    /* source a scaled to `value` times its power
                                 (tp_network_source_scaled): a larger or smaller heater on the
                                 same supply and series path (size) */
} tp_net_change_kind;

typedef struct tp_net_change {
    tp_net_change_kind kind;
    int a, b;          /* node indices of the source network (ADD_CONDUCTION: both, ISOLATE: a);
                          SOURCE_POWER: a is a source index */
    double value;      /* W/K, m/s, J/K or W as the kind says */
    const char *label; /* ADD_CONDUCTION: the new link's label, copied; NULL: "a - b" */
    const tp_control *control; /* CONTROL: the controller */
} tp_net_change;

/* A deep copy of the finished network `src` (nodes, links, sources with their node lists,
 * coefficient groups, controller, working surface, and the grid with its lumped twin), with
 * `changes[0 .. n_changes - 1]` applied in order, then finished: its Jacobian pattern is its
 * own. The only way to vary a network. `src` is only read. Node and state numbering are those
 * of `src` (an added link changes neither), so a state vector of `src` is one of the copy. A
 * gridded copy's twin gets the same changes where they name no cell (nodes mapped through
 * grid->from). Returns TP_OK with *out set, or TP_ERR_CONFIG for a change that cannot apply (a
 * node or source index out of range, a top-layer change on a network without a physical top
 * layer, a controller for a network without a source) and TP_ERR_NOMEM; *out is NULL on
 * failure. */
tp_status tp_network_copy(const tp_network *src, const tp_net_change *changes, int n_changes,
                          const tp_network **out);

/* Free a finished network (from tp_assemble or tp_network_copy) and NULL the handle; accepts
 * NULL. */
void tp_network_release(const tp_network **net);

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

/* Assembly's access to a network under construction: node, link or source i to write. */
tp_net_node *tp_network_node_mut(tp_network *net, int i);
tp_net_link *tp_network_link_mut(tp_network *net, int i);
tp_net_source *tp_network_source_mut(tp_network *net, int i);
/* The lumped twin of a gridded network under construction, to write (NULL when not gridded). */
tp_network *tp_network_twin_mut(tp_network *net);

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

/* Number the free nodes, gather the coefficient groups and build the Jacobian pattern. Call
 * once after the last node, link, group and source; the network is frozen from then on (only
 * assembly sets its controller, sensor model and series resistances before handing it out). */
tp_status tp_network_finish(tp_network *net);

/* Size of the state vector: free temperatures then TP_N_QUAD energy totals. */
int tp_network_state_size(const tp_network *net);

/* The initial state vector (n_state entries). */
void tp_network_initial_state(const tp_network *net, double *y);

/* All node temperatures from a state vector, into `t` (n_nodes). An evaluator does the same
 * faster for large networks (tp_eval_temperatures). */
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

/* Source `s` scaled by `k` > 0 into *out (a copy; its node lists are shared with `s`): a
 * constant-power source's power times k, an electric element's r0 divided by k, so that its
 * power at the reference temperature without the series path, supply^2 / r0, is k times as
 * large (a rating as sold, rated_power, with it); the supply, tempco and series path are
 * unchanged. */
void tp_network_source_scaled(const tp_net_source *s, double k, tp_net_source *out);

/* A source's power at duty `duty` node by node with its derivatives: `pk` (n_nodes of the
 * source) receives the power landing in each node, `dpk` d(pk)/dT_k, `dtot` d(total)/dT_k,
 * `dwire` d(wire)/dT_k (any array may be NULL). Returns the total, W; *wire (may be NULL) the
 * wiring loss. The derivatives of a source over several nodes keep the diagonal terms only
 * (d pk / dT_k, not d pk / dT_m for m != k). */
double tp_network_source_eval(const tp_net_source *s, const double *t, double duty, double *pk,
                              double *dpk, double *dtot, double *dwire, double *wire);

/* A source's power split over its nodes at duty `duty` into `pk` (n_nodes of the source);
 * returns the total, W. */
double tp_network_source_split(const tp_net_source *s, const double *t, double duty, double *pk);

/* Allocate / free the arrays of a tp_flows for this network (tp_eval_flows fills them). */
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

/* Name of a law as in explain output: "conduction", "convection", "radiation". */
const char *tp_network_law_name(tp_law law);

/* Name of a loss path as in steady output ("top_convection", ...). */
const char *tp_network_loss_path_name(tp_loss_path p);

#endif

/* Gridded plates (bed.grid: [NX, NY]): every layer of the physical form becomes NX x NY cells
 * of one network, refined from the lumped lowering of the same description. The equations and
 * the assumptions are in docs/grid.md. */
#ifndef TP_GRID_H
#define TP_GRID_H

#include "description.h"
#include "diag.h"
#include "network.h"
#include "status.h"
#include "yamltree.h"

/* Nonzero when the description asks for a gridded plate (physical form with bed.grid). */
int tp_grid_wanted(const tp_description *desc);

/* Build the gridded network of `desc` into the empty network `net` from `lumped`, the lumped
 * lowering of the same description (tp_plate_lower without a grid: one node per layer first,
 * in layer order, then the other nodes). Each layer node becomes the cells it covers (by area
 * fraction), each of its links is split over the cells by the area it concerns (faces, edges,
 * interfaces, gaps), in-plane conduction joins neighbouring cells, the mounts spread over the
 * bottom layer by area, the heater's power follows its coverage map (heater.pattern), and the sensor
 * couples to the cell(s) at sensor.position. Convection of a face keeps one coefficient for all
 * its cells (a tp_net_group). Sets net->grid, which takes `*lumped` (finished; *lumped becomes
 * NULL) as the starting point of steady states. Input errors (a layer beyond the bed, a sensor
 * outside its layer, a pattern border too wide, layer ids too long for cell ids) go to `d` and
 * return TP_ERR_CONFIG; `net` is then incomplete (destroy it). */
tp_status tp_grid_refine(const tp_description *desc, const tp_yamltree *doc, tp_network **lumped,
                         tp_network *net, tp_diag *d);

/* Column and row of the cell at (x, y) m from the bed's lower-left corner, clamped to the grid. */
void tp_grid_cell_at(const tp_net_grid *g, double x, double y, int *i, int *j);

/* Capacity-weighted mean, coldest and hottest cell of layer `layer` at node temperatures `t`
 * (K); NaN when the layer has no cell. */
void tp_grid_layer_stats(const tp_network *net, int layer, const double *t, double *mean,
                         double *min, double *max);

/* Centre of cell (i, j), m from the bed's lower-left corner. */
void tp_grid_cell_centre(const tp_net_grid *g, int i, int j, double *x, double *y);

#endif

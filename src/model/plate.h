/* Lowering of the physical plate description (room, bed layers, heater, sensor, enclosure) to
 * network nodes, links and sources, with the published correlations. Equations in
 * docs/model.md, "Physical form". */
#ifndef TP_PLATE_H
#define TP_PLATE_H

#include "description.h"
#include "diag.h"
#include "network.h"
#include "status.h"
#include "yamltree.h"

/* Add the nodes, links and the heater source of `desc` (physical form) to an empty network;
 * with bed.grid the plate is refined into cells (grid.h). Validation errors go to `d`
 * (TP_ERR_CONFIG); physical warnings (Biot number, correlation ranges, service limits) are
 * warnings. */
tp_status tp_plate_lower(const tp_description *desc, const tp_yamltree *doc, tp_network *net,
                         tp_diag *d);

/* After the controller is attached: the reading model from sensor: (offset, thermistor). */
tp_status tp_plate_attach_sensor(const tp_description *desc, tp_network *net);

/* The temperature at which tepid judges ranges and limits: the setpoint when there is one,
 * else the room plus 60 K. */
double tp_plate_design_temperature(const tp_description *desc);

#endif

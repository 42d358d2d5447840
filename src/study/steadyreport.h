/* The answers of `tepid steady` as a record: the holding point and where its watts go, the
 * equilibria at full power and at the firmware's duty limit, the power margin, and on a gridded
 * plate the working-surface map of the state shown. The verb words them; this computes them. */
#ifndef TP_STEADYREPORT_H
#define TP_STEADYREPORT_H

#include "caution.h"
#include "diag.h"
#include "network.h"
#include "status.h"
#include "steady.h"
#include "surfacemap.h"

typedef struct tp_steadyreport {
    int holding;         /* a controller holding a setpoint (tp_network_holds) */
    double max_duty;     /* the controlled source's duty limit (1 without a controller) */
    tp_steady full;      /* duty 1: the hardware's full power */
    tp_steady limit;     /* duty max_duty: the firmware's limit (the same as full when 1) */
    tp_steady hold;      /* the holding point (holding only) */
    const tp_steady *shown; /* the state the report is about: hold, or limit without one */
    tp_flows flows;      /* at the state shown, by loss path */
    double plate_loss;   /* W leaving the plate by every path (the walls' share excluded: it
                            is the same watts again, leaving the enclosure) */
    double margin;       /* max_duty / the holding duty (NaN without a holding point) */
    tp_surfacemap_stats map; /* the working surface of the state shown (cells 0 without a grid) */
} tp_steadyreport;

/* Solve the steady states of `net` and what follows from them. On failure the diagnostics say
 * why; call tp_steadyreport_clear in every case. */
tp_status tp_steadyreport_run(tp_network *net, tp_steadyreport *r, tp_diag *d);

/* Free what a report holds. */
void tp_steadyreport_clear(tp_steadyreport *r);

/* The safety cautions of the state shown (caution.h): its hottest node and surface (on a
 * gridded plate the hottest cell and each layer's hottest cell), the current there. Returns how
 * many were written to out. */
int tp_steadyreport_cautions(const tp_description *desc, const tp_network *net,
                             const tp_steadyreport *r, tp_caution out[TP_CAUTIONS_MAX]);

#endif

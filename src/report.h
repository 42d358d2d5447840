/* Text summaries: formatting of durations and temperatures, the network line, and the safety
 * cautions that close every run. */
#ifndef TP_REPORT_H
#define TP_REPORT_H

#include <stddef.h>
#include <stdio.h>

#include "desc.h"
#include "network.h"

#define TP_KELVIN_0C 273.15 /* K at 0 degC */

/* "6 min 12 s", "1 h 02 min", "45.0 s" into buf. */
void tp_fmt_duration(double seconds, char *buf, size_t size);

/* One line describing the network: nodes, links, sources, controller (its setpoint only when
 * it holds one: modes off and full have none). */
void tp_report_network_line(FILE *fp, const tp_network *net);

/* One line of the conditions a run assumes: the room temperature (tp_network_room; the raw
 * form's fixed nodes without one) and the heater full on at the initial state
 * (tp_network_cold_start): as sold ("240.0 W at 24.0 V rated;") when it was given so, then its
 * supply, resistance and series path, current and power. Starts with two blanks. */
void tp_report_conditions(FILE *fp, const tp_network *net);

/* The head of every summary after its title line: tp_report_network_line, then
 * tp_report_conditions. */
void tp_report_network(FILE *fp, const tp_network *net);

/* What a run saw, for the cautions. Unknown values are NaN. */
typedef struct tp_exposure {
    double surface_max;   /* K, hottest working surface */
    double node_max;      /* K, hottest node of the plate (the heater layer, usually) */
    double current_max;   /* A drawn by the heater */
    const double *node_peak; /* per node index, K: the hottest each node got (NULL: unknown) */
    const double *layer_peak; /* per bed layer, K (gridded plates; NULL: from node_peak) */
} tp_exposure;

/* The safety cautions that apply to this case (always at least the cut-out line). */
void tp_report_cautions(FILE *fp, const tp_desc *desc, const tp_network *net,
                        const tp_exposure *ex);

/* The cautions as separate lines into lines[] (static strings or buf-backed), for JSON;
 * returns how many. Each line fits in TP_CAUTION_MAX bytes. */
#define TP_CAUTION_MAX 400
#define TP_CAUTIONS_MAX 8
int tp_report_caution_lines(const tp_desc *desc, const tp_network *net, const tp_exposure *ex,
                            char lines[][TP_CAUTION_MAX]);

#endif

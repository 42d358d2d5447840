/* Text summaries: formatting of durations and temperatures, the network line, and the words of
 * the safety cautions (caution.h decides which apply) that close every run. */
#ifndef TP_SUMMARY_H
#define TP_SUMMARY_H

#include <stddef.h>
#include <stdio.h>

#include "ampacity.h"
#include "caution.h"
#include "description.h"
#include "metricdef.h"
#include "network.h"
#include "units.h"

/* "6 min 12 s", "1 h 02 min", "45.0 s" into buf. */
void tp_summary_duration(double seconds, char *buf, size_t size);

/* One line describing the network: nodes, links, sources, controller (its setpoint only when
 * it holds one: modes off and full have none). */
void tp_summary_network_line(FILE *fp, const tp_network *net);

/* One line of the conditions a run assumes: the room temperature (tp_network_room; the raw
 * form's fixed nodes without one) and the heater full on at the initial state
 * (tp_network_cold_start): as sold ("240.0 W at 24.0 V rated;") when it was given so, then its
 * supply, resistance and series path, current and power. Starts with two blanks. */
void tp_summary_conditions(FILE *fp, const tp_network *net);

/* The head of every summary after its title line: tp_summary_network_line, then
 * tp_summary_conditions. */
void tp_summary_network(FILE *fp, const tp_network *net);

#define TP_SUMMARY_CAUTION_MAX 400 /* bytes of one caution's text */

/* The words of one caution (caution.h) into buf: its kind's sentence with its figures. */
void tp_summary_caution_text(const tp_caution *c, char *buf, size_t size);

/* The cautions under "\n<heading>:", one "  ! " line each. */
void tp_summary_cautions(FILE *fp, const char *heading, const tp_caution *list, int n);

/* A metric's value as text into buf (metricdef.h): a duration as "7 min 20 s", a number with
 * the row's decimals in its text unit (without the unit); "-" when not finite. */
void tp_summary_metric(const tp_metricdef *m, double si, char *buf, size_t size);

/* A spread (a standard deviation) as text: like tp_summary_metric but without the offset, so a
 * temperature spread is an interval. */
void tp_summary_metric_spread(const tp_metricdef *m, double si, char *buf, size_t size);

/* One series of a wire recommendation (ampacity.h) as text into buf: "18 AWG (15.1 A; ampacity
 * decides)", "1.5 mm2 (...)", or "none up to 4 AWG" when no size of the series meets both
 * limits. */
void tp_summary_wire_pick(char *buf, size_t size, const tp_ampacity_pick *p, int awg);

#endif

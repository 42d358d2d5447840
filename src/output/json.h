/* JSON output with cJSON: building helpers and the atomic writer. */
#ifndef TP_JSON_H
#define TP_JSON_H

#include <cjson/cJSON.h>

#include "ampacity.h"
#include "caution.h"
#include "diag.h"
#include "metricdef.h"
#include "network.h"
#include "status.h"

/* Write `root` to `path` ("-" for standard output), pretty-printed, atomically. */
tp_status tp_json_write(const char *path, const cJSON *root, tp_diag *d);

/* Add a number, or null when it is not finite (JSON has no NaN). Returns the item or NULL. */
cJSON *tp_json_number(cJSON *obj, const char *name, double v);

/* The conditions every summary's header states (summary.h, tp_summary_conditions): `room_C`
 * (null without a room node), `heater_current_A` and `heater_power_W` (full on at the initial
 * state; the current null for a constant-power heater), `heater_max_duty`, and for a heater
 * given as sold `heater_rated_power_W` and `heater_rated_voltage_V`. */
void tp_json_conditions(cJSON *root, const tp_network *net);

/* A recommended wire (ampacity.h) as object `name`: `awg`, `awg_ampacity_A`,
 * `awg_limited_by`, `mm2`, `mm2_ampacity_A`, `mm2_limited_by` (null when no size in the series
 * meets both limits), `current_A`, `max_drop` (a share) and `table`. */
void tp_json_wire(cJSON *root, const char *name, const tp_ampacity_choice *w,
                  const tp_ampacity_conditions *c);

/* Fill `array` with the words of each caution (tp_summary_caution_text), in list order: the
 * "cautions" array every verb's JSON carries. */
void tp_json_add_cautions(cJSON *array, const tp_caution *list, int n);

/* Add a run's metric under its key with its value in files (metricdef.h: SI, degC for
 * absolute temperatures; null when not finite). */
void tp_json_metric(cJSON *obj, const tp_metrics *m, int metric);

#endif

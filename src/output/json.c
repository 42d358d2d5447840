/* JSON output: cJSON documents written through an atomic output file. */
#include "json.h"

#include <math.h>
#include <stdlib.h>

#include "outfile.h"
#include "summary.h"
#include "units.h"


cJSON *tp_json_number(cJSON *obj, const char *name, double v)
{
    if (!isfinite(v))
        return cJSON_AddNullToObject(obj, name);
    return cJSON_AddNumberToObject(obj, name, v);
}

void tp_json_conditions(cJSON *root, const tp_network *net)
{
    double amps, watts;
    int src = tp_network_cold_start(net, &amps, &watts, NULL);
    tp_json_number(root, "room_C", tp_network_room(net) - TP_KELVIN_0C);
    tp_json_number(root, "heater_current_A", amps);
    tp_json_number(root, "heater_power_W", watts);
    tp_json_number(root, "heater_max_duty", src >= 0 ? net->sources[src].max_duty : TP_UNSET);
    if (src >= 0 && net->sources[src].rated_power > 0) {
        tp_json_number(root, "heater_rated_power_W", net->sources[src].rated_power);
        tp_json_number(root, "heater_rated_voltage_V", net->sources[src].rated_voltage);
    }
}

tp_status tp_json_write(const char *path, const cJSON *root, tp_diag *d)
{
    tp_outfile o;
    tp_status st;
    char *text = cJSON_Print(root);
    if (!text) {
        tp_diag_error(d, tp_diag_loc_none(), NULL, NULL, "out of memory while writing %s", path);
        return TP_ERR_NOMEM;
    }
    st = tp_outfile_open(&o, path, d);
    if (st == TP_OK) {
        fputs(text, o.fp);
        fputc('\n', o.fp);
        st = tp_outfile_commit(&o, d);
    }
    free(text);
    return st;
}

void tp_json_add_cautions(cJSON *array, const tp_caution *list, int n)
{
    char line[TP_SUMMARY_CAUTION_MAX];
    int i;
    for (i = 0; array && i < n; i++) {
        tp_summary_caution_text(&list[i], line, sizeof line);
        cJSON_AddItemToArray(array, cJSON_CreateString(line));
    }
}

void tp_json_metric(cJSON *obj, const tp_metrics *m, int metric)
{
    const tp_metricdef *md = tp_metricdef_get(metric);
    tp_json_number(obj, md->key, tp_metricdef_file_value(md, tp_metricdef_value(md, m)));
}

static void limited_by(cJSON *obj, const char *name, const char *why)
{
    if (why)
        cJSON_AddStringToObject(obj, name, why);
    else
        cJSON_AddNullToObject(obj, name);
}

void tp_json_wire(cJSON *root, const char *name, const tp_ampacity_choice *w,
                  const tp_ampacity_conditions *c)
{
    cJSON *o = cJSON_AddObjectToObject(root, name);
    if (!o)
        return;
    tp_json_number(o, "current_A", w->amps);
    tp_json_number(o, "max_drop", w->max_drop);
    cJSON_AddStringToObject(o, "table", tp_ampacity_table_name(c->installation));
    tp_json_number(o, "awg", w->awg.size);
    tp_json_number(o, "awg_ampacity_A", w->awg.ampacity);
    limited_by(o, "awg_limited_by", w->awg.limited_by);
    tp_json_number(o, "mm2", w->metric.size * 1e6);
    tp_json_number(o, "mm2_ampacity_A", w->metric.ampacity);
    limited_by(o, "mm2_limited_by", w->metric.limited_by);
}

/* The words and JSON of a setpoint programme's report. */
#include "programme.h"

#include <math.h>

#include "metricdef.h"
#include "summary.h"
#include "units.h"


/* v with `decimals` decimals, or "-" when it is not finite. */
static const char *num(char *buf, size_t size, int decimals, double v)
{
    if (isfinite(v))
        snprintf(buf, size, "%.*f", decimals, v);
    else
        snprintf(buf, size, "-");
    return buf;
}

static void segment_text(FILE *fp, int k, const tp_program_segment *g)
{
    const tp_schedule_part *p = &g->part;
    char a[32], b[32], c[32], t0[32], t1[32];
    tp_summary_duration(p->t0, t0, sizeof t0);
    tp_summary_duration(p->t1, t1, sizeof t1);
    fprintf(fp, "  %2d %-4s %s to %s", k + 1, tp_schedule_kind_name(p->kind), t0, t1);
    switch (p->kind) {
    case TP_SCHEDULE_RAMP:
        fprintf(fp, ": %.1f -> %.1f degC at %.3f K/s\n", p->from - TP_KELVIN_0C,
                p->to - TP_KELVIN_0C, p->rate);
        fprintf(fp, "       achieved %s K/s (reading), %s K/s (surface)\n",
                num(a, sizeof a, 3, g->rate_reading),
                num(b, sizeof b, 3, g->rate_surface));
        break;
    case TP_SCHEDULE_STEP:
        fprintf(fp, ": setpoint %.1f degC\n", p->to - TP_KELVIN_0C);
        break;
    case TP_SCHEDULE_HOLD:
        fprintf(fp, ": setpoint %.1f degC\n", p->to - TP_KELVIN_0C);
        break;
    case TP_SCHEDULE_OFF:
        fprintf(fp, ": heater off; reading falls at %s K/s\n",
                num(a, sizeof a, 3, -g->rate_reading));
        return;
    }
    if (isfinite(g->err_max_reading))
        fprintf(fp, "       tracking error: reading max %s K, RMS %s K; surface max %s K, "
                    "RMS %s K\n",
                num(a, sizeof a, 2, g->err_max_reading),
                num(b, sizeof b, 2, g->err_rms_reading),
                num(c, sizeof c, 2, g->err_max_surface),
                num(t0, sizeof t0, 2, g->err_rms_surface));
    if (isfinite(g->at_limit))
        fprintf(fp, "       at the duty limit %.0f %% of the segment\n", 100.0 * g->at_limit);
    if (g->limited) {
        fprintf(fp, "       ! the heater cannot keep up");
        if (isfinite(g->follow_rate))
            fprintf(fp, ": at %.1f degC the plate follows at most %.3f K/s",
                    g->follow_at - TP_KELVIN_0C, g->follow_rate);
        fputc('\n', fp);
    }
    if (isfinite(g->overshoot_reading))
        fprintf(fp, "       overshoot after it: %.2f K (reading), %s K (surface)\n",
                g->overshoot_reading, num(a, sizeof a, 2, g->overshoot_surface));
}

void tp_programme_text(FILE *fp, const tp_program *p)
{
    int k;
    char a[32], b[32];
    if (p->n > 0) {
        fputs("\n  programme (control.schedule):\n", fp);
        for (k = 0; k < p->n; k++)
            segment_text(fp, k, &p->seg[k]);
    }
    if (p->n_above > 0)
        fputs("\n  time above:\n", fp);
    for (k = 0; k < p->n_above; k++) {
        const tp_program_above *x = &p->above[k];
        tp_summary_duration(x->t_reading, a, sizeof a);
        tp_summary_duration(x->t_surface, b, sizeof b);
        fprintf(fp, "    %8.1f degC: reading %s, surface %s\n", x->level - TP_KELVIN_0C, a,
                isfinite(x->t_surface) ? b : "-");
    }
}

static void celsius(cJSON *o, const char *name, double k)
{
    tp_json_number(o, name, k - TP_KELVIN_0C);
}

void tp_programme_json(cJSON *root, const tp_program *p)
{
    cJSON *arr = cJSON_AddArrayToObject(root, "schedule"), *above;
    int k;
    for (k = 0; arr && k < p->n; k++) {
        const tp_program_segment *g = &p->seg[k];
        cJSON *o = cJSON_CreateObject();
        if (!o)
            break;
        cJSON_AddItemToArray(arr, o);
        tp_json_number(o, "index", k);
        cJSON_AddStringToObject(o, "kind", tp_schedule_kind_name(g->part.kind));
        tp_json_number(o, "start_s", g->part.t0);
        tp_json_number(o, "end_s", g->part.t1);
        celsius(o, "from_C", g->part.from);
        celsius(o, "to_C", g->part.to);
        tp_json_number(o, "rate_requested_K_per_s", g->part.rate);
        tp_json_number(o, TP_SEGKEY_RATE_READING, g->rate_reading);
        tp_json_number(o, TP_SEGKEY_RATE_SURFACE, g->rate_surface);
        tp_json_number(o, TP_SEGKEY_ERR_READING, g->err_max_reading);
        tp_json_number(o, "error_reading_rms_K", g->err_rms_reading);
        tp_json_number(o, "error_surface_max_K", g->err_max_surface);
        tp_json_number(o, "error_surface_rms_K", g->err_rms_surface);
        tp_json_number(o, TP_SEGKEY_AT_LIMIT, g->at_limit);
        cJSON_AddBoolToObject(o, "limited", g->limited);
        tp_json_number(o, TP_SEGKEY_FOLLOW_RATE, g->follow_rate);
        celsius(o, TP_SEGKEY_FOLLOW_AT, g->follow_at);
        tp_json_number(o, TP_SEGKEY_OVERSHOOT_READING, g->overshoot_reading);
        tp_json_number(o, "overshoot_surface_K", g->overshoot_surface);
    }
    above = cJSON_AddArrayToObject(root, "time_above");
    for (k = 0; above && k < p->n_above; k++) {
        cJSON *o = cJSON_CreateObject();
        if (!o)
            break;
        cJSON_AddItemToArray(above, o);
        celsius(o, "level_C", p->above[k].level);
        tp_json_number(o, "reading_s", p->above[k].t_reading);
        tp_json_number(o, "surface_s", p->above[k].t_surface);
    }
}

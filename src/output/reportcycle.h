/* The report's sections on a heating cycle (reportsections.h has the others): the programme
 * a scheduled warm-up followed, and the cool-down from the holding state. */
#ifndef TP_REPORTCYCLE_H
#define TP_REPORTCYCLE_H

#include "reportsections.h"

/* The Programme: each segment's rates and tracking, the time above the --above levels and the
 * chart, as `tepid warmup --above` reports them; without a schedule, the time above only. */
tp_status tp_reportcycle_programme(tp_report *r, tp_report_section *s, const tp_reportcase *c,
                                   tp_diag *d);

/* The Cool-down: the levels and their times after switch-off and the chart, as `tepid cool`
 * reports them; the reason when it did not run. */
tp_status tp_reportcycle_cool(tp_report *r, tp_report_section *s, const tp_reportcase *c,
                              tp_diag *d);

#endif

/* The words and JSON of a setpoint programme's report (program.h): one block per segment and
 * the time above each --above level, for warmup and for any verb that shows a scheduled run. */
#ifndef TP_PROGRAMME_H
#define TP_PROGRAMME_H

#include <stdio.h>

#include "json.h"
#include "program.h"

/* The programme's text block: a line per segment with its requested and achieved rate,
 * tracking errors, the share at the duty limit (and when limited, the rate the plate can
 * follow), the overshoot after ramps, then the time above each level. */
void tp_programme_text(FILE *fp, const tp_program *p);

/* "schedule": [segments...] and "time_above": [levels...] into root. */
void tp_programme_json(cJSON *root, const tp_program *p);

#endif

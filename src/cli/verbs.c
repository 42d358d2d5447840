/* The verb table of the command line. */
#include "verbs.h"

#include <string.h>

const tp_verb *const tp_verbs[] = {
    &tp_cmd_warmup, &tp_cmd_steady, &tp_cmd_budget,  &tp_cmd_guard, &tp_cmd_fit,
    &tp_cmd_sweep,  &tp_cmd_tune,   &tp_cmd_explain, &tp_cmd_check, &tp_cmd_materials,
    &tp_cmd_size,   &tp_cmd_cool, &tp_cmd_report,
};
const size_t tp_verbs_count = sizeof tp_verbs / sizeof tp_verbs[0];

const tp_verb *tp_verbs_find(const char *name)
{
    size_t i;
    for (i = 0; i < tp_verbs_count; i++)
        if (strcmp(name, tp_verbs[i]->name) == 0)
            return tp_verbs[i];
    return NULL;
}

void tp_verbs_unknown(const char *name, tp_diag *d)
{
    const char *names[sizeof tp_verbs / sizeof tp_verbs[0]];
    char hint[160];
    size_t i;
    int best;
    for (i = 0; i < tp_verbs_count; i++)
        names[i] = tp_verbs[i]->name;
    best = tp_diag_closest(name, names, tp_verbs_count);
    if (best >= 0)
        snprintf(hint, sizeof hint, "did you mean '%s'? ('tepid --help' lists the verbs)",
                 names[best]);
    else
        snprintf(hint, sizeof hint, "'tepid --help' lists the verbs");
    tp_diag_error(d, tp_diag_loc_none(), NULL, hint, "unknown verb '%s'", name);
}

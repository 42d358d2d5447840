/* The verb table of the command line. */
#include "commands.h"

#include <string.h>

const tp_verb *const tp_verbs[] = {
    &tp_verb_warmup, &tp_verb_steady, &tp_verb_budget, &tp_verb_guard, &tp_verb_fit,
    &tp_verb_sweep, &tp_verb_tune, &tp_verb_explain, &tp_verb_check, &tp_verb_materials,
};
const size_t tp_n_verbs = sizeof tp_verbs / sizeof tp_verbs[0];

const tp_verb *tp_verb_find(const char *name)
{
    size_t i;
    for (i = 0; i < tp_n_verbs; i++)
        if (strcmp(name, tp_verbs[i]->name) == 0)
            return tp_verbs[i];
    return NULL;
}

void tp_verb_unknown(const char *name, tp_diag *d)
{
    const char *names[sizeof tp_verbs / sizeof tp_verbs[0]];
    char hint[160];
    size_t i;
    int best;
    for (i = 0; i < tp_n_verbs; i++)
        names[i] = tp_verbs[i]->name;
    best = tp_diag_closest(name, names, tp_n_verbs);
    if (best >= 0)
        snprintf(hint, sizeof hint, "did you mean '%s'? ('tepid --help' lists the verbs)",
                 names[best]);
    else
        snprintf(hint, sizeof hint, "'tepid --help' lists the verbs");
    tp_diag_error(d, tp_loc_none(), NULL, hint, "unknown verb '%s'", name);
}

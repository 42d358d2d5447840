/* The verbs of the command line, one file each (cmd_*.c), and the table of them. */
#ifndef TP_COMMANDS_H
#define TP_COMMANDS_H

#include <stddef.h>

#include "cli.h"
#include "diag.h"

extern const tp_verb tp_verb_warmup;
extern const tp_verb tp_verb_steady;
extern const tp_verb tp_verb_explain;
extern const tp_verb tp_verb_check;
extern const tp_verb tp_verb_materials;
extern const tp_verb tp_verb_tune;
extern const tp_verb tp_verb_budget;
extern const tp_verb tp_verb_guard;
extern const tp_verb tp_verb_fit;
extern const tp_verb tp_verb_sweep;

/* Every verb, in the order the general help lists them (tp_n_verbs entries). */
extern const tp_verb *const tp_verbs[];
extern const size_t tp_n_verbs;

/* The verb named `name`, or NULL. */
const tp_verb *tp_verb_find(const char *name);

/* Report `name` as an unknown verb, with the closest verb as a hint. */
void tp_verb_unknown(const char *name, tp_diag *d);

#endif

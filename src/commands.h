/* The verbs of the command line, one file each (cmd_*.c). */
#ifndef TP_COMMANDS_H
#define TP_COMMANDS_H

#include "cli.h"

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

#endif

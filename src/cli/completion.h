/* Shell completion: the bash script written from the verbs' option tables at build time, and
 * the config key paths (from the schema tables) that the script asks for while completing. */
#ifndef TP_COMPLETION_H
#define TP_COMPLETION_H

#include <stddef.h>
#include <stdio.h>

#include "cli.h"
#include "diag.h"
#include "status.h"

/* Write the completion script: `tmpl` (src/cli/completion.bash.in) with the line
 * "@TEPID_VERB_TABLE@" replaced by one case branch per verb (its options, which take a value,
 * a file or a key path, which repeat) and every "@TEPID_VERBS@" by the verb names. */
void tp_completion_script(const char *tmpl, const tp_verb *const *verbs, size_t n_verbs, FILE *fp);

/* Print the key paths a --set (all of them) or, with `numeric`, a --vary, --spread or --free
 * (the numbers, pairs as PATH.0 and PATH.1) accepts, one per line. With `file` (may be NULL)
 * a config that loads, its list items are named (bed.layers.plate.thickness); without one,
 * or when it does not load, keys inside lists are left out. Never reports anything: a
 * completion must stay silent. */
void tp_completion_keys(const char *file, int numeric, FILE *fp);

#endif

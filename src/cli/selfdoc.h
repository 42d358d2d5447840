/* Hidden verbs through which tepid documents itself: the build writes the manual pages and the
 * completion script with them, and the completion script asks for config key paths. They are
 * not listed by --help; `tepid _man TEMPLATE DIR`, `tepid _completion TEMPLATE FILE`,
 * `tepid _keys [--numeric] [CONFIG]`. A normal run pays one character comparison for them. */
#ifndef TP_SELFDOC_H
#define TP_SELFDOC_H

#include <stddef.h>

#include "cli.h"

/* Nonzero when `name` is one of the hidden verbs. */
int tp_selfdoc_is_hidden(const char *name);

/* Run the hidden verb argv[0] with its arguments; `verbs` are the public verbs whose tables
 * the pages and the script describe. Returns the process exit code. */
int tp_selfdoc_run(const tp_verb *const *verbs, size_t n_verbs, int argc, char **argv);

#endif

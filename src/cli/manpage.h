/* Manual pages in roff (man macros), written at build time from the verbs' option tables and
 * the config schema, so that the pages and --help cannot drift apart. */
#ifndef TP_MANPAGE_H
#define TP_MANPAGE_H

#include <stddef.h>
#include <stdio.h>

#include "cli.h"

/* The page tepid-VERB(1): name, synopsis, the verb's description, its options and the common
 * ones (the tables --help prints), examples, exit status, see also. */
void tp_manpage_verb(const tp_verb *verb, FILE *fp);

/* The page tepid(1): `tmpl` (docs/man/tepid.1.in, roff) with these lines replaced:
 * "@VERBS@" by the verbs and their summaries, "@COMMON_OPTIONS@" by the common options,
 * "@KEYS@" by every config key path of the schema with its unit, "@EXIT_STATUS@" by the exit
 * codes, "@SEE_ALSO@" by the verbs' pages; and "@VERSION@" anywhere by tepid's version. */
void tp_manpage_main(const char *tmpl, const tp_verb *const *verbs, size_t n_verbs, FILE *fp);

#endif

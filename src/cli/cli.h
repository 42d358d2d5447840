/* The command line: verbs declare their options in tables; one parser checks them, collects
 * values, and refuses outputs that would overwrite an input. */
#ifndef TP_CLI_H
#define TP_CLI_H

#include <stdio.h>

#include "diag.h"
#include "hardlimits.h"
#include "status.h"

#define TP_OUT_FILE 1   /* tp_opt.is_output: a data file */
#define TP_OUT_FIGURE 2 /* tp_opt.is_output: a figure (.png .svg .pdf) */
#define TP_OPT_VALUES 2 /* tp_opt.takes_value: the option takes the arguments after it */

/* One option of a verb. Each verb lists every option it accepts in one table (tp_verb.opts),
 * in the order its help and manual page show them, ended by TP_OPT_END. The options several
 * verbs share are the entries TP_OPT_SET and TP_OPT_QUIET, listed by the verbs that use them;
 * --help (tp_cli_help_option) is accepted by every verb and not listed. An option a verb's table
 * does not hold is refused, with a did-you-mean. */
typedef struct tp_opt {
    const char *name;    /* long name without dashes, e.g. "csv" */
    char short_name;     /* e.g. 'q', or 0 */
    int takes_value;     /* 1: --name VALUE (or --name=VALUE); TP_OPT_VALUES: --name V1 V2 ...
                            (every following argument up to the next option, each one an
                            occurrence; repeatable). Given, it stands in for the verb's FILE */
    int repeatable;
    int is_output;       /* 0, or the value is an output path: TP_OUT_FILE a data file,
                            TP_OUT_FIGURE a figure (its format checked too). The parser refuses
                            an output onto the input, two outputs on one name or both on "-",
                            and an output that cannot be created, before the verb runs */
    const char *metavar; /* e.g. "FILE" */
    const char *help;
} tp_opt;

/* The shared entries of the option tables. */
#define TP_OPT_SET                                                                            \
    {"set", 0, 1, 1, 0, "KEY=VALUE", "override a config key, e.g. --set heater.power=200W "    \
                                     "(repeatable)"}
#define TP_OPT_QUIET                                                                          \
    {"quiet", 'q', 0, 0, 0, NULL, "print no summary (errors still go to standard error)"}
#define TP_OPT_END {NULL, 0, 0, 0, 0, NULL, NULL}

/* --help, accepted by every verb. */
extern const tp_opt tp_cli_help_option;

typedef struct tp_cli {
    const char *verb;
    const char *file;    /* the config file (NULL for verbs that take none) */
    int n_args;
    struct {
        const tp_opt *opt;
        const char *value;
    } args[TP_CLI_MAX_ARGS];
} tp_cli;

/* A verb: its name, handler, one-line summary, usage and options (terminated by a NULL name). */
typedef struct tp_verb {
    const char *name;
    tp_status (*run)(const tp_cli *cli, tp_diag *d);
    const char *summary;
    int needs_file;
    const tp_opt *opts;
    const char *details; /* paragraph printed by VERB --help */
    const char *examples; /* two or three command lines ("tepid VERB FILE ..."), one per line:
                             the end of VERB --help and the manual page's EXAMPLES */
} tp_verb;

/* Where the demo files named in the examples are, as --help and the manual pages say. */
#define TP_CLI_EXAMPLES_NOTE                                                                     \
    "demo files in share/tepid/examples/ of an installation, configs/ of the source tree"

/* Parse argv (after the verb). Returns TP_OK, TP_ERR_USAGE (message printed), or TP_OK with
 * *help set when --help was given. Every output option's path is checked here (see tp_opt), so
 * a verb never computes for an output it cannot write; it still writes through outfile.h. */
tp_status tp_cli_parse(const tp_verb *verb, int argc, char **argv, tp_cli *cli, int *help,
                       tp_diag *d);

/* Print a verb's help to `fp`. */
void tp_cli_help(const tp_verb *verb, FILE *fp);

/* The last value given for option `name`, or NULL. */
const char *tp_cli_get(const tp_cli *cli, const char *name);

/* Nonzero when flag `name` was given. */
int tp_cli_flag(const tp_cli *cli, const char *name);

/* Every value of a repeatable option, in order: fills out[] (up to max), returns the count. */
int tp_cli_all(const tp_cli *cli, const char *name, const char **out, int max);

/* Where text summaries go: standard error when any output is written to standard output,
 * else standard output; NULL with -q. */
FILE *tp_cli_text_stream(const tp_cli *cli);

#endif

/* The command line: verbs declare their options in tables; one parser checks them, collects
 * values, and refuses outputs that would overwrite an input. */
#ifndef TP_CLI_H
#define TP_CLI_H

#include <stdio.h>

#include "diag.h"
#include "status.h"

#define TP_CLI_MAX_ARGS 256 /* option occurrences on one command line */

#define TP_OUT_FILE 1   /* tp_opt.is_output: a data file */
#define TP_OUT_FIGURE 2 /* tp_opt.is_output: a figure (.png .svg .pdf) */

typedef struct tp_opt {
    const char *name;    /* long name without dashes, e.g. "csv" */
    char short_name;     /* e.g. 'q', or 0 */
    int takes_value;     /* 1: --name VALUE (or --name=VALUE) */
    int repeatable;
    int is_output;       /* the value is an output path (checked against inputs);
                            TP_OUT_FIGURE: a figure, its format checked too */
    const char *metavar; /* e.g. "FILE" */
    const char *help;
} tp_opt;

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

/* The options every verb with a file accepts: --set, -q, --help. */
extern const tp_opt tp_common_opts[];

/* Parse argv (after the verb). Returns TP_OK, TP_ERR_USAGE (message printed), or TP_OK with
 * *help set when --help was given. */
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

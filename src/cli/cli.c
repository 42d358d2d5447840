/* The command line parser: long options with values (--csv F or --csv=F), short flags, each
 * verb's own option table, and the checks of output paths before anything is computed. */
#include "cli.h"

#include <string.h>

#include "outfile.h"
#include "plot.h"

const tp_opt tp_cli_help_option = {"help", 'h', 0, 0, 0, NULL, "show this help"};

#define TP_CLI_MAX_OPTS 64 /* entries of one verb's option table (for the did-you-mean) */

static const tp_opt *find_opt(const tp_verb *verb, const char *name, char short_name)
{
    const tp_opt *o;
    for (o = verb->opts; o && o->name; o++) {
        if (name && strcmp(o->name, name) == 0)
            return o;
        if (!name && short_name && o->short_name == short_name)
            return o;
    }
    if (name ? strcmp(name, tp_cli_help_option.name) == 0
             : short_name == tp_cli_help_option.short_name)
        return &tp_cli_help_option;
    return NULL;
}

/* An option the verb does not have, with the closest of its own as a hint. */
static void unknown_option(const tp_verb *verb, const char *shown, const char *name, tp_diag *d)
{
    const char *names[TP_CLI_MAX_OPTS + 1];
    char hint[200];
    size_t n = 0;
    const tp_opt *o;
    int best;
    for (o = verb->opts; o && o->name && n < TP_CLI_MAX_OPTS; o++)
        names[n++] = o->name;
    names[n++] = tp_cli_help_option.name;
    best = name ? tp_diag_closest(name, names, n) : -1;
    if (best >= 0)
        snprintf(hint, sizeof hint, "did you mean --%s? ('tepid help %s' lists its options)",
                 names[best], verb->name);
    else
        snprintf(hint, sizeof hint, "'tepid help %s' lists its options", verb->name);
    tp_diag_error(d, tp_diag_loc_none(), NULL, hint, "unknown option %s for '%s'", shown,
                  verb->name);
}

/* Every output must be creatable before the verb computes anything (issue 15 item 6). */
static tp_status check_outputs(const tp_cli *cli, tp_diag *d)
{
    int i, j;
    for (i = 0; i < cli->n_args; i++) {
        const tp_opt *o = cli->args[i].opt;
        const char *path = cli->args[i].value;
        char why[320];
        if (!o->is_output)
            continue;
        if (o->is_output == TP_OUT_FIGURE && tp_plot_check_path(path, d) != TP_OK)
            return TP_ERR_USAGE;
        if (cli->file && (tp_outfile_same_file(path, cli->file) || strcmp(path, cli->file) == 0)) {
            tp_diag_error(d, tp_diag_loc_none(), NULL, "choose another output name",
                          "--%s would overwrite the input file %s", o->name, cli->file);
            return TP_ERR_USAGE;
        }
        for (j = 0; j < cli->n_args; j++) {
            const char *in = cli->args[j].value;
            if (cli->args[j].opt->takes_value != TP_OPT_VALUES || strcmp(in, "-") == 0 ||
                !(tp_outfile_same_file(path, in) || strcmp(path, in) == 0))
                continue;
            tp_diag_error(d, tp_diag_loc_none(), NULL, "choose another output name",
                          "--%s would overwrite the input file %s", o->name, in);
            return TP_ERR_USAGE;
        }
        for (j = 0; j < i; j++) {
            const tp_opt *p = cli->args[j].opt;
            if (!p->is_output || strcmp(cli->args[j].value, path) != 0)
                continue;
            if (strcmp(path, "-") == 0)
                tp_diag_error(d, tp_diag_loc_none(), NULL, "send all but one of them to a file",
                              "--%s and --%s both write to standard output (-)", p->name, o->name);
            else
                tp_diag_error(d, tp_diag_loc_none(), NULL, "give each output its own name",
                              "--%s and --%s name the same file", p->name, o->name);
            return TP_ERR_USAGE;
        }
        if (tp_outfile_check(path, o->is_output == TP_OUT_FIGURE, why, sizeof why) != 0) {
            tp_diag_error(d, tp_diag_loc_none(), NULL,
                          "check that the directory exists and is writable; nothing was "
                          "computed",
                          "--%s: cannot create %s: %s", o->name, path, why);
            return TP_ERR_USAGE;
        }
    }
    return TP_OK;
}

static tp_status add(tp_cli *cli, const tp_opt *o, const char *value, tp_diag *d)
{
    int i;
    if (!o->repeatable)
        for (i = 0; i < cli->n_args; i++)
            if (cli->args[i].opt == o) {
                tp_diag_error(d, tp_diag_loc_none(), NULL, "give it once", "--%s given twice",
                              o->name);
                return TP_ERR_USAGE;
            }
    if (cli->n_args == TP_CLI_MAX_ARGS) {
        tp_diag_error(d, tp_diag_loc_none(), NULL, NULL, "too many options");
        return TP_ERR_USAGE;
    }
    cli->args[cli->n_args].opt = o;
    cli->args[cli->n_args].value = value;
    cli->n_args++;
    return TP_OK;
}

tp_status tp_cli_parse(const tp_verb *verb, int argc, char **argv, tp_cli *cli, int *help,
                       tp_diag *d)
{
    int i, values_given = 0;
    memset(cli, 0, sizeof *cli);
    cli->verb = verb->name;
    *help = 0;
    for (i = 0; i < argc; i++) {
        const char *a = argv[i];
        const tp_opt *o = NULL;
        const char *value = NULL;
        if (strcmp(a, "--") == 0 && i + 1 < argc && !cli->file) {
            cli->file = argv[++i];
            continue;
        }
        if (a[0] == '-' && a[1] == '-') {
            char name[64];
            const char *eq = strchr(a + 2, '=');
            size_t len = eq ? (size_t)(eq - a - 2) : strlen(a + 2);
            if (len >= sizeof name)
                len = sizeof name - 1;
            memcpy(name, a + 2, len);
            name[len] = '\0';
            o = find_opt(verb, name, 0);
            if (!o) {
                char shown[72];
                snprintf(shown, sizeof shown, "--%s", name);
                unknown_option(verb, shown, name, d);
                return TP_ERR_USAGE;
            }
            if (o->takes_value) {
                if (eq)
                    value = eq + 1;
                else if (i + 1 < argc)
                    value = argv[++i];
                else {
                    tp_diag_error(d, tp_diag_loc_none(), NULL, NULL, "--%s needs a value (%s)",
                                  o->name, o->metavar ? o->metavar : "VALUE");
                    return TP_ERR_USAGE;
                }
            } else if (eq) {
                tp_diag_error(d, tp_diag_loc_none(), NULL, NULL, "--%s takes no value", o->name);
                return TP_ERR_USAGE;
            }
        } else if (a[0] == '-' && a[1] != '\0') {
            if (a[2] != '\0' || !(o = find_opt(verb, NULL, a[1]))) {
                unknown_option(verb, a, NULL, d);
                return TP_ERR_USAGE;
            }
            if (o->takes_value) {
                if (i + 1 >= argc) {
                    tp_diag_error(d, tp_diag_loc_none(), NULL, NULL, "%s needs a value", a);
                    return TP_ERR_USAGE;
                }
                value = argv[++i];
            }
        } else {
            if (cli->file || !verb->needs_file) {
                tp_diag_error(d, tp_diag_loc_none(), NULL, "options start with --",
                              "unexpected argument '%s'", a);
                return TP_ERR_USAGE;
            }
            cli->file = a;
            continue;
        }
        if (strcmp(o->name, "help") == 0) {
            *help = 1;
            return TP_OK;
        }
        if (o->takes_value && value[0] == '\0') {
            tp_diag_error(d, tp_diag_loc_none(), NULL, NULL, "--%s needs a non-empty value",
                          o->name);
            return TP_ERR_USAGE;
        }
        if (add(cli, o, value, d) != TP_OK)
            return TP_ERR_USAGE;
        if (o->takes_value == TP_OPT_VALUES) {
            /* The arguments up to the next option are more values of this one. */
            while (i + 1 < argc && !(argv[i + 1][0] == '-' && argv[i + 1][1] != '\0'))
                if (add(cli, o, argv[++i], d) != TP_OK)
                    return TP_ERR_USAGE;
            values_given = 1;
        }
    }
    if (verb->needs_file && !cli->file && !values_given) {
        tp_diag_error(d, tp_diag_loc_none(), NULL, NULL, "usage: tepid %s FILE [options]",
                      verb->name);
        return TP_ERR_USAGE;
    }
    return check_outputs(cli, d);
}

static void print_opt(const tp_opt *o, FILE *fp)
{
    char left[64];
    if (o->short_name)
        snprintf(left, sizeof left, "-%c, --%s%s%s", o->short_name, o->name,
                 o->takes_value ? " " : "", o->takes_value ? o->metavar : "");
    else
        snprintf(left, sizeof left, "    --%s%s%s", o->name, o->takes_value ? " " : "",
                 o->takes_value ? o->metavar : "");
    fprintf(fp, "  %-26s %s\n", left, o->help);
}

void tp_cli_help(const tp_verb *verb, FILE *fp)
{
    const tp_opt *o;
    fprintf(fp, "usage: tepid %s%s [options]\n\n%s\n", verb->name,
            verb->needs_file ? " FILE" : "", verb->summary);
    if (verb->details)
        fprintf(fp, "\n%s\n", verb->details);
    fputs("\noptions:\n", fp);
    for (o = verb->opts; o && o->name; o++)
        print_opt(o, fp);
    print_opt(&tp_cli_help_option, fp);
    if (verb->examples) {
        const char *line = verb->examples;
        fprintf(fp, "\nexamples (%s):\n", TP_CLI_EXAMPLES_NOTE);
        while (*line) {
            size_t len = strcspn(line, "\n");
            fprintf(fp, "  %.*s\n", (int)len, line);
            line += len + (line[len] == '\n');
        }
    }
}

const char *tp_cli_get(const tp_cli *cli, const char *name)
{
    int i;
    const char *v = NULL;
    for (i = 0; i < cli->n_args; i++)
        if (strcmp(cli->args[i].opt->name, name) == 0)
            v = cli->args[i].value;
    return v;
}

int tp_cli_flag(const tp_cli *cli, const char *name)
{
    int i;
    for (i = 0; i < cli->n_args; i++)
        if (strcmp(cli->args[i].opt->name, name) == 0)
            return 1;
    return 0;
}

int tp_cli_all(const tp_cli *cli, const char *name, const char **out, int max)
{
    int i, n = 0;
    for (i = 0; i < cli->n_args; i++)
        if (strcmp(cli->args[i].opt->name, name) == 0 && n < max)
            out[n++] = cli->args[i].value;
    return n;
}

FILE *tp_cli_text_stream(const tp_cli *cli)
{
    int i;
    if (tp_cli_flag(cli, "quiet"))
        return NULL;
    for (i = 0; i < cli->n_args; i++)
        if (cli->args[i].opt->is_output && strcmp(cli->args[i].value, "-") == 0)
            return stderr;
    return stdout;
}

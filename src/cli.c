/* The command line parser: long options with values (--csv F or --csv=F), short flags, the
 * common options, and the guard against writing an output onto an input. */
#include "cli.h"

#include <string.h>

#include "outfile.h"
#include "plot.h"

const tp_opt tp_common_opts[] = {
    {"set", 0, 1, 1, 0, "KEY=VALUE", "override a config key, e.g. --set heater.power=200W"},
    {"quiet", 'q', 0, 0, 0, NULL, "print no summary (errors still go to standard error)"},
    {"help", 'h', 0, 0, 0, NULL, "show this help"},
    {NULL, 0, 0, 0, 0, NULL, NULL},
};

static const tp_opt *find_opt(const tp_verb *verb, const char *name, char short_name)
{
    const tp_opt *sets[2] = {verb->opts, tp_common_opts};
    int s;
    for (s = 0; s < 2; s++) {
        const tp_opt *o;
        for (o = sets[s]; o && o->name; o++) {
            if (name && strcmp(o->name, name) == 0)
                return o;
            if (!name && short_name && o->short_name == short_name)
                return o;
        }
    }
    return NULL;
}

static tp_status add(tp_cli *cli, const tp_opt *o, const char *value, tp_diag *d)
{
    int i;
    if (!o->repeatable)
        for (i = 0; i < cli->n_args; i++)
            if (cli->args[i].opt == o) {
                tp_diag_error(d, tp_loc_none(), NULL, "give it once", "--%s given twice",
                              o->name);
                return TP_ERR_USAGE;
            }
    if (cli->n_args == TP_CLI_MAX_ARGS) {
        tp_diag_error(d, tp_loc_none(), NULL, NULL, "too many options");
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
    int i;
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
                tp_diag_error(d, tp_loc_none(), NULL, "see 'tepid VERB --help'",
                              "unknown option --%s for '%s'", name, verb->name);
                return TP_ERR_USAGE;
            }
            if (o->takes_value) {
                if (eq)
                    value = eq + 1;
                else if (i + 1 < argc)
                    value = argv[++i];
                else {
                    tp_diag_error(d, tp_loc_none(), NULL, NULL, "--%s needs a value (%s)",
                                  o->name, o->metavar ? o->metavar : "VALUE");
                    return TP_ERR_USAGE;
                }
            } else if (eq) {
                tp_diag_error(d, tp_loc_none(), NULL, NULL, "--%s takes no value", o->name);
                return TP_ERR_USAGE;
            }
        } else if (a[0] == '-' && a[1] != '\0') {
            if (a[2] != '\0' || !(o = find_opt(verb, NULL, a[1]))) {
                tp_diag_error(d, tp_loc_none(), NULL, "see 'tepid VERB --help'",
                              "unknown option %s for '%s'", a, verb->name);
                return TP_ERR_USAGE;
            }
            if (o->takes_value) {
                if (i + 1 >= argc) {
                    tp_diag_error(d, tp_loc_none(), NULL, NULL, "%s needs a value", a);
                    return TP_ERR_USAGE;
                }
                value = argv[++i];
            }
        } else {
            if (cli->file || !verb->needs_file) {
                tp_diag_error(d, tp_loc_none(), NULL, "options start with --",
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
            tp_diag_error(d, tp_loc_none(), NULL, NULL, "--%s needs a non-empty value", o->name);
            return TP_ERR_USAGE;
        }
        if (add(cli, o, value, d) != TP_OK)
            return TP_ERR_USAGE;
    }
    if (verb->needs_file && !cli->file) {
        tp_diag_error(d, tp_loc_none(), NULL, NULL, "usage: tepid %s FILE [options]",
                      verb->name);
        return TP_ERR_USAGE;
    }
    for (i = 0; i < cli->n_args; i++) {
        int j;
        if (!cli->args[i].opt->is_output)
            continue;
        if (cli->args[i].opt->is_output == TP_OUT_FIGURE &&
            tp_plot_check_path(cli->args[i].value, d) != TP_OK)
            return TP_ERR_USAGE;
        if (cli->file && (tp_path_same_file(cli->args[i].value, cli->file) ||
                          strcmp(cli->args[i].value, cli->file) == 0)) {
            tp_diag_error(d, tp_loc_none(), NULL, "choose another output name",
                          "--%s would overwrite the input file %s", cli->args[i].opt->name,
                          cli->file);
            return TP_ERR_USAGE;
        }
        for (j = 0; j < i; j++)
            if (cli->args[j].opt->is_output && strcmp(cli->args[j].value, "-") != 0 &&
                strcmp(cli->args[j].value, cli->args[i].value) == 0) {
                tp_diag_error(d, tp_loc_none(), NULL, "give each output its own name",
                              "--%s and --%s name the same file", cli->args[j].opt->name,
                              cli->args[i].opt->name);
                return TP_ERR_USAGE;
            }
    }
    return TP_OK;
}

void tp_cli_help(const tp_verb *verb, FILE *fp)
{
    const tp_opt *sets[2] = {verb->opts, tp_common_opts};
    int s;
    fprintf(fp, "usage: tepid %s%s [options]\n\n%s\n", verb->name,
            verb->needs_file ? " FILE" : "", verb->summary);
    if (verb->details)
        fprintf(fp, "\n%s\n", verb->details);
    fputs("\noptions:\n", fp);
    for (s = 0; s < 2; s++) {
        const tp_opt *o;
        for (o = sets[s]; o && o->name; o++) {
            char left[64];
            if (o->short_name)
                snprintf(left, sizeof left, "-%c, --%s%s%s", o->short_name, o->name,
                         o->takes_value ? " " : "", o->takes_value ? o->metavar : "");
            else
                snprintf(left, sizeof left, "    --%s%s%s", o->name, o->takes_value ? " " : "",
                         o->takes_value ? o->metavar : "");
            fprintf(fp, "  %-26s %s\n", left, o->help);
        }
    }
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

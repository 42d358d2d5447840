/* tepid: command-line entry. Finds the verb in the table, parses its options, runs it, and
 * maps its status to the exit code. */
#include <signal.h>
#include <stdio.h>
#include <string.h>

#include "cli.h"
#include "commands.h"
#include "diag.h"
#include "materials.h"
#include "selfdoc.h"
#include "units.h"
#include "version.h"

static const tp_verb *const verbs[] = {
    &tp_verb_warmup, &tp_verb_steady, &tp_verb_budget, &tp_verb_guard, &tp_verb_fit,
    &tp_verb_sweep, &tp_verb_tune, &tp_verb_explain, &tp_verb_check, &tp_verb_materials,
};
#define N_VERBS (sizeof verbs / sizeof verbs[0])

static void usage(FILE *fp)
{
    size_t i;
    fputs("usage: tepid VERB FILE [options]\n\n"
          "tepid predicts how an electrically heated plate warms up, what power it needs, and\n"
          "how its protection must react, from a YAML description of the plate.\n\nverbs:\n",
          fp);
    for (i = 0; i < N_VERBS; i++)
        fprintf(fp, "  %-10s %s\n", verbs[i]->name, verbs[i]->summary);
    fputs("\ncommon options: --set KEY=VALUE (repeatable), -q, --help\n"
          "'tepid VERB --help' describes a verb. Exit status: 0 success, 1 the computation\n"
          "failed, 2 usage or input error, 3 a --strict check failed.\n",
          fp);
}

/* Close standard output and report a write failure (a full disk is not a success). */
static int finish_stdout(int code)
{
    if (fflush(stdout) != 0 || ferror(stdout) || fclose(stdout) != 0) {
        fputs("tepid: cannot write to standard output\n", stderr);
        return code ? code : TP_EXIT_FAILED;
    }
    return code;
}

static int run(int argc, char **argv)
{
    const tp_verb *verb = NULL;
    tp_cli cli;
    tp_diag d;
    int help = 0;
    size_t i;
    tp_status st;

    if (argc < 2) {
        /* A usage error gets the short line; the full text is for --help (issue 2 item 7). */
        fputs("usage: tepid VERB FILE [options]; 'tepid --help' lists the verbs\n", stderr);
        return TP_EXIT_INPUT;
    }
    if (strcmp(argv[1], "--help") == 0 || strcmp(argv[1], "-h") == 0 ||
        strcmp(argv[1], "help") == 0) {
        usage(stdout);
        return TP_EXIT_OK;
    }
    if (strcmp(argv[1], "--version") == 0) {
        tp_version_print(stdout);
        return TP_EXIT_OK;
    }
    if (tp_selfdoc_is_hidden(argv[1])) /* the build's and the completion's helpers */
        return tp_selfdoc_run(verbs, N_VERBS, argc - 1, argv + 1);
    for (i = 0; i < N_VERBS; i++)
        if (strcmp(argv[1], verbs[i]->name) == 0)
            verb = verbs[i];
    if (!verb) {
        fprintf(stderr, "tepid: unknown verb '%s'\nusage: tepid VERB FILE [options]; "
                        "'tepid --help' lists the verbs\n", argv[1]);
        return TP_EXIT_INPUT;
    }
    tp_diag_init(&d, stderr);
    st = tp_cli_parse(verb, argc - 2, argv + 2, &cli, &help, &d);
    if (st != TP_OK)
        return TP_EXIT_INPUT;
    if (help) {
        tp_cli_help(verb, stdout);
        return TP_EXIT_OK;
    }
    st = verb->run(&cli, &d);
    return tp_status_exit_code(st);
}

int main(int argc, char **argv)
{
    int code;
    /* Past a file-size limit (ulimit -f) a write should fail with EFBIG, reported and cleaned
     * up like a full disk, rather than kill the process with a temporary file left behind. */
    signal(SIGXFSZ, SIG_IGN);
    code = run(argc, argv);
    tp_materials_shutdown();
    tp_units_shutdown();
    return finish_stdout(code);
}

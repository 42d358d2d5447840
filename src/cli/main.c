/* tepid: command-line entry. Finds the verb in the table, parses its options, runs it, and
 * maps its status to the exit code. */
#include <signal.h>
#include <stdio.h>
#include <string.h>

#include "cli.h"
#include "diag.h"
#include "materials.h"
#include "selfdoc.h"
#include "units.h"
#include "verbs.h"
#include "version.h"

static void usage(FILE *fp)
{
    size_t i;
    fputs("usage: tepid VERB FILE [options]\n\n"
          "tepid predicts how an electrically heated plate warms up, what power it needs, and\n"
          "how its protection must react, from a YAML description of the plate.\n\nverbs:\n",
          fp);
    for (i = 0; i < tp_verbs_count; i++)
        fprintf(fp, "  %-10s %s\n", tp_verbs[i]->name, tp_verbs[i]->summary);
    fputs("\nEach verb has its own options; 'tepid help VERB' (or 'tepid VERB --help') lists\n"
          "them. Exit status: 0 success, 1 the computation failed, 2 usage or input error,\n"
          "3 a --strict check failed.\n",
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
    tp_status st;

    if (argc < 2) {
        /* A usage error gets the short line; the full text is for --help (issue 2 item 7). */
        fputs("usage: tepid VERB FILE [options]; 'tepid --help' lists the verbs\n", stderr);
        return TP_EXIT_INPUT;
    }
    tp_diag_init(&d, stderr);
    if (strcmp(argv[1], "--help") == 0 || strcmp(argv[1], "-h") == 0 ||
        strcmp(argv[1], "help") == 0) {
        /* 'tepid help VERB' is that verb's help (issue 15 item 10). */
        if (argc == 2) {
            usage(stdout);
            return TP_EXIT_OK;
        }
        if (argc > 3) {
            tp_diag_error(&d, tp_diag_loc_none(), NULL, NULL, "usage: tepid help [VERB]");
            return TP_EXIT_INPUT;
        }
        verb = tp_verbs_find(argv[2]);
        if (!verb) {
            tp_verbs_unknown(argv[2], &d);
            return TP_EXIT_INPUT;
        }
        tp_cli_help(verb, stdout);
        return TP_EXIT_OK;
    }
    if (strcmp(argv[1], "--version") == 0) {
        tp_version_print(stdout);
        return TP_EXIT_OK;
    }
    if (tp_selfdoc_is_hidden(argv[1])) /* the build's and the completion's helpers */
        return tp_selfdoc_run(tp_verbs, tp_verbs_count, argc - 1, argv + 1);
    verb = tp_verbs_find(argv[1]);
    if (!verb) {
        tp_verbs_unknown(argv[1], &d);
        return TP_EXIT_INPUT;
    }
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

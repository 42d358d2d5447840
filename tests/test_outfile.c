/* Tests of output files: the atomic writer (src/base/outfile.c) directly, and the tepid binary end
 * to end: a failed run leaves an existing output byte for byte, a write that fails half way
 * (file-size limit) leaves no temporary file, an output is never written onto the input, --csv -
 * writes to standard output, an unwritable directory gives a clear message and exit 2 before
 * anything is computed, and no cell of an output is NaN or empty; an output through a symbolic
 * link or into a FIFO keeps the link or the FIFO. */
#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>
#include <setjmp.h>
#include <cmocka.h>

#include <dirent.h>
#include <errno.h>
#include <fcntl.h>
#include <math.h>
#include <signal.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/resource.h>
#include <sys/stat.h>
#include <sys/wait.h>
#include <unistd.h>

#include "tp_test.h"

#include "outfile.h"

#define NOBODY_ID 65534    /* uid and gid of 'nobody' on Debian (common practice, no source) */
#define PRECIOUS "precious: this file must survive a failed run\n"
#define SMALL_FILE_LIMIT 4096 /* bytes: RLIMIT_FSIZE for the write-failure test; a 60 s history
                                 at 1 s is about 2 kB per column set, the 30 min run far more */

/* A small raw network (invented scenario): a 600 J/K plate losing 1.5 W/K to a 20 degC room,
 * heated by 100 W, 60 s at 1 s steps. */
static const char raw_config[] =
    "network:\n"
    "  nodes:\n"
    "    - {id: plate, capacity: 600 J/K, initial: 20 degC}\n"
    "    - {id: room, fixed: 20 degC}\n"
    "  links:\n"
    "    - {between: [plate, room], conductance: 1.5 W/K}\n"
    "  sources:\n"
    "    - {id: pad, node: plate, power: 100 W}\n"
    "run: {duration: 60 s, step: 1 s}\n";

static char dir[64];      /* this run's directory (mkdtemp), made in the group setup */
static char casedir[256]; /* a fresh subdirectory per test */

/* ---- helpers ------------------------------------------------------------------------------ */

/* Entries of `path` other than "." and "..". */
static int count_entries(const char *path)
{
    DIR *dp = opendir(path);
    struct dirent *e;
    int n = 0;
    assert_non_null(dp);
    while ((e = readdir(dp)))
        if (strcmp(e->d_name, ".") != 0 && strcmp(e->d_name, "..") != 0)
            n++;
    closedir(dp);
    return n;
}

typedef struct run_opts {
    int as_nobody;       /* drop to uid/gid 65534 before exec (when running as root) */
    long fsize_limit;    /* > 0: RLIMIT_FSIZE in bytes, SIGXFSZ ignored */
} run_opts;

/* Run tepid with argv (NULL-terminated, argv[0] ignored) in `cwd`; stdout and stderr go to
 * files in `dir`, returned as malloc'ed strings. Returns the exit status (-1: a signal). */
static int run_tepid(const char *cwd, const char *const *argv, const run_opts *ro, char **out,
                     char **err)
{
    char out_path[128], err_path[128];
    pid_t pid;
    int status;
    snprintf(out_path, sizeof out_path, "%s/stdout.txt", dir);
    snprintf(err_path, sizeof err_path, "%s/stderr.txt", dir);
    fflush(NULL);
    pid = fork();
    assert_true(pid >= 0);
    if (pid == 0) {
        int fo = open(out_path, O_WRONLY | O_CREAT | O_TRUNC, 0666);
        int fe = open(err_path, O_WRONLY | O_CREAT | O_TRUNC, 0666);
        if (fo < 0 || fe < 0 || chdir(cwd) != 0)
            _exit(127);
        dup2(fo, 1);
        dup2(fe, 2);
        if (ro && ro->fsize_limit > 0) {
            /* SIGXFSZ keeps its default action here: tepid itself must ignore it so that
             * writes past the limit fail with EFBIG instead of killing it. */
            struct rlimit rl = {(rlim_t)ro->fsize_limit, (rlim_t)ro->fsize_limit};
            signal(SIGXFSZ, SIG_DFL);
            if (setrlimit(RLIMIT_FSIZE, &rl) != 0)
                _exit(127);
        }
        if (ro && ro->as_nobody && geteuid() == 0 &&
            (setgid(NOBODY_ID) != 0 || setuid(NOBODY_ID) != 0))
            _exit(127);
        execv(TP_TEPID_EXE, (char *const *)argv);
        _exit(127);
    }
    assert_int_equal(waitpid(pid, &status, 0), pid);
    *out = tp_read_file(out_path);
    *err = tp_read_file(err_path);
    assert_non_null(*out);
    assert_non_null(*err);
    if (WIFSIGNALED(status))
        fail_msg("tepid was killed by signal %d; stderr:\n%s", WTERMSIG(status), *err);
    assert_null(strstr(*err, "Sanitizer"));
    return WEXITSTATUS(status);
}

static int per_test_setup(void **state)
{
    static int n;
    (void)state;
    snprintf(casedir, sizeof casedir, "%s/t%d", dir, ++n);
    assert_int_equal(mkdir(casedir, 0755), 0);
    /* Readable by 'nobody' for the unwritable-directory test. */
    assert_int_equal(chmod(casedir, 0755), 0);
    return 0;
}

static void in_case(char *buf, size_t size, const char *name)
{
    snprintf(buf, size, "%s/%s", casedir, name);
}

/* ---- the atomic writer, directly ---------------------------------------------------------- */

static void test_outfile_commit_replaces_target(void **state)
{
    char path[320], *text;
    tp_outfile o;
    tp_diag d;
    (void)state;
    tp_diag_init(&d, NULL);
    in_case(path, sizeof path, "out.txt");
    tp_write_file(path, PRECIOUS);
    assert_int_equal(tp_outfile_open(&o, path, &d), TP_OK);
    fputs("new\n", o.fp);
    /* Until commit the target is the old file and a temporary file sits beside it. */
    text = tp_read_file(path);
    assert_string_equal(text, PRECIOUS);
    free(text);
    assert_int_equal(count_entries(casedir), 2);
    assert_int_equal(tp_outfile_commit(&o, &d), TP_OK);
    text = tp_read_file(path);
    assert_string_equal(text, "new\n");
    free(text);
    assert_int_equal(count_entries(casedir), 1);
}

static void test_outfile_abort_leaves_target(void **state)
{
    char path[320], *text;
    tp_outfile o;
    tp_diag d;
    (void)state;
    tp_diag_init(&d, NULL);
    in_case(path, sizeof path, "out.txt");
    tp_write_file(path, PRECIOUS);
    assert_int_equal(tp_outfile_open(&o, path, &d), TP_OK);
    fputs("half a file", o.fp);
    tp_outfile_abort(&o);
    tp_outfile_abort(&o); /* safe twice (contract in outfile.h) */
    text = tp_read_file(path);
    assert_string_equal(text, PRECIOUS);
    free(text);
    assert_int_equal(count_entries(casedir), 1);
}

static void test_outfile_open_missing_directory(void **state)
{
    char path[320];
    tp_outfile o;
    tp_diag d;
    (void)state;
    tp_diag_init(&d, NULL);
    in_case(path, sizeof path, "no-such-dir/out.csv");
    assert_int_equal(tp_outfile_open(&o, path, &d), TP_ERR_IO);
    assert_non_null(strstr(d.log, "cannot create an output file beside"));
    assert_non_null(strstr(d.log, "no-such-dir/out.csv"));
    assert_int_equal(count_entries(casedir), 0);
}

/* ---- the binary --------------------------------------------------------------------------- */

/* A run that fails (an input error, then a solver failure) leaves the existing CSV alone. */
static void test_outfile_failed_run_keeps_existing(void **state)
{
    static const char *const configs[] = {
        /* input error: a power without a unit */
        "network:\n  nodes:\n    - {id: plate, capacity: 600 J/K, initial: 20 degC}\n"
        "    - {id: room, fixed: 20 degC}\n  links:\n"
        "    - {between: [plate, room], conductance: 1.5 W/K}\n  sources:\n"
        "    - {id: pad, node: plate, power: 100}\n",
        /* the integration fails: 1e-15 J/K tied by 1e6 W/K (tests/bad/run-stiff-failure) */
        "network:\n  nodes:\n    - {id: foil, capacity: 1e-15 J/K, initial: 20 degC}\n"
        "    - {id: room, fixed: 20 degC}\n  links:\n"
        "    - {between: [foil, room], conductance: 1e6 W/K}\n  sources:\n"
        "    - {id: pad, node: foil, power: 1e5 W}\nrun: {duration: 1 h, tolerance: 1e-10}\n",
    };
    static const int codes[] = {2, 1};
    size_t i;
    (void)state;
    for (i = 0; i < 2; i++) {
        char cfg[320], csv[320], *out, *err, *text;
        const char *argv[] = {"tepid", "warmup", "plate.yaml", "--csv", "out.csv", NULL};
        per_test_setup(NULL);
        in_case(cfg, sizeof cfg, "plate.yaml");
        in_case(csv, sizeof csv, "out.csv");
        tp_write_file(cfg, configs[i]);
        tp_write_file(csv, PRECIOUS);
        assert_int_equal(run_tepid(casedir, argv, NULL, &out, &err), codes[i]);
        text = tp_read_file(csv);
        assert_string_equal(text, PRECIOUS);
        assert_int_equal(count_entries(casedir), 2); /* the config and out.csv, nothing else */
        free(text);
        free(out);
        free(err);
    }
}

/* A write that fails half way (the file-size limit stands in for a full disk) is reported, the
 * temporary file is removed and the existing CSV is left as it was. */
static void test_outfile_write_failure_keeps_existing(void **state)
{
    char cfg[320], csv[320], *out, *err, *text;
    const char *argv[] = {"tepid", "warmup", "plate.yaml", "-q", "--csv", "out.csv",
                          "--set", "run.duration=30min", NULL};
    run_opts ro = {0, SMALL_FILE_LIMIT};
    (void)state;
    in_case(cfg, sizeof cfg, "plate.yaml");
    in_case(csv, sizeof csv, "out.csv");
    tp_write_file(cfg, raw_config);
    tp_write_file(csv, PRECIOUS);
    assert_int_equal(run_tepid(casedir, argv, &ro, &out, &err), 1);
    assert_non_null(strstr(err, "cannot write out.csv: File too large"));
    text = tp_read_file(csv);
    assert_string_equal(text, PRECIOUS);
    assert_int_equal(count_entries(casedir), 2);
    free(text);
    free(out);
    free(err);
}

/* The output named as the input, by the same name, by another spelling, through a hard link
 * and through a symbolic link: refused with exit 2, the input unchanged. */
static void test_outfile_refuses_own_input(void **state)
{
    static const char *const names[] = {"plate.yaml", "./plate.yaml", "hard.yaml", "soft.yaml"};
    char cfg[320], hard[320], soft[320];
    size_t i;
    (void)state;
    in_case(cfg, sizeof cfg, "plate.yaml");
    in_case(hard, sizeof hard, "hard.yaml");
    in_case(soft, sizeof soft, "soft.yaml");
    tp_write_file(cfg, raw_config);
    assert_int_equal(link(cfg, hard), 0);
    assert_int_equal(symlink("plate.yaml", soft), 0);
    for (i = 0; i < 4; i++) {
        const char *argv[] = {"tepid", "warmup", "plate.yaml", "--csv", names[i], NULL};
        const char *argv_json[] = {"tepid", "steady", "plate.yaml", "--json", names[i], NULL};
        char *out, *err, *text;
        assert_int_equal(run_tepid(casedir, argv, NULL, &out, &err), 2);
        assert_non_null(strstr(err, "--csv would overwrite the input file plate.yaml"));
        free(out);
        free(err);
        assert_int_equal(run_tepid(casedir, argv_json, NULL, &out, &err), 2);
        assert_non_null(strstr(err, "--json would overwrite the input file plate.yaml"));
        free(out);
        free(err);
        text = tp_read_file(cfg);
        assert_string_equal(text, raw_config);
        free(text);
    }
    assert_int_equal(count_entries(casedir), 3);
}

/* --csv - : the history on standard output (header and 61 rows: 60 s at 1 s, both ends
 * included, closed form), the summary on standard error, no file created. */
static void test_outfile_csv_to_stdout(void **state)
{
    char cfg[320], *out, *err, *line, *save = NULL;
    const char *argv[] = {"tepid", "warmup", "plate.yaml", "--csv", "-", NULL};
    int rows = 0;
    (void)state;
    in_case(cfg, sizeof cfg, "plate.yaml");
    tp_write_file(cfg, raw_config);
    assert_int_equal(run_tepid(casedir, argv, NULL, &out, &err), 0);
    assert_true(strncmp(out, "time_s,plate_C,pad_W\n", 21) == 0);
    for (line = strtok_r(out, "\n", &save); line; line = strtok_r(NULL, "\n", &save))
        rows++;
    assert_int_equal(rows, 1 + 61);
    assert_non_null(strstr(err, "tepid warmup plate.yaml"));
    assert_int_equal(count_entries(casedir), 1);
    free(out);
    free(err);
}

/* An output named through a symbolic link is written to the link's target; the link stays. */
static void test_outfile_follows_symlink(void **state)
{
    char cfg[320], real[320], link_path[320], *out, *err, *text;
    const char *argv[] = {"tepid", "warmup", "plate.yaml", "-q", "--csv", "link.csv", NULL};
    struct stat st;
    (void)state;
    in_case(cfg, sizeof cfg, "plate.yaml");
    in_case(real, sizeof real, "real.csv");
    in_case(link_path, sizeof link_path, "link.csv");
    tp_write_file(cfg, raw_config);
    tp_write_file(real, PRECIOUS);
    assert_int_equal(symlink("real.csv", link_path), 0);
    assert_int_equal(run_tepid(casedir, argv, NULL, &out, &err), 0);
    assert_int_equal(lstat(link_path, &st), 0);
    assert_true(S_ISLNK(st.st_mode));
    text = tp_read_file(real);
    assert_true(strncmp(text, "time_s,plate_C,pad_W\n", 21) == 0);
    assert_int_equal(count_entries(casedir), 3);
    free(text);
    free(out);
    free(err);
}

/* An output that is a FIFO (as /dev/stdout may be) is written into, not replaced by a file. */
static void test_outfile_writes_into_fifo(void **state)
{
    char cfg[320], fifo[320], buf[4096], *out, *err;
    const char *argv[] = {"tepid", "warmup", "plate.yaml", "-q", "--csv", "pipe", NULL};
    struct stat st;
    ssize_t n;
    int fd;
    (void)state;
    in_case(cfg, sizeof cfg, "plate.yaml");
    in_case(fifo, sizeof fifo, "pipe");
    tp_write_file(cfg, raw_config);
    assert_int_equal(mkfifo(fifo, 0644), 0);
    /* Our reading end keeps the FIFO open, so tepid's open for writing does not block; the
     * 61-row history (about 1 kB) fits the pipe's buffer. */
    fd = open(fifo, O_RDONLY | O_NONBLOCK);
    assert_true(fd >= 0);
    assert_int_equal(run_tepid(casedir, argv, NULL, &out, &err), 0);
    n = read(fd, buf, sizeof buf - 1);
    close(fd);
    assert_true(n > 21);
    buf[n] = '\0';
    assert_true(strncmp(buf, "time_s,plate_C,pad_W\n", 21) == 0);
    assert_int_equal(stat(fifo, &st), 0);
    assert_true(S_ISFIFO(st.st_mode));
    assert_int_equal(count_entries(casedir), 2);
    free(out);
    free(err);
}

/* Whether 'nobody' can run the binary and read `path` (the checkout may sit in a directory
 * only its owner can enter, such as /root). Checked in a child that drops to 'nobody'. */
static int nobody_can_run(const char *path)
{
    pid_t pid;
    int status = 0;
    fflush(NULL);
    pid = fork();
    if (pid < 0)
        return 0;
    if (pid == 0) {
        if (setgid(NOBODY_ID) != 0 || setuid(NOBODY_ID) != 0)
            _exit(1);
        _exit(access(TP_TEPID_EXE, X_OK) == 0 && access(path, R_OK) == 0 ? 0 : 1);
    }
    return waitpid(pid, &status, 0) == pid && WIFEXITED(status) && WEXITSTATUS(status) == 0;
}

/* An output directory tepid may not write to: exit 2 (refused when the command line is read, before
 * anything is computed), a message naming the option, the path and the reason, and no file
 * (temporary or final) in it. Run as 'nobody' when the test runs as root,
 * since root writes anywhere. */
static void test_outfile_unwritable_directory(void **state)
{
    char cfg[320], locked[320], *out, *err;
    const char *argv[] = {"tepid", "warmup", "plate.yaml", "-q", "--csv", "locked/out.csv",
                          NULL};
    run_opts ro = {1, 0};
    (void)state;
    in_case(cfg, sizeof cfg, "plate.yaml");
    in_case(locked, sizeof locked, "locked");
    tp_write_file(cfg, raw_config);
    assert_int_equal(chmod(cfg, 0644), 0);
    assert_int_equal(mkdir(locked, 0555), 0);
    assert_int_equal(chmod(locked, 0555), 0);
    if (geteuid() == 0 && !nobody_can_run(cfg)) {
        /* Root writes anywhere, and 'nobody' cannot reach this checkout: nothing to test. */
        print_message("skipped: 'nobody' cannot reach %s\n", TP_TEPID_EXE);
        skip();
    }
    assert_int_equal(run_tepid(casedir, argv, &ro, &out, &err), 2);
    assert_non_null(strstr(err, "--csv: cannot create locked/out.csv"));
    assert_non_null(strstr(err, "Permission denied"));
    assert_non_null(strstr(err, "check that the directory exists and is writable; nothing was "
                            "computed"));
    assert_int_equal(count_entries(locked), 0);
    assert_int_equal(chmod(locked, 0755), 0);
    free(out);
    free(err);
}

/* Every cell of a CSV is a finite number (a NaN would show as an empty cell or "nan"). */
static void check_csv_cells(const char *csv, int columns)
{
    const char *p = strchr(csv, '\n');
    int rows = 0;
    assert_non_null(p);
    p++;
    while (*p) {
        int col = 0;
        for (;;) {
            char *end;
            double v = strtod(p, &end);
            if (end == p || !isfinite(v))
                fail_msg("row %d, column %d is not a finite number: '%.20s'", rows + 1, col + 1,
                         p);
            col++;
            p = end;
            if (*p == ',') {
                p++;
                continue;
            }
            assert_true(*p == '\n');
            p++;
            break;
        }
        assert_int_equal(col, columns);
        rows++;
    }
    assert_true(rows > 0);
}

/* The demo configs through warmup (with a controller: duty and reading columns) and steady:
 * no empty cell, no "nan", no JSON null. */
static void test_outfile_no_nan_in_outputs(void **state)
{
    static const struct {
        const char *config;
        int columns; /* time, nodes with capacity, sources, duty, reading */
    } demos[] = {
        {"configs/raw-five-node.yaml", 1 + 4 + 1 + 2},
        {"configs/workshop-bed-24v.yaml", 1 + 6 + 1 + 2},
    };
    size_t i;
    (void)state;
    for (i = 0; i < 2; i++) {
        char cfg[512], *out, *err;
        const char *argv[] = {"tepid", "warmup", cfg, "-q", "--csv", "-", "--set",
                              "run.duration=5min", NULL};
        const char *argv_json[] = {"tepid", "steady", cfg, "-q", "--json", "-", NULL};
        snprintf(cfg, sizeof cfg, "%s/%s", TP_SOURCE_DIR, demos[i].config);
        assert_int_equal(run_tepid(casedir, argv, NULL, &out, &err), 0);
        check_csv_cells(out, demos[i].columns);
        free(out);
        free(err);
        assert_int_equal(run_tepid(casedir, argv_json, NULL, &out, &err), 0);
        assert_null(strstr(out, "null"));
        assert_null(strstr(out, "nan"));
        assert_non_null(strstr(out, "\"nodes_C\""));
        free(out);
        free(err);
    }
}

static int group_setup(void **state)
{
    (void)state;
    snprintf(dir, sizeof dir, "/tmp/tepid-outfile-XXXXXX");
    if (!mkdtemp(dir))
        return -1;
    return chmod(dir, 0755); /* 'nobody' must reach the test directories */
}

static int group_teardown(void **state)
{
    (void)state;
    tp_remove_tree(dir);
    return 0;
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test_setup(test_outfile_commit_replaces_target, per_test_setup),
        cmocka_unit_test_setup(test_outfile_abort_leaves_target, per_test_setup),
        cmocka_unit_test_setup(test_outfile_open_missing_directory, per_test_setup),
        cmocka_unit_test(test_outfile_failed_run_keeps_existing),
        cmocka_unit_test_setup(test_outfile_write_failure_keeps_existing, per_test_setup),
        cmocka_unit_test_setup(test_outfile_refuses_own_input, per_test_setup),
        cmocka_unit_test_setup(test_outfile_csv_to_stdout, per_test_setup),
        cmocka_unit_test_setup(test_outfile_follows_symlink, per_test_setup),
        cmocka_unit_test_setup(test_outfile_writes_into_fifo, per_test_setup),
        cmocka_unit_test_setup(test_outfile_unwritable_directory, per_test_setup),
        cmocka_unit_test_setup(test_outfile_no_nan_in_outputs, per_test_setup),
    };
    return cmocka_run_group_tests(tests, group_setup, group_teardown);
}

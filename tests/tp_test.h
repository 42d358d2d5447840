/* Helpers shared by the cmocka tests: tolerance checks, a scratch directory (per test or per
 * cmocka group), files read back (as text or JSON), running the tepid binary with its output
 * captured, and a network built from a YAML string. Header only: each test program is one
 * translation unit (tests/CMakeLists.txt builds tests/test_*.c). */
#ifndef TP_TEST_H
#define TP_TEST_H

#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>
#include <setjmp.h>
#include <cmocka.h>

#include <dirent.h>
#include <fcntl.h>
#include <math.h>
#include <spawn.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <sys/wait.h>
#include <unistd.h>

#include <cjson/cJSON.h>

#include "assemble.h"
#include "config.h"
#include "diag.h"
#include "network.h"
#include "yamltree.h"

#define TP_TEST_KELVIN 273.15 /* K at 0 degC (BIPM SI Brochure, 9th ed., 2.3.1) */
#define TP_TEST_PATH 1024     /* bytes of a scratch path */

/* The first-order plant of the tests: one node 'plate' of C = 1000 J/K through G = 2 W/K to a
 * fixed 20 degC 'room', heated by a 400 W source 'pad'; tau = C / G = 500 s, full-power
 * equilibrium 20 + 400 / 2 = 220 degC (hand calculation). A config's control and run sections
 * follow it. */
#define TP_TEST_FIRST_ORDER                                                                        \
    "network:\n"                                                                                   \
    "  nodes:\n"                                                                                   \
    "    - {id: plate, capacity: 1000 J/K, initial: 20 degC}\n"                                    \
    "    - {id: room, fixed: 20 degC}\n"                                                           \
    "  links:\n"                                                                                   \
    "    - {between: [plate, room], conductance: 2 W/K}\n"                                         \
    "  sources:\n"                                                                                 \
    "    - {id: pad, node: plate, power: 400 W}\n"

extern char **environ;

/* |actual - expected| <= tol, else fail naming `what`. */
static inline void tp_check_abs(const char *what, double actual, double expected, double tol)
{
    if (!(fabs(actual - expected) <= tol)) {
        print_error("%s: got %.17g, expected %.17g (absolute tolerance %g)\n", what, actual,
                    expected, tol);
        fail();
    }
}

/* |actual - expected| <= tol |expected|. */
static inline void tp_check_rel(const char *what, double actual, double expected, double tol)
{
    if (!(fabs(actual - expected) <= tol * fabs(expected))) {
        print_error("%s: got %.17g, expected %.17g (relative tolerance %g)\n", what, actual,
                    expected, tol);
        fail();
    }
}

/* `text` contains `part`, else fail showing both. */
static inline void tp_check_contains(const char *what, const char *text, const char *part)
{
    if (!text || !strstr(text, part)) {
        print_error("%s: expected to find\n  [%s]\nin\n  [%s]\n", what, part, text ? text : "");
        fail();
    }
}

/* ---- a scratch directory ------------------------------------------------------------------ */

typedef struct tp_scratch {
    char dir[TP_TEST_PATH];
} tp_scratch;

/* A fresh empty directory under the build tree. */
static inline void tp_scratch_create(tp_scratch *s)
{
    int n = snprintf(s->dir, sizeof s->dir, "%s/tests/scratch.XXXXXX", TP_BINARY_DIR);
    assert_true(n > 0 && (size_t)n < sizeof s->dir);
    assert_non_null(mkdtemp(s->dir));
}

/* The path of `name` inside the directory. */
static inline void tp_scratch_path(const tp_scratch *s, const char *name, char *out, size_t size)
{
    int n = snprintf(out, size, "%s/%s", s->dir, name);
    assert_true(n > 0 && (size_t)n < size);
}

/* Write `text` into `name`; the path goes to `out` (TP_TEST_PATH bytes) when not NULL. */
static inline void tp_scratch_write(const tp_scratch *s, const char *name, const char *text,
                                    char *out)
{
    char path[TP_TEST_PATH];
    FILE *fp;
    tp_scratch_path(s, name, path, sizeof path);
    fp = fopen(path, "w");
    assert_non_null(fp);
    assert_true(fputs(text, fp) >= 0);
    assert_int_equal(fclose(fp), 0);
    if (out)
        snprintf(out, TP_TEST_PATH, "%s", path);
}

/* Remove `path` and everything below it; symbolic links are removed, never followed. Read-only
 * directories are made writable first. Errors are ignored (best effort at teardown). */
static inline void tp_remove_tree(const char *path)
{
    struct stat st;
    DIR *dp;
    struct dirent *e;
    if (lstat(path, &st) != 0)
        return;
    if (!S_ISDIR(st.st_mode)) {
        unlink(path);
        return;
    }
    chmod(path, 0700);
    dp = opendir(path);
    if (dp) {
        while ((e = readdir(dp))) {
            char sub[8192];
            if (strcmp(e->d_name, ".") == 0 || strcmp(e->d_name, "..") == 0)
                continue;
            if (snprintf(sub, sizeof sub, "%s/%s", path, e->d_name) >= (int)sizeof sub)
                continue; /* too long to name: left for rmdir to report */
            tp_remove_tree(sub);
        }
        closedir(dp);
    }
    rmdir(path);
}

/* Remove the scratch directory and everything in it. */
static inline void tp_scratch_destroy(tp_scratch *s)
{
    tp_remove_tree(s->dir);
}

/* Write `text` to `path` (any path), failing the test when it cannot. */
static inline void tp_write_file(const char *path, const char *text)
{
    FILE *fp = fopen(path, "wb");
    assert_non_null(fp);
    assert_int_equal(fwrite(text, 1, strlen(text), fp), strlen(text));
    assert_int_equal(fclose(fp), 0);
}

/* ---- the scratch directory of a cmocka group ---------------------------------------------- */

/* The group's directory, made by tp_scratch_group_setup and removed by
 * tp_scratch_group_teardown; pass those two to cmocka_run_group_tests. */
static inline tp_scratch *tp_group_scratch(void)
{
    static tp_scratch group;
    return &group;
}

/* cmocka group setup: a fresh empty directory as tp_scratch_create makes; 0, or -1 when it
 * cannot be made (no assertions: a group fixture reports by its return value). */
static inline int tp_scratch_group_setup(void **state)
{
    tp_scratch *s = tp_group_scratch();
    int n = snprintf(s->dir, sizeof s->dir, "%s/tests/scratch.XXXXXX", TP_BINARY_DIR);
    (void)state;
    if (n <= 0 || (size_t)n >= sizeof s->dir)
        return -1;
    return mkdtemp(s->dir) ? 0 : -1;
}

/* cmocka group teardown: remove the group's directory and its files. */
static inline int tp_scratch_group_teardown(void **state)
{
    (void)state;
    tp_scratch_destroy(tp_group_scratch());
    return 0;
}

/* Nonzero when a command-line word is a bare file name with the extension of a file tepid
 * writes (not an option, not key=value, not a path into configs/): the README's and the
 * --help examples' outputs, which tests put into a scratch directory. */
static inline int tp_looks_like_output(const char *tok)
{
    static const char *const ext[] = {".png", ".svg", ".pdf", ".csv", ".json", ".yaml",
                                      ".html", ".md"};
    size_t i, n = strlen(tok);
    if (tok[0] == '-' || strchr(tok, '=') || strchr(tok, '/'))
        return 0;
    for (i = 0; i < sizeof ext / sizeof ext[0]; i++)
        if (n > strlen(ext[i]) && strcmp(tok + n - strlen(ext[i]), ext[i]) == 0)
            return 1;
    return 0;
}

static inline int tp_file_exists(const char *path)
{
    struct stat st;
    return stat(path, &st) == 0;
}

/* The whole file as a NUL-terminated string (caller frees), or NULL when unreadable. */
static inline char *tp_read_file(const char *path)
{
    FILE *fp = fopen(path, "rb");
    char *buf = NULL;
    long len;
    if (!fp)
        return NULL;
    if (fseek(fp, 0, SEEK_END) == 0 && (len = ftell(fp)) >= 0 && fseek(fp, 0, SEEK_SET) == 0) {
        buf = malloc((size_t)len + 1);
        if (buf && fread(buf, 1, (size_t)len, fp) != (size_t)len) {
            free(buf);
            buf = NULL;
        }
        if (buf)
            buf[len] = '\0';
    }
    fclose(fp);
    return buf;
}

/* The file parsed as JSON (the caller deletes it); fails the test when the file is unreadable,
 * empty or not JSON. */
static inline cJSON *tp_read_json(const char *path)
{
    char *text = tp_read_file(path);
    cJSON *root;
    assert_true(text != NULL && text[0] != '\0');
    root = cJSON_Parse(text);
    free(text);
    assert_non_null(root);
    return root;
}

/* ---- running the binary ------------------------------------------------------------------- */

typedef struct tp_run_result {
    int status; /* exit status; -1 when the process did not exit normally */
    char *out;  /* standard output */
    char *err;  /* standard error */
} tp_run_result;

/* Run the program `exe` with `args` (NULL-terminated, without the program name) and this
 * process's environment, standard output and error captured through files in the scratch
 * directory. */
static inline void tp_run_program(const tp_scratch *s, const char *exe, const char *const *args,
                                  tp_run_result *r)
{
    char out_path[TP_TEST_PATH], err_path[TP_TEST_PATH];
    char *argv[64];
    posix_spawn_file_actions_t fa;
    pid_t pid;
    int n = 0, wstatus = 0;
    argv[n++] = (char *)exe;
    while (args[n - 1]) {
        assert_true(n < 63);
        argv[n] = (char *)args[n - 1];
        n++;
    }
    argv[n] = NULL;
    tp_scratch_path(s, "run.stdout", out_path, sizeof out_path);
    tp_scratch_path(s, "run.stderr", err_path, sizeof err_path);
    assert_int_equal(posix_spawn_file_actions_init(&fa), 0);
    assert_int_equal(
        posix_spawn_file_actions_addopen(&fa, 1, out_path, O_WRONLY | O_CREAT | O_TRUNC, 0644), 0);
    assert_int_equal(
        posix_spawn_file_actions_addopen(&fa, 2, err_path, O_WRONLY | O_CREAT | O_TRUNC, 0644), 0);
    assert_int_equal(posix_spawnp(&pid, exe, &fa, NULL, argv, environ), 0);
    posix_spawn_file_actions_destroy(&fa);
    assert_int_equal(waitpid(pid, &wstatus, 0), pid);
    r->status = WIFEXITED(wstatus) ? WEXITSTATUS(wstatus) : -1;
    r->out = tp_read_file(out_path);
    r->err = tp_read_file(err_path);
    assert_non_null(r->out);
    assert_non_null(r->err);
    remove(out_path);
    remove(err_path);
}

/* Run TP_TEPID_EXE as tp_run_program does. */
static inline void tp_run_tepid(const tp_scratch *s, const char *const *args, tp_run_result *r)
{
    tp_run_program(s, TP_TEPID_EXE, args, r);
}

/* The full path of program `name` found on PATH into out (TP_TEST_PATH bytes); 0 when found,
 * -1 when not (tests that need an outside program skip then, naming its package). */
static inline int tp_find_program(const char *name, char *out)
{
    const char *path = getenv("PATH");
    while (path && *path) {
        size_t n = strcspn(path, ":");
        int len = snprintf(out, TP_TEST_PATH, "%.*s/%s", n ? (int)n : 1, n ? path : ".", name);
        if (len > 0 && len < TP_TEST_PATH && access(out, X_OK) == 0)
            return 0;
        path += n + (path[n] == ':');
    }
    return -1;
}

static inline void tp_run_clear(tp_run_result *r)
{
    free(r->out);
    free(r->err);
    r->out = r->err = NULL;
}

/* Run as tp_run_tepid and return only the exit status (-1 when the process did not exit
 * normally); the captured output is dropped. */
static inline int tp_run_status(const tp_scratch *s, const char *const *args)
{
    tp_run_result r;
    tp_run_tepid(s, args, &r);
    tp_run_clear(&r);
    return r.status;
}

/* 1-based line and column (bytes) of the first occurrence of `needle` in `text`, found by
 * searching the text: an expected position independent of the parser's. Fails when absent. */
static inline void tp_text_locate(const char *text, const char *needle, int *line, int *col)
{
    const char *at = strstr(text, needle), *p;
    if (!at)
        print_error("'%s' does not occur in\n%s", needle, text);
    assert_non_null(at);
    *line = 1;
    *col = 1;
    for (p = text; p < at; p++) {
        if (*p == '\n') {
            (*line)++;
            *col = 1;
        } else {
            (*col)++;
        }
    }
}

/* ---- a network from a YAML string ----------------------------------------------------------- */

typedef struct tp_yaml_net {
    tp_yamltree *doc;
    tp_description desc;
    const tp_network *net; /* NULL when the text did not assemble */
    tp_diag diag;    /* messages kept in diag.log, not printed */
} tp_yaml_net;

/* Read and assemble `text` as the file "test.yaml"; returns the first failing status. */
static inline tp_status tp_yaml_net_open(tp_yaml_net *y, const char *text)
{
    tp_status st;
    memset(y, 0, sizeof *y);
    tp_diag_init(&y->diag, NULL);
    st = tp_yamltree_load_text("test.yaml", text, strlen(text), &y->doc, &y->diag);
    if (st == TP_OK)
        st = tp_config_read(y->doc, &y->desc, &y->diag);
    if (st == TP_OK)
        st = tp_assemble(&y->desc, y->doc, &y->diag, &y->net);
    return st;
}

/* An invented one-node raw plate (640 J/K, 1.6 W/K to a room at 21 degC) whose source "pad"
 * on the plate is `source` (e.g. "power: 120 W"), with `tail` (top-level lines such as a
 * control section) and a 10 s run; fails the test unless it assembles. */
static inline void tp_yaml_net_plate(tp_yaml_net *y, const char *source, const char *tail)
{
    char text[1024];
    int n = snprintf(text, sizeof text,
                     "network:\n"
                     "  nodes:\n"
                     "    - {id: plate, capacity: 640 J/K, initial: 21 degC}\n"
                     "    - {id: room, fixed: 21 degC}\n"
                     "  links:\n"
                     "    - {between: [plate, room], conductance: 1.6 W/K}\n"
                     "  sources:\n"
                     "    - {id: pad, node: plate, %s}\n"
                     "%s"
                     "run: {duration: 10 s, step: 1 s}\n",
                     source, tail);
    assert_true(n > 0 && (size_t)n < sizeof text);
    if (tp_yaml_net_open(y, text) != TP_OK)
        print_error("%s", y->diag.log);
    assert_non_null(y->net);
}

static inline void tp_yaml_net_close(tp_yaml_net *y)
{
    tp_network_release(&y->net);
    tp_config_clear(&y->desc);
    tp_yamltree_destroy(&y->doc);
}

#endif

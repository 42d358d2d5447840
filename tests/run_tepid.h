/* Helpers shared by the end-to-end tests: a scratch directory per test group, files written
 * into it, the tepid binary (TP_TEPID_EXE) run with its exit status, standard output and standard
 * error captured, and a relative check. Header-only (static inline): each test is its own
 * executable. Include after <cmocka.h>. */
#ifndef TP_TESTS_RUN_TEPID_H
#define TP_TESTS_RUN_TEPID_H

#include <dirent.h>
#include <fcntl.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <sys/wait.h>
#include <unistd.h>

#define RUN_OUT_MAX 65536 /* bytes of standard output or error kept per run */

/* The group's scratch directory, made by scratch_setup and removed by scratch_teardown. */
static char scratch_dir[64];

typedef struct run_result {
    int status;            /* exit status; -1 when the program did not exit normally */
    char out[RUN_OUT_MAX]; /* standard output, NUL-terminated (truncated when longer) */
    char err[RUN_OUT_MAX]; /* standard error, likewise */
} run_result;

/* Read a whole file into `buf` (NUL-terminated, truncated to size - 1). Returns its length, or
 * -1 when it cannot be opened. */
static inline long read_text(const char *path, char *buf, size_t size)
{
    FILE *fp = fopen(path, "rb");
    size_t n;
    if (!fp)
        return -1;
    n = fread(buf, 1, size - 1, fp);
    buf[n] = '\0';
    fclose(fp);
    return (long)n;
}

/* Write `text` to dir/name and put the full path into `path` (size bytes). Returns 0 or -1. */
static inline int write_text(const char *dir, const char *name, const char *text, char *path,
                             size_t size)
{
    FILE *fp;
    snprintf(path, size, "%s/%s", dir, name);
    fp = fopen(path, "wb");
    if (!fp)
        return -1;
    fputs(text, fp);
    return fclose(fp) == 0 ? 0 : -1;
}

/* Remove the files of a flat directory, then the directory. */
static inline void remove_tree(const char *dir)
{
    DIR *dp = opendir(dir);
    struct dirent *e;
    char path[1024];
    if (!dp)
        return;
    while ((e = readdir(dp)) != NULL) {
        if (strcmp(e->d_name, ".") == 0 || strcmp(e->d_name, "..") == 0)
            continue;
        snprintf(path, sizeof path, "%s/%s", dir, e->d_name);
        unlink(path);
    }
    closedir(dp);
    rmdir(dir);
}

/* cmocka group setup: a fresh directory /tmp/tepid-test-XXXXXX in scratch_dir. */
static inline int scratch_setup(void **state)
{
    (void)state;
    strcpy(scratch_dir, "/tmp/tepid-test-XXXXXX");
    return mkdtemp(scratch_dir) ? 0 : -1;
}

/* cmocka group teardown: remove the scratch directory and its files. */
static inline int scratch_teardown(void **state)
{
    (void)state;
    remove_tree(scratch_dir);
    return 0;
}

/* Fail the test unless |actual - expected| <= tol |expected|, printing both values. */
static inline void check_rel(const char *what, double actual, double expected, double tol)
{
    if (!(fabs(actual - expected) <= tol * fabs(expected))) {
        print_error("%s: got %.17g, expected %.17g (relative tolerance %g)\n", what, actual,
                    expected, tol);
        fail();
    }
}

/* Run tepid with `argv` (argv[0] is ignored and replaced by the binary; NULL-terminated), with
 * its standard output and error redirected into files of `dir`, and collect them into `r`.
 * Returns 0 when the program ran (whatever its status), -1 when it could not be started. */
static inline int run_tepid(const char *dir, char *argv[], run_result *r)
{
    char out_path[1024], err_path[1024];
    pid_t pid;
    int wstatus;
    snprintf(out_path, sizeof out_path, "%s/.stdout", dir);
    snprintf(err_path, sizeof err_path, "%s/.stderr", dir);
    fflush(NULL);
    pid = fork();
    if (pid < 0)
        return -1;
    if (pid == 0) {
        int fo = open(out_path, O_WRONLY | O_CREAT | O_TRUNC, 0600);
        int fe = open(err_path, O_WRONLY | O_CREAT | O_TRUNC, 0600);
        if (fo < 0 || fe < 0 || dup2(fo, 1) < 0 || dup2(fe, 2) < 0)
            _exit(127);
        close(fo);
        close(fe);
        argv[0] = (char *)TP_TEPID_EXE;
        execv(TP_TEPID_EXE, argv);
        _exit(127);
    }
    if (waitpid(pid, &wstatus, 0) != pid)
        return -1;
    r->status = WIFEXITED(wstatus) ? WEXITSTATUS(wstatus) : -1;
    if (read_text(out_path, r->out, sizeof r->out) < 0)
        r->out[0] = '\0';
    if (read_text(err_path, r->err, sizeof r->err) < 0)
        r->err[0] = '\0';
    return 0;
}

#endif

/* The bad-input catalogue: every case in tests/bad/ (format in tests/bad/README.md) runs the
 * tepid binary in a fresh directory with a time limit, and must end with the expected exit
 * status and message fragments, without a signal, a sanitizer report, a hang, or a file left
 * behind. One cmocka test per case, named after its file. The expected positions and messages
 * are written in each case file, worked out from the case's own text (source: the case file,
 * by hand), never copied from tepid's output. */
#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>
#include <setjmp.h>
#include <cmocka.h>

#include <dirent.h>
#include <errno.h>
#include <fcntl.h>
#include <signal.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <sys/wait.h>
#include <time.h>
#include <unistd.h>

#include "tp_test.h"

#define CATALOGUE_MIN 60        /* entries the catalogue must hold (issue 10) */
#define MAX_CASES 512           /* case files read from tests/bad */
#define MAX_LINES 16            /* message:, stdout:, absent: and existing: lines per case */
#define MAX_ARGV 1024           /* words of an args: line */
#define LINE_MAX_ 16384         /* longest directive line, bytes */
#define DEFAULT_TIMEOUT 5.0     /* s: a case must end within this (a hang is a failure) */

/* The sanitizers make tepid several times slower, and CI runs the suite under them on a shared
 * machine: the limits (a hang is still a hang) are scaled there. */
#if defined(__SANITIZE_ADDRESS__)
#define TIMEOUT_SCALE 4.0
#elif defined(__has_feature)
#if __has_feature(address_sanitizer)
#define TIMEOUT_SCALE 4.0
#endif
#endif
#ifndef TIMEOUT_SCALE
#define TIMEOUT_SCALE 1.0
#endif
#define OUTPUT_MAX (1 << 20)    /* bytes of a case's stdout or stderr read back */
#define EXISTING_TEXT "precious: this file must survive a failed run\n"

typedef struct bad_case {
    char name[256];       /* file name in tests/bad */
    char path[4400];      /* full path of the case file */
    int exit_code;        /* expected exit status; -1 until an expect: line is read */
    char *messages[MAX_LINES];
    int n_messages;
    char *stdouts[MAX_LINES];
    int n_stdouts;
    char *absent[MAX_LINES]; /* fragments that must not appear in stderr */
    int n_absent;
    char *existing[MAX_LINES];
    int n_existing;
    char *with[MAX_LINES];   /* more files under tests/bad copied beside the input */
    int n_with;
    char *args;           /* the args: line (malloc'ed) */
    char input[1024];     /* input: another file under tests/bad */
    char generate[256];   /* generate: KIND N */
    double timeout;
    char error[512];      /* a malformed case file, reported by its test */
} bad_case;

static bad_case cases[MAX_CASES];
static int n_cases;
static char base_dir[256]; /* mkdtemp directory holding one work directory per case */

/* ---- reading the catalogue ---------------------------------------------------------------- */

static char *trim(char *s)
{
    char *e;
    while (*s == ' ' || *s == '\t')
        s++;
    e = s + strlen(s);
    while (e > s && (e[-1] == '\n' || e[-1] == '\r' || e[-1] == ' ' || e[-1] == '\t'))
        *--e = '\0';
    return s;
}

static void add_line(char **list, int *n, const char *text, bad_case *c)
{
    if (*n == MAX_LINES) {
        snprintf(c->error, sizeof c->error, "more than %d lines of one kind", MAX_LINES);
        return;
    }
    list[(*n)++] = strdup(text);
}

/* Directives are the leading comment lines "# key: value"; other comment lines are prose. */
static void read_case(bad_case *c)
{
    FILE *fp = fopen(c->path, "rb");
    char line[LINE_MAX_];
    c->exit_code = -1;
    c->timeout = DEFAULT_TIMEOUT;
    c->args = strdup("warmup @FILE@ --csv out.csv");
    if (!fp) {
        snprintf(c->error, sizeof c->error, "cannot open: %s", strerror(errno));
        return;
    }
    while (fgets(line, sizeof line, fp) && line[0] == '#') {
        char *key, *colon, *value;
        if (!strchr(line, '\n') && !feof(fp)) {
            snprintf(c->error, sizeof c->error, "a directive line longer than %d bytes",
                     LINE_MAX_ - 2);
            break;
        }
        key = trim(line + 1);
        colon = strchr(key, ':');
        if (!colon)
            continue;
        *colon = '\0';
        value = trim(colon + 1);
        if (strcmp(key, "expect") == 0) {
            if (sscanf(value, "exit=%d", &c->exit_code) != 1)
                snprintf(c->error, sizeof c->error, "expect: wants exit=N, got '%s'", value);
        } else if (strcmp(key, "message") == 0) {
            add_line(c->messages, &c->n_messages, value, c);
        } else if (strcmp(key, "stdout") == 0) {
            add_line(c->stdouts, &c->n_stdouts, value, c);
        } else if (strcmp(key, "absent") == 0) {
            add_line(c->absent, &c->n_absent, value, c);
        } else if (strcmp(key, "existing") == 0) {
            add_line(c->existing, &c->n_existing, value, c);
        } else if (strcmp(key, "with") == 0) {
            add_line(c->with, &c->n_with, value, c);
        } else if (strcmp(key, "args") == 0) {
            free(c->args);
            c->args = strdup(value);
        } else if (strcmp(key, "input") == 0) {
            snprintf(c->input, sizeof c->input, "%s", value);
        } else if (strcmp(key, "generate") == 0) {
            snprintf(c->generate, sizeof c->generate, "%s", value);
        } else if (strcmp(key, "timeout") == 0) {
            c->timeout = atof(value);
        }
        /* Other keys ("why", "see") are documentation. */
    }
    fclose(fp);
    if (!c->error[0] && c->exit_code < 0)
        snprintf(c->error, sizeof c->error, "no '# expect: exit=N' line");
    if (!c->error[0] && c->exit_code != 0 && c->n_messages == 0)
        snprintf(c->error, sizeof c->error, "a failing case needs a '# message:' fragment");
}

static int by_name(const void *a, const void *b)
{
    return strcmp(((const bad_case *)a)->name, ((const bad_case *)b)->name);
}

/* Case files: every regular *.yaml and *.case file directly in tests/bad. */
static void scan_catalogue(void)
{
    char dir[4096 - 256];
    DIR *dp;
    struct dirent *e;
    snprintf(dir, sizeof dir, "%s/tests/bad", TP_SOURCE_DIR);
    dp = opendir(dir);
    if (!dp)
        return;
    while ((e = readdir(dp)) && n_cases < MAX_CASES) {
        size_t len = strlen(e->d_name);
        bad_case *c = &cases[n_cases];
        struct stat st;
        if (e->d_name[0] == '.' || len >= sizeof c->name)
            continue;
        if (!(len > 5 && strcmp(e->d_name + len - 5, ".yaml") == 0) &&
            !(len > 5 && strcmp(e->d_name + len - 5, ".case") == 0))
            continue;
        memset(c, 0, sizeof *c);
        strcpy(c->name, e->d_name);
        snprintf(c->path, sizeof c->path, "%s/%s", dir, e->d_name);
        if (stat(c->path, &st) != 0 || !S_ISREG(st.st_mode))
            continue;
        n_cases++;
    }
    closedir(dp);
    qsort(cases, (size_t)n_cases, sizeof cases[0], by_name);
}

/* ---- files -------------------------------------------------------------------------------- */

static char *read_all(const char *path, size_t *len)
{
    FILE *fp = fopen(path, "rb");
    char *buf;
    size_t n;
    if (!fp)
        return NULL;
    buf = malloc(OUTPUT_MAX + 1);
    if (!buf) {
        fclose(fp);
        return NULL;
    }
    n = fread(buf, 1, OUTPUT_MAX, fp);
    fclose(fp);
    buf[n] = '\0';
    if (len)
        *len = n;
    return buf;
}

static int write_all(const char *path, const char *data, size_t len)
{
    FILE *fp = fopen(path, "wb");
    int ok;
    if (!fp)
        return -1;
    ok = fwrite(data, 1, len, fp) == len;
    ok &= fclose(fp) == 0;
    return ok ? 0 : -1;
}

static int copy_file(const char *from, const char *to)
{
    FILE *in = fopen(from, "rb"), *out = in ? fopen(to, "wb") : NULL;
    char buf[8192];
    size_t n;
    int rc = 0;
    if (!in || !out) {
        if (in)
            fclose(in);
        return -1;
    }
    while ((n = fread(buf, 1, sizeof buf, in)) > 0)
        if (fwrite(buf, 1, n, out) != n)
            rc = -1;
    fclose(in);
    if (fclose(out) != 0)
        rc = -1;
    return rc;
}

/* Generated inputs (a committed file would be binary or large). The generator is a fixed
 * linear congruential sequence so every run sees the same bytes. */
static int generate(const char *spec, const char *path)
{
    char kind[32];
    long n = 0, i;
    unsigned long x = 12345;
    FILE *fp;
    int rc = 0;
    if (sscanf(spec, "%31s %ld", kind, &n) < 1 || n < 0)
        return -1;
    fp = fopen(path, "wb");
    if (!fp)
        return -1;
    if (strcmp(kind, "empty") == 0) {
        /* nothing */
    } else if (strcmp(kind, "binary") == 0 || strcmp(kind, "nonutf8") == 0) {
        for (i = 0; i < n; i++) {
            int byte;
            x = x * 1103515245UL + 12345UL;
            byte = (int)((x >> 16) & 0xff);
            if (kind[0] == 'n') /* high bytes in invalid UTF-8 order, no NUL */
                byte = 0x80 | (byte & 0x3f);
            fputc(byte, fp);
        }
    } else if (strcmp(kind, "big") == 0) {
        /* A valid-looking config padded with comment lines to n bytes. */
        static const char head[] = "title: padded\n";
        static const char pad[] = "# padding padding padding padding padding padding pad\n";
        fputs(head, fp);
        for (i = (long)sizeof head - 1; i + (long)sizeof pad - 1 <= n; i += (long)sizeof pad - 1)
            fputs(pad, fp);
    } else if (strcmp(kind, "keys") == 0) {
        /* One map of n distinct keys: the duplicate-key check must stay fast. */
        for (i = 0; i < n; i++)
            fprintf(fp, "k%ld: 1\n", i);
    } else if (strcmp(kind, "items") == 0) {
        /* One list of n one-character items: n + 2 nodes without any alias. */
        fputs("title: items\nlist:\n", fp);
        for (i = 0; i < n; i++)
            fputs("- 1\n", fp);
    } else if (strcmp(kind, "anchors") == 0) {
        /* n distinct anchors, each on its own small value. */
        for (i = 0; i < n; i++)
            fprintf(fp, "k%ld: &a%ld 1\n", i, i);
    } else if (strcmp(kind, "utf16") == 0) {
        /* "title: utf16" in UTF-16LE with its byte-order mark, as some editors save. */
        static const char text[] = "title: utf16\n";
        fputc(0xff, fp);
        fputc(0xfe, fp);
        for (i = 0; text[i]; i++) {
            fputc(text[i], fp);
            fputc(0, fp);
        }
    } else if (strcmp(kind, "deep") == 0) {
        fputs("title: deep\nbed: ", fp);
        for (i = 0; i < n; i++)
            fputc('[', fp);
        for (i = 0; i < n; i++)
            fputc(']', fp);
        fputc('\n', fp);
    } else {
        rc = -1;
    }
    if (fclose(fp) != 0)
        rc = -1;
    return rc;
}

/* ---- running one case --------------------------------------------------------------------- */

/* Split an args line into words: blanks separate, "..." and '...' group; @FILE@ becomes the
 * input's name. Returns the word count, or -1. Words are strdup'ed into argv. */
static int split_args(const char *line, const char *file, char **argv, int max)
{
    int n = 0;
    const char *p = line;
    while (*p) {
        char word[LINE_MAX_ * 2];
        size_t len = 0;
        int have = 0;
        while (*p == ' ' || *p == '\t')
            p++;
        while (*p && *p != ' ' && *p != '\t') {
            if (*p == '"' || *p == '\'') {
                char q = *p++;
                have = 1;
                while (*p && *p != q && len + 1 < sizeof word)
                    word[len++] = *p++;
                if (*p != q)
                    return -1;
                p++;
            } else if (strncmp(p, "@FILE@", 6) == 0) {
                size_t fl = strlen(file);
                if (len + fl + 1 >= sizeof word)
                    return -1;
                memcpy(word + len, file, fl);
                len += fl;
                p += 6;
                have = 1;
            } else if (len + 1 < sizeof word) {
                word[len++] = *p++;
                have = 1;
            } else {
                return -1;
            }
        }
        if (!have)
            continue;
        if (n + 1 >= max)
            return -1;
        word[len] = '\0';
        argv[n++] = strdup(word);
    }
    argv[n] = NULL;
    return n;
}

static double now(void)
{
    struct timespec ts;
    clock_gettime(CLOCK_MONOTONIC, &ts);
    return (double)ts.tv_sec + 1e-9 * (double)ts.tv_nsec;
}

/* Run the binary in `work` with argv, stdout and stderr to files. Returns the wait status, or
 * -1 when it had to be killed after `timeout` seconds. */
static int run_binary(const char *work, char **argv, const char *out, const char *err,
                      double timeout, double *elapsed)
{
    pid_t pid;
    int status = 0;
    double t0 = now();
    fflush(NULL);
    pid = fork();
    if (pid < 0)
        return -2;
    if (pid == 0) {
        int fo = open(out, O_WRONLY | O_CREAT | O_TRUNC, 0644);
        int fe = open(err, O_WRONLY | O_CREAT | O_TRUNC, 0644);
        int fi = open("/dev/null", O_RDONLY);
        if (fo < 0 || fe < 0 || fi < 0 || chdir(work) != 0)
            _exit(127);
        dup2(fi, 0);
        dup2(fo, 1);
        dup2(fe, 2);
        execv(TP_TEPID_EXE, argv);
        _exit(127);
    }
    for (;;) {
        pid_t r = waitpid(pid, &status, WNOHANG);
        if (r == pid)
            break;
        if (r < 0)
            return -2;
        if (now() - t0 > timeout) {
            kill(pid, SIGKILL);
            waitpid(pid, &status, 0);
            *elapsed = now() - t0;
            return -1;
        }
        {
            struct timespec pause = {0, 2000000L}; /* 2 ms between polls */
            nanosleep(&pause, NULL);
        }
    }
    *elapsed = now() - t0;
    return status;
}

/* Names in `work` other than the input and the existing: files; "" when none. */
static void leftovers(const char *work, const bad_case *c, const char *input, char *out,
                      size_t size, int hidden_only)
{
    DIR *dp = opendir(work);
    struct dirent *e;
    size_t len = 0;
    out[0] = '\0';
    if (!dp)
        return;
    while ((e = readdir(dp))) {
        int i, known = 0;
        if (strcmp(e->d_name, ".") == 0 || strcmp(e->d_name, "..") == 0)
            continue;
        known = strcmp(e->d_name, input) == 0;
        for (i = 0; i < c->n_existing; i++)
            known |= strcmp(e->d_name, c->existing[i]) == 0;
        for (i = 0; i < c->n_with; i++) {
            const char *slash = strrchr(c->with[i], '/');
            known |= strcmp(e->d_name, slash ? slash + 1 : c->with[i]) == 0;
        }
        if (hidden_only)
            known = e->d_name[0] != '.';
        if (!known && len + 2 < size)
            len += (size_t)snprintf(out + len, size - len, "%s ", e->d_name);
    }
    closedir(dp);
}

static void test_bad_case(void **state)
{
    bad_case *c = *state;
    char work[4400], out[4400], err[4400], input_name[1024], src[4400], dst[6000];
    char *argv[MAX_ARGV], *stdout_text = NULL, *stderr_text = NULL, *before = NULL, *after;
    char left[1024];
    size_t before_len = 0, after_len = 0;
    int argc, status, i, code;
    double elapsed = 0.0;

    if (c->error[0])
        fail_msg("%s: malformed case: %s", c->name, c->error);
    snprintf(work, sizeof work, "%s/%s.d", base_dir, c->name);
    snprintf(out, sizeof out, "%s/%s.out", base_dir, c->name);
    snprintf(err, sizeof err, "%s/%s.err", base_dir, c->name);
    assert_int_equal(mkdir(work, 0755), 0);

    /* The input: this file, another catalogue file, or generated bytes. */
    if (c->generate[0]) {
        snprintf(input_name, sizeof input_name, "%.*s.yaml", (int)strlen(c->name) - 5, c->name);
        snprintf(dst, sizeof dst, "%s/%s", work, input_name);
        if (generate(c->generate, dst) != 0)
            fail_msg("%s: bad generate: line '%s'", c->name, c->generate);
    } else {
        const char *from = c->input[0] ? c->input : c->name;
        const char *slash = strrchr(from, '/');
        snprintf(input_name, sizeof input_name, "%s", slash ? slash + 1 : from);
        snprintf(src, sizeof src, "%s/tests/bad/%s", TP_SOURCE_DIR, from);
        snprintf(dst, sizeof dst, "%s/%s", work, input_name);
        if (copy_file(src, dst) != 0)
            fail_msg("%s: cannot copy %s", c->name, src);
    }
    for (i = 0; i < c->n_with; i++) {
        const char *slash = strrchr(c->with[i], '/');
        char from[6000], to[6000];
        snprintf(from, sizeof from, "%s/tests/bad/%s", TP_SOURCE_DIR, c->with[i]);
        snprintf(to, sizeof to, "%s/%s", work, slash ? slash + 1 : c->with[i]);
        if (copy_file(from, to) != 0)
            fail_msg("%s: cannot copy %s", c->name, from);
    }
    before = read_all(dst, &before_len);
    for (i = 0; i < c->n_existing; i++) {
        char p[6000];
        snprintf(p, sizeof p, "%s/%s", work, c->existing[i]);
        assert_int_equal(write_all(p, EXISTING_TEXT, strlen(EXISTING_TEXT)), 0);
    }

    argv[0] = strdup("tepid");
    argc = split_args(c->args, input_name, argv + 1, MAX_ARGV - 1);
    if (argc < 0)
        fail_msg("%s: cannot split args: '%s'", c->name, c->args);
    status = run_binary(work, argv, out, err, TIMEOUT_SCALE * c->timeout, &elapsed);
    for (i = 0; i <= argc; i++)
        free(argv[i]);
    stdout_text = read_all(out, NULL);
    stderr_text = read_all(err, NULL);
    assert_non_null(stdout_text);
    assert_non_null(stderr_text);

    if (status == -1)
        fail_msg("%s: still running after %.1f s (a hang); stderr:\n%s", c->name, TIMEOUT_SCALE * c->timeout,
                 stderr_text);
    if (status == -2)
        fail_msg("%s: cannot run %s", c->name, TP_TEPID_EXE);
    if (WIFSIGNALED(status))
        fail_msg("%s: killed by signal %d (a crash); stderr:\n%s", c->name, WTERMSIG(status),
                 stderr_text);
    if (strstr(stderr_text, "Sanitizer") || strstr(stderr_text, "runtime error:"))
        fail_msg("%s: sanitizer report:\n%s", c->name, stderr_text);
    code = WEXITSTATUS(status);
    if (code != c->exit_code)
        fail_msg("%s: exit status %d, expected %d; stderr:\n%s", c->name, code, c->exit_code,
                 stderr_text);
    for (i = 0; i < c->n_messages; i++) {
        char want[LINE_MAX_ * 2];
        char *at = strstr(c->messages[i], "@FILE@");
        if (at)
            snprintf(want, sizeof want, "%.*s%s%s", (int)(at - c->messages[i]),
                     c->messages[i], input_name, at + 6);
        else
            snprintf(want, sizeof want, "%s", c->messages[i]);
        if (!strstr(stderr_text, want))
            fail_msg("%s: stderr lacks \"%s\"; stderr:\n%s", c->name, want, stderr_text);
    }
    for (i = 0; i < c->n_absent; i++)
        if (strstr(stderr_text, c->absent[i]))
            fail_msg("%s: stderr has \"%s\"; stderr:\n%s", c->name, c->absent[i], stderr_text);
    for (i = 0; i < c->n_stdouts; i++)
        if (!strstr(stdout_text, c->stdouts[i]))
            fail_msg("%s: stdout lacks \"%s\"", c->name, c->stdouts[i]);

    /* The input is never modified; a failed run leaves nothing behind and keeps existing
     * files byte for byte; a successful one leaves no temporary (hidden) file. */
    after = read_all(dst, &after_len);
    if (!after || after_len != before_len || memcmp(before, after, before_len) != 0)
        fail_msg("%s: the input file was modified", c->name);
    free(after);
    leftovers(work, c, input_name, left, sizeof left, c->exit_code == 0);
    if (left[0])
        fail_msg("%s: files left in the work directory: %s", c->name, left);
    for (i = 0; c->exit_code != 0 && i < c->n_existing; i++) {
        char p[6000];
        size_t n = 0;
        char *text;
        snprintf(p, sizeof p, "%s/%s", work, c->existing[i]);
        text = read_all(p, &n);
        if (!text || n != strlen(EXISTING_TEXT) || memcmp(text, EXISTING_TEXT, n) != 0)
            fail_msg("%s: the existing file %s was changed by a failed run", c->name,
                     c->existing[i]);
        free(text);
    }
    if (elapsed > 0.5 * TIMEOUT_SCALE * c->timeout)
        print_message("note: %s took %.2f s of its %.1f s limit\n", c->name, elapsed,
                      TIMEOUT_SCALE * c->timeout);
    free(before);
    free(stdout_text);
    free(stderr_text);
    tp_remove_tree(work);
    unlink(out);
    unlink(err);
}

/* The catalogue holds at least the issue's 60 entries (a lost directory must not pass). */
static void test_catalogue_size(void **state)
{
    (void)state;
    if (n_cases < CATALOGUE_MIN)
        fail_msg("tests/bad holds %d cases, fewer than %d", n_cases, CATALOGUE_MIN);
}

int main(void)
{
    static struct CMUnitTest tests[MAX_CASES + 1];
    const char *tmp = getenv("TMPDIR");
    int i, rc;
    scan_catalogue();
    snprintf(base_dir, sizeof base_dir, "%s/tepid-bad-XXXXXX", tmp && *tmp ? tmp : "/tmp");
    if (!mkdtemp(base_dir)) {
        perror("mkdtemp");
        return 1;
    }
    tests[0] = (struct CMUnitTest){"test_catalogue_size", test_catalogue_size, NULL, NULL, NULL};
    for (i = 0; i < n_cases; i++) {
        read_case(&cases[i]);
        tests[i + 1] = (struct CMUnitTest){cases[i].name, test_bad_case, NULL, NULL, &cases[i]};
    }
    rc = _cmocka_run_group_tests("bad inputs", tests, (size_t)n_cases + 1, NULL, NULL);
    tp_remove_tree(base_dir);
    for (i = 0; i < n_cases; i++) {
        int k;
        for (k = 0; k < cases[i].n_messages; k++)
            free(cases[i].messages[k]);
        for (k = 0; k < cases[i].n_stdouts; k++)
            free(cases[i].stdouts[k]);
        for (k = 0; k < cases[i].n_absent; k++)
            free(cases[i].absent[k]);
        for (k = 0; k < cases[i].n_existing; k++)
            free(cases[i].existing[k]);
        for (k = 0; k < cases[i].n_with; k++)
            free(cases[i].with[k]);
        free(cases[i].args);
    }
    return rc;
}

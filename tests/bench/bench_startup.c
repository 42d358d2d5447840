/* Benchmark (not a test): wall time of whole processes, several command lines interleaved.
 *
 *   build/bench_startup ROUNDS CMD [ARGS...] [-- CMD [ARGS...]]...
 *   (cmake --build build --target bench_startup)
 *
 * Each round runs every command once, in an order that rotates from round to round, so that a
 * drift in the machine's speed (other jobs, clock changes) falls on all of them alike; five
 * untimed rounds come first (page cache). A run is posix_spawn to waitpid, standard output to
 * /dev/null; a run that fails stops the benchmark. Prints, per command, the median, the
 * quartiles, min and max in ms. docs/performance.md ("Start-up") compares tepid binaries
 * built before and after a change this way; pin it to one core with taskset (its children
 * inherit that) rather than starting every run through taskset. A benchmark with no check
 * values: medians and quartiles as usually reported (common practice, no source). */
#include <fcntl.h>
#include <spawn.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/wait.h>
#include <time.h>

#define BENCH_MAX_COMMANDS 16 /* command lines compared at once */
#define BENCH_WARMUP_ROUNDS 5 /* untimed rounds before the timed ones */

extern char **environ;

static int by_value(const void *a, const void *b)
{
    double x = *(const double *)a, y = *(const double *)b;
    return (x > y) - (x < y);
}

/* Wall time of one run of argv in ms, or a negative value when it could not run or failed. */
static double run_once(char *const *argv, const posix_spawn_file_actions_t *fa)
{
    struct timespec t0, t1;
    pid_t pid;
    int status;
    clock_gettime(CLOCK_MONOTONIC, &t0);
    if (posix_spawn(&pid, argv[0], fa, NULL, argv, environ) != 0)
        return -1.0;
    if (waitpid(pid, &status, 0) != pid || !WIFEXITED(status) || WEXITSTATUS(status) != 0)
        return -1.0;
    clock_gettime(CLOCK_MONOTONIC, &t1);
    return 1e3 * (double)(t1.tv_sec - t0.tv_sec) + 1e-6 * (double)(t1.tv_nsec - t0.tv_nsec);
}

int main(int argc, char **argv)
{
    char **cmd[BENCH_MAX_COMMANDS];
    int n_cmd = 0, rounds, r, k, i = 2, rc = 0;
    double *times;
    posix_spawn_file_actions_t fa;

    rounds = argc > 2 ? atoi(argv[1]) : 0;
    if (rounds < 1) {
        fputs("usage: bench_startup ROUNDS CMD [ARGS...] [-- CMD [ARGS...]]...\n", stderr);
        return 2;
    }
    while (i < argc && n_cmd < BENCH_MAX_COMMANDS) {
        cmd[n_cmd++] = &argv[i];
        while (i < argc && strcmp(argv[i], "--") != 0)
            i++;
        if (i < argc)
            argv[i++] = NULL; /* ends this command's argv */
    }
    times = calloc((size_t)rounds * (size_t)n_cmd, sizeof *times);
    if (!times || posix_spawn_file_actions_init(&fa) != 0 ||
        posix_spawn_file_actions_addopen(&fa, 1, "/dev/null", O_WRONLY, 0) != 0) {
        fputs("bench_startup: out of memory\n", stderr);
        free(times);
        return 1;
    }
    for (r = -BENCH_WARMUP_ROUNDS; r < rounds && rc == 0; r++) {
        for (k = 0; k < n_cmd; k++) {
            int c = (k + (r > 0 ? r : 0)) % n_cmd;
            double t = run_once(cmd[c], &fa);
            if (t < 0.0) {
                fprintf(stderr, "bench_startup: %s did not run or failed\n", cmd[c][0]);
                rc = 1;
                break;
            }
            if (r >= 0)
                times[(size_t)c * (size_t)rounds + (size_t)r] = t;
        }
    }
    for (k = 0; k < n_cmd && rc == 0; k++) {
        double *t = times + (size_t)k * (size_t)rounds;
        qsort(t, (size_t)rounds, sizeof *t, by_value);
        printf("%s", cmd[k][0]);
        for (i = 1; cmd[k][i]; i++)
            printf(" %s", cmd[k][i]);
        printf("\n  %d runs: median %.2f ms, quartiles %.2f and %.2f, min %.2f, max %.2f\n",
               rounds, t[rounds / 2], t[rounds / 4], t[(3 * rounds) / 4], t[0],
               t[rounds - 1]);
    }
    posix_spawn_file_actions_destroy(&fa);
    free(times);
    return rc;
}

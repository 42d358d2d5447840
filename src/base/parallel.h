/* Independent tasks on a few threads: a study whose runs do not depend on each other (guard's
 * healthy corners and fault runs) hands them out here. Each task must write only what is its
 * own; the network and description they read are frozen (DEVELOPERS.md). */
#ifndef TP_PARALLEL_H
#define TP_PARALLEL_H

#define TP_PARALLEL_MAX 8 /* threads at most */

/* Run fn(arg, i) once for every i in 0..n-1, on up to `jobs` threads (the calling thread among
 * them), in no particular order. When a thread cannot be started its share runs on the others:
 * every task still runs. */
void tp_parallel_for(long n, int jobs, void (*fn)(void *arg, long i), void *arg);

/* The threads a study uses by default: the processors online, at most TP_PARALLEL_MAX; the
 * environment variable TEPID_JOBS (1 to TP_PARALLEL_MAX) overrides it. */
int tp_parallel_jobs(void);

#endif

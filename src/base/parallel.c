/* Independent tasks on a few threads (parallel.h): a shared counter hands out the next index. */
#include "parallel.h"

#include <pthread.h>
#include <stdatomic.h>
#include <stdlib.h>
#include <unistd.h>

typedef struct pool {
    long n;
    atomic_long next;
    void (*fn)(void *arg, long i);
    void *arg;
} pool;

static void *pool_work(void *p)
{
    pool *pl = p;
    long i;
    while ((i = atomic_fetch_add(&pl->next, 1)) < pl->n)
        pl->fn(pl->arg, i);
    return NULL;
}

void tp_parallel_for(long n, int jobs, void (*fn)(void *arg, long i), void *arg)
{
    pthread_t th[TP_PARALLEL_MAX];
    int started[TP_PARALLEL_MAX] = {0};
    pool pl;
    int k;
    if (jobs > TP_PARALLEL_MAX)
        jobs = TP_PARALLEL_MAX;
    if (jobs > n)
        jobs = (int)n;
    pl.n = n;
    atomic_init(&pl.next, 0);
    pl.fn = fn;
    pl.arg = arg;
    for (k = 1; k < jobs; k++)
        started[k] = pthread_create(&th[k], NULL, pool_work, &pl) == 0;
    pool_work(&pl);
    for (k = 1; k < jobs; k++)
        if (started[k])
            pthread_join(th[k], NULL);
}

int tp_parallel_jobs(void)
{
    const char *e = getenv("TEPID_JOBS");
    long cpus;
    if (e && *e) {
        char *end;
        long j = strtol(e, &end, 10);
        if (*end == '\0' && j >= 1 && j <= TP_PARALLEL_MAX)
            return (int)j;
    }
    cpus = sysconf(_SC_NPROCESSORS_ONLN);
    if (cpus < 1)
        return 1;
    return cpus > TP_PARALLEL_MAX ? TP_PARALLEL_MAX : (int)cpus;
}

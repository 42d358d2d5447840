/* A counting allocator hook for the allocation-failure test (tests/test_failalloc.c): tepid's
 * own objects are linked with -Wl,--wrap=malloc,--wrap=calloc,--wrap=realloc,--wrap=strdup, so
 * every allocation they make comes here. Environment:
 *   TP_FAILALLOC=N        the Nth allocation (1-based) returns NULL, every other one succeeds;
 *   TP_FAILALLOC_COUNT=1  at exit, "tp-failalloc: M allocations" on standard error.
 * The shared libraries tepid uses (libyaml, udunits2, SUNDIALS, KLU, cJSON, cminpack, PLplot)
 * call the C library's allocator directly: --wrap rewrites only references in the objects of
 * this link, so their own allocations are not counted or failed here. A test hook with no
 * check values of its own (common practice, no source). */
#include <stdatomic.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

void *__real_malloc(size_t size);
void *__real_calloc(size_t n, size_t size);
void *__real_realloc(void *p, size_t size);
void *__wrap_malloc(size_t size);
void *__wrap_calloc(size_t n, size_t size);
void *__wrap_realloc(void *p, size_t size);
char *__wrap_strdup(const char *s);

static atomic_long calls; /* allocations so far (guard and sweep allocate from threads) */
static long fail_at = -1;  /* -1: not read yet (the first allocation is on the main thread);
                              0: never */

/* Nonzero when this allocation is the one to fail. */
static int fail_now(void)
{
    if (fail_at < 0) {
        const char *e = getenv("TP_FAILALLOC");
        fail_at = e ? strtol(e, NULL, 10) : 0;
        if (fail_at < 0)
            fail_at = 0;
    }
    return atomic_fetch_add(&calls, 1) + 1 == fail_at;
}

void *__wrap_malloc(size_t size)
{
    return fail_now() ? NULL : __real_malloc(size);
}

void *__wrap_calloc(size_t n, size_t size)
{
    return fail_now() ? NULL : __real_calloc(n, size);
}

void *__wrap_realloc(void *p, size_t size)
{
    return fail_now() ? NULL : __real_realloc(p, size);
}

char *__wrap_strdup(const char *s)
{
    size_t n = strlen(s) + 1;
    char *d = fail_now() ? NULL : __real_malloc(n);
    if (d)
        memcpy(d, s, n);
    return d;
}

__attribute__((destructor)) static void report_count(void)
{
    char line[64];
    int n;
    if (!getenv("TP_FAILALLOC_COUNT"))
        return;
    n = snprintf(line, sizeof line, "tp-failalloc: %ld allocations\n", (long)atomic_load(&calls));
    if (n > 0 && write(2, line, (size_t)n) < 0)
        return;
}

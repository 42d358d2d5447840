/* Sorting records by a small integer key (counting sort, then short runs by comparison). Large
 * networks have hundreds of thousands of pattern entries; a comparison sort of them all took a
 * tenth of a second. */
#include "keysort.h"

#include <stdlib.h>
#include <string.h>

#define TP_KEYSORT_RUN_QSORT 32 /* runs longer than this are sorted by qsort */

void tp_keysort(void *base, int n, size_t size, int n_keys, int (*key)(const void *),
                int (*cmp)(const void *, const void *))
{
    int *start = calloc((size_t)n_keys + 1, sizeof *start), i, k;
    char *tmp = malloc((size_t)(n > 0 ? n : 1) * size), *b = base, *x = malloc(size);
    if (!start || !tmp || !x) {
        free(start);
        free(tmp);
        free(x);
        qsort(base, (size_t)n, size, cmp);
        return;
    }
    for (i = 0; i < n; i++)
        start[key(b + (size_t)i * size) + 1]++;
    for (k = 0; k < n_keys; k++)
        start[k + 1] += start[k];
    for (i = 0; i < n; i++) {
        int kk = key(b + (size_t)i * size);
        memcpy(tmp + (size_t)start[kk]++ * size, b + (size_t)i * size, size);
    }
    /* start[k] is now the end of key k's run */
    for (k = 0, i = 0; k < n_keys; k++) {
        int len = start[k] - i, a, c;
        if (len > TP_KEYSORT_RUN_QSORT) {
            qsort(tmp + (size_t)i * size, (size_t)len, size, cmp);
        } else {
            for (a = i + 1; a < start[k]; a++) {
                memcpy(x, tmp + (size_t)a * size, size);
                for (c = a; c > i && cmp(tmp + (size_t)(c - 1) * size, x) > 0; c--)
                    memcpy(tmp + (size_t)c * size, tmp + (size_t)(c - 1) * size, size);
                memcpy(tmp + (size_t)c * size, x, size);
            }
        }
        i = start[k];
    }
    memcpy(base, tmp, (size_t)n * size);
    free(start);
    free(tmp);
    free(x);
}

/* Sorting records by a small integer key: a counting sort by the key, then each key's records
 * by a comparison. The patterns and matrices of large networks are built with it. */
#ifndef TP_KEYSORT_H
#define TP_KEYSORT_H

#include <stddef.h>

/* Sort n elements of `size` bytes at `base` by an integer key in [0, n_keys) (counting sort),
 * then each key's elements with `cmp` (insertion sort for the short runs of a network's
 * patterns, qsort for long ones), so that the whole is ordered by `cmp` when `cmp` orders by
 * the key first. Falls back to qsort of everything when memory runs out (same order). */
void tp_keysort(void *base, int n, size_t size, int n_keys, int (*key)(const void *),
                int (*cmp)(const void *, const void *));

#endif

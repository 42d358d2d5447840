/* Growable arrays: the one helper every module calls to resize an array it grows. */
#ifndef TP_ARRAY_H
#define TP_ARRAY_H

#include <stddef.h>

/* Resize the array whose pointer is at `array` (the address of any object pointer, e.g.
 * &h->t; NULL pointer for a new array) to `count` elements of `size` bytes. On success
 * returns 0 and the pointer holds the new block (the old contents kept up to the smaller
 * size). When count * size overflows or memory runs out, returns -1 and leaves the pointer and
 * its block as they were: the caller still owns and frees them. */
int tp_array_resize(void *array, size_t count, size_t size);

/* Make room for at least `need` elements in the array at `array` whose capacity is *cap: when
 * need exceeds *cap the capacity doubles, from `first` for an empty array, until it holds
 * need, so that n appends cost O(n). Returns 0 with *cap updated, or -1 with nothing changed
 * (tp_array_resize). */
int tp_array_reserve(void *array, size_t *cap, size_t need, size_t size, size_t first);

#endif

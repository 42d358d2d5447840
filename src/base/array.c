/* Growable arrays: resizing with the overflow check, and geometric growth for appends. */
#include "array.h"

#include <stdint.h>
#include <stdlib.h>
#include <string.h>

int tp_array_resize(void *array, size_t count, size_t size)
{
    void *old, *q;
    size_t bytes;
    if (size != 0 && count > SIZE_MAX / size)
        return -1;
    bytes = count * size;
    /* The pointer is read and written as bytes so that `array` may be the address of any
     * object pointer (POSIX: all object pointers have the representation of void *). */
    memcpy(&old, array, sizeof old);
    q = realloc(old, bytes > 0 ? bytes : 1); /* realloc(p, 0) may free p and return NULL */
    if (!q)
        return -1;
    memcpy(array, &q, sizeof q);
    return 0;
}

int tp_array_reserve(void *array, size_t *cap, size_t need, size_t size, size_t first)
{
    size_t c = *cap;
    if (need <= c)
        return 0;
    if (c == 0)
        c = first > 0 ? first : 1;
    while (c < need)
        c = c > SIZE_MAX / 2 ? need : 2 * c;
    if (tp_array_resize(array, c, size) != 0)
        return -1;
    *cap = c;
    return 0;
}

/* Input files read whole: a growing buffer that stops one byte past the bound, so a file over
 * the bound is known without reading all of it. */
#include "infile.h"

#include <errno.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#define TP_INFILE_CHUNK 8192 /* first buffer size, bytes; doubled as the file grows */

tp_status tp_infile_read(const char *path, size_t max_bytes, char **buf, size_t *len, tp_diag *d)
{
    FILE *fp;
    char *b = NULL;
    size_t n = 0, cap = 0, got;

    *buf = NULL;
    *len = 0;
    fp = fopen(path, "rb");
    if (!fp) {
        tp_diag_error(d, (tp_loc){path, 0, 0}, NULL, "check the file name", "cannot open: %s",
                      strerror(errno));
        return TP_ERR_IO;
    }
    do {
        if (n == cap) {
            char *nb;
            if (cap > max_bytes)
                break; /* max_bytes + 1 bytes are in: the file is over the bound */
            cap = cap ? cap * 2 : TP_INFILE_CHUNK;
            if (cap > max_bytes)
                cap = max_bytes + 1;
            nb = realloc(b, cap + 1); /* + 1: the terminating NUL */
            if (!nb) {
                free(b);
                fclose(fp);
                return TP_ERR_NOMEM;
            }
            b = nb;
        }
        got = fread(b + n, 1, cap - n, fp);
        n += got;
    } while (got > 0);
    if (ferror(fp)) {
        tp_diag_error(d, (tp_loc){path, 0, 0}, NULL, NULL, "cannot read: %s", strerror(errno));
        free(b);
        fclose(fp);
        return TP_ERR_IO;
    }
    fclose(fp);
    if (n > max_bytes) {
        free(b);
        return TP_ERR_LIMIT;
    }
    b[n] = '\0';
    *buf = b;
    *len = n;
    return TP_OK;
}

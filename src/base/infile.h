/* Input files read whole into memory under a size bound, with the open and read failures
 * reported in one wording for every reader (configs, measured logs). */
#ifndef TP_INFILE_H
#define TP_INFILE_H

#include <stddef.h>

#include "diag.h"
#include "status.h"

/* Read the file at `path` into a new buffer: on TP_OK *buf holds its *len bytes followed by a
 * NUL (the caller frees it; the text may itself contain NUL bytes). A file that cannot be
 * opened or read is reported to `d` as PATH: cannot open / cannot read, and is TP_ERR_IO. A
 * file of more than `max_bytes` bytes is TP_ERR_LIMIT, not reported: the caller says what the
 * bound means for its kind of file. TP_ERR_NOMEM when a buffer cannot be had. On failure *buf
 * is NULL and *len 0. */
tp_status tp_infile_read(const char *path, size_t max_bytes, char **buf, size_t *len, tp_diag *d);

#endif

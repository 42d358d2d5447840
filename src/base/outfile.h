/* Atomic output files: write to a temporary file beside the target, rename on success. */
#ifndef TP_OUTFILE_H
#define TP_OUTFILE_H

#include <stdio.h>

#include "diag.h"
#include "status.h"

#define TP_PATH_MAX 4096 /* longest output path accepted, bytes */

/* An output in progress. "-" means standard output, written directly. */
typedef struct tp_outfile {
    char path[TP_PATH_MAX]; /* the final name */
    char tmp[TP_PATH_MAX];  /* the temporary file in the same directory; "" for stdout */
    FILE *fp;               /* the stream to write to */
} tp_outfile;

/* Open `path` for writing through a temporary file in the same directory. A symbolic link is
 * followed (the temporary file goes beside its target, the link stays); an existing FIFO,
 * terminal or device (/dev/stdout) is written in place, like "-". On failure nothing is left
 * on disk and an error naming the path is reported to `d`. */
tp_status tp_outfile_open(tp_outfile *o, const char *path, tp_diag *d);

/* Finish: flush, close and rename the temporary file onto the target. On failure the temporary
 * file is removed, the target is untouched, and an error is reported. */
tp_status tp_outfile_commit(tp_outfile *o, tp_diag *d);

/* Abandon: close and remove the temporary file; the target is untouched. Safe to call twice. */
void tp_outfile_abort(tp_outfile *o);

/* Reserve a temporary file name beside `path` (beside a symbolic link's target; in the working
 * directory when `path` is a FIFO or device) for writers that open files by name (PLplot).
 * The empty file is created; the caller later calls tp_outfile_place or removes it. */
tp_status tp_outfile_reserve(const char *path, char *tmp, size_t tmp_size, tp_diag *d);

/* Whether an output to `path` can be created, without writing it: 0, or -1 with the reason in
 * `why` (a directory, a missing or unwritable directory, a path too long). Makes and removes the
 * temporary file tp_outfile_open or tp_outfile_reserve (`by_name` nonzero: writers that open files
 * by name) would make. "-" always passes. The command-line parser calls it for every output
 * option before a verb runs, so that no computation is thrown away for want of an output. */
int tp_outfile_check(const char *path, int by_name, char *why, size_t size);

/* Rename a reserved temporary file onto `path` (a symbolic link's target), or copy it into a
 * FIFO or device and remove it; on failure remove it and report. */
tp_status tp_outfile_place(const char *tmp, const char *path, tp_diag *d);

/* Nonzero when `a` and `b` name the same existing file (same device and inode). */
int tp_outfile_same_file(const char *a, const char *b);

#endif

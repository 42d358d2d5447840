/* CSV output: a header row, then one row per output step (docs/user-guide.md: time_s, <id>_C for
 * every node with capacity in declaration order, <source-id>_W, duty and reading_C with a
 * controller; a gridded plate has per-layer statistics instead of cells, docs/grid.md); and the
 * surface maps of a gridded plate, one row per cell. */
#ifndef TP_CSV_H
#define TP_CSV_H

#include <stdio.h>

#include "diag.h"
#include "history.h"
#include "status.h"

#define TP_REAL_FMT "%.9g" /* the one format for reals in tepid's files */

/* Write the history to `path` ("-" for standard output), atomically. */
tp_status tp_csv_write_history(const char *path, const tp_history *h, tp_diag *d);

/* Print one real in TP_REAL_FMT (non-finite values as empty cells). */
void tp_csv_real(FILE *fp, double v);

/* Write surface maps of grid g as CSV, one row per cell: i, j, x_mm, y_mm (cell centres) and
 * one column per map in degC (names[k] then "_C"; an empty cell where a map has no value or is
 * NULL). Atomic. */
tp_status tp_csv_write_maps(const char *path, const tp_net_grid *g, const double *const *maps,
                           const char *const *names, int n_maps, tp_diag *d);

#endif

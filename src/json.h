/* JSON output with cJSON: building helpers and the atomic writer. */
#ifndef TP_JSON_H
#define TP_JSON_H

#include <cjson/cJSON.h>

#include "diag.h"
#include "status.h"

/* Write `root` to `path` ("-" for standard output), pretty-printed, atomically. */
tp_status tp_json_write(const char *path, const cJSON *root, tp_diag *d);

/* Add a number, or null when it is not finite (JSON has no NaN). Returns the item or NULL. */
cJSON *tp_json_number(cJSON *obj, const char *name, double v);

#endif

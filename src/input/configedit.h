/* Editing a config's text in place: new values substituted at the byte ranges the YAML tree
 * recorded, missing keys added to their section, a comment block on top; everything else
 * (comments, layout, flow or block style) is kept as the user wrote it. */
#ifndef TP_CONFIGEDIT_H
#define TP_CONFIGEDIT_H

#include <stddef.h>

#include "diag.h"
#include "status.h"
#include "yamltree.h"

#define TP_CONFIGEDIT_PATH_MAX 256  /* longest key path, bytes incl. NUL */
#define TP_CONFIGEDIT_VALUE_MAX 256 /* longest value text, bytes incl. NUL */

/* One change: the key at `path` (dotted, list items by id or index) gets `value`, a YAML
 * flow text such as "2.55 ohm" or "[240 mm, 240 mm]". */
typedef struct tp_configedit_item {
    char path[TP_CONFIGEDIT_PATH_MAX];
    char value[TP_CONFIGEDIT_VALUE_MAX];
} tp_configedit_item;

/* Apply `n` changes to the text of `doc` (a document loaded from a file, without overrides) and
 * prepend `comment` (lines already starting with '#', may be NULL). On success *out is a new
 * NUL-terminated text (the caller frees it). A path through a value, a missing list item, a
 * block section to be replaced, or two changes to overlapping text are TP_ERR_CONFIG with a
 * message naming the key. */
tp_status tp_configedit_apply(const tp_yamltree *doc, const tp_configedit_item *items, int n,
                              const char *comment, char **out, tp_diag *d);

/* The unit text written after the number at `path` in `doc` ("ohm" for "2.4 ohm", "%" for
 * "90 %"), into unit; "" when the key is absent, not a scalar or a bare number. */
void tp_configedit_unit(const tp_yamltree *doc, const char *path, char *unit, size_t size);

#endif

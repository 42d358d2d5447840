/* The config reader: a schema of keys (tables, not strcmp chains) that turns the YAML tree into
 * a tp_description in SI units, with FILE:LINE:COL errors, did-you-mean hints and defaults; and
 * setting any numeric key by its dotted path (for sweeps and fits). */
#ifndef TP_CONFIG_H
#define TP_CONFIG_H

#include "description.h"
#include "diag.h"
#include "status.h"
#include "units.h"
#include "yamltree.h"

#define TP_MAX_LAYERS 16        /* layers in a bed */
#define TP_MAX_RAW_NODES 100000 /* nodes in a raw network */
#define TP_MAX_RAW_LINKS 400000 /* links in a raw network */
#define TP_MAX_MATERIALS 256    /* materials defined in one file */
#define TP_MAX_OUTPUT_ROWS 5000000.0 /* output times in one run, run.duration / run.step + 1
                                        (30 days at 1 s fits) */
#define TP_MAX_TICKS 10000000.0      /* controller samples in one run, run.duration /
                                        control.period */
#define TP_MAX_DURATION (30 * 86400.0) /* s, longest model run: run.duration, or the span of a
                                          measured log that fit reproduces */
#define TP_GRID_SIDE_MAX 500    /* cells along one side of bed.grid */

/* Read the description from a parsed document. Every problem is reported to `d`; on error
 * returns TP_ERR_CONFIG and *desc is cleared (nothing to free). Defaults are applied. */
tp_status tp_config_read(const tp_yamltree *doc, tp_description *desc, tp_diag *d);

/* A pid controller without gains (kp and ki both 0) is an error for every verb that runs the
 * closed loop; tune, which identifies the plant in open loop, does not ask (tp_session_open_plant).
 * TP_OK or TP_ERR_CONFIG with a message naming control.kp. */
tp_status tp_config_check_gains(const tp_yamltree *doc, const tp_description *desc, tp_diag *d);

/* Load a file, apply the overrides ("key.path=value", n_sets of them) and read it. On success
 * the caller owns *doc and *desc (tp_yamltree_destroy, tp_config_clear). */
tp_status tp_config_load(const char *path, const char *const *sets, int n_sets, tp_yamltree **doc,
                         tp_description *desc, tp_diag *d);

/* Read a `materials:` map (used for models/materials.yaml and inline materials). */
tp_status tp_config_read_materials(const tp_yamltree_node *map, const char *path,
                                   tp_material_spec **out, size_t *n, tp_diag *d);

/* Release what a description owns (the lists tp_config_read allocated, as the schema says);
 * leaves it cleared. Accepts a cleared description. */
void tp_config_clear(tp_description *desc);

/* Deep copy, list by list as the schema says. Returns TP_ERR_NOMEM on failure (dst then
 * cleared). */
tp_status tp_config_copy(tp_description *dst, const tp_description *src);

/* The dimension of the numeric key at `path` (e.g. "heater.power", "bed.layers.plate.contact",
 * "bed.size.0"). Returns TP_ERR_CONFIG with a message in `d` when the path names no number, at
 * the option `opt` that gave the path (e.g. "--vary"; NULL: no position), with a hint (for a
 * built-in material's property: copy the material into materials: first). */
tp_status tp_config_key_dim(const tp_description *desc, const char *path, const char *opt,
                            tp_dim *dim, tp_diag *d);

/* Read or set the numeric key at `path` in SI units (same paths as tp_config_key_dim). */
tp_status tp_config_get(const tp_description *desc, const char *path, double *si);
tp_status tp_config_set(tp_description *desc, const char *path, double si);

/* Check an SI value against the bounds the schema gives the key at `path` (positive,
 * non-negative, a fraction, whole, the plausibility limit), as the reader checks a file's
 * values. TP_OK, or TP_ERR_CONFIG with a one-line reason in msg. Thread-safe (reads only). */
tp_status tp_config_check(const tp_description *desc, const char *path, double si, char *msg,
                          size_t msg_size);

/* The keys of the schema, for completion and the manual pages. */
typedef enum tp_config_key_kind {
    TP_KEY_NUMBER, /* a number: --set, --vary, --spread and --free take it */
    TP_KEY_PAIR,   /* a pair of numbers ([250 mm, 210 mm]); PATH.0 and PATH.1 are numbers */
    TP_KEY_TEXT    /* an id, a mode, free text or a pair of ids: --set only */
} tp_config_key_kind;

typedef struct tp_config_key_info {
    const char *path;        /* dotted, e.g. "heater.power" or "bed.layers.plate.contact" */
    tp_config_key_kind kind;
    tp_dim dim;              /* the unit's dimension (TP_DIM_NONE for text and bare numbers) */
    int required;            /* required within its section */
} tp_config_key_info;

typedef void (*tp_config_key_fn)(const tp_config_key_info *key, void *ctx);

/* Call `fn` for every leaf key of the schema, in schema order. Lists (bed.layers, loads,
 * network.nodes, materials, ...) are expanded with the items of `desc`, by id where items
 * have one and by 0-based index otherwise. With desc NULL and `placeholders` set, an item is
 * named "ID" (or "N" where items have no id, as network.links); with desc NULL and no
 * placeholders, list items are left out. Reads only. */
void tp_config_each_key(const tp_description *desc, int placeholders, tp_config_key_fn fn,
                        void *ctx);

#endif

/* The YAML document tree: libyaml events turned into maps, sequences and scalars that keep
 * their file positions, with limits on size, depth and alias expansion, and --set overrides. */
#ifndef TP_YAMLTREE_H
#define TP_YAMLTREE_H

#include <stddef.h>

#include "diag.h"
#include "status.h"

#define TP_YAMLTREE_MAX_BYTES (1024 * 1024) /* largest config file read, bytes */
#define TP_YAMLTREE_MAX_NODES 200000        /* nodes after alias expansion */
#define TP_YAMLTREE_MAX_DEPTH 64            /* nesting of maps and sequences */

typedef enum tp_yamltree_kind {
    TP_YAMLTREE_SCALAR,
    TP_YAMLTREE_MAP,
    TP_YAMLTREE_SEQ
} tp_yamltree_kind;

typedef struct tp_yamltree_node tp_yamltree_node;

/* One node. A map holds n keys (scalars) and n values; a sequence holds n items. */
struct tp_yamltree_node {
    tp_yamltree_kind kind;
    const char *file;         /* name used in messages ("--set" for overrides), borrowed */
    int line, col;            /* 1-based position of the node's first character */
    size_t start, end;        /* byte range of the node in its source text (scalars: the value) */
    int quoted;               /* scalar written in quotes */
    int flow;                 /* map or sequence written in flow style { } [ ] */
    int overridden;           /* created or replaced by --set */
    char *text;               /* scalar value, NUL-terminated; NULL for maps and sequences */
    tp_yamltree_node **keys;  /* map keys (scalars) */
    tp_yamltree_node **items; /* map values, or sequence items */
    size_t n, cap;
};

typedef struct tp_yamltree {
    char *file; /* the file name as given */
    char *text; /* the whole source, NUL-terminated */
    size_t len;
    tp_yamltree_node *root; /* a map for a valid config; NULL for an empty document */
    size_t n_nodes;
    int n_sets; /* overrides applied so far */
} tp_yamltree;

/* Read and parse a file. On error reports FILE:LINE:COL with a hint and returns
 * TP_ERR_CONFIG (or TP_ERR_LIMIT); *out is then NULL. */
tp_status tp_yamltree_load_file(const char *path, tp_yamltree **out, tp_diag *d);

/* Parse text held in memory; `name` is used in messages. The text is copied. */
tp_status tp_yamltree_load_text(const char *name, const char *text, size_t len, tp_yamltree **out,
                                tp_diag *d);

/* Free a document and NULL the caller's handle. Accepts NULL. */
void tp_yamltree_destroy(tp_yamltree **doc);

/* Apply one override "key.path=value" (value in YAML flow syntax, e.g. "200 W" or
 * "[250 mm, 210 mm]"). Path segments select map keys (created when missing), sequence items by
 * index or by their `id`. Errors name "--set" and the column in the argument. */
tp_status tp_yamltree_set(tp_yamltree *doc, const char *assignment, tp_diag *d);

/* The value under `key` in a map node, or NULL. */
tp_yamltree_node *tp_yamltree_get(const tp_yamltree_node *map, const char *key);

/* Resolve a dotted path from the root (same rules as tp_yamltree_set, nothing created). */
tp_yamltree_node *tp_yamltree_find(const tp_yamltree *doc, const char *path);

/* The location of a node for diagnostics. */
tp_loc tp_yamltree_loc(const tp_yamltree_node *node);

/* Where to point a message about the key at `path` (tp_yamltree_find's rules): the key itself when
 * the file gives it, else the nearest enclosing key that it gives, else the top of the
 * document; the file without a position when the document is empty, and no file at all when
 * `doc` is NULL (a description built without a file). The one helper for "nearest key
 * position": every layer that reports on a key asks it. */
tp_loc tp_yamltree_nearest(const tp_yamltree *doc, const char *path);

/* A short name of a node's kind for messages: "a value", "a section", "a list". */
const char *tp_yamltree_kind_name(tp_yamltree_kind kind);

#endif

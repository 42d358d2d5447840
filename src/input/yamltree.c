/* The YAML document tree: built from libyaml parser events, with positions, limits and
 * alias expansion by copy (bounded), plus dotted-path lookup and --set overrides. */
#include "yamltree.h"

#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include <yaml.h>

#include "array.h"
#include "infile.h"

#define ANCHORS_MAX 1024 /* anchors remembered per document */

typedef struct anchor {
    char *name;
    tp_yamltree_node *node;
    int open; /* still being built: an alias to it would be circular */
} anchor;

typedef struct builder {
    tp_yamltree *doc;
    const char *file;
    tp_diag *d;
    int line_base; /* --set values: the ordinal of the --set (its "line") minus 1 */
    int col_base;  /* --set values: the column where the value starts, minus 1 */
    int one_line;  /* a --set value: every position is on line line_base + 1 */
    tp_yamltree_node *stack[TP_YAMLTREE_MAX_DEPTH + 1];
    int expect_value[TP_YAMLTREE_MAX_DEPTH +
                     1]; /* map on the stack awaits a value for its last key */
    int depth;
    anchor anchors[ANCHORS_MAX];
    int n_anchors;
    tp_yamltree_node *root;
    int failed;
} builder;

const char *tp_yamltree_kind_name(tp_yamltree_kind kind)
{
    switch (kind) {
    case TP_YAMLTREE_SCALAR:
        return "a value";
    case TP_YAMLTREE_MAP:
        return "a section (key: value pairs)";
    case TP_YAMLTREE_SEQ:
        return "a list";
    }
    return "?";
}

tp_loc tp_yamltree_loc(const tp_yamltree_node *node)
{
    tp_loc loc = {NULL, 0, 0};
    if (node) {
        loc.file = node->file;
        loc.line = node->line;
        loc.col = node->col;
    }
    return loc;
}

static void node_free(tp_yamltree_node *n)
{
    size_t i;
    if (!n)
        return;
    for (i = 0; i < n->n; i++) {
        if (n->keys)
            node_free(n->keys[i]);
        node_free(n->items[i]);
    }
    free(n->keys);
    free(n->items);
    free(n->text);
    free(n);
}

void tp_yamltree_destroy(tp_yamltree **doc)
{
    if (!doc || !*doc)
        return;
    node_free((*doc)->root);
    free((*doc)->file);
    free((*doc)->text);
    free(*doc);
    *doc = NULL;
}

/* The position of a libyaml mark. A --set value is one command-line argument: its line is
 * the ordinal of the --set and its column the byte offset in the argument, even where libyaml
 * puts the mark on a following line (an unclosed bracket is reported past the end). */
static tp_loc mark_loc(const builder *b, const yaml_mark_t *m)
{
    tp_loc loc = {b->file, (int)m->line + 1 + b->line_base, (int)m->column + 1 + b->col_base};
    if (b->one_line) {
        loc.line = b->line_base + 1;
        loc.col = (int)m->index + 1 + b->col_base;
    }
    return loc;
}

static tp_yamltree_node *node_new(builder *b, tp_yamltree_kind kind, const yaml_mark_t *start,
                                  const yaml_mark_t *end)
{
    tp_yamltree_node *n;
    if (b->doc->n_nodes >= TP_YAMLTREE_MAX_NODES) {
        tp_diag_error(b->d, mark_loc(b, start), NULL, "split the file or remove repeated anchors",
                      "the document has more than %d nodes", TP_YAMLTREE_MAX_NODES);
        return NULL;
    }
    n = calloc(1, sizeof *n);
    if (!n)
        return NULL;
    n->kind = kind;
    n->file = b->file;
    n->line = mark_loc(b, start).line;
    n->col = mark_loc(b, start).col;
    n->start = start->index;
    n->end = end->index;
    b->doc->n_nodes++;
    return n;
}

static int node_push_child(tp_yamltree_node *parent, tp_yamltree_node *key, tp_yamltree_node *value)
{
    /* keys (maps only) and items grow together: both hold parent->cap entries */
    size_t cap = parent->cap, key_cap = parent->cap;
    if (tp_array_reserve(&parent->items, &cap, parent->n + 1, sizeof *parent->items, 8) != 0 ||
        (parent->kind == TP_YAMLTREE_MAP &&
         tp_array_reserve(&parent->keys, &key_cap, parent->n + 1, sizeof *parent->keys, 8) != 0))
        return -1;
    parent->cap = cap;
    if (parent->kind == TP_YAMLTREE_MAP)
        parent->keys[parent->n] = key;
    parent->items[parent->n] = value;
    parent->n++;
    return 0;
}

/* Deep copy for alias expansion, counting nodes against the document limit. */
static tp_yamltree_node *node_copy(builder *b, const tp_yamltree_node *src, int line, int col)
{
    tp_yamltree_node *n;
    size_t i;
    if (b->doc->n_nodes >= TP_YAMLTREE_MAX_NODES) {
        tp_diag_error(b->d, (tp_loc){b->file, line, col}, NULL,
                      "anchors and aliases may not expand a document beyond the node limit",
                      "alias expansion exceeds %d nodes", TP_YAMLTREE_MAX_NODES);
        return NULL;
    }
    n = calloc(1, sizeof *n);
    if (!n)
        return NULL;
    *n = *src;
    n->keys = n->items = NULL;
    n->n = n->cap = 0;
    n->text = NULL;
    b->doc->n_nodes++;
    if (src->text && !(n->text = strdup(src->text)))
        goto fail;
    for (i = 0; i < src->n; i++) {
        tp_yamltree_node *k = NULL, *v;
        if (src->kind == TP_YAMLTREE_MAP && !(k = node_copy(b, src->keys[i], line, col)))
            goto fail;
        v = node_copy(b, src->items[i], line, col);
        if (!v || node_push_child(n, k, v) != 0) {
            node_free(k);
            node_free(v);
            goto fail;
        }
    }
    return n;
fail:
    node_free(n);
    return NULL;
}

/* The dotted path of `key` in the map on top of the stack, named as config.c names keys in
 * its messages: map keys, list items by their id when they have one, else by index. */
static void key_path(const builder *b, const char *key, char *out, size_t size)
{
    size_t len = 0;
    int i;
    out[0] = '\0';
    for (i = 1; i < b->depth && len < size; i++) {
        const tp_yamltree_node *up = b->stack[i - 1];
        const tp_yamltree_node *id = tp_yamltree_get(b->stack[i], "id");
        char label[32];
        const char *name = label;
        if (up->kind == TP_YAMLTREE_MAP)
            name = up->keys[up->n - 1]->text;
        else if (id && id->kind == TP_YAMLTREE_SCALAR)
            name = id->text;
        else
            snprintf(label, sizeof label, "%zu", up->n - 1);
        len += (size_t)snprintf(out + len, size - len, "%s.", name);
    }
    if (len < size)
        snprintf(out + len, size - len, "%s", key);
}

/* Attach a finished node to the open parent (or make it the root). */
static int attach(builder *b, tp_yamltree_node *n)
{
    tp_yamltree_node *parent;
    if (b->depth == 0) {
        b->root = n;
        return 0;
    }
    parent = b->stack[b->depth - 1];
    if (parent->kind == TP_YAMLTREE_SEQ) {
        if (node_push_child(parent, NULL, n) != 0) {
            node_free(n); /* the caller's contract: attach owns n, also on failure */
            return -1;
        }
        return 0;
    }
    if (!b->expect_value[b->depth - 1]) {
        if (n->kind != TP_YAMLTREE_SCALAR) {
            tp_diag_error(b->d, tp_yamltree_loc(n), NULL,
                          "write keys as plain words followed by ':'",
                          "a key must be a plain word, not %s", tp_yamltree_kind_name(n->kind));
            node_free(n);
            return -1;
        }
        /* Duplicates are found when the map closes (check_duplicates), in O(n log n). */
        if (node_push_child(parent, n, NULL) != 0) {
            node_free(n);
            return -1;
        }
        b->expect_value[b->depth - 1] = 1;
        return 0;
    }
    parent->items[parent->n - 1] = n;
    b->expect_value[b->depth - 1] = 0;
    return 0;
}

/* Order of map keys for duplicate detection: by text, then by position in the map. */
static int key_order(const void *pa, const void *pb)
{
    const tp_yamltree_node *const *a = pa, *const *b = pb;
    int c = strcmp((*a)->text, (*b)->text);
    if (c)
        return c;
    return (*a)->start < (*b)->start ? -1 : (*a)->start > (*b)->start;
}

/* Report the earliest repeated key of a finished map. A per-key linear scan made a map of
 * n keys cost O(n^2) string comparisons (about 20 s for the 130,000 keys that fit in the
 * size limit); sorting a copy of the key pointers is O(n log n). Returns 0 or -1. */
static int check_duplicates(builder *b, const tp_yamltree_node *map)
{
    tp_yamltree_node **sorted;
    const tp_yamltree_node *first = NULL, *dup = NULL;
    size_t i, j;
    char hint[96], path[256];
    if (map->n < 2)
        return 0;
    sorted = malloc(map->n * sizeof *sorted);
    if (!sorted)
        return -1;
    memcpy(sorted, map->keys, map->n * sizeof *sorted);
    qsort(sorted, map->n, sizeof *sorted, key_order);
    /* Within a run of equal keys (ordered by position) the second is that key's first
     * repetition; report the repetition that comes first in the file. */
    for (i = 0; i < map->n; i = j) {
        for (j = i + 1; j < map->n && strcmp(sorted[i]->text, sorted[j]->text) == 0; j++)
            ;
        if (j > i + 1 && (!dup || sorted[i + 1]->start < dup->start)) {
            first = sorted[i];
            dup = sorted[i + 1];
        }
    }
    free(sorted);
    if (!dup)
        return 0;
    snprintf(hint, sizeof hint, "the first '%.40s' is at line %d; keep one of them", dup->text,
             first->line);
    /* The map has just been popped: name the key as if it were still on top of the stack. */
    b->depth++;
    key_path(b, dup->text, path, sizeof path);
    b->depth--;
    tp_diag_error(b->d, tp_yamltree_loc(dup), path, hint, "duplicate key");
    return -1;
}

static int add_anchor(builder *b, const char *name, tp_yamltree_node *n, const yaml_mark_t *m)
{
    if (b->n_anchors == ANCHORS_MAX) {
        tp_diag_error(b->d, mark_loc(b, m), NULL, NULL, "more than %d anchors", ANCHORS_MAX);
        return -1;
    }
    b->anchors[b->n_anchors].name = strdup(name);
    if (!b->anchors[b->n_anchors].name)
        return -1;
    b->anchors[b->n_anchors].node = n;
    b->anchors[b->n_anchors].open = n->kind != TP_YAMLTREE_SCALAR;
    b->n_anchors++;
    return 0;
}

static void close_anchor(builder *b, const tp_yamltree_node *n)
{
    int i;
    for (i = 0; i < b->n_anchors; i++)
        if (b->anchors[i].node == n)
            b->anchors[i].open = 0;
}

static int on_alias(builder *b, const yaml_event_t *ev)
{
    int i;
    const char *name = (const char *)ev->data.alias.anchor;
    tp_loc loc = mark_loc(b, &ev->start_mark);
    for (i = b->n_anchors - 1; i >= 0; i--) {
        if (strcmp(b->anchors[i].name, name) == 0) {
            tp_yamltree_node *copy;
            if (b->anchors[i].open) {
                tp_diag_error(b->d, loc, NULL, "an alias may not refer to a node that contains it",
                              "circular alias *%s", name);
                return -1;
            }
            copy = node_copy(b, b->anchors[i].node, loc.line, loc.col);
            if (!copy)
                return -1;
            copy->line = loc.line;
            copy->col = loc.col;
            return attach(b, copy);
        }
    }
    tp_diag_error(b->d, loc, NULL, "define the anchor with &name before using *name",
                  "unknown alias *%s", name);
    return -1;
}

/* A "\0" escape in a quoted string puts a NUL inside the scalar: the C strings downstream would
 * silently end there ("0.7 mm\0 km" read as 0.7 mm; issue 15 item 26). Reported, nonzero. */
static int has_nul(builder *b, const yaml_event_t *ev)
{
    const unsigned char *v = ev->data.scalar.value;
    const unsigned char *nul = memchr(v, '\0', ev->data.scalar.length), *c;
    size_t chars = 0;
    if (!nul)
        return 0;
    for (c = v; c < nul; c++)
        chars += (*c & 0xC0) != 0x80; /* UTF-8 characters, not bytes */
    tp_diag_error(b->d, mark_loc(b, &ev->start_mark), NULL,
                  "remove the \\0 escape: keys and values are text without NUL characters",
                  "the string has a NUL character (\\0) after its first %zu character%s", chars,
                  chars == 1 ? "" : "s");
    return 1;
}

static int on_event(builder *b, const yaml_event_t *ev)
{
    tp_yamltree_node *n;
    const char *anchor_name = NULL;
    switch (ev->type) {
    case YAML_STREAM_START_EVENT:
    case YAML_STREAM_END_EVENT:
    case YAML_DOCUMENT_END_EVENT:
    case YAML_NO_EVENT:
        return 0;
    case YAML_DOCUMENT_START_EVENT:
        if (b->root) {
            tp_diag_error(b->d, mark_loc(b, &ev->start_mark), NULL,
                          "remove the '---' separator: one file describes one plate",
                          "more than one YAML document in the file");
            return -1;
        }
        return 0;
    case YAML_ALIAS_EVENT:
        return on_alias(b, ev);
    case YAML_SCALAR_EVENT:
        if (has_nul(b, ev))
            return -1;
        n = node_new(b, TP_YAMLTREE_SCALAR, &ev->start_mark, &ev->end_mark);
        if (!n)
            return -1;
        n->text = strdup((const char *)ev->data.scalar.value);
        if (!n->text) {
            node_free(n);
            return -1;
        }
        n->quoted = ev->data.scalar.style == YAML_SINGLE_QUOTED_SCALAR_STYLE ||
                    ev->data.scalar.style == YAML_DOUBLE_QUOTED_SCALAR_STYLE;
        anchor_name = (const char *)ev->data.scalar.anchor;
        if (anchor_name && add_anchor(b, anchor_name, n, &ev->start_mark) != 0) {
            node_free(n);
            return -1;
        }
        return attach(b, n);
    case YAML_MAPPING_START_EVENT:
    case YAML_SEQUENCE_START_EVENT:
        if (b->depth >= TP_YAMLTREE_MAX_DEPTH) {
            tp_diag_error(b->d, mark_loc(b, &ev->start_mark), NULL,
                          "a plate description needs only a few levels",
                          "nesting deeper than %d levels", TP_YAMLTREE_MAX_DEPTH);
            return -1;
        }
        n = node_new(b, ev->type == YAML_MAPPING_START_EVENT ? TP_YAMLTREE_MAP : TP_YAMLTREE_SEQ,
                     &ev->start_mark, &ev->end_mark);
        if (!n)
            return -1;
        if (ev->type == YAML_MAPPING_START_EVENT) {
            n->flow = ev->data.mapping_start.style == YAML_FLOW_MAPPING_STYLE;
            anchor_name = (const char *)ev->data.mapping_start.anchor;
        } else {
            n->flow = ev->data.sequence_start.style == YAML_FLOW_SEQUENCE_STYLE;
            anchor_name = (const char *)ev->data.sequence_start.anchor;
        }
        if (anchor_name && add_anchor(b, anchor_name, n, &ev->start_mark) != 0) {
            node_free(n);
            return -1;
        }
        if (attach(b, n) != 0)
            return -1; /* attach freed n */
        b->stack[b->depth] = n;
        b->expect_value[b->depth] = 0;
        b->depth++;
        return 0;
    case YAML_MAPPING_END_EVENT:
    case YAML_SEQUENCE_END_EVENT:
        if (b->depth == 0)
            return -1;
        n = b->stack[--b->depth];
        n->end = ev->end_mark.index;
        if (n->kind == TP_YAMLTREE_MAP && b->expect_value[b->depth]) {
            tp_diag_error(b->d, tp_yamltree_loc(n), NULL, NULL, "a key has no value");
            return -1;
        }
        if (n->kind == TP_YAMLTREE_MAP && check_duplicates(b, n) != 0)
            return -1;
        close_anchor(b, n);
        return 0;
    }
    return 0;
}

/* A message and hint for a libyaml error, with the tab special case. */
static void report_parser_error(builder *b, const yaml_parser_t *p, const char *text, size_t len)
{
    const yaml_mark_t *m = &p->problem_mark;
    const char *hint = "check indentation, colons and brackets around this point";
    size_t i = m->index;
    if (p->error == YAML_READER_ERROR) {
        tp_diag_error(b->d, (tp_loc){b->file, 0, 0}, NULL,
                      "save the file as UTF-8 text; this does not look like a YAML config",
                      "cannot read the text: %s", p->problem ? p->problem : "invalid bytes");
        return;
    }
    if (i < len && (text[i] == '\t' || (i > 0 && text[i - 1] == '\t')))
        hint = "YAML does not allow tabs for indentation; indent with spaces";
    else {
        /* A tab anywhere in the indentation of this line is the usual culprit. */
        size_t s = i < len ? i : len;
        while (s > 0 && text[s - 1] != '\n')
            s--;
        for (; s < len && (text[s] == ' ' || text[s] == '\t'); s++)
            if (text[s] == '\t') {
                hint = "YAML does not allow tabs for indentation; indent with spaces";
                break;
            }
    }
    {
        /* libyaml reports where it gave up; the construct it was reading (an unclosed
         * bracket or quote) often starts lines earlier, so say where. */
        char started[64] = "";
        tp_loc at = mark_loc(b, &p->context_mark);
        if (p->context && p->context_mark.index != m->index)
            snprintf(started, sizeof started, " that starts at line %d, column %d", at.line,
                     at.col);
        tp_diag_error(b->d, mark_loc(b, m), NULL, hint, "YAML syntax error: %s%s%s%s",
                      p->problem ? p->problem : "unreadable", p->context ? " " : "",
                      p->context ? p->context : "", started);
    }
}

/* "out of memory while reading" about `file`; TP_ERR_NOMEM. */
static tp_status no_memory(const char *file, tp_diag *d)
{
    tp_diag_error(d, (tp_loc){file, 0, 0}, NULL, NULL, "out of memory while reading");
    return TP_ERR_NOMEM;
}

/* Parse `text` into a tree; shared by files and --set values. Returns the root (may be NULL for
 * an empty document) through *root. TP_OK; TP_ERR_CONFIG for an input error (reported); or
 * TP_ERR_NOMEM when memory ran out (reported: an allocation failure is not an input error). */
static tp_status build(tp_yamltree *doc, const char *file, const char *text, size_t len,
                       int line_base, int col_base, tp_yamltree_node **root, tp_diag *d)
{
    yaml_parser_t parser;
    yaml_event_t ev;
    builder *b;
    int done = 0, rc = 0, i, errors = d->errors;

    *root = NULL;
    b = calloc(1, sizeof *b);
    if (!b)
        return no_memory(file, d);
    b->doc = doc;
    b->file = file;
    b->d = d;
    b->line_base = line_base;
    b->col_base = col_base;
    b->one_line = strcmp(file, "--set") == 0;
    if (!yaml_parser_initialize(&parser)) {
        free(b);
        return no_memory(file, d);
    }
    yaml_parser_set_input_string(&parser, (const unsigned char *)text, len);
    while (!done) {
        if (!yaml_parser_parse(&parser, &ev)) {
            report_parser_error(b, &parser, text, len);
            rc = -1;
            break;
        }
        done = ev.type == YAML_STREAM_END_EVENT;
        if (on_event(b, &ev) != 0)
            rc = -1;
        yaml_event_delete(&ev);
        if (rc)
            break;
    }
    yaml_parser_delete(&parser);
    /* On error the partial tree hangs from the stack bottom or the root. */
    if (rc != 0) {
        if (b->depth > 0 && !b->root)
            node_free(b->stack[0]);
        else
            node_free(b->root);
    } else {
        *root = b->root;
    }
    for (i = 0; i < b->n_anchors; i++)
        free(b->anchors[i].name);
    free(b);
    if (rc == 0)
        return TP_OK;
    /* A failure that reported nothing was an allocation. */
    return d->errors == errors ? no_memory(file, d) : TP_ERR_CONFIG;
}

/* The error for a text over TP_YAMLTREE_MAX_BYTES, whether read from a file or given. */
static tp_status too_large(const char *name, tp_diag *d)
{
    tp_diag_error(d, (tp_loc){name, 0, 0}, NULL,
                  "a plate description is a few kilobytes; is this the right file?",
                  "the file is larger than %d bytes", TP_YAMLTREE_MAX_BYTES);
    return TP_ERR_LIMIT;
}

tp_status tp_yamltree_load_text(const char *name, const char *text, size_t len, tp_yamltree **out,
                                tp_diag *d)
{
    tp_yamltree *doc;
    tp_status st;
    *out = NULL;
    if (len > TP_YAMLTREE_MAX_BYTES)
        return too_large(name, d);
    if (len >= 2 && (((unsigned char)text[0] == 0xff && (unsigned char)text[1] == 0xfe) ||
                     ((unsigned char)text[0] == 0xfe && (unsigned char)text[1] == 0xff))) {
        tp_diag_error(d, (tp_loc){name, 0, 0}, NULL,
                      "save it as UTF-8 (most editors offer the encoding under 'Save as')",
                      "the file is UTF-16 text; tepid reads UTF-8");
        return TP_ERR_CONFIG;
    }
    if (memchr(text, '\0', len)) {
        tp_diag_error(d, (tp_loc){name, 0, 0}, NULL, "give a YAML text file",
                      "the file contains binary data (NUL bytes)");
        return TP_ERR_CONFIG;
    }
    doc = calloc(1, sizeof *doc);
    if (!doc)
        return no_memory(name, d);
    doc->file = strdup(name);
    doc->text = malloc(len + 1);
    if (!doc->file || !doc->text) {
        tp_yamltree_destroy(&doc);
        return no_memory(name, d);
    }
    memcpy(doc->text, text, len);
    doc->text[len] = '\0';
    doc->len = len;
    st = build(doc, doc->file, doc->text, len, 0, 0, &doc->root, d);
    if (st != TP_OK) {
        if (st == TP_ERR_CONFIG && doc->n_nodes >= TP_YAMLTREE_MAX_NODES)
            st = TP_ERR_LIMIT;
        tp_yamltree_destroy(&doc);
        return st;
    }
    *out = doc;
    return TP_OK;
}

tp_status tp_yamltree_load_file(const char *path, tp_yamltree **out, tp_diag *d)
{
    char *buf;
    size_t len;
    tp_status st;

    *out = NULL;
    st = tp_infile_read(path, TP_YAMLTREE_MAX_BYTES, &buf, &len, d);
    if (st == TP_ERR_LIMIT)
        return too_large(path, d);
    if (st == TP_ERR_IO)
        return TP_ERR_CONFIG; /* an unreadable config is an input error (exit 2) */
    if (st != TP_OK)
        return st;
    st = tp_yamltree_load_text(path, buf, len, out, d);
    free(buf);
    return st;
}

tp_yamltree_node *tp_yamltree_get(const tp_yamltree_node *map, const char *key)
{
    size_t i;
    if (!map || map->kind != TP_YAMLTREE_MAP)
        return NULL;
    for (i = 0; i < map->n; i++)
        if (strcmp(map->keys[i]->text, key) == 0)
            return map->items[i];
    return NULL;
}

/* Index of the sequence item named by `seg`: a decimal index or the item's `id`. -1: none. */
static long seq_index(const tp_yamltree_node *seq, const char *seg)
{
    size_t i;
    char *end;
    long idx = strtol(seg, &end, 10);
    if (*seg && *end == '\0' && idx >= 0 && (size_t)idx < seq->n)
        return idx;
    for (i = 0; i < seq->n; i++) {
        const tp_yamltree_node *id = tp_yamltree_get(seq->items[i], "id");
        if (id && id->kind == TP_YAMLTREE_SCALAR && strcmp(id->text, seg) == 0)
            return (long)i;
    }
    return -1;
}

tp_yamltree_node *tp_yamltree_find(const tp_yamltree *doc, const char *path)
{
    char buf[512];
    char *seg, *save = NULL;
    tp_yamltree_node *n = doc ? doc->root : NULL;
    if (!n || strlen(path) >= sizeof buf)
        return NULL;
    strcpy(buf, path);
    for (seg = strtok_r(buf, ".", &save); seg && n; seg = strtok_r(NULL, ".", &save)) {
        if (n->kind == TP_YAMLTREE_MAP) {
            n = tp_yamltree_get(n, seg);
        } else if (n->kind == TP_YAMLTREE_SEQ) {
            long i = seq_index(n, seg);
            n = i >= 0 ? n->items[i] : NULL;
        } else {
            return NULL;
        }
    }
    return n;
}

tp_loc tp_yamltree_nearest(const tp_yamltree *doc, const char *path)
{
    char buf[512];
    const tp_yamltree_node *n = NULL;
    if (!doc)
        return tp_diag_loc_none();
    snprintf(buf, sizeof buf, "%s", path);
    while (!(n = tp_yamltree_find(doc, buf))) {
        char *dot = strrchr(buf, '.');
        if (!dot)
            break;
        *dot = '\0';
    }
    if (!n)
        n = doc->root;
    return n ? tp_yamltree_loc(n) : (tp_loc){doc->file, 0, 0};
}

/* Shift every node of a --set value to the command-line position. */
static void mark_override(tp_yamltree_node *n, int line)
{
    size_t i;
    n->overridden = 1;
    n->line = line;
    for (i = 0; i < n->n; i++) {
        if (n->keys)
            mark_override(n->keys[i], line);
        mark_override(n->items[i], line);
    }
}

/* The key path and the value text of an assignment "key.path=value", blanks around either
 * left out (--set 'key = 70 degC' is --set key=70degC, issue 15 item 9): the path into `path`
 * (size bytes), the value at *text (*tlen bytes). TP_ERR_USAGE with a message naming --set and
 * the column. */
static tp_status split_assignment(const char *assignment, int line, char *path, size_t size,
                                  const char **text, size_t *tlen, tp_diag *d)
{
    const char *eq = strchr(assignment, '='), *name;
    tp_loc loc = {"--set", line, 1};
    size_t plen;
    if (!eq || eq == assignment) {
        tp_diag_error(d, loc, NULL, "write --set key.path=value, e.g. --set heater.power=200W",
                      "'%s' is not an assignment", assignment);
        return TP_ERR_USAGE;
    }
    name = assignment;
    while (*name == ' ' || *name == '\t')
        name++;
    plen = (size_t)(eq - name);
    while (plen > 0 && (name[plen - 1] == ' ' || name[plen - 1] == '\t'))
        plen--;
    if (plen == 0) {
        tp_diag_error(d, loc, NULL, "write --set key.path=value, e.g. --set heater.power=200W",
                      "'%s' is not an assignment", assignment);
        return TP_ERR_USAGE;
    }
    if (plen >= size) {
        tp_diag_error(d, loc, NULL, NULL, "key path too long");
        return TP_ERR_USAGE;
    }
    memcpy(path, name, plen);
    path[plen] = '\0';
    if (path[0] == '.' || path[plen - 1] == '.' || strstr(path, "..")) {
        tp_diag_error(d, (tp_loc){"--set", line, (int)(name - assignment) + 1}, path,
                      "separate keys with single dots, e.g. bed.top.emissivity",
                      "empty key in the path");
        return TP_ERR_USAGE;
    }
    *text = eq + 1;
    while (**text == ' ' || **text == '\t')
        (*text)++;
    *tlen = strlen(*text);
    while (*tlen > 0 && ((*text)[*tlen - 1] == ' ' || (*text)[*tlen - 1] == '\t'))
        (*tlen)--;
    if (*tlen == 0) {
        tp_diag_error(d, (tp_loc){"--set", line, (int)(eq - assignment) + 2}, path,
                      "give a value after '=', e.g. --set heater.power=200W", "missing value");
        return TP_ERR_USAGE;
    }
    return TP_OK;
}

/* A new key `name` created by --set on `line` in map n, with `value` (a new section when NULL:
 * *made gets it). Returns 0, or -1 when out of memory (nothing added, value freed). */
static int add_key(tp_yamltree *doc, tp_yamltree_node *n, const char *name, tp_yamltree_node *value,
                   int line, tp_yamltree_node **made)
{
    yaml_mark_t m = {0, 0, 0};
    builder b = {.doc = doc, .file = "--set"};
    tp_yamltree_node *key = node_new(&b, TP_YAMLTREE_SCALAR, &m, &m);
    tp_yamltree_node *child = value ? value : node_new(&b, TP_YAMLTREE_MAP, &m, &m);
    if (!key || !child || !(key->text = strdup(name)) || node_push_child(n, key, child)) {
        node_free(key);
        node_free(child);
        return -1;
    }
    mark_override(key, line);
    if (!value)
        mark_override(child, line);
    if (made)
        *made = child;
    return 0;
}

/* Put `value` at `path` (split on dots; list items by id or index, missing map keys created),
 * replacing what is there. Takes `value` in every case. */
static tp_status place_value(tp_yamltree *doc, char *path, tp_yamltree_node *value, int line,
                             tp_diag *d)
{
    char walked[512] = "";
    char *seg, *next, *save = NULL;
    tp_loc loc = {"--set", line, 1};
    tp_yamltree_node *n = doc->root;
    for (seg = strtok_r(path, ".", &save); seg; seg = next) {
        next = strtok_r(NULL, ".", &save);
        if (walked[0])
            strcat(walked, ".");
        strcat(walked, seg);
        if (n->kind == TP_YAMLTREE_SCALAR) {
            tp_diag_error(d, loc, walked, "a value cannot hold keys; check the path",
                          "the path goes through a value, not a section");
            node_free(value);
            return TP_ERR_USAGE;
        }
        if (n->kind == TP_YAMLTREE_SEQ) {
            long i = seq_index(n, seg);
            if (i < 0) {
                tp_diag_error(d, loc, walked, "select list items by their id or a 0-based index",
                              "no such item in the list");
                node_free(value);
                return TP_ERR_USAGE;
            }
            if (!next) {
                node_free(n->items[i]);
                n->items[i] = value;
                return TP_OK;
            }
            n = n->items[i];
            continue;
        }
        if (!next) {
            size_t i;
            for (i = 0; i < n->n; i++)
                if (strcmp(n->keys[i]->text, seg) == 0) {
                    node_free(n->items[i]);
                    n->items[i] = value;
                    return TP_OK;
                }
            return add_key(doc, n, seg, value, line, NULL) == 0 ? TP_OK : TP_ERR_NOMEM;
        }
        {
            tp_yamltree_node *child = tp_yamltree_get(n, seg);
            if (!child && add_key(doc, n, seg, NULL, line, &child) != 0) {
                node_free(value);
                return TP_ERR_NOMEM;
            }
            n = child;
        }
    }
    node_free(value);
    return TP_OK;
}

tp_status tp_yamltree_set(tp_yamltree *doc, const char *assignment, tp_diag *d)
{
    char path[512];
    tp_yamltree_node *value = NULL;
    int line = ++doc->n_sets;
    const char *text;
    size_t tlen;
    tp_status st = split_assignment(assignment, line, path, sizeof path, &text, &tlen, d);
    if (st != TP_OK)
        return st;
    st = build(doc, "--set", text, tlen, line - 1, (int)(text - assignment), &value, d);
    if (st != TP_OK)
        return st == TP_ERR_NOMEM ? st : TP_ERR_USAGE;
    if (!value) {
        tp_diag_error(d, (tp_loc){"--set", line, (int)(text - assignment) + 1}, path, NULL,
                      "missing value");
        return TP_ERR_USAGE;
    }
    mark_override(value, line);
    if (!doc->root) {
        yaml_mark_t m = {0, 0, 0};
        builder b = {.doc = doc, .file = "--set"};
        doc->root = node_new(&b, TP_YAMLTREE_MAP, &m, &m);
        if (!doc->root) {
            node_free(value);
            return TP_ERR_NOMEM;
        }
    }
    return place_value(doc, path, value, line, d);
}

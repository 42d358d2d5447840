/* Editing a config's text in place. Replacements use the byte range of the scalar (or flow
 * collection) the YAML tree recorded; keys missing from the file go into the deepest section
 * that exists: before the closing brace of a flow section, on a new line at the indentation of
 * a block section's keys, or at the end of the file for top-level sections. */
#include "configedit.h"

#include <ctype.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "array.h"

#define SEGS_MAX 12 /* path segments */
#define SEG_MAX 64  /* bytes per segment incl. NUL */

typedef struct edit {
    size_t at, del; /* replace text[at, at + del) ... */
    char *ins;      /* ... by this */
    int order;      /* creation order: insertions at the same place keep it */
} edit;

typedef struct pending {
    const tp_yamltree_node *map; /* the deepest existing section */
    char seg[SEGS_MAX][SEG_MAX];
    int nseg; /* segments still missing below `map` */
    const char *value;
    const char *path;
} pending;

typedef struct buf {
    char *s;
    size_t len, cap;
    int failed;
} buf;

static void put(buf *b, const char *text, size_t n)
{
    if (b->failed)
        return;
    if (tp_array_reserve(&b->s, &b->cap, b->len + n + 1, 1, 256) != 0) {
        b->failed = 1;
        return;
    }
    memcpy(b->s + b->len, text, n);
    b->len += n;
    b->s[b->len] = '\0';
}

static void puts_buf(buf *b, const char *text)
{
    put(b, text, strlen(text));
}

static void spaces(buf *b, size_t n)
{
    while (n-- > 0)
        put(b, " ", 1);
}

static int split_path(const char *path, char seg[SEGS_MAX][SEG_MAX])
{
    int n = 0;
    const char *p = path;
    while (*p) {
        size_t len = strcspn(p, ".");
        if (len == 0 || len >= SEG_MAX || n == SEGS_MAX)
            return -1;
        memcpy(seg[n], p, len);
        seg[n][len] = '\0';
        n++;
        p += len;
        if (*p == '.')
            p++;
    }
    return n;
}

static int add_edit(edit **ed, int *n, size_t at, size_t del, const char *text)
{
    edit *e;
    if (tp_array_resize(ed, (size_t)*n + 1, sizeof **ed) != 0)
        return -1;
    e = *ed;
    e[*n].at = at;
    e[*n].del = del;
    e[*n].order = *n;
    e[*n].ins = malloc(strlen(text) + 1);
    if (!e[*n].ins)
        return -1;
    strcpy(e[*n].ins, text);
    (*n)++;
    return 0;
}

static int cmp_edit(const void *a, const void *b)
{
    const edit *x = a, *y = b;
    if (x->at != y->at)
        return x->at < y->at ? -1 : 1;
    return x->order - y->order;
}

/* Render the pending keys idx[0..n) of one section from segment `depth` on, as flow text:
 * "a: 1, b: {c: 2}". Returns -1 when a key is both a value and a section. */
static int render(const pending *pd, const int *idx, int n, int depth, buf *b)
{
    int i, j, first = 1;
    for (i = 0; i < n; i++) {
        const char *seg = pd[idx[i]].seg[depth];
        int seen = 0, group[64], ng = 0, leaf = 0;
        for (j = 0; j < i; j++)
            if (strcmp(pd[idx[j]].seg[depth], seg) == 0)
                seen = 1;
        if (seen)
            continue;
        for (j = i; j < n && ng < 64; j++)
            if (strcmp(pd[idx[j]].seg[depth], seg) == 0) {
                group[ng++] = idx[j];
                leaf |= pd[idx[j]].nseg == depth + 1;
            }
        if (!first)
            puts_buf(b, ", ");
        first = 0;
        puts_buf(b, seg);
        puts_buf(b, ": ");
        if (leaf) {
            if (ng > 1)
                return -1;
            puts_buf(b, pd[group[0]].value);
        } else {
            puts_buf(b, "{");
            if (render(pd, group, ng, depth + 1, b) != 0)
                return -1;
            puts_buf(b, "}");
        }
    }
    return 0;
}

/* The edits that add the pending keys idx[0..n) to their (common) section. */
static int insert_keys(const tp_yamltree *doc, const pending *pd, const int *idx, int n, edit **ed,
                       int *ned, tp_diag *d)
{
    const tp_yamltree_node *map = pd[idx[0]].map;
    const char *text = doc->text;
    buf b = {NULL, 0, 0, 0};
    int i, j, rc = 0;
    if (map->flow) {
        size_t p = map->end;
        while (p > map->start && isspace((unsigned char)text[p - 1]))
            p--;
        if (p == map->start || text[p - 1] != '}') {
            tp_diag_error(d, tp_yamltree_loc(map), pd[idx[0]].path, "add the key by hand",
                          "cannot find the end of this section");
            return -1;
        }
        if (map->n > 0)
            puts_buf(&b, ", ");
        if (render(pd, idx, n, 0, &b) != 0)
            rc = -2;
        else if (!b.failed)
            rc = add_edit(ed, ned, p - 1, 0, b.s);
        free(b.s);
        goto out;
    }
    /* A block section: one line per new key. */
    for (i = 0; i < n && rc == 0; i++) {
        const char *seg = pd[idx[i]].seg[0];
        int group[64], ng = 0, seen = 0;
        for (j = 0; j < i; j++)
            if (strcmp(pd[idx[j]].seg[0], seg) == 0)
                seen = 1;
        if (seen)
            continue;
        for (j = i; j < n && ng < 64; j++)
            if (strcmp(pd[idx[j]].seg[0], seg) == 0)
                group[ng++] = idx[j];
        b.len = 0;
        if (b.s)
            b.s[0] = '\0';
        if (map == doc->root) {
            /* Top level: at the end of the file. */
            if (doc->len > 0 && text[doc->len - 1] != '\n')
                puts_buf(&b, "\n");
            if (render(pd, group, ng, 0, &b) != 0) {
                rc = -2;
                break;
            }
            puts_buf(&b, "\n");
            if (!b.failed)
                rc = add_edit(ed, ned, doc->len, 0, b.s);
        } else {
            const tp_yamltree_node *k0 = map->keys[0];
            size_t ls = k0->start, indent;
            int bare;
            while (ls > 0 && text[ls - 1] != '\n')
                ls--;
            indent = k0->start - ls;
            bare = strspn(text + ls, " ") == indent;
            if (bare) {
                spaces(&b, indent);
                if (render(pd, group, ng, 0, &b) != 0) {
                    rc = -2;
                    break;
                }
                puts_buf(&b, "\n");
                if (!b.failed)
                    rc = add_edit(ed, ned, ls, 0, b.s);
            } else if (map->items[0] && map->items[0]->kind == TP_YAMLTREE_SCALAR) {
                /* "- id: plate": after the first value, on its own line. */
                puts_buf(&b, "\n");
                spaces(&b, indent);
                if (render(pd, group, ng, 0, &b) != 0) {
                    rc = -2;
                    break;
                }
                if (!b.failed)
                    rc = add_edit(ed, ned, map->items[0]->end, 0, b.s);
            } else {
                tp_diag_error(d, tp_yamltree_loc(map), pd[group[0]].path, "add the key by hand",
                              "cannot find where to add the key in this section");
                rc = -1;
                break;
            }
        }
        if (b.failed)
            rc = -1;
    }
    free(b.s);
out:
    if (rc == -2) {
        tp_diag_error(d, tp_yamltree_loc(map), pd[idx[0]].path, NULL,
                      "a key is given both as a value and as a section");
        return -1;
    }
    return rc;
}

/* One change: an edit replacing the value the document gives at its path, or (the path's
 * longest existing prefix a section) a pending key added to pd[*npd]. TP_ERR_CONFIG with a
 * message when the path goes through a value or a missing list item or names a block section;
 * TP_ERR_NOMEM. */
static tp_status place_item(const tp_yamltree *doc, const tp_configedit_item *item, edit **ed,
                            int *ned, pending *pd, int *npd, tp_diag *d)
{
    char seg[SEGS_MAX][SEG_MAX];
    int ns = split_path(item->path, seg), k, j;
    const tp_yamltree_node *node = doc->root;
    char prefix[TP_CONFIGEDIT_PATH_MAX] = "";
    if (ns <= 0) {
        tp_diag_error(d, tp_diag_loc_none(), item->path, NULL, "not a key path");
        return TP_ERR_CONFIG;
    }
    /* The longest prefix of the path that exists in the document. */
    for (k = 0; k < ns; k++) {
        const tp_yamltree_node *next;
        if (k > 0)
            strcat(prefix, ".");
        strcat(prefix, seg[k]);
        next = tp_yamltree_find(doc, prefix);
        if (next) {
            node = next;
            continue;
        }
        if (node->kind == TP_YAMLTREE_SEQ) {
            tp_diag_error(d, tp_yamltree_loc(node), item->path, NULL,
                          "no list item '%s' to write into", seg[k]);
            return TP_ERR_CONFIG;
        }
        if (node->kind == TP_YAMLTREE_SCALAR) {
            tp_diag_error(d, tp_yamltree_loc(node), item->path, NULL,
                          "the path goes through a value");
            return TP_ERR_CONFIG;
        }
        break;
    }
    if (k == ns) {
        if (node->kind != TP_YAMLTREE_SCALAR && !node->flow) {
            tp_diag_error(d, tp_yamltree_loc(node), item->path, "edit this section by hand",
                          "cannot replace a block section");
            return TP_ERR_CONFIG;
        }
        return add_edit(ed, ned, node->start, node->end - node->start, item->value) != 0
                   ? TP_ERR_NOMEM
                   : TP_OK;
    }
    pd[*npd].map = node;
    pd[*npd].nseg = ns - k;
    for (j = 0; j < ns - k; j++)
        strcpy(pd[*npd].seg[j], seg[k + j]);
    pd[*npd].value = item->value;
    pd[*npd].path = item->path;
    (*npd)++;
    return TP_OK;
}

/* The text with the edits (sorted, not overlapping) applied, after `comment`, into *out. */
static tp_status splice(const tp_yamltree *doc, const char *comment, const edit *ed, int ned,
                        char **out)
{
    buf b = {NULL, 0, 0, 0};
    size_t pos = 0;
    int i;
    if (comment)
        puts_buf(&b, comment);
    for (i = 0; i < ned; i++) {
        put(&b, doc->text + pos, ed[i].at - pos);
        puts_buf(&b, ed[i].ins);
        pos = ed[i].at + ed[i].del;
    }
    put(&b, doc->text + pos, doc->len - pos);
    if (b.failed || !b.s) {
        free(b.s);
        return TP_ERR_NOMEM;
    }
    *out = b.s;
    return TP_OK;
}

tp_status tp_configedit_apply(const tp_yamltree *doc, const tp_configedit_item *items, int n,
                              const char *comment, char **out, tp_diag *d)
{
    edit *ed = NULL;
    pending *pd = NULL;
    int *idx = NULL, *done = NULL;
    int ned = 0, npd = 0, i, j;
    tp_status st = TP_ERR_CONFIG;

    *out = NULL;
    if (!doc->root || doc->root->kind != TP_YAMLTREE_MAP) {
        tp_diag_error(d, (tp_loc){doc->file, 0, 0}, NULL, NULL, "the config has no sections");
        return TP_ERR_CONFIG;
    }
    pd = calloc((size_t)(n > 0 ? n : 1), sizeof *pd);
    idx = calloc((size_t)(n > 0 ? n : 1), sizeof *idx);
    done = calloc((size_t)(n > 0 ? n : 1), sizeof *done);
    if (!pd || !idx || !done) {
        st = TP_ERR_NOMEM;
        goto fail;
    }
    for (i = 0; i < n; i++)
        if ((st = place_item(doc, &items[i], &ed, &ned, pd, &npd, d)) != TP_OK)
            goto fail;
    st = TP_ERR_CONFIG;
    /* Missing keys, grouped by the section they go into. */
    for (i = 0; i < npd; i++) {
        int m = 0;
        if (done[i])
            continue;
        for (j = i; j < npd; j++)
            if (!done[j] && pd[j].map == pd[i].map) {
                idx[m++] = j;
                done[j] = 1;
            }
        if (insert_keys(doc, pd, idx, m, &ed, &ned, d) != 0)
            goto fail;
    }
    qsort(ed, (size_t)ned, sizeof *ed, cmp_edit);
    for (i = 0; i + 1 < ned; i++)
        if (ed[i].at + ed[i].del > ed[i + 1].at) {
            tp_diag_error(d, (tp_loc){doc->file, 0, 0}, NULL, "change one of them by hand",
                          "two changes overlap in the text");
            goto fail;
        }
    st = splice(doc, comment, ed, ned, out);
fail:
    for (i = 0; i < ned; i++)
        free(ed[i].ins);
    free(ed);
    free(pd);
    free(idx);
    free(done);
    return st;
}

void tp_configedit_unit(const tp_yamltree *doc, const char *path, char *unit, size_t size)
{
    const tp_yamltree_node *n = tp_yamltree_find(doc, path);
    const char *p;
    size_t len;
    unit[0] = '\0';
    if (!n || n->kind != TP_YAMLTREE_SCALAR || !n->text)
        return;
    p = n->text;
    while (isspace((unsigned char)*p))
        p++;
    len = strspn(p, "+-0123456789.eE");
    while (len > 0 &&
           (p[len - 1] == 'e' || p[len - 1] == 'E' || p[len - 1] == '+' || p[len - 1] == '-'))
        len--;
    if (len == 0)
        return;
    p += len;
    while (isspace((unsigned char)*p))
        p++;
    snprintf(unit, size, "%s", p);
    len = strlen(unit);
    while (len > 0 && isspace((unsigned char)unit[len - 1]))
        unit[--len] = '\0';
}

/* The material table: the embedded models/materials.yaml parsed with the config reader, kept
 * for the life of the process; lookups check the config's inline materials first. */
#include "materials.h"

#include <pthread.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "config.h"
#include "yamltree.h"

extern const unsigned char tp_materials_data[];
extern const size_t tp_materials_data_len;

static pthread_mutex_t lock = PTHREAD_MUTEX_INITIALIZER;
static tp_material_spec *table;
static size_t table_n;
static int loaded;

tp_status tp_materials_builtin(const tp_material_spec **items, size_t *n, tp_diag *d)
{
    tp_status st = TP_OK;
    pthread_mutex_lock(&lock);
    if (!loaded) {
        tp_yamltree *doc = NULL;
        st = tp_yamltree_load_text("models/materials.yaml", (const char *)tp_materials_data,
                                   tp_materials_data_len, &doc, d);
        if (st == TP_OK) {
            const tp_yamltree_node *m = tp_yamltree_get(doc->root, "materials");
            if (!m) {
                tp_diag_error(d, (tp_loc){"models/materials.yaml", 1, 1}, "materials", NULL,
                              "the material table has no materials: section");
                st = TP_ERR_CONFIG;
            } else {
                st = tp_config_read_materials(m, "materials", &table, &table_n, d);
            }
        }
        tp_yamltree_destroy(&doc);
        loaded = st == TP_OK;
    }
    pthread_mutex_unlock(&lock);
    if (items)
        *items = table;
    if (n)
        *n = table_n;
    return st;
}

const tp_material_spec *tp_materials_find(const tp_description *desc, const char *id)
{
    size_t i;
    for (i = 0; desc && i < desc->n_materials; i++)
        if (strcmp(desc->materials[i].id, id) == 0)
            return &desc->materials[i];
    for (i = 0; i < table_n; i++)
        if (strcmp(table[i].id, id) == 0)
            return &table[i];
    return NULL;
}

/* Shared-prefix length plus a little: a cheap closeness for ids like "aluminum-6061". */
static int closeness(const char *a, const char *b)
{
    int score = 0;
    while (*a && *b && *a == *b) {
        a++;
        b++;
        score += 2;
    }
    for (; *a; a++)
        if (strchr(b, *a))
            score++;
    return score;
}

/* Built-in ids that were renamed (to generic names). The old id is refused with a hint naming
 * the new one, never taken as a silent alias: a config should say what it means. */
static const struct {
    const char *old_id, *new_id;
} renamed[] = {
    {"pei-sheet", "polyetherimide-sheet"},
};

void tp_materials_hint(const tp_description *desc, const char *id, char *hint, size_t size)
{
    size_t i;
    const char *best = NULL;
    int bests = 0;
    for (i = 0; i < sizeof renamed / sizeof renamed[0]; i++)
        if (strcmp(id, renamed[i].old_id) == 0) {
            snprintf(hint, size, "the built-in '%s' is now called '%s': write material: %s",
                     renamed[i].old_id, renamed[i].new_id, renamed[i].new_id);
            return;
        }
    for (i = 0; i < table_n; i++) {
        int s = closeness(id, table[i].id);
        if (s > bests) {
            bests = s;
            best = table[i].id;
        }
    }
    for (i = 0; desc && i < desc->n_materials; i++) {
        int s = closeness(id, desc->materials[i].id);
        if (s > bests) {
            bests = s;
            best = desc->materials[i].id;
        }
    }
    if (best && bests >= (int)strlen(id))
        snprintf(hint, size, "did you mean '%s'? ('tepid materials' lists them all)", best);
    else
        snprintf(hint, size, "'tepid materials' lists the built-in ids; or define it under "
                             "materials: in this file");
}

double tp_materials_k_through(const tp_material_spec *m)
{
    return tp_isset(m->conductivity_through) ? m->conductivity_through : m->conductivity;
}

void tp_materials_shutdown(void)
{
    pthread_mutex_lock(&lock);
    free(table);
    table = NULL;
    table_n = 0;
    loaded = 0;
    pthread_mutex_unlock(&lock);
}

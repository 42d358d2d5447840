/* The material table: models/materials.yaml (embedded in the binary at build time, every entry
 * with its source) plus the materials a config defines inline, which win on the same id. */
#ifndef TP_MATERIALS_H
#define TP_MATERIALS_H

#include <stddef.h>

#include "description.h"
#include "diag.h"
#include "status.h"

/* The built-in table, parsed once (thread-safe). On a broken table (a build defect) reports
 * to `d` and returns TP_ERR_CONFIG. */
tp_status tp_materials_builtin(const tp_material_spec **items, size_t *n, tp_diag *d);

/* Look up a material: the config's own entries first, then the built-in table. NULL when
 * neither has it (call tp_materials_builtin first to load the table). */
const tp_material_spec *tp_materials_find(const tp_description *desc, const char *id);

/* A "did you mean" hint for an unknown material id into `hint`. */
void tp_materials_hint(const tp_description *desc, const char *id, char *hint, size_t size);

/* Through-thickness conductivity (the in-plane value when the material is isotropic). */
double tp_materials_k_through(const tp_material_spec *m);

/* Free the parsed built-in table (at exit). */
void tp_materials_shutdown(void);

#endif

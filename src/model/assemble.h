/* Assembly: a description (raw or physical form) becomes a checked thermal network. The
 * physical form is lowered with the material table and the published correlations. */
#ifndef TP_ASSEMBLE_H
#define TP_ASSEMBLE_H

#include "description.h"
#include "diag.h"
#include "network.h"
#include "status.h"
#include "yamltree.h"

/* Build the network of `desc`. `doc` (may be NULL) gives file positions for messages.
 * Errors (unknown ids, impossible geometry ...) go to `d` and return TP_ERR_CONFIG with
 * *out NULL; warnings (an isolated node, no path to a fixed node ...) do not fail. */
tp_status tp_assemble(const tp_description *desc, const tp_yamltree *doc, tp_diag *d,
                      tp_network **out);

#endif

/* libFuzzer target: the config loader. The input is a YAML text, optionally followed by a NUL
 * byte and NUL-separated --set assignments; it goes through tp_yamltree_load_text, tp_yamltree_set,
 * tp_config_read and tp_assemble, and one right-hand side and Jacobian of the network. Any crash,
 * sanitizer report, leak or hang is a finding (tests/fuzz/README.md). */
#include <stddef.h>
#include <stdint.h>
#include <stdlib.h>
#include <string.h>

#include "assemble.h"
#include "config.h"
#include "diag.h"
#include "network.h"
#include "yamltree.h"

#define FUZZ_MAX_SETS 8 /* --set assignments taken from one input */

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size);

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size)
{
    static tp_diag d; /* static: the log buffer is 16 kB */
    tp_yamltree *doc = NULL;
    tp_description desc;
    tp_network *net = NULL;
    const char *text = (const char *)data;
    const uint8_t *nul = memchr(data, 0, size);
    size_t yaml_len = nul ? (size_t)(nul - data) : size;
    char *sets = NULL;
    int ok = 1;

    tp_diag_init(&d, NULL);
    if (tp_yamltree_load_text("fuzz.yaml", text, yaml_len, &doc, &d) != TP_OK)
        return 0;
    if (nul) {
        /* The tail as NUL-terminated assignments (copied so the last one is terminated). */
        size_t tail = size - yaml_len - 1;
        size_t pos = 0;
        int n = 0;
        sets = malloc(tail + 1);
        if (!sets) {
            tp_yamltree_destroy(&doc);
            return 0;
        }
        memcpy(sets, nul + 1, tail);
        sets[tail] = '\0';
        while (ok && pos < tail && n++ < FUZZ_MAX_SETS) {
            const char *a = sets + pos;
            ok = tp_yamltree_set(doc, a, &d) == TP_OK;
            pos += strlen(a) + 1;
        }
        free(sets);
    }
    if (ok && tp_config_read(doc, &desc, &d) == TP_OK) {
        if (tp_assemble(&desc, doc, &d, &net) == TP_OK) {
            int n = tp_network_state_size(net);
            double *y = malloc((size_t)(n > 0 ? n : 1) * sizeof *y);
            double *ydot = malloc((size_t)(n > 0 ? n : 1) * sizeof *ydot);
            double *jac = malloc((size_t)(net->nnz > 0 ? net->nnz : 1) * sizeof *jac);
            if (y && ydot && jac) {
                tp_network_initial_state(net, y);
                (void)tp_network_rhs(net, y, ydot);
                (void)tp_network_jacobian(net, y, jac);
            }
            free(y);
            free(ydot);
            free(jac);
            tp_network_destroy(&net);
        }
        tp_config_clear(&desc);
    }
    tp_yamltree_destroy(&doc);
    return 0;
}

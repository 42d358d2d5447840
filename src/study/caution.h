/* Safety cautions as records: which caution applies and the figures it quotes, decided from the
 * description, the network and what a run saw (its exposure). Studies compute them; the output
 * layer alone words them (summary.h, tp_summary_caution_text), for text and JSON alike. The
 * thresholds and their bases (EN ISO 13732-1, IEC 61140, common practice) are in caution.c. */
#ifndef TP_CAUTION_H
#define TP_CAUTION_H

#include "description.h"
#include "network.h"
#include "units.h"

/* What a run saw, for the cautions. Unknown values are NaN (TP_CAUTION_UNSEEN). */
typedef struct tp_caution_exposure {
    double surface_max;   /* K, hottest working surface */
    double node_max;      /* K, hottest node of the plate (the heater layer, usually) */
    double current_max;   /* A drawn by the heater */
    const double *node_peak;  /* per node index, K: the hottest each node got (NULL: unknown) */
    const double *layer_peak; /* per bed layer, K (gridded plates; NULL: from node_peak) */
} tp_caution_exposure;

/* An exposure of which nothing is known (the cautions of the description alone). */
#define TP_CAUTION_UNSEEN {TP_UNSET, TP_UNSET, TP_UNSET, NULL, NULL}

#define TP_CAUTION_BURN_LONG (TP_KELVIN_0C + 43.0)  /* K, 43 degC: burn threshold for contact of
                                                       8 h and longer (EN ISO 13732-1 Table 1,
                                                       from memory) */
#define TP_CAUTION_BURN_SHORT (TP_KELVIN_0C + 65.0) /* K, 65 degC: about 1 s contact with bare
                                                       metal burns (EN ISO 13732-1 Fig. 1, from
                                                       memory) */

/* The kinds, in the order a list gives them; the values each quotes. */
typedef enum tp_caution_kind {
    TP_CAUTION_HOT_SURFACE,   /* value[0]: the hottest surface (or node), K */
    TP_CAUTION_MAINS,         /* value[0]: the supply, V */
    TP_CAUTION_HIGH_CURRENT,  /* value[0]: the current, A; value[1]: the supply, V */
    TP_CAUTION_SERVICE_LIMIT, /* value[0]: the material's rating, K; value[1]: the layer's
                                 peak, K; layer and material named */
    TP_CAUTION_POWER_DENSITY, /* value[0]: the heater's power density full on from cold, W/m2;
                                 value[1]: its type's limit, W/m2 (heater.h); the heater
                                 layer's material named */
    TP_CAUTION_CUTOUT,        /* no independent cut-out is modelled (every list ends so) */
    TP_CAUTION_GUARD_CUTOUT   /* guard's thresholds supplement a hardware cut-out (guard) */
} tp_caution_kind;

#define TP_CAUTION_VALUES 2 /* figures one caution quotes at most */
#define TP_CAUTIONS_MAX 9   /* cautions of one list at most (guard's included) */

typedef struct tp_caution {
    tp_caution_kind kind;
    double value[TP_CAUTION_VALUES]; /* unused entries 0 */
    int layer;                       /* the bed layer's index (service limit), else -1 */
    char layer_id[TP_ID_MAX];        /* its id, else "" */
    char material[TP_ID_MAX];        /* the material's id (service limit, power density) */
} tp_caution;

/* The cautions that apply to this case, in kind order (always ending with the cut-out) into
 * out[]; returns how many. Records are zeroed before they are filled, so two lists compare
 * bytewise. */
int tp_caution_list(const tp_description *desc, const tp_network *net,
                    const tp_caution_exposure *ex, tp_caution out[TP_CAUTIONS_MAX]);

/* Nonzero when a and b are the same caution (kind, layer and material), whatever their
 * figures: the unit of aggregation over many runs. */
int tp_caution_same(const tp_caution *a, const tp_caution *b);

/* Nonzero when a quotes worse figures than b (the same caution): the larger values, compared
 * in order (the hotter, the higher voltage, the larger current). Ties are not worse. */
int tp_caution_worse(const tp_caution *a, const tp_caution *b);

/* Order of a list: by kind, then layer, then material (qsort comparator of tp_caution). */
int tp_caution_compare(const void *a, const void *b);

#endif

/* Heaters as sold and by type. A heater sold as "24 V, 240 W" has the resistance V^2 / P at
 * the temperature its rating refers to (heater.reference, 20 degC unless given); its power on
 * another supply, with its tempco and series path, is the network's (network.c). */
#include "heater.h"

#include <string.h>

#include "materials.h"

int tp_heater_is_rated(const tp_heater *h)
{
    return tp_isset(h->rated_power) || tp_isset(h->rated_voltage);
}

double tp_heater_r0(const tp_heater *h)
{
    if (tp_isset(h->resistance))
        return h->resistance;
    if (tp_isset(h->rated_power) && tp_isset(h->rated_voltage))
        return h->rated_voltage * h->rated_voltage / h->rated_power;
    return TP_UNSET;
}

double tp_heater_volts(const tp_heater *h)
{
    return tp_isset(h->supply) ? h->supply : h->rated_voltage;
}

static const tp_layer *heater_layer(const tp_description *desc)
{
    size_t k;
    if (desc->form != TP_FORM_PHYSICAL || !desc->heater.present)
        return NULL;
    for (k = 0; k < desc->bed.n_layers; k++)
        if (strcmp(desc->bed.layers[k].id, desc->heater.layer) == 0)
            return &desc->bed.layers[k];
    return NULL;
}

double tp_heater_area(const tp_description *desc)
{
    const tp_layer *ly = heater_layer(desc);
    if (!ly)
        return TP_UNSET;
    return (tp_isset(ly->size[0]) ? ly->size[0] : desc->bed.size[0]) *
           (tp_isset(ly->size[1]) ? ly->size[1] : desc->bed.size[1]);
}

double tp_heater_density_limit(const tp_description *desc, const char **type)
{
    const tp_layer *ly = heater_layer(desc);
    const tp_material_spec *m = ly ? tp_materials_find(desc, ly->material) : NULL;
    *type = NULL;
    /* Flexible heaters: silicone-rubber pads and polyimide film. */
    if (!m || !(strstr(m->id, "silicone") || strstr(m->id, "polyimide")))
        return TP_UNSET;
    *type = m->id;
    return TP_HEATER_DENSITY_FLEX;
}

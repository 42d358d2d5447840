/* tepid materials: the built-in material table with its sources. */
#include <stdio.h>

#include "config.h"
#include "materials.h"
#include "summary.h"
#include "verbs.h"

static const tp_opt materials_opts[] = {
    {"sources", 0, 0, 0, 0, NULL, "print each entry's full source and note"},
    TP_OPT_END,
};

static tp_status run_materials(const tp_cli *cli, tp_diag *d)
{
    const tp_material_spec *m;
    size_t n, i;
    FILE *fp = tp_cli_text_stream(cli);
    int full = tp_cli_flag(cli, "sources");
    tp_status st = tp_materials_builtin(&m, &n, d);
    if (st != TP_OK || !fp)
        return st;
    fprintf(fp, "%-22s %8s %8s %16s %6s %8s  %s\n", "id", "rho", "cp", "k (in / through)", "eps",
            "max", "name");
    fprintf(fp, "%-22s %8s %8s %16s %6s %8s\n", "", "kg/m3", "J/(kg.K)", "W/(m.K)", "-",
            "degC");
    for (i = 0; i < n; i++) {
        char k[40];
        if (isfinite(m[i].conductivity_through))
            snprintf(k, sizeof k, "%.4g / %.3g", m[i].conductivity, m[i].conductivity_through);
        else
            snprintf(k, sizeof k, "%.4g", m[i].conductivity);
        fprintf(fp, "%-22s %8.0f %8.0f %16s %6.2f %8.0f  %s\n", m[i].id, m[i].density,
                m[i].specific_heat, k, m[i].emissivity, m[i].max_temperature - TP_KELVIN_0C,
                m[i].name);
        if (full) {
            fprintf(fp, "    source: %s\n", m[i].source);
            if (m[i].note[0])
                fprintf(fp, "    note: %s\n", m[i].note);
        }
    }
    if (!full)
        fputs("\n(--sources prints where each value comes from; docs/materials.md has the "
              "table with notes)\n", fp);
    return TP_OK;
}

const tp_verb tp_cmd_materials = {
    "materials",
    run_materials,
    "List the built-in material table with its sources.",
    0,
    materials_opts,
    "Each entry gives density, specific heat, conductivity (in-plane and through-thickness\n"
    "where they differ), total hemispherical emissivity for the finish named, and a service\n"
    "temperature limit. A config may define its own materials under materials:.",
    "tepid materials\n"
    "tepid materials --sources"};

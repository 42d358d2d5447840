/* tepid's version and the versions of the libraries it was built with. CMakeLists.txt defines
 * the TP_WITH_* strings for this file alone, from the versions find_package and pkg-config
 * reported when the build was configured, so a library update rebuilds one file. */
#include "version.h"

static const struct {
    const char *name;
    const char *version;
} libs[] = {
    {"SUNDIALS", TP_WITH_SUNDIALS}, {"udunits2", TP_WITH_UDUNITS},
    {"PLplot", TP_WITH_PLPLOT},     {"libyaml", TP_WITH_YAML},
    {"cJSON", TP_WITH_CJSON},       {"cminpack", TP_WITH_CMINPACK},
    {"GSL", TP_WITH_GSL},           {"Nettle", TP_WITH_NETTLE},
};

int tp_version_libraries(const char **names, const char **versions, int max)
{
    int i, n = (int)(sizeof libs / sizeof libs[0]);
    for (i = 0; i < n && i < max; i++) {
        names[i] = libs[i].name;
        versions[i] = libs[i].version;
    }
    return i;
}

void tp_version_print(FILE *fp)
{
    size_t i;
    fprintf(fp, "tepid %s\nbuilt with:\n", TP_VERSION);
    for (i = 0; i < sizeof libs / sizeof libs[0]; i++)
        fprintf(fp, "  %-9s %s\n", libs[i].name, libs[i].version);
}

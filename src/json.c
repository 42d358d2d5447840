/* JSON output: cJSON documents written through an atomic output file. */
#include "json.h"

#include <math.h>
#include <stdlib.h>

#include "outfile.h"

cJSON *tp_json_number(cJSON *obj, const char *name, double v)
{
    if (!isfinite(v))
        return cJSON_AddNullToObject(obj, name);
    return cJSON_AddNumberToObject(obj, name, v);
}

tp_status tp_json_write(const char *path, const cJSON *root, tp_diag *d)
{
    tp_outfile o;
    tp_status st;
    char *text = cJSON_Print(root);
    if (!text) {
        tp_diag_error(d, tp_loc_none(), NULL, NULL, "out of memory while writing %s", path);
        return TP_ERR_NOMEM;
    }
    st = tp_outfile_open(&o, path, d);
    if (st == TP_OK) {
        fputs(text, o.fp);
        fputc('\n', o.fp);
        st = tp_outfile_commit(&o, d);
    }
    free(text);
    return st;
}

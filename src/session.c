/* A verb's session: config, overrides, description and network, released together. */
#include "session.h"

#include <string.h>

#include "assemble.h"
#include "config.h"

#define TP_MAX_SETS 128 /* --set options on one command line */

tp_status tp_session_open(tp_session *s, const tp_cli *cli, tp_diag *d)
{
    const char *sets[TP_MAX_SETS + 1];
    int n_sets = tp_cli_all(cli, "set", sets, TP_MAX_SETS + 1);
    tp_status st;
    memset(s, 0, sizeof *s);
    s->cli = cli;
    /* More overrides than the table holds were once dropped without a word. */
    if (n_sets > TP_MAX_SETS) {
        tp_diag_error(d, tp_loc_none(), NULL, "put the values in the file instead",
                      "more than %d --set options", TP_MAX_SETS);
        return TP_ERR_USAGE;
    }
    s->text = tp_cli_text_stream(cli);
    st = tp_config_load(cli->file, sets, n_sets, &s->doc, &s->desc, d);
    if (st != TP_OK)
        return st;
    st = tp_assemble(&s->desc, s->doc, d, &s->net);
    if (st != TP_OK) {
        tp_session_close(s);
        return st;
    }
    return TP_OK;
}

void tp_session_close(tp_session *s)
{
    tp_network_destroy(&s->net);
    tp_desc_clear(&s->desc);
    tp_doc_destroy(&s->doc);
}

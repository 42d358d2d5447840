/* A verb's session: config, overrides, description and network, released together. */
#include "session.h"

#include <string.h>

#include "assemble.h"
#include "config.h"
#include "hardlimits.h"
#include "units.h"

static tp_status open_with(tp_session *s, const tp_cli *cli, const char *room, int open_loop,
                           tp_diag *d)
{
    const char *sets[TP_MAX_SETS + 2]; /* one more to notice too many, one for --room */
    int n_sets = tp_cli_all(cli, "set", sets, TP_MAX_SETS + 1), i;
    char room_set[160];
    tp_status st;
    memset(s, 0, sizeof *s);
    s->cli = cli;
    /* More overrides than the table holds were once dropped without a word. */
    if (n_sets > TP_MAX_SETS) {
        tp_diag_error(d, tp_diag_loc_none(), NULL, "put the values in the file instead",
                      "more than %d --set options", TP_MAX_SETS);
        return TP_ERR_USAGE;
    }
    s->text = tp_cli_text_stream(cli);
    st = tp_yamltree_load_file(cli->file, &s->doc, d);
    if (st != TP_OK)
        return st;
    if (room) {
        int raw = s->doc->root && tp_yamltree_get(s->doc->root, "network") != NULL;
        snprintf(room_set, sizeof room_set, "%s=%s",
                 raw ? "network.nodes.room.fixed" : "room.temperature", room);
        sets[n_sets++] = room_set;
    }
    for (i = 0; i < n_sets && st == TP_OK; i++)
        st = tp_yamltree_set(s->doc, sets[i], d);
    if (st == TP_OK)
        st = tp_config_read(s->doc, &s->desc, d);
    if (st == TP_OK && !open_loop)
        st = tp_config_check_gains(s->doc, &s->desc, d);
    if (st != TP_OK) {
        tp_config_clear(&s->desc);
        tp_yamltree_destroy(&s->doc);
        return st == TP_ERR_USAGE ? TP_ERR_CONFIG : st;
    }
    st = tp_assemble(&s->desc, s->doc, d, &s->net);
    if (st != TP_OK) {
        tp_session_close(s);
        return st;
    }
    return TP_OK;
}

tp_status tp_session_open(tp_session *s, const tp_cli *cli, tp_diag *d)
{
    return open_with(s, cli, NULL, 0, d);
}

tp_status tp_session_open_plant(tp_session *s, const tp_cli *cli, tp_diag *d)
{
    return open_with(s, cli, NULL, 1, d);
}

tp_status tp_session_open_room(tp_session *s, const tp_cli *cli, const char *room, tp_diag *d)
{
    return open_with(s, cli, room, 0, d);
}

void tp_session_close(tp_session *s)
{
    tp_network_release(&s->net);
    tp_config_clear(&s->desc);
    tp_yamltree_destroy(&s->doc);
}

tp_status tp_session_temperature(const char *opt, const char *text, double *out, tp_diag *d)
{
    char msg[256];
    const char *hint;
    if (tp_units_parse(text, TP_DIM_TEMPERATURE, out, msg, sizeof msg, &hint) == TP_OK)
        return TP_OK;
    tp_diag_error(d, (tp_loc){opt, 1, 1}, opt, hint, "%s", msg);
    return TP_ERR_USAGE;
}

tp_status tp_session_temperatures(const tp_cli *cli, const char *name, int max, double *out,
                                  int *n, tp_diag *d)
{
    const char *text[TP_CLI_MAX_ARGS];
    char opt[40];
    int k;
    tp_status st;
    snprintf(opt, sizeof opt, "--%s", name);
    *n = tp_cli_all(cli, name, text, max + 1 < TP_CLI_MAX_ARGS ? max + 1 : TP_CLI_MAX_ARGS);
    if (*n > max) {
        char hint[40];
        snprintf(hint, sizeof hint, "give at most %d levels", max);
        tp_diag_error(d, tp_diag_loc_none(), opt, hint, "too many %s levels", opt);
        return TP_ERR_USAGE;
    }
    for (k = 0; k < *n; k++)
        if ((st = tp_session_temperature(opt, text[k], &out[k], d)) != TP_OK)
            return st;
    return TP_OK;
}

const char *tp_session_title(const tp_session *s)
{
    return s->desc.title[0] ? s->desc.title : s->cli->file;
}

/* A verb's session: the config loaded with its overrides, the description, the assembled
 * network and where the text summary goes. Every verb with a FILE starts here. */
#ifndef TP_SESSION_H
#define TP_SESSION_H

#include <stdio.h>

#include "cli.h"
#include "description.h"
#include "diag.h"
#include "network.h"
#include "status.h"
#include "yamltree.h"

typedef struct tp_session {
    const tp_cli *cli;
    tp_yamltree *doc;
    tp_description desc;
    const tp_network *net; /* frozen: every verb only reads it */
    FILE *text; /* the summary stream, NULL with -q */
} tp_session;

/* Load cli->file with the --set overrides, read and assemble it. On failure everything is
 * released and diagnostics name the file, line, column and key. */
tp_status tp_session_open(tp_session *s, const tp_cli *cli, tp_diag *d);

/* The same for a verb that identifies the plant in open loop (tune): a pid controller without
 * gains is accepted (tp_config_check_gains is not asked). */
tp_status tp_session_open_plant(tp_session *s, const tp_cli *cli, tp_diag *d);

/* The same with the room temperature replaced by `room` (text with a unit): room.temperature in
 * the physical form, the fixed temperature of the node `room` in the raw form. */
tp_status tp_session_open_room(tp_session *s, const tp_cli *cli, const char *room, tp_diag *d);

/* A temperature option's value (text with a unit) in K; exit 2 naming the option `opt`
 * ("--to") on a bad one. */
tp_status tp_session_temperature(const char *opt, const char *text, double *out, tp_diag *d);

/* Every value of the repeatable temperature option `name` ("above") in K into out[] (at most
 * `max` of them; more is exit 2), their count in *n. */
tp_status tp_session_temperatures(const tp_cli *cli, const char *name, int max, double *out,
                                  int *n, tp_diag *d);

/* The title of the session's figures: the config's title, else the file's name. */
const char *tp_session_title(const tp_session *s);

/* Release the session. */
void tp_session_close(tp_session *s);

#endif

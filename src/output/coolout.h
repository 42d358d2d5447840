/* The words, JSON and figure of a cool-down (cooldown.h, tepid cool). */
#ifndef TP_COOLOUT_H
#define TP_COOLOUT_H

#include <stdio.h>

#include "cooldown.h"
#include "diag.h"
#include "json.h"
#include "status.h"

/* A level's name as reports write it: "burn threshold, 10 s contact (glass/ceramic)", "level
 * asked for", "room + 5 K", "chamber air below room + 5 K". Returns buf. */
const char *tp_coolout_level_name(const tp_cooldown *c, const tp_cooldown_level *l, char *buf,
                                  size_t size);

/* Who the burn thresholds are for, and how to handle hot parts: one paragraph. */
extern const char tp_coolout_note[];

/* The same note as text, wrapped to the summaries' width and indented. */
void tp_coolout_note_text(FILE *fp);

/* The table of levels and the times the plate (or the air) falls below them. */
void tp_coolout_text(FILE *fp, const tp_cooldown *c);

/* The cool-down's figures into root: start, class, levels with their times. */
void tp_coolout_json(cJSON *root, const tp_cooldown *c);

/* The cool-down curves (touch surface, chamber air) with the levels drawn. */
tp_status tp_coolout_figure(const char *path, const char *title, const tp_cooldown *c,
                            tp_diag *d);

#endif

/* Shell completion: the bash script's per-verb table, written from the option tables, and the
 * config key paths, listed from the schema tables. */
#include "completion.h"

#include <string.h>

#include "config.h"
#include "yamltree.h"

/* The completion class of an option (src/cli/completion.bash.in, _tepid_spec): a flag, a
 * file, a key path (any key with "KEY=VALUE", else a numeric one, followed by '=' when the
 * metavar has it right after KEY), or some other value. */
static char opt_class(const tp_opt *o)
{
    if (!o->takes_value)
        return '-';
    if (o->is_output ||
        (o->metavar && (strcmp(o->metavar, "FILE") == 0 || strcmp(o->metavar, "FILE...") == 0)))
        return 'f';
    if (o->metavar && strncmp(o->metavar, "KEY", 3) == 0) {
        if (strcmp(o->metavar, "KEY=VALUE") == 0)
            return 'a';
        return o->metavar[3] == '=' ? 'n' : 'm';
    }
    return 'v';
}

static void verb_branch(const tp_verb *v, FILE *fp)
{
    const tp_opt help[] = {tp_cli_help_option, TP_OPT_END};
    const tp_opt *sets[2] = {v->opts, help};
    int s;
    fprintf(fp, "    %s)\n        _tepid_needs_file=%d\n        _tepid_opts=(", v->name,
            v->needs_file ? 1 : 0);
    for (s = 0; s < 2; s++) {
        const tp_opt *o;
        for (o = sets[s]; o && o->name; o++) {
            char c = opt_class(o);
            const char *rep = o->repeatable ? "+" : "";
            fprintf(fp, "%s--%s:%c%s", (s || o != v->opts) ? " " : "", o->name, c, rep);
            if (o->short_name)
                fprintf(fp, " -%c:%c%s", o->short_name, c, rep);
        }
    }
    fputs(")\n        ;;\n", fp);
}

static void verb_names(const tp_verb *const *verbs, size_t n, FILE *fp)
{
    size_t i;
    for (i = 0; i < n; i++)
        fprintf(fp, "%s%s", i ? " " : "", verbs[i]->name);
}

void tp_completion_script(const char *tmpl, const tp_verb *const *verbs, size_t n_verbs, FILE *fp)
{
    static const char table[] = "@TEPID_VERB_TABLE@";
    static const char names[] = "@TEPID_VERBS@";
    const char *p = tmpl;
    while (*p) {
        const char *mark = strchr(p, '@');
        size_t i;
        if (!mark) {
            fputs(p, fp);
            break;
        }
        fwrite(p, 1, (size_t)(mark - p), fp);
        if (strncmp(mark, table, sizeof table - 1) == 0) {
            for (i = 0; i < n_verbs; i++)
                verb_branch(verbs[i], fp);
            p = mark + sizeof table - 1;
            if (*p == '\n')
                p++;
        } else if (strncmp(mark, names, sizeof names - 1) == 0) {
            verb_names(verbs, n_verbs, fp);
            p = mark + sizeof names - 1;
        } else {
            fputc('@', fp);
            p = mark + 1;
        }
    }
}

typedef struct key_sink {
    FILE *fp;
    int numeric;
} key_sink;

static void print_key(const tp_config_key_info *k, void *ctx)
{
    const key_sink *ks = ctx;
    if (k->kind == TP_KEY_PAIR && ks->numeric)
        fprintf(ks->fp, "%s.0\n%s.1\n", k->path, k->path);
    else if (k->kind != TP_KEY_TEXT || !ks->numeric)
        fprintf(ks->fp, "%s\n", k->path);
}

void tp_completion_keys(const char *file, int numeric, FILE *fp)
{
    key_sink ks;
    tp_yamltree *doc = NULL;
    tp_description desc;
    tp_diag d;
    int loaded;
    ks.fp = fp;
    ks.numeric = numeric;
    tp_diag_init(&d, NULL);
    loaded = file && tp_config_load(file, NULL, 0, &doc, &desc, &d) == TP_OK;
    tp_config_each_key(loaded ? &desc : NULL, 0, print_key, &ks);
    if (loaded) {
        tp_config_clear(&desc);
        tp_yamltree_destroy(&doc);
    }
}

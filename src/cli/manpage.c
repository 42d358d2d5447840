/* Manual pages in roff: the verbs' pages whole, tepid(1) from a template with generated parts.
 * Text from the tables is escaped for roff: backslashes, a '.' or '\'' opening a line, and
 * the hyphens of options and commands (a minus sign, so a pasted example still works); the
 * hyphens of words ("warm-up") stay hyphens. */
#include "manpage.h"

#include <ctype.h>
#include <string.h>

#include "config.h"
#include "status.h"
#include "units.h"

/* Where a roff text is: at the start of an output line or not, inside an option or command
 * word (its hyphens are minus signs) or not. */
typedef struct roff {
    FILE *fp;
    int line_start;
    int in_option;
    int all_minus; /* every hyphen a minus sign (commands, file names, option names) */
} roff;

static void roff_begin(roff *r, FILE *fp, int all_minus)
{
    r->fp = fp;
    r->line_start = 1;
    r->in_option = 0;
    r->all_minus = all_minus;
}

static void roff_put(roff *r, const char *s, size_t n)
{
    size_t i;
    char prev = ' ';
    for (i = 0; i < n; i++) {
        char c = s[i];
        if (r->line_start && (c == ' ' || c == '\t'))
            continue; /* a leading space would break the filled line */
        if (r->line_start && (c == '.' || c == '\''))
            fputs("\\&", r->fp);
        if (c == '\n' || c == ' ')
            r->in_option = 0;
        else if (c == '-' && strchr(" \n([/,'\"", prev))
            r->in_option = 1;
        if (c == '\\')
            fputs("\\e", r->fp);
        else if (c == '-' && (r->in_option || r->all_minus))
            fputs("\\-", r->fp);
        else
            fputc(c, r->fp);
        r->line_start = c == '\n';
        prev = c;
    }
}

static void roff_text(FILE *fp, const char *s, int all_minus)
{
    roff r;
    roff_begin(&r, fp, all_minus);
    roff_put(&r, s, strlen(s));
}

/* "-q, --quiet FILE" as a tagged paragraph's tag. */
static void option_tag(FILE *fp, const tp_opt *o)
{
    fputs(".TP\n", fp);
    if (o->short_name)
        fprintf(fp, "\\fB\\-%c\\fR, ", o->short_name);
    fputs("\\fB\\-\\-", fp);
    roff_text(fp, o->name, 1);
    fputs("\\fR", fp);
    if (o->takes_value) {
        fputs(" \\fI", fp);
        roff_text(fp, o->metavar ? o->metavar : "VALUE", 1);
        fputs("\\fR", fp);
    }
    fputc('\n', fp);
    roff_text(fp, o->help, 0);
    fputc('\n', fp);
}

static void options(FILE *fp, const tp_opt *opts)
{
    const tp_opt *o;
    for (o = opts; o && o->name; o++)
        option_tag(fp, o);
}

static void exit_status(FILE *fp)
{
    static const struct {
        int code;
        const char *meaning;
    } codes[] = {
        {TP_EXIT_OK, "success"},
        {TP_EXIT_FAILED, "the computation failed (no steady state, a solver failure, a limit "
                         "reached); the message says why"},
        {TP_EXIT_INPUT, "usage or input error: an unknown option, a file that cannot be read "
                        "or written, a config error reported as FILE:LINE:COL: key: message"},
        {TP_EXIT_STRICT, "a --strict check failed"},
    };
    size_t i;
    for (i = 0; i < sizeof codes / sizeof codes[0]; i++) {
        fprintf(fp, ".TP\n.B %d\n", codes[i].code);
        roff_text(fp, codes[i].meaning, 0);
        fputc('\n', fp);
    }
}

/* The summary as a NAME line: lower-case first letter (unless an acronym), no final period. */
static void name_line(FILE *fp, const char *summary)
{
    size_t n = strlen(summary);
    char first[2] = {summary[0], '\0'};
    if (n > 1 && islower((unsigned char)summary[1]))
        first[0] = (char)tolower((unsigned char)summary[0]);
    if (n && summary[n - 1] == '.')
        n--;
    if (n == 0)
        return;
    roff_text(fp, first, 0);
    {
        roff r;
        roff_begin(&r, fp, 0);
        r.line_start = 0;
        roff_put(&r, summary + 1, n - 1);
    }
}

static void examples(FILE *fp, const char *text)
{
    fputs(".SH EXAMPLES\nWith the ", fp);
    roff_text(fp, TP_CLI_EXAMPLES_NOTE, 0);
    fputs(":\n.PP\n.RS 4\n.nf\n", fp);
    roff_text(fp, text, 1);
    fputs("\n.fi\n.RE\n", fp);
}

void tp_manpage_verb(const tp_verb *verb, FILE *fp)
{
    size_t i;
    fputs(".TH TEPID\\-", fp);
    for (i = 0; verb->name[i]; i++)
        fputc(toupper((unsigned char)verb->name[i]), fp);
    fprintf(fp, " 1 \"\" \"tepid %s\" \"tepid manual\"\n.nh\n", TP_VERSION);
    fprintf(fp, ".SH NAME\ntepid\\-%s \\- ", verb->name);
    name_line(fp, verb->summary);
    fprintf(fp, "\n.SH SYNOPSIS\n.B tepid %s\n%s.RI [ options ]\n", verb->name,
            verb->needs_file ? ".I FILE\n" : "");
    fputs(".SH DESCRIPTION\n", fp);
    roff_text(fp, verb->summary, 0);
    fputc('\n', fp);
    if (verb->details) {
        fputs(".PP\n", fp);
        roff_text(fp, verb->details, 0);
        fputc('\n', fp);
    }
    fputs(".SH OPTIONS\n", fp);
    options(fp, verb->opts);
    {
        const tp_opt help_only[] = {tp_cli_help_option, TP_OPT_END}; /* accepted, never listed */
        options(fp, help_only);
    }
    if (verb->examples)
        examples(fp, verb->examples);
    fputs(".SH EXIT STATUS\n", fp);
    exit_status(fp);
    fputs(".SH SEE ALSO\n.BR tepid (1)\n", fp);
}

/* ---- tepid(1) ----------------------------------------------------------------------------- */

static void key_entry(const tp_config_key_info *k, void *ctx)
{
    FILE *fp = ctx;
    const char *si = tp_units_si_name(k->dim);
    fputs(".TP\n.B ", fp);
    roff_text(fp, k->path, 1);
    fputc('\n', fp);
    if (k->kind == TP_KEY_TEXT)
        fputs("text or an id", fp);
    else if (k->kind == TP_KEY_PAIR && k->dim == TP_DIM_NONE)
        fputs("two bare numbers, [a, b]", fp);
    else if (k->kind == TP_KEY_PAIR)
        fprintf(fp, "two quantities in %s, [a, b], e.g. [%s, %s]", si, tp_units_example(k->dim),
                tp_units_example(k->dim));
    else if (k->dim == TP_DIM_NONE)
        fputs("a bare number (or a percentage)", fp);
    else if (k->dim == TP_DIM_TEMPERATURE)
        fprintf(fp, "an absolute temperature, e.g. %s", tp_units_example(k->dim));
    else if (k->dim == TP_DIM_INTERVAL)
        fprintf(fp, "a temperature difference, e.g. %s", tp_units_example(k->dim));
    else
        fprintf(fp, "a quantity in %s, e.g. %s", si, tp_units_example(k->dim));
    fputs(k->required ? "; required in its section\n" : "\n", fp);
}

static void see_also(FILE *fp, const tp_verb *const *verbs, size_t n)
{
    size_t i;
    for (i = 0; i < n; i++)
        fprintf(fp, ".BR tepid\\-%s (1)%s\n", verbs[i]->name, i + 1 < n ? "," : "");
}

static void verb_list(FILE *fp, const tp_verb *const *verbs, size_t n)
{
    size_t i;
    for (i = 0; i < n; i++) {
        fprintf(fp, ".TP\n.B %s\n", verbs[i]->name);
        roff_text(fp, verbs[i]->summary, 0);
        fprintf(fp, " See\n.BR tepid\\-%s (1).\n", verbs[i]->name);
    }
}

void tp_manpage_main(const char *tmpl, const tp_verb *const *verbs, size_t n_verbs, FILE *fp)
{
    static const struct {
        const char *mark;
        int what;
    } marks[] = {{"@VERBS@\n", 0},       {"@COMMON_OPTIONS@\n", 1}, {"@KEYS@\n", 2},
                 {"@EXIT_STATUS@\n", 3}, {"@SEE_ALSO@\n", 4},       {"@VERSION@", 5}};
    const char *p = tmpl;
    while (*p) {
        const char *at = strchr(p, '@');
        size_t i, n = sizeof marks / sizeof marks[0];
        if (!at) {
            fputs(p, fp);
            break;
        }
        fwrite(p, 1, (size_t)(at - p), fp);
        for (i = 0; i < n && strncmp(at, marks[i].mark, strlen(marks[i].mark)) != 0; i++)
            ;
        if (i == n) {
            fputc('@', fp);
            p = at + 1;
            continue;
        }
        switch (marks[i].what) {
        case 0:
            verb_list(fp, verbs, n_verbs);
            break;
        case 1:
            {
                /* the options most verbs share, and --help which every verb accepts */
                const tp_opt shared[] = {TP_OPT_SET, TP_OPT_QUIET, tp_cli_help_option, TP_OPT_END};
                options(fp, shared);
            }
            break;
        case 2:
            tp_config_each_key(NULL, 1, key_entry, fp);
            break;
        case 3:
            exit_status(fp);
            break;
        case 4:
            see_also(fp, verbs, n_verbs);
            break;
        default:
            fputs(TP_VERSION, fp);
            break;
        }
        p = at + strlen(marks[i].mark);
    }
}

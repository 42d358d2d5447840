/* Measured logs: a line scanner over a memory buffer, header analysis (column roles and units),
 * cell parsers for numbers, clock times and ISO timestamps, and the plausibility checks. Every
 * read is bounded by the buffer length; nothing assumes NUL termination of the input. */
#include "templog.h"

#include <ctype.h>
#include <math.h>
#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "infile.h"
#include "units.h"

#define DAY 86400.0      /* s in a day */
#define HALF_DAY 43200.0 /* s: a clock time this far back has passed midnight */

typedef enum role { ROLE_TIME, ROLE_TEMP, ROLE_DRIVE } role;

/* A unit word that may follow a column name ("temp_F", "time (min)", "duty [%]"). */
typedef struct unit_word {
    const char *word; /* lowercase */
    role role;
    double scale; /* time: s per unit; temp: 0 C, 1 F, 2 K; drive: W per unit, 0 duty */
    int percent;  /* drive: duty in percent; -1 duty as a fraction; 0 power */
} unit_word;

static const unit_word units[] = {
    {"s", ROLE_TIME, 1.0, 0},
    {"sec", ROLE_TIME, 1.0, 0},
    {"secs", ROLE_TIME, 1.0, 0},
    {"seconds", ROLE_TIME, 1.0, 0},
    {"ms", ROLE_TIME, 1.0e-3, 0},
    {"min", ROLE_TIME, 60.0, 0},
    {"minutes", ROLE_TIME, 60.0, 0},
    {"h", ROLE_TIME, 3600.0, 0},
    {"hr", ROLE_TIME, 3600.0, 0},
    {"hours", ROLE_TIME, 3600.0, 0},
    {"c", ROLE_TEMP, 0, 0},
    {"degc", ROLE_TEMP, 0, 0},
    {"\xc2\xb0"
     "c",
     ROLE_TEMP, 0, 0},
    {"celsius", ROLE_TEMP, 0, 0},
    {"f", ROLE_TEMP, 1, 0},
    {"degf", ROLE_TEMP, 1, 0},
    {"\xc2\xb0"
     "f",
     ROLE_TEMP, 1, 0},
    {"fahrenheit", ROLE_TEMP, 1, 0},
    {"k", ROLE_TEMP, 2, 0},
    {"kelvin", ROLE_TEMP, 2, 0},
    {"%", ROLE_DRIVE, 0, 1},
    {"pct", ROLE_DRIVE, 0, 1},
    {"percent", ROLE_DRIVE, 0, 1},
    {"1", ROLE_DRIVE, 0, -1},
    {"frac", ROLE_DRIVE, 0, -1},
    {"fraction", ROLE_DRIVE, 0, -1},
    {"w", ROLE_DRIVE, 1.0, 0},
    {"watt", ROLE_DRIVE, 1.0, 0},
    {"watts", ROLE_DRIVE, 1.0, 0},
    {"kw", ROLE_DRIVE, 1000.0, 0},
};
#define N_UNITS (sizeof units / sizeof units[0])

static const char *const time_names[] = {"t",         "time", "seconds",  "sec",  "elapsed",
                                         "timestamp", "date", "datetime", "clock"};
static const char *const time_prefixes[] = {"time", "elapsed", "timestamp", "date"};
static const char *const temp_prefixes[] = {"temp", "reading", "sensor",
                                            "bed",  "plate",   "thermistor"};
static const char *const drive_prefixes[] = {"duty", "pwm", "power", "output"};

/* ---- small text helpers ------------------------------------------------------------------ */

static void lower_copy(char *dst, size_t size, const char *src)
{
    size_t i;
    for (i = 0; i + 1 < size && src[i]; i++)
        dst[i] = (char)tolower((unsigned char)src[i]);
    dst[i] = '\0';
}

static int starts_with(const char *s, const char *prefix)
{
    return strncmp(s, prefix, strlen(prefix)) == 0;
}

static char *trim(char *s)
{
    char *e;
    while (*s == ' ' || *s == '\t')
        s++;
    e = s + strlen(s);
    while (e > s && (e[-1] == ' ' || e[-1] == '\t'))
        *--e = '\0';
    if (e - s >= 2 && s[0] == '"' && e[-1] == '"') {
        e[-1] = '\0';
        s++;
    }
    return s;
}

static const unit_word *find_unit(const char *word, role r)
{
    char low[32];
    size_t i;
    lower_copy(low, sizeof low, word);
    for (i = 0; i < N_UNITS; i++)
        if (units[i].role == r && strcmp(units[i].word, low) == 0)
            return &units[i];
    return NULL;
}

/* Split a header name into a lowercase base and a unit word for role `r`: "temp (degF)" and
 * "temp [degF]" always split (*bracketed set); "temp_F" splits only when the suffix is a unit
 * of that role. */
static void split_name(const char *name, role r, char *base, size_t bsize, char *unit, size_t usize,
                       int *bracketed)
{
    char tmp[TP_TEMPLOG_NAME_MAX];
    const char *open;
    *bracketed = 0;
    unit[0] = '\0';
    snprintf(tmp, sizeof tmp, "%s", name);
    open = strpbrk(tmp, "([");
    if (open) {
        char close = *open == '(' ? ')' : ']';
        char *end = strchr(open, close);
        char inner[32];
        size_t n = end ? (size_t)(end - open - 1) : strlen(open + 1);
        if (n >= sizeof inner)
            n = sizeof inner - 1;
        memcpy(inner, open + 1, n);
        inner[n] = '\0';
        snprintf(unit, usize, "%s", trim(inner));
        tmp[open - tmp] = '\0';
        lower_copy(base, bsize, trim(tmp));
        *bracketed = 1;
        return;
    }
    {
        char *us = strrchr(tmp, '_');
        if (us && us[1] && find_unit(us + 1, r)) {
            snprintf(unit, usize, "%s", us + 1);
            *us = '\0';
        }
    }
    lower_copy(base, bsize, tmp);
}

static int in_list(const char *s, const char *const *list, size_t n, int prefix)
{
    size_t i;
    for (i = 0; i < n; i++)
        if (prefix ? starts_with(s, list[i]) : strcmp(s, list[i]) == 0)
            return 1;
    return 0;
}

/* ---- lines and cells --------------------------------------------------------------------- */

typedef struct scanner {
    const char *text;
    size_t len, pos;
    int line; /* line number of the line last returned */
} scanner;

/* The next line without its end-of-line characters; 0 at the end of the text. */
static int next_line(scanner *s, const char **start, size_t *n)
{
    size_t e;
    if (s->pos >= s->len)
        return 0;
    e = s->pos;
    while (e < s->len && s->text[e] != '\n' && s->text[e] != '\r')
        e++;
    *start = s->text + s->pos;
    *n = e - s->pos;
    if (e < s->len && s->text[e] == '\r')
        e++;
    if (e < s->len && s->text[e] == '\n')
        e++;
    s->pos = e;
    s->line++;
    return 1;
}

/* Blank or a '#' comment. */
static int skippable(const char *p, size_t n)
{
    size_t i = 0;
    while (i < n && (p[i] == ' ' || p[i] == '\t'))
        i++;
    return i == n || p[i] == '#';
}

typedef struct row {
    char buf[TP_TEMPLOG_LINE_MAX + 1];
    char *cell[TP_TEMPLOG_MAX_COLS];
    int col[TP_TEMPLOG_MAX_COLS]; /* 1-based byte column where each cell starts */
    int n;
    int too_many;
} row;

/* Copy a line and split it at `sep` into trimmed cells. */
static void split_row(row *r, const char *p, size_t n, char sep)
{
    char *s;
    memcpy(r->buf, p, n);
    r->buf[n] = '\0';
    r->n = 0;
    r->too_many = 0;
    s = r->buf;
    for (;;) {
        char *e = strchr(s, sep);
        if (e)
            *e = '\0';
        if (r->n == TP_TEMPLOG_MAX_COLS) {
            r->too_many = 1;
            return;
        }
        {
            char *t = trim(s);
            r->col[r->n] = (int)(s - r->buf) + 1 + (int)(t - s);
            r->cell[r->n++] = t;
        }
        if (!e)
            return;
        s = e + 1;
    }
}

/* ---- cell parsers ------------------------------------------------------------------------ */

/* Digits only, at least one, at most `max` of them; returns the value or -1. */
static long digits(const char *s, size_t n, size_t max)
{
    long v = 0;
    size_t i;
    if (n == 0 || n > max)
        return -1;
    for (i = 0; i < n; i++) {
        if (!isdigit((unsigned char)s[i]))
            return -1;
        v = v * 10 + (s[i] - '0');
    }
    return v;
}

/* "H:MM:SS(.f)" or "M:SS(.f)" into seconds; *hours_field tells whether an hour was given. */
static int parse_clock(const char *s, double *out, int *hours_field)
{
    const char *c1 = strchr(s, ':'), *c2 = c1 ? strchr(c1 + 1, ':') : NULL;
    double sec;
    long a, b;
    if (!c1)
        return -1;
    if (c2 && strchr(c2 + 1, ':'))
        return -1;
    a = digits(s, (size_t)(c1 - s), 6);
    if (a < 0)
        return -1;
    if (c2) {
        b = digits(c1 + 1, (size_t)(c2 - c1 - 1), 2);
        if (b < 0 || b > 59 || c2 - c1 - 1 != 2)
            return -1;
        if (!isdigit((unsigned char)c2[1]) || tp_units_parse_double(c2 + 1, &sec) != 0 || sec < 0 ||
            sec >= 60.0)
            return -1;
        *out = (double)a * 3600.0 + (double)b * 60.0 + sec;
        *hours_field = 1;
        return 0;
    }
    if (!isdigit((unsigned char)c1[1]) || tp_units_parse_double(c1 + 1, &sec) != 0 || sec < 0 ||
        sec >= 60.0)
        return -1;
    *out = (double)a * 60.0 + sec;
    *hours_field = 0;
    return 0;
}

/* Days from 1970-01-01 to y-m-d in the proleptic Gregorian calendar (closed form: shift the
 * year to start in March so the leap day is last; 146097 days per 400 years). */
static long days_from_civil(long y, long m, long d)
{
    long era, yoe, doy, doe;
    y -= m <= 2;
    era = (y >= 0 ? y : y - 399) / 400;
    yoe = y - era * 400;
    doy = (153 * (m + (m > 2 ? -3 : 9)) + 2) / 5 + d - 1;
    doe = yoe * 365 + yoe / 4 - yoe / 100 + doy;
    return era * 146097 + doe - 719468;
}

static int days_in_month(long y, long m)
{
    static const int dm[12] = {31, 28, 31, 30, 31, 30, 31, 31, 30, 31, 30, 31};
    int leap = (y % 4 == 0 && y % 100 != 0) || y % 400 == 0;
    return m == 2 && leap ? 29 : dm[m - 1];
}

/* "YYYY-MM-DD[T ]HH:MM[:SS(.f)][Z|+HH:MM|+HHMM|-...]" into seconds since 1970 (UTC). */
static int parse_iso(const char *s, double *out)
{
    long y, mo, d, hh, mi, oh = 0, om = 0;
    double sec = 0.0, sign = 0.0;
    size_t n = strlen(s), i;
    char frac[40];
    if (n < 16 || s[4] != '-' || s[7] != '-' || (s[10] != 'T' && s[10] != 't' && s[10] != ' ') ||
        s[13] != ':')
        return -1;
    y = digits(s, 4, 4);
    mo = digits(s + 5, 2, 2);
    d = digits(s + 8, 2, 2);
    hh = digits(s + 11, 2, 2);
    mi = digits(s + 14, 2, 2);
    if (y < 0 || mo < 1 || mo > 12 || d < 1 || d > days_in_month(y, mo) || hh < 0 || hh > 23 ||
        mi < 0 || mi > 59)
        return -1;
    i = 16;
    if (i < n && s[i] == ':') {
        size_t j = i + 1, k = 0;
        while (j < n && (isdigit((unsigned char)s[j]) || s[j] == '.') && k + 1 < sizeof frac)
            frac[k++] = s[j++];
        frac[k] = '\0';
        if (k < 2 || !isdigit((unsigned char)frac[0]) || !isdigit((unsigned char)frac[1]) ||
            (k > 2 && frac[2] != '.') || tp_units_parse_double(frac, &sec) != 0 || sec >= 61.0)
            return -1;
        i = j;
    }
    if (i < n) {
        if ((s[i] == 'Z' || s[i] == 'z') && i + 1 == n) {
            i = n;
        } else if (s[i] == '+' || s[i] == '-') {
            sign = s[i] == '+' ? 1.0 : -1.0;
            if (n - i == 6 && s[i + 3] == ':') {
                oh = digits(s + i + 1, 2, 2);
                om = digits(s + i + 4, 2, 2);
            } else if (n - i == 5) {
                oh = digits(s + i + 1, 2, 2);
                om = digits(s + i + 3, 2, 2);
            } else if (n - i == 3) {
                oh = digits(s + i + 1, 2, 2);
            } else {
                return -1;
            }
            if (oh < 0 || oh > 23 || om < 0 || om > 59)
                return -1;
            i = n;
        } else {
            return -1;
        }
    }
    *out = (double)days_from_civil(y, mo, d) * DAY + (double)hh * 3600.0 + (double)mi * 60.0 + sec -
           sign * ((double)oh * 3600.0 + (double)om * 60.0);
    return 0;
}

static tp_templog_time_format sniff_time(const char *s)
{
    size_t n = strlen(s);
    if (n >= 10 && isdigit((unsigned char)s[0]) && s[4] == '-' && s[7] == '-')
        return TP_TEMPLOG_TIME_ISO;
    if (strchr(s, ':'))
        return TP_TEMPLOG_TIME_CLOCK;
    return TP_TEMPLOG_TIME_NUMBER;
}

static const char *time_format_name(tp_templog_time_format f)
{
    switch (f) {
    case TP_TEMPLOG_TIME_NUMBER:
        return "a number of seconds";
    case TP_TEMPLOG_TIME_CLOCK:
        return "a clock time H:MM:SS";
    case TP_TEMPLOG_TIME_ISO:
        return "an ISO timestamp YYYY-MM-DDTHH:MM:SS";
    }
    return "?";
}

/* ---- the parser -------------------------------------------------------------------------- */

typedef struct parser {
    const char *name;
    tp_diag *d;
    int errors;
    row r;
    int icol[3]; /* column index per role; -1: none */
    double time_scale;
    int temp_kind;     /* 0 C, 1 F, 2 K */
    int duty_unit;     /* 1 percent, -1 fraction, 2 counts of full_scale, 0 not declared */
    double full_scale; /* duty_unit 2: the count that means full duty (e.g. 255) */
    int drive_line, drive_colno; /* where the drive column is named, for messages */
    double power_scale;
} parser;

/* Report a problem at line:col; after TP_TEMPLOG_ERRORS_MAX of them only count. */
static void row_error(parser *p, int line, int col, const char *hint, const char *fmt, ...)
    __attribute__((format(printf, 5, 6)));

static void row_error(parser *p, int line, int col, const char *hint, const char *fmt, ...)
{
    char msg[512];
    va_list ap;
    p->errors++;
    if (p->errors > TP_TEMPLOG_ERRORS_MAX)
        return;
    va_start(ap, fmt);
    vsnprintf(msg, sizeof msg, fmt, ap);
    va_end(ap);
    if (p->errors == TP_TEMPLOG_ERRORS_MAX)
        tp_diag_error(p->d, (tp_loc){p->name, line, col}, NULL,
                      "fix these first; further errors are not shown", "%s", msg);
    else
        tp_diag_error(p->d, (tp_loc){p->name, line, col}, NULL, hint, "%s", msg);
}

/* Find a column by its header name: exact first, then ignoring case. */
static int find_column(const row *h, const char *want)
{
    int i;
    for (i = 0; i < h->n; i++)
        if (strcmp(h->cell[i], want) == 0)
            return i;
    for (i = 0; i < h->n; i++) {
        char a[TP_TEMPLOG_NAME_MAX], b[TP_TEMPLOG_NAME_MAX];
        lower_copy(a, sizeof a, h->cell[i]);
        lower_copy(b, sizeof b, want);
        if (strcmp(a, b) == 0)
            return i;
    }
    return -1;
}

static void column_list(const row *h, char *out, size_t size)
{
    size_t len = 0;
    int i;
    out[0] = '\0';
    for (i = 0; i < h->n && len + 4 < size; i++)
        len +=
            (size_t)snprintf(out + len, size - len, "%s'%s'", i ? ", " : "columns: ", h->cell[i]);
}

static int auto_column(const row *h, role r, const int *taken)
{
    int i;
    for (i = 0; i < h->n; i++) {
        char base[TP_TEMPLOG_NAME_MAX], unit[32];
        int br;
        if (taken[0] == i || taken[1] == i)
            continue;
        split_name(h->cell[i], r, base, sizeof base, unit, sizeof unit, &br);
        if (r == ROLE_TIME &&
            (in_list(base, time_names, sizeof time_names / sizeof *time_names, 0) ||
             in_list(base, time_prefixes, sizeof time_prefixes / sizeof *time_prefixes, 1)))
            return i;
        if (r == ROLE_TEMP &&
            (strcmp(base, "t") == 0 ||
             in_list(base, temp_prefixes, sizeof temp_prefixes / sizeof *temp_prefixes, 1)))
            return i;
        if (r == ROLE_DRIVE &&
            in_list(base, drive_prefixes, sizeof drive_prefixes / sizeof *drive_prefixes, 1))
            return i;
    }
    return -1;
}

/* Choose the columns: those the options name, else by their names (time, then the drive, then
 * the reading among the rest). `list` names the header's columns for messages. */
static tp_status choose_columns(parser *p, const tp_templog_opts *o, int line, const char *list)
{
    const row *h = &p->r;
    const char *want[3] = {o ? o->time_col : NULL, o ? o->temp_col : NULL, o ? o->duty_col : NULL};
    static const char *const opt_name[3] = {"--time-col", "--temp-col", "--duty-col"};
    int k, taken[2] = {-1, -1};
    for (k = 0; k < 3; k++) {
        p->icol[k] = -1;
        if (want[k]) {
            p->icol[k] = find_column(h, want[k]);
            if (p->icol[k] < 0) {
                row_error(p, line, 1, list, "%s: no column named '%s' in the header", opt_name[k],
                          want[k]);
                return TP_ERR_CONFIG;
            }
        }
    }
    if (p->icol[ROLE_TIME] < 0) {
        int none[2] = {p->icol[ROLE_TEMP], p->icol[ROLE_DRIVE]};
        p->icol[ROLE_TIME] = auto_column(h, ROLE_TIME, none);
        if (p->icol[ROLE_TIME] < 0)
            p->icol[ROLE_TIME] = p->icol[ROLE_TEMP] == 0 || p->icol[ROLE_DRIVE] == 0 ? 1 : 0;
    }
    if (p->icol[ROLE_DRIVE] < 0 && !(o && o->duty_col)) {
        taken[0] = p->icol[ROLE_TIME];
        taken[1] = p->icol[ROLE_TEMP];
        p->icol[ROLE_DRIVE] = auto_column(h, ROLE_DRIVE, taken);
    }
    if (p->icol[ROLE_TEMP] < 0) {
        taken[0] = p->icol[ROLE_TIME];
        taken[1] = p->icol[ROLE_DRIVE];
        p->icol[ROLE_TEMP] = auto_column(h, ROLE_TEMP, taken);
        for (k = 0; p->icol[ROLE_TEMP] < 0 && k < h->n; k++)
            if (k != taken[0] && k != taken[1])
                p->icol[ROLE_TEMP] = k;
    }
    if (p->icol[ROLE_TEMP] < 0 || p->icol[ROLE_TIME] >= h->n) {
        row_error(p, line, 1, "the header names at least a time and a reading column",
                  "the log needs a time column and a reading column (%s)", list);
        return TP_ERR_CONFIG;
    }
    if (p->icol[ROLE_TIME] == p->icol[ROLE_TEMP] || p->icol[ROLE_TIME] == p->icol[ROLE_DRIVE] ||
        p->icol[ROLE_TEMP] == p->icol[ROLE_DRIVE]) {
        row_error(p, line, 1, "choose three different columns",
                  "one column is chosen for two roles");
        return TP_ERR_CONFIG;
    }
    return TP_OK;
}

/* The scale of the unit in the name of the column of role `which` (`none` without a unit);
 * TP_ERR_CONFIG naming an unknown `what` unit ("time", "temperature") and the column, with
 * `hint`. */
static tp_status column_unit(parser *p, int line, int which, double none, const char *what,
                             const char *hint, double *scale)
{
    const row *h = &p->r;
    char base[TP_TEMPLOG_NAME_MAX], unit[32];
    int k = p->icol[which], br;
    const unit_word *u;
    split_name(h->cell[k], which, base, sizeof base, unit, sizeof unit, &br);
    *scale = none;
    if (!unit[0])
        return TP_OK;
    u = find_unit(unit, which);
    if (!u) {
        row_error(p, line, h->col[k], hint, "unknown %s unit '%s' in column '%s'", what, unit,
                  h->cell[k]);
        return TP_ERR_CONFIG;
    }
    *scale = u->scale;
    return TP_OK;
}

/* The units of the time and reading columns. */
static tp_status time_and_reading_units(parser *p, int line, tp_templog *log)
{
    double kind;
    if (column_unit(p, line, ROLE_TIME, 1.0, "time", "time units: s, ms, min, h", &p->time_scale) !=
            TP_OK ||
        column_unit(p, line, ROLE_TEMP, 0.0, "temperature", "reading units: degC (C), degF (F), K",
                    &kind) != TP_OK)
        return TP_ERR_CONFIG;
    p->temp_kind = (int)kind;
    snprintf(log->temp_unit, sizeof log->temp_unit, "%s",
             p->temp_kind == 0   ? "degC"
             : p->temp_kind == 1 ? "degF"
                                 : "K");
    return TP_OK;
}

/* What the drive column holds, from its name and unit: a duty (a fraction, percent, or counts
 * of a full scale) or a power. */
static tp_status drive_unit(parser *p, int line, tp_templog *log)
{
    const row *h = &p->r;
    char base[TP_TEMPLOG_NAME_MAX], unit[32];
    int k = p->icol[ROLE_DRIVE], br;
    const unit_word *u;
    log->drive_kind = TP_TEMPLOG_DRIVE_NONE;
    if (k < 0)
        return TP_OK;
    split_name(h->cell[k], ROLE_DRIVE, base, sizeof base, unit, sizeof unit, &br);
    p->drive_line = line;
    p->drive_colno = h->col[k];
    if (br && (unit[0] == 'o' || unit[0] == 'O') && (unit[1] == 'f' || unit[1] == 'F') &&
        (unit[2] == ' ' || unit[2] == '\t')) {
        /* "pwm (of 255)": counts, with the count that means full duty. */
        double fs;
        if (tp_units_parse_double(unit + 3, &fs) != 0 || !(fs >= 1.0 && fs <= 1e9) ||
            fs != floor(fs)) {
            row_error(p, line, h->col[k],
                      "write the count that means full duty, e.g. "
                      "pwm (of 255) for an 8-bit PWM register",
                      "'%s' in column '%s' is not a full scale of counts", unit, h->cell[k]);
            return TP_ERR_CONFIG;
        }
        log->drive_kind = TP_TEMPLOG_DRIVE_DUTY;
        p->duty_unit = 2;
        p->full_scale = fs;
        snprintf(log->drive_col, sizeof log->drive_col, "%s", h->cell[k]);
        return TP_OK;
    }
    u = unit[0] ? find_unit(unit, ROLE_DRIVE) : NULL;
    if (unit[0] && !u) {
        row_error(p, line, h->col[k],
                  "duty: (%), (1) for a fraction, (of 255) for counts of 255; power: W or kW",
                  "unknown unit '%s' in column '%s'", unit, h->cell[k]);
        return TP_ERR_CONFIG;
    }
    if ((u && u->percent == 0) || (!u && starts_with(base, "power"))) {
        log->drive_kind = TP_TEMPLOG_DRIVE_POWER;
        p->power_scale = u ? u->scale : 1.0;
    } else {
        log->drive_kind = TP_TEMPLOG_DRIVE_DUTY;
        p->duty_unit = u ? u->percent : 0;
    }
    snprintf(log->drive_col, sizeof log->drive_col, "%s", h->cell[k]);
    return TP_OK;
}

/* Choose the columns and read their units from the header. */
static tp_status analyse_header(parser *p, const tp_templog_opts *o, int line, tp_templog *log)
{
    char list[512];
    tp_status st;
    column_list(&p->r, list, sizeof list);
    if ((st = choose_columns(p, o, line, list)) != TP_OK ||
        (st = time_and_reading_units(p, line, log)) != TP_OK ||
        (st = drive_unit(p, line, log)) != TP_OK)
        return st;
    snprintf(log->time_col, sizeof log->time_col, "%s", p->r.cell[p->icol[ROLE_TIME]]);
    snprintf(log->temp_col, sizeof log->temp_col, "%s", p->r.cell[p->icol[ROLE_TEMP]]);
    return TP_OK;
}

static double to_kelvin(int kind, double v)
{
    return kind == 0 ? v + TP_KELVIN_0C : kind == 1 ? (v - 32.0) * 5.0 / 9.0 + TP_KELVIN_0C : v;
}

static void fmt_seconds(double s, char *buf, size_t size)
{
    if (s < 120.0)
        snprintf(buf, size, "%.1f s", s);
    else
        snprintf(buf, size, "%.0f s (%.1f min)", s, s / 60.0);
}

void tp_templog_clear(tp_templog *log)
{
    if (!log)
        return;
    free(log->name);
    free(log->t);
    free(log->reading);
    free(log->drive);
    free(log->line);
    memset(log, 0, sizeof *log);
}

/* Range checks that need every row: duty unit, gaps, the row count. */
static void check_rows(parser *p, tp_templog *log, int last_line)
{
    long i;
    double span, vmax = 0.0;
    char a[64];
    if (log->n < TP_TEMPLOG_MIN_ROWS) {
        row_error(p, last_line, 1, "log at least until the plate has settled (see docs/fit.md)",
                  "only %ld data row%s; a fit needs at least %d", log->n, log->n == 1 ? "" : "s",
                  TP_TEMPLOG_MIN_ROWS);
        return;
    }
    if (log->drive_kind == TP_TEMPLOG_DRIVE_DUTY) {
        double top;
        for (i = 0; i < log->n; i++)
            vmax = fmax(vmax, log->drive[i]);
        /* Values within 0..1 with no declared scale are a fraction. Above 1 they could be
         * percent or PWM counts (0..255 counts that stay below 100 look like percent): the
         * header must say which (issue 15 item 23). */
        if (p->duty_unit == 0 && vmax > 1.0) {
            char hint[320];
            const char *c = log->drive_col;
            snprintf(hint, sizeof hint,
                     "declare the scale in the header: %s (%%) for percent, "
                     "%s (of 255) for PWM counts of 255, %s (1) for a fraction (docs/fit.md)",
                     c, c, c);
            row_error(p, p->drive_line, p->drive_colno, hint,
                      "the duty column '%s' has values up to %g and no declared scale: "
                      "percent, or PWM counts?",
                      c, vmax);
            return;
        }
        log->duty_percent = p->duty_unit == 1;
        log->duty_full_scale = p->duty_unit == 1 ? 100.0 : p->duty_unit == 2 ? p->full_scale : 1.0;
        top = log->duty_full_scale;
        for (i = 0; i < log->n; i++) {
            double v = log->drive[i];
            if (v < 0.0 || v > top)
                row_error(p, log->line[i], 0,
                          p->duty_unit == 1   ? "duty in percent lies in 0..100"
                          : p->duty_unit == 2 ? "counts lie between 0 and the declared full "
                                                "scale; check the header's (of N)"
                                              : "duty as a fraction lies in 0..1",
                          "duty %g in column '%s' is outside 0..%g", v, log->drive_col, top);
            else
                log->drive[i] = v / top;
        }
    }
    span = log->t[log->n - 1] - log->t[0];
    for (i = 1; i < log->n; i++) {
        double gap = log->t[i] - log->t[i - 1];
        if (gap > TP_TEMPLOG_GAP_FRACTION * span) {
            fmt_seconds(gap, a, sizeof a);
            tp_diag_warn(p->d, (tp_loc){p->name, log->line[i], 1}, NULL,
                         "the model runs through the gap, but nothing checks it there",
                         "a gap of %s before this row, more than %.0f %% of the log", a,
                         100.0 * TP_TEMPLOG_GAP_FRACTION);
        }
    }
}

/* The time of row i from its cell, in the log's one format (taken from the first row): the
 * seconds since the log's clock's zero, midnight crossings of a time of day counted; it must
 * increase. */
static tp_status parse_time(parser *p, tp_templog *log, long i, int line,
                            tp_templog_time_format *fmt, double *day_offset, int *have_first)
{
    row *r = &p->r;
    const char *c = r->cell[p->icol[ROLE_TIME]];
    double v, t = 0.0;
    int hours_field = 0, bad;
    if (!*have_first)
        *fmt = sniff_time(c);
    switch (*fmt) {
    case TP_TEMPLOG_TIME_NUMBER:
        bad = tp_units_parse_double(c, &v) != 0;
        if (!bad)
            t = v * p->time_scale;
        break;
    case TP_TEMPLOG_TIME_CLOCK:
        bad = parse_clock(c, &t, &hours_field) != 0;
        if (bad)
            break;
        /* A clock time of day that jumps back by more than half a day has passed midnight. */
        if (*have_first && hours_field && i > 0 && t + *day_offset < log->t[i - 1] - HALF_DAY)
            *day_offset += DAY;
        t += *day_offset;
        break;
    case TP_TEMPLOG_TIME_ISO:
    default:
        bad = parse_iso(c, &t) != 0;
        break;
    }
    if (bad) {
        row_error(p, line, r->col[p->icol[ROLE_TIME]],
                  "times are seconds, H:MM:SS or ISO timestamps, the same in every row",
                  "'%s' in column '%s' is not %s", c, log->time_col, time_format_name(*fmt));
        return TP_ERR_CONFIG;
    }
    if (!isfinite(t)) {
        row_error(p, line, r->col[p->icol[ROLE_TIME]], NULL, "time '%s' is out of range", c);
        return TP_ERR_CONFIG;
    }
    if (i > 0 && !(t > log->t[i - 1])) {
        char a[64];
        snprintf(a, sizeof a, "%s", c);
        return row_error(p, line, r->col[p->icol[ROLE_TIME]],
                         "rows are in time order, one row per moment; remove repeated rows",
                         "time does not increase: '%s' follows the row on line %d", a,
                         log->line[i - 1]),
               TP_ERR_CONFIG;
    }
    log->t[i] = t;
    *have_first = 1;
    return TP_OK;
}

/* The reading (in kelvin, within the plausible range) and the drive of row i. */
static tp_status parse_reading_and_drive(parser *p, tp_templog *log, long i, int line)
{
    row *r = &p->r;
    const char *c = r->cell[p->icol[ROLE_TEMP]];
    double v;
    if (tp_units_parse_double(c, &v) != 0) {
        row_error(p, line, r->col[p->icol[ROLE_TEMP]],
                  "readings are plain decimal numbers with a point",
                  "'%s' in column '%s' is not a number", c, log->temp_col);
        return TP_ERR_CONFIG;
    }
    v = to_kelvin(p->temp_kind, v);
    if (!(v >= TP_TEMPLOG_READING_MIN && v <= TP_TEMPLOG_READING_MAX))
        return row_error(p, line, r->col[p->icol[ROLE_TEMP]],
                         "check the column and its unit (temp_F for Fahrenheit, temp_K for "
                         "kelvin); a disconnected sensor logs nonsense",
                         "reading %s %s (%.1f degC) is outside -50..500 degC", c, log->temp_unit,
                         v - TP_KELVIN_0C),
               TP_ERR_CONFIG;
    log->reading[i] = v;
    if (!log->drive)
        return TP_OK;
    c = r->cell[p->icol[ROLE_DRIVE]];
    if (tp_units_parse_double(c, &v) != 0) {
        row_error(p, line, r->col[p->icol[ROLE_DRIVE]],
                  "duty and power are plain decimal numbers with a point",
                  "'%s' in column '%s' is not a number", c, log->drive_col);
        return TP_ERR_CONFIG;
    }
    if (log->drive_kind == TP_TEMPLOG_DRIVE_POWER) {
        v *= p->power_scale;
        if (v < 0.0) {
            row_error(p, line, r->col[p->icol[ROLE_DRIVE]], NULL,
                      "negative power %s in column '%s'", c, log->drive_col);
            return TP_ERR_CONFIG;
        }
    }
    log->drive[i] = v;
    return TP_OK;
}

static tp_status parse_cells(parser *p, tp_templog *log, long i, int line,
                             tp_templog_time_format *fmt, double *day_offset, int *have_first)
{
    row *r = &p->r;
    tp_status st;
    int k;
    for (k = 0; k < 3; k++) {
        int j = p->icol[k];
        if (j >= 0 && j >= r->n) {
            row_error(p, line, 1, "every row has as many cells as the header",
                      "the row has %d cell%s but the %s column is number %d", r->n,
                      r->n == 1 ? "" : "s",
                      k == ROLE_TIME   ? "time"
                      : k == ROLE_TEMP ? "reading"
                                       : "drive",
                      j + 1);
            return TP_ERR_CONFIG;
        }
    }
    st = parse_time(p, log, i, line, fmt, day_offset, have_first);
    return st == TP_OK ? parse_reading_and_drive(p, log, i, line) : st;
}

/* Bytes of a UTF-8 byte-order mark at the start of the text (not part of the first name). */
static size_t bom_length(const char *text, size_t len)
{
    return len >= 3 && (unsigned char)text[0] == 0xEF && (unsigned char)text[1] == 0xBB &&
                   (unsigned char)text[2] == 0xBF
               ? 3
               : 0;
}

/* First pass: the header's line, the number of data rows (limited before anything is
 * allocated), the last data row's line, and no line over the length limit. */
static tp_status first_pass(const char *name, const char *text, size_t len, int *header_line,
                            long *rows, int *last_line, tp_diag *d)
{
    scanner sc = {text, len, 0, 0};
    const char *ln;
    size_t n;
    sc.pos = bom_length(text, len);
    while (next_line(&sc, &ln, &n)) {
        if (n > TP_TEMPLOG_LINE_MAX) {
            tp_diag_error(d, (tp_loc){name, sc.line, TP_TEMPLOG_LINE_MAX + 1}, NULL,
                          "a log row has a few columns; is this the right file?",
                          "line longer than %d bytes", TP_TEMPLOG_LINE_MAX);
            return TP_ERR_LIMIT;
        }
        if (skippable(ln, n))
            continue;
        if (!*header_line) {
            *header_line = sc.line;
            continue;
        }
        if (++*rows > TP_TEMPLOG_MAX_ROWS) {
            tp_diag_error(d, (tp_loc){name, sc.line, 1}, NULL,
                          "thin the log (one row per second is plenty) or cut it to the warm-up",
                          "more than %d data rows", TP_TEMPLOG_MAX_ROWS);
            return TP_ERR_LIMIT;
        }
        *last_line = sc.line;
    }
    if (!*header_line) {
        tp_diag_error(d, (tp_loc){name, sc.line > 0 ? sc.line : 0, 0}, NULL,
                      "a log starts with a header row such as time_s,temp_C,duty",
                      "the log is empty");
        return TP_ERR_CONFIG;
    }
    return TP_OK;
}

/* The header row at `header_line` (sc moved past it): its separator (a comma, else a
 * semicolon, else a tab), at least two named columns, and their roles and units. */
static tp_status read_header(parser *p, scanner *sc, int header_line, char *sep,
                             const tp_templog_opts *opts, tp_templog *log)
{
    const char *ln = NULL;
    size_t n = 0;
    int i;
    sc->pos = bom_length(sc->text, sc->len);
    sc->line = 0;
    while (next_line(sc, &ln, &n) && sc->line < header_line)
        ;
    if (memchr(ln, ',', n))
        *sep = ',';
    else if (memchr(ln, ';', n))
        *sep = ';';
    else if (memchr(ln, '\t', n))
        *sep = '\t';
    split_row(&p->r, ln, n, *sep);
    if (p->r.too_many) {
        row_error(p, header_line, 1, NULL, "more than %d columns", TP_TEMPLOG_MAX_COLS);
        return TP_ERR_CONFIG;
    }
    if (p->r.n < 2) {
        row_error(p, header_line, 1,
                  "separate the columns with commas (or semicolons or tabs), e.g. "
                  "time_s,temp_C,duty",
                  "the header has only one column");
        return TP_ERR_CONFIG;
    }
    for (i = 0; i < p->r.n; i++)
        if (p->r.cell[i][0] == '\0') {
            row_error(p, header_line, p->r.col[i], "give every column a name",
                      "column %d has no name", i + 1);
            return TP_ERR_CONFIG;
        }
    return analyse_header(p, opts, header_line, log);
}

/* The data rows after the header into the log's arrays (room for `rows`); rows in error are
 * counted in p->errors, the reading stops after TP_TEMPLOG_ERRORS_MAX of them. */
static void read_rows(parser *p, scanner *sc, char sep, tp_templog *log)
{
    const char *ln;
    size_t n;
    long i = 0;
    int have_first = 0;
    tp_templog_time_format fmt = TP_TEMPLOG_TIME_NUMBER;
    double day_offset = 0.0;
    while (next_line(sc, &ln, &n)) {
        int bad_before = p->errors;
        if (skippable(ln, n))
            continue;
        split_row(&p->r, ln, n, sep);
        if (p->r.too_many) {
            row_error(p, sc->line, 1, NULL, "more than %d columns", TP_TEMPLOG_MAX_COLS);
            continue;
        }
        if (parse_cells(p, log, i, sc->line, &fmt, &day_offset, &have_first) != TP_OK ||
            p->errors != bad_before) {
            if (p->errors > TP_TEMPLOG_ERRORS_MAX)
                break;
            continue;
        }
        log->line[i] = sc->line;
        i++;
    }
    log->n = i;
    log->time_format = fmt;
}

tp_status tp_templog_parse(const char *name, const char *text, size_t len,
                           const tp_templog_opts *opts, tp_templog *log, tp_diag *d)
{
    parser *p = NULL;
    scanner sc = {text, len, 0, 0};
    long rows = 0, i, room;
    int header_line = 0, last_line = 0;
    char sep = ',';
    tp_status st;

    memset(log, 0, sizeof *log);
    if (!name)
        name = "log";
    if (!text)
        len = sc.len = 0;
    if (len > 0 && memchr(text, '\0', len)) {
        tp_diag_error(d, (tp_loc){name, 0, 0}, NULL, "give a CSV text file",
                      "the log contains binary data (NUL bytes)");
        return TP_ERR_CONFIG;
    }
    st = first_pass(name, text, len, &header_line, &rows, &last_line, d);
    if (st != TP_OK)
        return st;
    p = calloc(1, sizeof *p);
    log->name = malloc(strlen(name) + 1);
    if (!p || !log->name) {
        free(p);
        tp_templog_clear(log);
        return TP_ERR_NOMEM;
    }
    strcpy(log->name, name);
    p->name = log->name;
    p->d = d;
    st = read_header(p, &sc, header_line, &sep, opts, log);
    if (st != TP_OK)
        goto done;
    room = rows > 0 ? rows : 1;
    log->t = malloc((size_t)room * sizeof *log->t);
    log->reading = malloc((size_t)room * sizeof *log->reading);
    log->line = malloc((size_t)room * sizeof *log->line);
    if (log->drive_kind != TP_TEMPLOG_DRIVE_NONE)
        log->drive = malloc((size_t)room * sizeof *log->drive);
    if (!log->t || !log->reading || !log->line ||
        (log->drive_kind != TP_TEMPLOG_DRIVE_NONE && !log->drive)) {
        st = TP_ERR_NOMEM;
        goto done;
    }
    read_rows(p, &sc, sep, log);
    if (p->errors == 0)
        check_rows(p, log, last_line ? last_line : header_line);
    if (p->errors == 0) {
        double t0 = log->t[0];
        for (i = 0; i < log->n; i++)
            log->t[i] -= t0;
    }
    st = p->errors ? TP_ERR_CONFIG : TP_OK;
done:
    free(p);
    if (st != TP_OK)
        tp_templog_clear(log);
    return st;
}

tp_status tp_templog_load(const char *path, const tp_templog_opts *opts, tp_templog *log,
                          tp_diag *d)
{
    char *buf;
    size_t len;
    tp_status st;
    memset(log, 0, sizeof *log);
    st = tp_infile_read(path, (size_t)TP_TEMPLOG_MAX_BYTES, &buf, &len, d);
    if (st == TP_ERR_LIMIT)
        tp_diag_error(d, (tp_loc){path, 0, 0}, NULL, "thin the log or cut it to the warm-up",
                      "the log is larger than %ld bytes", TP_TEMPLOG_MAX_BYTES);
    if (st == TP_ERR_IO)
        return TP_ERR_CONFIG; /* an unreadable log is an input error (exit 2), as a config is */
    if (st != TP_OK)
        return st;
    st = tp_templog_parse(path, buf, len, opts, log, d);
    free(buf);
    return st;
}

double tp_templog_drive_at(const tp_templog *log, double t)
{
    long lo = 0, hi;
    if (!log->drive || log->n == 0)
        return (double)NAN;
    hi = log->n - 1;
    if (t >= log->t[hi])
        return log->drive[hi];
    if (t <= log->t[0])
        return log->drive[0];
    /* The last row at or before t: invariant t[lo] <= t < t[hi]. */
    while (hi - lo > 1) {
        long mid = lo + (hi - lo) / 2;
        if (log->t[mid] <= t)
            lo = mid;
        else
            hi = mid;
    }
    return log->drive[lo];
}

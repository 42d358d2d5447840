/* Quantities with units: udunits2 parses unit strings against tepid's own unit database
 * (models/units.txt, embedded at build time and built into a udunits2 unit system with
 * udunits2's functions at the first unit); every accepted unit is reduced to an affine map
 * SI = offset + scale * x, cached, so repeated parses never touch udunits again. */
#include "units.h"

#include <ctype.h>
#include <errno.h>
#include <math.h>
#include <pthread.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include <udunits2.h>

#define UNIT_TEXT_MAX 64   /* longest unit string accepted, bytes */
#define CACHE_SIZE 256     /* distinct (unit, dimension) pairs remembered */
#define DB_ID_MAX 128      /* longest name or symbol in the unit database, bytes (udunits2's) */

/* models/units.txt, embedded by CMakeLists.txt (NUL-terminated). */
extern const unsigned char tp_units_data[];
extern const size_t tp_units_data_len;

static const struct {
    const char *si;      /* the SI unit the value is converted to */
    const char *example; /* shown in hints */
} dims[TP_DIM_COUNT] = {
    [TP_DIM_NONE] = {"1", "0.9"},
    [TP_DIM_LENGTH] = {"m", "4 mm"},
    [TP_DIM_AREA] = {"m2", "0.05 m2"},
    [TP_DIM_VOLUME] = {"m3", "0.12 m3"},
    [TP_DIM_TIME] = {"s", "30 min"},
    [TP_DIM_SPEED] = {"m/s", "0.5 m/s"},
    [TP_DIM_POWER] = {"W", "220 W"},
    [TP_DIM_ENERGY] = {"J", "5 kJ"},
    [TP_DIM_CONDUCTANCE] = {"W/K", "1.6 W/K"},
    [TP_DIM_CAPACITY] = {"J/K", "640 J/K"},
    [TP_DIM_HTC] = {"W/(m2.K)", "8 W/(m2.K)"},
    [TP_DIM_CONDUCTIVITY] = {"W/(m.K)", "167 W/(m.K)"},
    [TP_DIM_DENSITY] = {"kg/m3", "2700 kg/m3"},
    [TP_DIM_SPECIFIC_HEAT] = {"J/(kg.K)", "896 J/(kg.K)"},
    [TP_DIM_TEMPERATURE] = {"K", "21 degC"},
    [TP_DIM_INTERVAL] = {"K", "2 K"},
    [TP_DIM_PER_KELVIN] = {"1/K", "0.0039 1/K"},
    [TP_DIM_PER_KELVIN_SEC] = {"1/(K.s)", "0.0015 1/(K.s)"},
    [TP_DIM_SEC_PER_KELVIN] = {"s/K", "0.4 s/K"},
    [TP_DIM_RATE] = {"K/s", "0.5 K/s"},
    [TP_DIM_VOLTAGE] = {"V", "24 V"},
    [TP_DIM_CURRENT] = {"A", "10 A"},
    [TP_DIM_RESISTANCE] = {"ohm", "2.4 ohm"},
    [TP_DIM_MASS] = {"kg", "0.9 kg"},
    [TP_DIM_PRESSURE] = {"Pa", "101325 Pa"},
};

typedef struct cache_entry {
    char unit[UNIT_TEXT_MAX];
    tp_dim dim;
    double offset; /* SI value of 0 in this unit */
    double scale;  /* SI per unit */
} cache_entry;

static pthread_mutex_t lock = PTHREAD_MUTEX_INITIALIZER;
static ut_system *sys;
static ut_unit *si_units[TP_DIM_COUNT]; /* dims[].si parsed, each at its first use */
static tp_units_db db_wanted = TP_UNITS_DB_BUILTIN;
static int db_bad_line; /* the line of models/units.txt that did not load, 0 if none */
static cache_entry cache[CACHE_SIZE];
static int cache_used;

const char *tp_units_si_name(tp_dim dim)
{
    return dim < TP_DIM_COUNT ? dims[dim].si : "?";
}

const char *tp_units_example(tp_dim dim)
{
    return dim < TP_DIM_COUNT ? dims[dim].example : "?";
}

int tp_units_parse_double(const char *text, double *out)
{
    char *end;
    double v;
    const char *p = text;
    if (!text)
        return -1;
    while (isspace((unsigned char)*p))
        p++;
    if (*p == '\0')
        return -1;
    /* strtod also takes hex floats, "nan" and "inf"; a config takes plain decimals only. */
    if (strchr(p, 'x') || strchr(p, 'X') || strchr(p, 'n') || strchr(p, 'N'))
        return -1;
    errno = 0;
    v = strtod(p, &end);
    if (end == p || errno == ERANGE || !isfinite(v))
        return -1;
    while (isspace((unsigned char)*end))
        end++;
    if (*end != '\0')
        return -1;
    *out = v;
    return 0;
}

/* Split "12.5 mm" into the number and the unit text. Returns 0 on success. */
static int split_quantity(const char *text, double *number, const char **unit)
{
    const char *p = text;
    char *end;
    char head[64];
    size_t len;
    while (isspace((unsigned char)*p))
        p++;
    /* Take the longest prefix that looks like a decimal number. */
    len = strspn(p, "+-0123456789.eE");
    /* "2 e" style trailing exponent letters belong to the unit when no digit follows. */
    while (len > 0 && (p[len - 1] == 'e' || p[len - 1] == 'E' || p[len - 1] == '+' ||
                       p[len - 1] == '-'))
        len--;
    if (len == 0 || len >= sizeof head)
        return -1;
    memcpy(head, p, len);
    head[len] = '\0';
    errno = 0;
    *number = strtod(head, &end);
    if (*end != '\0' || errno == ERANGE || !isfinite(*number))
        return -1;
    p += len;
    while (isspace((unsigned char)*p))
        p++;
    *unit = p;
    return 0;
}

/* Map the identifier `id` to `unit`, as a name (case-insensitive) or a symbol. A name with '_'
 * also gets the form with a no-break space (U+00A0) in its place, as udunits2's XML reader
 * gives every name of its own database. Returns 0 or -1. */
static int map_id(const char *id, int is_name, ut_unit *unit)
{
    char nbsp[DB_ID_MAX];
    size_t n = 0;
    const char *p;
    if (strlen(id) >= DB_ID_MAX)
        return -1;
    if (!is_name)
        return ut_map_symbol_to_unit(id, UT_UTF8, unit) == UT_SUCCESS ? 0 : -1;
    if (ut_map_name_to_unit(id, UT_UTF8, unit) != UT_SUCCESS)
        return -1;
    if (!strchr(id, '_'))
        return 0;
    for (p = id; *p; p++) {
        if (n + 3 > sizeof nbsp)
            return -1;
        if (*p == '_') {
            nbsp[n++] = (char)0xC2;
            nbsp[n++] = (char)0xA0;
        } else {
            nbsp[n++] = *p;
        }
    }
    nbsp[n] = '\0';
    return ut_map_name_to_unit(nbsp, UT_UTF8, unit) == UT_SUCCESS ? 0 : -1;
}

/* Map every blank-separated word of `words` (modified) to `unit`. Returns 0 or -1. */
static int map_words(char *words, int is_name, ut_unit *unit)
{
    char *save = NULL;
    char *w;
    for (w = strtok_r(words, " \t", &save); w; w = strtok_r(NULL, " \t", &save))
        if (map_id(w, is_name, unit) != 0)
            return -1;
    return 0;
}

/* One entry of models/units.txt (its format is described at the top of that file), comment
 * already cut off, into `s`. Returns 0 or -1. */
static int load_entry(ut_system *s, char *line)
{
    char *save = NULL;
    char *kind = strtok_r(line, " \t", &save);
    char *rest = strtok_r(NULL, "", &save);
    char *bar, *names, *end;
    ut_unit *unit = NULL;
    int rc;
    if (!kind)
        return 0; /* a blank line */
    if (!rest)
        return -1;
    if (strcmp(kind, "prefix") == 0) {
        double value = strtod(rest, &end);
        char *word = strtok_r(end, " \t", &save);
        if (end == rest || !word || ut_add_name_prefix(s, word, value) != UT_SUCCESS)
            return -1;
        while ((word = strtok_r(NULL, " \t", &save)))
            if (ut_add_symbol_prefix(s, word, value) != UT_SUCCESS)
                return -1;
        return 0;
    }
    bar = strchr(rest, '|');
    if (!bar)
        return -1;
    *bar = '\0';
    if (strcmp(kind, "base") == 0) {
        unit = ut_new_base_unit(s);
        names = rest;
    } else if (strcmp(kind, "dimensionless") == 0) {
        unit = ut_new_dimensionless_unit(s);
        names = rest;
    } else if (strcmp(kind, "unit") == 0 && (names = strchr(rest, '='))) {
        *names++ = '\0';
        unit = ut_parse(s, ut_trim(rest, UT_UTF8), UT_UTF8);
    } else {
        return -1;
    }
    rc = unit && map_words(names, 1, unit) == 0 && map_words(bar + 1, 0, unit) == 0 ? 0 : -1;
    ut_free(unit);
    return rc;
}

#define TP_UNITS_LINE_MAX 512 /* bytes of one line of models/units.txt (test_units checks) */

/* A udunits2 unit system from models/units.txt, or NULL (db_bad_line says where). Each line is
 * copied into a buffer on the stack: loading allocates nothing of tepid's own, so it cannot
 * fail for want of memory but inside udunits2. */
static ut_system *load_builtin(void)
{
    ut_system *s = ut_new_system();
    const char *at = (const char *)tp_units_data, *end = at + tp_units_data_len;
    char line[TP_UNITS_LINE_MAX];
    int number = 0;
    if (!s)
        return NULL;
    while (at < end) {
        const char *nl = memchr(at, '\n', (size_t)(end - at));
        size_t len = (size_t)((nl ? nl : end) - at);
        number++;
        if (len >= sizeof line) {
            db_bad_line = number;
            goto fail;
        }
        memcpy(line, at, len);
        line[len] = '\0';
        at += len + (nl ? 1 : 0);
        line[strcspn(line, "#")] = '\0';
        if (load_entry(s, line) != 0) {
            db_bad_line = number;
            goto fail;
        }
    }
    return s;
fail:
    ut_free_system(s);
    return NULL;
}

static int load_system(void)
{
    if (sys)
        return 0;
    ut_set_error_message_handler(ut_ignore);
    sys = db_wanted == TP_UNITS_DB_UDUNITS2 ? ut_read_xml(NULL) : load_builtin();
    return sys ? 0 : -1;
}

/* The SI unit of `dim` in the loaded system, parsed once. Call with the lock held. */
static ut_unit *si_unit(tp_dim dim)
{
    if (!si_units[dim])
        si_units[dim] = ut_parse(sys, dims[dim].si, UT_ASCII);
    return si_units[dim];
}

/* Reduce `unit` of dimension `dim` to an affine map onto the SI unit. Call with the lock held.
 * Returns 0, or -1 (unknown unit), -2 (wrong dimension) or -3 (the unit database did not load). */
static int resolve(const char *unit, tp_dim dim, double *offset, double *scale)
{
    ut_unit *from = NULL;
    ut_unit *to;
    cv_converter *cv = NULL;
    double c0, c1, c2;
    int rc = 0;

    if (load_system() != 0)
        return -3;
    from = ut_parse(sys, unit, UT_UTF8);
    if (!from)
        return -1;
    to = si_unit(dim);
    if (!to || !ut_are_convertible(from, to)) {
        rc = -2;
        goto done;
    }
    cv = ut_get_converter(from, to);
    if (!cv) {
        rc = -2;
        goto done;
    }
    /* udunits also converts between reciprocal units (1/K <-> K); accept only increasing
     * affine maps, which is what a unit of the same dimension gives. */
    c0 = cv_convert_double(cv, 0.0);
    c1 = cv_convert_double(cv, 1.0);
    c2 = cv_convert_double(cv, 2.0);
    if (!isfinite(c0) || !isfinite(c1) || !isfinite(c2) || !(c1 > c0) ||
        fabs((c2 - c1) - (c1 - c0)) > 1e-9 * fabs(c1 - c0)) {
        rc = -2;
        goto done;
    }
    *offset = c0;
    *scale = c1 - c0;
done:
    cv_free(cv);
    ut_free(from);
    return rc;
}

/* Find or compute the affine map for (unit, dim); thread-safe. */
static int lookup(const char *unit, tp_dim dim, double *offset, double *scale)
{
    int i, rc;
    pthread_mutex_lock(&lock);
    for (i = 0; i < cache_used; i++) {
        if (cache[i].dim == dim && strcmp(cache[i].unit, unit) == 0) {
            *offset = cache[i].offset;
            *scale = cache[i].scale;
            pthread_mutex_unlock(&lock);
            return 0;
        }
    }
    rc = resolve(unit, dim, offset, scale);
    if (rc == 0 && cache_used < CACHE_SIZE) {
        snprintf(cache[cache_used].unit, UNIT_TEXT_MAX, "%s", unit);
        cache[cache_used].dim = dim;
        cache[cache_used].offset = *offset;
        cache[cache_used].scale = *scale;
        cache_used++;
    }
    pthread_mutex_unlock(&lock);
    return rc;
}

/* A unit text we hand to udunits: starts like a unit and has no shift/log syntax. */
static int plausible_unit(const char *u)
{
    if (strlen(u) >= UNIT_TEXT_MAX)
        return 0;
    if (strchr(u, '@') || strstr(u, "since") || strstr(u, "from") || strstr(u, "log") ||
        strstr(u, "lg(") || strstr(u, "ln("))
        return 0;
    if (isalpha((unsigned char)u[0]) || u[0] == '%' || (unsigned char)u[0] >= 0x80)
        return 1;
    return u[0] == '1' && u[1] == '/';
}

tp_status tp_units_parse(const char *text, tp_dim dim, double *si, char *msg, size_t msg_size,
                         const char **hint)
{
    double number, offset, scale, value;
    const char *unit;
    char trimmed[UNIT_TEXT_MAX];
    size_t len;
    int rc;

    *hint = "";
    if (dim >= TP_DIM_COUNT) {
        snprintf(msg, msg_size, "internal: unknown dimension");
        return TP_ERR_CONFIG;
    }
    if (!text || split_quantity(text, &number, &unit) != 0) {
        snprintf(msg, msg_size, "'%s' is not a number%s", text ? text : "",
                 dim == TP_DIM_NONE ? "" : " with a unit");
        *hint = dim == TP_DIM_NONE ? "write a plain decimal number, e.g. 0.9"
                                   : "write a number then a unit, e.g. the example in the docs";
        return TP_ERR_CONFIG;
    }
    /* Trailing blanks (a quoted YAML value keeps them) are not part of the unit. */
    len = strlen(unit);
    while (len > 0 && isspace((unsigned char)unit[len - 1]))
        len--;
    if (len < sizeof trimmed) {
        memcpy(trimmed, unit, len);
        trimmed[len] = '\0';
        unit = trimmed;
    }
    if (*unit == '\0') {
        if (dim == TP_DIM_NONE) {
            *si = number;
            return TP_OK;
        }
        snprintf(msg, msg_size, "'%s' has no unit; expected a quantity in %s, e.g. '%s'", text,
                 dims[dim].si, dims[dim].example);
        *hint = "every dimensional value carries a unit";
        return TP_ERR_CONFIG;
    }
    if (dim == TP_DIM_NONE) {
        if (strcmp(unit, "%") == 0) {
            *si = number / 100.0;
            return TP_OK;
        }
        snprintf(msg, msg_size, "'%s' should be a plain number (this key is dimensionless)",
                 text);
        *hint = "write a plain decimal number, e.g. 0.9";
        return TP_ERR_CONFIG;
    }
    rc = plausible_unit(unit) ? lookup(unit, dim, &offset, &scale) : -1;
    if (rc == -3) {
        /* A broken models/units.txt is a build defect; test_units loads it on every build. */
        snprintf(msg, msg_size, "internal: the built-in unit database did not load (line %d)",
                 db_bad_line);
        *hint = "rebuild tepid; models/units.txt must load (tests/test_units.c checks it)";
        return TP_ERR_CONFIG;
    }
    if (rc == -1) {
        snprintf(msg, msg_size, "unknown unit '%s' in '%s'", unit, text);
        *hint = "units follow udunits2 spelling: mm, in, W, kW, degC, degF, K, W/(m2.K), min, h";
        return TP_ERR_CONFIG;
    }
    if (rc == -2) {
        snprintf(msg, msg_size, "'%s' has the wrong kind of unit; expected a quantity in %s, "
                 "e.g. '%s'", text, dims[dim].si, dims[dim].example);
        *hint = "check the unit: a value of this key must convert to the SI unit shown";
        return TP_ERR_CONFIG;
    }
    /* A temperature difference scales without the offset: 2 degC of difference is 2 K. */
    value = dim == TP_DIM_INTERVAL ? scale * number : offset + scale * number;
    if (!isfinite(value)) {
        snprintf(msg, msg_size, "'%s' is out of range", text);
        *hint = "use a value of ordinary size";
        return TP_ERR_CONFIG;
    }
    if (dim == TP_DIM_TEMPERATURE && value <= 0.0) {
        snprintf(msg, msg_size, "'%s' is at or below absolute zero", text);
        *hint = "absolute temperatures take degC, degF or K, e.g. '21 degC'";
        return TP_ERR_CONFIG;
    }
    *si = value;
    return TP_OK;
}

tp_status tp_units_from_si(double si, const char *unit, tp_dim dim, double *out)
{
    double offset, scale;
    if (dim >= TP_DIM_COUNT)
        return TP_ERR_CONFIG;
    if (dim == TP_DIM_NONE || !unit || !*unit) {
        if (unit && strcmp(unit, "%") == 0) {
            *out = si * 100.0;
            return TP_OK;
        }
        *out = si;
        return TP_OK;
    }
    if (!plausible_unit(unit) || lookup(unit, dim, &offset, &scale) != 0)
        return TP_ERR_CONFIG;
    *out = dim == TP_DIM_INTERVAL ? si / scale : (si - offset) / scale;
    return TP_OK;
}

tp_status tp_units_unit_text(const char *text, char *unit, size_t size)
{
    double number;
    const char *u;
    size_t len;
    if (size == 0)
        return TP_ERR_CONFIG;
    unit[0] = '\0';
    if (!text || split_quantity(text, &number, &u) != 0)
        return TP_ERR_CONFIG;
    len = strlen(u);
    while (len > 0 && isspace((unsigned char)u[len - 1]))
        len--;
    if (len >= size)
        return TP_ERR_CONFIG;
    memcpy(unit, u, len);
    unit[len] = '\0';
    return TP_OK;
}

tp_status tp_units_select_db(tp_units_db db)
{
    if (db != TP_UNITS_DB_BUILTIN && db != TP_UNITS_DB_UDUNITS2)
        return TP_ERR_CONFIG;
    tp_units_shutdown();
    pthread_mutex_lock(&lock);
    db_wanted = db;
    pthread_mutex_unlock(&lock);
    return TP_OK;
}

void tp_units_shutdown(void)
{
    int i;
    pthread_mutex_lock(&lock);
    for (i = 0; i < TP_DIM_COUNT; i++) {
        ut_free(si_units[i]);
        si_units[i] = NULL;
    }
    if (sys)
        ut_free_system(sys);
    sys = NULL;
    db_bad_line = 0;
    cache_used = 0;
    pthread_mutex_unlock(&lock);
}

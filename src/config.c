/*
 * The config module: reads a vibrogate INI file and the --set overrides,
 * checks every value and builds the validated vg_config in canonical units
 * (meV, K, dimensionless).  Grammar, keys, defaults, limits and messages are
 * documented in docs/config.md; keep the two in step.
 *
 * The file is read whole first.  A reader then hands it to libinih one line
 * at a time, after checking the line itself (length, bytes, section header,
 * "key = value" shape), so libinih never truncates a line and the key
 * handler knows the line number (Debian's libinih is built without
 * INI_HANDLER_LINENO).  Checks of one line or one value run as the lines are
 * read, so the first mistake in file order is the one reported; checks of
 * the whole (missing parameters, grid and output size) run after the
 * overrides.  Every message is "FILE:LINE: what is wrong" or
 * "--set section.key: what is wrong", status VG_ECONFIG (VG_ENOMEM when
 * memory runs out).
 *
 * Called by the commands (src/cmd_*.c) through vg_config_load; the value
 * grammar is exposed as vg_config_parse_value for tests.
 */
#include <ctype.h>
#include <errno.h>
#include <math.h>
#include <stdbool.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include <ini.h>

#include "fmt.h"
#include "vg_config.h"
#include "vg_const.h"
#include "vg_grid.h"
#include "vg_metrics.h"

/* Documented limits (docs/config.md, "Limits"). */
#define CFG_LINE_MAX 4096              /* bytes per line, line terminator excluded */
#define CFG_FILE_MAX (1024 * 1024)     /* bytes per config file */
#define CFG_AXIS_MAX 10000000LL        /* values per parameter */
#define CFG_GRID_MAX 1e12              /* grid points in all */
#define CFG_NUM_MAX 128                /* characters in one number, plus one */
#define CFG_NAME_MAX 40                /* longest name compared for suggestions */
#define CFG_SHOW_MAX 80                /* bytes of user text quoted in a message */
#define CFG_TOL_MIN 1e-15
#define CFG_TOL_MAX 1e-3
#define CFG_TOL_DEFAULT 1e-12
#define CFG_MAX_BYTES_DEFAULT 4294967296.0 /* 4 GiB */
#define CFG_DIR_DEFAULT "vibrogate-out"

/* ------------------------------------------------------------------ */
/* Text spans: a pointer and a length into text that stays alive.     */

typedef struct {
    const char *s;
    size_t n;
} span;

typedef struct {
    span *item;
    size_t n;
} span_list;

/* Room for a quoted piece of user text in a message. */
typedef struct {
    char s[CFG_SHOW_MAX + 4];
} shown;

static span span_of(const char *s)
{
    span a = {s, strlen(s)};
    return a;
}

static span span_part(span a, size_t from, size_t n)
{
    span b = {a.s + from, n};
    return b;
}

static span span_tail(span a, size_t from)
{
    return span_part(a, from, a.n - from);
}

static span span_trim(span a)
{
    while (a.n > 0 && isspace((unsigned char)a.s[0])) {
        a.s++;
        a.n--;
    }
    while (a.n > 0 && isspace((unsigned char)a.s[a.n - 1]))
        a.n--;
    return a;
}

static int span_is(span a, const char *z)
{
    return a.n == strlen(z) && memcmp(a.s, z, a.n) == 0;
}

/* Offset of the first needle in a; a.n if there is none. */
static size_t span_find(span a, const char *needle)
{
    size_t k = strlen(needle);

    for (size_t i = 0; i + k <= a.n; i++)
        if (memcmp(a.s + i, needle, k) == 0)
            return i;
    return a.n;
}

/* The leading part of a up to the first white space. */
static span first_word(span a)
{
    size_t i = 0;

    while (i < a.n && !isspace((unsigned char)a.s[i]))
        i++;
    return span_part(a, 0, i);
}

/* a for a message: at most CFG_SHOW_MAX bytes, cut at a UTF-8 character
 * boundary and marked "..." when cut. */
static const char *show(span a, shown *b)
{
    size_t n = a.n;

    if (n > CFG_SHOW_MAX) {
        n = CFG_SHOW_MAX;
        while (n > 0 && ((unsigned char)a.s[n] & 0xC0) == 0x80)
            n--;
    }
    memcpy(b->s, a.s, n);
    strcpy(b->s + n, n < a.n ? "..." : "");
    return b->s;
}

static char *dup_span(span a)
{
    char *s = malloc(a.n + 1);

    if (s) {
        memcpy(s, a.s, a.n);
        s[a.n] = '\0';
    }
    return s;
}

static vg_status no_memory(vg_error *err)
{
    return vg_error_set(err, VG_ENOMEM, "out of memory");
}

/* Split a at every comma into trimmed (possibly empty) items. */
static vg_status split_commas(span a, span_list *l, vg_error *err)
{
    size_t n = 1, start = 0;

    for (size_t i = 0; i < a.n; i++)
        n += a.s[i] == ',';
    l->n = 0;
    l->item = malloc(n * sizeof *l->item);
    if (!l->item)
        return no_memory(err);
    for (size_t i = 0; i <= a.n; i++) {
        if (i < a.n && a.s[i] != ',')
            continue;
        l->item[l->n++] = span_trim(span_part(a, start, i - start));
        start = i + 1;
    }
    return VG_OK;
}

/* ------------------------------------------------------------------ */
/* Suggestions: the valid name nearest to a misspelt one.             */

static size_t min3(size_t a, size_t b, size_t c)
{
    size_t m = a < b ? a : b;
    return m < c ? m : c;
}

/* Optimal string alignment distance (Levenshtein distance plus adjacent
 * transpositions; Damerau 1964), ignoring case; SIZE_MAX for long names. */
static size_t edit_distance(span a, const char *b)
{
    size_t lb = strlen(b), d[CFG_NAME_MAX + 1][CFG_NAME_MAX + 1];

    if (a.n > CFG_NAME_MAX || lb > CFG_NAME_MAX)
        return SIZE_MAX;
    for (size_t i = 0; i <= a.n; i++)
        d[i][0] = i;
    for (size_t j = 0; j <= lb; j++)
        d[0][j] = j;
    for (size_t i = 1; i <= a.n; i++) {
        for (size_t j = 1; j <= lb; j++) {
            int ca = tolower((unsigned char)a.s[i - 1]), cb = tolower((unsigned char)b[j - 1]);
            d[i][j] = min3(d[i - 1][j] + 1, d[i][j - 1] + 1, d[i - 1][j - 1] + (ca != cb));
            if (i > 1 && j > 1 && ca == tolower((unsigned char)b[j - 2]) &&
                cb == tolower((unsigned char)a.s[i - 2]) && d[i - 2][j - 2] + 1 < d[i][j])
                d[i][j] = d[i - 2][j - 2] + 1;
        }
    }
    return d[a.n][lb];
}

/* The name closest to word, if within 1 + len/4 edits or if word (three
 * characters or more) starts it; NULL if none is close. */
static const char *nearest(span word, const char *const *names, size_t n)
{
    const char *best = NULL;
    size_t best_d = 1 + word.n / 4 + 1;

    for (size_t i = 0; i < n; i++) {
        size_t d = edit_distance(word, names[i]);
        if (word.n >= 3 && strncmp(names[i], word.s, word.n) == 0)
            d = 1;
        if (d < best_d) {
            best = names[i];
            best_d = d;
        }
    }
    return best;
}

/* "did you mean 'X'?" for the name nearest word, else "allowed: a, b";
 * open and close wrap each name ("[", "]" for sections). */
static const char *hint(char *buf, size_t size, span word, const char *const *names,
                        size_t n, const char *open, const char *close)
{
    const char *near = nearest(word, names, n);
    size_t used;

    if (near) {
        snprintf(buf, size, "did you mean '%s%s%s'?", open, near, close);
        return buf;
    }
    used = (size_t)snprintf(buf, size, "allowed: ");
    for (size_t i = 0; i < n && used < size; i++)
        used += (size_t)snprintf(buf + used, size - used, "%s%s%s%s", i ? ", " : "", open,
                                 names[i], close);
    return buf;
}

/* ------------------------------------------------------------------ */
/* Numbers.                                                           */

static size_t skip_digits(span a, size_t i, size_t *count)
{
    while (i < a.n && isdigit((unsigned char)a.s[i])) {
        i++;
        (*count)++;
    }
    return i;
}

/* Length of the decimal number that starts a: an optional sign, digits with
 * an optional decimal point, an optional exponent; 0 if a does not start
 * with one.  (strtod alone would also take hex, inf and nan.) */
static size_t lex_number(span a)
{
    size_t i = 0, digits = 0, exp_digits = 0, j;

    if (i < a.n && (a.s[i] == '+' || a.s[i] == '-'))
        i++;
    i = skip_digits(a, i, &digits);
    if (i < a.n && a.s[i] == '.')
        i = skip_digits(a, i + 1, &digits);
    if (digits == 0)
        return 0;
    if (i < a.n && (a.s[i] == 'e' || a.s[i] == 'E')) {
        j = i + 1;
        if (j < a.n && (a.s[j] == '+' || a.s[j] == '-'))
            j++;
        j = skip_digits(a, j, &exp_digits);
        if (exp_digits > 0)
            i = j;
    }
    return i;
}

/* "0x..." after an optional sign. */
static int looks_hex(span a, size_t len)
{
    size_t sign = a.n > 0 && (a.s[0] == '+' || a.s[0] == '-');

    return len == sign + 1 && a.s[sign] == '0' && len < a.n &&
           (a.s[len] == 'x' || a.s[len] == 'X');
}

/* Parse the decimal number that starts a (for key): *x its value, *num its
 * text, *rest the trimmed text after it (a unit, or nothing).  Errors: a
 * missing or malformed number, hex, inf, nan, overflow, underflow. */
static vg_status parse_number(span a, const char *key, double *x, span *num, span *rest,
                              vg_error *err)
{
    size_t len = lex_number(a);
    char buf[CFG_NUM_MAX], *end;
    shown b;

    if (looks_hex(a, len))
        return vg_error_set(err, VG_ECONFIG, "hex number '%s' for '%s' is not allowed "
                            "(write a decimal number)", show(first_word(a), &b), key);
    if (len == 0 || (len < a.n && !isspace((unsigned char)a.s[len]) &&
                     !isalpha((unsigned char)a.s[len])))
        return vg_error_set(err, VG_ECONFIG, "bad number '%s' for '%s' (write a decimal "
                            "number such as 120, -0.5 or 1.5e-3)", show(first_word(a), &b), key);
    if (len >= sizeof buf)
        return vg_error_set(err, VG_ECONFIG, "number '%s' for '%s' is longer than %d characters",
                            show(first_word(a), &b), key, CFG_NUM_MAX - 1);
    memcpy(buf, a.s, len);
    buf[len] = '\0';
    errno = 0;
    *x = strtod(buf, &end);
    if (end != buf + len || errno == ERANGE || !isfinite(*x))
        return vg_error_set(err, VG_ECONFIG, "number '%s' for '%s' is out of the range of "
                            "double precision", buf, key);
    *num = span_part(a, 0, len);
    *rest = span_trim(span_tail(a, len));
    return VG_OK;
}

/* ------------------------------------------------------------------ */
/* Parameters, units and the value grammar.                           */

typedef enum { KIND_NONE, KIND_ENERGY, KIND_TEMPERATURE } unit_kind;
typedef enum { SIGN_ANY, SIGN_POSITIVE, SIGN_NONNEGATIVE } sign_rule;

typedef struct {
    vg_param_info info;
    unit_kind kind;
    sign_rule sign;
    double lo, hi;      /* accepted domain, canonical units */
    int has_default;
    double def;         /* default, canonical units */
} param_spec;

/* The domain [lo, hi] is the range the rate kernel is tested for
 * (docs/config.md, "Accepted ranges"). */
static const param_spec params[VG_NPARAM] = {
    [VG_P_GAP] = {{"gap", "meV", "gap_meV", "donor-acceptor energy gap", "epsilon"},
                  KIND_ENERGY, SIGN_ANY, -3000.0, 3000.0, 0, 0.0},
    [VG_P_REORG] = {{"reorganization", "meV", "reorganization_meV", "reorganization energy",
                     "lambda"}, KIND_ENERGY, SIGN_POSITIVE, 0.1, 3000.0, 0, 0.0},
    [VG_P_COUPLING] = {{"electronic_coupling", "meV", "electronic_coupling_meV",
                        "electronic coupling", "V"}, KIND_ENERGY, SIGN_NONNEGATIVE, 0.0, 1000.0,
                       1, 1.0},
    [VG_P_HUANG_RHYS] = {{"huang_rhys", "1", "huang_rhys", "Huang-Rhys factor", "S"},
                         KIND_NONE, SIGN_NONNEGATIVE, 0.0, 50.0, 0, 0.0},
    [VG_P_MODE] = {{"mode", "meV", "mode_meV", "vibrational mode quantum", "hbar*omega"},
                   KIND_ENERGY, SIGN_POSITIVE, 1.0, 1000.0, 0, 0.0},
    [VG_P_TEMPERATURE] = {{"temperature", "K", "temperature_K", "temperature", "T"},
                          KIND_TEMPERATURE, SIGN_POSITIVE, 1.0, 5000.0, 1, 298.15},
};

typedef struct {
    const char *name;
    unit_kind kind;
    double to_canonical; /* canonical units per unit */
} unit_def;

/* Conversion factors from vg_const.h (CODATA 2018, thermochemical calorie). */
static const unit_def units[] = {
    {"meV", KIND_ENERGY, 1.0},
    {"eV", KIND_ENERGY, VG_MEV_PER_EV},
    {"cm-1", KIND_ENERGY, VG_MEV_PER_CM1},
    {"cm^-1", KIND_ENERGY, VG_MEV_PER_CM1},
    {"kJ/mol", KIND_ENERGY, VG_MEV_PER_KJMOL},
    {"kcal/mol", KIND_ENERGY, VG_MEV_PER_KCALMOL},
    {"K", KIND_TEMPERATURE, 1.0},
};

typedef struct {
    const char *allowed; /* the units, for messages */
    const char *example; /* a range, for messages */
} kind_info;

static const kind_info kinds[] = {
    [KIND_NONE] = {"none", "0.001 .. 1, 31 points, log"},
    [KIND_ENERGY] = {"meV, eV, cm-1, cm^-1, kJ/mol or kcal/mol", "0 .. 600 meV, 241 points"},
    [KIND_TEMPERATURE] = {"K", "250 .. 350 K, 5 points"},
};

/* One number of a value, as written. */
typedef struct {
    span num;             /* the number's text */
    double x;             /* its value in unit */
    const unit_def *unit; /* its own or the trailing unit; NULL if none */
} item;

const vg_param_info *vg_param_get(vg_param_id id)
{
    if ((int)id < 0 || id >= VG_NPARAM)
        return NULL;
    return &params[id].info;
}

static const unit_def *find_unit(span name)
{
    for (size_t i = 0; i < sizeof units / sizeof units[0]; i++)
        if (span_is(name, units[i].name))
            return &units[i];
    return NULL;
}

/* The item's value in canonical units (+0 for a negative zero). */
static double item_value(const item *it)
{
    double v = it->x * (it->unit ? it->unit->to_canonical : 1.0);
    return v == 0.0 ? 0.0 : v;
}

/* "-5 meV", or "-0.005 eV = -5 meV" when the unit converts. */
static const char *describe(const param_spec *ps, const item *it, char *buf, size_t size)
{
    int n = (int)it->num.n; /* < CFG_NUM_MAX, checked by parse_number */

    if (!it->unit)
        snprintf(buf, size, "%.*s", n, it->num.s);
    else if (it->unit->to_canonical == 1.0)
        snprintf(buf, size, "%.*s %s", n, it->num.s, it->unit->name);
    else
        snprintf(buf, size, "%.*s %s = %.6g %s", n, it->num.s, it->unit->name, item_value(it),
                 ps->info.unit);
    return buf;
}

/* One number with an optional unit of a recognised spelling. */
static vg_status parse_item(const param_spec *ps, span a, item *it, vg_error *err)
{
    span rest;
    shown b;
    vg_status st = parse_number(a, ps->info.key, &it->x, &it->num, &rest, err);

    it->unit = NULL;
    if (st != VG_OK || rest.n == 0)
        return st;
    if (ps->kind == KIND_NONE)
        return vg_error_set(err, VG_ECONFIG, "'%s' is dimensionless and takes no unit (got '%s')",
                            ps->info.key, show(a, &b));
    it->unit = find_unit(rest);
    if (!it->unit)
        return vg_error_set(err, VG_ECONFIG, "unknown unit '%s' for '%s' (allowed: %s)",
                            show(rest, &b), ps->info.key, kinds[ps->kind].allowed);
    return VG_OK;
}

/* Give unit-less items the unit of the last item; every item must then
 * carry a unit of the parameter's kind (or none, for a dimensionless one). */
static vg_status resolve_units(const param_spec *ps, item *it, size_t n, vg_error *err)
{
    const unit_def *trailing = it[n - 1].unit;
    char got[2 * CFG_NUM_MAX];

    for (size_t i = 0; i < n; i++) {
        if (!it[i].unit)
            it[i].unit = trailing;
        if (ps->kind == KIND_NONE)
            continue;
        if (!it[i].unit)
            return vg_error_set(err, VG_ECONFIG, "'%s' needs a unit: %s (got '%s')", ps->info.key,
                                kinds[ps->kind].allowed, describe(ps, &it[i], got, sizeof got));
        if (it[i].unit->kind != ps->kind)
            return vg_error_set(err, VG_ECONFIG, "'%s' takes a unit of %s, not '%s' (got '%s')",
                                ps->info.key, kinds[ps->kind].allowed, it[i].unit->name,
                                describe(ps, &it[i], got, sizeof got));
    }
    return VG_OK;
}

/* The sign rule and the accepted domain of the parameter. */
static vg_status check_item(const param_spec *ps, const item *it, vg_error *err)
{
    const char *sp = ps->kind == KIND_NONE ? "" : " ";
    const char *unit = ps->kind == KIND_NONE ? "" : ps->info.unit;
    double v = item_value(it);
    char got[2 * CFG_NUM_MAX];

    if (ps->sign == SIGN_POSITIVE && !(v > 0.0))
        return vg_error_set(err, VG_ECONFIG, "'%s' must be > 0%s%s (got %s)", ps->info.key, sp,
                            unit, describe(ps, it, got, sizeof got));
    if (ps->sign == SIGN_NONNEGATIVE && v < 0.0)
        return vg_error_set(err, VG_ECONFIG, "'%s' must be >= 0%s%s (got %s)", ps->info.key, sp,
                            unit, describe(ps, it, got, sizeof got));
    if (v < ps->lo || v > ps->hi)
        return vg_error_set(err, VG_ECONFIG, "'%s' must be between %g and %g%s%s (got %s)",
                            ps->info.key, ps->lo, ps->hi, sp, unit,
                            describe(ps, it, got, sizeof got));
    return VG_OK;
}

static vg_status check_items(const param_spec *ps, const item *it, size_t n, vg_error *err)
{
    vg_status st = VG_OK;

    for (size_t i = 0; st == VG_OK && i < n; i++)
        st = check_item(ps, &it[i], err);
    return st;
}

static int strictly_monotonic(const double *v, size_t n)
{
    int up = n > 1 && v[1] > v[0];

    for (size_t i = 1; i < n; i++)
        if (up ? !(v[i] > v[i - 1]) : !(v[i] < v[i - 1]))
            return 0;
    return 1;
}

/* Hand the values over to p; the unit the user wrote is the trailing one. */
static void store_values(vg_param *p, double *v, size_t n, int log_spacing,
                         const unit_def *unit)
{
    p->v = v;
    p->n = n;
    p->log_spacing = log_spacing;
    snprintf(p->user_unit, sizeof p->user_unit, "%s", unit ? unit->name : "");
}

static vg_status parse_list_items(const param_spec *ps, const span_list *l, item *it,
                                  vg_error *err)
{
    vg_status st = VG_OK;
    shown b;

    for (size_t i = 0; st == VG_OK && i < l->n; i++) {
        if (l->item[i].n == 0)
            return vg_error_set(err, VG_ECONFIG, "empty item in the list of '%s'", ps->info.key);
        if (span_find(l->item[i], "..") < l->item[i].n)
            return vg_error_set(err, VG_ECONFIG, "a range of '%s' must come first and stand "
                                "alone, as in '%s' (got '%s')", ps->info.key,
                                kinds[ps->kind].example, show(l->item[i], &b));
        st = parse_item(ps, l->item[i], &it[i], err);
    }
    if (st == VG_OK)
        st = resolve_units(ps, it, l->n, err);
    if (st == VG_OK)
        st = check_items(ps, it, l->n, err);
    return st;
}

/* "a, b, c UNIT": one value per item. */
static vg_status parse_list(const param_spec *ps, const span_list *l, span text, vg_param *p,
                            vg_error *err)
{
    item *it = malloc(l->n * sizeof *it);
    double *v = NULL;
    vg_status st;
    shown b;

    if (!it)
        return no_memory(err);
    st = parse_list_items(ps, l, it, err);
    if (st == VG_OK && !(v = malloc(l->n * sizeof *v)))
        st = no_memory(err);
    for (size_t i = 0; st == VG_OK && i < l->n; i++)
        v[i] = item_value(&it[i]);
    if (st == VG_OK && !strictly_monotonic(v, l->n))
        st = vg_error_set(err, VG_ECONFIG, "the values of '%s' must all differ and be in "
                          "increasing or decreasing order (got '%s')", ps->info.key,
                          show(text, &b));
    if (st == VG_OK)
        store_values(p, v, l->n, 0, it[l->n - 1].unit);
    else
        free(v);
    free(it);
    return st;
}

typedef struct {
    item end[2];       /* start, stop */
    long long points;  /* number of values, ends included */
    int log_spacing;   /* 1: geometric, 0: linear */
} range_spec;

/* "START .. STOP UNIT" (a unit on each end is allowed too). */
static vg_status parse_range_ends(const param_spec *ps, span a, range_spec *r, vg_error *err)
{
    size_t dots = span_find(a, "..");
    span lo = span_trim(span_part(a, 0, dots)), hi = span_trim(span_tail(a, dots + 2));
    vg_status st;
    shown b;

    if (lo.n == 0 || hi.n == 0 || span_find(hi, "..") < hi.n)
        return vg_error_set(err, VG_ECONFIG, "a range of '%s' needs one start and one stop, as "
                            "in '%s' (got '%s')", ps->info.key, kinds[ps->kind].example,
                            show(a, &b));
    st = parse_item(ps, lo, &r->end[0], err);
    if (st == VG_OK)
        st = parse_item(ps, hi, &r->end[1], err);
    if (st == VG_OK)
        st = resolve_units(ps, r->end, 2, err);
    return st;
}

/* "N points" (or "1 point"). */
static vg_status parse_count(const param_spec *ps, span a, long long *points, vg_error *err)
{
    size_t sign = a.n > 0 && (a.s[0] == '+' || a.s[0] == '-'), digits = 0;
    size_t end = skip_digits(a, sign, &digits);
    span word = span_trim(span_tail(a, end));
    char buf[CFG_NUM_MAX];
    shown b;

    if (digits == 0 || end >= sizeof buf || !(span_is(word, "points") || span_is(word, "point")))
        return vg_error_set(err, VG_ECONFIG, "expected 'N points' after the range of '%s' "
                            "(got '%s')", ps->info.key, show(a, &b));
    memcpy(buf, a.s, end);
    buf[end] = '\0';
    errno = 0;
    *points = strtoll(buf, NULL, 10);
    if (errno == ERANGE || *points > CFG_AXIS_MAX)
        return vg_error_set(err, VG_ECONFIG, "'%s' has %s points, more than the limit of %lld "
                            "per parameter", ps->info.key, buf, CFG_AXIS_MAX);
    if (*points < 1)
        return vg_error_set(err, VG_ECONFIG, "a range of '%s' needs at least 1 point (got %s "
                            "points)",
                            ps->info.key, buf);
    return VG_OK;
}

/* ", N points[, log | , linear]" after the ends. */
static vg_status parse_range_tail(const param_spec *ps, const span_list *l, range_spec *r,
                                  vg_error *err)
{
    size_t bad = 0;
    vg_status st;
    shown b;

    if (l->n < 2)
        return vg_error_set(err, VG_ECONFIG, "a range of '%s' needs a number of points, as in "
                            "'%s'", ps->info.key, kinds[ps->kind].example);
    st = parse_count(ps, l->item[1], &r->points, err);
    r->log_spacing = l->n > 2 && span_is(l->item[2], "log");
    if (st == VG_OK && l->n > 2 && !r->log_spacing && !span_is(l->item[2], "linear"))
        bad = 2;
    else if (st == VG_OK && l->n > 3)
        bad = 3;
    if (bad)
        st = vg_error_set(err, VG_ECONFIG, "unexpected '%s' after the range of '%s' (allowed: "
                          "'log' or 'linear')", show(l->item[bad], &b), ps->info.key);
    return st;
}

/* Equal ends, ends of a log range, then each end against the domain. */
static vg_status check_range(const param_spec *ps, const range_spec *r, vg_error *err)
{
    double a = item_value(&r->end[0]), b = item_value(&r->end[1]);
    char ga[2 * CFG_NUM_MAX], gb[2 * CFG_NUM_MAX];

    describe(ps, &r->end[0], ga, sizeof ga);
    describe(ps, &r->end[1], gb, sizeof gb);
    if (a == b && r->points > 1)
        return vg_error_set(err, VG_ECONFIG, "a range of '%s' with %lld points needs two "
                            "different ends (got %s .. %s)", ps->info.key, r->points, ga, gb);
    if (a != b && r->points == 1)
        return vg_error_set(err, VG_ECONFIG, "a range of '%s' with 1 point needs equal ends "
                            "(got %s .. %s); give a single value instead", ps->info.key, ga, gb);
    if (r->log_spacing && !(a > 0.0 && b > 0.0))
        return vg_error_set(err, VG_ECONFIG, "a log range of '%s' needs both ends > 0 "
                            "(got %s .. %s)", ps->info.key, ga, gb);
    return check_items(ps, r->end, 2, err);
}

/* n values from a to b, ends exact: linear a + (b - a) t or geometric
 * a (b/a)^t with t = i/(n-1), evaluated in long double and rounded once. */
static void fill_range(double *v, size_t n, double a, double b, int log_spacing)
{
    v[0] = a;
    for (size_t i = 1; i + 1 < n; i++) {
        long double t = (long double)i / (long double)(n - 1);
        if (log_spacing)
            v[i] = (double)((long double)a * powl((long double)b / (long double)a, t));
        else
            v[i] = (double)((long double)a + ((long double)b - (long double)a) * t);
    }
    if (n > 1)
        v[n - 1] = b;
}

/* "START .. STOP UNIT, N points[, log]". */
static vg_status parse_range(const param_spec *ps, const span_list *l, span text, vg_param *p,
                             vg_error *err)
{
    range_spec r;
    double *v;
    size_t n;
    shown b;
    vg_status st = parse_range_ends(ps, l->item[0], &r, err);

    if (st == VG_OK)
        st = parse_range_tail(ps, l, &r, err);
    if (st == VG_OK)
        st = check_range(ps, &r, err);
    if (st != VG_OK)
        return st;
    n = (size_t)r.points;
    v = malloc(n * sizeof *v);
    if (!v)
        return no_memory(err);
    fill_range(v, n, item_value(&r.end[0]), item_value(&r.end[1]), r.log_spacing);
    if (!strictly_monotonic(v, n)) {
        free(v);
        return vg_error_set(err, VG_ECONFIG, "the points of '%s' are too close to tell apart in "
                            "double precision (got '%s')", ps->info.key, show(text, &b));
    }
    store_values(p, v, n, r.log_spacing, r.end[1].unit);
    return VG_OK;
}

vg_status vg_config_parse_value(vg_param_id id, const char *text, vg_param *p, vg_error *err)
{
    span_list l = {NULL, 0};
    span a = span_trim(span_of(text ? text : ""));
    vg_status st;

    memset(p, 0, sizeof *p);
    if ((int)id < 0 || id >= VG_NPARAM)
        return vg_error_set(err, VG_ECONFIG, "unknown parameter number %d", (int)id);
    if (a.n == 0)
        return vg_error_set(err, VG_ECONFIG, "'%s' has no value", params[id].info.key);
    st = split_commas(a, &l, err);
    if (st == VG_OK && span_find(l.item[0], "..") < l.item[0].n)
        st = parse_range(&params[id], &l, a, p, err);
    else if (st == VG_OK)
        st = parse_list(&params[id], &l, a, p, err);
    free(l.item);
    return st;
}

/* ------------------------------------------------------------------ */
/* The other keys.                                                    */

static vg_status set_text(char **field, const char *value, vg_error *err)
{
    char *s = dup_span(span_of(value));

    if (!s)
        return no_memory(err);
    free(*field);
    *field = s;
    return VG_OK;
}

static vg_status set_title(vg_config *cfg, int arg, const char *value, int line, vg_error *err)
{
    (void)arg;
    (void)line;
    return set_text(&cfg->title, value, err);
}

static vg_status set_notes(vg_config *cfg, int arg, const char *value, int line, vg_error *err)
{
    (void)arg;
    (void)line;
    return set_text(&cfg->notes, value, err);
}

static vg_status set_directory(vg_config *cfg, int arg, const char *value, int line,
                               vg_error *err)
{
    (void)arg;
    (void)line;
    if (!*value)
        return vg_error_set(err, VG_ECONFIG, "'directory' needs a directory name");
    return set_text(&cfg->out_dir, value, err);
}

static vg_status set_param(vg_config *cfg, int arg, const char *value, int line, vg_error *err)
{
    vg_param p;
    vg_status st = vg_config_parse_value((vg_param_id)arg, value, &p, err);

    if (st != VG_OK)
        return st;
    p.line = line;
    free(cfg->param[arg].v);
    cfg->param[arg] = p;
    return VG_OK;
}

static vg_status set_stats(vg_config *cfg, int arg, const char *value, int line, vg_error *err)
{
    (void)arg;
    (void)line;
    if (strcmp(value, "thermal") == 0)
        cfg->stats = VG_STATS_THERMAL;
    else if (strcmp(value, "frozen") == 0)
        cfg->stats = VG_STATS_FROZEN;
    else
        return vg_error_set(err, VG_ECONFIG, "'mode_statistics' must be 'thermal' or 'frozen' "
                            "(got '%.*s')", CFG_SHOW_MAX, value);
    return VG_OK;
}

/* A number with the unit rules of key: units NULL for a plain number. */
static vg_status parse_scalar(const char *key, const char *value, double *x, span *num,
                              span *unit, vg_error *err)
{
    span a = span_of(value);
    shown b;

    if (a.n == 0)
        return vg_error_set(err, VG_ECONFIG, "'%s' has no value", key);
    if (span_find(a, ",") < a.n)
        return vg_error_set(err, VG_ECONFIG, "'%s' takes a single value (got '%s')", key,
                            show(a, &b));
    return parse_number(a, key, x, num, unit, err);
}

static vg_status set_tolerance(vg_config *cfg, int arg, const char *value, int line,
                               vg_error *err)
{
    span num, unit;
    shown b;
    double x;
    vg_status st = parse_scalar("tolerance", value, &x, &num, &unit, err);

    (void)arg;
    (void)line;
    if (st == VG_OK && unit.n > 0)
        st = vg_error_set(err, VG_ECONFIG, "'tolerance' is dimensionless and takes no unit "
                          "(got '%s')", show(span_of(value), &b));
    if (st == VG_OK && !(x >= CFG_TOL_MIN && x <= CFG_TOL_MAX))
        st = vg_error_set(err, VG_ECONFIG, "'tolerance' must be between %g and %g (got %s)",
                          CFG_TOL_MIN, CFG_TOL_MAX, show(num, &b));
    if (st == VG_OK)
        cfg->tolerance = x;
    return st;
}

static const struct {
    const char *name;
    double bytes;
} size_units[] = {
    {"bytes", 1.0}, {"B", 1.0}, {"kB", 1e3}, {"MB", 1e6}, {"GB", 1e9}, {"TB", 1e12},
    {"KiB", 1024.0}, {"MiB", 1048576.0}, {"GiB", 1073741824.0}, {"TiB", 1099511627776.0},
};

#define SIZE_UNITS "bytes, B, kB, MB, GB, TB, KiB, MiB, GiB or TiB"

static vg_status set_max_size(vg_config *cfg, int arg, const char *value, int line,
                              vg_error *err)
{
    span num, unit;
    shown b;
    double x;
    size_t i;
    vg_status st = parse_scalar("max_size", value, &x, &num, &unit, err);

    (void)arg;
    (void)line;
    if (st != VG_OK)
        return st;
    if (unit.n == 0)
        return vg_error_set(err, VG_ECONFIG, "'max_size' needs a unit: " SIZE_UNITS
                            " (got '%s')", show(num, &b));
    for (i = 0; i < sizeof size_units / sizeof size_units[0]; i++)
        if (span_is(unit, size_units[i].name))
            break;
    if (i == sizeof size_units / sizeof size_units[0])
        return vg_error_set(err, VG_ECONFIG, "unknown unit '%s' for 'max_size' (allowed: "
                            SIZE_UNITS ")", show(unit, &b));
    x *= size_units[i].bytes;
    if (!(x >= 1.0) || !isfinite(x))
        return vg_error_set(err, VG_ECONFIG, "'max_size' must be at least 1 byte (got '%s')",
                            show(span_of(value), &b));
    cfg->max_bytes = x;
    return VG_OK;
}

/* A comma list of names from names[0..n): on[i] = 1 for each one listed. */
static vg_status parse_names(const char *key, const char *what, const char *value,
                             const char *const *names, size_t n, int *on, vg_error *err)
{
    span_list l;
    size_t i, j;
    char h[256];
    shown b;
    vg_status st = split_commas(span_of(value), &l, err);

    for (i = 0; st == VG_OK && i < l.n; i++) {
        for (j = 0; j < n && !span_is(l.item[i], names[j]); j++)
            ;
        if (l.item[i].n == 0)
            st = vg_error_set(err, VG_ECONFIG, "empty item in the list of '%s' (%s)", key,
                              hint(h, sizeof h, l.item[i], names, n, "", ""));
        else if (j == n)
            st = vg_error_set(err, VG_ECONFIG, "unknown %s '%s' in '%s' (%s)", what,
                              show(l.item[i], &b), key,
                              hint(h, sizeof h, l.item[i], names, n, "", ""));
        else
            on[j] = 1;
    }
    free(l.item);
    return st;
}

static vg_status set_data(vg_config *cfg, int arg, const char *value, int line, vg_error *err)
{
    static const char *const names[] = {"netcdf", "csv"};
    int on[2] = {0, 0};
    vg_status st = parse_names("data", "data format", value, names, 2, on, err);

    (void)arg;
    (void)line;
    if (st == VG_OK)
        cfg->formats = (on[0] ? VG_FMT_NETCDF : 0u) | (on[1] ? VG_FMT_CSV : 0u);
    return st;
}

static vg_status set_metrics(vg_config *cfg, int arg, const char *value, int line,
                             vg_error *err)
{
    const char *names[VG_N_METRICS];
    int on[VG_N_METRICS] = {0};
    vg_status st;

    (void)arg;
    (void)line;
    for (int m = 0; m < VG_N_METRICS; m++)
        names[m] = vg_metric_get((vg_metric_id)m)->name;
    st = parse_names("metrics", "metric", value, names, VG_N_METRICS, on, err);
    if (st == VG_OK)
        memcpy(cfg->metric_on, on, sizeof on);
    return st;
}

/* ------------------------------------------------------------------ */
/* The table of keys.                                                 */

typedef enum { SEC_SCENARIO, SEC_PARAMETERS, SEC_MODEL, SEC_OUTPUT, N_SECTIONS } section_id;

static const char *const section_names[N_SECTIONS] = {"scenario", "parameters", "model",
                                                       "output"};

typedef vg_status (*key_setter)(vg_config *cfg, int arg, const char *value, int line,
                                vg_error *err);

typedef struct {
    section_id section;
    const char *key;
    key_setter set;
    int arg;
} key_def;

static const key_def keys[] = {
    {SEC_SCENARIO, "title", set_title, 0},
    {SEC_SCENARIO, "notes", set_notes, 0},
    {SEC_PARAMETERS, "gap", set_param, VG_P_GAP},
    {SEC_PARAMETERS, "reorganization", set_param, VG_P_REORG},
    {SEC_PARAMETERS, "electronic_coupling", set_param, VG_P_COUPLING},
    {SEC_PARAMETERS, "huang_rhys", set_param, VG_P_HUANG_RHYS},
    {SEC_PARAMETERS, "mode", set_param, VG_P_MODE},
    {SEC_PARAMETERS, "temperature", set_param, VG_P_TEMPERATURE},
    {SEC_MODEL, "mode_statistics", set_stats, 0},
    {SEC_MODEL, "tolerance", set_tolerance, 0},
    {SEC_OUTPUT, "directory", set_directory, 0},
    {SEC_OUTPUT, "data", set_data, 0},
    {SEC_OUTPUT, "metrics", set_metrics, 0},
    {SEC_OUTPUT, "max_size", set_max_size, 0},
};

#define N_KEYS (sizeof keys / sizeof keys[0])

/* Index of section name, or -1. */
static int find_section(span name)
{
    for (int s = 0; s < N_SECTIONS; s++)
        if (span_is(name, section_names[s]))
            return s;
    return -1;
}

/* Index of key name in section sec (any section if sec < 0), or -1. */
static int find_key(int sec, span name)
{
    for (size_t k = 0; k < N_KEYS; k++)
        if ((sec < 0 || (int)keys[k].section == sec) && span_is(name, keys[k].key))
            return (int)k;
    return -1;
}

static vg_status unknown_section(span name, vg_error *err)
{
    char h[256];
    shown b;

    return vg_error_set(err, VG_ECONFIG, "unknown section '[%s]' (%s)", show(name, &b),
                        hint(h, sizeof h, name, section_names, N_SECTIONS, "[", "]"));
}

static vg_status unknown_key(int sec, span name, vg_error *err)
{
    const char *names[N_KEYS];
    size_t n = 0;
    int home = find_key(-1, name);
    char h[256];
    shown b;

    if (home >= 0 && sec < 0)
        return vg_error_set(err, VG_ECONFIG, "key '%s' comes before any section header (it "
                            "belongs in [%s])", show(name, &b), section_names[keys[home].section]);
    if (sec < 0)
        return vg_error_set(err, VG_ECONFIG, "key '%s' comes before any section header (start "
                            "with [scenario], [parameters], [model] or [output])", show(name, &b));
    if (home >= 0)
        return vg_error_set(err, VG_ECONFIG, "unknown key '%s' in [%s] (it belongs in [%s])",
                            show(name, &b), section_names[sec], section_names[keys[home].section]);
    for (size_t k = 0; k < N_KEYS; k++)
        if ((int)keys[k].section == sec)
            names[n++] = keys[k].key;
    return vg_error_set(err, VG_ECONFIG, "unknown key '%s' in [%s] (%s)", show(name, &b),
                        section_names[sec], hint(h, sizeof h, name, names, n, "", ""));
}

/* ------------------------------------------------------------------ */
/* Reading the file, line by line.                                    */

typedef struct {
    vg_config *cfg;
    vg_error *err;
    const char *path;
    const char *pos, *end;          /* the unread part of cfg->text */
    int line;                       /* the line last handed to libinih */
    int section_line[N_SECTIONS];   /* line of each section header, 0 if none */
    int key_line[N_KEYS];           /* line that set each key; 0 none, -1 --set */
    vg_status status;               /* first failure */
} loader;

/* Length of the well-formed UTF-8 sequence at s[0..left), 0 if ill-formed
 * (The Unicode Standard, Table 3-7: no overlong forms, no surrogates,
 * nothing above U+10FFFF). */
static size_t utf8_length(const unsigned char *s, size_t left)
{
    unsigned lo = 0x80, hi = 0xBF;
    size_t n;

    if (s[0] < 0x80)
        return 1;
    if (s[0] >= 0xC2 && s[0] <= 0xDF)
        n = 2;
    else if (s[0] >= 0xE0 && s[0] <= 0xEF)
        n = 3, lo = s[0] == 0xE0 ? 0xA0 : lo, hi = s[0] == 0xED ? 0x9F : hi;
    else if (s[0] >= 0xF0 && s[0] <= 0xF4)
        n = 4, lo = s[0] == 0xF0 ? 0x90 : lo, hi = s[0] == 0xF4 ? 0x8F : hi;
    else
        return 0;
    if (left < n || s[1] < lo || s[1] > hi)
        return 0;
    for (size_t k = 2; k < n; k++)
        if (s[k] < 0x80 || s[k] > 0xBF)
            return 0;
    return n;
}

/* Only UTF-8 text and tabs: no NUL, no other control character. */
static vg_status check_bytes(span a, vg_error *err)
{
    const unsigned char *s = (const unsigned char *)a.s;
    size_t i = 0, n;

    while (i < a.n) {
        if (s[i] == 0)
            return vg_error_set(err, VG_ECONFIG, "NUL byte at byte %zu (config files must be "
                                "UTF-8 text)", i + 1);
        if ((s[i] < 0x20 && s[i] != '\t') || s[i] == 0x7F)
            return vg_error_set(err, VG_ECONFIG, "control character 0x%02x at byte %zu (only "
                                "UTF-8 text and tabs are allowed)", s[i], i + 1);
        n = utf8_length(s + i, a.n - i);
        if (n == 0)
            return vg_error_set(err, VG_ECONFIG, "invalid UTF-8 at byte %zu (config files must "
                                "be UTF-8 text)", i + 1);
        i += n;
    }
    return VG_OK;
}

/* "[name]", optionally followed by a comment; a known section, once. */
static vg_status check_header(loader *ld, span t)
{
    size_t close = span_find(t, "]");
    span name, after;
    int sec;
    shown b;

    if (close == t.n)
        return vg_error_set(ld->err, VG_ECONFIG, "section header '%s' has no closing ']'",
                            show(t, &b));
    name = span_part(t, 1, close - 1);
    after = span_trim(span_tail(t, close + 1));
    if (after.n > 0 && after.s[0] != ';' && after.s[0] != '#')
        return vg_error_set(ld->err, VG_ECONFIG, "unexpected '%s' after the section header "
                            "(only a comment may follow)", show(after, &b));
    sec = find_section(name);
    if (sec < 0)
        return unknown_section(name, ld->err);
    if (ld->section_line[sec])
        return vg_error_set(ld->err, VG_ECONFIG, "section [%s] appears twice (first at line %d)",
                            section_names[sec], ld->section_line[sec]);
    ld->section_line[sec] = ld->line;
    return VG_OK;
}

/* "key = value": an '=' before any ':' and before an inline comment (a ';'
 * or '#' after white space), the same scan libinih makes. */
static vg_status check_pair(span t, vg_error *err)
{
    int was_space = 0;
    shown b;

    for (size_t i = 0; i < t.n; i++) {
        if (t.s[i] == '=')
            return VG_OK;
        if (t.s[i] == ':')
            return vg_error_set(err, VG_ECONFIG, "expected '=' between key and value, not ':' "
                                "(got '%s')", show(t, &b));
        if (was_space && (t.s[i] == ';' || t.s[i] == '#'))
            break;
        was_space = isspace((unsigned char)t.s[i]);
    }
    return vg_error_set(err, VG_ECONFIG, "expected 'key = value', a '[section]' header or a "
                        "comment (got '%s')", show(t, &b));
}

static vg_status check_line(loader *ld, span line)
{
    span t = span_trim(line);
    vg_status st;

    if (line.n > CFG_LINE_MAX)
        return vg_error_set(ld->err, VG_ECONFIG, "line is %zu bytes long, the limit is %d bytes",
                            line.n, CFG_LINE_MAX);
    st = check_bytes(line, ld->err);
    if (st != VG_OK || t.n == 0 || t.s[0] == ';' || t.s[0] == '#')
        return st;
    if (t.s[0] == '[')
        return check_header(ld, t);
    return check_pair(t, ld->err);
}

/* The next line of the text, without its "\n" or "\r\n" (and without a
 * UTF-8 byte order mark on line 1). */
static span take_line(loader *ld)
{
    size_t left = (size_t)(ld->end - ld->pos);
    const char *nl = memchr(ld->pos, '\n', left);
    span line = {ld->pos, nl ? (size_t)(nl - ld->pos) : left};

    ld->pos += line.n + (nl != NULL);
    ld->line++;
    if (line.n > 0 && line.s[line.n - 1] == '\r')
        line.n--;
    if (ld->line == 1 && line.n >= 3 && memcmp(line.s, "\xEF\xBB\xBF", 3) == 0)
        line = span_tail(line, 3);
    return line;
}

/* libinih's reader: one checked line per call, NULL at the end or at the
 * first mistake (recorded in ld). */
static char *next_line(char *buf, int size, void *stream)
{
    loader *ld = stream;
    span line;

    if (ld->status != VG_OK || ld->pos >= ld->end)
        return NULL;
    line = take_line(ld);
    ld->status = check_line(ld, line);
    if (ld->status == VG_OK && line.n + 2 > (size_t)size) /* ini_max_line is set to fit */
        ld->status = vg_error_set(ld->err, VG_ECONFIG, "line does not fit the parser's buffer");
    if (ld->status != VG_OK) {
        vg_error_prefix(ld->err, "%s:%d: ", ld->path, ld->line);
        return NULL;
    }
    memcpy(buf, line.s, line.n);
    memcpy(buf + line.n, "\n", 2);
    return buf;
}

/* libinih's handler: one "key = value" of the line last read. */
static int on_pair(void *user, const char *section, const char *name, const char *value)
{
    loader *ld = user;
    span key = span_of(name);
    int sec = find_section(span_of(section)); /* -1 before any header */
    int k = sec < 0 ? -1 : find_key(sec, key);
    vg_status st = VG_OK;

    if (key.n == 0)
        st = vg_error_set(ld->err, VG_ECONFIG, "missing key before '='");
    else if (k < 0)
        st = unknown_key(sec, key, ld->err);
    else if (ld->key_line[k] > 0)
        st = vg_error_set(ld->err, VG_ECONFIG, "duplicate key '%s' in [%s] (first set at line "
                          "%d)", name, section, ld->key_line[k]);
    else
        st = keys[k].set(ld->cfg, keys[k].arg, value ? value : "", ld->line, ld->err);
    if (st == VG_OK) {
        ld->key_line[k] = ld->line;
        return 1;
    }
    ld->status = st;
    vg_error_prefix(ld->err, "%s:%d: ", ld->path, ld->line);
    return 0;
}

/* libinih's run-time switches (Debian's build exposes them); the reader
 * already guarantees every line fits ini_max_line. */
static void setup_inih(void)
{
    ini_allow_multiline = false;
    ini_allow_bom = false;               /* take_line strips it */
    ini_start_comment_prefixes = ";#";
    ini_allow_inline_comments = true;
    ini_inline_comment_prefixes = ";#";  /* only after white space */
    ini_use_stack = true;                /* a buffer of ini_max_line bytes */
    ini_max_line = CFG_LINE_MAX + 3;     /* line, '\n', '\0', and one spare */
    ini_allow_realloc = false;
    ini_stop_on_first_error = true;
    ini_allow_no_value = false;
}

static vg_status parse_text(loader *ld, size_t len)
{
    int rc;

    ld->pos = ld->cfg->text;
    ld->end = ld->cfg->text + len;
    setup_inih();
    rc = ini_parse_stream(next_line, ld, on_pair, ld);
    if (ld->status != VG_OK)
        return ld->status;
    if (rc == -2)
        return no_memory(ld->err);
    if (rc != 0)
        return vg_error_set(ld->err, VG_ECONFIG, "%s:%d: line not understood", ld->path, rc);
    return VG_OK;
}

static vg_status file_error(vg_error *err, const char *path, const char *what, int e)
{
    char reason[128];

    snprintf(reason, sizeof reason, "%s", strerror(e));
    reason[0] = (char)tolower((unsigned char)reason[0]);
    return vg_error_set(err, VG_ECONFIG, "%s: %s: %s", path, what, reason);
}

/* The whole file into *text (NUL-terminated), at most CFG_FILE_MAX bytes. */
static vg_status read_file(const char *path, char **text, size_t *len, vg_error *err)
{
    FILE *f = fopen(path, "rb");
    char *buf, *fit;
    size_t n;
    int e;

    if (!f)
        return file_error(err, path, "cannot open config file", errno);
    buf = malloc(CFG_FILE_MAX + 2);
    if (!buf) {
        fclose(f);
        return no_memory(err);
    }
    n = fread(buf, 1, CFG_FILE_MAX + 1, f);
    e = ferror(f) ? errno : 0;
    fclose(f);
    if (e != 0 || n > CFG_FILE_MAX) {
        free(buf);
        if (e != 0)
            return file_error(err, path, "cannot read config file", e);
        return vg_error_set(err, VG_ECONFIG, "%s: config file is larger than the limit of %d "
                            "bytes", path, CFG_FILE_MAX);
    }
    buf[n] = '\0';
    fit = realloc(buf, n + 1);
    *text = fit ? fit : buf;
    *len = n;
    return VG_OK;
}

/* ------------------------------------------------------------------ */
/* Overrides: --set section.key=value.                                */

/* Apply sec.key = value (copies made NUL-terminated); errors unprefixed. */
static vg_status apply_pair(loader *ld, span sec_name, span key_name, span value)
{
    int sec = find_section(sec_name), k;
    char *v;
    vg_status st;

    if (sec < 0)
        return unknown_section(sec_name, ld->err);
    k = find_key(sec, key_name);
    if (k < 0)
        return unknown_key(sec, key_name, ld->err);
    v = dup_span(value);
    if (!v)
        return no_memory(ld->err);
    st = keys[k].set(ld->cfg, keys[k].arg, v, -1, ld->err);
    free(v);
    if (st == VG_OK)
        ld->key_line[k] = -1;
    return st;
}

/* "--set gap=..." and the like: no section, or no '='. */
static vg_status malformed_set(span name, vg_error *err)
{
    int k = find_key(-1, name);

    if (k >= 0)
        return vg_error_set(err, VG_ECONFIG, "expected 'section.key=value' (did you mean "
                            "'%s.%s'?)", section_names[keys[k].section], keys[k].key);
    return vg_error_set(err, VG_ECONFIG, "expected 'section.key=value'");
}

static vg_status apply_set(loader *ld, const char *arg)
{
    span all = span_of(arg);
    size_t eq = span_find(all, "=");
    span name = span_trim(span_part(all, 0, eq));
    size_t dot = span_find(name, ".");
    shown b;
    vg_status st = check_bytes(all, ld->err);

    if (st != VG_OK) {
        vg_error_prefix(ld->err, "--set: ");
        return st;
    }
    if (eq == all.n || dot == name.n)
        st = malformed_set(name, ld->err);
    else
        st = apply_pair(ld, span_part(name, 0, dot), span_tail(name, dot + 1),
                        span_trim(span_tail(all, eq + 1)));
    if (st != VG_OK)
        vg_error_prefix(ld->err, "--set %s: ", show(name.n ? name : all, &b));
    return st;
}

/* ------------------------------------------------------------------ */
/* Checks of the whole configuration.                                 */

/* Prefix the message with where key was set: its line, its --set, or
 * (key < 0 or not set) the [parameters] header, line 1 without one. */
static vg_status locate(loader *ld, int key, vg_status st)
{
    int line = key >= 0 ? ld->key_line[key] : 0;

    if (line < 0) {
        vg_error_prefix(ld->err, "--set %s.%s: ", section_names[keys[key].section],
                        keys[key].key);
        return st;
    }
    if (line == 0)
        line = ld->section_line[SEC_PARAMETERS] ? ld->section_line[SEC_PARAMETERS] : 1;
    vg_error_prefix(ld->err, "%s:%d: ", ld->path, line);
    return st;
}

static vg_status use_default(loader *ld, vg_param_id id)
{
    const param_spec *ps = &params[id];
    vg_param *p = &ld->cfg->param[id];

    if (!ps->has_default)
        return locate(ld, -1, vg_error_set(ld->err, VG_ECONFIG, "missing required parameter "
                                           "'%s' in [parameters]", ps->info.key));
    p->v = malloc(sizeof *p->v);
    if (!p->v)
        return no_memory(ld->err);
    p->v[0] = ps->def;
    p->n = 1;
    p->line = 0;
    p->defaulted = 1;
    snprintf(p->user_unit, sizeof p->user_unit, "%s", ps->info.unit);
    return VG_OK;
}

/* The grid's number of points, then the estimated size of its outputs. */
static vg_status check_grid(loader *ld)
{
    const vg_config *cfg = ld->cfg;
    double points = 1.0, bytes;
    char est[32], lim[32];

    for (int p = 0; p < VG_NPARAM; p++)
        points *= (double)cfg->param[p].n;
    if (points > CFG_GRID_MAX)
        return locate(ld, -1, vg_error_set(ld->err, VG_ECONFIG, "the grid has %.3g points, more "
                                           "than the limit of %.0e", points, CFG_GRID_MAX));
    bytes = vg_grid_output_bytes(cfg);
    if (bytes <= cfg->max_bytes)
        return VG_OK;
    vg_fmt_bytes(bytes, est, sizeof est);
    vg_fmt_bytes(cfg->max_bytes, lim, sizeof lim);
    return locate(ld, find_key(SEC_OUTPUT, span_of("max_size")),
                  vg_error_set(ld->err, VG_ECONFIG, "the outputs would take about %s, more than "
                               "max_size (%s); raise 'max_size' in [output] or use fewer points",
                               est, lim));
}

static vg_status finish(loader *ld)
{
    vg_status st = VG_OK;

    for (int p = 0; st == VG_OK && p < VG_NPARAM; p++)
        if (ld->cfg->param[p].n == 0)
            st = use_default(ld, (vg_param_id)p);
    if (st == VG_OK)
        st = check_grid(ld);
    return st;
}

/* ------------------------------------------------------------------ */
/* Loading and freeing.                                               */

/* The --set strings joined by '\n', or NULL for none. */
static char *join_sets(size_t nset, const char *const *sets)
{
    size_t len = 1, used = 0;
    char *s;

    for (size_t i = 0; i < nset; i++)
        len += strlen(sets[i]) + 1;
    s = malloc(len);
    for (size_t i = 0; s && i < nset; i++) {
        size_t n = strlen(sets[i]);
        memcpy(s + used, sets[i], n);
        used += n;
        s[used++] = i + 1 < nset ? '\n' : '\0';
    }
    return s;
}

/* Everything but the parameters at its default. */
static vg_status config_init(vg_config *cfg, const char *path, size_t nset,
                             const char *const *sets, vg_error *err)
{
    memset(cfg, 0, sizeof *cfg);
    cfg->path = dup_span(span_of(path));
    cfg->title = dup_span(span_of(""));
    cfg->notes = dup_span(span_of(""));
    cfg->out_dir = dup_span(span_of(CFG_DIR_DEFAULT));
    cfg->overrides = nset ? join_sets(nset, sets) : NULL;
    cfg->stats = VG_STATS_THERMAL;
    cfg->tolerance = CFG_TOL_DEFAULT;
    cfg->formats = VG_FMT_NETCDF | VG_FMT_CSV;
    cfg->max_bytes = CFG_MAX_BYTES_DEFAULT;
    for (int m = 0; m < VG_N_METRICS; m++)
        cfg->metric_on[m] = 1;
    if (!cfg->path || !cfg->title || !cfg->notes || !cfg->out_dir || (nset && !cfg->overrides))
        return no_memory(err);
    return VG_OK;
}

vg_status vg_config_load(vg_config *cfg, const char *path, size_t nset,
                         const char *const *sets, vg_error *err)
{
    loader ld;
    size_t len = 0;
    vg_status st;

    memset(&ld, 0, sizeof ld);
    ld.cfg = cfg;
    ld.err = err;
    ld.path = path;
    st = config_init(cfg, path, nset, sets, err);
    if (st == VG_OK)
        st = read_file(path, &cfg->text, &len, err);
    if (st == VG_OK)
        st = parse_text(&ld, len);
    for (size_t i = 0; st == VG_OK && i < nset; i++)
        st = apply_set(&ld, sets[i]);
    if (st == VG_OK)
        st = finish(&ld);
    if (st != VG_OK)
        vg_config_free(cfg);
    return st;
}

void vg_config_free(vg_config *cfg)
{
    if (!cfg)
        return;
    free(cfg->path);
    free(cfg->text);
    free(cfg->overrides);
    free(cfg->title);
    free(cfg->notes);
    free(cfg->out_dir);
    for (int p = 0; p < VG_NPARAM; p++)
        free(cfg->param[p].v);
    memset(cfg, 0, sizeof *cfg);
}

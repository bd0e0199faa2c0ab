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
 * the whole (missing parameters, grid and output size, and, when figures
 * are asked for, how the figure keys fit the grid) run after the
 * overrides.  Every message is "FILE:LINE: what is wrong" or
 * "--set section.key: what is wrong", status VG_ECONFIG (VG_ENOMEM when
 * memory runs out).
 *
 * Called by the commands (src/cmd_*.c) through vg_config_load, and through
 * vg_config_load_text for a config stored in a data file (the same parser,
 * with a name in place of the path); the value grammar is exposed as
 * vg_config_parse_value for tests.
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
#include "textscan.h"
#include "vg_config.h"
#include "vg_const.h"
#include "vg_evaluate.h"
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
#define CFG_ISO_MAX 10.0               /* largest isotope frequency or mass ratio */
#define CFG_MAX_BYTES_DEFAULT 4294967296.0 /* 4 GiB */
#define CFG_DIR_DEFAULT "vibrogate-out"
#define FIG_WIDTH_MIN 1.0              /* figure width, inches */
#define FIG_WIDTH_MAX 40.0
#define FIG_WIDTH_DEFAULT 7.0
#define FIG_DPI_MIN 50.0               /* PNG resolution, dots per inch */
#define FIG_DPI_MAX 2400.0
#define FIG_DPI_DEFAULT 300.0
#define FIG_FONT_DEFAULT "DejaVu Sans"
#define FIG_MARK_EXAMPLE "M1: gap 230 meV, reorganization 30 meV"

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

/* A plain number (no unit) from lo to hi; nounit says why a unit is wrong
 * ("is dimensionless and takes no unit"). */
static vg_status parse_plain(const char *key, const char *value, const char *nounit, double lo,
                             double hi, double *out, vg_error *err)
{
    span num, unit;
    shown b;
    double x;
    vg_status st = parse_scalar(key, value, &x, &num, &unit, err);

    if (st == VG_OK && unit.n > 0)
        st = vg_error_set(err, VG_ECONFIG, "'%s' %s (got '%s')", key, nounit,
                          show(span_of(value), &b));
    if (st == VG_OK && !(x >= lo && x <= hi))
        st = vg_error_set(err, VG_ECONFIG, "'%s' must be between %g and %g (got %s)", key, lo,
                          hi, show(num, &b));
    if (st == VG_OK)
        *out = x;
    return st;
}

static vg_status set_tolerance(vg_config *cfg, int arg, const char *value, int line,
                               vg_error *err)
{
    (void)arg;
    (void)line;
    return parse_plain("tolerance", value, "is dimensionless and takes no unit", CFG_TOL_MIN,
                       CFG_TOL_MAX, &cfg->tolerance, err);
}

/* A unit of a key that is a number and a unit: its size in the key's base. */
typedef struct {
    const char *name;
    double factor;
} scale_unit;

/* A number and one of the units u[0..n) (listed in allowed): *x in the
 * base of the units, *num the number's text, *which the unit used. */
static vg_status parse_scaled(const char *key, const char *value, const scale_unit *u, size_t n,
                              const char *allowed, double *x, span *num, size_t *which,
                              vg_error *err)
{
    span unit;
    shown b;
    vg_status st = parse_scalar(key, value, x, num, &unit, err);

    if (st != VG_OK)
        return st;
    if (unit.n == 0)
        return vg_error_set(err, VG_ECONFIG, "'%s' needs a unit: %s (got '%s')", key, allowed,
                            show(*num, &b));
    for (*which = 0; *which < n; (*which)++)
        if (span_is(unit, u[*which].name))
            break;
    if (*which == n)
        return vg_error_set(err, VG_ECONFIG, "unknown unit '%s' for '%s' (allowed: %s)",
                            show(unit, &b), key, allowed);
    *x *= u[*which].factor;
    return VG_OK;
}

static const scale_unit size_units[] = {
    {"bytes", 1.0}, {"B", 1.0}, {"kB", 1e3}, {"MB", 1e6}, {"GB", 1e9}, {"TB", 1e12},
    {"KiB", 1024.0}, {"MiB", 1048576.0}, {"GiB", 1073741824.0}, {"TiB", 1099511627776.0},
};

static vg_status set_max_size(vg_config *cfg, int arg, const char *value, int line,
                              vg_error *err)
{
    span num;
    shown b;
    double x;
    size_t u;
    vg_status st = parse_scaled("max_size", value, size_units,
                                sizeof size_units / sizeof size_units[0],
                                "bytes, B, kB, MB, GB, TB, KiB, MiB, GiB or TiB", &x, &num, &u,
                                err);

    (void)arg;
    (void)line;
    if (st != VG_OK)
        return st;
    if (!isfinite(x))
        return vg_error_set(err, VG_ECONFIG, "'max_size' is beyond the range of double "
                            "precision in bytes (got '%s')", show(span_of(value), &b));
    if (!(x >= 1.0))
        return vg_error_set(err, VG_ECONFIG, "'max_size' must be at least 1 byte (got '%s')",
                            show(span_of(value), &b));
    cfg->max_bytes = x;
    return VG_OK;
}

/* The index in names[0..n) of item, one entry of the comma list of key;
 * an empty or unknown item (what it should be: "metric") is an error. */
static vg_status lookup_name(const char *key, const char *what, span word,
                             const char *const *names, size_t n, size_t *index, vg_error *err)
{
    char h[256];
    shown b;

    for (*index = 0; *index < n; (*index)++)
        if (span_is(word, names[*index]))
            return VG_OK;
    if (word.n == 0)
        return vg_error_set(err, VG_ECONFIG, "empty item in the list of '%s' (%s)", key,
                            hint(h, sizeof h, word, names, n, "", ""));
    return vg_error_set(err, VG_ECONFIG, "unknown %s '%s' in '%s' (%s)", what, show(word, &b),
                        key, hint(h, sizeof h, word, names, n, "", ""));
}

/* A comma list of names from names[0..n): on[i] = 1 for each one listed. */
static vg_status parse_names(const char *key, const char *what, const char *value,
                             const char *const *names, size_t n, int *on, vg_error *err)
{
    span_list l;
    size_t j;
    vg_status st = split_commas(span_of(value), &l, err);

    for (size_t i = 0; st == VG_OK && i < l.n; i++) {
        st = lookup_name(key, what, l.item[i], names, n, &j, err);
        if (st == VG_OK)
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

static void metric_names(const char *names[VG_N_METRICS])
{
    for (int m = 0; m < VG_N_METRICS; m++)
        names[m] = vg_metric_get((vg_metric_id)m)->name;
}

static vg_status set_metrics(vg_config *cfg, int arg, const char *value, int line,
                             vg_error *err)
{
    const char *names[VG_N_METRICS];
    int on[VG_N_METRICS] = {0};
    vg_status st;

    (void)arg;
    (void)line;
    metric_names(names);
    st = parse_names("metrics", "metric", value, names, VG_N_METRICS, on, err);
    if (st == VG_OK)
        memcpy(cfg->metric_on, on, sizeof on);
    return st;
}

/* ------------------------------------------------------------------ */
/* Figure keys of [output] (docs/config.md, "Figures").              */

/* Each figure key is checked here on its own; how the keys fit the grid
 * and each other is checked with the whole (check_figures). */

/* The parameter keys, in vg_param_id order. */
static void param_names(const char *names[VG_NPARAM])
{
    for (int p = 0; p < VG_NPARAM; p++)
        names[p] = params[p].info.key;
}

static vg_status set_figures(vg_config *cfg, int arg, const char *value, int line,
                             vg_error *err)
{
    static const char *const names[] = {"png", "pdf", "svg", "none"};
    int on[4] = {0, 0, 0, 0};
    shown b;
    vg_status st = parse_names("figures", "figure format", value, names, 4, on, err);

    (void)arg;
    (void)line;
    if (st == VG_OK && on[3] && (on[0] || on[1] || on[2]))
        st = vg_error_set(err, VG_ECONFIG, "'figures' takes 'none' or a list of formats, not "
                          "both (got '%s')", show(span_of(value), &b));
    if (st == VG_OK)
        cfg->fig.formats = (on[0] ? VG_FIG_PNG : 0u) | (on[1] ? VG_FIG_PDF : 0u) |
                           (on[2] ? VG_FIG_SVG : 0u);
    return st;
}

/* Has list[0..n) the metric m already? */
static int listed(const vg_metric_id *list, size_t n, size_t m)
{
    for (size_t i = 0; i < n; i++)
        if ((size_t)list[i] == m)
            return 1;
    return 0;
}

static vg_status set_maps(vg_config *cfg, int arg, const char *value, int line, vg_error *err)
{
    const char *names[VG_N_METRICS];
    vg_metric_id maps[VG_N_METRICS];
    span_list l;
    size_t n = 0, m;
    vg_status st = split_commas(span_of(value), &l, err);

    (void)arg;
    (void)line;
    metric_names(names);
    for (size_t i = 0; st == VG_OK && i < l.n; i++) {
        st = lookup_name("maps", "metric", l.item[i], names, VG_N_METRICS, &m, err);
        if (st == VG_OK && listed(maps, n, m))
            st = vg_error_set(err, VG_ECONFIG, "metric '%s' appears twice in 'maps'", names[m]);
        else if (st == VG_OK)
            maps[n++] = (vg_metric_id)m;
    }
    free(l.item);
    if (st == VG_OK) {
        memcpy(cfg->fig.maps, maps, n * sizeof maps[0]);
        cfg->fig.nmaps = n;
    }
    return st;
}

/* The parameter named by value (one key, or "none" when allow_none: -1). */
static vg_status parse_param_key(const char *key, const char *value, int allow_none, int *id,
                                 vg_error *err)
{
    const char *names[VG_NPARAM + 1];
    span a = span_of(value);
    size_t p;
    shown b;
    vg_status st;

    param_names(names);
    names[VG_NPARAM] = "none";
    if (a.n == 0)
        return vg_error_set(err, VG_ECONFIG, "'%s' has no value", key);
    if (span_find(a, ",") < a.n)
        return vg_error_set(err, VG_ECONFIG, "'%s' takes a single value (got '%s')", key,
                            show(a, &b));
    st = lookup_name(key, "parameter", a, names, VG_NPARAM + (allow_none != 0), &p, err);
    if (st == VG_OK)
        *id = p == VG_NPARAM ? -1 : (int)p;
    return st;
}

/* The four roles a parameter can take in a figure; arg of set_role. */
typedef enum { ROLE_X, ROLE_Y, ROLE_PANELS, ROLE_ROWS, N_ROLES } figure_role;

static const char *const role_names[N_ROLES] = {"x", "y", "panels", "rows"};

/* x, y (a parameter), panels, rows (a parameter or "none"). */
static vg_status set_role(vg_config *cfg, int arg, const char *value, int line, vg_error *err)
{
    int id = 0;
    vg_status st = parse_param_key(role_names[arg], value, arg >= ROLE_PANELS, &id, err);

    (void)line;
    if (st != VG_OK)
        return st;
    if (arg == ROLE_X)
        cfg->fig.x = (vg_param_id)id;
    else if (arg == ROLE_Y)
        cfg->fig.y = (vg_param_id)id;
    else if (arg == ROLE_PANELS)
        cfg->fig.panels = id;
    else
        cfg->fig.rows = id;
    return VG_OK;
}

/* 1 in = 2.54 cm exactly (international inch, 1959); 1 pt = 1/72 in (the
 * PostScript point, cairo's unit for PDF and SVG surfaces; common practice). */
static const scale_unit width_units[] = {
    {"in", 1.0}, {"cm", 1.0 / 2.54}, {"mm", 1.0 / 25.4}, {"pt", 1.0 / 72.0},
};

static vg_status set_width(vg_config *cfg, int arg, const char *value, int line, vg_error *err)
{
    span num;
    double x;
    size_t u;
    char got[2 * CFG_NUM_MAX];
    vg_status st = parse_scaled("width", value, width_units,
                                sizeof width_units / sizeof width_units[0], "in, cm, mm or pt",
                                &x, &num, &u, err);

    (void)arg;
    (void)line;
    if (st != VG_OK)
        return st;
    if (x >= FIG_WIDTH_MIN && x <= FIG_WIDTH_MAX) {
        cfg->fig.width_in = x;
        return VG_OK;
    }
    if (u == 0)
        snprintf(got, sizeof got, "%.*s in", (int)num.n, num.s);
    else
        snprintf(got, sizeof got, "%.*s %s = %.6g in", (int)num.n, num.s, width_units[u].name, x);
    return vg_error_set(err, VG_ECONFIG, "'width' must be between %g and %g in (got %s)",
                        FIG_WIDTH_MIN, FIG_WIDTH_MAX, got);
}

static vg_status set_dpi(vg_config *cfg, int arg, const char *value, int line, vg_error *err)
{
    (void)arg;
    (void)line;
    return parse_plain("dpi", value, "is in dots per inch and takes no unit", FIG_DPI_MIN,
                       FIG_DPI_MAX, &cfg->fig.dpi, err);
}

static vg_status set_font(vg_config *cfg, int arg, const char *value, int line, vg_error *err)
{
    span a = span_of(value);
    shown b;

    (void)arg;
    (void)line;
    if (a.n == 0)
        return vg_error_set(err, VG_ECONFIG, "'font' needs a font family name, such as '%s'",
                            FIG_FONT_DEFAULT);
    if (a.n >= sizeof cfg->fig.font)
        return vg_error_set(err, VG_ECONFIG, "'font' is %zu bytes long, the limit is %zu bytes "
                            "(got '%s')", a.n, sizeof cfg->fig.font - 1, show(a, &b));
    memcpy(cfg->fig.font, a.s, a.n + 1); /* the control characters were refused with the line */
    return VG_OK;
}

/* One contour level: a plain number, +0 for a negative zero. */
static vg_status parse_level(span a, double *level, vg_error *err)
{
    span num, rest;
    shown b;
    vg_status st;

    if (a.n == 0)
        return vg_error_set(err, VG_ECONFIG, "empty item in the list of 'contours'");
    st = parse_number(a, "contours", level, &num, &rest, err);
    if (st == VG_OK && rest.n > 0)
        st = vg_error_set(err, VG_ECONFIG, "'contours' is in the units of the mapped metric and "
                          "takes no unit (got '%s')", show(a, &b));
    if (st == VG_OK && *level == 0.0)
        *level = 0.0;
    return st;
}

static vg_status set_contours(vg_config *cfg, int arg, const char *value, int line,
                              vg_error *err)
{
    double v[VG_MAX_CONTOURS];
    span a = span_of(value);
    span_list l = {NULL, 0};
    shown b;
    vg_status st = VG_OK;

    (void)arg;
    (void)line;
    if (a.n == 0)
        return vg_error_set(err, VG_ECONFIG, "'contours' has no value");
    if (!span_is(a, "none"))
        st = split_commas(a, &l, err);
    if (st == VG_OK && l.n > VG_MAX_CONTOURS)
        st = vg_error_set(err, VG_ECONFIG, "'contours' has %zu levels, more than the limit of %d",
                          l.n, VG_MAX_CONTOURS);
    for (size_t i = 0; st == VG_OK && i < l.n; i++)
        st = parse_level(l.item[i], &v[i], err);
    if (st == VG_OK && !strictly_monotonic(v, l.n))
        st = vg_error_set(err, VG_ECONFIG, "the values of 'contours' must all differ and be in "
                          "increasing or decreasing order (got '%s')", show(a, &b));
    if (st == VG_OK) {
        memcpy(cfg->fig.contours, v, l.n * sizeof v[0]);
        cfg->fig.ncontours = l.n;
    }
    free(l.item);
    return st;
}

/* "parameter value unit", one item of a mark, into m. */
static vg_status parse_mark_item(span a, vg_mark *m, vg_error *err)
{
    const char *names[VG_NPARAM];
    span key = first_word(a), rest = span_trim(span_tail(a, key.n));
    size_t p;
    item it;
    shown b;
    vg_status st;

    param_names(names);
    if (a.n == 0)
        return vg_error_set(err, VG_ECONFIG, "empty item in the list of 'mark'");
    st = lookup_name("mark", "parameter", key, names, VG_NPARAM, &p, err);
    if (st != VG_OK)
        return st;
    if (rest.n == 0)
        return vg_error_set(err, VG_ECONFIG, "'%s' in 'mark' has no value", names[p]);
    if (span_find(rest, "..") < rest.n)
        return vg_error_set(err, VG_ECONFIG, "'%s' in 'mark' takes a single value (got '%s')",
                            names[p], show(rest, &b));
    if (m->has[p])
        return vg_error_set(err, VG_ECONFIG, "'%s' is given twice in mark '%s'", names[p],
                            m->label);
    st = parse_item(&params[p], rest, &it, err);
    if (st == VG_OK)
        st = resolve_units(&params[p], &it, 1, err);
    if (st == VG_OK)
        st = check_item(&params[p], &it, err);
    if (st == VG_OK) {
        m->v[p] = item_value(&it);
        m->has[p] = 1;
    }
    return st;
}

/* "label: parameter value unit, ..." into m. */
static vg_status parse_mark(span a, vg_mark *m, vg_error *err)
{
    size_t colon = span_find(a, ":");
    span label = span_trim(span_part(a, 0, colon));
    span_list l = {NULL, 0};
    shown b;
    vg_status st;

    if (colon == a.n)
        return vg_error_set(err, VG_ECONFIG, "'mark' needs a label, ':' and parameter values, "
                            "as in '%s' (got '%s')", FIG_MARK_EXAMPLE, show(a, &b));
    if (label.n == 0)
        return vg_error_set(err, VG_ECONFIG, "'mark' needs a label before ':', as in '%s' "
                            "(got '%s')", FIG_MARK_EXAMPLE, show(a, &b));
    if (label.n >= sizeof m->label)
        return vg_error_set(err, VG_ECONFIG, "the label of 'mark' is %zu bytes long, the limit "
                            "is %zu bytes (got '%s')", label.n, sizeof m->label - 1,
                            show(label, &b));
    memcpy(m->label, label.s, label.n);
    m->label[label.n] = '\0';
    st = split_commas(span_trim(span_tail(a, colon + 1)), &l, err);
    if (st == VG_OK && l.n == 1 && l.item[0].n == 0)
        st = vg_error_set(err, VG_ECONFIG, "mark '%s' needs at least one parameter value after "
                          "':', as in '%s'", m->label, FIG_MARK_EXAMPLE);
    for (size_t i = 0; st == VG_OK && i < l.n; i++)
        st = parse_mark_item(l.item[i], m, err);
    free(l.item);
    return st;
}

/* A label already used by one of the marks so far is an error. */
static vg_status check_label(const vg_figure_spec *f, const char *label, vg_error *err)
{
    for (size_t i = 0; i < f->nmarks; i++) {
        if (strcmp(f->marks[i].label, label) != 0)
            continue;
        if (f->marks[i].line < 0)
            return vg_error_set(err, VG_ECONFIG, "mark '%s' appears twice (first in --set "
                                "output.mark)", label);
        return vg_error_set(err, VG_ECONFIG, "mark '%s' appears twice (first at line %d)", label,
                            f->marks[i].line);
    }
    return VG_OK;
}

/* The one key that may repeat: each line (or --set) adds a mark. */
static vg_status set_mark(vg_config *cfg, int arg, const char *value, int line, vg_error *err)
{
    vg_figure_spec *f = &cfg->fig;
    vg_mark m;
    vg_status st;

    (void)arg;
    if (f->nmarks == VG_MAX_MARKS)
        return vg_error_set(err, VG_ECONFIG, "'mark' is given more than %d times (the limit is "
                            "%d marks)", VG_MAX_MARKS, VG_MAX_MARKS);
    memset(&m, 0, sizeof m);
    m.line = line;
    st = parse_mark(span_of(value), &m, err);
    if (st == VG_OK)
        st = check_label(f, m.label, err);
    if (st == VG_OK)
        f->marks[f->nmarks++] = m;
    return st;
}

/* ------------------------------------------------------------------ */
/* [isotope], [feasibility] and [uncertainty] (docs/config.md).       */

/* A whole number from lo to hi. */
static vg_status parse_count_key(const char *key, const char *value, double lo, double hi,
                                 double *out, vg_error *err)
{
    vg_status st = parse_plain(key, value, "is a count and takes no unit", lo, hi, out, err);
    shown b;

    if (st == VG_OK && *out != floor(*out))
        st = vg_error_set(err, VG_ECONFIG, "'%s' must be a whole number (got %s)", key,
                          show(span_of(value), &b));
    return st;
}

/* frequency_ratio (arg 0) or reduced_mass_ratio (arg 1). */
static vg_status set_iso_ratio(vg_config *cfg, int arg, const char *value, int line,
                               vg_error *err)
{
    const char *key = arg ? "reduced_mass_ratio" : "frequency_ratio";
    double x;
    vg_status st = parse_plain(key, value, "is a ratio and takes no unit", -HUGE_VAL, HUGE_VAL,
                               &x, err);

    if (st == VG_OK && !(x > 1.0))
        st = vg_error_set(err, VG_ECONFIG, "'%s' must be > 1 (%s; got %s)", key,
                          arg ? "heavy over light reduced mass" : "light over heavy frequency",
                          value);
    if (st == VG_OK && x > CFG_ISO_MAX)
        st = vg_error_set(err, VG_ECONFIG, "'%s' must be at most %g (got %s)", key,
                          CFG_ISO_MAX, value);
    if (st != VG_OK)
        return st;
    cfg->isotope.frequency_ratio = arg ? vg_isotope_frequency_ratio(x) : x;
    cfg->isotope.line = line;
    return VG_OK;
}

static vg_status set_iso_rule(vg_config *cfg, int arg, const char *value, int line,
                              vg_error *err)
{
    static const char *const names[] = {"born_oppenheimer", "fixed"};
    size_t k;
    vg_status st = lookup_name("huang_rhys_rule", "rule", span_trim(span_of(value)), names, 2,
                               &k, err);

    (void)arg;
    (void)line;
    if (st == VG_OK)
        cfg->isotope.rule = k ? VG_HR_FIXED : VG_HR_BORN_OPPENHEIMER;
    return st;
}

/* Time units of a time-constant condition, in seconds. */
static const scale_unit time_units[] = {
    {"fs", 1e-15}, {"ps", 1e-12}, {"ns", 1e-9}, {"us", 1e-6}, {"ms", 1e-3}, {"s", 1.0},
};

static const char *const tau_names[] = {"tau_elastic", "tau_assisted", "tau_total"};
static const vg_metric_id tau_rates[] = {VG_M_LOG10_K_ELASTIC, VG_M_LOG10_K_ASSISTED,
                                         VG_M_LOG10_K_TOTAL};

/* The comparison at the start of a, its length into *len; -1 if none. */
static int parse_cmp(span a, size_t *len)
{
    if (a.n >= 2 && (memcmp(a.s, "<=", 2) == 0 || memcmp(a.s, ">=", 2) == 0)) {
        *len = 2;
        return a.s[0] == '<' ? VG_CMP_LE : VG_CMP_GE;
    }
    if (a.n >= 1 && (a.s[0] == '<' || a.s[0] == '>')) {
        *len = 1;
        return a.s[0] == '<' ? VG_CMP_LT : VG_CMP_GT;
    }
    return -1;
}

/* The names a condition may start with: every metric but feasible, and
 * the time constants. */
static size_t require_names(const char **names)
{
    size_t n = 0;

    for (int m = 0; m < VG_N_METRICS; m++)
        if (m != VG_M_FEASIBLE)
            names[n++] = vg_metric_get((vg_metric_id)m)->name;
    for (size_t t = 0; t < 3; t++)
        names[n++] = tau_names[t];
    return n;
}

/* The value of a condition on metric name into c (normalised as
 * vg_metrics.h describes). */
static vg_status require_value(span name, const char *text, vg_require *c, vg_error *err)
{
    char key[64];
    double x;
    span num, unit;
    size_t which;
    shown b;
    vg_status st;

    snprintf(key, sizeof key, "%.*s", (int)(name.n < 40 ? name.n : 40), name.s);
    for (size_t t = 0; t < 3; t++)
        if (span_is(name, tau_names[t])) {
            st = parse_scaled(key, text, time_units, 6, "fs, ps, ns, us, ms or s", &x, &num,
                              &which, err);
            if (st == VG_OK && !(x > 0.0))
                st = vg_error_set(err, VG_ECONFIG, "'%s' must be compared with a time > 0 "
                                  "(got '%s')", key, show(span_of(text), &b));
            if (st != VG_OK)
                return st;
            /* tau = 1/k: tau < t  <=>  log10 k > -log10 t */
            c->metric = tau_rates[t];
            c->op = c->op == VG_CMP_LT ? VG_CMP_GT : c->op == VG_CMP_LE ? VG_CMP_GE
                    : c->op == VG_CMP_GT ? VG_CMP_LT : VG_CMP_LE;
            c->value = -log10(x);
            return VG_OK;
        }
    st = parse_scalar(key, text, &x, &num, &unit, err);
    if (st == VG_OK && unit.n > 0)
        st = vg_error_set(err, VG_ECONFIG, "'%s' is dimensionless and takes no unit (got '%s')",
                          key, show(span_of(text), &b));
    if (st != VG_OK)
        return st;
    c->metric = (vg_metric_id)vg_metric_find(key);
    c->value = x;
    if (c->metric == VG_M_ISOTOPE_EFFECT || c->metric == VG_M_DISCRIMINATION) {
        /* ratios are compared in the log domain */
        if (!(x > 0.0))
            return vg_error_set(err, VG_ECONFIG, "'%s' must be compared with a "
                                "ratio > 0 (got '%s')", key, show(span_of(text), &b));
        c->metric = c->metric == VG_M_ISOTOPE_EFFECT ? VG_M_LOG10_ISOTOPE_EFFECT
                                                     : VG_M_LOG10_DISCRIMINATION;
        c->value = log10(x);
    }
    return VG_OK;
}

/* "METRIC OP VALUE [UNIT]", one condition per line, all of which must hold. */
static vg_status set_require(vg_config *cfg, int arg, const char *value, int line,
                             vg_error *err)
{
    span a = span_trim(span_of(value)), name, rest;
    const char *names[VG_N_METRICS + 3];
    size_t n = require_names(names), len = 0, k, i = 0;
    vg_require c;
    char text[CFG_LINE_MAX + 1];
    shown b;
    int op;
    vg_status st;

    (void)arg;
    if (cfg->feasibility.n == VG_MAX_REQUIRE)
        return vg_error_set(err, VG_ECONFIG, "at most %d 'require' conditions", VG_MAX_REQUIRE);
    while (i < a.n && (isalnum((unsigned char)a.s[i]) || a.s[i] == '_'))
        i++;
    name = span_part(a, 0, i);
    rest = span_trim(span_tail(a, i));
    if (name.n == 0)
        return vg_error_set(err, VG_ECONFIG, "'require' needs 'METRIC < VALUE' or 'METRIC > "
                            "VALUE', as in 'log10_ratio > 1' (got '%s')", show(a, &b));
    st = lookup_name("require", "metric", name, names, n, &k, err);
    if (st != VG_OK)
        return st;
    op = parse_cmp(rest, &len);
    if (op < 0)
        return vg_error_set(err, VG_ECONFIG, "'require' needs one of <, <=, >, >= after '%s' "
                            "(got '%s')", names[k], show(a, &b));
    rest = span_trim(span_tail(rest, len));
    snprintf(text, sizeof text, "%.*s", (int)rest.n, rest.s);
    memset(&c, 0, sizeof c);
    c.op = (vg_cmp)op;
    c.line = line;
    snprintf(c.text, sizeof c.text, "%.*s", (int)(a.n < sizeof c.text - 1 ? a.n
                                                  : sizeof c.text - 1), a.s);
    st = require_value(name, text, &c, err);
    if (st == VG_OK)
        cfg->feasibility.r[cfg->feasibility.n++] = c;
    return st;
}

static const char *const prior_names[] = {"uniform", "loguniform", "normal", "lognormal"};

/* Two items of parameter ps split at sep ("..", ","); b_plain: the second
 * is a plain number (the log-normal's sigma). */
static vg_status prior_pair(const param_spec *ps, span a, const char *sep, int b_plain,
                            double *x, double *y, vg_error *err)
{
    size_t at = span_find(a, sep);
    item it[2];
    span num, unit;
    shown b;
    vg_status st;

    if (at == a.n)
        return vg_error_set(err, VG_ECONFIG, "a prior of '%s' needs '%s' between its two "
                            "numbers (got '%s')", ps->info.key, sep, show(a, &b));
    st = parse_item(ps, span_trim(span_part(a, 0, at)), &it[0], err);
    if (st != VG_OK)
        return st;
    if (b_plain) {
        st = parse_number(span_trim(span_tail(a, at + strlen(sep))), ps->info.key, y, &num,
                          &unit, err);
        if (st == VG_OK && unit.n > 0)
            st = vg_error_set(err, VG_ECONFIG, "the log-normal sigma of '%s' is a plain number "
                              "(the spread of ln x) and takes no unit (got '%s')", ps->info.key,
                              show(a, &b));
        if (st == VG_OK)
            st = resolve_units(ps, it, 1, err);
        *x = item_value(&it[0]);
        return st;
    }
    st = parse_item(ps, span_trim(span_tail(a, at + strlen(sep))), &it[1], err);
    if (st == VG_OK)
        st = resolve_units(ps, it, 2, err);
    *x = item_value(&it[0]);
    *y = item_value(&it[1]);
    return st;
}

/* "uniform A .. B UNIT", "loguniform A .. B UNIT", "normal MEAN UNIT, SD
 * UNIT", "lognormal MEDIAN UNIT, SIGMA". */
static vg_status set_prior(vg_config *cfg, int arg, const char *value, int line,
                           vg_error *err)
{
    const param_spec *ps = &params[arg];
    span a = span_trim(span_of(value)), word = first_word(a);
    vg_prior pr;
    size_t k;
    vg_status st = lookup_name(ps->info.key, "prior", word, prior_names, 4, &k, err);

    if (st != VG_OK)
        return st;
    pr.kind = (vg_prior_kind)k;
    a = span_trim(span_tail(a, word.n));
    st = prior_pair(ps, a, k < 2 ? ".." : ",", k == 3, &pr.a, &pr.b, err);
    if (st != VG_OK)
        return st;
    st = vg_prior_check(&pr, ps->lo, ps->hi, err);
    if (st != VG_OK) {
        vg_error_prefix(err, "prior of '%s': ", ps->info.key);
        return st;
    }
    cfg->uncertainty.on = 1;
    cfg->uncertainty.has[arg] = 1;
    cfg->uncertainty.prior[arg] = pr;
    cfg->uncertainty.line[arg] = line;
    return VG_OK;
}

static vg_status set_unc_metric(vg_config *cfg, int arg, const char *value, int line,
                                vg_error *err)
{
    const char *names[VG_N_METRICS];
    size_t k;
    vg_status st;

    (void)arg;
    (void)line;
    metric_names(names);
    st = lookup_name("metric", "metric", span_trim(span_of(value)), names, VG_N_METRICS, &k,
                     err);
    if (st == VG_OK)
        cfg->uncertainty.metric = (vg_metric_id)k;
    return st;
}

/* samples (0), seed (1), bootstrap (2), level (3). */
static vg_status set_unc_number(vg_config *cfg, int arg, const char *value, int line,
                                vg_error *err)
{
    vg_uncertainty *u = &cfg->uncertainty;
    double x;
    vg_status st;

    (void)line;
    if (arg == 3) {
        st = parse_plain("level", value, "is a probability and takes no unit", 0.5, 0.999, &x,
                         err);
        if (st == VG_OK)
            u->level = x;
        return st;
    }
    st = arg == 0 ? parse_count_key("samples", value, 64, 1048576, &x, err)
         : arg == 1 ? parse_count_key("seed", value, 0, 4294967295.0, &x, err)
                    : parse_count_key("bootstrap", value, 0, 100000, &x, err);
    if (st != VG_OK)
        return st;
    if (arg == 0)
        u->samples = (size_t)x;
    else if (arg == 1)
        u->seed = (unsigned long)x;
    else
        u->bootstrap = (size_t)x;
    return VG_OK;
}

/* ------------------------------------------------------------------ */
/* [model] odorant and against: names of [odorant.NAME] sections,     */
/* resolved by check_sweep_odorants once every section is read.       */

static vg_status set_odorant_name(vg_config *cfg, int arg, const char *value, int line,
                                  vg_error *err)
{
    span v = span_trim(span_of(value));
    char *dst = arg ? cfg->against_name : cfg->odorant_name;
    shown b;

    if (v.n == 0 || v.n >= sizeof cfg->odorant_name)
        return vg_error_set(err, VG_ECONFIG, "'%s' needs the NAME of an [odorant.NAME] "
                            "section (1 to %zu characters, got '%s')", arg ? "against" : "odorant",
                            sizeof cfg->odorant_name - 1, show(v, &b));
    memcpy(dst, v.s, v.n);
    dst[v.n] = '\0';
    *(arg ? &cfg->against_line : &cfg->odorant_line) = line;
    return VG_OK;
}

/* ------------------------------------------------------------------ */
/* [model] engine and [validity] (docs/config.md).                    */

static vg_status set_engine(vg_config *cfg, int arg, const char *value, int line,
                            vg_error *err)
{
    static const char *const names[] = {"sum", "fft"};
    size_t k;
    vg_status st = lookup_name("engine", "engine", span_trim(span_of(value)), names, 2, &k,
                               err);

    (void)arg;
    (void)line;
    if (st == VG_OK)
        cfg->engine = k ? VG_ENGINE_FFT : VG_ENGINE_SUM;
    return st;
}

/* The criteria in VG_VALID_IDX_* order, then the two words that stand alone. */
static const char *const criterion_names[] = {"nonadiabatic", "solvent", "resolved", "rethermal",
                                              "all", "none"};

static vg_status set_criteria(vg_config *cfg, int arg, const char *value, int line,
                              vg_error *err)
{
    int on[VG_VALID_NCRIT + 2] = {0};
    unsigned mask = 0;
    shown b;
    vg_status st = parse_names("criteria", "criterion", value, criterion_names,
                               VG_VALID_NCRIT + 2, on, err);

    (void)arg;
    (void)line;
    if (st != VG_OK)
        return st;
    for (int i = 0; i < VG_VALID_NCRIT; i++)
        mask |= on[i] ? 1u << i : 0u;
    if ((on[VG_VALID_NCRIT] || on[VG_VALID_NCRIT + 1]) &&
        (mask || (on[VG_VALID_NCRIT] && on[VG_VALID_NCRIT + 1])))
        return vg_error_set(err, VG_ECONFIG, "'criteria' takes 'all', 'none' or a list of "
                            "criteria, not a mix (got '%s')", show(span_of(value), &b));
    cfg->validity.s.enabled = on[VG_VALID_NCRIT] ? VG_VALID_ALL : mask;
    return VG_OK;
}

/* nonadiabatic_max (arg VG_VALID_IDX_*), ...: a plain number > 0. */
static vg_status set_valid_threshold(vg_config *cfg, int arg, const char *value, int line,
                                     vg_error *err)
{
    static const char *const names[VG_VALID_NCRIT] = {"nonadiabatic_max", "solvent_max",
                                                      "resolved_max", "rethermal_max"};
    double *field[VG_VALID_NCRIT] = {&cfg->validity.s.nonadiabatic_max,
                                     &cfg->validity.s.solvent_max,
                                     &cfg->validity.s.resolved_max,
                                     &cfg->validity.s.rethermal_max};
    double x;
    shown b;
    vg_status st = parse_plain(names[arg], value, "is dimensionless and takes no unit",
                               -HUGE_VAL, HUGE_VAL, &x, err);

    (void)line;
    if (st == VG_OK && !(x > 0.0))
        st = vg_error_set(err, VG_ECONFIG, "'%s' must be > 0 (got %s)", names[arg],
                          show(span_trim(span_of(value)), &b));
    if (st == VG_OK)
        *field[arg] = x;
    return st;
}

/* Frequency units of nuclear_frequency, in s^-1. */
static const scale_unit freq_units[] = {
    {"s-1", 1.0}, {"s^-1", 1.0}, {"Hz", 1.0}, {"kHz", 1e3}, {"MHz", 1e6}, {"GHz", 1e9},
    {"THz", 1e12},
};

/* "-5 fs = -0.005 ps", or "-5 ps" when the unit is the stored one. */
static void describe_scaled(span num, const char *unit, double x, const char *base, char *buf,
                            size_t size)
{
    if (strcmp(unit, base) == 0)
        snprintf(buf, size, "%.*s %s", (int)num.n, num.s, unit);
    else
        snprintf(buf, size, "%.*s %s = %.6g %s", (int)num.n, num.s, unit, x, base);
}

/* A number and a frequency unit, or 'mode' (stored as 0: the mode's own
 * omega / 2 pi); 0 means the same. */
static vg_status set_nuclear_frequency(vg_config *cfg, int arg, const char *value, int line,
                                       vg_error *err)
{
    const size_t nu = sizeof freq_units / sizeof freq_units[0];
    span num;
    size_t u;
    double x;
    char got[2 * CFG_NUM_MAX + 32];
    vg_status st;

    (void)arg;
    (void)line;
    if (span_is(span_trim(span_of(value)), "mode")) {
        cfg->validity.s.nuclear_frequency = 0.0;
        return VG_OK;
    }
    st = parse_scaled("nuclear_frequency", value, freq_units, nu,
                      "s-1, s^-1, Hz, kHz, MHz, GHz or THz, or 'mode'", &x, &num, &u, err);
    if (st != VG_OK)
        return st;
    describe_scaled(num, freq_units[u].name, x, "s-1", got, sizeof got);
    if (!isfinite(x))
        return vg_error_set(err, VG_ECONFIG, "'nuclear_frequency' is beyond the range of "
                            "double precision in s-1 (got %s)", got);
    if (x < 0.0)
        return vg_error_set(err, VG_ECONFIG, "'nuclear_frequency' must be > 0 s-1, or 0 or "
                            "'mode' for the mode's own frequency (got %s)", got);
    cfg->validity.s.nuclear_frequency = x == 0.0 ? 0.0 : x;
    return VG_OK;
}

/* relaxation_time (arg 0), mode_lifetime (arg 1): a time > 0, stored in ps. */
static vg_status set_valid_time(vg_config *cfg, int arg, const char *value, int line,
                                vg_error *err)
{
    const char *key = arg ? "mode_lifetime" : "relaxation_time";
    span num;
    size_t u;
    double x;
    char got[2 * CFG_NUM_MAX + 32];
    vg_status st = parse_scaled(key, value, time_units, sizeof time_units / sizeof time_units[0],
                                "fs, ps, ns, us, ms or s", &x, &num, &u, err);

    (void)line;
    if (st != VG_OK)
        return st;
    x /= 1e-12;
    describe_scaled(num, time_units[u].name, x, "ps", got, sizeof got);
    if (!(x > 0.0))
        return vg_error_set(err, VG_ECONFIG, "'%s' must be > 0 ps (got %s)", key, got);
    if (!isfinite(x))
        return vg_error_set(err, VG_ECONFIG, "'%s' is beyond the range of double precision "
                            "in ps (got %s)", key, got);
    if (arg)
        cfg->validity.t1_ps = x;
    else
        cfg->validity.tau_l_ps = x;
    return VG_OK;
}

/* ------------------------------------------------------------------ */
/* The table of keys.                                                 */

typedef enum {
    SEC_SCENARIO, SEC_PARAMETERS, SEC_MODEL, SEC_OUTPUT, SEC_ISOTOPE, SEC_FEASIBILITY,
    SEC_UNCERTAINTY, SEC_VALIDITY, N_SECTIONS
} section_id;

static const char *const section_names[N_SECTIONS] = {"scenario", "parameters", "model",
                                                       "output", "isotope", "feasibility",
                                                       "uncertainty", "validity"};

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
    {SEC_MODEL, "engine", set_engine, 0},
    {SEC_MODEL, "odorant", set_odorant_name, 0},
    {SEC_MODEL, "against", set_odorant_name, 1},
    {SEC_OUTPUT, "directory", set_directory, 0},
    {SEC_OUTPUT, "data", set_data, 0},
    {SEC_OUTPUT, "metrics", set_metrics, 0},
    {SEC_OUTPUT, "max_size", set_max_size, 0},
    {SEC_OUTPUT, "figures", set_figures, 0},
    {SEC_OUTPUT, "maps", set_maps, 0},
    {SEC_OUTPUT, "x", set_role, ROLE_X},
    {SEC_OUTPUT, "y", set_role, ROLE_Y},
    {SEC_OUTPUT, "panels", set_role, ROLE_PANELS},
    {SEC_OUTPUT, "rows", set_role, ROLE_ROWS},
    {SEC_OUTPUT, "width", set_width, 0},
    {SEC_OUTPUT, "dpi", set_dpi, 0},
    {SEC_OUTPUT, "font", set_font, 0},
    {SEC_OUTPUT, "contours", set_contours, 0},
    {SEC_OUTPUT, "mark", set_mark, 0},
    {SEC_ISOTOPE, "frequency_ratio", set_iso_ratio, 0},
    {SEC_ISOTOPE, "reduced_mass_ratio", set_iso_ratio, 1},
    {SEC_ISOTOPE, "huang_rhys_rule", set_iso_rule, 0},
    {SEC_FEASIBILITY, "require", set_require, 0},
    {SEC_UNCERTAINTY, "gap", set_prior, VG_P_GAP},
    {SEC_UNCERTAINTY, "reorganization", set_prior, VG_P_REORG},
    {SEC_UNCERTAINTY, "electronic_coupling", set_prior, VG_P_COUPLING},
    {SEC_UNCERTAINTY, "huang_rhys", set_prior, VG_P_HUANG_RHYS},
    {SEC_UNCERTAINTY, "mode", set_prior, VG_P_MODE},
    {SEC_UNCERTAINTY, "temperature", set_prior, VG_P_TEMPERATURE},
    {SEC_UNCERTAINTY, "metric", set_unc_metric, 0},
    {SEC_UNCERTAINTY, "samples", set_unc_number, 0},
    {SEC_UNCERTAINTY, "seed", set_unc_number, 1},
    {SEC_UNCERTAINTY, "bootstrap", set_unc_number, 2},
    {SEC_UNCERTAINTY, "level", set_unc_number, 3},
    {SEC_VALIDITY, "criteria", set_criteria, 0},
    {SEC_VALIDITY, "nonadiabatic_max", set_valid_threshold, VG_VALID_IDX_NONADIABATIC},
    {SEC_VALIDITY, "solvent_max", set_valid_threshold, VG_VALID_IDX_SOLVENT},
    {SEC_VALIDITY, "resolved_max", set_valid_threshold, VG_VALID_IDX_RESOLVED},
    {SEC_VALIDITY, "rethermal_max", set_valid_threshold, VG_VALID_IDX_RETHERMAL},
    {SEC_VALIDITY, "nuclear_frequency", set_nuclear_frequency, 0},
    {SEC_VALIDITY, "relaxation_time", set_valid_time, 0},
    {SEC_VALIDITY, "mode_lifetime", set_valid_time, 1},
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
                            "with [scenario], [parameters], [model], [output], [isotope], "
                            "[feasibility], [uncertainty] or [validity])", show(name, &b));
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
    int odorant;                    /* the [odorant.NAME] section being read, or -1 */
    vg_status status;               /* first failure */
    int no_tables;      /* 1: a config from a data file; its mode tables are not read */
} loader;

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
        n = vg_text_utf8_length(s + i, a.n - i);
        if (n == 0)
            return vg_error_set(err, VG_ECONFIG, "invalid UTF-8 at byte %zu (config files must "
                                "be UTF-8 text)", i + 1);
        i += n;
    }
    return VG_OK;
}

/* ------------------------------------------------------------------ */
/* [odorant.NAME] sections.                                           */

static int odorant_index(const vg_config *cfg, span name)
{
    for (size_t i = 0; i < cfg->nodorants; i++)
        if (span_is(name, cfg->odorants[i].name))
            return (int)i;
    return -1;
}

/* A new odorant named name (letters, digits, '_', '-'; at most 31 bytes),
 * declared at line. */
static vg_status odorant_header(loader *ld, span name)
{
    vg_config *cfg = ld->cfg;
    vg_odorant *o;
    shown b;
    int i;

    if (name.n == 0 || name.n > 31)
        return vg_error_set(ld->err, VG_ECONFIG, "an odorant name must have 1 to 31 "
                            "characters (got '[odorant.%s]')", show(name, &b));
    for (size_t k = 0; k < name.n; k++)
        if (!isalnum((unsigned char)name.s[k]) && name.s[k] != '_' && name.s[k] != '-')
            return vg_error_set(ld->err, VG_ECONFIG, "an odorant name may hold letters, digits, "
                                "'_' and '-' only (got '[odorant.%s]')", show(name, &b));
    if ((i = odorant_index(cfg, name)) >= 0)
        return vg_error_set(ld->err, VG_ECONFIG, "section [odorant.%s] appears twice (first at "
                            "line %d)", cfg->odorants[i].name, cfg->odorants[i].line);
    if (cfg->nodorants == VG_MAX_ODORANTS)
        return vg_error_set(ld->err, VG_ECONFIG, "more than %d [odorant.NAME] sections",
                            VG_MAX_ODORANTS);
    o = realloc(cfg->odorants, (cfg->nodorants + 1) * sizeof *o);
    if (!o)
        return no_memory(ld->err);
    cfg->odorants = o;
    o = &cfg->odorants[cfg->nodorants];
    memset(o, 0, sizeof *o);
    snprintf(o->name, sizeof o->name, "%.*s", (int)name.n, name.s);
    o->line = ld->line;
    ld->odorant = (int)cfg->nodorants++;
    return VG_OK;
}

/* modes = PATH, heavy_modes = PATH or substitute = PATTERN in odorant od,
 * set at line (-1: --set).  The tables are read, and the pattern applied,
 * once the whole config is known. */
/* 'mode' (an energy with its unit) or 'huang_rhys' (a plain number) of a
 * one-mode odorant, in the ranges a mode table accepts. */
static vg_status odorant_single(loader *ld, vg_odorant *od, int hr, span v)
{
    const param_spec *ps = &params[hr ? VG_P_HUANG_RHYS : VG_P_MODE];
    double lo = hr ? 0.0 : VG_MODES_QUANTUM_MIN, hi = hr ? VG_MODES_S_MAX : VG_MODES_QUANTUM_MAX;
    item it;
    double x;
    shown b;
    vg_status st = parse_item(ps, v, &it, ld->err);

    if (st == VG_OK)
        st = resolve_units(ps, &it, 1, ld->err);
    if (st != VG_OK)
        return st;
    x = item_value(&it);
    if (!(x >= lo && x <= hi))
        return vg_error_set(ld->err, VG_ECONFIG, "'%s' in [odorant.%s] must be between %g and "
                            "%g%s (got '%s')", hr ? "huang_rhys" : "mode", od->name, lo, hi,
                            hr ? "" : " meV", show(v, &b));
    *(hr ? &od->huang_rhys : &od->mode_meV) = x;
    return VG_OK;
}

static vg_status odorant_key(loader *ld, vg_odorant *od, span key, const char *value, int line)
{
    static const char *const names[] = {"modes", "heavy_modes", "substitute", "mode",
                                        "huang_rhys"};
    span v = span_trim(span_of(value));
    int k = span_is(key, "modes") ? 0 : span_is(key, "heavy_modes") ? 1
            : span_is(key, "substitute") ? 2 : span_is(key, "mode") ? 3
            : span_is(key, "huang_rhys") ? 4 : -1;
    int *at[5] = {&od->modes_line, &od->heavy_line, &od->substitute_line, &od->mode_line,
                  &od->hr_line};
    char *text[3] = {od->modes_path, od->heavy_path, od->substitute};
    size_t size[3] = {sizeof od->modes_path, sizeof od->heavy_path, sizeof od->substitute};
    char h[256];
    shown b;

    if (k < 0)
        return vg_error_set(ld->err, VG_ECONFIG, "unknown key '%s' in [odorant.%s] (%s)",
                            show(key, &b), od->name, hint(h, sizeof h, key, names, 5, "", ""));
    if (*at[k] > 0 && line > 0)
        return vg_error_set(ld->err, VG_ECONFIG, "duplicate key '%s' in [odorant.%s] (first set "
                            "at line %d)", names[k], od->name, *at[k]);
    if (k >= 3) {
        vg_status st = odorant_single(ld, od, k == 4, v);
        if (st == VG_OK)
            *at[k] = line;
        return st;
    }
    if (k == 2 && (v.n == 0 || v.n >= size[k]))
        return vg_error_set(ld->err, VG_ECONFIG, "'substitute' needs a pattern of 1 to %zu "
                            "bytes matching mode labels, such as 'C-H stretch*' (got '%s')",
                            size[k] - 1, show(v, &b));
    if (v.n == 0 || v.n >= size[k])
        return vg_error_set(ld->err, VG_ECONFIG, "'%s' needs the path of a mode table",
                            names[k]);
    snprintf(text[k], size[k], "%.*s", (int)v.n, v.s);
    *at[k] = line;
    return VG_OK;
}

/* --set odorant.NAME.KEY=VALUE: an odorant the file declares. */
static vg_status odorant_set(loader *ld, span rest, span value)
{
    size_t dot = span_find(rest, ".");
    span name = span_part(rest, 0, dot), key = span_tail(rest, dot + 1);
    int i = dot < rest.n ? odorant_index(ld->cfg, name) : -1;
    char *v;
    vg_status st;
    shown b;

    if (i < 0)
        return vg_error_set(ld->err, VG_ECONFIG, "no section [odorant.%s] in the config to set "
                            "(write 'odorant.NAME.modes=PATH')", show(name, &b));
    v = dup_span(value);
    if (!v)
        return no_memory(ld->err);
    st = odorant_key(ld, &ld->cfg->odorants[i], key, v, -1);
    free(v);
    return st;
}

/* The directory part of path ("" for none), to find tables beside it. */
static void dir_part(const char *path, char *buf, size_t len)
{
    const char *slash = strrchr(path, '/');

    snprintf(buf, len, "%.*s", slash ? (int)(slash - path + 1) : 0, path);
}

/* Read one table: relative paths from the config file's directory. */
static vg_status odorant_table(loader *ld, const vg_odorant *od, int heavy, vg_modes **out)
{
    const char *p = heavy ? od->heavy_path : od->modes_path;
    int line = heavy ? od->heavy_line : od->modes_line;
    char dir[1024], full[2100];
    vg_status st;

    dir_part(ld->path, dir, sizeof dir);
    snprintf(full, sizeof full, "%s%s", p[0] == '/' ? "" : dir, p);
    *out = malloc(sizeof **out);
    if (!*out)
        return no_memory(ld->err);
    st = vg_modes_load(full, *out, ld->err);
    if (st == VG_OK)
        return VG_OK;
    if (line < 0)
        vg_error_prefix(ld->err, "--set odorant.%s.%s: ", od->name,
                        heavy ? "heavy_modes" : "modes");
    else
        vg_error_prefix(ld->err, "%s:%d: ", ld->path, line);
    return st;
}

/* Prefix for a message about key of odorant od set at line. */
static vg_status odorant_locate(loader *ld, const vg_odorant *od, const char *key, int line,
                                vg_status st)
{
    if (line < 0)
        vg_error_prefix(ld->err, "--set odorant.%s.%s: ", od->name, key);
    else
        vg_error_prefix(ld->err, "%s:%d: ", ld->path, line);
    return st;
}

/* The one-mode table of an odorant given by 'mode' and 'huang_rhys'
 * (undamped, no label). */
static vg_status odorant_one_mode(vg_odorant *od, vg_error *err)
{
    od->light = calloc(1, sizeof *od->light);
    if (!od->light)
        return vg_error_set(err, VG_ENOMEM, "out of memory for [odorant.%s]", od->name);
    od->light->n = 1;
    od->light->quantum_unit = VG_MODES_MEV;
    od->light->mode[0].mode = od->mode_meV;
    od->light->mode[0].huang_rhys = od->huang_rhys;
    od->light->mode[0].lifetime_ps = HUGE_VAL;
    od->light->line[0] = od->mode_line;
    return VG_OK;
}

/* Every odorant needs 'modes' (or one mode); the tables are read here. */
static vg_status check_odorants(loader *ld)
{
    vg_status st = VG_OK;

    for (size_t i = 0; st == VG_OK && i < ld->cfg->nodorants; i++) {
        vg_odorant *od = &ld->cfg->odorants[i];
        int single = od->mode_line != 0 || od->hr_line != 0;
        if (single && od->modes_line != 0)
            return vg_error_set(ld->err, VG_ECONFIG, "%s:%d: [odorant.%s] gives 'modes' and "
                                "'%s': a mode table, or one mode with 'mode' and 'huang_rhys', "
                                "not both", ld->path, od->line, od->name,
                                od->mode_line ? "mode" : "huang_rhys");
        if (single && (od->mode_line == 0 || od->hr_line == 0))
            return vg_error_set(ld->err, VG_ECONFIG, "%s:%d: [odorant.%s] gives '%s' without "
                                "'%s' (one mode needs both)", ld->path, od->line, od->name,
                                od->mode_line ? "mode" : "huang_rhys",
                                od->mode_line ? "huang_rhys" : "mode");
        if (od->modes_line == 0 && !single)
            return vg_error_set(ld->err, VG_ECONFIG, "%s:%d: [odorant.%s] needs 'modes' (the "
                                "path of its mode table), or one mode with 'mode' and "
                                "'huang_rhys'", ld->path, od->line, od->name);
        if (od->heavy_line != 0 && od->substitute_line != 0)
            return odorant_locate(ld, od, "substitute", od->substitute_line,
                                  vg_error_set(ld->err, VG_ECONFIG, "give 'heavy_modes' or "
                                               "'substitute' in [odorant.%s], not both",
                                               od->name));
        if (ld->no_tables)
            continue;
        if (single) {
            st = odorant_one_mode(od, ld->err);
            if (st == VG_OK && od->heavy_line != 0)
                st = odorant_table(ld, od, 1, &od->heavy);
            continue;
        }
        st = odorant_table(ld, od, 0, &od->light);
        if (st == VG_OK && od->heavy_line != 0)
            st = odorant_table(ld, od, 1, &od->heavy);
    }
    return st;
}

/* Mode i of table t as "'LABEL' (line N of PATH)" for messages. */
static const char *mode_name(const vg_modes *t, size_t i, const char *path, char *buf,
                             size_t size)
{
    snprintf(buf, size, "'%s' (line %d of %s)", t->label[i], t->line[i], path);
    return buf;
}

/* The heavy form of the modes the pattern matches must stay in the
 * table's accepted ranges. */
static vg_status check_heavy_modes(loader *ld, const vg_odorant *od)
{
    const vg_modes *l = od->light, *h = od->heavy;
    char where[VG_MODES_LABEL_SIZE + 1100];

    for (size_t i = 0; i < h->n; i++) {
        if (h->mode[i].mode < VG_MODES_QUANTUM_MIN)
            return vg_error_set(ld->err, VG_ECONFIG, "'substitute' in [odorant.%s]: the heavy "
                                "form of mode %s would be %g meV (%g meV / frequency ratio %g), "
                                "below the accepted %g meV", od->name,
                                mode_name(l, i, od->modes_path, where, sizeof where),
                                h->mode[i].mode, l->mode[i].mode,
                                ld->cfg->isotope.frequency_ratio, VG_MODES_QUANTUM_MIN);
        if (h->mode[i].huang_rhys > VG_MODES_S_MAX)
            return vg_error_set(ld->err, VG_ECONFIG, "'substitute' in [odorant.%s]: the heavy "
                                "form of mode %s would have huang_rhys %g (%g x frequency "
                                "ratio %g), above the accepted %g", od->name,
                                mode_name(l, i, od->modes_path, where, sizeof where),
                                h->mode[i].huang_rhys, l->mode[i].huang_rhys,
                                ld->cfg->isotope.frequency_ratio, VG_MODES_S_MAX);
    }
    return VG_OK;
}

/* substitute = PATTERN: the heavy table from the light one by the
 * [isotope] rule (after check_isotope, which settles the ratio). */
static vg_status check_substitutes(loader *ld)
{
    vg_config *cfg = ld->cfg;
    vg_status st = VG_OK;

    for (size_t i = 0; st == VG_OK && i < cfg->nodorants; i++) {
        vg_odorant *od = &cfg->odorants[i];
        int line = od->substitute_line;
        if (line == 0 || ld->no_tables)
            continue;
        if (!cfg->isotope.on)
            return odorant_locate(ld, od, "substitute", line, vg_error_set(ld->err, VG_ECONFIG,
                                  "'substitute' in [odorant.%s] needs an [isotope] section "
                                  "(its rule gives the heavy modes)", od->name));
        od->heavy = malloc(sizeof *od->heavy);
        if (!od->heavy)
            return no_memory(ld->err);
        od->substituted = vg_isotope_heavy_modes(&cfg->isotope, od->substitute, od->light,
                                                 od->heavy);
        if (od->substituted == 0)
            st = vg_error_set(ld->err, VG_ECONFIG, "'substitute = %s' in [odorant.%s] matches "
                              "no mode label of %s%s", od->substitute, od->name, od->modes_path,
                              od->light->has_label ? "" : " (the table has no 'label' column)");
        if (st == VG_OK)
            st = check_heavy_modes(ld, od);
        if (st != VG_OK)
            return odorant_locate(ld, od, "substitute", line, st);
    }
    return st;
}

vg_status vg_config_check_mapped_odorant(const vg_config *cfg, const char *command,
                                         vg_error *err)
{
    if (!vg_config_mapped(cfg))
        return vg_config_refuse_odorants(cfg, command, err);
    (void)command;
    return VG_OK;
}

vg_status vg_config_refuse_odorants(const vg_config *cfg, const char *command, vg_error *err)
{
    if (cfg->nodorants == 0)
        return VG_OK;
    if (strcmp(command, "sweep") == 0 || strcmp(command, "check") == 0)
        return vg_error_set(err, VG_ECONFIG, "%s: '%s' maps one many-mode odorant in place "
                            "of the single mode: name it with 'odorant = NAME' in [model] "
                            "([odorant.%s] is given), or remove the [odorant.NAME] sections",
                            cfg->path, command, cfg->odorants[0].name);
    return vg_error_set(err, VG_ECONFIG, "%s: '%s' does not take many-mode odorants yet "
                        "([odorant.%s]; only 'point', 'sweep' and 'check' do): remove the "
                        "[odorant.NAME] sections to use the single mode of [parameters]",
                        cfg->path, command, cfg->odorants[0].name);
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
    ld->odorant = -1;
    if (span_find(name, ".") < name.n && span_is(span_part(name, 0, span_find(name, ".")),
                                                 "odorant"))
        return odorant_header(ld, span_tail(name, span_find(name, ".") + 1));
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

    if (ld->odorant >= 0 && key.n > 0) {
        st = odorant_key(ld, &ld->cfg->odorants[ld->odorant], key, value ? value : "",
                         ld->line);
        if (st == VG_OK)
            return 1;
        ld->status = st;
        vg_error_prefix(ld->err, "%s:%d: ", ld->path, ld->line);
        return 0;
    }
    if (key.n == 0)
        st = vg_error_set(ld->err, VG_ECONFIG, "missing key before '='");
    else if (k < 0)
        st = unknown_key(sec, key, ld->err);
    else if (ld->key_line[k] > 0 && keys[k].set != set_mark && keys[k].set != set_require)
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

/* The whole file into *text (NUL-terminated), at most CFG_FILE_MAX bytes. */
static vg_status read_file(const char *path, char **text, size_t *len, vg_error *err)
{
    FILE *f = fopen(path, "rb");
    char *buf, *fit;
    size_t n;
    int e;

    if (!f)
        return vg_text_file_error(err, path, "cannot open config file", errno);
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
            return vg_text_file_error(err, path, "cannot read config file", e);
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
    else if (span_is(span_part(name, 0, dot), "odorant"))
        st = odorant_set(ld, span_tail(name, dot + 1), span_trim(span_tail(all, eq + 1)));
    else
        st = apply_pair(ld, span_part(name, 0, dot), span_tail(name, dot + 1),
                        span_trim(span_tail(all, eq + 1)));
    if (st != VG_OK)
        vg_error_prefix(ld->err, "--set %s: ", show(name.n ? name : all, &b));
    return st;
}

/* ------------------------------------------------------------------ */
/* Checks of the whole configuration.                                 */

/* Prefix the message with where key was set: line (> 0), its --set (< 0),
 * or (0) the [parameters] header, line 1 without one. */
static vg_status locate_line(loader *ld, int key, int line, vg_status st)
{
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

/* The same at the line that set key (key < 0: none). */
static vg_status locate(loader *ld, int key, vg_status st)
{
    return locate_line(ld, key, key >= 0 ? ld->key_line[key] : 0, st);
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

/* ------------------------------------------------------------------ */
/* Checks of the figure keys against the final grid.                  */

static int output_key(const char *name)
{
    return find_key(SEC_OUTPUT, span_of(name));
}

static int is_axis(const vg_config *cfg, int p)
{
    return p >= 0 && p < VG_NPARAM && cfg->param[p].n > 1;
}

/* The axes as "gap, reorganization" ("none" without any); their number. */
static size_t axis_list(const vg_config *cfg, char *buf, size_t size)
{
    size_t n = 0, used = 0;

    buf[0] = '\0';
    for (int p = 0; p < VG_NPARAM; p++)
        if (is_axis(cfg, p) && used < size)
            used += (size_t)snprintf(buf + used, size - used, "%s%s", n++ ? ", " : "",
                                     params[p].info.key);
    if (n == 0)
        snprintf(buf, size, "none");
    return n;
}

/* The fastest axis other than avoid (the grid's order: gap fastest, then by
 * parameter number); without one, the first parameter other than avoid. */
static vg_param_id fastest_axis(const vg_config *cfg, int avoid)
{
    for (int p = 0; p < VG_NPARAM; p++)
        if (p != avoid && is_axis(cfg, p))
            return (vg_param_id)p;
    return avoid == VG_P_GAP ? VG_P_REORG : VG_P_GAP;
}

/* x and y not given: the fastest axes (gap and reorganization when both
 * are axes), avoiding the other one when it was given. */
static void default_axes(loader *ld)
{
    vg_figure_spec *f = &ld->cfg->fig;
    int x_set = ld->key_line[output_key("x")] != 0, y_set = ld->key_line[output_key("y")] != 0;

    if (!x_set)
        f->x = fastest_axis(ld->cfg, y_set ? (int)f->y : -1);
    if (!y_set)
        f->y = fastest_axis(ld->cfg, (int)f->x);
}

/* Figures are drawn from sweep.nc: it must be written, with every map. */
static vg_status check_sources(loader *ld)
{
    const vg_config *cfg = ld->cfg;
    const vg_figure_spec *f = &cfg->fig;
    int maps_key = output_key("maps");

    if (!(cfg->formats & VG_FMT_NETCDF))
        return locate(ld, output_key("figures"),
                      vg_error_set(ld->err, VG_ECONFIG, "'figures' needs 'netcdf' in 'data' "
                                   "(figures are drawn from sweep.nc)"));
    for (size_t i = 0; i < f->nmaps; i++)
        if (!cfg->metric_on[f->maps[i]])
            return locate(ld, ld->key_line[maps_key] ? maps_key : output_key("metrics"),
                          vg_error_set(ld->err, VG_ECONFIG, "'maps' needs '%s' in 'metrics' "
                                       "(figures are drawn from sweep.nc)",
                                       vg_metric_get(f->maps[i])->name));
    return VG_OK;
}

/* x, y, panels, rows: each one given must be an axis, and all differ. */
static vg_status check_roles(loader *ld)
{
    static const char *const others[N_ROLES] = {"", "'x'", "'x' and 'y'",
                                                "'x', 'y' and 'panels'"};
    const vg_figure_spec *f = &ld->cfg->fig;
    const int v[N_ROLES] = {(int)f->x, (int)f->y, f->panels, f->rows};
    char axes[128];

    axis_list(ld->cfg, axes, sizeof axes);
    for (int r = 0; r < N_ROLES; r++) {
        const char *name = role_names[r];
        int key = output_key(name);
        if (r == ROLE_ROWS && v[ROLE_ROWS] >= 0 && v[ROLE_PANELS] < 0)
            return locate(ld, key, vg_error_set(ld->err, VG_ECONFIG, "'rows' needs 'panels' too "
                                                "(rows arrange the panels of a figure)"));
        if (v[r] < 0)
            continue;
        if (!is_axis(ld->cfg, v[r]))
            return locate(ld, key, vg_error_set(ld->err, VG_ECONFIG, "'%s' must name an axis of "
                                                "the grid (got '%s', a single value; axes: %s)",
                                                name, params[v[r]].info.key, axes));
        for (int q = 0; q < r; q++)
            if (v[q] == v[r])
                return locate(ld, key, vg_error_set(ld->err, VG_ECONFIG, "'%s' must differ from "
                                                    "%s (got '%s', which is '%s')", name,
                                                    others[r], params[v[r]].info.key,
                                                    role_names[q]));
    }
    return VG_OK;
}

/* A mark fixing the parameter of a log axis (x or y) must be > 0 there,
 * or it would have no place on the map. */
static vg_status check_marks(loader *ld)
{
    const vg_config *cfg = ld->cfg;
    const vg_figure_spec *f = &cfg->fig;
    const vg_param_id axis[2] = {f->x, f->y};

    for (size_t i = 0; i < f->nmarks; i++) {
        const vg_mark *m = &f->marks[i];
        for (int a = 0; a < 2; a++) {
            const param_spec *ps = &params[axis[a]];
            if (!cfg->param[axis[a]].log_spacing || !m->has[axis[a]] || m->v[axis[a]] > 0.0)
                continue;
            return locate_line(ld, output_key("mark"), m->line, vg_error_set(ld->err,
                               VG_ECONFIG, "mark '%s' needs '%s' > 0 to be placed on the log "
                               "axis '%s' (got %g%s%s)", m->label, ps->info.key, a ? "y" : "x",
                               m->v[axis[a]], ps->kind == KIND_NONE ? "" : " ",
                               ps->kind == KIND_NONE ? "" : ps->info.unit));
        }
    }
    return VG_OK;
}

/* With figures asked for: their source, two axes at least, the roles. */
static vg_status check_figures(loader *ld)
{
    char axes[128];
    size_t naxes = axis_list(ld->cfg, axes, sizeof axes);
    vg_status st;

    default_axes(ld);
    if (ld->cfg->fig.formats == 0)
        return VG_OK;
    st = check_sources(ld);
    if (st == VG_OK && naxes < 2) {
        /* No maps on this grid -- but the same formats still serve the
         * spectrum of a single point, so the refusal waits for a command
         * that draws maps (vg_config_check_maps). */
        vg_error *keep = ld->err, later;
        ld->err = &later;
        locate(ld, output_key("figures"),
               vg_error_set(ld->err, VG_ECONFIG, "figures need at least two axes "
                            "(parameters with more than one value); the grid has %zu", naxes));
        ld->err = keep;
        memcpy(ld->cfg->fig.no_maps, later.msg, sizeof ld->cfg->fig.no_maps);
        return VG_OK;
    }
    if (st == VG_OK)
        st = check_roles(ld);
    if (st == VG_OK)
        st = check_marks(ld);
    return st;
}

/* ------------------------------------------------------------------ */
/* Checks of [isotope], [feasibility] and [uncertainty] with the rest. */

static int key_of(section_id sec, const char *name)
{
    return find_key((int)sec, span_of(name));
}

/* The heavy isotopologue must stay inside the accepted domain. */
static vg_status check_isotope(loader *ld)
{
    vg_config *cfg = ld->cfg;
    vg_isotope *iso = &cfg->isotope;
    int fr = key_of(SEC_ISOTOPE, "frequency_ratio"), rm = key_of(SEC_ISOTOPE, "reduced_mass_ratio");
    int rule = key_of(SEC_ISOTOPE, "huang_rhys_rule");
    int given = ld->key_line[fr] ? fr : rm;
    const vg_param *mode = &cfg->param[VG_P_MODE], *S = &cfg->param[VG_P_HUANG_RHYS];

    if (!ld->section_line[SEC_ISOTOPE] && !ld->key_line[fr] && !ld->key_line[rm]
        && !ld->key_line[rule])
        return VG_OK;
    iso->on = 1;
    if (ld->key_line[fr] && ld->key_line[rm])
        return locate(ld, rm, vg_error_set(ld->err, VG_ECONFIG, "give 'frequency_ratio' or "
                                           "'reduced_mass_ratio' in [isotope], not both"));
    if (!ld->key_line[fr] && !ld->key_line[rm])
        return locate_line(ld, rule, ld->section_line[SEC_ISOTOPE] ? ld->section_line[SEC_ISOTOPE]
                           : ld->key_line[rule], vg_error_set(ld->err, VG_ECONFIG, "[isotope] "
                           "needs 'frequency_ratio' or 'reduced_mass_ratio'"));
    for (size_t i = 0; i < mode->n; i++)
        if (mode->v[i] / iso->frequency_ratio < params[VG_P_MODE].lo)
            return locate(ld, given, vg_error_set(ld->err, VG_ECONFIG, "the heavy "
                          "isotopologue's mode would be %g meV (mode %g meV / frequency ratio "
                          "%g), below the accepted %g meV", mode->v[i] / iso->frequency_ratio,
                          mode->v[i], iso->frequency_ratio, params[VG_P_MODE].lo));
    for (size_t i = 0; iso->rule == VG_HR_BORN_OPPENHEIMER && i < S->n; i++)
        if (S->v[i] * iso->frequency_ratio > params[VG_P_HUANG_RHYS].hi)
            return locate(ld, given, vg_error_set(ld->err, VG_ECONFIG, "the heavy "
                          "isotopologue's huang_rhys would be %g (%g x frequency ratio %g), "
                          "above the accepted %g", S->v[i] * iso->frequency_ratio, S->v[i],
                          iso->frequency_ratio, params[VG_P_HUANG_RHYS].hi));
    return VG_OK;
}

/* The metrics the FFT engine cannot give a mapped odorant: they need its
 * elastic and assisted parts, and the FFT gives the total only. */
static int needs_parts(vg_metric_id m)
{
    return m == VG_M_LOG10_K_ELASTIC || m == VG_M_LOG10_K_ASSISTED || m == VG_M_LOG10_RATIO
           || m == VG_M_ASSISTED_FRACTION;
}

const char *vg_config_metric_lacks(const vg_config *cfg, vg_metric_id m)
{
    const char *why = vg_config_metric_lacks_mode(cfg, m);

    if (!why && needs_parts(m) && vg_config_mapped(cfg) && cfg->engine == VG_ENGINE_FFT)
        return "'engine = sum' in [model] (the FFT engine gives an odorant's total rate only)";
    return why;
}

const char *vg_config_metric_lacks_mode(const vg_config *cfg, vg_metric_id m)
{
    int needs = vg_metric_get(m)->needs;

    if ((needs & VG_NEEDS_ISOTOPE) && !cfg->isotope.on)
        return "an [isotope] section";
    if ((needs & VG_NEEDS_FEASIBILITY) && cfg->feasibility.n == 0)
        return "'require' conditions in [feasibility]";
    if ((needs & VG_NEEDS_DISCRIMINATION) && !vg_config_against(cfg))
        return "'odorant' and 'against' in [model]";
    if ((needs & VG_NEEDS_VALIDITY) && !(cfg->validity.on && cfg->validity.s.enabled))
        return "criteria in [validity]";
    return NULL;
}

/* Metrics named in metrics, maps, require and [uncertainty] metric must be
 * available; unnamed, the stored ones are every available metric. */
static vg_status check_metric_needs(loader *ld)
{
    vg_config *cfg = ld->cfg;
    int mk = key_of(SEC_OUTPUT, "metrics"), pk = key_of(SEC_OUTPUT, "maps");
    int uk = key_of(SEC_UNCERTAINTY, "metric"), rk = key_of(SEC_FEASIBILITY, "require");
    const char *why;

    for (int m = 0; m < VG_N_METRICS; m++) {
        why = vg_config_metric_lacks(cfg, (vg_metric_id)m);
        if (!ld->key_line[mk])
            cfg->metric_on[m] = why == NULL;
        else if (cfg->metric_on[m] && why)
            return locate(ld, mk, vg_error_set(ld->err, VG_ECONFIG, "'metrics' lists '%s', "
                          "which needs %s", vg_metric_get((vg_metric_id)m)->name, why));
    }
    /* the default map, log10_ratio, is not computable with every engine:
     * then the total rate is mapped by default */
    if (!ld->key_line[pk] && cfg->fig.nmaps == 1 && vg_config_metric_lacks(cfg, cfg->fig.maps[0]))
        cfg->fig.maps[0] = VG_M_LOG10_K_TOTAL;
    for (size_t i = 0; i < cfg->fig.nmaps; i++)
        if ((why = vg_config_metric_lacks(cfg, cfg->fig.maps[i])) != NULL)
            return locate(ld, pk, vg_error_set(ld->err, VG_ECONFIG, "'maps' lists '%s', which "
                          "needs %s", vg_metric_get(cfg->fig.maps[i])->name, why));
    for (size_t i = 0; i < cfg->feasibility.n; i++)
        if ((why = vg_config_metric_lacks(cfg, cfg->feasibility.r[i].metric)) != NULL)
            return locate_line(ld, rk, cfg->feasibility.r[i].line, vg_error_set(ld->err,
                               VG_ECONFIG, "'require = %s' needs %s", cfg->feasibility.r[i].text,
                               why));
    if (cfg->feasibility.n > 0 && !(cfg->formats & VG_FMT_NETCDF))
        return locate_line(ld, rk, cfg->feasibility.r[0].line, vg_error_set(ld->err,
                           VG_ECONFIG, "[feasibility] needs 'netcdf' in 'data' (the window's "
                           "summary is read back from sweep.nc)"));
    if (cfg->feasibility.n > 0 && !cfg->metric_on[VG_M_FEASIBLE])
        return locate(ld, mk, vg_error_set(ld->err, VG_ECONFIG, "[feasibility] needs "
                                           "'feasible' in 'metrics' (the window's summary and "
                                           "outline are read back from sweep.nc)"));
    if (ld->key_line[uk] && (why = vg_config_metric_lacks(cfg, cfg->uncertainty.metric)) != NULL)
        return locate(ld, uk, vg_error_set(ld->err, VG_ECONFIG, "'metric' '%s' needs %s",
                      vg_metric_get(cfg->uncertainty.metric)->name, why));
    return VG_OK;
}

/* The bootstrap needs enough resamples for its percentiles at level: at
 * least 2 / (1 - level) (so that each tail holds one). */
static vg_status check_uncertainty(loader *ld)
{
    const vg_uncertainty *u = &ld->cfg->uncertainty;
    int bk = key_of(SEC_UNCERTAINTY, "bootstrap"), lk = key_of(SEC_UNCERTAINTY, "level");
    double need = ceil(2.0 / (1.0 - u->level) - 1e-9);

    if ((double)u->bootstrap >= need)
        return VG_OK;
    return locate(ld, ld->key_line[bk] ? bk : lk, vg_error_set(ld->err, VG_ECONFIG,
                  "'bootstrap' must be at least %.0f at level %g (2 / (1 - level), so that "
                  "each tail of the interval holds a resample; got %zu)", need, u->level,
                  u->bootstrap));
}

/* [validity]: given at all (header or any key) turns it on, with every
 * criterion unless 'criteria' says otherwise; a criterion needs its input. */
/* 1 if the values of p are evenly spaced (or there is one), to 1e-9 of
 * the step. */
static int even_gaps(const vg_param *p)
{
    double step = p->n > 1 ? (p->v[p->n - 1] - p->v[0]) / (double)(p->n - 1) : 0.0;

    for (size_t i = 1; i < p->n; i++)
        if (!(fabs(p->v[i] - (p->v[0] + (double)i * step)) <= 1e-9 * fabs(step)))
            return 0;
    return 1;
}

/* [model] odorant and against name sections that exist; with odorant the
 * single mode's parameters are not used, so they may not be axes; with
 * [isotope], the mapped odorant needs its heavy form. */
static vg_status check_sweep_odorants(loader *ld)
{
    vg_config *cfg = ld->cfg;
    int ok = key_of(SEC_MODEL, "odorant"), ak = key_of(SEC_MODEL, "against");

    if (cfg->odorant_line != 0) {
        cfg->odorant = odorant_index(cfg, span_of(cfg->odorant_name));
        if (cfg->odorant < 0)
            return locate_line(ld, ok, cfg->odorant_line, vg_error_set(ld->err, VG_ECONFIG,
                               "'odorant = %s' names no [odorant.NAME] section",
                               cfg->odorant_name));
    }
    if (cfg->against_line != 0) {
        if (cfg->odorant < 0)
            return locate_line(ld, ak, cfg->against_line, vg_error_set(ld->err, VG_ECONFIG,
                               "'against' needs 'odorant' in [model] (the odorant compared)"));
        cfg->against = odorant_index(cfg, span_of(cfg->against_name));
        if (cfg->against < 0)
            return locate_line(ld, ak, cfg->against_line, vg_error_set(ld->err, VG_ECONFIG,
                               "'against = %s' names no [odorant.NAME] section",
                               cfg->against_name));
        if (cfg->against == cfg->odorant)
            return locate_line(ld, ak, cfg->against_line, vg_error_set(ld->err, VG_ECONFIG,
                               "'against = %s' names the odorant itself; name another "
                               "[odorant.NAME] section", cfg->against_name));
    }
    if (cfg->odorant < 0)
        return VG_OK;
    for (int p = 0; p < VG_NPARAM; p++)
        if ((p == VG_P_MODE || p == VG_P_HUANG_RHYS) && cfg->param[p].n > 1)
            return locate_line(ld, ok, cfg->odorant_line, vg_error_set(ld->err, VG_ECONFIG,
                               "with 'odorant = %s' the modes come from its table: '%s' "
                               "must be a single value, not an axis", cfg->odorant_name,
                               p == VG_P_MODE ? "mode" : "huang_rhys"));
    if (cfg->engine == VG_ENGINE_FFT && !even_gaps(&cfg->param[VG_P_GAP]))
        return locate_line(ld, ok, cfg->odorant_line, vg_error_set(ld->err, VG_ECONFIG,
                           "with 'engine = fft' the gap axis must be evenly spaced (a linear "
                           "range): the FFT gives its values on an even energy grid"));
    if (cfg->isotope.on && !ld->no_tables && !cfg->odorants[cfg->odorant].heavy)
        return locate_line(ld, ok, cfg->odorant_line, vg_error_set(ld->err, VG_ECONFIG,
                           "[isotope] with 'odorant = %s' needs its heavy form: "
                           "'heavy_modes' or 'substitute' in [odorant.%s]", cfg->odorant_name,
                           cfg->odorant_name));
    return VG_OK;
}

static vg_status check_validity(loader *ld)
{
    vg_validity *v = &ld->cfg->validity;
    int ck = key_of(SEC_VALIDITY, "criteria"), any = ld->section_line[SEC_VALIDITY] != 0;
    int line;

    for (size_t k = 0; k < N_KEYS; k++)
        any |= keys[k].section == SEC_VALIDITY && ld->key_line[k] != 0;
    if (!any)
        return VG_OK;
    v->on = 1;
    if (!ld->key_line[ck])
        v->s.enabled = VG_VALID_ALL;
    line = ld->key_line[ck] ? ld->key_line[ck] : ld->section_line[SEC_VALIDITY] ?
           ld->section_line[SEC_VALIDITY] : -1;
    if ((v->s.enabled & VG_VALID_SOLVENT) && v->tau_l_ps == 0.0)
        return locate_line(ld, ck, line, vg_error_set(ld->err, VG_ECONFIG, "criterion 'solvent' "
                           "needs 'relaxation_time' in [validity] (the environment's "
                           "longitudinal relaxation time)"));
    if ((v->s.enabled & VG_VALID_RETHERMAL) && v->t1_ps == 0.0)
        return locate_line(ld, ck, line, vg_error_set(ld->err, VG_ECONFIG, "criterion "
                           "'rethermal' needs 'mode_lifetime' in [validity] (the lifetime T1 of "
                           "the mode's first excited level)"));
    if (vg_valid_settings_check(&v->s, ld->err) != VG_OK) { /* the setters rule it out */
        vg_error_prefix(ld->err, "[validity]: ");
        return locate_line(ld, ck, line, VG_ECONFIG);
    }
    return VG_OK;
}

static vg_status finish(loader *ld)
{
    vg_status st = VG_OK;

    for (int p = 0; st == VG_OK && p < VG_NPARAM; p++)
        if (ld->cfg->param[p].n == 0)
            st = use_default(ld, (vg_param_id)p);
    if (st == VG_OK)
        st = check_odorants(ld);
    if (st == VG_OK)
        st = check_isotope(ld);
    if (st == VG_OK)
        st = check_substitutes(ld);
    if (st == VG_OK)
        st = check_sweep_odorants(ld);
    if (st == VG_OK)
        st = check_validity(ld);
    if (st == VG_OK)
        st = check_metric_needs(ld);
    if (st == VG_OK)
        st = check_uncertainty(ld);
    if (st == VG_OK)
        st = check_grid(ld);
    if (st == VG_OK)
        st = check_figures(ld);
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

/* No figures; when asked for, the defaults of docs/config.md ("Figures").
 * x and y are settled by default_axes once the grid is known. */
static void figure_init(vg_figure_spec *f)
{
    f->formats = 0;
    f->nmaps = 1;
    f->maps[0] = VG_M_LOG10_RATIO;
    f->x = VG_P_GAP;
    f->y = VG_P_REORG;
    f->panels = -1;
    f->rows = -1;
    f->width_in = FIG_WIDTH_DEFAULT;
    f->dpi = FIG_DPI_DEFAULT;
    snprintf(f->font, sizeof f->font, "%s", FIG_FONT_DEFAULT);
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
    cfg->odorant = cfg->against = -1;
    cfg->formats = VG_FMT_NETCDF | VG_FMT_CSV;
    cfg->max_bytes = CFG_MAX_BYTES_DEFAULT;
    for (int m = 0; m < VG_N_METRICS; m++)
        cfg->metric_on[m] = vg_metric_get((vg_metric_id)m)->needs == 0;
    cfg->uncertainty.metric = VG_M_LOG10_RATIO;
    cfg->uncertainty.samples = 4096;
    cfg->uncertainty.seed = 1;
    cfg->uncertainty.bootstrap = 500;
    cfg->uncertainty.level = 0.95;
    vg_valid_settings_default(&cfg->validity.s);
    cfg->validity.s.enabled = 0u;
    figure_init(&cfg->fig);
    if (!cfg->path || !cfg->title || !cfg->notes || !cfg->out_dir || (nset && !cfg->overrides))
        return no_memory(err);
    return VG_OK;
}

/* A copy of text into *out, at most CFG_FILE_MAX bytes, like read_file. */
static vg_status copy_text(const char *name, const char *text, char **out, size_t *len,
                           vg_error *err)
{
    span a = span_of(text ? text : "");

    if (a.n > CFG_FILE_MAX)
        return vg_error_set(err, VG_ECONFIG, "%s: config text is larger than the limit of %d "
                            "bytes", name, CFG_FILE_MAX);
    *out = dup_span(a);
    if (!*out)
        return no_memory(err);
    *len = a.n;
    return VG_OK;
}

/* The file at path (from_file) or the text itself, named name in messages:
 * read or copied into cfg->text, parsed, overridden and checked whole. */
static vg_status load(vg_config *cfg, const char *name, const char *text, int from_file,
                      size_t nset, const char *const *sets, vg_error *err)
{
    loader ld;
    size_t len = 0;
    vg_status st;

    memset(&ld, 0, sizeof ld);
    ld.cfg = cfg;
    ld.err = err;
    ld.path = name;
    ld.odorant = -1;
    ld.no_tables = !from_file;
    st = config_init(cfg, name, nset, sets, err);
    if (st == VG_OK && from_file)
        st = read_file(name, &cfg->text, &len, err);
    else if (st == VG_OK)
        st = copy_text(name, text, &cfg->text, &len, err);
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

vg_status vg_config_load(vg_config *cfg, const char *path, size_t nset,
                         const char *const *sets, vg_error *err)
{
    return load(cfg, path, NULL, 1, nset, sets, err);
}

vg_status vg_config_load_text(vg_config *cfg, const char *name, const char *text,
                              size_t nset, const char *const *sets, vg_error *err)
{
    return load(cfg, name, text, 0, nset, sets, err);
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
    for (size_t i = 0; i < cfg->nodorants; i++) {
        free(cfg->odorants[i].light);
        free(cfg->odorants[i].heavy);
    }
    free(cfg->odorants);
    memset(cfg, 0, sizeof *cfg);
}

vg_status vg_config_require_scalars(const vg_config *cfg, const char *command, int but_gap,
                                    vg_error *err)
{
    for (int p = but_gap ? VG_P_REORG : 0; p < VG_NPARAM; p++)
        if (cfg->param[p].n > 1)
            return vg_error_set(err, VG_ECONFIG,
                                "%s: '%s' needs every parameter%s scalar; '%s' has %zu values "
                                "(fix it with --set 'parameters.%s=VALUE')", cfg->path, command,
                                but_gap ? " but 'gap'" : "", params[p].info.key, cfg->param[p].n,
                                params[p].info.key);
    return VG_OK;
}

vg_status vg_config_check_maps(const vg_config *cfg, vg_error *err)
{
    if (cfg->fig.formats && cfg->fig.no_maps[0])
        return vg_error_set(err, VG_ECONFIG, "%s", cfg->fig.no_maps);
    return VG_OK;
}

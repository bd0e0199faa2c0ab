/*
 * The mode-table reader: the CSV text of a many-mode odorant (format and
 * messages in include/vg_modes.h) into vg_modes, in meV and ps.
 *
 * The text is walked one line at a time; each line is checked for length
 * and bytes before anything else, so the first mistake in file order is the
 * one reported.  The first line that is neither comment nor blank is the
 * header, which maps field positions to columns; every further such line is
 * one mode.  No allocation but the read buffer of vg_modes_load.
 */
#include <ctype.h>
#include <errno.h>
#include <math.h>
#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>
#include <sys/stat.h>
#include <string.h>
#include <strings.h>

#include "textscan.h"
#include "vg_const.h"
#include "vg_modes.h"

#define SHOW_MAX 80 /* bytes of user text quoted in a message */

typedef struct {
    const char *s;
    size_t n;
} mspan;

typedef enum { COL_CM1, COL_MEV, COL_S, COL_LABEL, COL_LIFETIME, N_COLS } col_id;

static const char *const col_names[N_COLS] = {
    "wavenumber_cm-1", "energy_meV", "huang_rhys", "label", "lifetime_ps",
};

typedef struct {
    const char *name;   /* for messages, or NULL */
    const char *pos, *end;
    int line;           /* the line being read, 1-based */
    int header_line;    /* 0 until the header is read */
    size_t ncols;
    col_id col[N_COLS]; /* column of each field position */
    vg_modes *out;
    vg_error *err;
} reader;

/* Room for a quoted piece of user text. */
typedef struct {
    char s[SHOW_MAX + 4];
} shown;

/* ------------------------------------------------------------------ */
/* Spans and messages.                                                */

static mspan trim(mspan a)
{
    while (a.n > 0 && (a.s[0] == ' ' || a.s[0] == '\t')) {
        a.s++;
        a.n--;
    }
    while (a.n > 0 && (a.s[a.n - 1] == ' ' || a.s[a.n - 1] == '\t'))
        a.n--;
    return a;
}

static int span_is(mspan a, const char *z)
{
    return a.n == strlen(z) && memcmp(a.s, z, a.n) == 0;
}

/* a for a message: at most SHOW_MAX bytes, cut at a UTF-8 character
 * boundary and marked "..." when cut. */
static const char *show(mspan a, shown *b)
{
    size_t n = a.n;

    if (n > SHOW_MAX) {
        n = SHOW_MAX;
        while (n > 0 && ((unsigned char)a.s[n] & 0xC0) == 0x80)
            n--;
    }
    memcpy(b->s, a.s, n);
    strcpy(b->s + n, n < a.n ? "..." : "");
    return b->s;
}

/* The message at line (0: the whole table), prefixed by the name if any. */
static vg_status fail_v(const char *name, int line, vg_error *err, const char *fmt, va_list ap)
{
    char what[VG_ERROR_MAX];

    vsnprintf(what, sizeof what, fmt, ap);
    if (name && line > 0)
        return vg_error_set(err, VG_ECONFIG, "%s:%d: %s", name, line, what);
    if (name)
        return vg_error_set(err, VG_ECONFIG, "%s: %s", name, what);
    if (line > 0)
        return vg_error_set(err, VG_ECONFIG, "%d: %s", line, what);
    return vg_error_set(err, VG_ECONFIG, "%s", what);
}

static vg_status fail_at(const reader *r, int line, const char *fmt, ...)
    __attribute__((format(printf, 3, 4)));

static vg_status fail_at(const reader *r, int line, const char *fmt, ...)
{
    va_list ap;
    vg_status st;

    va_start(ap, fmt);
    st = fail_v(r->name, line, r->err, fmt, ap);
    va_end(ap);
    return st;
}

#define FAIL(r, ...) fail_at((r), (r)->line, __VA_ARGS__)

/* ------------------------------------------------------------------ */
/* Lines and bytes.                                                   */

static vg_status check_line(const reader *r, mspan a)
{
    const unsigned char *s = (const unsigned char *)a.s;
    size_t i = 0, n;

    if (a.n > VG_MODES_LINE_MAX)
        return FAIL(r, "line is %zu bytes long, the limit is %d bytes", a.n, VG_MODES_LINE_MAX);
    while (i < a.n) {
        if (s[i] == 0)
            return FAIL(r, "NUL byte at byte %zu (mode tables must be UTF-8 text)", i + 1);
        if ((s[i] < 0x20 && s[i] != '\t') || s[i] == 0x7F)
            return FAIL(r, "control character 0x%02x at byte %zu (only UTF-8 text and tabs "
                        "are allowed)", s[i], i + 1);
        n = vg_text_utf8_length(s + i, a.n - i);
        if (n == 0)
            return FAIL(r, "invalid UTF-8 at byte %zu (mode tables must be UTF-8 text)", i + 1);
        i += n;
    }
    return VG_OK;
}

/* The next line without its "\n" or "\r\n" (and without a byte order mark
 * on line 1). */
static mspan take_line(reader *r)
{
    size_t left = (size_t)(r->end - r->pos);
    const char *nl = memchr(r->pos, '\n', left);
    mspan line = {r->pos, nl ? (size_t)(nl - r->pos) : left};

    r->pos += line.n + (nl != NULL);
    r->line++;
    if (line.n > 0 && line.s[line.n - 1] == '\r')
        line.n--;
    if (r->line == 1 && line.n >= 3 && memcmp(line.s, "\xEF\xBB\xBF", 3) == 0) {
        line.s += 3;
        line.n -= 3;
    }
    return line;
}

/* The next comma-separated field of *rest, trimmed; *rest moves past it.
 * Returns 0 when there is none left (rest->s NULL). */
static int take_field(mspan *rest, mspan *field)
{
    const char *comma;

    if (!rest->s)
        return 0;
    comma = memchr(rest->s, ',', rest->n);
    field->s = rest->s;
    field->n = comma ? (size_t)(comma - rest->s) : rest->n;
    *field = trim(*field);
    if (comma) {
        rest->n -= (size_t)(comma - rest->s) + 1;
        rest->s = comma + 1;
    } else {
        rest->s = NULL;
    }
    return 1;
}

static size_t count_fields(mspan a)
{
    size_t n = 1;

    for (size_t i = 0; i < a.n; i++)
        n += a.s[i] == ',';
    return n;
}

/* ------------------------------------------------------------------ */
/* Header.                                                            */

static vg_status unknown_column(const reader *r, mspan f)
{
    shown b;

    for (int c = 0; c < N_COLS; c++)
        if (f.n == strlen(col_names[c]) && strncasecmp(f.s, col_names[c], f.n) == 0)
            return FAIL(r, "unknown column '%s' (did you mean '%s'?)", show(f, &b), col_names[c]);
    return FAIL(r, "unknown column '%s' (allowed: wavenumber_cm-1, energy_meV, huang_rhys, "
                "label, lifetime_ps)", show(f, &b));
}

static int looks_numeric(mspan f)
{
    return f.n > 0 && (isdigit((unsigned char)f.s[0]) || f.s[0] == '+' || f.s[0] == '-' ||
                       f.s[0] == '.');
}

/* Which field holds which column; the column set is checked whole. */
static vg_status read_header(reader *r, mspan line)
{
    int seen[N_COLS] = {0};
    mspan rest = line, f;
    shown b;

    take_field(&(mspan){line.s, line.n}, &f);
    if (looks_numeric(f))
        return FAIL(r, "expected a header line naming the columns before the first mode "
                    "(got '%s')", show(line, &b));
    r->ncols = 0;
    while (take_field(&rest, &f)) {
        int c = 0;
        if (f.n == 0)
            return FAIL(r, "empty column name in the header (got '%s')", show(line, &b));
        while (c < N_COLS && !span_is(f, col_names[c]))
            c++;
        if (c == N_COLS)
            return unknown_column(r, f);
        if (seen[c])
            return FAIL(r, "column '%s' appears twice in the header", col_names[c]);
        seen[c] = 1;
        r->col[r->ncols++] = (col_id)c;
    }
    if (seen[COL_CM1] && seen[COL_MEV])
        return FAIL(r, "the header gives both 'wavenumber_cm-1' and 'energy_meV' (give one "
                    "mode quantum column)");
    if (!seen[COL_CM1] && !seen[COL_MEV])
        return FAIL(r, "the header needs a mode quantum column, 'wavenumber_cm-1' or "
                    "'energy_meV' (got '%s')", show(line, &b));
    if (!seen[COL_S])
        return FAIL(r, "the header needs a 'huang_rhys' column (got '%s')", show(line, &b));
    r->out->quantum_unit = seen[COL_CM1] ? VG_MODES_CM1 : VG_MODES_MEV;
    r->out->has_label = seen[COL_LABEL];
    r->out->has_lifetime = seen[COL_LIFETIME];
    r->header_line = r->line;
    return VG_OK;
}

/* ------------------------------------------------------------------ */
/* Numbers.                                                           */

/* Only the characters of a decimal number: digits, signs, point, exponent
 * mark.  With them alone strtod reads no hex, inf or nan, and a field it
 * reads whole is exactly the decimal grammar of vg_modes.h (C17 7.22.1.3:
 * sign, digits with an optional point, optional exponent). */
static int decimal_chars(mspan a)
{
    for (size_t i = 0; i < a.n; i++)
        if (!isdigit((unsigned char)a.s[i]) && !memchr("+-.eE", a.s[i], 5))
            return 0;
    return 1;
}

/* a without its sign starts with prefix, case ignored. */
static int unsigned_starts(mspan a, const char *prefix)
{
    size_t sign = a.n > 0 && (a.s[0] == '+' || a.s[0] == '-'), k = strlen(prefix);

    return a.n - sign >= k && strncasecmp(a.s + sign, prefix, k) == 0;
}

/* The number in field f of column c; hint is added to the message of a
 * non-finite spelling. */
static vg_status field_number(const reader *r, col_id c, mspan f, const char *hint, double *x)
{
    char buf[VG_MODES_LINE_MAX + 1], *end;
    shown b;

    if (f.n == 0)
        return FAIL(r, "'%s' has no value", col_names[c]);
    if (unsigned_starts(f, "0x"))
        return FAIL(r, "hex number in '%s' is not allowed (write a decimal number; got '%s')",
                    col_names[c], show(f, &b));
    if (unsigned_starts(f, "inf") || unsigned_starts(f, "nan"))
        return FAIL(r, "'%s' must be a finite number%s (got '%s')", col_names[c], hint,
                    show(f, &b));
    memcpy(buf, f.s, f.n);
    buf[f.n] = '\0';
    errno = 0;
    *x = strtod(buf, &end);
    if (!decimal_chars(f) || end != buf + f.n)
        return FAIL(r, "bad number in '%s' (write a decimal number such as 120, 0.5 or 1.5e-3, "
                    "without a unit; got '%s')", col_names[c], show(f, &b));
    if (errno == ERANGE || !isfinite(*x))
        return FAIL(r, "number in '%s' is out of the range of double precision (got '%s')",
                    col_names[c], show(f, &b));
    if (*x == 0.0)
        *x = 0.0; /* no negative zero */
    return VG_OK;
}

/* ------------------------------------------------------------------ */
/* Rows.                                                              */

static vg_status read_quantum(const reader *r, col_id c, mspan f, double *mev)
{
    double x;
    vg_status st = field_number(r, c, f, "", &x);
    shown b;

    if (st != VG_OK)
        return st;
    *mev = c == COL_CM1 ? x * VG_MEV_PER_CM1 : x;
    if (*mev >= VG_MODES_QUANTUM_MIN && *mev <= VG_MODES_QUANTUM_MAX)
        return VG_OK;
    if (c == COL_CM1)
        return FAIL(r, "'%s' must be between %g and %g meV after conversion (got '%s' = %g meV)",
                    col_names[c], VG_MODES_QUANTUM_MIN, VG_MODES_QUANTUM_MAX, show(f, &b), *mev);
    return FAIL(r, "'%s' must be between %g and %g meV (got '%s')", col_names[c],
                VG_MODES_QUANTUM_MIN, VG_MODES_QUANTUM_MAX, show(f, &b));
}

static vg_status read_huang_rhys(const reader *r, mspan f, double *s)
{
    vg_status st = field_number(r, COL_S, f, "", s);
    shown b;

    if (st == VG_OK && !(*s >= 0.0 && *s <= VG_MODES_S_MAX))
        return FAIL(r, "'%s' must be between 0 and %g (got '%s')", col_names[COL_S],
                    VG_MODES_S_MAX, show(f, &b));
    return st;
}

static vg_status read_lifetime(const reader *r, mspan f, double *t1)
{
    static const char undamped[] = ", or 'inf' or empty for an undamped mode";
    vg_status st;
    shown b;

    if (f.n == 0 || span_is(f, "inf")) {
        *t1 = INFINITY;
        return VG_OK;
    }
    st = field_number(r, COL_LIFETIME, f, undamped, t1);
    if (st == VG_OK && !(*t1 > 0.0 && *t1 <= VG_MODES_LIFETIME_MAX))
        return FAIL(r, "'%s' must be > 0 and at most 1e12%s (got '%s')", col_names[COL_LIFETIME],
                    undamped, show(f, &b));
    return st;
}

static vg_status read_label(const reader *r, mspan f, char *label)
{
    shown b;

    if (f.n >= VG_MODES_LABEL_SIZE)
        return FAIL(r, "label is %zu bytes long, the limit is %d bytes (got '%s')", f.n,
                    VG_MODES_LABEL_SIZE - 1, show(f, &b));
    memcpy(label, f.s, f.n);
    label[f.n] = '\0';
    return VG_OK;
}

static vg_status read_row(reader *r, mspan line)
{
    vg_modes *t = r->out;
    size_t n = count_fields(line), i = t->n;
    vg_multimode_mode m = {0.0, 0.0, INFINITY};
    char label[VG_MODES_LABEL_SIZE] = "";
    mspan rest = line, f;
    vg_status st = VG_OK;
    shown b;

    if (n != r->ncols)
        return FAIL(r, "row has %zu field%s, the header has %zu column%s (got '%s')", n,
                    n == 1 ? "" : "s", r->ncols, r->ncols == 1 ? "" : "s", show(line, &b));
    if (i == VG_MODES_MAX)
        return FAIL(r, "more than %d modes (the limit of a mode table)", VG_MODES_MAX);
    for (size_t k = 0; st == VG_OK && take_field(&rest, &f); k++) {
        switch (r->col[k]) {
        case COL_CM1:
        case COL_MEV: st = read_quantum(r, r->col[k], f, &m.mode); break;
        case COL_S: st = read_huang_rhys(r, f, &m.huang_rhys); break;
        case COL_LABEL: st = read_label(r, f, label); break;
        case COL_LIFETIME: st = read_lifetime(r, f, &m.lifetime_ps); break;
        case N_COLS: break;
        }
    }
    if (st != VG_OK)
        return st;
    t->mode[i] = m;
    memcpy(t->label[i], label, sizeof label);
    t->line[i] = r->line;
    t->n = i + 1;
    return VG_OK;
}

/* ------------------------------------------------------------------ */
/* The table.                                                         */

static vg_status read_table(reader *r, size_t len)
{
    vg_status st = VG_OK;

    if (len > VG_MODES_TEXT_MAX)
        return fail_at(r, 0, "the mode table is larger than the limit of %d bytes",
                       VG_MODES_TEXT_MAX);
    while (st == VG_OK && r->pos < r->end) {
        mspan line = take_line(r), t;
        st = check_line(r, line);
        t = trim(line);
        if (st != VG_OK || t.n == 0 || t.s[0] == '#')
            continue;
        st = r->header_line ? read_row(r, t) : read_header(r, t);
    }
    if (st != VG_OK)
        return st;
    if (!r->header_line)
        return fail_at(r, 0, "the mode table is empty (it needs a header line and one row "
                       "per mode)");
    if (r->out->n == 0)
        return fail_at(r, r->header_line, "the header is not followed by any mode (one row "
                       "per mode)");
    return VG_OK;
}

vg_status vg_modes_parse(const char *name_for_messages, const char *text, size_t len,
                         vg_modes *out, vg_error *err)
{
    reader r;
    vg_status st;

    memset(&r, 0, sizeof r);
    r.name = name_for_messages;
    r.pos = text ? text : "";
    r.end = r.pos + (text ? len : 0);
    r.out = out;
    r.err = err;
    out->n = 0;
    out->quantum_unit = VG_MODES_MEV;
    out->has_label = out->has_lifetime = 0;
    st = read_table(&r, len);
    if (st != VG_OK)
        out->n = 0;
    return st;
}

vg_status vg_modes_load(const char *path, vg_modes *out, vg_error *err)
{
    struct stat sb;
    FILE *f;
    char *buf;
    size_t n;
    vg_status st;
    int e;

    out->n = 0;
    /* a FIFO, a terminal or a device would block or never end: tables are
     * files (a directory fails below, on reading, with its own reason) */
    if (stat(path, &sb) == 0 && !S_ISREG(sb.st_mode) && !S_ISDIR(sb.st_mode))
        return vg_error_set(err, VG_ECONFIG, "%s: cannot read mode table: not a regular file",
                            path);
    f = fopen(path, "rb");
    if (!f)
        return vg_text_file_error(err, path, "cannot open mode table", errno);
    buf = malloc(VG_MODES_TEXT_MAX + 1);
    if (!buf) {
        fclose(f);
        return vg_error_set(err, VG_ENOMEM, "out of memory");
    }
    n = fread(buf, 1, VG_MODES_TEXT_MAX + 1, f); /* one byte more tells "too large" */
    e = ferror(f) ? (errno ? errno : EIO) : 0;
    fclose(f);
    if (e != 0)
        st = vg_text_file_error(err, path, "cannot read mode table", e);
    else
        st = vg_modes_parse(path, buf, n, out, err);
    free(buf);
    return st;
}

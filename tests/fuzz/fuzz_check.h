/*
 * What the fuzz harnesses hold the config module to, beyond "no crash": the
 * promises of include/vg_config.h and include/vg_status.h and the documented
 * grammar and limits of docs/config.md.  A broken promise prints what broke
 * and aborts, so libFuzzer keeps the input as a crash.
 *
 * Header-only (static functions), shared by tests/fuzz/fuzz_*.c.
 */
#ifndef VG_FUZZ_CHECK_H
#define VG_FUZZ_CHECK_H

#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "vg_config.h"

/* The accepted values of each parameter in canonical units (meV, K, 1):
 * docs/config.md, table of [parameters], column "accepted values". */
_Static_assert(VG_NPARAM == 6, "fuzz_domain lists every parameter of docs/config.md");
static const double fuzz_domain[VG_NPARAM][2] = {
    [VG_P_GAP] = {-3000.0, 3000.0},
    [VG_P_REORG] = {0.1, 3000.0},
    [VG_P_COUPLING] = {0.0, 1000.0},
    [VG_P_HUANG_RHYS] = {0.0, 50.0},
    [VG_P_MODE] = {1.0, 1000.0},
    [VG_P_TEMPERATURE] = {1.0, 5000.0},
};

/* docs/config.md, "Limits". */
#define FUZZ_AXIS_MAX 10000000u  /* values per parameter */
#define FUZZ_GRID_MAX 1e12       /* grid points in all */
#define FUZZ_LABEL_MAX 63        /* bytes in a mark label, in a font name */

static void fuzz_broken(const char *what, const char *detail)
{
    fprintf(stderr, "fuzz: broken promise: %s: %s\n", what, detail);
    abort();
}

/* Well-formed UTF-8 (The Unicode Standard, Table 3-7: no overlong forms, no
 * surrogates, nothing above U+10FFFF). */
static int fuzz_utf8_ok(const unsigned char *s, size_t n)
{
    size_t i = 0;

    while (i < n) {
        unsigned c = s[i], lo = 0x80, hi = 0xBF;
        size_t len;
        if (c < 0x80) {
            i++;
            continue;
        }
        if (c >= 0xC2 && c <= 0xDF)
            len = 2;
        else if (c >= 0xE0 && c <= 0xEF)
            len = 3, lo = c == 0xE0 ? 0xA0 : 0x80, hi = c == 0xED ? 0x9F : 0xBF;
        else if (c >= 0xF0 && c <= 0xF4)
            len = 4, lo = c == 0xF0 ? 0x90 : 0x80, hi = c == 0xF4 ? 0x8F : 0xBF;
        else
            return 0;
        if (n - i < len || s[i + 1] < lo || s[i + 1] > hi)
            return 0;
        for (size_t k = 2; k < len; k++)
            if (s[i + k] < 0x80 || s[i + k] > 0xBF)
                return 0;
        i += len;
    }
    return 1;
}

/* A refusal: VG_ECONFIG (or VG_ENOMEM), recorded in err too, with a message
 * that is not empty and, when one_line, a single line of UTF-8 text
 * (vg_status.h: "one line, no trailing newline"). */
static void fuzz_check_refusal(vg_status st, const vg_error *err, int one_line)
{
    size_t n = strnlen(err->msg, VG_ERROR_MAX);

    if (st != VG_ECONFIG && st != VG_ENOMEM)
        fuzz_broken("status of a refusal", "neither VG_ECONFIG nor VG_ENOMEM");
    if (err->status != st)
        fuzz_broken("status of a refusal", "err->status differs from the returned status");
    if (n == 0 || n == VG_ERROR_MAX)
        fuzz_broken("message of a refusal", n ? "not NUL-terminated" : "empty");
    if (one_line && strchr(err->msg, '\n'))
        fuzz_broken("message of a refusal", err->msg);
    if (one_line && !fuzz_utf8_ok((const unsigned char *)err->msg, n))
        fuzz_broken("message of a refusal is not UTF-8", err->msg);
}

/* An accepted parameter: 1 to 10^7 values, finite, inside the documented
 * domain, no negative zero ("a negative zero is stored as zero"), strictly
 * monotonic when there are several (docs/config.md, "Values"). */
static void fuzz_check_param(vg_param_id id, const vg_param *p)
{
    const char *key = vg_param_get(id)->key;

    if (p->n < 1 || p->n > FUZZ_AXIS_MAX || !p->v)
        fuzz_broken(key, "number of values outside 1 .. 10^7, or no values");
    if (!memchr(p->user_unit, '\0', sizeof p->user_unit))
        fuzz_broken(key, "user_unit not NUL-terminated");
    for (size_t i = 0; i < p->n; i++) {
        double v = p->v[i];
        if (!isfinite(v) || v < fuzz_domain[id][0] || v > fuzz_domain[id][1])
            fuzz_broken(key, "a value is not finite or outside the accepted range");
        if (v == 0.0 && signbit(v))
            fuzz_broken(key, "a negative zero was stored");
        if (i > 0 && !(p->n > 1 && (p->v[1] > p->v[0] ? v > p->v[i - 1] : v < p->v[i - 1])))
            fuzz_broken(key, "values not strictly increasing or strictly decreasing");
    }
}

#endif

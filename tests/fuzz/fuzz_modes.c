/*
 * libFuzzer harness: the mode-table reader on arbitrary bytes, NUL bytes
 * included (vg_modes_parse and vg_modes_load, include/vg_modes.h).
 *
 * The bytes are parsed three ways: unnamed from memory, named from memory,
 * and from a file (a memfd, read through /proc/self/fd).  All three must
 * agree: same status, the same message up to the documented prefix
 * ("NAME:LINE: " or "NAME: "), the same table.  Seeds: the tables of
 * tests/data/modes/, copied at build time (tests/fuzz/seeds.sh).
 *
 * Every result is held to the promises of include/vg_modes.h: an accepted
 * table has 1 to 512 modes, each with a quantum in [1, 1000] meV, a
 * Huang-Rhys factor in [0, 50] (no negative zero), a lifetime in
 * (0, 1e12] ps or +infinity, a label of at most 63 bytes of UTF-8 without
 * a comma, control characters other than tab, or white space at its ends,
 * and increasing line numbers; input with a NUL byte is never accepted; a
 * refusal is VG_ECONFIG with one line of UTF-8 that starts with a line
 * number and ": " or is one of the whole-table messages.
 */
#define _GNU_SOURCE /* memfd_create */
#include <ctype.h>
#include <stddef.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/mman.h>
#include <unistd.h>

#include "fuzz_check.h"
#include "vg_modes.h"

int LLVMFuzzerInitialize(int *argc, char ***argv);
int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size);

static int memfd = -1;
static char memfd_path[64];
static vg_modes unnamed, named, from_file; /* about 48 KiB each */

int LLVMFuzzerInitialize(int *argc, char ***argv)
{
    (void)argc;
    (void)argv;
    (void)fuzz_check_param; /* of the shared header, for the config harnesses */
    memfd = memfd_create("fuzz-modes", 0);
    if (memfd < 0) {
        perror("fuzz_modes: memfd_create");
        exit(1);
    }
    snprintf(memfd_path, sizeof memfd_path, "/proc/self/fd/%d", memfd);
    return 0;
}

/* At most 63 bytes of UTF-8, NUL-terminated in its 64, no comma, no
 * control character but tab, no space or tab at either end. */
static void check_label(const char *s)
{
    size_t n = strnlen(s, VG_MODES_LABEL_SIZE);

    if (n == VG_MODES_LABEL_SIZE)
        fuzz_broken("label", "not NUL-terminated within 64 bytes");
    if (!fuzz_utf8_ok((const unsigned char *)s, n))
        fuzz_broken("label", "not UTF-8");
    for (size_t i = 0; i < n; i++)
        if (s[i] == ',' || ((unsigned char)s[i] < 0x20 && s[i] != '\t') || s[i] == 0x7F)
            fuzz_broken("label", "a comma or a control character");
    if (n > 0 && (s[0] == ' ' || s[0] == '\t' || s[n - 1] == ' ' || s[n - 1] == '\t'))
        fuzz_broken("label", "white space at an end");
}

static void check_accepted(const vg_modes *t)
{
    if (t->n < 1 || t->n > VG_MODES_MAX)
        fuzz_broken("accepted table", "not 1 to 512 modes");
    if (t->quantum_unit != VG_MODES_MEV && t->quantum_unit != VG_MODES_CM1)
        fuzz_broken("accepted table", "unknown quantum unit");
    for (size_t i = 0; i < t->n; i++) {
        const vg_multimode_mode *m = &t->mode[i];
        if (!(m->mode >= 1.0 && m->mode <= 1000.0))
            fuzz_broken("mode quantum", "outside 1 .. 1000 meV");
        if (!(m->huang_rhys >= 0.0 && m->huang_rhys <= 50.0) ||
            (m->huang_rhys == 0.0 && signbit(m->huang_rhys)))
            fuzz_broken("huang_rhys", "outside 0 .. 50, or a negative zero");
        if (!(m->lifetime_ps == INFINITY || (m->lifetime_ps > 0.0 && m->lifetime_ps <= 1e12)))
            fuzz_broken("lifetime_ps", "neither in (0, 1e12] nor +infinity");
        if (!t->has_lifetime && m->lifetime_ps != INFINITY)
            fuzz_broken("lifetime_ps", "finite without a lifetime column");
        check_label(t->label[i]);
        if (!t->has_label && t->label[i][0])
            fuzz_broken("label", "set without a label column");
        if (t->line[i] < 2 || (i > 0 && t->line[i] <= t->line[i - 1]))
            fuzz_broken("line numbers", "not after the header, or not increasing");
    }
}

/* An unnamed refusal: "LINE: ..." or a whole-table message. */
static void check_refused(vg_status st, const vg_error *err, const vg_modes *t)
{
    const char *m = err->msg;
    size_t d = 0;

    fuzz_check_refusal(st, err, 1);
    if (st != VG_ECONFIG)
        fuzz_broken("status of a refusal", "not VG_ECONFIG (the parser allocates nothing)");
    if (t->n != 0)
        fuzz_broken("refused table", "n is not 0");
    while (isdigit((unsigned char)m[d]))
        d++;
    if (d > 0 && m[0] != '0' && m[d] == ':' && m[d + 1] == ' ')
        return;
    if (strncmp(m, "the mode table is ", 18) != 0)
        fuzz_broken("message of a refusal not located", m);
}

static int same_table(const vg_modes *a, const vg_modes *b)
{
    if (a->n != b->n || a->quantum_unit != b->quantum_unit || a->has_label != b->has_label ||
        a->has_lifetime != b->has_lifetime)
        return 0;
    return memcmp(a->mode, b->mode, a->n * sizeof a->mode[0]) == 0 &&
           memcmp(a->label, b->label, a->n * sizeof a->label[0]) == 0 &&
           memcmp(a->line, b->line, a->n * sizeof a->line[0]) == 0;
}

/* got is want with the documented prefix of name. */
static void check_prefixed(const char *what, const char *got, const char *want, const char *name)
{
    size_t n = strlen(name);
    int located = isdigit((unsigned char)want[0]);

    if (strncmp(got, name, n) != 0 || got[n] != ':' ||
        strcmp(got + n + 1 + !located, want) != 0 || (!located && got[n + 1] != ' '))
        fuzz_broken(what, got);
}

static void check_agree(const char *what, vg_status st0, const vg_error *e0, vg_status st,
                        const vg_error *e, const vg_modes *t, const char *name)
{
    if (st != st0)
        fuzz_broken(what, "another status than the unnamed parse");
    if (st == VG_OK && !same_table(t, &unnamed))
        fuzz_broken(what, "another table than the unnamed parse");
    if (st != VG_OK)
        check_prefixed(what, e->msg, e0->msg, name);
}

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size)
{
    const char *text = (const char *)data;
    vg_error e0, e1, e2;
    vg_status st0, st1, st2;

    memset(&e0, 0, sizeof e0);
    st0 = vg_modes_parse(NULL, text, size, &unnamed, &e0);
    if (st0 == VG_OK)
        check_accepted(&unnamed);
    else
        check_refused(st0, &e0, &unnamed);
    if (st0 == VG_OK && memchr(data, '\0', size))
        fuzz_broken("a table holding a NUL byte", "accepted");

    memset(&e1, 0, sizeof e1);
    st1 = vg_modes_parse("fuzz.csv", text, size, &named, &e1);
    check_agree("named parse", st0, &e0, st1, &e1, &named, "fuzz.csv");

    if (ftruncate(memfd, 0) != 0 || pwrite(memfd, data, size, 0) != (ssize_t)size) {
        perror("fuzz_modes: writing the memfd");
        exit(1);
    }
    memset(&e2, 0, sizeof e2);
    st2 = vg_modes_load(memfd_path, &from_file, &e2);
    check_agree("file load", st0, &e0, st2, &e2, &from_file, memfd_path);
    return 0;
}

/*
 * Tests of the sweep checkpoints (src/checkpoint.h): the digest of a run's
 * inputs, the state record's text form, the metrics-file length rules, and
 * the run directory through a real file system -- fresh start, append,
 * resume, refusals, damage, the lock, replay and removal.
 *
 * References: FNV-1a 64-bit test vectors of the FNV reference test suite
 * ("" -> cbf29ce484222325, "a" -> af63dc4c8601ec8c, "foobar" ->
 * 85944171f73967e8; from memory, and reproduced with a four-line Python
 * rendering of the definition in IETF draft-eastlake-fnv); the metrics file
 * layout stated in checkpoint.h (IEEE 754 binary64, little-endian: byte k of
 * a value is bits 8k .. 8k+7 of its 64-bit pattern), rebuilt here from the
 * bytes with shifts, independently of the host's byte order; POSIX
 * advisory record locks (fcntl F_SETLK) are per process, hence the fork.
 */
#define _GNU_SOURCE /* mkdtemp, nftw */

#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>
#include <setjmp.h>
#include <cmocka.h>

#include <errno.h>
#include <fcntl.h>
#include <ftw.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <sys/wait.h>
#include <unistd.h>

#include "checkpoint.h"

#define NPOINTS 10   /* grid of the file tests */
#define CHUNK 4      /* so the chunks are 4, 4, 2 points */
#define DIR_LEN 128  /* a test's directory */
#define PATH_LEN 512 /* a file in it */

_Static_assert(VG_N_METRICS == 15, "all_on lists every metric");
static const int all_on[VG_N_METRICS] = {1, 1, 1, 1, 1, 1, 1, 1, 1, 1, 1, 1, 1, 1, 1};

static char root[64];
static int dir_count;

/* ---- helpers -------------------------------------------------------- */

static vg_ckpt_inputs base_inputs(void)
{
    vg_ckpt_inputs in = {"0.1.0", "[parameters]\ngap = 0 .. 600 meV, 11 points\n",
                         "parameters.temperature=287.5 K", NPOINTS, CHUNK, 3u, all_on, 0};
    return in;
}

/* Metric m of point p: values that need all 64 bits, a negative zero and
 * the fill value. */
static double value(size_t p, int m)
{
    if (p == 3 && m == 1)
        return -0.0;
    if (p == 7 && m == 2)
        return VG_FILL;
    return ((double)p + 0.1 * (m + 1)) * (p % 2 ? -1.0 : 1.0) / 3.0;
}

static void fill(double *x, size_t start, size_t count)
{
    for (size_t i = 0; i < count; i++)
        for (int m = 0; m < VG_N_METRICS; m++)
            x[i * VG_N_METRICS + (size_t)m] = value(start + i, m);
}

static int same_bits(double a, double b)
{
    return memcmp(&a, &b, sizeof a) == 0;
}

static void new_dir(char *dir)
{
    snprintf(dir, DIR_LEN, "%s/d%d", root, dir_count++);
    assert_int_equal(mkdir(dir, 0777), 0);
}

static void path_in(char *out, const char *dir, const char *name)
{
    snprintf(out, PATH_LEN, "%s/" VG_CKPT_DIR "/%s", dir, name);
}

static long file_size(const char *path)
{
    struct stat sb;

    return stat(path, &sb) == 0 ? (long)sb.st_size : -1;
}

static unsigned char *read_all(const char *path, size_t *len)
{
    FILE *f = fopen(path, "rb");
    unsigned char *b;
    long n;

    assert_non_null(f);
    fseek(f, 0, SEEK_END);
    n = ftell(f);
    rewind(f);
    b = malloc((size_t)n + 1);
    assert_non_null(b);
    assert_int_equal(fread(b, 1, (size_t)n, f), (size_t)n);
    fclose(f);
    *len = (size_t)n;
    return b;
}

static vg_ckpt_request request(const char *dir, int resume, const char *history)
{
    vg_ckpt_request rq = {dir, resume, "cfg/demo.ini", history, 0};
    return rq;
}

/* Fresh checkpoint in dir with the first nchunks chunks appended, kept. */
static void make_checkpoint(const char *dir, int nchunks)
{
    vg_ckpt_inputs in = base_inputs();
    vg_ckpt_request rq = request(dir, 0, "2026-01-02T03:04:05Z vibrogate sweep cfg/demo.ini");
    vg_ckpt *ck;
    vg_error err;
    double x[CHUNK * VG_N_METRICS];

    assert_int_equal(vg_ckpt_open(&ck, &rq, &in, &err), VG_OK);
    assert_int_equal(vg_ckpt_done(ck), 0);
    for (int c = 0; c < nchunks; c++) {
        size_t start = (size_t)c * CHUNK;
        size_t count = NPOINTS - start < CHUNK ? NPOINTS - start : CHUNK;
        fill(x, start, count);
        assert_int_equal(vg_ckpt_append(ck, start, count, x, &err), VG_OK);
    }
    vg_ckpt_keep(ck);
}

/* A new directory (name into dir) holding nchunks chunks, kept. */
static void kept_checkpoint(char *dir, int nchunks)
{
    new_dir(dir);
    make_checkpoint(dir, nchunks);
}

/* dir resumed with the base inputs; must succeed. */
static vg_ckpt *resumed(const char *dir)
{
    vg_ckpt_inputs in = base_inputs();
    vg_ckpt_request rq = request(dir, 1, "2026-05-05T05:05:05Z vibrogate sweep x");
    vg_ckpt *ck;
    vg_error err;

    assert_int_equal(vg_ckpt_open(&ck, &rq, &in, &err), VG_OK);
    return ck;
}

/* A new directory (name into dir) holding nchunks chunks, resumed. */
static vg_ckpt *with_checkpoint(char *dir, int nchunks)
{
    kept_checkpoint(dir, nchunks);
    return resumed(dir);
}

/* Resume dir with inputs in; the status, message in err. */
static vg_status try_resume(const char *dir, const vg_ckpt_inputs *in, vg_error *err)
{
    vg_ckpt_request rq = request(dir, 1, "2026-05-05T05:05:05Z vibrogate sweep x --resume");
    vg_ckpt *ck;
    vg_status st = vg_ckpt_open(&ck, &rq, in, err);

    if (st == VG_OK)
        vg_ckpt_keep(ck);
    return st;
}

/* ---- digest ---------------------------------------------------------- */

static void fnv_vectors(void **state)
{
    (void)state;
    assert_true(vg_ckpt_fnv1a(VG_CKPT_FNV_BASIS, "", 0) == UINT64_C(0xcbf29ce484222325));
    assert_true(vg_ckpt_fnv1a(VG_CKPT_FNV_BASIS, "a", 1) == UINT64_C(0xaf63dc4c8601ec8c));
    assert_true(vg_ckpt_fnv1a(VG_CKPT_FNV_BASIS, "foobar", 6) == UINT64_C(0x85944171f73967e8));
    /* folding in pieces is folding the whole */
    /* the word-wise variant (vg_ckpt_fnv1a_words), against values computed
     * from its definition with Python's integers: h = (h ^ w) * prime mod
     * 2^64 for each little-endian 8-byte word w; a tail shorter than 8 bytes
     * is ignored */
    {
        const unsigned char *ab = (const unsigned char *)"abcdefgh12345678";
        assert_true(vg_ckpt_fnv1a_words(VG_CKPT_FNV_BASIS, ab, 0) == VG_CKPT_FNV_BASIS);
        assert_true(vg_ckpt_fnv1a_words(VG_CKPT_FNV_BASIS, ab, 8) == UINT64_C(0x3919eeb00ee1e68c));
        assert_true(vg_ckpt_fnv1a_words(VG_CKPT_FNV_BASIS, ab, 16) == UINT64_C(0xd56ea762f43f7d27));
        assert_true(vg_ckpt_fnv1a_words(VG_CKPT_FNV_BASIS, ab, 11) == UINT64_C(0x3919eeb00ee1e68c));
        assert_true(vg_ckpt_fnv1a_words(vg_ckpt_fnv1a_words(VG_CKPT_FNV_BASIS, ab, 8), ab + 8, 8)
                    == UINT64_C(0xd56ea762f43f7d27));
    }
    assert_true(vg_ckpt_fnv1a(vg_ckpt_fnv1a(VG_CKPT_FNV_BASIS, "foo", 3), "bar", 3) ==
                UINT64_C(0x85944171f73967e8));
}

/* Exactly the part named changes (-1: none). */
static void expect_change(const vg_ckpt_inputs *in, int part)
{
    vg_ckpt_inputs b = base_inputs();
    uint64_t d0[VG_CKPT_NPARTS], d1[VG_CKPT_NPARTS];

    vg_ckpt_digest(&b, d0);
    vg_ckpt_digest(in, d1);
    for (int p = 0; p < VG_CKPT_NPARTS; p++) {
        if (p == part)
            assert_true(d0[p] != d1[p]);
        else
            assert_true(d0[p] == d1[p]);
    }
}

static void digest_inputs(void **state)
{
    char text[128], sets[64];
    int metrics[VG_N_METRICS];
    vg_ckpt_inputs in = base_inputs();

    (void)state;
    /* the same content in other buffers: the same digest */
    snprintf(text, sizeof text, "%s", in.config_text);
    snprintf(sets, sizeof sets, "%s", in.overrides);
    memcpy(metrics, all_on, sizeof metrics);
    in.config_text = text;
    in.overrides = sets;
    in.metric_on = metrics;
    expect_change(&in, -1);
    /* no overrides: NULL and "" alike (both write no config_overrides) */
    vg_ckpt_inputs a = base_inputs(), b = base_inputs();
    uint64_t da[VG_CKPT_NPARTS], db[VG_CKPT_NPARTS];
    a.overrides = NULL;
    b.overrides = "";
    vg_ckpt_digest(&a, da);
    vg_ckpt_digest(&b, db);
    assert_memory_equal(da, db, sizeof da);
    /* each input that matters, one at a time */
    in = base_inputs();
    in.version = "0.1.1";
    expect_change(&in, VG_CKPT_PART_VERSION);
    snprintf(text, sizeof text, "[parameters]\ngap = 0 .. 600 meV, 12 points\n");
    in = base_inputs();
    in.config_text = text;
    expect_change(&in, VG_CKPT_PART_TEXT);
    in = base_inputs();
    in.overrides = "parameters.temperature=287.6 K";
    expect_change(&in, VG_CKPT_PART_SETS);
    in = base_inputs();
    in.overrides = NULL;
    expect_change(&in, VG_CKPT_PART_SETS);
    in = base_inputs();
    in.npoints = NPOINTS + 1;
    expect_change(&in, VG_CKPT_PART_GRID);
    in = base_inputs();
    in.chunk = CHUNK * 2;
    expect_change(&in, VG_CKPT_PART_GRID);
    in = base_inputs();
    in.formats = 1u;
    expect_change(&in, VG_CKPT_PART_GRID);
    for (int m = 0; m < VG_N_METRICS; m++) {
        memcpy(metrics, all_on, sizeof metrics);
        metrics[m] = 0;
        in = base_inputs();
        in.metric_on = metrics;
        expect_change(&in, VG_CKPT_PART_GRID);
    }
    /* a non-zero flag is "on", whatever its value */
    memcpy(metrics, all_on, sizeof metrics);
    metrics[2] = 7;
    in = base_inputs();
    in.metric_on = metrics;
    expect_change(&in, -1);
}

/* ---- the state record ----------------------------------------------- */

static vg_ckpt_state sample_state(void)
{
    vg_ckpt_state s;

    memset(&s, 0, sizeof s);
    s.digest[0] = UINT64_C(0x0123456789abcdef);
    s.digest[1] = UINT64_C(0xfedcba9876543210);
    s.digest[2] = 0;
    s.digest[3] = UINT64_MAX;
    s.npoints = 1000003;
    s.chunk = 65536;
    s.point_bytes = 7 * 8;
    s.done = 65536 * 7;
    s.metrics_bytes = (uint64_t)s.done * s.point_bytes;
    s.metrics_fnv = UINT64_C(0x00ff00ff00ff00ff);
    s.version = "0.1.0";
    s.config_path = "my configs/demo run.ini";
    /* a --set value may hold a line break; the record must keep it */
    s.history = "2026-12-01T20:00:00Z vibrogate sweep a.ini --set scenario.notes=two\nlines";
    s.temps = ".sweep.nc.Ab12Cd\n.sweep.csv.XyZ789";
    return s;
}

static void format_text(const vg_ckpt_state *s, char **text, size_t *len)
{
    vg_error err;

    assert_int_equal(vg_ckpt_state_format(s, text, len, &err), VG_OK);
}

/* The sample state's text, for the tests that damage it. */
typedef struct {
    char *t;
    size_t n;
} text_fx;

static int setup_text(void **state)
{
    text_fx *f = malloc(sizeof *f);
    vg_ckpt_state s = sample_state();

    if (!f)
        return -1;
    format_text(&s, &f->t, &f->n);
    *state = f;
    return 0;
}

static int teardown_text(void **state)
{
    text_fx *f = *state;

    free(f->t);
    free(f);
    return 0;
}

/* The parse status of s's text; the message in err. */
static vg_status parse_formatted(const vg_ckpt_state *s, vg_error *err)
{
    vg_ckpt_state r;
    char *t;
    size_t n;
    vg_status st;

    format_text(s, &t, &n);
    st = vg_ckpt_state_parse(t, n, &r, err);
    if (st == VG_OK)
        vg_ckpt_state_free(&r);
    free(t);
    return st;
}

static void state_round_trip(void **state)
{
    text_fx *f = *state;
    vg_ckpt_state s = sample_state(), r;
    char *t2;
    size_t n2;
    vg_error err;

    assert_int_equal(vg_ckpt_state_parse(f->t, f->n, &r, &err), VG_OK);
    assert_memory_equal(r.digest, s.digest, sizeof s.digest);
    assert_int_equal(r.npoints, s.npoints);
    assert_int_equal(r.chunk, s.chunk);
    assert_int_equal(r.done, s.done);
    assert_true(r.metrics_bytes == s.metrics_bytes);
    assert_true(r.metrics_fnv == s.metrics_fnv);
    assert_string_equal(r.version, s.version);
    assert_string_equal(r.config_path, s.config_path);
    assert_string_equal(r.history, s.history);
    assert_string_equal(r.temps, s.temps);
    format_text(&r, &t2, &n2);
    assert_int_equal(f->n, n2);
    assert_memory_equal(f->t, t2, n2);
    vg_ckpt_state_free(&r);
    free(t2);
}

static void state_truncated_refused(void **state)
{
    text_fx *f = *state;
    vg_ckpt_state r;
    vg_error err;

    for (size_t len = 0; len < f->n; len++) {
        assert_int_equal(vg_ckpt_state_parse(f->t, len, &r, &err), VG_EIO);
        assert_null(r.history);
    }
}

static void state_corrupt_refused(void **state)
{
    text_fx *f = *state;
    vg_ckpt_state r;
    vg_error err;
    char *longer;

    for (size_t i = 0; i < f->n; i++) {
        f->t[i] ^= 0x01;
        assert_int_equal(vg_ckpt_state_parse(f->t, f->n, &r, &err), VG_EIO);
        f->t[i] ^= 0x01;
    }
    assert_int_equal(vg_ckpt_state_parse(f->t, f->n, &r, &err), VG_OK);
    vg_ckpt_state_free(&r);
    /* a line appended after the check sum */
    longer = malloc(f->n + 8);
    assert_non_null(longer);
    memcpy(longer, f->t, f->n);
    memcpy(longer + f->n, "done 1\n", 7);
    assert_int_equal(vg_ckpt_state_parse(longer, f->n + 7, &r, &err), VG_EIO);
    free(longer);
}

/* A record with a valid check sum whose counts do not fit is refused. */
static void expect_refused(const vg_ckpt_state *s, const char *why)
{
    vg_error err;

    assert_int_equal(parse_formatted(s, &err), VG_EIO);
    assert_non_null(strstr(err.msg, why));
}

static void state_inconsistent_refused(void **state)
{
    vg_ckpt_state s;

    (void)state;
    s = sample_state();
    s.done = s.npoints + 1;
    s.metrics_bytes = (uint64_t)s.done * s.point_bytes;
    expect_refused(&s, "more points are done");
    s = sample_state();
    s.done += 1;
    s.metrics_bytes = (uint64_t)s.done * s.point_bytes;
    expect_refused(&s, "whole number of chunks");
    s = sample_state();
    s.metrics_bytes -= 1;
    expect_refused(&s, "metrics length");
    s = sample_state();
    s.chunk = 0;
    expect_refused(&s, "zero");
    /* 8 bytes for each of 1 to VG_N_METRICS stored metrics, nothing else */
    for (uint64_t pb = 0; pb <= VG_CKPT_POINT_BYTES_MAX + 8; pb += 4) {
        s = sample_state();
        s.point_bytes = pb;
        s.metrics_bytes = (uint64_t)s.done * pb;
        if (pb == 0 || pb % 8 != 0 || pb > VG_CKPT_POINT_BYTES_MAX) {
            expect_refused(&s, "bytes a point takes");
        } else {
            vg_error err;
            assert_int_equal(parse_formatted(&s, &err), VG_OK);
        }
    }
    s = sample_state();
    s.temps = ".sweep.nc.Ab12Cd\n../../home/user/thesis.tex";
    expect_refused(&s, "not a writer's");
    s = sample_state();
    s.temps = "notes.txt";
    expect_refused(&s, "not a writer's");
    /* the last, partial chunk ends a run */
    s = sample_state();
    s.done = s.npoints;
    s.metrics_bytes = (uint64_t)s.done * s.point_bytes;
    vg_error err;
    assert_int_equal(parse_formatted(&s, &err), VG_OK);
}

static void state_other_layout_refused(void **state)
{
    text_fx *f = *state;
    char *t = f->t, *sp, *end;
    vg_ckpt_state r;
    vg_error err;

    /* layout 3 -> 4, and a fresh check sum so that only the layout differs */
    sp = strchr(t, ' ');
    assert_int_equal(sp[1], '3');
    sp[1] = '4';
    end = strstr(t, "\nend ") + 1;
    snprintf(end, 22, "end %016llx\n",
             (unsigned long long)vg_ckpt_fnv1a(VG_CKPT_FNV_BASIS, t, (size_t)(end - t)));
    assert_int_equal(vg_ckpt_state_parse(t, f->n, &r, &err), VG_EIO);
    assert_non_null(strstr(err.msg, "another version"));
}

static void length_rules(void **state)
{
    vg_error err;
    int cut = -1;

    (void)state;
    assert_int_equal(vg_ckpt_check_length(560, 560, &cut, &err), VG_OK);
    assert_int_equal(cut, 0);
    assert_int_equal(vg_ckpt_check_length(561, 560, &cut, &err), VG_OK);
    assert_int_equal(cut, 1);
    assert_int_equal(vg_ckpt_check_length(0, 0, &cut, &err), VG_OK);
    assert_int_equal(cut, 0);
    assert_int_equal(vg_ckpt_check_length(559, 560, &cut, &err), VG_EIO);
    assert_non_null(strstr(err.msg, "559 bytes, fewer than the 560"));
}

/* ---- the run directory ----------------------------------------------- */

static void append_writes_little_endian(void **state)
{
    char dir[DIR_LEN], path[PATH_LEN];
    unsigned char *b;
    size_t len;
    vg_ckpt_state s;
    vg_error err;

    (void)state;
    kept_checkpoint(dir, 3);
    path_in(path, dir, "metrics");
    b = read_all(path, &len);
    assert_int_equal(len, (size_t)NPOINTS * VG_N_METRICS * 8);
    for (size_t p = 0; p < NPOINTS; p++)
        for (int m = 0; m < VG_N_METRICS; m++) {
            const unsigned char *v = b + (p * VG_N_METRICS + (size_t)m) * 8;
            uint64_t u = 0;
            double x;
            for (int k = 0; k < 8; k++)
                u |= (uint64_t)v[k] << (8 * k);
            memcpy(&x, &u, sizeof x);
            assert_true(same_bits(x, value(p, m)));
        }
    uint64_t h = vg_ckpt_fnv1a_words(VG_CKPT_FNV_BASIS, b, len);
    free(b);
    path_in(path, dir, "state");
    b = read_all(path, &len);
    assert_int_equal(vg_ckpt_state_parse((char *)b, len, &s, &err), VG_OK);
    assert_int_equal(s.done, NPOINTS);
    assert_true(s.metrics_bytes == (uint64_t)NPOINTS * VG_N_METRICS * 8);
    assert_true(s.metrics_fnv == h);
    assert_string_equal(s.config_path, "cfg/demo.ini");
    vg_ckpt_state_free(&s);
    free(b);
}

static void resume_continues(void **state)
{
    char dir[DIR_LEN];
    vg_ckpt_inputs in = base_inputs();
    vg_ckpt_request rq;
    vg_ckpt *ck;
    vg_error err;
    double x[CHUNK * VG_N_METRICS];

    (void)state;
    kept_checkpoint(dir, 1);
    rq = request(dir, 1, "2026-05-05T05:05:05Z vibrogate sweep other.ini --resume");
    rq.config_path = "other.ini";
    assert_int_equal(vg_ckpt_open(&ck, &rq, &in, &err), VG_OK);
    assert_int_equal(vg_ckpt_done(ck), CHUNK);
    /* the outputs get the first run's history and config path */
    assert_string_equal(vg_ckpt_history(ck), "2026-01-02T03:04:05Z vibrogate sweep cfg/demo.ini");
    assert_string_equal(vg_ckpt_config_path(ck), "cfg/demo.ini");
    fill(x, CHUNK, CHUNK);
    /* a chunk that does not continue the file is refused */
    assert_int_equal(vg_ckpt_append(ck, 0, CHUNK, x, &err), VG_EIO);
    assert_int_equal(vg_ckpt_append(ck, CHUNK, CHUNK, x, &err), VG_OK);
    assert_int_equal(vg_ckpt_done(ck), 2 * CHUNK);
    vg_ckpt_keep(ck);
    /* with SOURCE_DATE_EPOCH's time stamp, that one wins */
    rq.fixed_time = 1;
    assert_int_equal(vg_ckpt_open(&ck, &rq, &in, &err), VG_OK);
    assert_int_equal(vg_ckpt_done(ck), 2 * CHUNK);
    assert_string_equal(vg_ckpt_history(ck), "2026-05-05T05:05:05Z vibrogate sweep cfg/demo.ini");
    vg_ckpt_keep(ck);
}

static void refusals_change_nothing(void **state)
{
    char dir[DIR_LEN], path[PATH_LEN];
    unsigned char *before, *after;
    size_t n0, n1;
    vg_ckpt_inputs in = base_inputs();
    vg_ckpt_request rq = request(NULL, 0, "2026-05-05T05:05:05Z vibrogate sweep x");
    vg_ckpt *ck;
    vg_error err;

    (void)state;
    kept_checkpoint(dir, 2);
    path_in(path, dir, "state");
    before = read_all(path, &n0);
    in.overrides = "parameters.temperature=300 K";
    assert_int_equal(try_resume(dir, &in, &err), VG_EUSAGE);
    assert_non_null(strstr(err.msg, "was made by a different config or version (the --set "
                                    "options differ)"));
    in = base_inputs();
    in.version = "9.9.9";
    assert_int_equal(try_resume(dir, &in, &err), VG_EUSAGE);
    assert_non_null(strstr(err.msg, "another version of vibrogate made it"));
    /* a fresh start over unfinished work */
    in = base_inputs();
    rq.dir = dir;
    assert_int_equal(vg_ckpt_open(&ck, &rq, &in, &err), VG_EUSAGE);
    assert_non_null(strstr(err.msg, "(8 of 10 points done); add --resume to finish it"));
    in.config_text = "[parameters]\n";
    assert_int_equal(vg_ckpt_open(&ck, &rq, &in, &err), VG_EUSAGE);
    assert_non_null(strstr(err.msg, "different config or version (8 of 10 points done; the "
                                    "config text (or a mode table it names) differs)"));
    /* the same text, but a mode table it names changed since the run began */
    in = base_inputs();
    in.tables = 0x1234u;
    assert_int_equal(vg_ckpt_open(&ck, &rq, &in, &err), VG_EUSAGE);
    assert_non_null(strstr(err.msg, "(or a mode table it names) differs"));
    after = read_all(path, &n1);
    assert_int_equal(n0, n1);
    assert_memory_equal(before, after, n0);
    path_in(path, dir, "metrics");
    assert_int_equal(file_size(path), 8 * VG_N_METRICS * 8);
    free(before);
    free(after);
}

static void nothing_to_resume(void **state)
{
    char dir[DIR_LEN], path[PATH_LEN];
    vg_ckpt_inputs in = base_inputs();
    vg_error err;

    (void)state;
    new_dir(dir);
    assert_int_equal(try_resume(dir, &in, &err), VG_EUSAGE);
    assert_non_null(strstr(err.msg, "nothing to resume in '"));
    snprintf(path, sizeof path, "%s/" VG_CKPT_DIR, dir);
    assert_int_equal(file_size(path), -1); /* nothing was created */
    /* a directory that does not exist at all */
    snprintf(path, sizeof path, "%s/missing", dir);
    assert_int_equal(try_resume(path, &in, &err), VG_EUSAGE);
    assert_int_equal(file_size(path), -1);
}

static void fresh_replaces_empty_record(void **state)
{
    char dir[DIR_LEN];
    vg_ckpt_inputs in = base_inputs();
    vg_ckpt_request rq;
    vg_ckpt *ck;
    vg_error err;

    (void)state;
    kept_checkpoint(dir, 0); /* a run killed before its first chunk */
    in.config_text = "[parameters]\ngap = 1 meV\n";
    rq = request(dir, 0, "2026-05-05T05:05:05Z vibrogate sweep y");
    assert_int_equal(vg_ckpt_open(&ck, &rq, &in, &err), VG_OK);
    assert_int_equal(vg_ckpt_done(ck), 0);
    assert_string_equal(vg_ckpt_history(ck), "2026-05-05T05:05:05Z vibrogate sweep y");
    vg_ckpt_keep(ck);
}

static void longer_metrics_cut_back(void **state)
{
    char dir[DIR_LEN], path[PATH_LEN];
    vg_ckpt_inputs in = base_inputs();
    vg_error err;
    FILE *f;

    (void)state;
    kept_checkpoint(dir, 2);
    path_in(path, dir, "metrics");
    f = fopen(path, "ab"); /* part of a chunk written but never recorded */
    fwrite("0123456789abc", 1, 13, f);
    fclose(f);
    assert_int_equal(file_size(path), 8 * VG_N_METRICS * 8 + 13);
    assert_int_equal(try_resume(dir, &in, &err), VG_OK);
    assert_int_equal(file_size(path), 8 * VG_N_METRICS * 8);
}

static void damaged_metrics_refused(void **state)
{
    char dir[DIR_LEN], path[PATH_LEN];
    vg_ckpt_inputs in = base_inputs();
    vg_error err;
    int fd;

    (void)state;
    kept_checkpoint(dir, 2);
    path_in(path, dir, "metrics");
    fd = open(path, O_WRONLY);
    assert_int_equal(pwrite(fd, "\x55", 1, 100), 1);
    close(fd);
    assert_int_equal(try_resume(dir, &in, &err), VG_EIO);
    assert_non_null(strstr(err.msg, "is damaged (its metrics file does not match its record)"));
    assert_int_equal(truncate(path, 8 * VG_N_METRICS * 8 - 1), 0);
    assert_int_equal(try_resume(dir, &in, &err), VG_EIO);
    assert_non_null(strstr(err.msg, "fewer than the"));
    assert_int_equal(unlink(path), 0);
    assert_int_equal(try_resume(dir, &in, &err), VG_EIO);
    assert_non_null(strstr(err.msg, "metrics file is missing"));
}

static void damaged_state_refused(void **state)
{
    char dir[DIR_LEN], path[PATH_LEN];
    vg_ckpt_inputs in = base_inputs();
    vg_ckpt_request rq = request(NULL, 0, "2026-05-05T05:05:05Z vibrogate sweep x");
    vg_ckpt *ck;
    vg_error err;

    (void)state;
    kept_checkpoint(dir, 1);
    path_in(path, dir, "state");
    assert_int_equal(truncate(path, 40), 0);
    assert_int_equal(try_resume(dir, &in, &err), VG_EIO);
    assert_non_null(strstr(err.msg, "is damaged (the record"));
    rq.dir = dir; /* nor is it overwritten by a fresh start */
    assert_int_equal(vg_ckpt_open(&ck, &rq, &in, &err), VG_EIO);
    assert_int_equal(file_size(path), 40);
}

static void second_run_locked_out(void **state)
{
    char dir[DIR_LEN];
    vg_ckpt_inputs in = base_inputs();
    vg_ckpt *ck = with_checkpoint(dir, 1);
    vg_ckpt_request rq = request(dir, 1, "2026-05-05T05:05:05Z vibrogate sweep x");
    vg_error err;
    pid_t pid;
    int status;

    (void)state;
    pid = fork();
    assert_true(pid >= 0);
    if (pid == 0) { /* another process: must be refused, not share the files */
        vg_ckpt *other;
        vg_status st = vg_ckpt_open(&other, &rq, &in, &err);
        _exit(st == VG_EIO && strstr(err.msg, "another vibrogate run is using") ? 0 : 1);
    }
    assert_int_equal(waitpid(pid, &status, 0), pid);
    assert_true(WIFEXITED(status) && WEXITSTATUS(status) == 0);
    vg_ckpt_keep(ck);
    /* the lock ends with its holder */
    assert_int_equal(try_resume(dir, &in, &err), VG_OK);
}

typedef struct {
    double got[NPOINTS * VG_N_METRICS];
    size_t starts[NPOINTS], counts[NPOINTS], calls;
} collector;

static vg_status collect(void *ctx, size_t start, size_t count, const double *m, vg_error *err)
{
    collector *c = ctx;

    (void)err;
    c->starts[c->calls] = start;
    c->counts[c->calls++] = count;
    memcpy(c->got + start * VG_N_METRICS, m, count * VG_N_METRICS * sizeof *m);
    return VG_OK;
}

static void replay_gives_back_every_bit(void **state)
{
    char dir[DIR_LEN];
    vg_ckpt *ck = with_checkpoint(dir, 2);
    vg_error err;
    collector *c = calloc(1, sizeof *c);
    volatile sig_atomic_t stop = 0;

    (void)state;
    assert_non_null(c);
    /* not complete yet */
    assert_int_equal(vg_ckpt_replay(ck, 3, NULL, collect, c, &err), VG_EIO);
    vg_ckpt_keep(ck);
    ck = with_checkpoint(dir, 3);
    assert_int_equal(vg_ckpt_replay(ck, 3, &stop, collect, c, &err), VG_OK);
    assert_int_equal(c->calls, 4); /* 3 + 3 + 3 + 1 */
    for (size_t i = 0; i < 4; i++) {
        assert_int_equal(c->starts[i], 3 * i);
        assert_int_equal(c->counts[i], i < 3 ? 3 : 1);
    }
    for (size_t p = 0; p < NPOINTS; p++)
        for (int m = 0; m < VG_N_METRICS; m++)
            assert_true(same_bits(c->got[p * VG_N_METRICS + (size_t)m], value(p, m)));
    stop = 1;
    assert_int_equal(vg_ckpt_replay(ck, 3, &stop, collect, c, &err), VG_EINTR);
    vg_ckpt_keep(ck);
    free(c);
}

/* Only the metrics the run stores are kept (in metric order, 8 bytes each),
 * and a replay gives them back bit for bit with VG_FILL in the others. */
static void only_stored_metrics_kept(void **state)
{
    static const int on[VG_N_METRICS] = {1, 0, 1, 0, 0, 1, 0, 0, 0, 0, 0, 0, 0, 0, 7};
    static const int cols[] = {0, 2, 5, 14};
    const size_t ncols = sizeof cols / sizeof *cols;
    char dir[DIR_LEN], path[PATH_LEN];
    vg_ckpt_inputs in = base_inputs();
    vg_ckpt_request rq = request(dir, 0, "2026-01-02T03:04:05Z vibrogate sweep cfg/demo.ini");
    vg_ckpt *ck;
    vg_error err;
    double x[CHUNK * VG_N_METRICS];
    collector *c = calloc(1, sizeof *c);
    unsigned char *b;
    size_t len;

    (void)state;
    assert_non_null(c);
    new_dir(dir);
    in.metric_on = on;
    assert_int_equal(vg_ckpt_open(&ck, &rq, &in, &err), VG_OK);
    for (size_t start = 0; start < NPOINTS; start += CHUNK) {
        size_t count = NPOINTS - start < CHUNK ? NPOINTS - start : CHUNK;
        fill(x, start, count);
        assert_int_equal(vg_ckpt_append(ck, start, count, x, &err), VG_OK);
    }
    path_in(path, dir, "metrics");
    b = read_all(path, &len);
    assert_int_equal(len, (size_t)NPOINTS * ncols * 8);
    for (size_t p = 0; p < NPOINTS; p++)
        for (size_t k = 0; k < ncols; k++) {
            uint64_t u = 0;
            double v;
            for (int j = 0; j < 8; j++)
                u |= (uint64_t)b[(p * ncols + k) * 8 + (size_t)j] << (8 * j);
            memcpy(&v, &u, sizeof v);
            assert_true(same_bits(v, value(p, cols[k])));
        }
    free(b);
    assert_int_equal(vg_ckpt_replay(ck, 3, NULL, collect, c, &err), VG_OK);
    for (size_t p = 0; p < NPOINTS; p++)
        for (int m = 0; m < VG_N_METRICS; m++)
            assert_true(same_bits(c->got[p * VG_N_METRICS + (size_t)m],
                                  on[m] ? value(p, m) : VG_FILL));
    vg_ckpt_keep(ck);
    /* resumed with the same metrics it goes on; with all of them it is refused */
    rq.resume = 1;
    assert_int_equal(vg_ckpt_open(&ck, &rq, &in, &err), VG_OK);
    vg_ckpt_keep(ck);
    in = base_inputs();
    assert_int_equal(try_resume(dir, &in, &err), VG_EUSAGE);
    assert_non_null(strstr(err.msg, "different config"));
    free(c);
}

static void temps_removed_on_resume(void **state)
{
    char dir[DIR_LEN], t1[PATH_LEN], t2[PATH_LEN], keep[PATH_LEN];
    vg_ckpt_inputs in = base_inputs();
    vg_ckpt *ck = with_checkpoint(dir, 3);
    vg_error err;
    const char *names[2] = {t1, t2};

    (void)state;
    snprintf(t1, sizeof t1, "%s/.sweep.nc.Q1w2E3", dir);
    snprintf(t2, sizeof t2, "%s/.sweep.csv.r4T5y6", dir);
    snprintf(keep, sizeof keep, "%s/.sweep.nc.Z9x8C7", dir); /* not named: stays */
    assert_int_equal(vg_ckpt_note_temps(ck, names, 2, &err), VG_OK);
    vg_ckpt_keep(ck);
    fclose(fopen(t1, "w"));
    fclose(fopen(t2, "w"));
    fclose(fopen(keep, "w"));
    assert_int_equal(try_resume(dir, &in, &err), VG_OK);
    assert_int_equal(file_size(t1), -1);
    assert_int_equal(file_size(t2), -1);
    assert_int_equal(file_size(keep), 0);
}

static void discard_removes_everything(void **state)
{
    char dir[DIR_LEN], path[PATH_LEN];
    vg_ckpt_inputs in = base_inputs();
    vg_ckpt *ck = with_checkpoint(dir, 2);
    vg_ckpt_request rq = request(dir, 0, "2026-05-05T05:05:05Z vibrogate sweep x");
    vg_error err;

    (void)state;
    assert_int_equal(vg_ckpt_discard(ck, &err), VG_OK);
    snprintf(path, sizeof path, "%s/" VG_CKPT_DIR, dir);
    assert_int_equal(file_size(path), -1);
    assert_int_equal(vg_ckpt_discard(NULL, &err), VG_OK);
    /* and a fresh start is allowed again */
    assert_int_equal(vg_ckpt_open(&ck, &rq, &in, &err), VG_OK);
    vg_ckpt_keep(ck);
}

/* ---- main ------------------------------------------------------------ */

static int remove_entry(const char *path, const struct stat *sb, int flag, struct FTW *ftw)
{
    (void)sb;
    (void)flag;
    (void)ftw;
    return remove(path);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(fnv_vectors),
        cmocka_unit_test(digest_inputs),
        cmocka_unit_test_setup_teardown(state_round_trip, setup_text, teardown_text),
        cmocka_unit_test_setup_teardown(state_truncated_refused, setup_text, teardown_text),
        cmocka_unit_test_setup_teardown(state_corrupt_refused, setup_text, teardown_text),
        cmocka_unit_test(state_inconsistent_refused),
        cmocka_unit_test_setup_teardown(state_other_layout_refused, setup_text, teardown_text),
        cmocka_unit_test(length_rules),
        cmocka_unit_test(append_writes_little_endian),
        cmocka_unit_test(resume_continues),
        cmocka_unit_test(refusals_change_nothing),
        cmocka_unit_test(nothing_to_resume),
        cmocka_unit_test(fresh_replaces_empty_record),
        cmocka_unit_test(longer_metrics_cut_back),
        cmocka_unit_test(damaged_metrics_refused),
        cmocka_unit_test(damaged_state_refused),
        cmocka_unit_test(second_run_locked_out),
        cmocka_unit_test(replay_gives_back_every_bit),
        cmocka_unit_test(only_stored_metrics_kept),
        cmocka_unit_test(temps_removed_on_resume),
        cmocka_unit_test(discard_removes_everything),
    };
    int failed;

    snprintf(root, sizeof root, "/tmp/vg_ckpt_XXXXXX");
    if (!mkdtemp(root)) {
        perror("mkdtemp");
        return 1;
    }
    failed = cmocka_run_group_tests(tests, NULL, NULL);
    nftw(root, remove_entry, 16, FTW_DEPTH | FTW_PHYS);
    return failed;
}

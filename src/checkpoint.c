/*
 * Checkpoints of a sweep (see checkpoint.h): the digest of a run's inputs,
 * the state record and its text form, and the run directory with its
 * metrics file.  Called by the sweep command.
 *
 * Durability (common practice for crash-safe files): data are fsynced
 * before the record that counts them; the record is replaced by rename(2)
 * of a fsynced temporary file and the directory is fsynced after it, so
 * after a crash the state is the old one or the new one, never a mix, and
 * never counts bytes the metrics file may have lost.
 */
#define _POSIX_C_SOURCE 200809L /* pread, pwrite, fsync, O_CLOEXEC, O_DIRECTORY */
#include <errno.h>
#include <fcntl.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <unistd.h>

#include "checkpoint.h"

/* First line of the state file, "KEY LAYOUT"; the layout number changes
 * with the layout of either file. */
#define STATE_KEY "vibrogate_checkpoint"
#define STATE_LAYOUT "3" /* 2: the metrics digest over 64-bit words; 3: the stored
                             metrics only, point_bytes */
#define STATE_NAME "state"
#define STATE_TMP_NAME "state.tmp"
/* Every writer's temporary file starts so (src/output.c); a name that does
 * not is never removed. */
#define TEMP_PREFIX ".sweep."
#define METRICS_NAME "metrics"
/* A state file longer than this is not ours (the history line is the only
 * long field; command lines stay far below). */
#define STATE_MAX ((size_t)64 << 20)
/* Fixed part of the state text: tag and numeric lines, generously. */
#define STATE_FIXED_MAX 512u
/* Bytes read at a time when checking the metrics file. */
#define VERIFY_BLOCK ((size_t)1 << 20)

struct vg_ckpt {
    vg_ckpt_state st;        /* as on disk */
    char *run;               /* DIR/.vibrogate-run */
    char *metrics_path, *state_path, *tmp_path;
    char *out_history;       /* history line for the outputs */
    int fd;                  /* metrics file, locked */
    int dirfd;               /* the run directory, for fsync after rename */
    unsigned char *buf;      /* encoded chunk */
    double *vals;            /* decoded chunk (replay): VG_N_METRICS a point, the
                                ones not stored VG_FILL */
    size_t cap;              /* points buf and vals hold */
    int col[VG_N_METRICS];   /* the stored metrics, in metric order */
    size_t ncols;
};

/* ---- digest ------------------------------------------------------------ */

uint64_t vg_ckpt_fnv1a(uint64_t h, const void *data, size_t len)
{
    const unsigned char *p = data;

    for (size_t i = 0; i < len; i++) {
        h ^= p[i];
        h *= VG_CKPT_FNV_PRIME;
    }
    return h;
}

/* 8 bytes as a little-endian integer, and back (a copy on little-endian
 * hosts, where the compiler does not merge the byte loops by itself). */
static inline uint64_t le64(const unsigned char *p)
{
    uint64_t w = 0;
#if defined(__BYTE_ORDER__) && __BYTE_ORDER__ == __ORDER_LITTLE_ENDIAN__
    memcpy(&w, p, sizeof w);
#else
    for (int b = 8; b-- > 0;)
        w = w << 8 | p[b];
#endif
    return w;
}

static inline void put_le64(unsigned char *p, uint64_t w)
{
#if defined(__BYTE_ORDER__) && __BYTE_ORDER__ == __ORDER_LITTLE_ENDIAN__
    memcpy(p, &w, sizeof w);
#else
    for (int b = 0; b < 8; b++)
        p[b] = (unsigned char)(w >> (8 * b));
#endif
}

uint64_t vg_ckpt_fnv1a_words(uint64_t h, const unsigned char *data, size_t len)
{
    for (size_t i = 0; i + 8 <= len; i += 8) {
        uint64_t w = le64(data + i);
        h ^= w;
        h *= VG_CKPT_FNV_PRIME;
    }
    return h;
}

/* A number as 8 little-endian bytes, so the digest is the same on any host. */
static uint64_t fold_u64(uint64_t h, uint64_t x)
{
    unsigned char b[8];

    put_le64(b, x);
    return vg_ckpt_fnv1a(h, b, sizeof b);
}

/* A string as its length then its bytes: "ab"+"c" and "a"+"bc" differ. */
static uint64_t fold_str(uint64_t h, const char *s)
{
    size_t n = s ? strlen(s) : 0;

    return vg_ckpt_fnv1a(fold_u64(h, n), s ? s : "", n);
}

void vg_ckpt_digest(const vg_ckpt_inputs *in, uint64_t d[VG_CKPT_NPARTS])
{
    uint64_t h = fold_str(VG_CKPT_FNV_BASIS, STATE_KEY " " STATE_LAYOUT);

    h = fold_u64(h, VG_N_METRICS);
    d[VG_CKPT_PART_VERSION] = fold_str(h, in->version);
    d[VG_CKPT_PART_TEXT] = fold_u64(fold_str(VG_CKPT_FNV_BASIS, in->config_text), in->tables);
    d[VG_CKPT_PART_SETS] = fold_str(VG_CKPT_FNV_BASIS, in->overrides);
    h = fold_u64(fold_u64(VG_CKPT_FNV_BASIS, in->npoints), in->chunk);
    h = fold_u64(h, in->formats);
    for (int m = 0; m < VG_N_METRICS; m++)
        h = fold_u64(h, in->metric_on[m] != 0);
    d[VG_CKPT_PART_GRID] = h;
}

/* ---- the state as text -------------------------------------------------- */

void vg_ckpt_state_free(vg_ckpt_state *s)
{
    free(s->version);
    free(s->config_path);
    free(s->history);
    free(s->temps);
    memset(s, 0, sizeof *s);
}

static size_t put_str(char *p, size_t room, const char *key, const char *s)
{
    return (size_t)snprintf(p, room, "%s %zu\n%s\n", key, strlen(s), s);
}

vg_status vg_ckpt_state_format(const vg_ckpt_state *s, char **text, size_t *len,
                               vg_error *err)
{
    size_t cap = STATE_FIXED_MAX + strlen(s->version) + strlen(s->config_path) +
                 strlen(s->history) + strlen(s->temps);
    char *t = malloc(cap);
    size_t n;

    if (!t)
        return vg_error_set(err, VG_ENOMEM, "out of memory for the checkpoint record");
    n = (size_t)snprintf(t, cap, STATE_KEY " " STATE_LAYOUT "\ndigest %016llx %016llx %016llx %016llx\n"
                         "points %zu\nchunk %zu\ndone %zu\nmetrics_bytes %llu\n"
                         "metrics_fnv1a %016llx\npoint_bytes %llu\n",
                         (unsigned long long)s->digest[0], (unsigned long long)s->digest[1],
                         (unsigned long long)s->digest[2], (unsigned long long)s->digest[3],
                         s->npoints, s->chunk, s->done, (unsigned long long)s->metrics_bytes,
                         (unsigned long long)s->metrics_fnv, (unsigned long long)s->point_bytes);
    n += put_str(t + n, cap - n, "version", s->version);
    n += put_str(t + n, cap - n, "config_path", s->config_path);
    n += put_str(t + n, cap - n, "history", s->history);
    n += put_str(t + n, cap - n, "temps", s->temps);
    n += (size_t)snprintf(t + n, cap - n, "end %016llx\n",
                          (unsigned long long)vg_ckpt_fnv1a(VG_CKPT_FNV_BASIS, t, n));
    *text = t;
    *len = n;
    return VG_OK;
}

typedef struct {
    const char *p, *end;
    const char *why;         /* first problem, NULL while none */
} cursor;

static void bad(cursor *c, const char *why)
{
    if (!c->why)
        c->why = why;
    c->p = c->end;
}

/* "KEY VALUE\n": the value's span, or NULL. */
static const char *field(cursor *c, const char *key, size_t *vlen)
{
    size_t k = strlen(key);
    const char *nl;

    if (c->why)
        return NULL;
    if ((size_t)(c->end - c->p) <= k || memcmp(c->p, key, k) != 0 || c->p[k] != ' ') {
        bad(c, "a field is missing or out of order");
        return NULL;
    }
    nl = memchr(c->p + k + 1, '\n', (size_t)(c->end - c->p) - k - 1);
    if (!nl) {
        bad(c, "the record is cut short");
        return NULL;
    }
    const char *v = c->p + k + 1;
    *vlen = (size_t)(nl - v);
    c->p = nl + 1;
    return v;
}

/* Decimal digits only, no sign, no overflow. */
static uint64_t number(cursor *c, const char *key, uint64_t max)
{
    size_t n, i;
    const char *v = field(c, key, &n);
    uint64_t x = 0;

    if (!v)
        return 0;
    for (i = 0; i < n && v[i] >= '0' && v[i] <= '9'; i++) {
        unsigned d = (unsigned)(v[i] - '0');
        if (x > (max - d) / 10) {
            bad(c, "a count is out of range");
            return 0;
        }
        x = x * 10 + d;
    }
    if (n == 0 || i != n)
        bad(c, "a count is not a whole number");
    return x;
}

/* Exactly 16 lower-case hexadecimal digits. */
static uint64_t hex16(cursor *c, const char **v, size_t n)
{
    uint64_t x = 0;

    if (n < 16) {
        bad(c, "a digest is not 16 hexadecimal digits");
        return 0;
    }
    for (size_t i = 0; i < 16; i++) {
        char ch = (*v)[i];
        int d = ch >= '0' && ch <= '9' ? ch - '0' : ch >= 'a' && ch <= 'f' ? ch - 'a' + 10 : -1;
        if (d < 0) {
            bad(c, "a digest is not 16 hexadecimal digits");
            return 0;
        }
        x = x << 4 | (uint64_t)d;
    }
    *v += 16;
    return x;
}

static void digests(cursor *c, const char *key, uint64_t *d, size_t nd)
{
    size_t n;
    const char *v = field(c, key, &n), *end = v + n;

    for (size_t i = 0; v && i < nd && !c->why; i++) {
        if (i > 0 && (v == end || *v++ != ' ')) {
            bad(c, "a digest is not 16 hexadecimal digits");
            return;
        }
        d[i] = hex16(c, &v, (size_t)(end - v));
    }
    if (v && !c->why && v != end)
        bad(c, "a digest is not 16 hexadecimal digits");
}

/* "KEY LENGTH\n" then LENGTH bytes without NUL, then "\n"; malloc'ed copy. */
static char *string(cursor *c, const char *key)
{
    size_t len = (size_t)number(c, key, STATE_MAX);
    char *s;

    if (c->why)
        return NULL;
    if ((size_t)(c->end - c->p) < len + 1 || c->p[len] != '\n' || memchr(c->p, '\0', len)) {
        bad(c, "a text field is cut short or damaged");
        return NULL;
    }
    s = malloc(len + 1);
    if (!s) {
        bad(c, "out of memory");
        return NULL;
    }
    memcpy(s, c->p, len);
    s[len] = '\0';
    c->p += len + 1;
    return s;
}

/* The last line must be "end " and the FNV-1a of everything before it. */
static const char *check_sum(const char *text, size_t len, cursor *c)
{
    const char *last;
    size_t n;

    c->p = text;
    c->end = text + len;
    c->why = NULL;
    if (len < 2 || text[len - 1] != '\n')
        return "the record is cut short";
    for (last = text + len - 1; last > text && last[-1] != '\n'; last--)
        ;
    cursor e = {last, text + len, NULL};
    const char *v = field(&e, "end", &n);
    uint64_t want = v ? hex16(&e, &v, n) : 0;
    if (e.why || n != 16)
        return "the record is cut short";
    if (want != vg_ckpt_fnv1a(VG_CKPT_FNV_BASIS, text, (size_t)(last - text)))
        return "the record fails its check sum";
    c->end = last;
    return NULL;
}

/* Only names of writers' temporary files, so that no damaged or forged
 * record can make a resume remove anything else. */
static int temps_ok(const char *t)
{
    size_t k = strlen(TEMP_PREFIX);

    while (*t) {
        size_t n = strcspn(t, "\n");
        if (n <= k || strncmp(t, TEMP_PREFIX, k) != 0 || memchr(t, '/', n))
            return 0;
        t += n + (t[n] == '\n');
    }
    return 1;
}

/* Counts that must fit together in any record this program writes. */
static const char *consistency(const vg_ckpt_state *s)
{
    if (!temps_ok(s->temps))
        return "it names a temporary file that is not a writer's";
    if (s->chunk == 0 || s->npoints == 0)
        return "the grid or the chunk size is zero";
    if (s->done > s->npoints)
        return "more points are done than the grid has";
    if (s->done % s->chunk != 0 && s->done != s->npoints)
        return "the points done are not a whole number of chunks";
    if (s->point_bytes == 0 || s->point_bytes % 8 != 0 || s->point_bytes > VG_CKPT_POINT_BYTES_MAX)
        return "the bytes a point takes are not 8 for each of 1 to 15 metrics";
    if (s->metrics_bytes != (uint64_t)s->done * s->point_bytes)
        return "the metrics length does not match the points done";
    return NULL;
}

static void parse_fields(cursor *c, vg_ckpt_state *s)
{
    size_t n;
    const char *layout = field(c, STATE_KEY, &n);

    if (layout && (n != strlen(STATE_LAYOUT) || memcmp(layout, STATE_LAYOUT, n) != 0))
        bad(c, "another version of vibrogate wrote it, in another layout");
    digests(c, "digest", s->digest, VG_CKPT_NPARTS);
    s->npoints = (size_t)number(c, "points", UINT64_MAX / VG_CKPT_POINT_BYTES_MAX);
    s->chunk = (size_t)number(c, "chunk", SIZE_MAX);
    s->done = (size_t)number(c, "done", UINT64_MAX / VG_CKPT_POINT_BYTES_MAX);
    s->metrics_bytes = number(c, "metrics_bytes", UINT64_MAX);
    const char *v = field(c, "metrics_fnv1a", &n);
    if (v) {
        s->metrics_fnv = hex16(c, &v, n);
        if (!c->why && n != 16)
            bad(c, "a digest is not 16 hexadecimal digits");
    }
    s->point_bytes = number(c, "point_bytes", UINT64_MAX);
    s->version = string(c, "version");
    s->config_path = string(c, "config_path");
    s->history = string(c, "history");
    s->temps = string(c, "temps");
    if (!c->why && c->p != c->end)
        bad(c, "it has fields this version does not know");
    if (!c->why)
        c->why = consistency(s);
}

vg_status vg_ckpt_state_parse(const char *text, size_t len, vg_ckpt_state *s,
                              vg_error *err)
{
    cursor c;
    const char *why = check_sum(text, len, &c);

    memset(s, 0, sizeof *s);
    if (!why) {
        parse_fields(&c, s);
        why = c.why;
    }
    if (!why)
        return VG_OK;
    vg_ckpt_state_free(s);
    return vg_error_set(err, VG_EIO, "%s", why);
}

vg_status vg_ckpt_check_length(uint64_t have, uint64_t want, int *cut, vg_error *err)
{
    *cut = have > want;
    if (have < want)
        return vg_error_set(err, VG_EIO, "its metrics file holds %llu bytes, fewer than the "
                            "%llu its record counts", (unsigned long long)have,
                            (unsigned long long)want);
    return VG_OK;
}

/* ---- files -------------------------------------------------------------- */

static char *join(const char *a, const char *b)
{
    size_t n = strlen(a) + strlen(b) + 2;
    char *s = malloc(n);

    if (s)
        snprintf(s, n, "%s/%s", a, b);
    return s;
}

/* pwrite (writing) or pread all len bytes at offset at, going on after
 * EINTR and short counts: 0, errno, or -1 when a read meets the end. */
static int io_all(int fd, unsigned char *p, size_t len, off_t at, int writing)
{
    while (len > 0) {
        ssize_t n = writing ? pwrite(fd, p, len, at) : pread(fd, p, len, at);
        if (n < 0 && errno == EINTR)
            continue;
        if (n <= 0)
            return n < 0 ? errno : writing ? EIO : -1;
        p += n;
        len -= (size_t)n;
        at += (off_t)n;
    }
    return 0;
}

static int pwrite_all(int fd, const unsigned char *p, size_t len, off_t at)
{
    return io_all(fd, (unsigned char *)p, len, at, 1); /* only read from */
}

static int pread_all(int fd, unsigned char *p, size_t len, off_t at)
{
    return io_all(fd, p, len, at, 0);
}

/* "cannot VERB checkpoint 'PATH': REASON"; e = -1: the file ends early. */
static vg_status io_fail(const char *verb, const char *path, int e, vg_error *err)
{
    return vg_error_set(err, VG_EIO, "cannot %s checkpoint '%s': %s", verb, path,
                        e > 0 ? strerror(e) : "the file ends early");
}

/* The reason in err becomes "checkpoint 'RUN' is damaged (REASON); ...". */
static vg_status damaged(const vg_ckpt *ck, vg_error *err)
{
    char why[VG_ERROR_MAX];

    snprintf(why, sizeof why, "%s", err ? err->msg : "");
    return vg_error_set(err, VG_EIO, "checkpoint '%s' is damaged (%s); remove it to start "
                        "afresh", ck->run, why);
}

static vg_status write_state(vg_ckpt *ck, const vg_ckpt_state *s, vg_error *err)
{
    char *text;
    size_t len;
    vg_status st = vg_ckpt_state_format(s, &text, &len, err);
    int fd, e = 0;

    if (st != VG_OK)
        return st;
    fd = open(ck->tmp_path, O_WRONLY | O_CREAT | O_TRUNC | O_CLOEXEC, 0666);
    if (fd < 0)
        e = errno;
    else
        e = pwrite_all(fd, (const unsigned char *)text, len, 0);
    if (fd >= 0 && e == 0 && fsync(fd) != 0)
        e = errno;
    if (fd >= 0 && close(fd) != 0 && e == 0)
        e = errno;
    if (e == 0 && rename(ck->tmp_path, ck->state_path) != 0)
        e = errno;
    if (e == 0 && fsync(ck->dirfd) != 0)
        e = errno;
    free(text);
    return e ? io_fail("write", ck->state_path, e, err) : VG_OK;
}

/* Read and parse the state file; *found = 0 when there is none. */
static vg_status read_state(vg_ckpt *ck, vg_ckpt_state *s, int *found, vg_error *err)
{
    struct stat sb;
    char *text;
    int fd = open(ck->state_path, O_RDONLY | O_CLOEXEC), e;
    vg_status st;

    *found = !(fd < 0 && errno == ENOENT);
    if (fd < 0)
        return *found ? io_fail("read", ck->state_path, errno, err) : VG_OK;
    if (fstat(fd, &sb) != 0 || (uint64_t)sb.st_size > STATE_MAX) {
        close(fd);
        vg_error_set(err, VG_EIO, "its record is far too long");
        return damaged(ck, err);
    }
    text = malloc((size_t)sb.st_size + 1);
    e = text ? pread_all(fd, (unsigned char *)text, (size_t)sb.st_size, 0) : ENOMEM;
    close(fd);
    if (e != 0) {
        free(text);
        return io_fail("read", ck->state_path, e, err);
    }
    st = vg_ckpt_state_parse(text, (size_t)sb.st_size, s, err);
    free(text);
    return st == VG_OK ? VG_OK : damaged(ck, err);
}

/* Room for n points in buf and vals; the metrics not stored are VG_FILL in
 * vals from here on (decode writes only the stored ones). */
static int reserve(vg_ckpt *ck, size_t n)
{
    unsigned char *b;
    double *v;

    if (n <= ck->cap)
        return 0;
    b = realloc(ck->buf, n * (size_t)ck->st.point_bytes);
    if (b)
        ck->buf = b;
    v = realloc(ck->vals, n * VG_N_METRICS * sizeof *v);
    if (v)
        ck->vals = v;
    if (!b || !v)
        return -1;
    for (size_t i = 0; i < n * VG_N_METRICS; i++)
        v[i] = VG_FILL;
    ck->cap = n;
    return 0;
}

/* The stored metrics of n points of x (VG_N_METRICS a point) into out, as
 * the file holds them. */
static void encode(const vg_ckpt *ck, unsigned char *out, const double *x, size_t n)
{
    for (size_t i = 0; i < n; i++, x += VG_N_METRICS)
        for (size_t c = 0; c < ck->ncols; c++, out += 8) {
            uint64_t u;
            memcpy(&u, &x[ck->col[c]], sizeof u);
            put_le64(out, u);
        }
}

/* The inverse of encode, into the stored metrics of x. */
static void decode(const vg_ckpt *ck, double *x, const unsigned char *in, size_t n)
{
    for (size_t i = 0; i < n; i++, x += VG_N_METRICS)
        for (size_t c = 0; c < ck->ncols; c++, in += 8) {
            uint64_t u = le64(in);
            memcpy(&x[ck->col[c]], &u, sizeof u);
        }
}

/* FNV-1a of the first len bytes of the metrics file. */
static vg_status metrics_digest(vg_ckpt *ck, uint64_t len, uint64_t *h, vg_error *err)
{
    unsigned char *blk = malloc(VERIFY_BLOCK);
    uint64_t at = 0;
    int e = blk ? 0 : ENOMEM;

    *h = VG_CKPT_FNV_BASIS;
    while (e == 0 && at < len) {
        size_t n = len - at < VERIFY_BLOCK ? (size_t)(len - at) : VERIFY_BLOCK;
        e = pread_all(ck->fd, blk, n, (off_t)at);
        *h = vg_ckpt_fnv1a_words(*h, blk, n);
        at += n;
    }
    free(blk);
    return e != 0 ? io_fail("read", ck->metrics_path, e, err) : VG_OK;
}

/* ---- opening ------------------------------------------------------------ */

static void ckpt_free(vg_ckpt *ck)
{
    if (!ck)
        return;
    if (ck->fd >= 0)
        close(ck->fd);
    if (ck->dirfd >= 0)
        close(ck->dirfd);
    vg_ckpt_state_free(&ck->st);
    free(ck->run);
    free(ck->metrics_path);
    free(ck->state_path);
    free(ck->tmp_path);
    free(ck->out_history);
    free(ck->buf);
    free(ck->vals);
    free(ck);
}

static vg_ckpt *ckpt_alloc(const char *dir)
{
    vg_ckpt *ck = calloc(1, sizeof *ck);

    if (!ck)
        return NULL;
    ck->fd = ck->dirfd = -1;
    ck->run = join(dir, VG_CKPT_DIR);
    if (ck->run) {
        ck->metrics_path = join(ck->run, METRICS_NAME);
        ck->state_path = join(ck->run, STATE_NAME);
        ck->tmp_path = join(ck->run, STATE_TMP_NAME);
    }
    if (!ck->metrics_path || !ck->state_path || !ck->tmp_path) {
        ckpt_free(ck);
        return NULL;
    }
    return ck;
}

/* Lock the metrics file and open the run directory. */
static vg_status lock_run(vg_ckpt *ck, const char *dir, vg_error *err)
{
    struct flock fl;

    memset(&fl, 0, sizeof fl);
    fl.l_type = F_WRLCK;
    fl.l_whence = SEEK_SET;
    if (fcntl(ck->fd, F_SETLK, &fl) != 0) {
        if (errno == EACCES || errno == EAGAIN)
            return vg_error_set(err, VG_EIO, "another vibrogate run is using '%s' (its "
                                "checkpoint '%s' is locked)", dir, ck->run);
        return vg_error_set(err, VG_EIO, "cannot lock checkpoint '%s': %s", ck->metrics_path,
                            strerror(errno));
    }
    ck->dirfd = open(ck->run, O_RDONLY | O_DIRECTORY | O_CLOEXEC);
    if (ck->dirfd < 0)
        return vg_error_set(err, VG_EIO, "cannot open checkpoint directory '%s': %s",
                            ck->run, strerror(errno));
    return VG_OK;
}

/* The first part of the digest that differs, in words. */
static const char *difference(const uint64_t *a, const uint64_t *b)
{
    if (a[VG_CKPT_PART_VERSION] != b[VG_CKPT_PART_VERSION])
        return "another version of vibrogate made it";
    if (a[VG_CKPT_PART_TEXT] != b[VG_CKPT_PART_TEXT])
        return "the config text (or a mode table it names) differs";
    if (a[VG_CKPT_PART_SETS] != b[VG_CKPT_PART_SETS])
        return "the --set options differ";
    if (a[VG_CKPT_PART_GRID] != b[VG_CKPT_PART_GRID])
        return "the grid or output settings differ";
    return NULL;
}

/* The command part of a history line (after its time stamp). */
static const char *command_of(const char *history)
{
    const char *sp = strchr(history, ' ');

    return sp ? sp + 1 : "";
}

/* Without --resume: only a record with no work done may be replaced. */
static vg_status refuse_fresh(const vg_ckpt *ck, const vg_ckpt_request *rq,
                              const uint64_t *digest, const vg_ckpt_state *old, vg_error *err)
{
    const char *why = difference(old->digest, digest);

    if (!why)
        return vg_error_set(err, VG_EUSAGE, "'%s' holds an unfinished run of this config "
                            "(%zu of %zu points done); add --resume to finish it, or remove "
                            "'%s' to start afresh", rq->dir, old->done, old->npoints, ck->run);
    return vg_error_set(err, VG_EUSAGE, "'%s' holds an unfinished run of a different config "
                        "or version (%zu of %zu points done; %s); remove '%s' to start "
                        "afresh, or finish that run by adding --resume to its command "
                        "(history: %s)", rq->dir, old->done, old->npoints, why, ck->run,
                        command_of(old->history));
}

static vg_status new_state(vg_ckpt_state *s, const vg_ckpt_request *rq,
                           const vg_ckpt_inputs *in, const uint64_t *digest, vg_error *err)
{
    memset(s, 0, sizeof *s);
    memcpy(s->digest, digest, sizeof s->digest);
    s->npoints = in->npoints;
    s->chunk = in->chunk;
    s->metrics_fnv = VG_CKPT_FNV_BASIS;
    s->version = strdup(in->version);
    s->config_path = strdup(rq->config_path);
    s->history = strdup(rq->history);
    s->temps = strdup("");
    if (!s->version || !s->config_path || !s->history || !s->temps) {
        vg_ckpt_state_free(s);
        return vg_error_set(err, VG_ENOMEM, "out of memory for the checkpoint record");
    }
    return VG_OK;
}

/* Best effort: make the new directory entry durable. */
static void sync_path(const char *dir)
{
    int fd = open(dir, O_RDONLY | O_DIRECTORY | O_CLOEXEC);

    if (fd >= 0) {
        (void)fsync(fd);
        close(fd);
    }
}

/* The metrics file, created when absent (*made = 1). */
static int open_metrics(vg_ckpt *ck, int create, int *made)
{
    *made = 0;
    ck->fd = open(ck->metrics_path, O_RDWR | O_CLOEXEC);
    if (ck->fd >= 0 || errno != ENOENT || !create)
        return ck->fd;
    ck->fd = open(ck->metrics_path, O_RDWR | O_CREAT | O_EXCL | O_CLOEXEC, 0666);
    if (ck->fd >= 0)
        *made = 1;
    else if (errno == EEXIST) /* another run made it just now */
        ck->fd = open(ck->metrics_path, O_RDWR | O_CLOEXEC);
    return ck->fd;
}

static vg_status start_fresh(vg_ckpt *ck, const vg_ckpt_request *rq,
                             const vg_ckpt_inputs *in, const uint64_t *digest, vg_error *err)
{
    vg_ckpt_state old;
    int found;
    vg_status st = read_state(ck, &old, &found, err);

    if (st != VG_OK)
        return st;
    if (found && old.done > 0)
        st = refuse_fresh(ck, rq, digest, &old, err);
    if (found)
        vg_ckpt_state_free(&old);
    if (st == VG_OK)
        st = new_state(&ck->st, rq, in, digest, err);
    if (st == VG_OK)
        ck->st.point_bytes = 8u * ck->ncols;
    if (st == VG_OK && ftruncate(ck->fd, 0) != 0)
        st = io_fail("write", ck->metrics_path, errno, err);
    if (st == VG_OK)
        st = write_state(ck, &ck->st, err);
    return st;
}

static vg_status open_fresh(vg_ckpt *ck, const vg_ckpt_request *rq,
                            const vg_ckpt_inputs *in, const uint64_t *digest, vg_error *err)
{
    int made_dir = mkdir(ck->run, 0777) == 0, made_file;
    vg_status st;

    if (!made_dir && errno != EEXIST)
        return vg_error_set(err, VG_EIO, "cannot create checkpoint directory '%s': %s",
                            ck->run, strerror(errno));
    if (made_dir)
        sync_path(rq->dir);
    if (open_metrics(ck, 1, &made_file) < 0)
        st = io_fail("create", ck->metrics_path, errno, err);
    else
        st = lock_run(ck, rq->dir, err);
    if (st == VG_OK)
        st = start_fresh(ck, rq, in, digest, err);
    if (st != VG_OK && made_file) {
        unlink(ck->state_path);
        unlink(ck->metrics_path);
    }
    if (st != VG_OK && made_dir)
        rmdir(ck->run);
    return st;
}

/* Resume: the state must match, the metrics file must hold what it counts. */
static vg_status check_resume(vg_ckpt *ck, const vg_ckpt_request *rq, const uint64_t *digest,
                              vg_error *err)
{
    struct stat sb;
    uint64_t h;
    int cut;
    const char *why = difference(ck->st.digest, digest);
    vg_status st;

    if (why)
        return vg_error_set(err, VG_EUSAGE, "the checkpoint in '%s' was made by a different "
                            "config or version (%s); remove '%s' to start afresh, or resume "
                            "with the config and options of the run that made it (history: "
                            "%s)", rq->dir, why, ck->run, command_of(ck->st.history));
    if (ck->st.point_bytes != 8u * ck->ncols) {
        vg_error_set(err, VG_EIO, "its points take %llu bytes, not 8 for each of the %zu "
                     "stored metrics", (unsigned long long)ck->st.point_bytes, ck->ncols);
        return damaged(ck, err);
    }
    if (fstat(ck->fd, &sb) != 0)
        return io_fail("read", ck->metrics_path, errno, err);
    if (vg_ckpt_check_length((uint64_t)sb.st_size, ck->st.metrics_bytes, &cut, err) != VG_OK)
        return damaged(ck, err);
    if (cut && (ftruncate(ck->fd, (off_t)ck->st.metrics_bytes) != 0 || fsync(ck->fd) != 0))
        return io_fail("cut back", ck->metrics_path, errno, err);
    st = metrics_digest(ck, ck->st.metrics_bytes, &h, err);
    if (st == VG_OK && h != ck->st.metrics_fnv) {
        vg_error_set(err, VG_EIO, "its metrics file does not match its record");
        return damaged(ck, err);
    }
    return st;
}

/* The stored history, its time stamp replaced by this run's when fixed. */
static vg_status resume_history(vg_ckpt *ck, const vg_ckpt_request *rq, vg_error *err)
{
    const char *old = ck->st.history, *sp = strchr(rq->history, ' ');
    size_t stamp = sp ? (size_t)(sp - rq->history) + 1 : 0;
    size_t n = strlen(old) + stamp + 2;

    ck->out_history = malloc(n);
    if (!ck->out_history)
        return vg_error_set(err, VG_ENOMEM, "out of memory for the checkpoint record");
    if (rq->fixed_time && stamp > 0)
        snprintf(ck->out_history, n, "%.*s%s", (int)stamp, rq->history, command_of(old));
    else
        snprintf(ck->out_history, n, "%s", old);
    return VG_OK;
}

/* Best effort: the temporary files of writers a kill left behind. */
static void remove_temps(vg_ckpt *ck, const char *dir)
{
    const char *t = ck->st.temps;

    while (*t) {
        size_t n = strcspn(t, "\n");
        char *path = malloc(strlen(dir) + n + 2);
        if (path) {
            sprintf(path, "%s/%.*s", dir, (int)n, t);
            unlink(path);
            free(path);
        }
        t += n + (t[n] == '\n');
    }
    ck->st.temps[0] = '\0';
}

static vg_status open_resume(vg_ckpt *ck, const vg_ckpt_request *rq, const uint64_t *digest,
                             vg_error *err)
{
    struct stat sb;
    int found = 0, made;
    vg_status st;

    if (open_metrics(ck, 0, &made) < 0) {
        if (errno != ENOENT)
            return io_fail("open", ck->metrics_path, errno, err);
        if (stat(ck->state_path, &sb) != 0)
            return vg_error_set(err, VG_EUSAGE, "nothing to resume in '%s' (no checkpoint "
                                "'%s'); run the sweep without --resume", rq->dir, ck->run);
        vg_error_set(err, VG_EIO, "its metrics file is missing");
        return damaged(ck, err);
    }
    st = lock_run(ck, rq->dir, err);
    if (st == VG_OK)
        st = read_state(ck, &ck->st, &found, err);
    if (st == VG_OK && !found)
        return vg_error_set(err, VG_EUSAGE, "nothing to resume in '%s' (checkpoint '%s' "
                            "records no run); run the sweep without --resume", rq->dir, ck->run);
    if (st == VG_OK)
        st = check_resume(ck, rq, digest, err);
    if (st == VG_OK)
        st = resume_history(ck, rq, err);
    if (st == VG_OK)
        remove_temps(ck, rq->dir);
    return st;
}

vg_status vg_ckpt_open(vg_ckpt **out, const vg_ckpt_request *rq, const vg_ckpt_inputs *in,
                       vg_error *err)
{
    uint64_t digest[VG_CKPT_NPARTS];
    vg_ckpt *ck = ckpt_alloc(rq->dir);
    vg_status st;

    *out = NULL;
    if (!ck)
        return vg_error_set(err, VG_ENOMEM, "out of memory opening the checkpoint in '%s'",
                            rq->dir);
    for (int m = 0; m < VG_N_METRICS; m++)
        if (in->metric_on[m])
            ck->col[ck->ncols++] = m;
    if (ck->ncols == 0) {
        ckpt_free(ck);
        return vg_error_set(err, VG_EIO, "a checkpoint needs at least one stored metric");
    }
    if (in->npoints > (uint64_t)INT64_MAX / VG_CKPT_POINT_BYTES_MAX || in->chunk == 0) {
        ckpt_free(ck);
        return vg_error_set(err, VG_EIO, "a checkpoint cannot hold a grid of %zu points",
                            in->npoints);
    }
    vg_ckpt_digest(in, digest);
    st = rq->resume ? open_resume(ck, rq, digest, err) : open_fresh(ck, rq, in, digest, err);
    if (st == VG_OK && !ck->out_history && !(ck->out_history = strdup(rq->history)))
        st = vg_error_set(err, VG_ENOMEM, "out of memory for the checkpoint record");
    if (st != VG_OK) {
        ckpt_free(ck);
        return st;
    }
    *out = ck;
    return VG_OK;
}

/* ---- using it ----------------------------------------------------------- */

size_t vg_ckpt_done(const vg_ckpt *ck)
{
    return ck->st.done;
}

const char *vg_ckpt_history(const vg_ckpt *ck)
{
    return ck->out_history;
}

const char *vg_ckpt_config_path(const vg_ckpt *ck)
{
    return ck->st.config_path;
}

const char *vg_ckpt_path(const vg_ckpt *ck)
{
    return ck->run;
}

vg_status vg_ckpt_append(void *ctx, size_t start, size_t count, const double *metrics,
                         vg_error *err)
{
    vg_ckpt *ck = ctx;
    vg_ckpt_state next = ck->st;
    uint64_t bytes = (uint64_t)count * ck->st.point_bytes;
    int e;

    if (start != ck->st.done || count > ck->st.npoints - start)
        return vg_error_set(err, VG_EIO, "cannot write checkpoint '%s': points %zu .. %zu do "
                            "not continue at point %zu of %zu", ck->metrics_path, start,
                            start + count - 1, ck->st.done, ck->st.npoints);
    if (reserve(ck, count) != 0)
        return vg_error_set(err, VG_ENOMEM, "out of memory writing checkpoint '%s'",
                            ck->metrics_path);
    encode(ck, ck->buf, metrics, count);
    e = pwrite_all(ck->fd, ck->buf, (size_t)bytes, (off_t)ck->st.metrics_bytes);
    if (e == 0 && fsync(ck->fd) != 0)
        e = errno;
    if (e != 0)
        return io_fail("write", ck->metrics_path, e, err);
    next.done += count;
    next.metrics_bytes += bytes;
    next.metrics_fnv = vg_ckpt_fnv1a_words(next.metrics_fnv, ck->buf, (size_t)bytes);
    vg_status st = write_state(ck, &next, err);
    if (st == VG_OK)
        ck->st = next; /* the strings are shared, not copied */
    return st;
}

vg_status vg_ckpt_note_temps(vg_ckpt *ck, const char *const *paths, size_t n, vg_error *err)
{
    vg_ckpt_state next = ck->st;
    size_t len = 1;
    char *t;

    for (size_t i = 0; i < n; i++)
        len += strlen(paths[i]) + 1;
    t = malloc(len);
    if (!t)
        return vg_error_set(err, VG_ENOMEM, "out of memory for the checkpoint record");
    t[0] = '\0';
    for (size_t i = 0; i < n; i++) {
        const char *slash = strrchr(paths[i], '/');
        strcat(t, i ? "\n" : "");
        strcat(t, slash ? slash + 1 : paths[i]);
    }
    next.temps = t;
    vg_status st = write_state(ck, &next, err);
    if (st != VG_OK) {
        free(t);
        return st;
    }
    free(ck->st.temps);
    ck->st.temps = t;
    return VG_OK;
}

vg_status vg_ckpt_replay(vg_ckpt *ck, size_t chunk, volatile sig_atomic_t *stop,
                         vg_sweep_sink sink, void *ctx, vg_error *err)
{
    size_t n = ck->st.npoints, start, count;
    uint64_t h = VG_CKPT_FNV_BASIS;

    if (ck->st.done != n || chunk == 0)
        return vg_error_set(err, VG_EIO, "checkpoint '%s' holds %zu of %zu points, not all",
                            ck->run, ck->st.done, n);
    chunk = chunk < n ? chunk : n;
    if (reserve(ck, chunk) != 0)
        return vg_error_set(err, VG_ENOMEM, "out of memory reading checkpoint '%s'", ck->run);
    for (start = 0; start < n; start += count) {
        if (stop && *stop)
            return vg_error_set(err, VG_EINTR, "interrupted while writing the outputs");
        count = n - start < chunk ? n - start : chunk;
        size_t bytes = count * (size_t)ck->st.point_bytes;
        int e = pread_all(ck->fd, ck->buf, bytes, (off_t)(start * ck->st.point_bytes));
        if (e != 0)
            return io_fail("read", ck->metrics_path, e, err);
        h = vg_ckpt_fnv1a_words(h, ck->buf, bytes);
        decode(ck, ck->vals, ck->buf, count);
        vg_status st = sink(ctx, start, count, ck->vals, err);
        if (st != VG_OK)
            return st;
    }
    if (h != ck->st.metrics_fnv)
        return vg_error_set(err, VG_EIO, "checkpoint '%s' changed while it was read back "
                            "(its metrics do not match their record)", ck->metrics_path);
    return VG_OK;
}

void vg_ckpt_keep(vg_ckpt *ck)
{
    ckpt_free(ck);
}

/* Remove path (rmdir when dir); keep the first failure in *failed, *e. */
static void remove_one(const char *path, int dir, const char **failed, int *e)
{
    if ((dir ? rmdir(path) : unlink(path)) == 0 || errno == ENOENT || *failed)
        return;
    *failed = path;
    *e = errno;
}

vg_status vg_ckpt_discard(vg_ckpt *ck, vg_error *err)
{
    const char *failed = NULL;
    int e = 0;
    vg_status st = VG_OK;

    if (!ck)
        return VG_OK;
    /* The state first: whatever is left after a failure is no checkpoint. */
    remove_one(ck->state_path, 0, &failed, &e);
    remove_one(ck->tmp_path, 0, &failed, &e);
    remove_one(ck->metrics_path, 0, &failed, &e);
    remove_one(ck->run, 1, &failed, &e);
    if (failed)
        st = vg_error_set(err, VG_EIO, "cannot remove checkpoint '%s': %s", failed,
                          strerror(e));
    ckpt_free(ck);
    return st;
}

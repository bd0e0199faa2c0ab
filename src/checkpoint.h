/*
 * Checkpoints of a sweep: the metrics of every finished chunk are kept in
 * the output directory, so that a run stopped by Ctrl-C, kill -9 or a power
 * cut can be finished by `vibrogate sweep CONFIG --resume` and still give
 * the files an uninterrupted run gives.  Private to the program; called by
 * the sweep command (src/cmd_sweep.c), which computes into the checkpoint
 * and, once every point is there, feeds the writers from it.
 *
 * DIR/.vibrogate-run/ holds two files:
 *   metrics  points 0 .. done-1 in flat order, one IEEE 754 binary64
 *            value per stored metric (metric_on) and point, in metric
 *            order, little-endian whatever the host; written chunk by
 *            chunk and fsynced before the state counts it (the metrics the
 *            run does not store are not kept: they come back as VG_FILL,
 *            which no writer reads);
 *   state    a small text record, replaced atomically (write a temporary
 *            file, fsync, rename) after every chunk: format tag, digest of
 *            everything that determines the output, points done, valid
 *            length and FNV-1a digest of the metrics file, the original
 *            config path and history line (so that a resumed run's metadata
 *            equals the uninterrupted run's), and the writers' temporary
 *            files once they exist (so that a resume after a kill while
 *            they were being written removes them).
 * A kill between the two steps leaves a metrics file longer than the state
 * says; resuming cuts it back, and that chunk is computed again.  The
 * metrics file is locked (fcntl) while a run uses it, so two runs cannot
 * share a checkpoint; the lock ends with the process, even after kill -9.
 */
#ifndef VG_CHECKPOINT_H
#define VG_CHECKPOINT_H

#include <signal.h>
#include <stddef.h>
#include <stdint.h>
#include "vg_metrics.h"
#include "vg_status.h"
#include "vg_sweep.h"

#define VG_CKPT_DIR ".vibrogate-run"
/* Bytes one grid point takes in the metrics file: 8 per stored metric, at
 * most this. */
#define VG_CKPT_POINT_BYTES_MAX ((uint64_t)VG_N_METRICS * 8u)

/* FNV-1a, 64 bits (Fowler, Noll and Vo; IETF draft-eastlake-fnv): start
 * from VG_CKPT_FNV_BASIS and fold bytes in with vg_ckpt_fnv1a. */
#define VG_CKPT_FNV_BASIS UINT64_C(0xcbf29ce484222325)
#define VG_CKPT_FNV_PRIME UINT64_C(0x100000001b3)
uint64_t vg_ckpt_fnv1a(uint64_t h, const void *data, size_t len);

/* The same step applied to 64-bit words instead of bytes: each 8 bytes of
 * data, read as a little-endian integer w, fold in as h = (h ^ w) * prime
 * (len a multiple of 8; a shorter tail is ignored).  Eight times fewer
 * multiplications than vg_ckpt_fnv1a, for the metrics file, whose length is
 * always a multiple of 8; a project variant of FNV-1a, not the published
 * function. */
uint64_t vg_ckpt_fnv1a_words(uint64_t h, const unsigned char *data, size_t len);

/* Everything that determines a sweep's output besides the history line and
 * the config's path, which the checkpoint stores and a resumed run reuses. */
typedef struct {
    const char *version;     /* program version */
    const char *config_text; /* the config file's text */
    const char *overrides;   /* --set lines joined by '\n'; NULL = none, as "" */
    size_t npoints;          /* grid points */
    size_t chunk;            /* points per chunk */
    unsigned formats;        /* VG_FMT_* bits */
    const int *metric_on;    /* [VG_N_METRICS], 0 or 1 */
    uint64_t tables;         /* digest of the odorants' mode tables as read (their
                                files may change between runs), 0 without */
} vg_ckpt_inputs;

/* The digest in parts, so that a refusal can say what differs. */
enum {
    VG_CKPT_PART_VERSION,    /* program version and checkpoint layout */
    VG_CKPT_PART_TEXT,       /* config text and the mode tables it names */
    VG_CKPT_PART_SETS,       /* --set overrides */
    VG_CKPT_PART_GRID,       /* points, chunk, formats, metrics */
    VG_CKPT_NPARTS
};

void vg_ckpt_digest(const vg_ckpt_inputs *in, uint64_t digest[VG_CKPT_NPARTS]);

/* The state file's content. */
typedef struct {
    uint64_t digest[VG_CKPT_NPARTS];
    char *version;           /* program version that made it (owned) */
    size_t npoints;          /* grid points */
    size_t chunk;            /* points per chunk */
    uint64_t point_bytes;    /* bytes a point takes: 8 per stored metric */
    size_t done;             /* points 0 .. done-1 are in the metrics file */
    uint64_t metrics_bytes;  /* its valid length, done * point_bytes */
    uint64_t metrics_fnv;    /* vg_ckpt_fnv1a_words of those bytes */
    char *config_path;       /* config path of the run that started it (owned) */
    char *history;           /* its history line (owned) */
    char *temps;             /* writers' temporary files in the output
                                directory: base names starting ".sweep.",
                                '\n' between them, "" for none (owned) */
} vg_ckpt_state;

/* The state as text (*text malloc'ed, *len bytes, no NUL counted).
 * Returns VG_OK or VG_ENOMEM. */
vg_status vg_ckpt_state_format(const vg_ckpt_state *s, char **text, size_t *len,
                               vg_error *err);

/* Parse what vg_ckpt_state_format wrote; anything else -- truncated, any
 * byte changed, counts that do not fit together -- is VG_EIO with the
 * reason (no location).  On success the caller frees s with
 * vg_ckpt_state_free; on failure s holds nothing. */
vg_status vg_ckpt_state_parse(const char *text, size_t len, vg_ckpt_state *s,
                              vg_error *err);

void vg_ckpt_state_free(vg_ckpt_state *s);

/* The rule for a metrics file of have bytes when the state records want:
 * equal is fine, longer must be cut back to want (*cut = 1: a chunk written
 * but not recorded), shorter is VG_EIO (recorded work is missing). */
vg_status vg_ckpt_check_length(uint64_t have, uint64_t want, int *cut, vg_error *err);

typedef struct vg_ckpt vg_ckpt;

typedef struct {
    const char *dir;         /* output directory; must exist unless resume */
    int resume;              /* 1: continue the checkpoint there, 0: start one */
    const char *config_path; /* this run's config path */
    const char *history;     /* this run's history line: time stamp, command */
    int fixed_time;          /* 1: its time stamp is SOURCE_DATE_EPOCH, which
                                wins over the stored one on resume */
} vg_ckpt_request;

/* Start (resume = 0) or continue (resume = 1) the checkpoint of rq->dir for
 * a run with inputs in.  On success *ck is ready for points from
 * vg_ckpt_done(*ck) on.  Errors:
 *   VG_EUSAGE  resume with nothing to resume; resume of a checkpoint made by
 *              other inputs; a fresh start over unfinished work (never
 *              overwritten: the message says how to resume or remove it);
 *   VG_EIO     the directory cannot be made or locked, another run uses it,
 *              or the checkpoint is damaged;
 *   VG_ENOMEM.
 * A refused resume changes nothing on disk; an accepted one removes the
 * writers' temporary files the checkpoint names. */
vg_status vg_ckpt_open(vg_ckpt **ck, const vg_ckpt_request *rq, const vg_ckpt_inputs *in,
                       vg_error *err);

/* Points already in the checkpoint: where the sweep starts. */
size_t vg_ckpt_done(const vg_ckpt *ck);
/* The history line and config path the outputs must record: the stored
 * ones on resume (the time stamp replaced when rq->fixed_time). */
const char *vg_ckpt_history(const vg_ckpt *ck);
const char *vg_ckpt_config_path(const vg_ckpt *ck);
/* "DIR/.vibrogate-run", for messages. */
const char *vg_ckpt_path(const vg_ckpt *ck);

/* A vg_sweep_sink (ctx = the vg_ckpt): append points start .. start+count-1
 * (start must equal vg_ckpt_done), fsync, then record them in the state.
 * VG_EIO when a write fails (the state still describes the file) or the
 * chunk does not continue the file. */
vg_status vg_ckpt_append(void *ck, size_t start, size_t count, const double *metrics,
                         vg_error *err);

/* Record the writers' temporary files (paths in the output directory,
 * as vg_out_temp_path gives them) before they are filled, so that a resume
 * after a kill removes them.  VG_EIO or VG_ENOMEM. */
vg_status vg_ckpt_note_temps(vg_ckpt *ck, const char *const *paths, size_t n, vg_error *err);

/* Once every point is in: hand them to sink in order, chunk points at a
 * time (bounded memory), and check the metrics file against its recorded
 * digest.  VG_EINTR when *stop (may be NULL) becomes non-zero between
 * chunks; VG_EIO when the file cannot be read or does not match; or the
 * sink's status. */
vg_status vg_ckpt_replay(vg_ckpt *ck, size_t chunk, volatile sig_atomic_t *stop,
                         vg_sweep_sink sink, void *ctx, vg_error *err);

/* Close and keep the files for a later --resume; frees ck; NULL allowed. */
void vg_ckpt_keep(vg_ckpt *ck);

/* Remove the files and the directory, then free ck (in every case; NULL
 * allowed).  VG_EIO if something could not be removed. */
vg_status vg_ckpt_discard(vg_ckpt *ck, vg_error *err);

#endif

/*
 * The sweep engine: computes every metric at every point of a grid, chunk
 * by chunk.  A chunk is a block of consecutive flat indices computed in
 * parallel (OpenMP, when built with it) and then handed, in order, to a
 * sink (the writers).  Each point is computed independently by the same
 * deterministic code, so results are bit-identical at any thread count.
 *
 * Called by the sweep command.
 */
#ifndef VG_SWEEP_H
#define VG_SWEEP_H

#include <signal.h>
#include <stddef.h>
#include "vg_grid.h"
#include "vg_status.h"

/* Receives points start .. start+count-1, metrics row-major
 * (count x VG_N_METRICS).  A non-OK status stops the sweep. */
typedef vg_status (*vg_sweep_sink)(void *ctx, size_t start, size_t count,
                                   const double *metrics, vg_error *err);

typedef struct {
    int threads;                     /* 0: the OpenMP default */
    size_t chunk;                    /* points per chunk; 0: VG_SWEEP_CHUNK */
    int progress;                    /* 1: a progress line on stderr */
    volatile sig_atomic_t *stop;     /* checked between chunks; may be NULL */
    size_t start;                    /* first point to compute (a resumed run:
                                        a multiple of the chunk size); 0 normally */
} vg_sweep_opts;

/* Default points per chunk: 16384 points of metrics (1.9 MB) stay in a
 * core's cache while they are written, where 65536 (7.5 MB) did not; a
 * sweep of the benchmark grid ran about a fifth faster for it
 * (docs/performance.md). */
#define VG_SWEEP_CHUNK ((size_t)1 << 14)

/* Run the whole grid.  Returns VG_OK, the sink's status, VG_ENUMERIC from
 * the kernel (the first failing point in index order), VG_ENOMEM, or
 * VG_EINTR when *stop became non-zero. */
vg_status vg_sweep_run(const vg_grid *g, const vg_sweep_opts *opts,
                       vg_sweep_sink sink, void *ctx, vg_error *err);

/* The same over several processes (Open MPI, when built with MPI=1):
 * chunks are dealt to the ranks in turn, each rank computes its chunks with
 * OpenMP threads, and rank 0 receives them in order and alone calls the
 * sink (other ranks pass sink = NULL).  Output is identical to
 * vg_sweep_run's.  Without MPI it is vg_sweep_run.  Every rank returns the
 * same status.  opts->start and opts->chunk are rank 0's (the others' are
 * ignored), so only rank 0 needs to read a checkpoint. */
vg_status vg_sweep_run_dist(const vg_grid *g, const vg_sweep_opts *opts,
                            vg_sweep_sink sink, void *ctx, vg_error *err);

/* Process layout for vg_sweep_run_dist: init once from main (MPI_Init_thread
 * when built with MPI), rank (0 without MPI), size (1), finalize before
 * exit. */
vg_status vg_dist_init(int *argc, char ***argv, vg_error *err);
int vg_dist_rank(void);
int vg_dist_size(void);
void vg_dist_finalize(void);

/* One status for every rank, after a step some ranks may fail alone (a
 * collective call: every rank makes it).  If any rank's st is not VG_OK,
 * every rank returns the status and message of the lowest such rank
 * (prefixed "rank R: " when R > 0); otherwise VG_OK.  Without MPI: st. */
vg_status vg_dist_agree(vg_status st, vg_error *err);

/* Threads the sweep will use for opts (1 without OpenMP). */
int vg_sweep_threads(const vg_sweep_opts *opts);

#endif

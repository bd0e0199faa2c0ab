/*
 * The sweep over several processes (see vg_sweep.h), and the process
 * layout main asks for.  Built with VG_MPI (make MPI=1) it uses Open MPI;
 * without it every function is the one-process case: rank 0 of 1, and
 * vg_sweep_run_dist is vg_sweep_run.
 *
 * Layout of a distributed sweep.  Chunk k (opts->chunk points, counted from
 * opts->start) belongs to rank k mod size.  Every rank computes its chunks
 * with vg_sweep_run's own code and threads, so each point comes out of the
 * same instructions as in a one-process run, and nothing is reduced across
 * ranks: the output is bit-identical.  Rank 0 takes the chunks in chunk
 * order -- computing its own, receiving the others from their owners -- and
 * alone hands them to the sink.
 *
 * Flow control.  A rank other than 0 computes a chunk only after rank 0 has
 * granted it: WINDOW grants up front, then one more each time rank 0 has
 * taken one of its chunks.  So each such rank holds at most WINDOW chunks
 * (memory stays fixed whatever the grid), and can compute while rank 0
 * writes.  Rank 0 alone decides to stop (a sink failure, a failing chunk,
 * the interrupt flag, all checked between chunks in chunk order, as
 * vg_sweep_run does): it refuses the next grant of every rank, takes and
 * drops the chunks already granted, and broadcasts its status and message.
 *
 * Errors of the MPI library abort the job (MPI_ERRORS_ARE_FATAL, the
 * default handler of MPI_COMM_WORLD), so communication calls have no
 * status to check.  Called by main (vg_dist_*) and the sweep command.
 */
#include <limits.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#ifdef VG_MPI
#include <mpi.h>
#endif

#include "vg_metrics.h"
#include "vg_sweep.h"

#ifndef VG_MPI

vg_status vg_dist_init(int *argc, char ***argv, vg_error *err)
{
    (void)argc;
    (void)argv;
    (void)err;
    return VG_OK;
}

int vg_dist_rank(void)
{
    return 0;
}

int vg_dist_size(void)
{
    return 1;
}

void vg_dist_finalize(void)
{
}

vg_status vg_dist_agree(vg_status st, vg_error *err)
{
    (void)err;
    return st;
}

vg_status vg_sweep_run_dist(const vg_grid *g, const vg_sweep_opts *opts,
                            vg_sweep_sink sink, void *ctx, vg_error *err)
{
    return vg_sweep_run(g, opts, sink, ctx, err);
}

#else

/* Chunks a rank may compute ahead of rank 0's taking them: two lets it
 * compute the next while the last one is on its way. */
#define WINDOW 2

enum { TAG_GRANT = 1, TAG_REFUSE, TAG_HEAD, TAG_DATA };

typedef struct {
    const vg_grid *g;
    vg_sweep_opts one;  /* a one-chunk run: the caller's threads, no progress line */
    size_t first;       /* opts->start */
    size_t chunk;       /* points per chunk */
    size_t nchunks;     /* chunks from first to the end of the grid */
    int rank, size;
} plan;

/* What rank 0 knows about each rank r > 0 (arrays of size entries). */
typedef struct {
    size_t *granted;      /* chunks granted so far */
    size_t *taken;        /* chunks received so far */
    MPI_Request *req;     /* size x WINDOW: grant messages in flight */
    double *spare;        /* a chunk's worth, for chunks dropped on a stop */
} ledger;

/* What a rank r > 0 has in flight: WINDOW chunks and their headers. */
typedef struct {
    double *buf[WINDOW];
    vg_error head[WINDOW];     /* status and message of the chunk */
    MPI_Request req[WINDOW][2];
} outbox;

static int mpi_running(void)
{
    int up = 0, down = 0;

    MPI_Initialized(&up);
    if (up)
        MPI_Finalized(&down);
    return up && !down;
}

vg_status vg_dist_init(int *argc, char ***argv, vg_error *err)
{
    int provided = MPI_THREAD_SINGLE;

    if (MPI_Init_thread(argc, argv, MPI_THREAD_FUNNELED, &provided) != MPI_SUCCESS)
        return vg_error_set(err, VG_EUSAGE, "the MPI library could not start");
    /* OpenMP threads run inside a rank while only its main thread calls
     * MPI: the FUNNELED level (MPI 3.1 standard, MPI_Init_thread). */
    if (provided < MPI_THREAD_FUNNELED) {
        MPI_Finalize();
        return vg_error_set(err, VG_EUSAGE, "the MPI library offers thread level %d, "
                            "below the MPI_THREAD_FUNNELED the threaded sweep needs", provided);
    }
    return VG_OK;
}

int vg_dist_rank(void)
{
    int r = 0;

    if (mpi_running())
        MPI_Comm_rank(MPI_COMM_WORLD, &r);
    return r;
}

int vg_dist_size(void)
{
    int n = 1;

    if (mpi_running())
        MPI_Comm_size(MPI_COMM_WORLD, &n);
    return n;
}

void vg_dist_finalize(void)
{
    if (mpi_running())
        MPI_Finalize();
}

/* Every rank takes from rank `from` its status and message (collective). */
static vg_status share(int from, vg_status st, vg_error *err)
{
    vg_error e = {st, ""};

    if (st != VG_OK && err)
        snprintf(e.msg, sizeof e.msg, "%s", err->msg);
    MPI_Bcast(&e, (int)sizeof e, MPI_BYTE, from, MPI_COMM_WORLD);
    if (e.status != VG_OK && err)
        *err = e;
    return e.status;
}

vg_status vg_dist_agree(vg_status st, vg_error *err)
{
    int rank, size, mine, first;

    if (!mpi_running())
        return st;
    MPI_Comm_rank(MPI_COMM_WORLD, &rank);
    MPI_Comm_size(MPI_COMM_WORLD, &size);
    mine = st != VG_OK ? rank : size;
    MPI_Allreduce(&mine, &first, 1, MPI_INT, MPI_MIN, MPI_COMM_WORLD);
    if (first == size)
        return VG_OK;
    st = share(first, st, err);
    if (first > 0)
        vg_error_prefix(err, "rank %d: ", first);
    return st;
}

static size_t chunk_start(const plan *p, size_t k)
{
    return p->first + k * p->chunk;
}

static size_t chunk_count(const plan *p, size_t k)
{
    size_t left = p->g->npoints - chunk_start(p, k);

    return left < p->chunk ? left : p->chunk;
}

/* Chunks owned by rank r: k = r, r + size, ... below nchunks. */
static size_t owned(const plan *p, int r)
{
    size_t rr = (size_t)r, n = (size_t)p->size;

    return p->nchunks > rr ? (p->nchunks - 1 - rr) / n + 1 : 0;
}

static int chunk_len(const plan *p, size_t k)
{
    return (int)(chunk_count(p, k) * VG_N_METRICS);
}

typedef struct {
    double *out;
    int done;
} grab;

/* The sink of a one-chunk run: keep the chunk, then stop the run. */
static vg_status grab_first(void *ctx, size_t start, size_t count, const double *metrics,
                            vg_error *err)
{
    grab *gb = ctx;

    (void)start;
    (void)err;
    memcpy(gb->out, metrics, count * VG_N_METRICS * sizeof *metrics);
    gb->done = 1;
    return VG_EINTR;
}

/* Chunk k into out, by vg_sweep_run itself started at the chunk. */
static vg_status compute(const plan *p, size_t k, double *out, vg_error *err)
{
    vg_sweep_opts o = p->one;
    grab gb = {out, 0};
    vg_status st;

    o.start = chunk_start(p, k);
    st = vg_sweep_run(p->g, &o, grab_first, &gb, err);
    return gb.done ? VG_OK : st;
}

/* The chunk plan, the same on every rank: start and chunk size are rank
 * 0's, so that only rank 0 needs to know where a resumed run starts. */
static void plan_init(plan *p, const vg_grid *g, const vg_sweep_opts *opts)
{
    unsigned long long sc[2] = {opts->start, opts->chunk ? opts->chunk : VG_SWEEP_CHUNK};
    size_t most = (size_t)INT_MAX / VG_N_METRICS; /* one MPI message */
    size_t left;

    MPI_Bcast(sc, 2, MPI_UNSIGNED_LONG_LONG, 0, MPI_COMM_WORLD);
    p->g = g;
    p->first = (size_t)sc[0];
    p->chunk = (size_t)sc[1] < most ? (size_t)sc[1] : most;
    left = p->first < g->npoints ? g->npoints - p->first : 0;
    p->nchunks = (left + p->chunk - 1) / p->chunk;
    p->one = (vg_sweep_opts){opts->threads, p->chunk, 0, NULL, 0};
    MPI_Comm_rank(MPI_COMM_WORLD, &p->rank);
    MPI_Comm_size(MPI_COMM_WORLD, &p->size);
}

/* ---- ranks other than 0 ---- */

static void outbox_free(outbox *ob)
{
    for (int s = 0; s < WINDOW; s++)
        free(ob->buf[s]);
}

static vg_status outbox_alloc(outbox *ob, const plan *p, vg_error *err)
{
    for (int s = 0; s < WINDOW; s++) {
        ob->buf[s] = malloc(p->chunk * VG_N_METRICS * sizeof *ob->buf[s]);
        ob->req[s][0] = ob->req[s][1] = MPI_REQUEST_NULL;
    }
    for (int s = 0; s < WINDOW; s++)
        if (!ob->buf[s])
            return vg_error_set(err, VG_ENOMEM, "out of memory for %d chunks of %zu points",
                                WINDOW, p->chunk);
    return VG_OK;
}

/* Compute each granted chunk and send it to rank 0 until all are sent or
 * rank 0 refuses a grant. */
static void serve(const plan *p, outbox *ob)
{
    size_t n = owned(p, p->rank);

    for (size_t i = 0; i < n; i++) {
        size_t k = (size_t)p->rank + i * (size_t)p->size;
        int s = (int)(i % WINDOW);
        MPI_Status ms;

        MPI_Recv(NULL, 0, MPI_BYTE, 0, MPI_ANY_TAG, MPI_COMM_WORLD, &ms);
        if (ms.MPI_TAG == TAG_REFUSE)
            break;
        MPI_Waitall(2, ob->req[s], MPI_STATUSES_IGNORE);
        ob->head[s].msg[0] = '\0';
        ob->head[s].status = compute(p, k, ob->buf[s], &ob->head[s]);
        MPI_Isend(&ob->head[s], (int)sizeof ob->head[s], MPI_BYTE, 0, TAG_HEAD,
                  MPI_COMM_WORLD, &ob->req[s][0]);
        MPI_Isend(ob->buf[s], chunk_len(p, k), MPI_DOUBLE, 0, TAG_DATA, MPI_COMM_WORLD,
                  &ob->req[s][1]);
    }
    MPI_Waitall(2 * WINDOW, &ob->req[0][0], MPI_STATUSES_IGNORE);
}

/* ---- rank 0 ---- */

static void ledger_free(ledger *l)
{
    free(l->granted);
    free(l->taken);
    free(l->req);
    free(l->spare);
}

static vg_status ledger_alloc(ledger *l, const plan *p, vg_error *err)
{
    size_t n = (size_t)p->size;

    l->granted = calloc(n, sizeof *l->granted);
    l->taken = calloc(n, sizeof *l->taken);
    l->req = malloc(n * WINDOW * sizeof *l->req);
    l->spare = malloc(p->chunk * VG_N_METRICS * sizeof *l->spare);
    if (!l->granted || !l->taken || !l->req || !l->spare)
        return vg_error_set(err, VG_ENOMEM, "out of memory for a chunk of %zu points",
                            p->chunk);
    for (size_t i = 0; i < n * WINDOW; i++)
        l->req[i] = MPI_REQUEST_NULL;
    return VG_OK;
}

/* One grant (or refusal) message to rank r; its slot's previous message
 * has been received already, since r has sent the chunk it granted. */
static void send_grant(ledger *l, int r, int tag)
{
    MPI_Request *q = &l->req[(size_t)r * WINDOW + l->granted[r] % WINDOW];

    MPI_Wait(q, MPI_STATUS_IGNORE);
    MPI_Isend(NULL, 0, MPI_BYTE, r, tag, MPI_COMM_WORLD, q);
    if (tag == TAG_GRANT)
        l->granted[r]++;
}

static void grant_next(const plan *p, ledger *l, int r)
{
    if (l->granted[r] < owned(p, r))
        send_grant(l, r, TAG_GRANT);
}

/* Rank r's next chunk (number k) into out, with the status r met. */
static vg_status take(const plan *p, ledger *l, int r, size_t k, double *out, vg_error *err)
{
    vg_error head;

    MPI_Recv(&head, (int)sizeof head, MPI_BYTE, r, TAG_HEAD, MPI_COMM_WORLD,
             MPI_STATUS_IGNORE);
    MPI_Recv(out, chunk_len(p, k), MPI_DOUBLE, r, TAG_DATA, MPI_COMM_WORLD,
             MPI_STATUS_IGNORE);
    l->taken[r]++;
    if (head.status != VG_OK && err)
        *err = head;
    return head.status;
}

/* Refuse every rank its next grant and drop the chunks granted but not
 * taken, so that no rank is left waiting. */
static void wind_down(const plan *p, ledger *l)
{
    for (int r = 1; r < p->size; r++)
        if (l->granted[r] < owned(p, r))
            send_grant(l, r, TAG_REFUSE);
    for (int r = 1; r < p->size; r++)
        while (l->taken[r] < l->granted[r]) {
            size_t k = (size_t)r + l->taken[r] * (size_t)p->size;
            take(p, l, r, k, l->spare, NULL);
        }
    MPI_Waitall(p->size * WINDOW, l->req, MPI_STATUSES_IGNORE);
}

static void progress(const plan *p, size_t done)
{
    fprintf(stderr, "\rvibrogate: %5.1f%%  %zu/%zu points on %d ranks ",
            100.0 * (double)done / (double)p->g->npoints, done, p->g->npoints, p->size);
    if (done == p->g->npoints)
        fputc('\n', stderr);
    fflush(stderr);
}

/* Every chunk in order: compute or receive it, hand it to the sink. */
static vg_status gather(const plan *p, const vg_sweep_opts *opts, ledger *l, double *buf,
                        vg_sweep_sink sink, void *ctx, vg_error *err)
{
    vg_status st = VG_OK;

    for (int r = 1; r < p->size; r++)
        for (int w = 0; w < WINDOW; w++)
            grant_next(p, l, r);
    for (size_t k = 0; k < p->nchunks && st == VG_OK; k++) {
        int r = (int)(k % (size_t)p->size);
        size_t start = chunk_start(p, k), count = chunk_count(p, k);

        if (opts->stop && *opts->stop)
            return vg_error_set(err, VG_EINTR, "interrupted after %zu of %zu points",
                                start, p->g->npoints);
        st = r == 0 ? compute(p, k, buf, err) : take(p, l, r, k, buf, err);
        if (st == VG_OK)
            st = sink(ctx, start, count, buf, err);
        if (st == VG_OK && r != 0)
            grant_next(p, l, r);
        if (st == VG_OK && opts->progress)
            progress(p, start + count);
    }
    return st;
}

static vg_status run_root(const plan *p, const vg_sweep_opts *opts, vg_sweep_sink sink,
                          void *ctx, vg_error *err)
{
    ledger l = {NULL, NULL, NULL, NULL};
    vg_status st = ledger_alloc(&l, p, err);

    st = vg_dist_agree(st, err);
    if (st == VG_OK) {
        st = gather(p, opts, &l, l.spare, sink, ctx, err);
        wind_down(p, &l);
    }
    ledger_free(&l);
    return share(0, st, err);
}

static vg_status run_other(const plan *p, vg_error *err)
{
    outbox ob;
    vg_status st = outbox_alloc(&ob, p, err);

    st = vg_dist_agree(st, err);
    if (st == VG_OK)
        serve(p, &ob);
    outbox_free(&ob);
    return share(0, st, err);
}

vg_status vg_sweep_run_dist(const vg_grid *g, const vg_sweep_opts *opts,
                            vg_sweep_sink sink, void *ctx, vg_error *err)
{
    plan p;

    if (!mpi_running() || vg_dist_size() == 1)
        return vg_sweep_run(g, opts, sink, ctx, err);
    plan_init(&p, g, opts);
    return p.rank == 0 ? run_root(&p, opts, sink, ctx, err) : run_other(&p, err);
}

#endif

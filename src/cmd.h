/*
 * The commands behind main: each takes the parsed command line and returns a
 * status (the exit status) with the message in err.  Private to the program.
 */
#ifndef VG_CMD_H
#define VG_CMD_H

#include <signal.h>
#include <stddef.h>
#include "vg_status.h"
#include "fmt.h"

typedef struct {
    const char *config;        /* CONFIG argument */
    const char *out_dir;       /* --out, or NULL */
    int threads;               /* --threads, 0 = default */
    int quiet;                 /* --quiet */
    int json;                  /* --json (point) */
    int compare;               /* --compare (point: both many-mode engines) */
    size_t nset;               /* --set KEY=VALUE, in order */
    const char **sets;
    int resume;                /* --resume (sweep) */
    size_t chunk;              /* --chunk (sweep, not in the usage: for tests
                                  of checkpoints): points per chunk, 0 = default */
    const char *history;       /* time stamp and command line */
    int fixed_time;            /* 1: the time stamp is SOURCE_DATE_EPOCH's */
    volatile sig_atomic_t *stop; /* set by SIGINT/SIGTERM */
} vg_cmd_args;

vg_status vg_cmd_sweep(const vg_cmd_args *a, vg_error *err);
vg_status vg_cmd_point(const vg_cmd_args *a, vg_error *err);
vg_status vg_cmd_check(const vg_cmd_args *a, vg_error *err);
vg_status vg_cmd_render(const vg_cmd_args *a, vg_error *err);
vg_status vg_cmd_spectrum(const vg_cmd_args *a, vg_error *err);
vg_status vg_cmd_uncertainty(const vg_cmd_args *a, vg_error *err);
vg_status vg_cmd_sensitivity(const vg_cmd_args *a, vg_error *err);

/* Draw the maps of the data file nc_path into dir (render, and sweep after
 * its data are committed); default_png: draw PNG when the config names no
 * figure format. */
vg_status vg_cmd_figures(const char *nc_path, const char *dir, size_t nset,
                         const char *const *sets, int quiet, int default_png, vg_error *err);

/* summary.json and summary.txt of the feasibility window of the data file
 * nc_path into dir (sweep, after its data are committed, when the config
 * has [feasibility]). */
vg_status vg_cmd_summary(const char *nc_path, const char *dir, int quiet, vg_error *err);

#endif

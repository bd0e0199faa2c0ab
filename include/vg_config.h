/*
 * The validated run configuration, in canonical units, and the parser that
 * builds it from an INI file (libinih) plus command-line overrides.
 *
 * Called by main/commands; everything downstream (grid, sweep, writers) reads
 * only this structure.  Grammar, keys and messages: docs/config.md.
 */
#ifndef VG_CONFIG_H
#define VG_CONFIG_H

#include <stddef.h>
#include "vg_status.h"
#include "vg_rate.h"
#include "vg_metrics.h"
#include "vg_prior.h"
#include "vg_modes.h"
#include "vg_validity.h"

/* The six parameters, in CSV column order. */
typedef enum {
    VG_P_GAP = 0,      /* epsilon = E_D - E_A, meV */
    VG_P_REORG,        /* lambda, meV */
    VG_P_COUPLING,     /* V, meV */
    VG_P_HUANG_RHYS,   /* S, dimensionless */
    VG_P_MODE,         /* hbar*omega, meV */
    VG_P_TEMPERATURE,  /* T, K */
    VG_NPARAM
} vg_param_id;

typedef struct {
    const char *key;        /* config key, also the NetCDF dimension name */
    const char *unit;       /* canonical unit: "meV", "K" or "1" */
    const char *csv_column; /* "gap_meV", ..., "huang_rhys", "temperature_K" */
    const char *long_name;  /* CF long_name */
    const char *symbol;     /* plain-text symbol for listings */
} vg_param_info;

const vg_param_info *vg_param_get(vg_param_id id);

/* One parameter: a scalar (n == 1) or an axis (n > 1). */
typedef struct {
    size_t n;            /* number of values, >= 1 */
    double *v;           /* n values in canonical units (owned) */
    int log_spacing;     /* 1 if given as a log range */
    char user_unit[16];  /* the unit as the user wrote it ("cm-1", "eV", ...), "" if none */
    int line;            /* config line it came from; 0 = default, -1 = --set */
    int defaulted;       /* 1 if the built-in default was used */
} vg_param;

typedef enum { VG_FMT_NETCDF = 1u, VG_FMT_CSV = 2u } vg_data_format;

typedef enum { VG_FIG_PNG = 1u, VG_FIG_PDF = 2u, VG_FIG_SVG = 4u } vg_figure_format;

#define VG_MAX_CONTOURS 16
#define VG_MAX_MARKS 16

/* A named operating point to mark on the maps: the parameters it fixes
 * (has[p] != 0), in canonical units.  Only x and y matter for drawing; a
 * mark fixing a panel or row axis is drawn where that value is shown. */
typedef struct {
    char label[64];
    double v[VG_NPARAM];
    int has[VG_NPARAM];
    int line;                  /* config line, -1 = --set */
} vg_mark;

/* What figures to draw ([output] figure keys; docs/config.md). */
typedef struct {
    unsigned formats;          /* VG_FIG_* bits; 0 = no figures */
    size_t nmaps;
    vg_metric_id maps[VG_N_METRICS]; /* in the order given; default log10_ratio */
    vg_param_id x, y;          /* the two map axes (default: gap, reorganization
                                  when they are axes, else the two fastest axes) */
    int panels;                /* vg_param_id of the panel axis, -1 = none */
    int rows;                  /* vg_param_id of the row axis, -1 = none */
    double width_in;           /* figure width in inches (default 7) */
    double dpi;                /* PNG resolution (default 300) */
    char font[64];             /* Pango family (default "DejaVu Sans") */
    size_t ncontours;
    double contours[VG_MAX_CONTOURS]; /* extra levels, in the map metric's units */
    size_t nmarks;
    vg_mark marks[VG_MAX_MARKS];
    char no_maps[VG_ERROR_MAX]; /* why maps cannot be drawn on this grid, "" if they can */
} vg_figure_spec;

/* [isotope]: the heavy isotopologue of the odorant mode. */
typedef enum { VG_HR_BORN_OPPENHEIMER = 0, VG_HR_FIXED = 1 } vg_hr_rule;

typedef struct {
    int on;                   /* 1 if [isotope] is given */
    double frequency_ratio;   /* omega_light / omega_heavy (1.362 for C-H -> C-D) */
    vg_hr_rule rule;          /* born_oppenheimer: S hbar omega fixed; fixed: S fixed */
    int line;                 /* line of the key that set the ratio, -1 = --set */
} vg_isotope;

/* [uncertainty]: priors of the parameters nobody knows well, and the
 * settings of the global sensitivity and probability analyses. */
typedef struct {
    int on;                        /* 1 if [uncertainty] gives at least one prior */
    int has[VG_NPARAM];            /* 1 where a prior is given */
    vg_prior prior[VG_NPARAM];     /* canonical units */
    int line[VG_NPARAM];           /* config line of each prior, -1 = --set */
    vg_metric_id metric;           /* metric of the Sobol indices (default log10_ratio) */
    size_t samples;                /* base sample size N (default 4096) */
    unsigned long seed;            /* default 1 */
    size_t bootstrap;              /* bootstrap resamples (default 500) */
    double level;                  /* confidence level (default 0.95) */
} vg_uncertainty;

/* [odorant.NAME]: a many-mode odorant from a mode table (include/vg_modes.h),
 * and optionally its heavy isotopologue's table.  Used by 'point' so far. */
#define VG_MAX_ODORANTS 8

typedef struct {
    char name[32];            /* NAME: letters, digits, '_' and '-' */
    int line;                 /* line of the section header */
    int modes_line;           /* line of 'modes' (0: not given, -1: --set) */
    int heavy_line;           /* line of 'heavy_modes' (0: not given) */
    int substitute_line;      /* line of 'substitute' (0: not given) */
    int mode_line, hr_line;   /* lines of 'mode' and 'huang_rhys' (0: not given): one
                                 mode given in the section instead of a table */
    double mode_meV, huang_rhys; /* their values (meV; plain) */
    char modes_path[1024];    /* as written (relative to the config's directory) */
    char heavy_path[1024];
    char substitute[VG_MODES_LABEL_SIZE]; /* glob on the mode labels (fnmatch) */
    size_t substituted;       /* modes the substitute pattern matched */
    vg_modes *light;          /* owned; NULL until loaded (a one-mode table built from
                                 'mode' and 'huang_rhys' when they are given) */
    vg_modes *heavy;          /* owned; NULL without 'heavy_modes' or 'substitute';
                                 with 'substitute': the light table with the
                                 [isotope] rule applied to the matched modes */
} vg_odorant;

/* [model] engine: which many-mode engine gives an odorant's rates. */
typedef enum {
    VG_ENGINE_SUM = 0,        /* frequency-domain lattice sum (vg_multimode.h) */
    VG_ENGINE_FFT = 1         /* time-domain FFT (vg_fft.h): the total rate only */
} vg_engine;

/* [validity]: which criteria of the golden-rule picture point evaluates
 * (docs/theory.md section 6), their thresholds and inputs. */
typedef struct {
    int on;                   /* 1 if [validity] is given (even with criteria = none) */
    vg_valid_settings s;      /* enabled mask, thresholds, nuclear frequency (0: the mode's) */
    double tau_l_ps;          /* relaxation_time, ps; 0 if not given */
    double t1_ps;             /* mode_lifetime, ps; 0 if not given */
} vg_validity;

typedef struct {
    char *path;               /* config file path as given (owned) */
    char *text;               /* full config file text (owned) */
    char *overrides;          /* "--set" lines joined by '\n', or NULL (owned) */
    char *title;              /* [scenario] title, "" if absent (owned) */
    char *notes;              /* [scenario] notes, "" if absent (owned) */
    vg_param param[VG_NPARAM];
    vg_mode_statistics stats; /* [model] mode_statistics */
    double tolerance;         /* [model] truncation tolerance, default 1e-12 */
    vg_engine engine;         /* [model] engine, default VG_ENGINE_SUM (odorants only) */
    int odorant;              /* [model] odorant: index of the odorant a sweep maps in
                                 place of the single mode, -1: the single mode */
    int against;              /* [model] against: index of the odorant the discrimination
                                 compares it with, -1: none */
    char odorant_name[32], against_name[32]; /* as written, until resolved */
    int odorant_line, against_line;          /* their lines (0: not given, -1: --set) */
    char *out_dir;            /* [output] directory (owned) */
    unsigned formats;         /* VG_FMT_* bits, default both */
    int metric_on[VG_N_METRICS]; /* which metrics to store (default all) */
    double max_bytes;         /* [output] max_size in bytes */
    vg_figure_spec fig;       /* [output] figures, maps, x, y, panels, rows, ... */
    vg_isotope isotope;       /* [isotope] */
    vg_require_set feasibility; /* [feasibility] require = ... lines */
    vg_uncertainty uncertainty; /* [uncertainty] */
    vg_validity validity;     /* [validity] */
    size_t nodorants;         /* [odorant.NAME] sections */
    vg_odorant *odorants;     /* nodorants records (owned) */
} vg_config;

/* The odorant a sweep maps ([model] odorant), or NULL: the single mode.
 * NULL also for a record filled by hand (odorant 0, no odorants). */
static inline const vg_odorant *vg_config_mapped(const vg_config *cfg)
{
    return cfg->odorant >= 0 && (size_t)cfg->odorant < cfg->nodorants
           ? &cfg->odorants[cfg->odorant] : NULL;
}

/* The odorant the discrimination compares it with ([model] against), or NULL. */
static inline const vg_odorant *vg_config_against(const vg_config *cfg)
{
    return vg_config_mapped(cfg) && cfg->against >= 0 && (size_t)cfg->against < cfg->nodorants
           && cfg->against != cfg->odorant ? &cfg->odorants[cfg->against] : NULL;
}

/* Parse path, apply the nset overrides "section.key=value" in order, and
 * validate.  On failure err->msg is "FILE:LINE: what is wrong ..." (or
 * "--set section.key: ..." for overrides) and cfg is left freed. */
vg_status vg_config_load(vg_config *cfg, const char *path,
                         size_t nset, const char *const *sets, vg_error *err);

/* Same as vg_config_load for a config held in memory (the text stored in a
 * data file): name is used in messages in place of a file path.  Mode
 * tables are not read: every odorant's light and heavy stay NULL (what
 * reads such a config, the figures of a data file, does not need them). */
vg_status vg_config_load_text(vg_config *cfg, const char *name, const char *text,
                              size_t nset, const char *const *sets, vg_error *err);

void vg_config_free(vg_config *cfg);

/* VG_ECONFIG "FILE: 'COMMAND' needs every parameter scalar; ..." unless
 * every parameter (but gap when but_gap is set) has a single value. */
vg_status vg_config_require_scalars(const vg_config *cfg, const char *command, int but_gap,
                                    vg_error *err);

/* VG_ECONFIG "FILE: 'COMMAND' does not take many-mode odorants yet ..."
 * when cfg has [odorant.NAME] sections (only 'point' uses them, and
 * 'sweep' and 'check' with [model] odorant, which call it only without). */
vg_status vg_config_refuse_odorants(const vg_config *cfg, const char *command, vg_error *err);

/* For the commands that map a grid (sweep, check): without [model] odorant
 * the refusal of vg_config_refuse_odorants; VG_OK with it. */
vg_status vg_config_check_mapped_odorant(const vg_config *cfg, const char *command,
                                         vg_error *err);

/* What metric m needs that cfg lacks ("an [isotope] section", ...), or
 * NULL when cfg can compute it.  With [model] odorant and engine = fft the
 * metrics of the elastic and assisted parts are lacking too (the FFT gives
 * the mapped odorant's total rate only). */
const char *vg_config_metric_lacks(const vg_config *cfg, vg_metric_id m);

/* The same for the single mode of [parameters] (what 'point' prints for
 * it): the engine does not matter there. */
const char *vg_config_metric_lacks_mode(const vg_config *cfg, vg_metric_id m);

/* VG_ECONFIG (with the located message) if figures are asked for but the
 * grid cannot have maps (fewer than two axes).  The loader accepts such a
 * config because the same figure formats serve the spectrum command; the
 * commands that draw maps (check, sweep, render) call this. */
vg_status vg_config_check_maps(const vg_config *cfg, vg_error *err);

/* Parse one value of the grammar ("120 meV", "1600, 2100 cm-1",
 * "0 .. 600 meV, 241 points", "0.001 .. 1, 31 points, log") for parameter id.
 * Fills p (allocating p->v).  err->msg describes the problem without a
 * location prefix.  Exposed for tests and fuzzing. */
vg_status vg_config_parse_value(vg_param_id id, const char *text, vg_param *p,
                                vg_error *err);

#endif

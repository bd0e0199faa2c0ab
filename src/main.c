/*
 * vibrogate: command-line entry point.  Parses arguments, dispatches to a
 * command (src/cmd_*.c) and maps its status to the exit status.
 */
#define _POSIX_C_SOURCE 200809L
#include <getopt.h>
#include <signal.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>
#include <unistd.h>

#include <gsl/gsl_errno.h>
#include <gsl/gsl_version.h>
#include <netcdf.h>

#include "cmd.h"
#include "vg_sweep.h"

#ifndef VG_INIH_VERSION
#define VG_INIH_VERSION "unknown"
#endif

static volatile sig_atomic_t stop_flag;
static volatile sig_atomic_t stop_note; /* 1: say so on the first signal */

/* SIGINT/SIGTERM during a sweep: the first asks it to stop after the
 * current chunk (it then keeps its checkpoint and says how to resume); a
 * second ends the program at once, which the checkpoint survives as it
 * survives kill -9.  Only async-signal-safe calls (POSIX signal-safety). */
static void on_signal(int sig)
{
    static const char note[] = "\nvibrogate: stopping after the current chunk "
                               "(interrupt again to stop at once)\n";

    if (stop_flag) {
        signal(sig, SIG_DFL);
        raise(sig);
        return;
    }
    stop_flag = 1;
    if (stop_note) {
        ssize_t n = write(2, note, sizeof note - 1);
        (void)n; /* nothing to do if stderr is gone */
    }
}

static void catch_stop_signals(int note)
{
    struct sigaction sa;

    memset(&sa, 0, sizeof sa);
    sa.sa_handler = on_signal;
    sa.sa_flags = SA_RESTART; /* writers' system calls go on as if undisturbed */
    sigemptyset(&sa.sa_mask);
    stop_note = note;
    sigaction(SIGINT, &sa, NULL);
    sigaction(SIGTERM, &sa, NULL);
}

static void usage(FILE *f)
{
    fputs("Usage: vibrogate COMMAND CONFIG [OPTION]...\n"
          "Map where vibrationally assisted electron transfer outruns the elastic\n"
          "channel, over a grid of receptor and odorant parameters.\n"
          "\n"
          "Commands:\n"
          "  sweep CONFIG   compute every grid point; write sweep.nc and/or sweep.csv\n"
          "  point CONFIG   one operating point (all parameters scalar): channels, metrics\n"
          "  check CONFIG   validate; print resolved parameters, grid shape and output size\n"
          "  render DATA    redraw the figures from a saved sweep.nc (no recomputation)\n"
          "  spectrum CONFIG  rate against gap, channel by channel, for one receptor and odorant\n"
          "  uncertainty CONFIG  Sobol indices over the priors, or the map of P(feasible)\n"
          "  sensitivity CONFIG  elasticities d ln M / d ln p at one operating point\n"
          "\n"
          "Options:\n"
          "  -o, --out DIR          output directory (overrides [output] directory)\n"
          "  -j, --threads N        threads for the sweep (default: all cores)\n"
          "  -s, --set KEY=VALUE    override a config value, e.g.\n"
          "                         --set 'parameters.gap=150 meV' (repeatable)\n"
          "  -q, --quiet            no progress line\n"
          "      --resume           sweep: finish a run that was interrupted, from the\n"
          "                         checkpoint it kept in the output directory (give\n"
          "                         the same CONFIG, --out and --set)\n"
          "      --json             point, sensitivity, uncertainty: print JSON instead of a table\n"
          "      --compare          point: many-mode odorants by both engines (sum and FFT)\n"
          "  -h, --help             show this help and exit\n"
          "  -V, --version          show version information and exit\n"
          "\n"
          "Exit status: 0 success, 1 numerical failure, 2 usage error, 3 config error,\n"
          "4 output could not be written, 5 out of memory, 6 interrupted.\n"
          "Results are model predictions (golden rule, harmonic mode, classical\n"
          "environment), not measurements.  Full documentation: man vibrogate.\n",
          f);
}

static void version(void)
{
    printf("vibrogate %s\n", VG_VERSION);
    const char *nc = nc_inq_libvers();

    printf("GSL %s, NetCDF %.*s, inih %s", gsl_version, (int)strcspn(nc, " "), nc,
           VG_INIH_VERSION);
#ifdef _OPENMP
    printf(", OpenMP %d", _OPENMP);
#endif
    printf("\nCopyright (C) 2026 the vibrogate developers.\n"
           "License GPLv3+: GNU GPL version 3 or later <https://gnu.org/licenses/gpl.html>.\n"
           "This is free software: you are free to change and redistribute it.\n"
           "There is NO WARRANTY, to the extent permitted by law.\n");
}

/* SOURCE_DATE_EPOCH, when set and not empty, replaces the clock for
 * reproducible files (reproducible-builds.org specification); the figures
 * read it the same way (src/draw.c). */
static const char *fixed_epoch(void)
{
    const char *sde = getenv("SOURCE_DATE_EPOCH");

    return sde && *sde ? sde : NULL;
}

/* "2026-12-01T20:00:00Z vibrogate sweep demo.ini ..." */
static char *history_line(int argc, char **argv)
{
    const char *sde = fixed_epoch();
    time_t t = sde ? (time_t)strtoll(sde, NULL, 10) : time(NULL);
    struct tm tm;
    size_t len = 32;
    char *h;
    int i;

    for (i = 0; i < argc; i++)
        len += strlen(argv[i]) + 1;
    h = malloc(len);
    if (!h)
        return NULL;
    gmtime_r(&t, &tm);
    strftime(h, 32, "%Y-%m-%dT%H:%M:%SZ", &tm);
    for (i = 0; i < argc; i++) {
        strcat(h, " ");
        strcat(h, i == 0 ? "vibrogate" : argv[i]);
    }
    return h;
}

static int parse_threads(const char *s, int *out)
{
    char *end;
    long v = strtol(s, &end, 10);

    if (*s == '\0' || *end != '\0' || v < 1 || v > 4096)
        return -1;
    *out = (int)v;
    return 0;
}

/* Points per chunk: small ones make many checkpoints, for tests. */
static int parse_chunk(const char *s, size_t *out)
{
    char *end;
    long long v = strtoll(s, &end, 10);

    if (*s == '\0' || *end != '\0' || v < 1 || v > (1LL << 24))
        return -1;
    *out = (size_t)v;
    return 0;
}

typedef vg_status (*command_fn)(const vg_cmd_args *, vg_error *);

static command_fn find_command(const char *name)
{
    if (strcmp(name, "sweep") == 0)
        return vg_cmd_sweep;
    if (strcmp(name, "point") == 0)
        return vg_cmd_point;
    if (strcmp(name, "check") == 0)
        return vg_cmd_check;
    if (strcmp(name, "render") == 0)
        return vg_cmd_render;
    if (strcmp(name, "spectrum") == 0)
        return vg_cmd_spectrum;
    if (strcmp(name, "uncertainty") == 0)
        return vg_cmd_uncertainty;
    if (strcmp(name, "sensitivity") == 0)
        return vg_cmd_sensitivity;
    return NULL;
}

static int usage_error(const char *fmt, const char *what)
{
    fputs("vibrogate: ", stderr);
    fprintf(stderr, fmt, what);
    fputs("\nTry 'vibrogate --help' for more information.\n", stderr);
    return VG_EUSAGE;
}

static int parse_options(int argc, char **argv, vg_cmd_args *a)
{
    static const struct option opts[] = {
        {"out", required_argument, NULL, 'o'},  {"threads", required_argument, NULL, 'j'},
        {"set", required_argument, NULL, 's'},  {"quiet", no_argument, NULL, 'q'},
        {"json", no_argument, NULL, 'J'},       {"help", no_argument, NULL, 'h'},
        {"version", no_argument, NULL, 'V'},    {"resume", no_argument, NULL, 'R'},
        {"chunk", required_argument, NULL, 'C'}, {"compare", no_argument, NULL, 'K'},
        {NULL, 0, NULL, 0}};
    int c;

    opterr = 0;
    while ((c = getopt_long(argc, argv, ":o:j:s:qhV", opts, NULL)) != -1) {
        switch (c) {
        case 'o': a->out_dir = optarg; break;
        case 'j':
            if (parse_threads(optarg, &a->threads) != 0)
                return usage_error("'--threads' must be a whole number from 1 to 4096 (got '%s')",
                                   optarg);
            break;
        case 's': a->sets[a->nset++] = optarg; break;
        case 'q': a->quiet = 1; break;
        case 'J': a->json = 1; break;
        case 'K': a->compare = 1; break;
        case 'R': a->resume = 1; break;
        case 'C':
            if (parse_chunk(optarg, &a->chunk) != 0)
                return usage_error("'--chunk' must be a whole number from 1 to 16777216 "
                                   "(got '%s')", optarg);
            break;
        case 'h': usage(stdout); exit(0);
        case 'V': version(); exit(0);
        case ':': return usage_error("option '%s' needs a value", argv[optind - 1]);
        default: return usage_error("unknown option '%s'", argv[optind - 1]);
        }
    }
    return 0;
}

/* The command after the options, checked against them: 0 or VG_EUSAGE. */
static int pick_command(int argc, char **argv, const vg_cmd_args *a, command_fn *cmd)
{
    if (optind >= argc)
        return usage_error("%s", "missing command (sweep, point, check, render, spectrum, "
                           "uncertainty or sensitivity)");
    *cmd = find_command(argv[optind]);
    if (!*cmd)
        return usage_error("unknown command '%s' (expected sweep, point, check, render, "
                           "spectrum, uncertainty or sensitivity)", argv[optind]);
    if (optind + 2 != argc)
        return usage_error("'%s' takes exactly one file argument", argv[optind]);
    if (a->resume && *cmd != vg_cmd_sweep)
        return usage_error("'--resume' applies to sweep only, not to '%s'", argv[optind]);
    return 0;
}

int main(int argc, char **argv)
{
    vg_cmd_args a = {0};
    vg_error err = {VG_OK, ""};
    command_fn cmd = NULL;
    int rc = VG_ENOMEM;

    gsl_set_error_handler_off();
    a.sets = calloc((size_t)argc + 1, sizeof *a.sets);
    a.history = history_line(argc, argv); /* before getopt reorders argv */
    if (!a.sets || !a.history) {
        fputs("vibrogate: out of memory\n", stderr);
        goto out;
    }
    rc = parse_options(argc, argv, &a);
    if (rc == 0)
        rc = pick_command(argc, argv, &a, &cmd);
    if (rc != 0)
        goto out;
    a.config = argv[optind + 1];
    rc = (int)vg_dist_init(&argc, &argv, &err);
    if (rc != VG_OK) {
        fprintf(stderr, "vibrogate: %s\n", err.msg);
        goto out;
    }
    if (vg_dist_rank() != 0) /* one voice: rank 0's */
        a.quiet = 1;
    a.fixed_time = fixed_epoch() != NULL;
    a.stop = &stop_flag;
    if (cmd == vg_cmd_sweep) /* the only command that stops cleanly */
        catch_stop_signals(!a.quiet && isatty(2));
    /* Only sweep is spread over ranks; other commands run on rank 0 alone. */
    rc = (cmd == vg_cmd_sweep || vg_dist_rank() == 0) ? (int)cmd(&a, &err) : VG_OK;
    if (rc != VG_OK && vg_dist_rank() == 0)
        fprintf(stderr, "vibrogate: %s\n", err.msg);
out:
    vg_dist_finalize();
    free((char *)a.history);
    free(a.sets);
    return rc;
}

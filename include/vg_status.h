/*
 * Status codes and the caller-owned error record shared by every module.
 *
 * A function that can fail returns a vg_status and, when it fails, fills the
 * caller's vg_error through vg_error_set() (the one place an error message is
 * written, so one breakpoint catches every failure).  There is no global error
 * state.  The status values double as the program's exit statuses; the table
 * is documented in docs/config.md and the man page.
 */
#ifndef VG_STATUS_H
#define VG_STATUS_H

#include <stddef.h>

typedef enum {
    VG_OK = 0,
    VG_ENUMERIC = 1,  /* a numerical failure the input should not cause */
    VG_EUSAGE = 2,    /* bad command line */
    VG_ECONFIG = 3,   /* config file missing, unreadable or invalid */
    VG_EIO = 4,       /* an output could not be written */
    VG_ENOMEM = 5,    /* out of memory */
    VG_EINTR = 6      /* stopped by a signal before the outputs were complete */
} vg_status;

#define VG_ERROR_MAX 1024

typedef struct {
    vg_status status;
    char msg[VG_ERROR_MAX]; /* one line, no trailing newline, no program name */
} vg_error;

/* Record status and a printf-style message in err (which may be NULL);
 * returns status so callers can write `return vg_error_set(err, ...)`. */
vg_status vg_error_set(vg_error *err, vg_status status, const char *fmt, ...)
    __attribute__((format(printf, 3, 4)));

/* Prefix an existing message ("FILE:LINE: " etc.), keeping the status. */
void vg_error_prefix(vg_error *err, const char *fmt, ...)
    __attribute__((format(printf, 2, 3)));

#endif

/*
 * Small file-system helpers shared by every writer (data, PNG, PDF/SVG).
 * Private to the program; implemented in src/fsutil.c.
 */
#ifndef VG_FSUTIL_H
#define VG_FSUTIL_H

#include <stddef.h>
#include <sys/types.h>
#include "vg_status.h"

/* The mode a plain new file gets (0666 less the umask): applied to the
 * temporary files that mkstemp creates with 0600, so that a finished output
 * has the same permissions as any file the user creates. */
mode_t vg_fs_new_file_mode(void);

/* mkdir -p dir: create it and its missing parents; VG_EIO "cannot create
 * output directory 'PATH': reason" or "output directory 'DIR' is not a
 * directory". */
vg_status vg_fs_make_dirs(const char *dir, vg_error *err);

/* Write len bytes of text to path atomically: into a hidden temporary file
 * in the same directory, synced, then renamed over path; on failure the
 * temporary is removed and path is untouched.  VG_EIO or VG_ENOMEM. */
vg_status vg_fs_write_atomic(const char *path, const char *text, size_t len, vg_error *err);

#endif

/*
 * Small file-system helpers shared by every writer (data, PNG, PDF/SVG).
 * Private to the program; implemented in src/fsutil.c.
 */
#ifndef VG_FSUTIL_H
#define VG_FSUTIL_H

#include <sys/types.h>

/* The mode a plain new file gets (0666 less the umask): applied to the
 * temporary files that mkstemp creates with 0600, so that a finished output
 * has the same permissions as any file the user creates. */
mode_t vg_fs_new_file_mode(void);

#endif

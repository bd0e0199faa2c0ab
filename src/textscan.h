/*
 * Pieces shared by the readers of user text files (the config loader,
 * src/config.c, and the mode-table reader, src/modes.c).  Private to the
 * program; implemented in src/textscan.c.
 */
#ifndef VG_TEXTSCAN_H
#define VG_TEXTSCAN_H

#include <stddef.h>
#include "vg_status.h"

/* Length of the well-formed UTF-8 sequence at s[0..left), 0 if ill-formed
 * (The Unicode Standard, Table 3-7: no overlong forms, no surrogates,
 * nothing above U+10FFFF).  left >= 1. */
size_t vg_text_utf8_length(const unsigned char *s, size_t left);

/* VG_ECONFIG "PATH: WHAT: reason", the reason strerror(e) in lower case. */
vg_status vg_text_file_error(vg_error *err, const char *path, const char *what, int e);

#endif

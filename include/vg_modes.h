/*
 * Mode tables: the modes of a many-mode odorant read from a small CSV text
 * file, one row per mode, into the records the many-mode engine takes
 * (vg_multimode_mode, include/vg_multimode.h) plus a label per mode.
 * Pure text parsing (src/modes.c); vg_modes_load adds the file reading.
 * Called by the tests; the config follows.
 *
 * Format of a mode table
 * ----------------------
 *
 *   # OD-7, a hypothetical odorant (invented values)
 *   wavenumber_cm-1, huang_rhys, label,        lifetime_ps
 *   2950,            0.021,      C-H stretch,  1.5
 *   1715,            0.12,       C=O stretch,  inf
 *   1000,            0.3,        ring breathing,
 *
 * - Text.  UTF-8 (a byte order mark at the start is allowed and ignored),
 *   "\n" or "\r\n" line ends.  Tabs are allowed; NUL bytes, other control
 *   characters and malformed UTF-8 (overlong forms, surrogates, code points
 *   above U+10FFFF) are errors.
 * - Size.  A line holds at most 4096 bytes (line end not counted), a table
 *   at most 1 MiB (1048576 bytes) and at most 512 modes.
 * - Comments and blank lines.  A line whose first non-blank character is
 *   '#' is a comment; a line of only spaces and tabs is blank.  Both are
 *   skipped (but counted in line numbers).  There are no inline comments:
 *   a '#' elsewhere is part of a field.
 * - Header.  The first line that is neither comment nor blank names the
 *   columns, separated by commas, in any order, each at most once.  Names
 *   are exact (case matters):
 *
 *     wavenumber_cm-1  the mode quantum in cm-1 (converted to meV with
 *                      1 cm-1 = VG_MEV_PER_CM1 meV, include/vg_const.h)
 *     energy_meV       the mode quantum in meV
 *     huang_rhys       the Huang-Rhys factor S (dimensionless)
 *     label            free text naming the mode (optional column)
 *     lifetime_ps      the vibrational lifetime T1 in ps (optional column)
 *
 *   Exactly one of wavenumber_cm-1 and energy_meV, and huang_rhys, are
 *   required.
 * - Rows.  Every further non-comment, non-blank line is one mode: as many
 *   fields as the header has columns, separated by commas.  Spaces and
 *   tabs around a field are dropped.  There is no quoting, so no field
 *   holds a comma.  Units are in the column names; fields carry none.
 * - Numbers.  Decimal: an optional sign, digits with an optional decimal
 *   point, an optional exponent (120, -0.5, .5, 1.5e-3, 2E+2).  Hexadecimal,
 *   inf, infinity, nan (any case), numbers beyond the range of double
 *   precision (1e400, 1e-400) and anything else are errors.  A negative
 *   zero is stored as zero.
 * - Accepted values.  Mode quantum 1 <= hbar omega <= 1000 meV after
 *   conversion (about 8.07 to 8065.5 cm-1); 0 <= huang_rhys <= 50;
 *   0 < lifetime_ps <= 1e12, or an empty field or 'inf' (lower case) for
 *   an undamped mode (stored as INFINITY; a table without the column is
 *   all undamped).  Labels at most 63 bytes, may be empty; the mode
 *   quantum and huang_rhys may not.
 * - A table needs a header and at least one mode.
 *
 * Messages (status VG_ECONFIG; one line, lower case, subject quoted, the
 * text at fault quoted as "(got '...')", cut to 80 bytes with "..."):
 *
 *   LINE: line is 5000 bytes long, the limit is 4096 bytes
 *   LINE: NUL byte at byte 9 (mode tables must be UTF-8 text)
 *   LINE: invalid UTF-8 at byte 10 (mode tables must be UTF-8 text)
 *   LINE: control character 0x07 at byte 13 (only UTF-8 text and tabs are allowed)
 *   LINE: expected a header line naming the columns before the first mode (got '2950, 0.02')
 *   LINE: empty column name in the header (got 'energy_meV,,huang_rhys')
 *   LINE: unknown column 'Energy_meV' (did you mean 'energy_meV'?)
 *   LINE: unknown column 'freq' (allowed: wavenumber_cm-1, energy_meV, huang_rhys, label, lifetime_ps)
 *   LINE: column 'label' appears twice in the header
 *   LINE: the header gives both 'wavenumber_cm-1' and 'energy_meV' (give one mode quantum column)
 *   LINE: the header needs a mode quantum column, 'wavenumber_cm-1' or 'energy_meV' (got 'huang_rhys, label')
 *   LINE: the header needs a 'huang_rhys' column (got 'energy_meV, label')
 *   LINE: row has 2 fields, the header has 3 columns (got '2950, 0.02')
 *   LINE: more than 512 modes (the limit of a mode table)
 *   LINE: 'huang_rhys' has no value
 *   LINE: bad number in 'huang_rhys' (write a decimal number such as 120, 0.5 or 1.5e-3, without a unit; got '0.1.2')
 *   LINE: hex number in 'energy_meV' is not allowed (write a decimal number; got '0x1p3')
 *   LINE: 'huang_rhys' must be a finite number (got 'nan')
 *   LINE: 'lifetime_ps' must be a finite number, or 'inf' or empty for an undamped mode (got 'Infinity')
 *   LINE: number in 'huang_rhys' is out of the range of double precision (got '1e400')
 *   LINE: 'energy_meV' must be between 1 and 1000 meV (got '0.5')
 *   LINE: 'wavenumber_cm-1' must be between 1 and 1000 meV after conversion (got '9000' = 1115.86 meV)
 *   LINE: 'huang_rhys' must be between 0 and 50 (got '-0.1')
 *   LINE: 'lifetime_ps' must be > 0 and at most 1e12, or 'inf' or empty for an undamped mode (got '0')
 *   LINE: label is 70 bytes long, the limit is 63 bytes (got '...')
 *   HEADER_LINE: the header is not followed by any mode (one row per mode)
 *   the mode table is empty (it needs a header line and one row per mode)
 *   the mode table is larger than the limit of 1048576 bytes
 *
 * LINE is the 1-based line number in the text, comments and blank lines
 * included.  The last three concern the table as a whole and carry no line.
 */
#ifndef VG_MODES_H
#define VG_MODES_H

#include <stddef.h>

#include "vg_multimode.h"
#include "vg_status.h"

#define VG_MODES_MAX 512             /* modes in one table */
#define VG_MODES_LABEL_SIZE 64       /* a label: at most 63 bytes and its NUL */
#define VG_MODES_LINE_MAX 4096       /* bytes per line, line end excluded */
#define VG_MODES_TEXT_MAX 1048576    /* bytes per table (1 MiB) */
#define VG_MODES_QUANTUM_MIN 1.0     /* meV */
#define VG_MODES_QUANTUM_MAX 1000.0  /* meV */
#define VG_MODES_S_MAX 50.0          /* largest Huang-Rhys factor */
#define VG_MODES_LIFETIME_MAX 1e12   /* ps */

/* The column the mode quantum was given in. */
typedef enum {
    VG_MODES_MEV = 0, /* energy_meV */
    VG_MODES_CM1 = 1  /* wavenumber_cm-1 */
} vg_modes_unit;

/* A parsed table, about 48 KiB, no pointers (copy it freely).  Mode i is
 * mode[i] (canonical units: meV, ps), label[i] and line[i]; mode[] is laid
 * out as the engine wants it, so a vg_multimode_system can point at it:
 * sys.n_modes = t.n, sys.modes = t.mode. */
typedef struct {
    size_t n;                                     /* modes, 1..VG_MODES_MAX */
    vg_modes_unit quantum_unit;                   /* column of the mode quantum */
    int has_label;                                /* 1: the table has a label column */
    int has_lifetime;                             /* 1: it has a lifetime_ps column */
    vg_multimode_mode mode[VG_MODES_MAX];         /* lifetime INFINITY: undamped */
    char label[VG_MODES_MAX][VG_MODES_LABEL_SIZE]; /* UTF-8, "" when none */
    int line[VG_MODES_MAX];                       /* line of the row in the text */
} vg_modes;

/* Parse len bytes of text (NUL bytes in it are an error; text need not be
 * NUL-terminated and may be NULL when len is 0) into *out.  On failure,
 * VG_ECONFIG with one of the messages above, prefixed "NAME:" (a located
 * message, "NAME:LINE: ...") or "NAME: " (a whole-table message) when
 * name_for_messages is not NULL, and unprefixed when it is NULL (the caller
 * adds its own); out->n is then 0. */
vg_status vg_modes_parse(const char *name_for_messages, const char *text, size_t len,
                         vg_modes *out, vg_error *err);

/* Read the file at path and parse it, messages prefixed "PATH:".  File
 * errors (VG_ECONFIG): "PATH: cannot open mode table: REASON",
 * "PATH: cannot read mode table: REASON" (REASON from strerror, lower
 * case; "not a regular file" for a FIFO, terminal or device, which is
 * refused before it is opened), "PATH: the mode table is larger than the limit of 1048576 bytes";
 * VG_ENOMEM "out of memory" if the 1 MiB read buffer cannot be had. */
vg_status vg_modes_load(const char *path, vg_modes *out, vg_error *err);

#endif

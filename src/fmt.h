/*
 * Number formatting shared by the commands and the config messages (rates
 * printed from their log10, time constants, byte counts).  Private to the
 * program; implemented in src/fmt.c.
 */
#ifndef VG_FMT_H
#define VG_FMT_H

#include <stddef.h>
#include <stdio.h>

/* "3.210e-400" from a log10 value, without under- or overflow. */
void vg_fmt_log10(double l10, char *buf, size_t len);

/* A time constant 1/k from log10 k: "3.21 ns", "1.200e+03 s", ... */
void vg_fmt_time(double log10_k, char *buf, size_t len);

/* "12.3 MB" (powers of 1000) */
void vg_fmt_bytes(double bytes, char *buf, size_t len);

/* v with printf precision digits ("%.*g") and a true minus sign (U+2212)
 * for display in figures; -0 shows as 0. */
void vg_fmt_minus(double v, int digits, char *buf, size_t len);

/* s as a JSON string, quotes included: '"' and '\\' escaped, control
 * characters as \u00XX (RFC 8259, section 7); UTF-8 passes through. */
void vg_fmt_json_string(FILE *fp, const char *s);

#endif

/*
 * Number formatting shared by the commands and the config messages (rates
 * printed from their log10, time constants, byte counts).  Private to the
 * program; implemented in src/fmt.c.
 */
#ifndef VG_FMT_H
#define VG_FMT_H

#include <stddef.h>

/* "3.210e-400" from a log10 value, without under- or overflow. */
void vg_fmt_log10(double l10, char *buf, size_t len);

/* A time constant 1/k from log10 k: "3.21 ns", "1.200e+03 s", ... */
void vg_fmt_time(double log10_k, char *buf, size_t len);

/* "12.3 MB" (powers of 1000) */
void vg_fmt_bytes(double bytes, char *buf, size_t len);

#endif

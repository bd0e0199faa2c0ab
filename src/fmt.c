/*
 * Number formatting for the text listings of the point and check commands.
 * Rates span hundreds of orders of magnitude, so they are printed from their
 * log10 and never pass through a double that could under- or overflow.
 */
#include <math.h>
#include <stdio.h>

#include "fmt.h"

void vg_fmt_log10(double l10, char *buf, size_t len)
{
    double e = floor(l10);
    double m = pow(10.0, l10 - e);

    if (m >= 9.9995) { /* would print as 10.000 */
        m /= 10.0;
        e += 1.0;
    }
    snprintf(buf, len, "%.3fe%+03d", m, (int)e);
}

void vg_fmt_time(double log10_k, char *buf, size_t len)
{
    static const struct { const char *unit; double log10_s; } u[] = {
        {"fs", -15}, {"ps", -12}, {"ns", -9}, {"us", -6}, {"ms", -3}, {"s", 0}};
    double lt = -log10_k; /* log10 of tau in s */
    int i;

    for (i = 5; i > 0 && lt < u[i].log10_s; i--)
        ;
    if (lt < -15.0 || lt >= 3.0) {
        char m[32];
        vg_fmt_log10(lt, m, sizeof m);
        snprintf(buf, len, "%s s", m);
        return;
    }
    snprintf(buf, len, "%.3g %s", pow(10.0, lt - u[i].log10_s), u[i].unit);
}

void vg_fmt_bytes(double bytes, char *buf, size_t len)
{
    static const char *unit[] = {"bytes", "kB", "MB", "GB", "TB", "PB", "EB"};
    int i = 0;

    while (bytes >= 1000.0 && i < 6) {
        bytes /= 1000.0;
        i++;
    }
    snprintf(buf, len, i == 0 ? "%.0f %s" : "%.3g %s", bytes, unit[i]);
}

void vg_fmt_json_string(FILE *fp, const char *s)
{
    fputc('"', fp);
    for (const unsigned char *c = (const unsigned char *)s; *c; c++) {
        if (*c == '"' || *c == '\\')
            fprintf(fp, "\\%c", *c);
        else if (*c < 0x20)
            fprintf(fp, "\\u%04x", *c);
        else
            fputc(*c, fp);
    }
    fputc('"', fp);
}

void vg_fmt_minus(double v, int digits, char *buf, size_t len)
{
    char tmp[48];

    snprintf(tmp, sizeof tmp, "%.*g", digits, v == 0.0 ? 0.0 : v);
    if (tmp[0] == '-')
        snprintf(buf, len, "\u2212%s", tmp + 1);
    else
        snprintf(buf, len, "%s", tmp);
}

/*
 * Pieces shared by the readers of user text files (see textscan.h).
 */
#include <ctype.h>
#include <stdio.h>
#include <string.h>

#include "textscan.h"

size_t vg_text_utf8_length(const unsigned char *s, size_t left)
{
    unsigned lo = 0x80, hi = 0xBF;
    size_t n;

    if (s[0] < 0x80)
        return 1;
    if (s[0] >= 0xC2 && s[0] <= 0xDF)
        n = 2;
    else if (s[0] >= 0xE0 && s[0] <= 0xEF)
        n = 3, lo = s[0] == 0xE0 ? 0xA0 : lo, hi = s[0] == 0xED ? 0x9F : hi;
    else if (s[0] >= 0xF0 && s[0] <= 0xF4)
        n = 4, lo = s[0] == 0xF0 ? 0x90 : lo, hi = s[0] == 0xF4 ? 0x8F : hi;
    else
        return 0;
    if (left < n || s[1] < lo || s[1] > hi)
        return 0;
    for (size_t k = 2; k < n; k++)
        if (s[k] < 0x80 || s[k] > 0xBF)
            return 0;
    return n;
}

vg_status vg_text_file_error(vg_error *err, const char *path, const char *what, int e)
{
    char reason[128];

    snprintf(reason, sizeof reason, "%s", strerror(e));
    reason[0] = (char)tolower((unsigned char)reason[0]);
    return vg_error_set(err, VG_ECONFIG, "%s: %s: %s", path, what, reason);
}

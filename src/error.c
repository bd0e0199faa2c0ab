/*
 * The one place error messages are written (see vg_status.h).
 */
#include <stdarg.h>
#include <stdio.h>
#include <string.h>

#include "vg_status.h"

vg_status vg_error_set(vg_error *err, vg_status status, const char *fmt, ...)
{
    if (err) {
        va_list ap;
        va_start(ap, fmt);
        vsnprintf(err->msg, sizeof err->msg, fmt, ap);
        va_end(ap);
        err->status = status;
    }
    return status;
}

void vg_error_prefix(vg_error *err, const char *fmt, ...)
{
    char head[VG_ERROR_MAX];
    size_t nh, nt;
    va_list ap;

    if (!err)
        return;
    va_start(ap, fmt);
    vsnprintf(head, sizeof head, fmt, ap);
    va_end(ap);
    nh = strlen(head);
    nt = strlen(err->msg);
    if (nh + nt >= sizeof err->msg) /* keep the head, cut the tail */
        nt = sizeof err->msg - 1 - nh;
    memmove(err->msg + nh, err->msg, nt);
    memcpy(err->msg, head, nh);
    err->msg[nh + nt] = '\0';
}

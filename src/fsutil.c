/*
 * File-system helpers shared by the writers (see fsutil.h).
 */
#define _POSIX_C_SOURCE 200809L
#include <errno.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <unistd.h>

#include "fsutil.h"

mode_t vg_fs_new_file_mode(void)
{
    mode_t mask = umask(0);

    umask(mask);
    return (mode_t)(0666 & ~mask);
}

vg_status vg_fs_write_atomic(const char *path, const char *text, size_t len, vg_error *err)
{
    const char *slash = strrchr(path, '/');
    size_t dlen = slash ? (size_t)(slash - path) + 1 : 0;
    char *tmp = malloc(strlen(path) + 16);
    int fd, e = 0;
    size_t done = 0;

    if (!tmp)
        return vg_error_set(err, VG_ENOMEM, "out of memory writing '%s'", path);
    snprintf(tmp, strlen(path) + 16, "%.*s.%s.XXXXXX", (int)dlen, path, path + dlen);
    fd = mkstemp(tmp);
    if (fd < 0) {
        e = errno;
        free(tmp);
        return vg_error_set(err, VG_EIO, "cannot write '%s': %s", path, strerror(e));
    }
    while (done < len && e == 0) {
        ssize_t n = write(fd, text + done, len - done);
        if (n < 0 && errno != EINTR)
            e = errno;
        else if (n > 0)
            done += (size_t)n;
    }
    if (e == 0 && (fchmod(fd, vg_fs_new_file_mode()) != 0 || fsync(fd) != 0))
        e = errno;
    if (close(fd) != 0 && e == 0)
        e = errno;
    if (e == 0 && rename(tmp, path) != 0)
        e = errno;
    if (e != 0)
        unlink(tmp);
    free(tmp);
    if (e != 0)
        return vg_error_set(err, VG_EIO, "cannot write '%s': %s", path, strerror(e));
    return VG_OK;
}

vg_status vg_fs_make_dirs(const char *dir, vg_error *err)
{
    char path[4096];
    size_t len = strlen(dir);
    struct stat sb;

    if (len == 0 || len >= sizeof path)
        return vg_error_set(err, VG_EIO, "output directory name '%s' is empty or too long", dir);
    memcpy(path, dir, len + 1);
    for (char *p = path + 1;; p++) {
        char c = *p;
        if (c != '/' && c != '\0')
            continue;
        *p = '\0';
        if (mkdir(path, 0777) != 0 && errno != EEXIST)
            return vg_error_set(err, VG_EIO, "cannot create output directory '%s': %s", path,
                                strerror(errno));
        *p = c;
        if (c == '\0')
            break;
    }
    if (stat(dir, &sb) != 0 || !S_ISDIR(sb.st_mode))
        return vg_error_set(err, VG_EIO, "output directory '%s' is not a directory", dir);
    return VG_OK;
}

/*
 * File-system helpers shared by the writers (see fsutil.h).
 */
#define _POSIX_C_SOURCE 200809L
#include <sys/stat.h>

#include "fsutil.h"

mode_t vg_fs_new_file_mode(void)
{
    mode_t mask = umask(0);

    umask(mask);
    return (mode_t)(0666 & ~mask);
}

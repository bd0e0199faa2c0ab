/*
 * Helpers shared by the cmocka suites that work with real files: listing a
 * directory (to prove no temporary file is left) and removing a test's
 * scratch tree.  Header-only, static inline functions; include after cmocka.h and
 * with _GNU_SOURCE (or _XOPEN_SOURCE 500) defined for nftw.
 */
#ifndef VG_TESTUTIL_H
#define VG_TESTUTIL_H

#include <dirent.h>
#include <ftw.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>

/* Names in dir other than "." and "..", in sorted order, joined by sep. */
static inline void test_list_dir(const char *dir, const char *sep, char *buf, size_t len)
{
    struct dirent **ent;
    int n = scandir(dir, &ent, NULL, alphasort), i;
    size_t used = 0;

    assert_true(n >= 0);
    buf[0] = '\0';
    for (i = 0; i < n; i++) {
        if (strcmp(ent[i]->d_name, ".") != 0 && strcmp(ent[i]->d_name, "..") != 0)
            used += (size_t)snprintf(buf + used, len - used, "%s%s", used ? sep : "",
                                     ent[i]->d_name);
        free(ent[i]);
    }
    free(ent);
}

static inline int test_remove_entry(const char *path, const struct stat *sb, int flag, struct FTW *ftw)
{
    (void)sb;
    (void)flag;
    (void)ftw;
    return remove(path);
}

/* rm -r root; 0 on success. */
static inline int test_remove_tree(const char *root)
{
    return nftw(root, test_remove_entry, 16, FTW_DEPTH | FTW_PHYS);
}

#endif

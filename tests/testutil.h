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

/* Write len bytes of text to dir/name (created or replaced); returns the
 * path, in a static buffer that the next call reuses. */
static inline char *test_write_file(const char *dir, const char *name, const char *text,
                                    size_t len)
{
    static char path[4096];
    FILE *f;

    snprintf(path, sizeof path, "%s/%s", dir, name);
    f = fopen(path, "wb");
    assert_non_null(f);
    assert_int_equal(fwrite(text, 1, len, f), len);
    assert_int_equal(fclose(f), 0);
    return path;
}

/* The whole file, NUL-terminated (the NUL not counted in *len, which may be
 * NULL); the caller frees it. */
static inline char *test_read_file(const char *path, size_t *len)
{
    FILE *fp = fopen(path, "rb");
    char *buf;
    long n;

    assert_non_null(fp);
    assert_int_equal(fseek(fp, 0, SEEK_END), 0);
    n = ftell(fp);
    assert_true(n >= 0);
    rewind(fp);
    buf = malloc((size_t)n + 1);
    assert_non_null(buf);
    assert_int_equal(fread(buf, 1, (size_t)n, fp), (size_t)n);
    buf[n] = '\0';
    fclose(fp);
    if (len)
        *len = (size_t)n;
    return buf;
}

#endif

/*
 * Inside the data writers: the writer record shared by the dispatcher
 * (src/output.c) and the two formats (src/out_netcdf.c, src/out_csv.c), and
 * the helpers the formats share.  Private to those three files.
 *
 * The dispatcher owns the temporary file's name, checks that chunks arrive
 * in order and hold only finite values, and renames the finished file; a
 * format only turns chunks into bytes.
 */
#ifndef VG_OUTPUT_INT_H
#define VG_OUTPUT_INT_H

#include <stddef.h>
#include "vg_output.h"

/* One output format.  Each function returns VG_OK or fills err with a
 * message naming the final path (vg_out_fail*). */
typedef struct {
    const char *file_name;  /* "sweep.nc" */
    /* Start writing the temporary file w->tmp; fd is open on it (mode
     * already set) and now belongs to the format, which closes it. */
    vg_status (*begin)(vg_writer *w, int fd, vg_error *err);
    vg_status (*write)(vg_writer *w, size_t start, size_t count,
                       const double *metrics, vg_error *err);
    /* Write what is left, fsync and close the temporary file. */
    vg_status (*finish)(vg_writer *w, vg_error *err);
    /* Free the format's state, closing the file first if it is still open;
     * called after begin, write and finish whatever their outcome, and a
     * no-op when w->state is NULL. */
    void (*discard)(vg_writer *w);
} vg_out_format;

struct vg_writer {
    const vg_out_format *fmt;
    vg_out_meta meta;
    char *path;                /* final name, dir/sweep.nc (owned) */
    char *tmp;                 /* temporary name, dir/.sweep.nc.XXXXXX (owned) */
    size_t next;               /* first grid point not yet written */
    size_t nsel;               /* number of metrics stored */
    int sel[VG_N_METRICS];     /* their ids, in enum order */
    vg_status failed;          /* VG_OK until a write fails */
    int finished;              /* 1 once vg_out_finish succeeded */
    void *state;               /* the format's own record */
};

extern const vg_out_format vg_out_netcdf_format;
extern const vg_out_format vg_out_csv_format;

/* "cannot write 'PATH': strerror(errnum)", status VG_EIO. */
vg_status vg_out_fail_errno(const vg_writer *w, int errnum, vg_error *err);

/* "cannot write 'PATH': WHAT", status VG_EIO. */
vg_status vg_out_fail(const vg_writer *w, const char *what, vg_error *err);

/* "out of memory writing 'PATH'", status VG_ENOMEM. */
vg_status vg_out_fail_nomem(const vg_writer *w, vg_error *err);

/* write(2) all of buf, retrying after EINTR and short writes; 0 or errno. */
int vg_out_write_all(int fd, const char *buf, size_t len);

/* fsync and close fd (closing it in every case); 0 or the first errno. */
int vg_out_sync_close(int fd);

#endif

/*
 * The PNG writer (vg_png.h): turns a cairo image surface's pixels into an
 * 8-bit RGB PNG through libpng, with the chunks that let a figure be traced
 * to its run.  Called by the figure module for every PNG it draws.
 *
 * Chunks, in libpng's order: IHDR (RGB, 8 bits, no interlace); sRGB with
 * perceptual intent and the gAMA and cHRM values the PNG specification
 * recommends alongside it (png_set_sRGB_gAMA_and_cHRM); pHYs in pixels per
 * metre; iTXt "Title", "Software", "Creation Time" uncompressed and
 * VG_PNG_CONFIG_KEY compressed (the config runs to kilobytes); IDAT; IEND.
 *
 * Pixels: cairo stores 0xAARRGGBB in native-endian 32-bit words with the
 * colour premultiplied by alpha.  The PNG has no alpha channel, so a pixel
 * with 0 < alpha < 255 is un-premultiplied, c' = round(255 c / alpha) (the
 * inverse of cairo's premultiplication, as cairo's own PNG writer does),
 * and a pixel with alpha 0 or 255 keeps its colour bytes as they are.  An
 * RGB24 surface, whose top byte cairo leaves unused (0x00 or 0xff in
 * practice), therefore comes through unchanged; figures are painted on an
 * opaque background, so partial alpha appears only at the edges of a
 * surface drawn without one.
 *
 * Errors: libpng reports a fatal error by calling our error callback, which
 * records the message and longjmps back to the setjmp in encode(); warnings
 * are collected (the first one is kept) and added to the message only if an
 * error follows.  The image goes to a temporary file dir/.NAME.XXXXXX
 * (mkstemp) that is flushed, fsynced, closed and renamed over PATH; on any
 * failure it is removed and a file already under PATH is left as it was.
 */
#define _POSIX_C_SOURCE 200809L /* mkstemp, fchmod, fsync, fdopen */

#include <ctype.h>
#include <errno.h>
#include <math.h>
#include <png.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <unistd.h>

#include "fsutil.h"
#include "vg_png.h"

/* Metres per inch: the international inch, exact by definition (1959). */
#define PNG_M_PER_INCH 0.0254
/* Largest value of a PNG four-byte unsigned integer (PNG spec, 7.1). */
#define PNG_INT_MAX 2147483647.0
/* Bytes per cairo pixel. */
#define PNG_CAIRO_BPP 4
/* Bytes per RGB output pixel. */
#define PNG_RGB_BPP 3
/* Room for one libpng message. */
#define PNG_MSG_LEN 256

/* What the libpng callbacks record. */
typedef struct {
    FILE *fp;
    int sys;                    /* errno of a failed fwrite/fflush, 0 if none */
    int nomem;                  /* 1 if libpng's structures could not be made */
    char error[PNG_MSG_LEN];    /* libpng's error message */
    char warning[PNG_MSG_LEN];  /* its first warning, "" if none */
} png_ctx;

/* One encoding: the libpng objects and the image (fields, not locals, so
 * that nothing read after the longjmp lives in encode()'s frame). */
typedef struct {
    png_structp png;
    png_infop info;
    png_ctx ctx;
    const unsigned char *pixels;
    png_uint_32 width, height;
    size_t stride;
    unsigned char *row;         /* width * PNG_RGB_BPP bytes */
    const vg_png_meta *meta;
} png_job;

static void copy_msg(char *dst, const char *msg)
{
    snprintf(dst, PNG_MSG_LEN, "%s", msg ? msg : "unknown libpng error");
    dst[0] = (char)tolower((unsigned char)dst[0]); /* house style: lower case */
}

static void on_error(png_structp png, png_const_charp msg)
{
    png_ctx *ctx = png_get_error_ptr(png);

    copy_msg(ctx->error, msg);
    png_longjmp(png, 1);
}

static void on_warning(png_structp png, png_const_charp msg)
{
    png_ctx *ctx = png_get_error_ptr(png);

    if (ctx->warning[0] == '\0')
        copy_msg(ctx->warning, msg);
}

/* Our own output functions, so that the system's reason survives. */
static void on_write(png_structp png, png_bytep data, size_t len)
{
    png_ctx *ctx = png_get_io_ptr(png);

    if (fwrite(data, 1, len, ctx->fp) != len) {
        ctx->sys = errno;
        png_error(png, "write error");
    }
}

static void on_flush(png_structp png)
{
    png_ctx *ctx = png_get_io_ptr(png);

    if (fflush(ctx->fp) != 0) {
        ctx->sys = errno;
        png_error(png, "write error");
    }
}

/* c' = round(255 c / a) for 0 < a < 255, clamped for malformed input
 * (valid premultiplied data has c <= a); c otherwise.  (x + a/2) / a in
 * integers is round-half-up of x / a. */
static unsigned char unpremultiply(uint32_t c, uint32_t a)
{
    uint32_t v;

    if (a == 0 || a == 255)
        return (unsigned char)c;
    v = (c * 255u + a / 2u) / a;
    return (unsigned char)(v > 255u ? 255u : v);
}

/* Row y of the cairo image as RGB bytes into job->row. */
static void convert_row(png_job *job, png_uint_32 y)
{
    const unsigned char *src = job->pixels + (size_t)y * job->stride;
    unsigned char *dst = job->row;
    png_uint_32 x;

    for (x = 0; x < job->width; x++, src += PNG_CAIRO_BPP, dst += PNG_RGB_BPP) {
        uint32_t w, a;
        memcpy(&w, src, sizeof w); /* native-endian word; src may be unaligned */
        a = w >> 24;
        dst[0] = unpremultiply((w >> 16) & 0xffu, a);
        dst[1] = unpremultiply((w >> 8) & 0xffu, a);
        dst[2] = unpremultiply(w & 0xffu, a);
    }
}

static void add_text(png_textp t, int *n, const char *key, const char *text, int compression)
{
    if (!text)
        return;
    memset(&t[*n], 0, sizeof t[*n]);
    t[*n].compression = compression;
    t[*n].key = (png_charp)key;   /* libpng copies; it does not write through */
    t[*n].text = (png_charp)text;
    t[*n].itxt_length = strlen(text);
    t[*n].lang = (png_charp)"";
    t[*n].lang_key = (png_charp)"";
    (*n)++;
}

static void set_texts(png_job *job)
{
    const vg_png_meta *m = job->meta;
    png_text t[4];
    int n = 0;

    add_text(t, &n, "Title", m->title, PNG_ITXT_COMPRESSION_NONE);
    add_text(t, &n, "Software", m->software, PNG_ITXT_COMPRESSION_NONE);
    add_text(t, &n, "Creation Time", m->creation_time, PNG_ITXT_COMPRESSION_NONE);
    add_text(t, &n, VG_PNG_CONFIG_KEY, m->config_text, PNG_ITXT_COMPRESSION_zTXt);
    if (n > 0)
        png_set_text(job->png, job->info, t, n);
}

/* Every chunk before IDAT. */
static void set_header(png_job *job)
{
    png_uint_32 ppm = (png_uint_32)lround(job->meta->dpi / PNG_M_PER_INCH);

    png_set_IHDR(job->png, job->info, job->width, job->height, 8, PNG_COLOR_TYPE_RGB,
                 PNG_INTERLACE_NONE, PNG_COMPRESSION_TYPE_DEFAULT, PNG_FILTER_TYPE_DEFAULT);
    png_set_sRGB_gAMA_and_cHRM(job->png, job->info, PNG_sRGB_INTENT_PERCEPTUAL);
    png_set_pHYs(job->png, job->info, ppm, ppm, PNG_RESOLUTION_METER);
    set_texts(job);
}

/* The whole PNG stream into job->ctx.fp; 0 or -1 (job->ctx says why).
 * Every libpng call that can fail is made below the setjmp. */
static int encode(png_job *job)
{
    png_uint_32 y;

    job->png = png_create_write_struct(PNG_LIBPNG_VER_STRING, &job->ctx, on_error,
                                       on_warning);
    if (job->png)
        job->info = png_create_info_struct(job->png);
    if (!job->info) {
        job->ctx.nomem = 1;
        png_destroy_write_struct(&job->png, NULL);
        return -1;
    }
    if (setjmp(png_jmpbuf(job->png))) {
        png_destroy_write_struct(&job->png, &job->info);
        return -1;
    }
    png_set_write_fn(job->png, &job->ctx, on_write, on_flush);
    set_header(job);
    png_write_info(job->png, job->info);
    for (y = 0; y < job->height; y++) {
        convert_row(job, y);
        png_write_row(job->png, job->row);
    }
    png_write_end(job->png, job->info);
    png_destroy_write_struct(&job->png, &job->info);
    return 0;
}

static vg_status fail_errno(const char *path, int e, vg_error *err)
{
    return vg_error_set(err, VG_EIO, "cannot write '%s': %s", path, strerror(e));
}

/* "cannot write 'P': REASON": the system's reason if a write failed, else
 * libpng's message and its first warning. */
static vg_status fail_png(const char *path, const png_ctx *ctx, vg_error *err)
{
    if (ctx->nomem)
        return vg_error_set(err, VG_ENOMEM, "out of memory writing '%s'", path);
    if (ctx->sys != 0)
        return fail_errno(path, ctx->sys, err);
    if (ctx->warning[0] != '\0')
        return vg_error_set(err, VG_EIO, "cannot write '%s': %s (%s)", path, ctx->error,
                            ctx->warning);
    return vg_error_set(err, VG_EIO, "cannot write '%s': %s", path, ctx->error);
}

/* Arguments a caller can get wrong; checked before any file is touched. */
static vg_status check_args(const char *path, const unsigned char *pixels, int width,
                            int height, int stride, const vg_png_meta *meta, vg_error *err)
{
    double ppm;

    if (!pixels || width < 1 || height < 1)
        return vg_error_set(err, VG_EIO, "cannot write '%s': image of %d x %d pixels "
                            "(both must be >= 1)", path, width, height);
    if (stride < 0 || (size_t)stride / PNG_CAIRO_BPP < (size_t)width)
        return vg_error_set(err, VG_EIO, "cannot write '%s': row stride %d bytes is less "
                            "than %d pixels of 4 bytes", path, stride, width);
    ppm = meta->dpi / PNG_M_PER_INCH;
    if (!(ppm >= 0.5 && ppm < PNG_INT_MAX)) /* false for NaN */
        return vg_error_set(err, VG_EIO, "cannot write '%s': resolution %g dpi is out "
                            "of the range PNG can store", path, meta->dpi);
    return VG_OK;
}

/* dir/.NAME.XXXXXX for path dir/NAME (NAME alone: .NAME.XXXXXX). */
static char *temp_name(const char *path)
{
    const char *slash = strrchr(path, '/');
    size_t dlen = slash ? (size_t)(slash - path) + 1 : 0;
    size_t len = strlen(path) + sizeof "/..XXXXXX";
    char *tmp = malloc(len);

    if (tmp)
        snprintf(tmp, len, "%.*s.%s.XXXXXX", (int)dlen, path, path + dlen);
    return tmp;
}

/* Encode into the open temporary file and close it, checking every step;
 * fp is closed in every case. */
static vg_status write_stream(png_job *job, const char *path, vg_error *err)
{
    int failed = encode(job);
    int e = 0;

    if (failed)
        e = job->ctx.sys;
    else if (fflush(job->ctx.fp) != 0 || fsync(fileno(job->ctx.fp)) != 0)
        e = errno;
    if (fclose(job->ctx.fp) != 0 && !failed && e == 0)
        e = errno;
    if (failed)
        return fail_png(path, &job->ctx, err);
    return e != 0 ? fail_errno(path, e, err) : VG_OK;
}

/* Create tmp, write the image into it and rename it to path. */
static vg_status write_file(png_job *job, const char *path, char *tmp, vg_error *err)
{
    int fd = mkstemp(tmp);
    vg_status st;

    if (fd < 0)
        return fail_errno(path, errno, err);
    if (fchmod(fd, vg_fs_new_file_mode()) != 0 || !(job->ctx.fp = fdopen(fd, "wb"))) {
        st = fail_errno(path, errno, err);
        close(fd);
    } else {
        st = write_stream(job, path, err);
    }
    if (st == VG_OK && rename(tmp, path) != 0)
        st = fail_errno(path, errno, err);
    if (st != VG_OK)
        unlink(tmp);
    return st;
}

vg_status vg_png_write(const char *path, const unsigned char *pixels, int width, int height,
                       int stride, const vg_png_meta *meta, vg_error *err)
{
    png_job job;
    char *tmp;
    vg_status st = check_args(path, pixels, width, height, stride, meta, err);

    if (st != VG_OK)
        return st;
    memset(&job, 0, sizeof job);
    job.pixels = pixels;
    job.width = (png_uint_32)width;
    job.height = (png_uint_32)height;
    job.stride = (size_t)stride;
    job.meta = meta;
    job.row = malloc((size_t)width * PNG_RGB_BPP);
    tmp = temp_name(path);
    if (!job.row || !tmp)
        st = vg_error_set(err, VG_ENOMEM, "out of memory writing '%s'", path);
    else
        st = write_file(&job, path, tmp, err);
    free(job.row);
    free(tmp);
    return st;
}

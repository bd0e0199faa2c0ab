/*
 * Canvases and text for figures (see draw.h).  PDF and SVG are streamed by
 * cairo into a temporary file created with mkstemp next to the final name;
 * PNG is drawn on an image surface and written by vg_png_write, which adds
 * the metadata cairo's own PNG writer cannot.  Font hinting is off so that
 * the layout does not depend on the output resolution and files are
 * reproducible.
 */
#define _POSIX_C_SOURCE 200809L
#include <errno.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>
#include <unistd.h>
#include <sys/stat.h>

#include <cairo-pdf.h>
#include <cairo-svg.h>
#include <pango/pangocairo.h>

#include "draw.h"
#include "fsutil.h"
#include "vg_png.h"

const char *vg_canvas_ext(vg_figure_format fmt)
{
    return fmt == VG_FIG_PNG ? "png" : fmt == VG_FIG_PDF ? "pdf" : "svg";
}

void vg_draw_timestamp(char *buf, size_t len, long long *epoch)
{
    const char *sde = getenv("SOURCE_DATE_EPOCH");
    time_t t = sde && *sde ? (time_t)strtoll(sde, NULL, 10) : time(NULL);
    struct tm tm;

    gmtime_r(&t, &tm);
    strftime(buf, len, "%Y-%m-%dT%H:%M:%SZ", &tm);
    *epoch = (long long)t;
}

void vg_draw_meta(vg_figure_meta *m, char stamp[32], char software[64], int quiet)
{
    vg_draw_timestamp(stamp, 32, &m->epoch);
    snprintf(software, 64, "vibrogate %s", VG_VERSION);
    m->software = software;
    m->creation_time = stamp;
    m->quiet = quiet;
}

static cairo_status_t stream_write(void *closure, const unsigned char *data, unsigned int len)
{
    vg_canvas *c = closure;

    if (c->write_failed)
        return CAIRO_STATUS_WRITE_ERROR;
    if (fwrite(data, 1, len, c->fp) != len) {
        c->write_failed = errno ? errno : EIO;
        return CAIRO_STATUS_WRITE_ERROR;
    }
    return CAIRO_STATUS_SUCCESS;
}

static char *tmp_name(const char *path)
{
    const char *slash = strrchr(path, '/');
    size_t dlen = slash ? (size_t)(slash - path) + 1 : 0;
    size_t len = strlen(path) + 16;
    char *t = malloc(len);

    if (t)
        snprintf(t, len, "%.*s.%s.XXXXXX", (int)dlen, path, path + dlen);
    return t;
}

static vg_status open_stream(vg_canvas *c, vg_error *err)
{
    int fd;

    c->tmp = tmp_name(c->path);
    if (!c->tmp)
        return vg_error_set(err, VG_ENOMEM, "out of memory writing '%s'", c->path);
    fd = mkstemp(c->tmp);
    if (fd < 0 || fchmod(fd, vg_fs_new_file_mode()) != 0 || !(c->fp = fdopen(fd, "wb"))) {
        int e = errno;
        if (fd >= 0) {
            close(fd);
            unlink(c->tmp);
        }
        free(c->tmp);
        c->tmp = NULL;
        return vg_error_set(err, VG_EIO, "cannot write '%s': %s", c->path, strerror(e));
    }
    return VG_OK;
}

static void pdf_metadata(vg_canvas *c)
{
    char date[32];
    time_t t = (time_t)c->meta->epoch;
    struct tm tm;

    gmtime_r(&t, &tm);
    strftime(date, sizeof date, "%Y-%m-%dT%H:%M:%S", &tm);
    cairo_pdf_surface_set_metadata(c->surf, CAIRO_PDF_METADATA_TITLE, c->title);
    cairo_pdf_surface_set_metadata(c->surf, CAIRO_PDF_METADATA_CREATOR, c->meta->software);
    cairo_pdf_surface_set_metadata(c->surf, CAIRO_PDF_METADATA_SUBJECT,
                                   "model prediction (golden rule, harmonic mode, classical environment)");
    cairo_pdf_surface_set_metadata(c->surf, CAIRO_PDF_METADATA_CREATE_DATE, date);
    cairo_pdf_surface_set_metadata(c->surf, CAIRO_PDF_METADATA_MOD_DATE, date);
}

static vg_status create_surface(vg_canvas *c, vg_error *err)
{
    vg_status st;

    if (c->fmt == VG_FIG_PNG) {
        int w = (int)lround(c->w_pt * c->dpi / 72.0), h = (int)lround(c->h_pt * c->dpi / 72.0);
        c->surf = cairo_image_surface_create(CAIRO_FORMAT_RGB24, w, h);
    } else {
        st = open_stream(c, err);
        if (st != VG_OK)
            return st;
        if (c->fmt == VG_FIG_PDF) {
            c->surf = cairo_pdf_surface_create_for_stream(stream_write, c, c->w_pt, c->h_pt);
            pdf_metadata(c);
        } else {
            c->surf = cairo_svg_surface_create_for_stream(stream_write, c, c->w_pt, c->h_pt);
            cairo_svg_surface_set_document_unit(c->surf, CAIRO_SVG_UNIT_PT);
        }
    }
    if (cairo_surface_status(c->surf) != CAIRO_STATUS_SUCCESS)
        return vg_error_set(err, VG_EIO, "cannot draw '%s': %s", c->path,
                            cairo_status_to_string(cairo_surface_status(c->surf)));
    return VG_OK;
}

vg_status vg_canvas_open(vg_canvas *c, vg_figure_format fmt, const char *path,
                         double w_pt, double h_pt, double dpi, const char *title,
                         const vg_figure_meta *meta, vg_error *err)
{
    vg_status st;

    memset(c, 0, sizeof *c);
    c->fmt = fmt;
    c->w_pt = w_pt;
    c->h_pt = h_pt;
    c->dpi = dpi;
    c->title = title;
    c->meta = meta;
    c->path = strdup(path);
    if (!c->path)
        return vg_error_set(err, VG_ENOMEM, "out of memory writing '%s'", path);
    st = create_surface(c, err);
    if (st != VG_OK) {
        vg_canvas_abort(c);
        return st;
    }
    c->cr = cairo_create(c->surf);
    if (fmt == VG_FIG_PNG)
        cairo_scale(c->cr, dpi / 72.0, dpi / 72.0);
    cairo_set_source_rgb(c->cr, 1, 1, 1);
    cairo_paint(c->cr);
    return VG_OK;
}

static void canvas_free(vg_canvas *c)
{
    if (c->cr)
        cairo_destroy(c->cr);
    if (c->surf)
        cairo_surface_destroy(c->surf);
    if (c->fp)
        fclose(c->fp);
    if (c->tmp)
        unlink(c->tmp);
    free(c->tmp);
    free(c->path);
    memset(c, 0, sizeof *c);
}

void vg_canvas_abort(vg_canvas *c)
{
    canvas_free(c);
}

static vg_status finish_png(vg_canvas *c, const char *config_text, vg_error *err)
{
    vg_png_meta pm = {c->title, c->meta->software, c->meta->creation_time, config_text, c->dpi};

    cairo_surface_flush(c->surf);
    return vg_png_write(c->path, cairo_image_surface_get_data(c->surf),
                        cairo_image_surface_get_width(c->surf),
                        cairo_image_surface_get_height(c->surf),
                        cairo_image_surface_get_stride(c->surf), &pm, err);
}

static vg_status finish_stream(vg_canvas *c, vg_error *err)
{
    FILE *fp = c->fp;
    int bad;

    cairo_surface_finish(c->surf);
    c->fp = NULL;
    bad = c->write_failed || cairo_surface_status(c->surf) != CAIRO_STATUS_SUCCESS;
    if (fflush(fp) != 0 || fsync(fileno(fp)) != 0)
        bad = bad ? bad : (c->write_failed = errno);
    if (fclose(fp) != 0 && !bad)
        bad = c->write_failed = errno;
    if (bad)
        return vg_error_set(err, VG_EIO, "cannot write '%s': %s", c->path,
                            c->write_failed ? strerror(c->write_failed)
                                            : cairo_status_to_string(cairo_surface_status(c->surf)));
    if (rename(c->tmp, c->path) != 0)
        return vg_error_set(err, VG_EIO, "cannot write '%s': %s", c->path, strerror(errno));
    free(c->tmp);
    c->tmp = NULL;
    return VG_OK;
}

vg_status vg_canvas_close(vg_canvas *c, const char *config_text, vg_error *err)
{
    vg_status st;

    cairo_destroy(c->cr);
    c->cr = NULL;
    if (cairo_surface_status(c->surf) != CAIRO_STATUS_SUCCESS)
        st = vg_error_set(err, VG_EIO, "cannot draw '%s': %s", c->path,
                          cairo_status_to_string(cairo_surface_status(c->surf)));
    else if (c->fmt == VG_FIG_PNG)
        st = finish_png(c, config_text, err);
    else
        st = finish_stream(c, err);
    canvas_free(c);
    return st;
}

/* Replace <sub> and <sup> by spans of explicit size and rise: Pango 1.50
 * sizes its own <sub>/<sup> from device units, which goes wrong on a
 * scaled (high-resolution) surface. */
static char *script_spans(const char *markup, double size_pt)
{
    char sub[96], sup[96];
    GString *out = g_string_new(NULL);

    snprintf(sub, sizeof sub, "<span size=\"%ld\" rise=\"%ld\">",
             lround(0.7 * size_pt * PANGO_SCALE), -lround(0.18 * size_pt * PANGO_SCALE));
    snprintf(sup, sizeof sup, "<span size=\"%ld\" rise=\"%ld\">",
             lround(0.7 * size_pt * PANGO_SCALE), lround(0.38 * size_pt * PANGO_SCALE));
    for (const char *p = markup; *p;) {
        if (strncmp(p, "<sub>", 5) == 0 || strncmp(p, "<sup>", 5) == 0) {
            g_string_append(out, p[3] == 'b' ? sub : sup);
            p += 5;
        } else if (strncmp(p, "</sub>", 6) == 0 || strncmp(p, "</sup>", 6) == 0) {
            g_string_append(out, "</span>");
            p += 6;
        } else {
            g_string_append_c(out, *p++);
        }
    }
    return g_string_free(out, FALSE);
}

static PangoLayout *layout_for(cairo_t *cr, const char *font, double size_pt, const char *markup)
{
    char *spans = script_spans(markup, size_pt);
    PangoLayout *lay = pango_cairo_create_layout(cr);
    PangoFontDescription *fd = pango_font_description_from_string(font);
    cairo_font_options_t *fo = cairo_font_options_create();

    cairo_font_options_set_hint_style(fo, CAIRO_HINT_STYLE_NONE);
    cairo_font_options_set_hint_metrics(fo, CAIRO_HINT_METRICS_OFF);
    /* 72 "dpi" makes Pango's points our user units (cairo scales to the
     * device), and keeps relative sizes such as <sub> and <sup> right. */
    pango_cairo_context_set_resolution(pango_layout_get_context(lay), 72.0);
    pango_cairo_context_set_font_options(pango_layout_get_context(lay), fo);
    pango_layout_context_changed(lay);
    cairo_font_options_destroy(fo);
    pango_font_description_set_size(fd, (int)lround(size_pt * PANGO_SCALE));
    pango_layout_set_font_description(lay, fd);
    pango_font_description_free(fd);
    pango_layout_set_markup(lay, spans, -1);
    g_free(spans);
    return lay;
}

void vg_draw_text_size(cairo_t *cr, const char *font, double size_pt, const char *markup,
                       double *w, double *h)
{
    PangoLayout *lay = layout_for(cr, font, size_pt, markup);
    PangoRectangle log;

    pango_layout_get_extents(lay, NULL, &log);
    *w = (double)log.width / PANGO_SCALE;
    *h = (double)log.height / PANGO_SCALE;
    g_object_unref(lay);
}

double vg_draw_text(cairo_t *cr, const char *font, double size_pt, const char *markup,
                    double x, double y, double ax, double ay, double angle)
{
    PangoLayout *lay = layout_for(cr, font, size_pt, markup);
    PangoRectangle log;
    double w, h;

    pango_layout_get_extents(lay, NULL, &log);
    w = (double)log.width / PANGO_SCALE;
    h = (double)log.height / PANGO_SCALE;
    cairo_save(cr);
    cairo_translate(cr, x, y);
    cairo_rotate(cr, -angle);
    cairo_move_to(cr, -ax * w - (double)log.x / PANGO_SCALE, -ay * h - (double)log.y / PANGO_SCALE);
    pango_cairo_show_layout(cr, lay);
    cairo_restore(cr);
    g_object_unref(lay);
    return w;
}

void vg_draw_text_halo(cairo_t *cr, const char *font, double size_pt, const char *markup,
                       double x, double y, double ax, double ay)
{
    PangoLayout *lay = layout_for(cr, font, size_pt, markup);
    PangoRectangle log;

    pango_layout_get_extents(lay, NULL, &log);
    cairo_save(cr);
    cairo_move_to(cr, x - ax * (double)log.width / PANGO_SCALE - (double)log.x / PANGO_SCALE,
                  y - ay * (double)log.height / PANGO_SCALE - (double)log.y / PANGO_SCALE);
    pango_cairo_layout_path(cr, lay);
    cairo_set_line_join(cr, CAIRO_LINE_JOIN_ROUND);
    cairo_set_line_width(cr, 0.25 * size_pt);
    cairo_set_source_rgb(cr, 1, 1, 1);
    cairo_stroke_preserve(cr);
    cairo_set_source_rgb(cr, 0, 0, 0);
    cairo_fill(cr);
    cairo_restore(cr);
    g_object_unref(lay);
}

/*
 * Tests of the PNG writer (vg_png.h): images with known cairo pixels are
 * written and read back twice, once with libpng's reading API
 * (png_read_png) and once by walking the file's bytes ourselves (chunk
 * lengths, types and CRCs, the chunk order, the iTXt fields, the compressed
 * text inflated with zlib), and compared with what the PNG specification
 * and the documented pixel conversion say they must be.  Also the
 * temporary-file rules and every error path.
 *
 * References: PNG specification (W3C/ISO 15948, 2nd ed. 2003): the
 * signature (5.2), chunk layout and CRC-32 over type and data (5.3), chunk
 * ordering rules (5.6: IHDR first, IEND last, IDATs consecutive, cHRM,
 * gAMA, sRGB and pHYs before IDAT), IHDR fields (11.2.2), the gAMA and cHRM
 * values to write with sRGB (11.3.3.5: gamma 45455, white 31270/32900, red
 * 64000/33000, green 30000/60000, blue 15000/6000, from memory), pHYs in
 * pixels per metre with unit 1 (11.3.5.3), iTXt layout (11.3.4.5);
 * CRC-32 by zlib's crc32 and inflation by zlib's uncompress; the inch is
 * 0.0254 m exactly (international yard and pound agreement, 1959); cairo's
 * ARGB32 format: native-endian 0xAARRGGBB words with premultiplied colour
 * (cairo_format_t documentation).
 */
#define _GNU_SOURCE /* mkdtemp, nftw, setrlimit */

#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>
#include <setjmp.h>
#include <cmocka.h>

#include "testutil.h"

#include <ctype.h>
#include <dirent.h>
#include <errno.h>
#include <ftw.h>
#include <math.h>
#include <png.h>
#include <signal.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/resource.h>
#include <sys/stat.h>
#include <unistd.h>
#include <zlib.h>

#include "vg_png.h"

#define ROOT_LEN 64
#define DIR_LEN 128
#define PATH_LEN 256
#define MAX_CHUNKS 64
#define CONFIG_BYTES 50000   /* about 50 kB of config text */
#define M_PER_INCH 0.0254    /* exact by definition */
#define PNG_SIG_LEN 8

static char root[ROOT_LEN];
static int subdir_count;
static char config_text[CONFIG_BYTES + 256];

static const char title[] = "Assisted vs elastic: \xce\xbb\xe2\x80\x93\xce\xb5 map (\xce\x94G)";
static const char software[] = "vibrogate 0.1.0";
static const char created[] = "2026-12-01T20:00:00Z";

/* ---- the image and its expected RGB bytes ----------------------------- */

typedef struct {
    int width, height, stride;    /* stride in bytes, padded past 4 * width */
    unsigned char *pixels;
} image;

/* Documented conversion (src/png.c header): c' = round(255 c / a) for
 * 0 < a < 255, clamped to 255; c unchanged for a = 0 or 255.  Computed here
 * in double with round-half-up, not with the writer's integer formula. */
static unsigned expected_channel(unsigned c, unsigned a)
{
    double v;

    if (a == 0 || a == 255)
        return c;
    v = floor(255.0 * c / a + 0.5);
    return v > 255.0 ? 255u : (unsigned)v;
}

static void put_word(image *im, int x, int y, uint32_t w)
{
    memcpy(im->pixels + (size_t)y * (size_t)im->stride + 4 * (size_t)x, &w, sizeof w);
}

static uint32_t get_word(const image *im, int x, int y)
{
    uint32_t w;

    memcpy(&w, im->pixels + (size_t)y * (size_t)im->stride + 4 * (size_t)x, sizeof w);
    return w;
}

static uint32_t argb(unsigned a, unsigned r, unsigned g, unsigned b)
{
    return (uint32_t)a << 24 | (uint32_t)r << 16 | (uint32_t)g << 8 | (uint32_t)b;
}

/* Pixel i of the pattern: every alpha from 0 to 255 occurs (a = 37 i + 11
 * mod 256 runs through all residues), colours <= alpha as premultiplied
 * data must be, except every 13th pixel, whose colour exceeds alpha
 * (malformed input, which must clamp). */
static uint32_t pattern(unsigned i)
{
    unsigned a = (37u * i + 11u) % 256u;
    unsigned top = i % 13u == 5u ? 256u : a + 1u;

    return argb(a, (53u * i + 7u) % top, (29u * i + 3u) % top, (71u * i) % top);
}

static image make_image(int width, int height)
{
    image im;
    int x, y;

    im.width = width;
    im.height = height;
    im.stride = 4 * width + 12;
    im.pixels = calloc((size_t)im.stride * (size_t)height, 1);
    assert_non_null(im.pixels);
    for (y = 0; y < height; y++)
        for (x = 0; x < width; x++)
            put_word(&im, x, y, pattern((unsigned)(y * width + x)));
    return im;
}

/* ---- files and directories -------------------------------------------- */

static void new_dir(char *dir)
{
    snprintf(dir, DIR_LEN, "%s/t%d", root, subdir_count++);
    assert_int_equal(mkdir(dir, 0777), 0);
}

static void path_in(char *path, const char *dir, const char *name)
{
    snprintf(path, PATH_LEN, "%s/%s", dir, name);
}

static void write_text_file(const char *path, const char *text)
{
    FILE *fp = fopen(path, "w");

    assert_non_null(fp);
    assert_true(fputs(text, fp) >= 0);
    assert_int_equal(fclose(fp), 0);
}

static void assert_file_is(const char *path, const char *text)
{
    size_t len;
    unsigned char *buf = (unsigned char *)test_read_file(path, &len);

    assert_int_equal(len, strlen(text));
    assert_memory_equal(buf, text, len);
    free(buf);
}

static vg_png_meta default_meta(double dpi)
{
    vg_png_meta m;

    m.title = title;
    m.software = software;
    m.creation_time = created;
    m.config_text = config_text;
    m.dpi = dpi;
    return m;
}

/* A fresh directory dir with im written as NAME (path) under meta. */
static void write_new(char *dir, char *path, const char *name, const image *im,
                      const vg_png_meta *meta)
{
    vg_error err;

    new_dir(dir);
    path_in(path, dir, name);
    if (vg_png_write(path, im->pixels, im->width, im->height, im->stride, meta, &err) != VG_OK)
        fail_msg("%s", err.msg);
}

/* The iTXt keywords and the texts written under them by default_meta. */
static const char *const text_key[4] = {"Title", "Software", "Creation Time",
                                        VG_PNG_CONFIG_KEY};

static const char *text_want(int k)
{
    const char *want[4] = {title, software, created, config_text};

    return want[k];
}

/* ---- reading back with libpng ---------------------------------------- */

typedef struct {
    png_uint_32 width, height;
    int depth, color, interlace;
    png_uint_32 xres, yres;
    int unit, has_phys, has_srgb, intent;
    png_fixed_point gamma;
    png_fixed_point chrm[8];  /* white x y, red x y, green x y, blue x y */
    int ntext;
    png_textp text;           /* valid until decoded_free */
    png_bytepp rows;
    png_structp png;
    png_infop info;
} decoded;

static void on_read_error(png_structp png, png_const_charp msg)
{
    print_error("libpng: %s\n", msg);
    png_longjmp(png, 1);
}

static void decode(const char *path, decoded *d)
{
    FILE *fp = fopen(path, "rb");

    assert_non_null(fp);
    memset(d, 0, sizeof *d);
    d->png = png_create_read_struct(PNG_LIBPNG_VER_STRING, NULL, on_read_error, NULL);
    assert_non_null(d->png);
    d->info = png_create_info_struct(d->png);
    assert_non_null(d->info);
    if (setjmp(png_jmpbuf(d->png))) {
        fclose(fp);
        fail_msg("libpng could not read '%s'", path);
    }
    png_init_io(d->png, fp);
    png_read_png(d->png, d->info, PNG_TRANSFORM_IDENTITY, NULL);
    fclose(fp);
    png_get_IHDR(d->png, d->info, &d->width, &d->height, &d->depth, &d->color, &d->interlace,
                 NULL, NULL);
    d->has_phys = png_get_pHYs(d->png, d->info, &d->xres, &d->yres, &d->unit) != 0;
    d->has_srgb = png_get_sRGB(d->png, d->info, &d->intent) != 0;
    png_get_gAMA_fixed(d->png, d->info, &d->gamma);
    png_get_cHRM_fixed(d->png, d->info, &d->chrm[0], &d->chrm[1], &d->chrm[2], &d->chrm[3],
                       &d->chrm[4], &d->chrm[5], &d->chrm[6], &d->chrm[7]);
    png_get_text(d->png, d->info, &d->text, &d->ntext);
    d->rows = png_get_rows(d->png, d->info);
}

static void decoded_free(decoded *d)
{
    png_destroy_read_struct(&d->png, &d->info, NULL);
}

static const png_text *find_text(const decoded *d, const char *key)
{
    int i;

    for (i = 0; i < d->ntext; i++)
        if (strcmp(d->text[i].key, key) == 0)
            return &d->text[i];
    return NULL;
}

/* ---- reading back by hand ---------------------------------------------- */

typedef struct {
    char type[5];
    size_t length;
    const unsigned char *data;
} chunk;

static uint32_t be32(const unsigned char *p)
{
    return (uint32_t)p[0] << 24 | (uint32_t)p[1] << 16 | (uint32_t)p[2] << 8 | p[3];
}

/* Split the file into chunks, asserting the signature, each length within
 * the file and each CRC (zlib crc32 over type and data, PNG spec 5.3);
 * nothing may follow IEND. */
static size_t parse_chunks(const unsigned char *buf, size_t len, chunk *c)
{
    static const unsigned char sig[PNG_SIG_LEN] = {137, 80, 78, 71, 13, 10, 26, 10};
    size_t pos = PNG_SIG_LEN, n = 0;

    assert_true(len >= PNG_SIG_LEN);
    assert_memory_equal(buf, sig, PNG_SIG_LEN);
    while (pos < len) {
        uint32_t length, crc;
        assert_true(len - pos >= 12);
        length = be32(buf + pos);
        assert_true(length <= 0x7fffffffu);             /* PNG spec 5.3 */
        assert_true(len - pos - 12 >= length);
        assert_true(n < MAX_CHUNKS);
        memcpy(c[n].type, buf + pos + 4, 4);
        c[n].type[4] = '\0';
        c[n].length = length;
        c[n].data = buf + pos + 8;
        crc = (uint32_t)crc32(0L, buf + pos + 4, (uInt)length + 4u);
        assert_int_equal(crc, be32(buf + pos + 8 + length));
        pos += 12 + (size_t)length;
        n++;
        if (strcmp(c[n - 1].type, "IEND") == 0)
            break;
    }
    assert_int_equal(pos, len);
    return n;
}

static int first_index(const chunk *c, size_t n, const char *type)
{
    size_t i;

    for (i = 0; i < n; i++)
        if (strcmp(c[i].type, type) == 0)
            return (int)i;
    return -1;
}

static int count_type(const chunk *c, size_t n, const char *type)
{
    size_t i;
    int k = 0;

    for (i = 0; i < n; i++)
        k += strcmp(c[i].type, type) == 0;
    return k;
}

/* PNG spec 5.6: IHDR first, IEND last and empty, IDATs consecutive, each
 * of cHRM, gAMA, sRGB, pHYs exactly once (as we write them) before IDAT. */
static void check_order(const chunk *c, size_t n)
{
    static const char *const before_idat[] = {"cHRM", "gAMA", "sRGB", "pHYs"};
    int idat = first_index(c, n, "IDAT"), nidat = count_type(c, n, "IDAT");
    size_t i;

    assert_true(n >= 3);
    assert_string_equal(c[0].type, "IHDR");
    assert_string_equal(c[n - 1].type, "IEND");
    assert_int_equal(c[n - 1].length, 0);
    assert_int_equal(count_type(c, n, "IHDR"), 1);
    assert_int_equal(count_type(c, n, "IEND"), 1);
    assert_true(idat > 0 && nidat >= 1);
    for (i = (size_t)idat; i < (size_t)(idat + nidat); i++)
        assert_string_equal(c[i].type, "IDAT");
    for (i = 0; i < sizeof before_idat / sizeof before_idat[0]; i++) {
        assert_int_equal(count_type(c, n, before_idat[i]), 1);
        assert_true(first_index(c, n, before_idat[i]) < idat);
    }
}

/* An iTXt chunk's fields (PNG spec 11.3.4.5): keyword NUL, compression
 * flag, method, language tag NUL, translated keyword NUL, text. */
typedef struct {
    const char *key;
    int flag, method;
    const char *lang, *lang_key;   /* point into the chunk, NUL-terminated */
    const unsigned char *text;
    size_t text_len;
} itxt;

static const unsigned char *after_nul(const unsigned char *p, const unsigned char *end)
{
    const unsigned char *z = memchr(p, '\0', (size_t)(end - p));

    assert_non_null(z);
    return z + 1;
}

static itxt parse_itxt(const chunk *c)
{
    const unsigned char *p = c->data, *end = c->data + c->length;
    itxt t;

    t.key = (const char *)p;
    p = after_nul(p, end);
    assert_true(end - p >= 2);
    t.flag = p[0];
    t.method = p[1];
    p += 2;
    t.lang = (const char *)p;
    p = after_nul(p, end);
    t.lang_key = (const char *)p;
    p = after_nul(p, end);
    t.text = p;
    t.text_len = (size_t)(end - p);
    return t;
}

/* The text of an iTXt, inflated with zlib when its flag says compressed. */
static void assert_itxt_text(const itxt *t, const char *want)
{
    size_t len = strlen(want);

    if (t->flag == 0) {
        assert_int_equal(t->text_len, len);
        assert_memory_equal(t->text, want, len);
    } else {
        uLongf out_len = (uLongf)len + 1;
        unsigned char *out = malloc(out_len);
        assert_non_null(out);
        assert_int_equal(uncompress(out, &out_len, t->text, (uLong)t->text_len), Z_OK);
        assert_int_equal(out_len, len);
        assert_memory_equal(out, want, len);
        free(out);
    }
}

/* ---- fixtures ------------------------------------------------------ */

/* About CONFIG_BYTES of multi-line UTF-8 config text with Greek letters. */
static void build_config_text(void)
{
    size_t used = 0;
    int line = 0;

    used += (size_t)snprintf(config_text, sizeof config_text,
                             "[scenario]\ntitle = \xce\xbb\xe2\x80\x93\xce\xb5 map\n"
                             "[parameters]\ngap = -37.25 .. 209.5 meV, 7 points\n");
    while (used < CONFIG_BYTES)
        used += (size_t)snprintf(config_text + used, sizeof config_text - used,
                                 "; %05d \xce\xbb = 204.6 meV, \xce\xb5 = -37.25 meV, "
                                 "\xc4\xa7\xcf\x89 = 361.2 meV, S = 0.375 "
                                 "(\xce\xb1\xce\xb2\xce\xb3\xce\xb4)\n", ++line);
}

static int group_setup(void **state)
{
    (void)state;
    snprintf(root, sizeof root, "/tmp/vg_test_png.XXXXXX");
    build_config_text();
    return mkdtemp(root) ? 0 : -1;
}

static int group_teardown(void **state)
{
    (void)state;
    return test_remove_tree(root);
}

#define EARLIER "an earlier figure\n"

/* A fresh directory dir holding an earlier file NAME (path). */
static void new_dir_with_earlier(char *dir, char *path, const char *name)
{
    new_dir(dir);
    path_in(path, dir, name);
    write_text_file(path, EARLIER);
}

/* dir holds NAME (path) only, still the earlier file. */
static void assert_earlier_kept(const char *dir, const char *path, const char *name)
{
    char names[256];

    test_list_dir(dir, " ", names, sizeof names);
    assert_string_equal(names, name);
    assert_file_is(path, EARLIER);
}

/* ---- tests: content ----------------------------------------------- */

/* Every pixel of a 23 x 17 image with padded rows (all 256 alphas), read
 * with libpng, against the documented conversion. */
static void pixels_round_trip(void **state)
{
    char dir[DIR_LEN], path[PATH_LEN];
    image im = make_image(23, 17);
    vg_png_meta meta = default_meta(300.0);
    decoded d;
    int x, y;

    (void)state;
    write_new(dir, path, "fig.png", &im, &meta);
    decode(path, &d);
    assert_int_equal(d.width, 23);
    assert_int_equal(d.height, 17);
    assert_int_equal(d.depth, 8);
    assert_int_equal(d.color, PNG_COLOR_TYPE_RGB);
    assert_int_equal(d.interlace, PNG_INTERLACE_NONE);
    for (y = 0; y < im.height; y++)
        for (x = 0; x < im.width; x++) {
            uint32_t w = get_word(&im, x, y);
            unsigned a = w >> 24;
            const png_byte *px = d.rows[y] + 3 * x;
            assert_int_equal(px[0], expected_channel((w >> 16) & 0xffu, a));
            assert_int_equal(px[1], expected_channel((w >> 8) & 0xffu, a));
            assert_int_equal(px[2], expected_channel(w & 0xffu, a));
        }
    decoded_free(&d);
    free(im.pixels);
}

/* Six pixels with the expected bytes worked out by hand from
 * c' = round(255 c / a). */
static void unpremultiply_by_hand(void **state)
{
    static const unsigned want[6][3] = {
        {250, 3, 0},     /* a = 255: colour as is */
        {128, 50, 253},  /* a = 128: 255*64/128 = 127.5 -> 128 (half up);
                            255*25/128 = 49.80 -> 50; 255*127/128 = 253.01 -> 253 */
        {50, 255, 5},    /* a = 51: 255*10/51 = 50; 255*51/51 = 255; 255*1/51 = 5 */
        {254, 1, 0},     /* a = 200: 255*199/200 = 253.725 -> 254; 255*1/200 = 1.275 -> 1 */
        {17, 34, 51},    /* a = 0 (an RGB24 surface with a zero top byte): as is */
        {255, 255, 26},  /* a = 10, colour above alpha (malformed): 255*200/10 and
                            255*11/10 = 280.5 clamp to 255; 255*1/10 = 25.5 -> 26 */
    };
    char dir[DIR_LEN], path[PATH_LEN];
    vg_png_meta meta = default_meta(72.0);
    image im = make_image(6, 1);
    decoded d;
    int x, k;

    (void)state;
    put_word(&im, 0, 0, argb(255, 250, 3, 0));
    put_word(&im, 1, 0, argb(128, 64, 25, 127));
    put_word(&im, 2, 0, argb(51, 10, 51, 1));
    put_word(&im, 3, 0, argb(200, 199, 1, 0));
    put_word(&im, 4, 0, argb(0, 17, 34, 51));
    put_word(&im, 5, 0, argb(10, 200, 11, 1));
    write_new(dir, path, "hand.png", &im, &meta);
    decode(path, &d);
    for (x = 0; x < 6; x++)
        for (k = 0; k < 3; k++)
            assert_int_equal(d.rows[0][3 * x + k], want[x][k]);
    decoded_free(&d);
    free(im.pixels);
}

/* pHYs = round(dpi / 0.0254) pixels per metre in x and y, unit metre:
 * 72 dpi -> 2834.6 -> 2835, 300 -> 11811.02 -> 11811, 600 -> 23622.05 ->
 * 23622 (worked by hand), and the same from the formula. */
static void resolution(void **state)
{
    static const double dpi[3] = {72.0, 300.0, 600.0};
    static const png_uint_32 ppm[3] = {2835, 11811, 23622};
    char dir[DIR_LEN], path[PATH_LEN];
    image im = make_image(3, 2);
    int i;

    (void)state;
    for (i = 0; i < 3; i++) {
        vg_png_meta meta = default_meta(dpi[i]);
        decoded d;
        write_new(dir, path, "res.png", &im, &meta);
        decode(path, &d);
        assert_true(d.has_phys);
        assert_int_equal(d.unit, PNG_RESOLUTION_METER);
        assert_int_equal(d.xres, ppm[i]);
        assert_int_equal(d.yres, ppm[i]);
        assert_int_equal(d.xres, (png_uint_32)lround(dpi[i] / M_PER_INCH));
        decoded_free(&d);
    }
    free(im.pixels);
}

/* sRGB (perceptual, intent 0) with gAMA and cHRM as PNG spec 11.3.3.5
 * prescribes for an sRGB image. */
static void colour_space(void **state)
{
    static const png_fixed_point chrm[8] = {31270, 32900, 64000, 33000,
                                            30000, 60000, 15000, 6000};
    char dir[DIR_LEN], path[PATH_LEN];
    image im = make_image(2, 2);
    vg_png_meta meta = default_meta(300.0);
    decoded d;
    int i;

    (void)state;
    write_new(dir, path, "srgb.png", &im, &meta);
    decode(path, &d);
    assert_true(d.has_srgb);
    assert_int_equal(d.intent, PNG_sRGB_INTENT_PERCEPTUAL);
    assert_int_equal(d.gamma, 45455);
    for (i = 0; i < 8; i++)
        assert_int_equal(d.chrm[i], chrm[i]);
    decoded_free(&d);
    free(im.pixels);
}

/* The four iTXt texts, exact, as libpng reads them. */
static void texts_by_libpng(void **state)
{
    char dir[DIR_LEN], path[PATH_LEN];
    image im = make_image(4, 3);
    vg_png_meta meta = default_meta(600.0);
    decoded d;
    int i;

    (void)state;
    assert_true(strlen(config_text) >= CONFIG_BYTES);
    write_new(dir, path, "text.png", &im, &meta);
    decode(path, &d);
    assert_int_equal(d.ntext, 4);
    for (i = 0; i < 4; i++) {
        const png_text *t = find_text(&d, text_key[i]);
        assert_non_null(t);
        assert_int_equal(strlen(t->text), strlen(text_want(i)));
        assert_string_equal(t->text, text_want(i));
        /* libpng reports an iTXt chunk as compression 1 (compressed) or 2 */
        assert_int_equal(t->compression, i == 3 ? PNG_ITXT_COMPRESSION_zTXt
                                                : PNG_ITXT_COMPRESSION_NONE);
    }
    decoded_free(&d);
    free(im.pixels);
}

/* The file walked byte by byte: valid CRCs, legal order, IHDR and pHYs
 * fields, and the iTXt chunks' fields and texts (the config inflated with
 * zlib), without libpng's reader. */
static void chunks_by_hand(void **state)
{
    char dir[DIR_LEN], path[PATH_LEN];
    image im = make_image(9, 5);
    vg_png_meta meta = default_meta(300.0);
    chunk c[MAX_CHUNKS];
    unsigned char *buf;
    size_t len, n, i;
    int seen[4] = {0, 0, 0, 0}, k;

    (void)state;
    write_new(dir, path, "raw.png", &im, &meta);
    buf = (unsigned char *)test_read_file(path, &len);
    n = parse_chunks(buf, len, c);
    check_order(c, n);
    /* IHDR (11.2.2): width, height, depth 8, colour type 2, 0, 0, 0 */
    assert_int_equal(c[0].length, 13);
    assert_int_equal(be32(c[0].data), 9);
    assert_int_equal(be32(c[0].data + 4), 5);
    assert_int_equal(c[0].data[8], 8);
    assert_int_equal(c[0].data[9], 2);
    assert_int_equal(c[0].data[10] | c[0].data[11] | c[0].data[12], 0);
    /* pHYs (11.3.5.3): x, y, unit 1 = metre */
    k = first_index(c, n, "pHYs");
    assert_int_equal(c[k].length, 9);
    assert_int_equal(be32(c[k].data), 11811);
    assert_int_equal(be32(c[k].data + 4), 11811);
    assert_int_equal(c[k].data[8], 1);
    /* sRGB: one byte, rendering intent 0 = perceptual; gAMA 45455 */
    k = first_index(c, n, "sRGB");
    assert_int_equal(c[k].length, 1);
    assert_int_equal(c[k].data[0], 0);
    k = first_index(c, n, "gAMA");
    assert_int_equal(be32(c[k].data), 45455);
    assert_int_equal(count_type(c, n, "iTXt"), 4);
    for (i = 0; i < n; i++) {
        itxt t;
        if (strcmp(c[i].type, "iTXt") != 0)
            continue;
        t = parse_itxt(&c[i]);
        for (k = 0; k < 4 && strcmp(t.key, text_key[k]) != 0; k++)
            ;
        assert_true(k < 4);
        seen[k]++;
        assert_int_equal(t.flag, k == 3);   /* only the config compressed */
        assert_int_equal(t.method, 0);      /* zlib deflate, the only method */
        assert_string_equal(t.lang, "");
        assert_string_equal(t.lang_key, "");
        assert_itxt_text(&t, text_want(k));
    }
    for (k = 0; k < 4; k++)
        assert_int_equal(seen[k], 1);
    free(buf);
    free(im.pixels);
}

/* A NULL config text is left out (vg_png.h allows it). */
static void no_config_text(void **state)
{
    char dir[DIR_LEN], path[PATH_LEN];
    image im = make_image(2, 3);
    vg_png_meta meta = default_meta(300.0);
    decoded d;

    (void)state;
    meta.config_text = NULL;
    write_new(dir, path, "bare.png", &im, &meta);
    decode(path, &d);
    assert_int_equal(d.ntext, 3);
    assert_null(find_text(&d, VG_PNG_CONFIG_KEY));
    assert_string_equal(find_text(&d, "Title")->text, title);
    decoded_free(&d);
    free(im.pixels);
}

/* ---- tests: files ------------------------------------------------- */

/* Only the final name is left; it has the mode of a plain new file under
 * umask 027 (0666 & ~027 = 0640); an existing file is replaced. */
static void temp_file_and_mode(void **state)
{
    char dir[DIR_LEN], path[PATH_LEN], names[256];
    image im = make_image(5, 4);
    vg_png_meta meta = default_meta(300.0);
    mode_t old = umask(027);
    struct stat sb;
    vg_error err;
    decoded d;

    (void)state;
    new_dir_with_earlier(dir, path, "fig.png");
    assert_int_equal(vg_png_write(path, im.pixels, 5, 4, im.stride, &meta, &err), VG_OK);
    umask(old);
    test_list_dir(dir, " ", names, sizeof names);
    assert_string_equal(names, "fig.png");
    assert_int_equal(stat(path, &sb), 0);
    assert_int_equal(sb.st_mode & 0777, 0640);
    decode(path, &d);
    assert_int_equal(d.width, 5);
    decoded_free(&d);
    free(im.pixels);
}

/* A bare file name goes to the current directory. */
static void bare_name(void **state)
{
    char dir[DIR_LEN], cwd[PATH_LEN], names[256];
    image im = make_image(2, 2);
    vg_png_meta meta = default_meta(72.0);
    vg_error err;

    (void)state;
    new_dir(dir);
    assert_non_null(getcwd(cwd, sizeof cwd));
    assert_int_equal(chdir(dir), 0);
    assert_int_equal(vg_png_write("here.png", im.pixels, 2, 2, im.stride, &meta, &err),
                     VG_OK);
    assert_int_equal(chdir(cwd), 0);
    test_list_dir(dir, " ", names, sizeof names);
    assert_string_equal(names, "here.png");
    free(im.pixels);
}

/* ---- tests: errors ------------------------------------------------- */

static void expect_error(const char *path, int errnum, const image *im)
{
    vg_png_meta meta = default_meta(300.0);
    char want[2 * PATH_LEN];
    vg_error err;

    snprintf(want, sizeof want, "cannot write '%s': %s", path, strerror(errnum));
    assert_int_equal(vg_png_write(path, im->pixels, im->width, im->height, im->stride, &meta,
                                  &err), VG_EIO);
    assert_int_equal(err.status, VG_EIO);
    assert_string_equal(err.msg, want);
}

static void error_missing_directory(void **state)
{
    char dir[DIR_LEN], path[PATH_LEN], names[256];
    image im = make_image(2, 2);

    (void)state;
    new_dir(dir);
    path_in(path, dir, "nowhere/fig.png");
    expect_error(path, ENOENT, &im);
    test_list_dir(dir, " ", names, sizeof names);
    assert_string_equal(names, "");
    free(im.pixels);
}

static void error_under_regular_file(void **state)
{
    char dir[DIR_LEN], file[PATH_LEN], path[PATH_LEN + 16], names[256];
    image im = make_image(2, 2);

    (void)state;
    new_dir(dir);
    path_in(file, dir, "notes.txt");
    write_text_file(file, "plain text\n");
    snprintf(path, sizeof path, "%s/fig.png", file);
    expect_error(path, ENOTDIR, &im);
    test_list_dir(dir, " ", names, sizeof names);
    assert_string_equal(names, "notes.txt");
    assert_file_is(file, "plain text\n");
    free(im.pixels);
}

/* The final name is a non-empty directory: the rename fails (EISDIR,
 * rename(2)), the temporary file goes, the directory stays. */
static void error_rename(void **state)
{
    char dir[DIR_LEN], path[PATH_LEN], inner[PATH_LEN + 16], names[256];
    image im = make_image(3, 3);

    (void)state;
    new_dir(dir);
    path_in(path, dir, "fig.png");
    assert_int_equal(mkdir(path, 0777), 0);
    snprintf(inner, sizeof inner, "%s/keep", path);
    write_text_file(inner, "kept\n");
    expect_error(path, EISDIR, &im);
    test_list_dir(dir, " ", names, sizeof names);
    assert_string_equal(names, "fig.png");
    assert_file_is(inner, "kept\n");
    free(im.pixels);
}

/* A write that fails half way (file size limit below the PNG's size:
 * EFBIG, SIGXFSZ ignored; setrlimit(2)): the error comes back through
 * libpng's error callback and longjmp, the earlier file is untouched and no
 * temporary file is left. */
static void error_write_keeps_existing(void **state)
{
    char dir[DIR_LEN], path[PATH_LEN];
    image im = make_image(40, 30);
    struct rlimit old, lim;

    (void)state;
    new_dir_with_earlier(dir, path, "fig.png");
    assert_int_equal(getrlimit(RLIMIT_FSIZE, &old), 0);
    lim = old;
    lim.rlim_cur = 4096; /* the 50 kB config alone compresses to more */
    signal(SIGXFSZ, SIG_IGN);
    assert_int_equal(setrlimit(RLIMIT_FSIZE, &lim), 0);
    expect_error(path, EFBIG, &im);
    assert_int_equal(setrlimit(RLIMIT_FSIZE, &old), 0);
    signal(SIGXFSZ, SIG_DFL);
    assert_earlier_kept(dir, path, "fig.png");
    free(im.pixels);
}

/* libpng itself refuses the image: a width above its default user limit
 * of 1000000 (png_get_user_width_max) fails in png_set_IHDR, after the
 * temporary file exists.  The message is libpng's, lower-cased. */
static void error_libpng_refuses(void **state)
{
    char dir[DIR_LEN], path[PATH_LEN], head[2 * PATH_LEN];
    png_structp probe = png_create_write_struct(PNG_LIBPNG_VER_STRING, NULL, NULL, NULL);
    vg_png_meta meta = default_meta(300.0);
    image im;
    int width;
    vg_error err;

    (void)state;
    assert_non_null(probe);
    width = (int)png_get_user_width_max(probe) + 1;
    png_destroy_write_struct(&probe, NULL);
    im.width = width;
    im.height = 1;
    im.stride = 4 * width;
    im.pixels = calloc((size_t)im.stride, 1);
    assert_non_null(im.pixels);
    new_dir_with_earlier(dir, path, "wide.png");
    assert_int_equal(vg_png_write(path, im.pixels, width, 1, im.stride, &meta, &err), VG_EIO);
    snprintf(head, sizeof head, "cannot write '%s': ", path);
    assert_int_equal(strncmp(err.msg, head, strlen(head)), 0);
    assert_true(strlen(err.msg) > strlen(head));
    assert_true(islower((unsigned char)err.msg[strlen(head)]));
    assert_non_null(strstr(err.msg, "IHDR"));
    assert_earlier_kept(dir, path, "wide.png");
    free(im.pixels);
}

/* Bad arguments are refused before any file is made. */
static void error_bad_arguments(void **state)
{
    char dir[DIR_LEN], path[PATH_LEN], names[256], want[2 * PATH_LEN];
    image im = make_image(4, 2);
    vg_png_meta meta = default_meta(300.0);
    vg_error err;

    (void)state;
    new_dir(dir);
    path_in(path, dir, "bad.png");
    assert_int_equal(vg_png_write(path, im.pixels, 0, 2, im.stride, &meta, &err), VG_EIO);
    snprintf(want, sizeof want, "cannot write '%s': image of 0 x 2 pixels (both must be "
             ">= 1)", path);
    assert_string_equal(err.msg, want);
    assert_int_equal(vg_png_write(path, im.pixels, 4, 2, 15, &meta, &err), VG_EIO);
    snprintf(want, sizeof want, "cannot write '%s': row stride 15 bytes is less than 4 "
             "pixels of 4 bytes", path);
    assert_string_equal(err.msg, want);
    meta.dpi = 0.0;
    assert_int_equal(vg_png_write(path, im.pixels, 4, 2, im.stride, &meta, &err), VG_EIO);
    snprintf(want, sizeof want, "cannot write '%s': resolution 0 dpi is out of the range "
             "PNG can store", path);
    assert_string_equal(err.msg, want);
    meta.dpi = NAN;
    assert_int_equal(vg_png_write(path, im.pixels, 4, 2, im.stride, &meta, &err), VG_EIO);
    meta.dpi = 1e9; /* 3.9e10 pixels per metre > 2^31 - 1 */
    assert_int_equal(vg_png_write(path, im.pixels, 4, 2, im.stride, &meta, &err), VG_EIO);
    test_list_dir(dir, " ", names, sizeof names);
    assert_string_equal(names, "");
    free(im.pixels);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(pixels_round_trip),
        cmocka_unit_test(unpremultiply_by_hand),
        cmocka_unit_test(resolution),
        cmocka_unit_test(colour_space),
        cmocka_unit_test(texts_by_libpng),
        cmocka_unit_test(chunks_by_hand),
        cmocka_unit_test(no_config_text),
        cmocka_unit_test(temp_file_and_mode),
        cmocka_unit_test(bare_name),
        cmocka_unit_test(error_missing_directory),
        cmocka_unit_test(error_under_regular_file),
        cmocka_unit_test(error_rename),
        cmocka_unit_test(error_write_keeps_existing),
        cmocka_unit_test(error_libpng_refuses),
        cmocka_unit_test(error_bad_arguments),
    };

    return cmocka_run_group_tests(tests, group_setup, group_teardown);
}

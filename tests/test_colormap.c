/*
 * Tests of the colour maps and colour-science helpers (src/colormap.c).
 *
 * The checks judge the maps with a CIELAB reference written out again here
 * from the published formulas (IEC 61966-2-1:1999 for sRGB, CIE 15:2004 for
 * CIELAB, in CIE's 216/24389 and 841/108 form), independent of the module's
 * own conversion, and the white point the module documents (the XYZ of sRGB
 * white from the IEC matrix).  Tolerances are stated per check.
 *
 * `test_colormap --dump` prints both tables ("kind index r g b", %.17g) for
 * the numpy reference tests/scripts/colormap_ref.py and runs no test.
 */
#include <float.h>
#include <math.h>
#include <setjmp.h>
#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>
#include <stdio.h>
#include <string.h>

#include <cmocka.h>

#include "vg_colormap.h"
#include "vg_const.h"

#define N VG_CMAP_N
#define MID_LO (N / 2 - 1) /* the two entries either side of t = 0.5 */
#define MID_HI (N / 2)

/* ------------------------------------------- reference sRGB -> CIELAB --- */

/* IEC 61966-2-1:1999: linear RGB to XYZ (D65), and the decoding
 * C_lin = C / 12.92 for C <= 0.04045, ((C + 0.055) / 1.055)^2.4 above. */
static const double ref_rgb_xyz[3][3] = {
    {0.4124, 0.3576, 0.1805},
    {0.2126, 0.7152, 0.0722},
    {0.0193, 0.1192, 0.9505},
};

static double ref_linear(double c)
{
    return c > 0.04045 ? pow((c + 0.055) / 1.055, 2.4) : c / 12.92;
}

/* CIE 15:2004: f(t) = t^(1/3) for t > 216/24389, else (841/108) t + 16/116. */
static double ref_f(double t)
{
    return t > 216.0 / 24389.0 ? pow(t, 1.0 / 3.0) : 841.0 / 108.0 * t + 16.0 / 116.0;
}

/* Relative luminance Y of an sRGB colour (the grayscale rendering). */
static double ref_luminance(const double rgb[3])
{
    return ref_rgb_xyz[1][0] * ref_linear(rgb[0]) + ref_rgb_xyz[1][1] * ref_linear(rgb[1]) +
           ref_rgb_xyz[1][2] * ref_linear(rgb[2]);
}

static void ref_lab(const double rgb[3], double lab[3])
{
    double fx, fy, fz, t[3];

    for (int row = 0; row < 3; row++) {
        const double *m = ref_rgb_xyz[row];
        /* X/Xn etc., the white being the row sum (XYZ of R = G = B = 1) */
        t[row] = (m[0] * ref_linear(rgb[0]) + m[1] * ref_linear(rgb[1]) +
                  m[2] * ref_linear(rgb[2])) / (m[0] + m[1] + m[2]);
    }
    fx = ref_f(t[0]);
    fy = ref_f(t[1]);
    fz = ref_f(t[2]);
    lab[0] = 116.0 * fy - 16.0;
    lab[1] = 500.0 * (fx - fy);
    lab[2] = 200.0 * (fy - fz);
}

static double chroma(const double lab[3])
{
    return sqrt(lab[1] * lab[1] + lab[2] * lab[2]);
}

/* CIELAB hue angle in degrees, in [0, 360). */
static double hue_deg(const double lab[3])
{
    double h = atan2(lab[2], lab[1]) * 180.0 / VG_PI;

    return h < 0.0 ? h + 360.0 : h;
}

/* CIE 1976 colour difference: Euclidean distance in CIELAB. */
static double delta_e76(const double p[3], const double q[3])
{
    return sqrt((p[0] - q[0]) * (p[0] - q[0]) + (p[1] - q[1]) * (p[1] - q[1]) +
                (p[2] - q[2]) * (p[2] - q[2]));
}

/* ------------------------------------------------------------ helpers --- */

static void assert_near(double got, double want, double tol, const char *what)
{
    if (!(fabs(got - want) <= tol))
        fail_msg("%s: got %.17g, want %.17g (difference %.3g > %.3g)", what, got, want,
                 fabs(got - want), tol);
}

static void assert_near3(const double got[3], const double want[3], double tol, const char *what)
{
    for (int k = 0; k < 3; k++)
        assert_near(got[k], want[k], tol, what);
}

static vg_cmap built(vg_cmap_kind k)
{
    vg_cmap c;
    vg_error err = {VG_OK, ""};

    if (vg_cmap_build(&c, k, &err) != VG_OK)
        fail_msg("vg_cmap_build(%d) failed: %s", (int)k, err.msg);
    assert_int_equal(c.kind, k);
    return c;
}

/* v[from..to] strictly rising (sign +1) or strictly falling (sign -1). */
static void assert_strict(const double *v, size_t from, size_t to, int sign, const char *what)
{
    for (size_t i = from; i < to; i++)
        if (!((v[i + 1] - v[i]) * sign > 0.0))
            fail_msg("%s: not strictly %s at entry %zu: %.12g then %.12g", what,
                     sign > 0 ? "rising" : "falling", i, v[i], v[i + 1]);
}

/* Reference L* of every entry, after an optional deficiency simulation
 * (cvd < 0: none). */
static void table_lightness(const vg_cmap *c, int cvd, double l[N])
{
    for (size_t i = 0; i < N; i++) {
        double rgb[3], lab[3];

        if (cvd < 0)
            memcpy(rgb, c->rgb[i], sizeof rgb);
        else
            vg_cmap_simulate_cvd((vg_cvd)cvd, c->rgb[i], rgb);
        ref_lab(rgb, lab);
        l[i] = lab[0];
    }
}

/* The diverging requirement: L* rises strictly to the centre and falls
 * strictly after it. */
static void assert_diverging_sides(const double l[N], const char *what)
{
    assert_strict(l, 0, MID_LO, +1, what);
    assert_strict(l, MID_HI, N - 1, -1, what);
}

/* A few sRGB levels per channel: the ends, either side of the 0.04045 knee
 * of the transfer function, and high-entropy values between. */
static const double levels[] = {0.0, 0.0217, 0.04045, 0.0405, 0.1937, 0.5, 0.7351, 0.9981, 1.0};
#define N_LEVELS (sizeof levels / sizeof levels[0])

/* ---------------------------------------------------- colour science --- */

typedef void (*to_lab_fn)(const double rgb[3], double lab[3]);

/* Known CIELAB values.  White 100, 0, 0 and black 0, 0, 0 follow from the
 * definitions with the matrix white (to rounding; 1e-6).  Mid grey 0.5 ->
 * L* 53.39 and sRGB red -> 53.24, 80.09, 67.20 are common-practice values,
 * from memory; tolerances 0.01 and 0.05 (the 4-digit IEC matrix and the
 * white choice move the third decimal). */
static void check_known_values(to_lab_fn to_lab, const char *who)
{
    static const double white[3] = {1, 1, 1}, black[3] = {0, 0, 0};
    static const double grey[3] = {0.5, 0.5, 0.5}, red[3] = {1, 0, 0};
    static const double want_white[3] = {100, 0, 0}, want_black[3] = {0, 0, 0};
    static const double want_grey[3] = {53.39, 0, 0}, want_red[3] = {53.24, 80.09, 67.20};
    double lab[3];
    char what[64];

    to_lab(white, lab);
    snprintf(what, sizeof what, "%s: white", who);
    assert_near3(lab, want_white, 1e-6, what);
    to_lab(black, lab);
    snprintf(what, sizeof what, "%s: black", who);
    assert_near3(lab, want_black, 1e-6, what);
    to_lab(grey, lab);
    snprintf(what, sizeof what, "%s: mid grey", who);
    assert_near(lab[0], want_grey[0], 0.01, what);
    assert_near(chroma(lab), 0.0, 1e-6, what);
    to_lab(red, lab);
    snprintf(what, sizeof what, "%s: red", who);
    assert_near3(lab, want_red, 0.05, what);
}

static void test_known_values(void **state)
{
    (void)state;
    check_known_values(ref_lab, "reference");
    check_known_values(vg_cmap_srgb_to_lab, "vg_cmap_srgb_to_lab");
}

/* Over a grid of sRGB colours: the module's sRGB -> CIELAB equals the
 * reference to 1e-12 (both evaluate the same formulas; cbrt against
 * pow(t, 1/3) differs in the last bits), and sRGB -> CIELAB -> sRGB returns
 * the colour to 1e-12 (exact inverses; the knee 0.04045 itself and either
 * side of it are among the levels). */
static void test_srgb_lab(void **state)
{
    (void)state;
    for (size_t i = 0; i < N_LEVELS * N_LEVELS * N_LEVELS; i++) {
        double rgb[3] = {levels[i % N_LEVELS], levels[i / N_LEVELS % N_LEVELS],
                         levels[i / (N_LEVELS * N_LEVELS)]};
        double got[3], want[3], back[3];

        vg_cmap_srgb_to_lab(rgb, got);
        ref_lab(rgb, want);
        assert_near3(got, want, 1e-12, "srgb_to_lab against the reference");
        vg_cmap_lab_to_srgb(got, back);
        assert_near3(back, rgb, 1e-12, "sRGB -> Lab -> sRGB");
    }
}

/* Lab -> Msh -> Lab to 1e-12, over neutral, near-neutral, saturated and
 * every-quadrant colours; and Msh against its definition (Moreland 2009:
 * M = |Lab|, s = acos(L/M), h = atan2(b, a)) where acos is well conditioned. */
static void test_lab_msh(void **state)
{
    static const double labs[][3] = {
        {0, 0, 0},          {61.3, 0, 0},       {97.2, 1e-7, -2.3e-7}, {53.24, 80.09, 67.2},
        {32.3, 79.2, -107.9}, {46.7, -51.3, 38.1}, {12.5, -3.7, -20.9}, {88.1, 0.9, 0.4},
    };
    (void)state;
    for (size_t i = 0; i < sizeof labs / sizeof labs[0]; i++) {
        double msh[3], back[3];

        vg_cmap_lab_to_msh(labs[i], msh);
        vg_cmap_msh_to_lab(msh, back);
        assert_near3(back, labs[i], 1e-12, "Lab -> Msh -> Lab");
    }
    for (size_t i = 3; i < 7; i++) {
        const double *p = labs[i];
        double msh[3], m = sqrt(p[0] * p[0] + p[1] * p[1] + p[2] * p[2]);

        vg_cmap_lab_to_msh(p, msh);
        assert_near(msh[0], m, 1e-12, "Msh M = |Lab|");
        assert_near(msh[1], acos(p[0] / m), 1e-12, "Msh s = acos(L/M)");
        assert_near(msh[2], atan2(p[2], p[1]), 1e-12, "Msh h = atan2(b, a)");
    }
}

/* vg_cmap_lab_to_srgb clips out-of-gamut colours per channel to [0, 1]
 * (its documented rule, which the gamut checks below rely on: a clipped
 * component would be exactly 0 or 1).  L* 130 is brighter than white, L*
 * -20 darker than black; L* 60 with a* -120 lies beyond sRGB green; a NaN
 * input must still give a valid colour. */
static void test_lab_to_srgb_clips(void **state)
{
    static const double bright[3] = {130, 0, 0}, dark[3] = {-20, 0, 0};
    static const double beyond_green[3] = {60, -120, 80};
    const double nan_lab[3] = {NAN, 10.0, -5.0};
    double rgb[3];
    (void)state;
    vg_cmap_lab_to_srgb(bright, rgb);
    for (int k = 0; k < 3; k++)
        assert_true(rgb[k] == 1.0);
    vg_cmap_lab_to_srgb(dark, rgb);
    for (int k = 0; k < 3; k++)
        assert_true(rgb[k] == 0.0);
    vg_cmap_lab_to_srgb(beyond_green, rgb);
    assert_true(rgb[0] == 0.0); /* red would be negative in linear light */
    assert_true(rgb[1] > 0.0 && rgb[1] <= 1.0 && rgb[2] >= 0.0 && rgb[2] <= 1.0);
    vg_cmap_lab_to_srgb(nan_lab, rgb);
    for (int k = 0; k < 3; k++)
        assert_true(isfinite(rgb[k]) && rgb[k] >= 0.0 && rgb[k] <= 1.0);
}

/* -------------------------------------------------------------- CVD --- */

/* The simulation matrix, recovered through the API: column j is
 * (out(grey + d e_j) - out(grey)) / d in linear light, for a grey and
 * raised level chosen so that nothing clips.  grey_gain[i] is out(grey) /
 * grey in linear light (the row sum, measured on its own). */
static void cvd_matrix(vg_cvd kind, double m[3][3], double grey_gain[3])
{
    static const double grey = 0.61, raised = 0.69;
    double base[3], in[3], out[3];
    double g = ref_linear(grey), d = ref_linear(raised) - g;

    in[0] = in[1] = in[2] = grey;
    vg_cmap_simulate_cvd(kind, in, out);
    for (int i = 0; i < 3; i++) {
        base[i] = ref_linear(out[i]);
        grey_gain[i] = base[i] / g;
    }
    for (int j = 0; j < 3; j++) {
        in[0] = in[1] = in[2] = grey;
        in[j] = raised;
        vg_cmap_simulate_cvd(kind, in, out);
        for (int i = 0; i < 3; i++)
            m[i][j] = (ref_linear(out[i]) - base[i]) / d;
    }
}

static double det3(const double m[3][3])
{
    return m[0][0] * (m[1][1] * m[2][2] - m[1][2] * m[2][1]) -
           m[0][1] * (m[1][0] * m[2][2] - m[1][2] * m[2][0]) +
           m[0][2] * (m[1][0] * m[2][1] - m[1][1] * m[2][0]);
}

/* Machado, Oliveira & Fernandes 2009 severity-1 matrices (entered from
 * memory in the module), cross-checked without restating them: each row sums
 * to 1 (white stays white) within 2e-6, the six-decimal rounding of three
 * published entries, both from the measured columns and from a grey's gain;
 * protan and deutan at severity 1 reduce colour to two dimensions as for a
 * dichromat (from memory), so their determinant is 0 within 1e-5 (rounding
 * of the entries moves it by ~1e-6; one entry wrong in its third decimal
 * moves it by ~1e-4).  The tritan model is not such a projection at
 * severity 1, so only its row sums are checked.  Black stays black exactly;
 * white to 1e-5 (a row summing to just under 1 encodes just under 1). */
static void test_cvd_matrices(void **state)
{
    static const double white[3] = {1, 1, 1}, black[3] = {0, 0, 0};
    static const char *name[3] = {"protan row sum", "deutan row sum", "tritan row sum"};
    (void)state;
    for (int kind = 0; kind < 3; kind++) {
        double m[3][3], gain[3], out[3];

        cvd_matrix((vg_cvd)kind, m, gain);
        for (int i = 0; i < 3; i++) {
            assert_near(m[i][0] + m[i][1] + m[i][2], 1.0, 2e-6, name[kind]);
            assert_near(gain[i], 1.0, 2e-6, name[kind]);
        }
        if (kind != VG_CVD_TRITAN)
            assert_near(det3(m), 0.0, 1e-5, "protan/deutan determinant");
        vg_cmap_simulate_cvd((vg_cvd)kind, white, out);
        assert_near3(out, white, 1e-5, "white stays white");
        vg_cmap_simulate_cvd((vg_cvd)kind, black, out);
        assert_near3(out, black, 0.0, "black stays black");
    }
}

/* Protanopes lose long-wavelength sensitivity, so red looks darker to them
 * (common practice); the deutan model keeps red at least as light. */
static void test_cvd_red_darkens_for_protan(void **state)
{
    static const double red[3] = {1, 0, 0};
    double sim[3], lab_red[3], lab_p[3], lab_d[3];
    (void)state;
    ref_lab(red, lab_red);
    vg_cmap_simulate_cvd(VG_CVD_PROTAN, red, sim);
    ref_lab(sim, lab_p);
    vg_cmap_simulate_cvd(VG_CVD_DEUTAN, red, sim);
    ref_lab(sim, lab_d);
    assert_true(lab_p[0] < lab_red[0] - 5.0);
    assert_true(lab_d[0] > lab_p[0]);
}

/* An unknown deficiency leaves the colour as it is (documented). */
static void test_cvd_unknown_kind(void **state)
{
    static const double rgb[3] = {0.237, 0.618, 0.904};
    double out[3];
    (void)state;
    vg_cmap_simulate_cvd((vg_cvd)7, rgb, out);
    assert_near3(out, rgb, 0.0, "unknown deficiency");
}

/* ------------------------------------------------------------ build --- */

static void test_build_errors(void **state)
{
    vg_cmap c;
    vg_error err = {VG_OK, ""};
    (void)state;
    assert_int_equal(vg_cmap_build(NULL, VG_CMAP_SEQUENTIAL, &err), VG_EUSAGE);
    assert_int_equal(err.status, VG_EUSAGE);
    assert_non_null(strstr(err.msg, "without a map"));
    err = (vg_error){VG_OK, ""};
    assert_int_equal(vg_cmap_build(&c, (vg_cmap_kind)7, &err), VG_EUSAGE);
    assert_non_null(strstr(err.msg, "kind 7 is unknown"));
    assert_int_equal(vg_cmap_build(&c, (vg_cmap_kind)-1, NULL), VG_EUSAGE);
}

/* Every entry of both maps is inside the sRGB gamut without clipping:
 * build succeeded (it refuses an entry outside the gamut) and no component
 * is 0 or 1, which a per-channel clip (see test_lab_to_srgb_clips) would
 * leave.  The margin asked, 1e-3 in encoded sRGB, is below the design's
 * least (0.006, the red channel of the sequential map's light end). */
static void test_gamut(void **state)
{
    (void)state;
    for (int k = 0; k < 2; k++) {
        vg_cmap c = built((vg_cmap_kind)k);

        for (size_t i = 0; i < N; i++)
            for (int j = 0; j < 3; j++)
                if (!(c.rgb[i][j] > 1e-3 && c.rgb[i][j] < 1.0 - 1e-3))
                    fail_msg("map %d entry %zu component %d = %.17g is at the gamut edge", k, i, j,
                             c.rgb[i][j]);
    }
}

/* -------------------------------------------------------- diverging --- */

/* Moreland 2009's requirements, with the reference L*: L* strictly rising
 * to the centre and falling after it; the two central entries the lightest;
 * the two sides equal in L* at symmetric t.  The ends share L* and C* by
 * design, so the sides agree to rounding; the tolerance 0.05 L* (the
 * requirement is 1 unit) still catches a mirror off by one entry, which
 * would show the 0.38 L* step between neighbours. */
static void test_diverging_lightness(void **state)
{
    double l[N];
    vg_cmap c = built(VG_CMAP_DIVERGING);
    (void)state;
    table_lightness(&c, -1, l);
    assert_diverging_sides(l, "diverging L*");
    for (size_t i = 0; i < N; i++) {
        assert_true(l[i] <= l[MID_LO] && l[i] <= l[MID_HI]);
        assert_near(l[i], l[N - 1 - i], 0.05, "diverging L* symmetry");
    }
    assert_true(l[MID_LO] - l[0] > 40.0); /* a usable lightness range per side */
}

/* The centre (t = 0.5) is neutral, chroma < 1, and as light as the table's
 * lightest entries to 0.01 L* (it is the sRGB mean of the two central
 * entries, whose hues differ, so it may fall below them by a hair).  The low
 * end is blue (hue 250-320 deg), the high end orange-red (20-70 deg), as
 * vg_colormap.h promises. */
static void test_diverging_centre_and_ends(void **state)
{
    double rgb[3], lab[3], lab_mid[3], lab_end[3];
    vg_cmap c = built(VG_CMAP_DIVERGING);
    (void)state;
    vg_cmap_eval(&c, 0.5, rgb);
    ref_lab(rgb, lab);
    ref_lab(c.rgb[MID_LO], lab_mid);
    assert_true(chroma(lab) < 1.0);
    assert_true(lab[0] > lab_mid[0] - 0.01);
    ref_lab(c.rgb[0], lab_end);
    assert_true(hue_deg(lab_end) > 250.0 && hue_deg(lab_end) < 320.0);
    ref_lab(c.rgb[N - 1], lab_end);
    assert_true(hue_deg(lab_end) > 20.0 && hue_deg(lab_end) < 70.0);
}

/* Under each simulated deficiency the diverging map keeps two sides: the
 * simulated ends differ by CIE76 Delta E > 40 (two clearly different
 * colours; 2.3 is a just-noticeable difference, common practice), and L*
 * still rises to the centre and falls after it. */
static void test_diverging_cvd(void **state)
{
    vg_cmap c = built(VG_CMAP_DIVERGING);
    (void)state;
    for (int kind = 0; kind < 3; kind++) {
        double lo[3], hi[3], lab_lo[3], lab_hi[3], l[N];

        vg_cmap_simulate_cvd((vg_cvd)kind, c.rgb[0], lo);
        vg_cmap_simulate_cvd((vg_cvd)kind, c.rgb[N - 1], hi);
        ref_lab(lo, lab_lo);
        ref_lab(hi, lab_hi);
        if (!(delta_e76(lab_lo, lab_hi) > 40.0))
            fail_msg("deficiency %d: ends only %.3g apart", kind, delta_e76(lab_lo, lab_hi));
        table_lightness(&c, kind, l);
        assert_diverging_sides(l, "diverging L* under a deficiency");
    }
}

/* ------------------------------------------------------- sequential --- */

/* L* strictly rising from a dark end (15-25) to a light end (92-97), close
 * to linear in t (within 0.5 L* of the line through the ends; the design is
 * exactly linear), and the hue turning steadily one way by under 2 deg per
 * step (the design turns 85 deg over 255 steps). */
static void test_sequential_lightness_and_hue(void **state)
{
    double l[N], h[N];
    vg_cmap c = built(VG_CMAP_SEQUENTIAL);
    (void)state;
    for (size_t i = 0; i < N; i++) {
        double lab[3];

        ref_lab(c.rgb[i], lab);
        l[i] = lab[0];
        h[i] = hue_deg(lab);
    }
    assert_strict(l, 0, N - 1, +1, "sequential L*");
    assert_true(l[0] > 15.0 && l[0] < 25.0);
    assert_true(l[N - 1] > 92.0 && l[N - 1] < 97.0);
    for (size_t i = 0; i < N; i++) {
        double line = l[0] + (l[N - 1] - l[0]) * (double)i / (double)(N - 1);
        assert_near(l[i], line, 0.5, "sequential L* linear in t");
    }
    for (size_t i = 0; i + 1 < N; i++) {
        double step = h[i + 1] - h[i];
        assert_true(step > 0.0 && step < 2.0);
    }
}

/* Grayscale (luminance-only) renderings: the sequential map's Y rises
 * strictly; the diverging map's rises to the centre and falls after it. */
static void test_grayscale(void **state)
{
    double y[N];
    vg_cmap s = built(VG_CMAP_SEQUENTIAL), d = built(VG_CMAP_DIVERGING);
    (void)state;
    for (size_t i = 0; i < N; i++)
        y[i] = ref_luminance(s.rgb[i]);
    assert_strict(y, 0, N - 1, +1, "sequential luminance");
    for (size_t i = 0; i < N; i++)
        y[i] = ref_luminance(d.rgb[i]);
    assert_diverging_sides(y, "diverging luminance");
}

/* Under each simulated deficiency adjacent steps of the sequential map stay
 * strictly rising in L*. */
static void test_sequential_cvd(void **state)
{
    double l[N];
    vg_cmap c = built(VG_CMAP_SEQUENTIAL);
    (void)state;
    for (int kind = 0; kind < 3; kind++) {
        table_lightness(&c, kind, l);
        assert_strict(l, 0, N - 1, +1, "sequential L* under a deficiency");
    }
}

/* ------------------------------------------------------------- eval --- */

/* On the real map: the ends and exact table points t = i/255 give the
 * entries (to 4 DBL_EPSILON: i/255 * 255 may land one ulp below i), t = 0.5
 * the mean of the two central entries, t outside [0, 1] (and NaN, taken as
 * 0) the clamped end. */
static void test_eval_table_points(void **state)
{
    static const size_t at[] = {1, 37, 128, 200, 254};
    double rgb[3], mean[3];
    vg_cmap c = built(VG_CMAP_DIVERGING);
    (void)state;
    vg_cmap_eval(&c, 0.0, rgb);
    assert_near3(rgb, c.rgb[0], 0.0, "t = 0");
    vg_cmap_eval(&c, 1.0, rgb);
    assert_near3(rgb, c.rgb[N - 1], 0.0, "t = 1");
    vg_cmap_eval(&c, -3.0, rgb);
    assert_near3(rgb, c.rgb[0], 0.0, "t = -3 clamps to 0");
    vg_cmap_eval(&c, 7.0, rgb);
    assert_near3(rgb, c.rgb[N - 1], 0.0, "t = 7 clamps to 1");
    vg_cmap_eval(&c, NAN, rgb);
    assert_near3(rgb, c.rgb[0], 0.0, "t = NaN");
    for (size_t i = 0; i < sizeof at / sizeof at[0]; i++) {
        vg_cmap_eval(&c, (double)at[i] / (double)(N - 1), rgb);
        assert_near3(rgb, c.rgb[at[i]], 4 * DBL_EPSILON, "exact table point");
    }
    for (int k = 0; k < 3; k++)
        mean[k] = 0.5 * (c.rgb[MID_LO][k] + c.rgb[MID_HI][k]);
    vg_cmap_eval(&c, 0.5, rgb);
    assert_near3(rgb, mean, 2 * DBL_EPSILON, "t = 0.5");
}

/* A synthetic table of unrelated values: midway between entries i and i+1
 * gives their mean, a quarter of the way 3/4 a + 1/4 b (to 8 DBL_EPSILON). */
static void test_eval_interpolation(void **state)
{
    static const size_t at[] = {0, 3, 117, 254};
    static vg_cmap c;
    (void)state;
    for (size_t i = 0; i < N; i++)
        for (int k = 0; k < 3; k++)
            c.rgb[i][k] = 0.5 + 0.45 * sin(0.7311 * (double)i + 1.917 * k);
    for (size_t n = 0; n < sizeof at / sizeof at[0]; n++) {
        size_t i = at[n];
        double got[3], mid[3], quarter[3];

        for (int k = 0; k < 3; k++) {
            mid[k] = 0.5 * (c.rgb[i][k] + c.rgb[i + 1][k]);
            quarter[k] = 0.75 * c.rgb[i][k] + 0.25 * c.rgb[i + 1][k];
        }
        vg_cmap_eval(&c, ((double)i + 0.5) / (N - 1), got);
        assert_near3(got, mid, 8 * DBL_EPSILON, "midway between entries");
        vg_cmap_eval(&c, ((double)i + 0.25) / (N - 1), got);
        assert_near3(got, quarter, 8 * DBL_EPSILON, "a quarter of the way");
    }
}

/* vg_cmap_eval8 rounds to nearest, halves up: 127.49 -> 127, 127.5 -> 128,
 * 127.51 -> 128, 0 -> 0, 1 -> 255, 254.6 -> 255; and on the real map it is
 * the rounded vg_cmap_eval. */
static void test_eval8(void **state)
{
    static vg_cmap c;
    unsigned char v[3];
    double rgb[3];
    vg_cmap s = built(VG_CMAP_SEQUENTIAL);
    (void)state;
    memcpy(c.rgb[0], (double[3]){0.0, 1.0, 127.49 / 255.0}, sizeof c.rgb[0]);
    memcpy(c.rgb[N - 1], (double[3]){127.51 / 255.0, 0.5, 254.6 / 255.0}, sizeof c.rgb[0]);
    vg_cmap_eval8(&c, 0.0, v);
    assert_int_equal(v[0], 0);
    assert_int_equal(v[1], 255);
    assert_int_equal(v[2], 127);
    vg_cmap_eval8(&c, 1.0, v);
    assert_int_equal(v[0], 128);
    assert_int_equal(v[1], 128);
    assert_int_equal(v[2], 255);
    for (double t = 0.0137; t < 1.0; t += 0.0871) {
        vg_cmap_eval8(&s, t, v);
        vg_cmap_eval(&s, t, rgb);
        for (int k = 0; k < 3; k++)
            assert_int_equal(v[k], (int)lround(255.0 * rgb[k]));
    }
}

/* ------------------------------------------------------------- main --- */

/* Both tables as text for tests/scripts/colormap_ref.py. */
static int dump_tables(void)
{
    static const char *name[2] = {"diverging", "sequential"};

    for (int k = 0; k < 2; k++) {
        vg_cmap c;
        vg_error err = {VG_OK, ""};

        if (vg_cmap_build(&c, (vg_cmap_kind)k, &err) != VG_OK) {
            fprintf(stderr, "test_colormap: %s\n", err.msg);
            return 1;
        }
        for (size_t i = 0; i < N; i++)
            printf("%s %zu %.17g %.17g %.17g\n", name[k], i, c.rgb[i][0], c.rgb[i][1],
                   c.rgb[i][2]);
    }
    return fflush(stdout) == 0 ? 0 : 1;
}

int main(int argc, char **argv)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_known_values),
        cmocka_unit_test(test_srgb_lab),
        cmocka_unit_test(test_lab_msh),
        cmocka_unit_test(test_lab_to_srgb_clips),
        cmocka_unit_test(test_cvd_matrices),
        cmocka_unit_test(test_cvd_red_darkens_for_protan),
        cmocka_unit_test(test_cvd_unknown_kind),
        cmocka_unit_test(test_build_errors),
        cmocka_unit_test(test_gamut),
        cmocka_unit_test(test_diverging_lightness),
        cmocka_unit_test(test_diverging_centre_and_ends),
        cmocka_unit_test(test_diverging_cvd),
        cmocka_unit_test(test_sequential_lightness_and_hue),
        cmocka_unit_test(test_grayscale),
        cmocka_unit_test(test_sequential_cvd),
        cmocka_unit_test(test_eval_table_points),
        cmocka_unit_test(test_eval_interpolation),
        cmocka_unit_test(test_eval8),
    };

    if (argc == 2 && strcmp(argv[1], "--dump") == 0)
        return dump_tables();
    return cmocka_run_group_tests(tests, NULL, NULL);
}

/*
 * Colour maps for the heatmaps of the figure module (src/figure.c), built
 * here from published colour science (see vg_colormap.h): sRGB and CIELAB
 * conversions, Moreland's Msh space and diverging interpolation, a CIELCh
 * sequential ramp, and the colour-vision-deficiency simulation the tests use
 * to check legibility.  Every table entry is computed from the formulas
 * below; no value is taken from any plotting library.
 *
 * White point: XYZ of the sRGB white as given by the IEC matrix itself (its
 * row sums: Xn = 0.9505, Yn = 1, Zn = 1.0890), so that sRGB white is
 * L* = 100, a* = b* = 0 exactly.  CIE 15's tabulated D65 (0.95047, 1,
 * 1.08883) differs in the fifth digit and would give white a* = 0.005.
 *
 * Gamut: the end colours and paths are chosen so that every table entry is
 * inside the sRGB gamut without clipping; vg_cmap_build checks each entry
 * and fails rather than store a clipped colour.
 *
 * Pure: no I/O, no allocation, no static state.
 */
#include <math.h>
#include <stddef.h>

#include "vg_colormap.h"
#include "vg_const.h"

/* ------------------------------------------------------------- sRGB --- */

/* IEC 61966-2-1:1999 transfer function: linear below the knee, a power law
 * with offset above. */
#define SRGB_DECODE_KNEE 0.04045
#define SRGB_SLOPE 12.92
#define SRGB_OFFSET 0.055
#define SRGB_GAMMA 2.4

/* IEC 61966-2-1:1999, linear RGB to CIE XYZ for the D65 white (rows X, Y, Z). */
static const double rgb_to_xyz[3][3] = {
    {0.4124, 0.3576, 0.1805},
    {0.2126, 0.7152, 0.0722},
    {0.0193, 0.1192, 0.9505},
};

static double srgb_decode_power(double c)
{
    return pow((c + SRGB_OFFSET) / (1.0 + SRGB_OFFSET), SRGB_GAMMA);
}

static double srgb_decode(double c)
{
    return c <= SRGB_DECODE_KNEE ? c / SRGB_SLOPE : srgb_decode_power(c);
}

/* The inverse of srgb_decode.  The standard's two branches meet with a step
 * of 3e-8 at the knee, and its encoding knee 0.0031308 is 0.04045 / 12.92
 * rounded, so neither it nor the unrounded ratio inverts decoding on both
 * sides of the knee.  The linear branch is used up to the power branch's
 * value at the decoding knee (0.0031308073), which does.  (1 + a) p - a is
 * written p + a (p - 1) so that 1 encodes to exactly 1. */
static double srgb_encode(double l)
{
    double p;

    if (l <= srgb_decode_power(SRGB_DECODE_KNEE))
        return SRGB_SLOPE * l;
    p = pow(l, 1.0 / SRGB_GAMMA);
    return p + SRGB_OFFSET * (p - 1.0);
}

static void mat_apply(const double m[3][3], const double v[3], double out[3])
{
    for (int i = 0; i < 3; i++)
        out[i] = m[i][0] * v[0] + m[i][1] * v[1] + m[i][2] * v[2];
}

/* Inverse of rgb_to_xyz by cofactors, in full double precision (the
 * standard's printed 4-digit inverse is not the exact inverse and would
 * spoil round trips at the 1e-4 level). */
static void xyz_to_rgb(double inv[3][3])
{
    const double (*m)[3] = rgb_to_xyz;
    double det = 0.0;

    for (int i = 0; i < 3; i++) {
        int i1 = (i + 1) % 3, i2 = (i + 2) % 3;
        for (int j = 0; j < 3; j++) {
            int j1 = (j + 1) % 3, j2 = (j + 2) % 3;
            inv[j][i] = m[i1][j1] * m[i2][j2] - m[i1][j2] * m[i2][j1];
        }
    }
    for (int j = 0; j < 3; j++)
        det += m[0][j] * inv[j][0];
    for (int i = 0; i < 3; i++)
        for (int j = 0; j < 3; j++)
            inv[i][j] /= det;
}

/* Clamp to [0, 1]; NaN goes to 0 (fmax returns the number operand). */
static double unit_clamp(double x)
{
    return fmin(fmax(x, 0.0), 1.0);
}

/* ----------------------------------------------------------- CIELAB --- */

/* CIE 15:2004, f(t) = t^(1/3) above (6/29)^3, linear below. */
#define LAB_DELTA (6.0 / 29.0)

static double lab_f(double t)
{
    if (t > LAB_DELTA * LAB_DELTA * LAB_DELTA)
        return cbrt(t);
    return t / (3.0 * LAB_DELTA * LAB_DELTA) + 4.0 / 29.0;
}

static double lab_f_inv(double f)
{
    if (f > LAB_DELTA)
        return f * f * f;
    return 3.0 * LAB_DELTA * LAB_DELTA * (f - 4.0 / 29.0);
}

/* Reference white Xn, Yn, Zn: the row sums of rgb_to_xyz (see the top). */
static void white_xyz(double w[3])
{
    static const double one[3] = {1.0, 1.0, 1.0};

    mat_apply(rgb_to_xyz, one, w);
}

void vg_cmap_srgb_to_lab(const double rgb[3], double lab[3])
{
    double lin[3], xyz[3], w[3], f[3];

    for (int k = 0; k < 3; k++)
        lin[k] = srgb_decode(rgb[k]);
    mat_apply(rgb_to_xyz, lin, xyz);
    white_xyz(w);
    for (int k = 0; k < 3; k++)
        f[k] = lab_f(xyz[k] / w[k]);
    lab[0] = 116.0 * f[1] - 16.0;
    lab[1] = 500.0 * (f[0] - f[1]);
    lab[2] = 200.0 * (f[1] - f[2]);
}

/* CIELAB to linear RGB, unclipped (components may leave [0, 1]). */
static void lab_to_linear(const double lab[3], double lin[3])
{
    double w[3], xyz[3], inv[3][3];
    double fy = (lab[0] + 16.0) / 116.0;

    white_xyz(w);
    xyz[0] = w[0] * lab_f_inv(fy + lab[1] / 500.0);
    xyz[1] = w[1] * lab_f_inv(fy);
    xyz[2] = w[2] * lab_f_inv(fy - lab[2] / 200.0);
    xyz_to_rgb(inv);
    mat_apply(inv, xyz, lin);
}

static void linear_to_srgb(const double lin[3], double rgb[3])
{
    for (int k = 0; k < 3; k++)
        rgb[k] = srgb_encode(unit_clamp(lin[k]));
}

/* Out-of-gamut colours are clipped per channel in linear light: each linear
 * RGB component is clamped to [0, 1] before encoding.  The result is always
 * a valid sRGB colour (finite, in [0, 1]); the tables never need the clip. */
void vg_cmap_lab_to_srgb(const double lab[3], double rgb[3])
{
    double lin[3];

    lab_to_linear(lab, lin);
    linear_to_srgb(lin, rgb);
}

/* -------------------------------------------------------------- Msh --- */

/* Moreland 2009, section 4: M = |Lab|, s = acos(L/M), h = atan2(b, a).
 * s is computed as atan2(C, L), C = sqrt(a^2 + b^2), the same angle for
 * M > 0 but without acos's loss of precision near s = 0; M = 0 gives s = 0. */
void vg_cmap_lab_to_msh(const double lab[3], double msh[3])
{
    double c = hypot(lab[1], lab[2]);

    msh[0] = hypot(lab[0], c);
    msh[1] = atan2(c, lab[0]);
    msh[2] = atan2(lab[2], lab[1]);
}

void vg_cmap_msh_to_lab(const double msh[3], double lab[3])
{
    lab[0] = msh[0] * cos(msh[1]);
    lab[1] = msh[0] * sin(msh[1]) * cos(msh[2]);
    lab[2] = msh[0] * sin(msh[1]) * sin(msh[2]);
}

/* Constants of Moreland's algorithm (ISVC 2009, section 5): a colour is
 * unsaturated below s = 0.05; two saturated ends more than pi/3 apart in hue
 * get a neutral midpoint of M = max(M1, M2, 88); the hue spin of an
 * unsaturated point goes up for hues above -pi/3 and down otherwise. */
#define MSH_UNSATURATED 0.05
#define MSH_HUE_APART (VG_PI / 3.0)
#define MSH_MID_MIN 88.0
#define MSH_SPIN_SPLIT (-VG_PI / 3.0)

/* Moreland's AdjustHue: the hue an unsaturated colour of magnitude m_unsat
 * should take next to the saturated colour sat, so that the path leaves the
 * neutral along a curve of steady perceived hue change. */
static double msh_adjust_hue(const double sat[3], double m_unsat)
{
    double spin;

    if (sat[0] >= m_unsat)
        return sat[2];
    spin = sat[1] * sqrt(m_unsat * m_unsat - sat[0] * sat[0]) / (sat[0] * sin(sat[1]));
    return sat[2] > MSH_SPIN_SPLIT ? sat[2] + spin : sat[2] - spin;
}

/* Moreland's InterpolateColor: the colour at t in [0, 1] between the Msh
 * colours lo and hi, through a neutral midpoint where the ends are distinct
 * saturated hues, hue-adjusted next to any unsaturated end. */
static void msh_interpolate(const double lo[3], const double hi[3], double t, double out[3])
{
    double a[3] = {lo[0], lo[1], lo[2]}, b[3] = {hi[0], hi[1], hi[2]};

    if (a[1] > MSH_UNSATURATED && b[1] > MSH_UNSATURATED && fabs(a[2] - b[2]) > MSH_HUE_APART) {
        double mid = fmax(fmax(a[0], b[0]), MSH_MID_MIN);
        double *neutral = t < 0.5 ? b : a;

        neutral[0] = mid;
        neutral[1] = 0.0;
        neutral[2] = 0.0;
        t = t < 0.5 ? 2.0 * t : 2.0 * t - 1.0;
    }
    if (a[1] < MSH_UNSATURATED && b[1] > MSH_UNSATURATED)
        a[2] = msh_adjust_hue(b, a[0]);
    else if (b[1] < MSH_UNSATURATED && a[1] > MSH_UNSATURATED)
        b[2] = msh_adjust_hue(a, b[0]);
    for (int k = 0; k < 3; k++)
        out[k] = (1.0 - t) * a[k] + t * b[k];
}

/* ------------------------------------------------------------- maps --- */

#define DEG (VG_PI / 180.0)

/* Diverging end colours, CIELCh (design values chosen for this project).
 * Both ends share L* = 40 and C* = 60, so they share M and s and the two
 * halves have equal L* at equal distance from the centre.  Hues: 290 deg
 * (blue, the elastic side) and 50 deg (orange-red, the assisted side), far
 * apart on the blue-yellow axis that protan and deutan vision keeps.  With
 * M = 72.1 < 88 the centre is the neutral L* = 88.  Chosen with the gamut:
 * the least linear-RGB margin over the table is 0.005 (the orange end's
 * blue channel). */
#define DIV_L 40.0
#define DIV_C 60.0
#define DIV_H_LOW (290.0 * DEG)
#define DIV_H_HIGH (50.0 * DEG)

/* Sequential ramp in CIELCh (design values chosen for this project):
 * L* = 18 -> 95 linear in t, hue 15 deg (deep red) -> 100 deg (pale
 * yellow) linear in t, chroma 34 at the ends rising to 60 mid-way as
 * 34 + 26 sin(pi t), inside the gamut at every L* and hue it passes (least
 * linear-RGB margin 0.005). */
#define SEQ_L_DARK 18.0
#define SEQ_L_LIGHT 95.0
#define SEQ_H_DARK (15.0 * DEG)
#define SEQ_H_LIGHT (100.0 * DEG)
#define SEQ_C_END 34.0
#define SEQ_C_PEAK 60.0

static void lch_to_lab(double l, double c, double h, double lab[3])
{
    lab[0] = l;
    lab[1] = c * cos(h);
    lab[2] = c * sin(h);
}

static double entry_t(size_t i)
{
    return (double)i / (double)(VG_CMAP_N - 1);
}

static void diverging_lab(double t, double lab[3])
{
    double end[3], lo[3], hi[3], msh[3];

    lch_to_lab(DIV_L, DIV_C, DIV_H_LOW, end);
    vg_cmap_lab_to_msh(end, lo);
    lch_to_lab(DIV_L, DIV_C, DIV_H_HIGH, end);
    vg_cmap_lab_to_msh(end, hi);
    msh_interpolate(lo, hi, t, msh);
    vg_cmap_msh_to_lab(msh, lab);
}

static void sequential_lab(double t, double lab[3])
{
    double l = SEQ_L_DARK + (SEQ_L_LIGHT - SEQ_L_DARK) * t;
    double h = SEQ_H_DARK + (SEQ_H_LIGHT - SEQ_H_DARK) * t;
    double c = SEQ_C_END + (SEQ_C_PEAK - SEQ_C_END) * sin(VG_PI * t);

    lch_to_lab(l, c, h, lab);
}

/* Store entry i from its CIELAB colour; VG_ENUMERIC if it is outside the
 * sRGB gamut (a design error: the maps are meant to be in gamut unclipped). */
static vg_status store_entry(vg_cmap *c, size_t i, const double lab[3], vg_error *err)
{
    double lin[3];

    lab_to_linear(lab, lin);
    for (int k = 0; k < 3; k++)
        if (!(lin[k] >= 0.0 && lin[k] <= 1.0))
            return vg_error_set(err, VG_ENUMERIC,
                                "colour map entry %zu is outside the sRGB gamut "
                                "(linear component %d = %g, allowed 0 to 1)", i, k, lin[k]);
    linear_to_srgb(lin, c->rgb[i]);
    return VG_OK;
}

/* Errors: VG_EUSAGE for a NULL map or an unknown kind; VG_ENUMERIC if an
 * entry falls outside the gamut (cannot happen with the design above).  On
 * an error *c is not a usable map. */
vg_status vg_cmap_build(vg_cmap *c, vg_cmap_kind k, vg_error *err)
{
    if (!c)
        return vg_error_set(err, VG_EUSAGE, "colour map build called without a map record");
    if (k != VG_CMAP_DIVERGING && k != VG_CMAP_SEQUENTIAL)
        return vg_error_set(err, VG_EUSAGE, "colour map kind %d is unknown (allowed: %d diverging, "
                            "%d sequential)", (int)k, VG_CMAP_DIVERGING, VG_CMAP_SEQUENTIAL);
    c->kind = k;
    for (size_t i = 0; i < VG_CMAP_N; i++) {
        double lab[3];
        vg_status st;

        if (k == VG_CMAP_DIVERGING)
            diverging_lab(entry_t(i), lab);
        else
            sequential_lab(entry_t(i), lab);
        st = store_entry(c, i, lab, err);
        if (st != VG_OK)
            return st;
    }
    return VG_OK;
}

/* Linear interpolation between the two entries around t; t is clamped to
 * [0, 1] and NaN is taken as 0.  (1 - f) a + f b returns the entries exactly
 * at f = 0 and f = 1. */
void vg_cmap_eval(const vg_cmap *c, double t, double rgb[3])
{
    double x, f;
    size_t i;

    t = unit_clamp(t);
    x = t * (double)(VG_CMAP_N - 1);
    i = (size_t)x;
    if (i > VG_CMAP_N - 2)
        i = VG_CMAP_N - 2;
    f = x - (double)i;
    for (int k = 0; k < 3; k++)
        rgb[k] = (1.0 - f) * c->rgb[i][k] + f * c->rgb[i + 1][k];
}

void vg_cmap_eval8(const vg_cmap *c, double t, unsigned char rgb[3])
{
    double v[3];

    vg_cmap_eval(c, t, v);
    for (int k = 0; k < 3; k++)
        rgb[k] = (unsigned char)floor(255.0 * unit_clamp(v[k]) + 0.5);
}

/* -------------------------------------------------------------- CVD --- */

/* Machado, Oliveira & Fernandes, IEEE TVCG 15(6), 1291-1298, 2009, table of
 * simulation matrices at severity 1.0 (protanomaly, deuteranomaly,
 * tritanomaly), applied to linear RGB.  Written from memory; cross-checked
 * by the tests: each row sums to 1 within 2e-6 (white stays white, up to the
 * six-decimal rounding of the published entries), and the protan and deutan
 * matrices are singular within 1e-5 (severity 1 collapses colour to two
 * dimensions, as for a dichromat; also from memory). */
static const double cvd_matrix[3][3][3] = {
    [VG_CVD_PROTAN] = {{0.152286, 1.052583, -0.204868},
                       {0.114503, 0.786281, 0.099216},
                       {-0.003882, -0.048116, 1.051998}},
    [VG_CVD_DEUTAN] = {{0.367322, 0.860646, -0.227968},
                       {0.280085, 0.672501, 0.047413},
                       {-0.011820, 0.042940, 0.968881}},
    [VG_CVD_TRITAN] = {{1.255528, -0.076749, -0.178779},
                       {-0.078411, 0.930809, 0.147602},
                       {0.004733, 0.691367, 0.303900}},
};

/* The simulated linear colour is clipped per channel to [0, 1] before
 * encoding (as in vg_cmap_lab_to_srgb).  An unknown kind returns the input
 * unchanged. */
void vg_cmap_simulate_cvd(vg_cvd kind, const double rgb[3], double out[3])
{
    double lin[3], sim[3];

    if ((int)kind < 0 || kind > VG_CVD_TRITAN) {
        for (int k = 0; k < 3; k++)
            out[k] = rgb[k];
        return;
    }
    for (int k = 0; k < 3; k++)
        lin[k] = srgb_decode(rgb[k]);
    mat_apply(cvd_matrix[kind], lin, sim);
    linear_to_srgb(sim, out);
}

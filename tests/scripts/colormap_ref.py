#!/usr/bin/python3
"""Colour map tables against an independent numpy colour-science reference.

Reads both tables from `$VG_BUILD/tests/test_colormap --dump` (VG_BUILD:
build directory, default "build") and judges them with sRGB -> XYZ ->
CIELAB written here in numpy from the published formulas:

- sRGB: IEC 61966-2-1:1999, the piecewise decoding (knee 0.04045, slope
  12.92, exponent 2.4, offset 0.055) and its linear-RGB-to-XYZ matrix for
  D65; the white is the XYZ of R = G = B = 1 (the matrix row sums), as in
  src/colormap.c, so that sRGB white is a* = b* = 0;
- CIELAB: CIE 15:2004, f(t) = t^(1/3) above (6/29)^3, t/(3 (6/29)^2) + 4/29
  below;
- Msh and the diverging interpolation: Moreland, "Diverging Color Maps for
  Scientific Visualization", ISVC 2009 (sections 4 and 5).

Checks: every component strictly inside (0, 1) (in gamut, nothing clipped);
diverging L* strictly rising to the centre and falling after, symmetric, the
two central entries the lightest, and the whole table equal to Moreland's
interpolation between its own two end colours; sequential L* strictly rising
from 15-25 to 92-97 and linear in t, hue linear in t, chroma of the
documented form c0 + c1 sin(pi t); sequential luminance (grayscale) strictly
rising.  Prints one "PASS: what" or "FAIL: what: why" line per check.
"""
import math
import os
import subprocess
import sys

import numpy as np

ROOT = os.path.dirname(os.path.dirname(os.path.dirname(os.path.abspath(__file__))))
BUILD = os.environ.get("VG_BUILD", "build")
PROGRAM = os.path.join(BUILD if os.path.isabs(BUILD) else os.path.join(ROOT, BUILD),
                       "tests", "test_colormap")
N = 256

# IEC 61966-2-1:1999, linear RGB -> XYZ (D65).
RGB_TO_XYZ = np.array([[0.4124, 0.3576, 0.1805],
                       [0.2126, 0.7152, 0.0722],
                       [0.0193, 0.1192, 0.9505]])
WHITE = RGB_TO_XYZ @ np.ones(3)
DELTA = 6.0 / 29.0

failures = 0


def report(ok, what, why=""):
    global failures
    if ok:
        print(f"PASS: {what}")
    else:
        failures += 1
        print(f"FAIL: {what}: {why}")


def decode(c):
    return np.where(c <= 0.04045, c / 12.92, ((c + 0.055) / 1.055) ** 2.4)


def encode(lin):
    lin = np.asarray(lin, dtype=float)
    power = 1.055 * np.maximum(lin, 0.0) ** (1.0 / 2.4) - 0.055
    return np.where(lin <= 0.04045 / 12.92, 12.92 * lin, power)


def srgb_to_lab(rgb):
    """rgb: (n, 3) gamma-encoded sRGB -> (n, 3) CIELAB."""
    t = (decode(rgb) @ RGB_TO_XYZ.T) / WHITE
    f = np.where(t > DELTA ** 3, np.cbrt(t), t / (3 * DELTA ** 2) + 4.0 / 29.0)
    return np.stack([116 * f[:, 1] - 16, 500 * (f[:, 0] - f[:, 1]),
                     200 * (f[:, 1] - f[:, 2])], axis=1)


def lab_to_srgb(lab):
    """Inverse of srgb_to_lab, unclipped (the caller checks the gamut)."""
    fy = (lab[:, 0] + 16) / 116
    f = np.stack([fy + lab[:, 1] / 500, fy, fy - lab[:, 2] / 200], axis=1)
    t = np.where(f > DELTA, f ** 3, 3 * DELTA ** 2 * (f - 4.0 / 29.0))
    return encode((t * WHITE) @ np.linalg.inv(RGB_TO_XYZ).T)


def to_msh(lab):
    m = np.linalg.norm(lab)
    return np.array([m, math.acos(lab[0] / m), math.atan2(lab[2], lab[1])])


def from_msh(msh):
    m, s, h = msh
    return np.array([m * math.cos(s), m * math.sin(s) * math.cos(h), m * math.sin(s) * math.sin(h)])


def adjust_hue(sat, m_unsat):
    """Moreland's AdjustHue."""
    m, s, h = sat
    if m >= m_unsat:
        return h
    spin = s * math.sqrt(m_unsat ** 2 - m ** 2) / (m * math.sin(s))
    return h + spin if h > -math.pi / 3 else h - spin


def moreland(c1, c2, t):
    """Moreland's InterpolateColor between Msh colours c1 and c2."""
    c1, c2 = c1.copy(), c2.copy()
    if c1[1] > 0.05 and c2[1] > 0.05 and abs(c1[2] - c2[2]) > math.pi / 3:
        mid = max(c1[0], c2[0], 88.0)
        if t < 0.5:
            c2, t = np.array([mid, 0.0, 0.0]), 2 * t
        else:
            c1, t = np.array([mid, 0.0, 0.0]), 2 * t - 1
    if c1[1] < 0.05 and c2[1] > 0.05:
        c1[2] = adjust_hue(c2, c1[0])
    elif c2[1] < 0.05 and c1[1] > 0.05:
        c2[2] = adjust_hue(c1, c2[0])
    return (1 - t) * c1 + t * c2


def read_tables():
    out = subprocess.run([PROGRAM, "--dump"], capture_output=True, text=True, timeout=60)
    if out.returncode != 0:
        raise RuntimeError(f"{PROGRAM} --dump exited {out.returncode}: {out.stderr.strip()}")
    rows = {"diverging": [], "sequential": []}
    for line in out.stdout.splitlines():
        kind, index, r, g, b = line.split()
        if int(index) != len(rows[kind]):
            raise RuntimeError(f"entry {index} of {kind} out of order")
        rows[kind].append([float(r), float(g), float(b)])
    return {k: np.array(v) for k, v in rows.items()}


def strictly(v, sign):
    d = np.diff(v) * sign
    return bool(np.all(d > 0)), f"least step {d.min():.3g} at entry {int(np.argmin(d))}"


def check_common(name, rgb):
    report(rgb.shape == (N, 3) and np.all(np.isfinite(rgb)), f"{name}: {N} finite entries",
           f"shape {rgb.shape}")
    lo, hi = rgb.min(), rgb.max()
    report(lo > 0.0 and hi < 1.0, f"{name}: every component inside (0, 1), nothing clipped",
           f"range {lo:.17g} .. {hi:.17g}")


def check_diverging(rgb):
    lab = srgb_to_lab(rgb)
    L = lab[:, 0]
    up, why_up = strictly(L[:N // 2], +1)
    down, why_down = strictly(L[N // 2:], -1)
    report(up and down, "diverging: L* rises strictly to the centre and falls after",
           why_up + "; " + why_down)
    sym = np.abs(L - L[::-1]).max()
    # Ends share L* and C* by design: equal to rounding; 0.05 catches a
    # mirror off by one entry (0.38 L* per step).
    report(sym < 0.05, "diverging: L* symmetric about the centre", f"largest difference {sym:.3g}")
    report(int(np.argmax(L)) in (N // 2 - 1, N // 2), "diverging: central entries lightest",
           f"lightest entry {int(np.argmax(L))}")
    lo, hi = to_msh(lab[0]), to_msh(lab[-1])
    want = np.array([from_msh(moreland(lo, hi, i / (N - 1))) for i in range(N)])
    err = np.abs(lab_to_srgb(want) - rgb).max()
    # The dump is %.17g; the two implementations differ by rounding only.
    report(err < 1e-9, "diverging: table is Moreland's interpolation between its end colours",
           f"largest sRGB difference {err:.3g}")


def check_sequential(rgb):
    lab = srgb_to_lab(rgb)
    L = lab[:, 0]
    t = np.arange(N) / (N - 1)
    ok, why = strictly(L, +1)
    report(ok, "sequential: L* rises strictly", why)
    report(15 < L[0] < 25 and 92 < L[-1] < 97, "sequential: dark end L* 15-25, light end 92-97",
           f"ends {L[0]:.3f}, {L[-1]:.3f}")
    line = L[0] + (L[-1] - L[0]) * t
    dev = np.abs(L - line).max()
    report(dev < 1e-9, "sequential: L* linear in t", f"largest deviation {dev:.3g}")
    h = np.unwrap(np.arctan2(lab[:, 2], lab[:, 1]))
    hdev = np.abs(h - (h[0] + (h[-1] - h[0]) * t)).max()
    report(hdev < 1e-9 and h[-1] > h[0], "sequential: hue turns linearly in t",
           f"largest deviation {hdev:.3g} rad, turn {h[-1] - h[0]:.3f} rad")
    C = np.hypot(lab[:, 1], lab[:, 2])
    basis = np.stack([np.ones(N), np.sin(np.pi * t)], axis=1)
    coef, *_ = np.linalg.lstsq(basis, C, rcond=None)
    cdev = np.abs(basis @ coef - C).max()
    report(cdev < 1e-9 and coef[1] > 0, "sequential: chroma c0 + c1 sin(pi t), c1 > 0",
           f"largest residual {cdev:.3g}, c = {coef}")
    Y = decode(rgb) @ RGB_TO_XYZ[1]
    ok, why = strictly(Y, +1)
    report(ok, "sequential: luminance (grayscale) rises strictly", why)


def check_reference():
    """The reference itself against known values: white 100, 0, 0 (to 1e-9
    with the matrix white), mid grey L* 53.39 and sRGB red 53.24, 80.09, 67.20
    (common practice, from memory; 0.01 and 0.05)."""
    lab = srgb_to_lab(np.array([[1.0, 1, 1], [0.5, 0.5, 0.5], [1, 0, 0]]))
    ok = (np.abs(lab[0] - [100, 0, 0]).max() < 1e-9 and abs(lab[1, 0] - 53.39) < 0.01
          and np.abs(lab[2] - [53.24, 80.09, 67.20]).max() < 0.05)
    report(ok, "reference: known CIELAB values of white, mid grey and red", f"got {lab.tolist()}")


def main():
    check_reference()
    try:
        tables = read_tables()
    except (OSError, RuntimeError, ValueError, KeyError, subprocess.SubprocessError) as e:
        report(False, "colour map dump", str(e))
        return 1
    for name, rgb in tables.items():
        check_common(name, rgb)
    check_diverging(tables["diverging"])
    check_sequential(tables["sequential"])
    return 1 if failures else 0


if __name__ == "__main__":
    sys.exit(main())

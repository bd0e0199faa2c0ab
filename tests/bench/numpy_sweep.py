#!/usr/bin/python3
"""Reference sweep written by hand in NumPy, for the benchmark (make bench).

The same 4-D grid as tests/bench/bench_sweep.c (gap x reorganization x
huang_rhys x temperature, one 1600 cm-1 mode, coupling 1 meV, thermal
weights), computed the way a researcher would write it: vectorised over
gap x reorganization x channel with broadcasting, one (huang_rhys,
temperature) slab at a time, a fixed generous channel window n = -10 .. 30,
Bessel weights from scipy.special.ive and the channel sums by
scipy.special.logsumexp.  All seven metrics are formed, as the tool does.

It times a sub-grid of 10^6 points (all 500 x 200 gap x reorganization
points for every tenth of the 100 (huang_rhys, temperature) pairs), best of
3 passes, and reports points per second; the cost per point does not depend
on which slabs are taken, because the window is fixed.

It then checks itself against the tool: a fixed-seed sample of grid points
is sent to build/tests/rate_dump (VG_BUILD selects the build directory) and
log10_k_total is compared within 1e-6 relative wherever the NumPy value is
finite (it would be -inf where ive underflows; nothing does on this grid).

Formulas: docs/theory.md section 2 (Marcus & Sutin 1985; Jortner 1976).
Constants: exact 2019 SI values (h, e, k, c).
Output: "key value" lines read by tests/bench/bench.sh, then one line
"agreement: ...".  Exit status 1 if the agreement check fails.
"""
import math
import os
import subprocess
import sys
import time

import numpy as np
from scipy import special

SI_H, SI_E, SI_K, SI_C = 6.62607015e-34, 1.602176634e-19, 1.380649e-23, 299792458.0
KB_MEV = SI_K / SI_E * 1e3                  # k_B in meV/K
HBAR_EVS = SI_H / (2 * math.pi * SI_E)      # hbar in eV s
CM1_MEV = SI_H * SI_C / SI_E * 100 * 1e3    # 1 cm^-1 in meV

GAP = np.linspace(-200.0, 800.0, 500)       # meV
REORG = np.geomspace(10.0, 500.0, 200)      # meV
HUANG_RHYS = np.geomspace(0.01, 1.0, 20)
TEMPERATURE = np.linspace(250.0, 350.0, 5)  # K
MODE = 1600.0 * CM1_MEV                     # meV
COUPLING = 1.0                              # meV
N = np.arange(-10, 31)                      # the fixed channel window
TOL = 1e-6
SAMPLE = 400
REPEAT = 3


def metrics(gap, lam, S, T):
    """The seven metrics, shape broadcast(gap, lam, S, T) + (7,)."""
    kT = KB_MEV * np.asarray(T, dtype=float)[..., None]
    S = np.asarray(S, dtype=float)[..., None]
    beta = MODE / kT
    x = S / np.sinh(beta / 2)
    # ln W_n = -S coth(b/2) + n b/2 + ln I_|n|(x), with ln I = ln ive + x
    ln_w = -S / np.tanh(beta / 2) + N * beta / 2 + np.log(special.ive(np.abs(N), x)) + x
    lam = np.asarray(lam, dtype=float)[..., None]
    d = np.asarray(gap, dtype=float)[..., None] - lam
    inv = 1.0 / (4.0 * lam * kT)
    a = ln_w - (d - N * MODE) ** 2 * inv
    ln_p = (math.log(2 * math.pi / HBAR_EVS) + 2 * math.log(COUPLING / 1e3)
            - 0.5 * np.log(4 * math.pi * (lam / 1e3) * (kT / 1e3)))[..., 0]
    ln_el = a[..., N == 0][..., 0]
    ln_as = special.logsumexp(a[..., N != 0], axis=-1)
    ln_tot = np.logaddexp(ln_el, ln_as)
    ln_bare = (-d * d * inv)[..., 0]
    out = np.empty(ln_el.shape + (7,))
    for i, v in enumerate((ln_el + ln_p, ln_as + ln_p, ln_tot + ln_p, ln_bare + ln_p)):
        out[..., i] = v / math.log(10)
    out[..., 4] = (ln_as - ln_el) / math.log(10)
    out[..., 5] = special.expit(ln_as - ln_el)
    out[..., 6] = (ln_tot - ln_bare) / math.log(10)
    return out


def timed_subgrid():
    """Best of REPEAT passes over the sub-grid (as the tool's benchmark)."""
    pairs = [(s, t) for s in HUANG_RHYS for t in TEMPERATURE][::10]
    best = math.inf
    for _ in range(REPEAT):
        checksum = 0.0
        t0 = time.perf_counter()
        for S, T in pairs:
            checksum += float(np.sum(metrics(GAP[None, :], REORG[:, None], S, T)[..., 2]))
        best = min(best, time.perf_counter() - t0)
    return len(pairs) * GAP.size * REORG.size, best, checksum


def tool_values(points):
    exe = os.path.join(os.environ.get("VG_BUILD", "build"), "tests", "rate_dump")
    lines = "".join("thermal %r %r %r %r %r %r\n" % (g, l, COUPLING, s, MODE, t)
                    for g, l, s, t in points)
    res = subprocess.run([exe, "1e-12"], input=lines, capture_output=True, text=True,
                         check=True)
    return [float(row.split()[2]) for row in res.stdout.splitlines()]


def agreement():
    rng = np.random.default_rng(20240611)
    g = GAP[rng.integers(GAP.size, size=SAMPLE)]
    lam = REORG[rng.integers(REORG.size, size=SAMPLE)]
    S = HUANG_RHYS[rng.integers(HUANG_RHYS.size, size=SAMPLE)]
    T = TEMPERATURE[rng.integers(TEMPERATURE.size, size=SAMPLE)]
    got = metrics(g, lam, S, T)[:, 2]
    want = np.array(tool_values(zip(g, lam, S, T)))
    ok = np.isfinite(got)
    worst = float(np.max(np.abs(got[ok] - want[ok]) / np.maximum(1.0, np.abs(want[ok]))))
    return int(np.count_nonzero(ok)), worst


def main():
    np.seterr(all="ignore")
    points, dt, checksum = timed_subgrid()
    print("numpy_points %d" % points)
    print("numpy_seconds %.4f" % dt)
    print("numpy_pts_per_s %.6g" % (points / dt))
    print("numpy_checksum %.17g" % checksum)
    compared, worst = agreement()
    ok = compared > 0 and worst <= TOL
    print("numpy_agree_points %d" % compared)
    print("numpy_agree_worst %.3g" % worst)
    print("agreement: log10_k_total of %d sampled points vs rate_dump: worst relative "
          "difference %.3g (limit %g): %s" % (compared, worst, TOL, "ok" if ok else "FAILED"))
    return 0 if ok else 1


if __name__ == "__main__":
    sys.exit(main())

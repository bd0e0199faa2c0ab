#!/usr/bin/python3
"""Many-mode engines against independent references.

Runs build/tests/multimode_dump (VG_BUILD selects the build directory) and
checks
  - the Voigt profile (vg_multimode_ln_voigt) against mpmath at 50 digits:
    Re w(z) / (sigma sqrt(2 pi)), w(z) = exp(-z^2) erfc(-iz), z = (x + i gamma)
    / (sigma sqrt 2) (the Faddeeva function; Abramowitz & Stegun 7.1.3, 7.4.13);
  - the sum engine for two and three modes against a brute-force sum over
    every multi-index (n_1, .., n_M) in mpmath at 30 digits, the thermal
    weights from mpmath.besseli (Jortner 1976, the form in docs/theory.md),
    the frozen ones Poisson, thermal and frozen, gaps from the deep uphill
    tail to the deep inverted region, one case at 77 K where the channels are
    ten widths apart; total, elastic and assisted parts; the engine's own
    error bound must hold and be below the tolerance plus its rounding
    estimate;
  - the error bound at a coarse tolerance: it holds, and it is not loose by
    more than a factor 1e4 somewhere on a gap scan (the lattice part of the
    bound is the exact Poisson-summation amplitude, reached at some phases);
  - damping: the sum engine and the FFT engine against the time integral
    F(eps) = (1/pi) Re int_0^inf exp(i eps s - g(s)) ds with the damped g of
    docs/theory.md, by scipy.integrate.quad (QUADPACK), for a short lifetime.
Prints one "PASS: what" or "FAIL: what: why" line per check.
"""
import math
import os
import warnings
import random
import subprocess
import sys

import mpmath as mp
import numpy as np
from scipy import integrate

mp.mp.dps = 30

# Exact SI (2019): k and e; hbar = h / 2 pi (CODATA 2018).
KB_MEV = mp.mpf("1.380649e-23") / mp.mpf("1.602176634e-19") * 1000
HBAR_MEV_PS = mp.mpf("6.62607015e-34") / (2 * mp.pi * mp.mpf("1.602176634e-19")) * 1e15

BIN = os.path.join(os.environ.get("VG_BUILD", "build"), "tests", "multimode_dump")
outcomes = []  # (passed, what, why) per check, printed as they come


def report(ok, what, why=""):
    outcomes.append((ok, what, why))
    print(("PASS: %s" % what) if ok else ("FAIL: %s: %s" % (what, why)), flush=True)


def run_dump(lines):
    res = subprocess.run([BIN], input="".join(l + "\n" for l in lines),
                         capture_output=True, text=True, check=False)
    if res.returncode != 0:
        print("FAIL: multimode_dump ran: exit %d, %s" % (res.returncode, res.stderr.strip()))
        sys.exit(1)
    return res.stdout.splitlines()


def modes_line(stats, modes):
    return "modes %s %d %s" % (stats, len(modes), " ".join(
        "%.17g %.17g %s" % (w, s, "inf" if t is None else "%.17g" % t) for w, s, t in modes))


def sum_rows(stats, modes, lam, T, tol, gaps, V=1.0):
    out = run_dump([modes_line(stats, modes),
                    "sum %.17g %.17g %.17g %.17g %d %s" % (lam, T, V, tol, len(gaps),
                                                           " ".join("%.17g" % g for g in gaps))])
    if len(out) != len(gaps) or out[0].startswith("error"):
        return None, out[0] if out else "no output"
    return [[float(v) for v in l.split()] for l in out], ""


# ------------------------------------------------------------------ Voigt ---

def check_voigt():
    random.seed(20240611)
    cases = []
    for _ in range(400):
        sig = 10 ** random.uniform(-1, 3)
        x = sig * 10 ** random.uniform(-3, 3.3) * random.choice([-1, 1])
        gam = sig * 10 ** random.uniform(-15, 1.8)
        cases.append((x, sig, gam))
    cases += [(0.0, 38.5, 0.329), (1234.5, 38.5, 0.329), (-2.385, 1.0, 0.0)]
    out = run_dump(["voigt %.17g %.17g %.17g" % c for c in cases])
    mp.mp.dps = 50  # Re w is ~1e-16 of |w| in the Lorentzian tails
    worst, where = 0.0, None
    for (x, sig, gam), o in zip(cases, out):
        z = mp.mpc(x, gam) / (sig * mp.sqrt(2))
        if gam > 0:
            ref = mp.log(mp.re(mp.exp(-z * z) * mp.erfc(-1j * z)) / (sig * mp.sqrt(2 * mp.pi)))
        else:
            ref = -mp.mpf(x) ** 2 / (2 * sig ** 2) - mp.log(sig * mp.sqrt(2 * mp.pi))
        e = abs(float(o) - float(ref))
        if e > worst:
            worst, where = e, (x, sig, gam)
    mp.mp.dps = 30
    # 1e-13: the stated accuracy of the Voigt (vg_multimode.h)
    report(worst <= 1e-13, "Voigt profile, %d cases, against mpmath erfc at 50 digits (worst "
           "|d ln V| %.1e)" % (len(cases), worst), "worst at x, sigma, gamma = %r" % (where,))


# ------------------------------------------------------------ brute force ---

_weights = {}


def ln_weights(stats, w, S, T, nlo, nhi):
    """ln W_n, n in [nlo, nhi], as mpf, None where W_n = 0 (Jortner 1976;
    Poisson when frozen).  Cached per mode."""
    key = (stats, w, S, T, nlo, nhi)
    if key not in _weights:
        S_, beta = mp.mpf(S), mp.mpf(w) / (KB_MEV * T)
        out = []
        for n in range(nlo, nhi + 1):
            if stats == "frozen":
                out.append(-S_ + n * mp.log(S_) - mp.loggamma(n + 1) if n >= 0 else None)
            else:
                x = S_ / mp.sinh(beta / 2)
                out.append(-S_ * mp.coth(beta / 2) + n * beta / 2
                           + mp.log(mp.besseli(abs(n), x)))
        _weights[key] = out
    return _weights[key]


def brute(stats, modes, lam, T, gap, reach=(-40, 90), skip=100.0):
    """ln F_total, ln F_elastic, ln F_assisted by the direct sum over every
    multi-index n_j in [reach] (n_j >= 0 when frozen).  The exponents are
    formed in double precision (numpy) only to leave out terms more than
    `skip` nats below the largest (fewer than 1e7 terms: they change the sum
    by < 1e-36); the rest is summed in mpmath.  None if a window edge term is
    within `skip` of the largest (the window would be too small)."""
    lo = reach[0] if stats == "thermal" else 0
    ns = np.arange(lo, reach[1] + 1)
    lws = [ln_weights(stats, w, S, T, lo, reach[1]) for w, S, _ in modes]
    flw = [np.array([-np.inf if v is None else float(v) for v in l]) for l in lws]
    s2 = 2 * lam * float(KB_MEV) * T
    M = len(modes)
    grids = np.meshgrid(*([ns] * M), indexing="ij")
    e = sum(g * w for g, (w, _, _) in zip(grids, modes))
    expo = sum(np.meshgrid(*flw, indexing="ij")) - (gap - lam - e) ** 2 / (2 * s2)
    top = expo.max()
    edge = np.zeros(expo.shape, dtype=bool)
    for g in grids:
        edge |= (g == ns[0]) & (stats == "thermal")
        edge |= g == ns[-1]
    if expo[edge].max() > top - skip:
        return None
    s2m = 2 * mp.mpf(lam) * KB_MEV * mp.mpf(T)
    norm = -mp.log(2 * mp.pi * s2m) / 2
    el, asd = mp.mpf(0), mp.mpf(0)  # elastic and assisted summed apart: no cancellation
    for idx in zip(*np.nonzero(expo >= top - skip)):
        n = [int(ns[i]) for i in idx]
        x = mp.mpf(gap) - mp.mpf(lam) - sum(k * mp.mpf(w) for k, (w, _, _) in zip(n, modes))
        v = mp.exp(sum(lws[j][idx[j]] for j in range(M)) - x * x / (2 * s2m) + norm)
        if all(k == 0 for k in n):
            el += v
        else:
            asd += v
    return (mp.log(el + asd), mp.log(el) if el > 0 else None,
            mp.log(asd) if asd > 0 else None)


def check_brute(name, stats, modes, lam, T, gaps, tol=1e-11, reach=(-40, 90)):
    rows, why = sum_rows(stats, modes, lam, T, tol, gaps)
    if rows is None:
        report(False, name, why)
        return
    worst, bad = 0.0, []
    for g, r in zip(gaps, rows):
        ref = brute(stats, modes, lam, T, g, reach)
        if ref is None:
            bad.append("gap %g: brute-force window too small" % g)
            continue
        for k, lr in ((1, ref[0]), (2, ref[1]), (3, ref[2])):
            if lr is None:
                continue
            rel = abs(float(mp.expm1(mp.mpf(r[k]) - lr)))
            bound = r[k + 3]
            worst = max(worst, rel)
            # the engine's own bound must hold; and it must meet the
            # tolerance up to its rounding estimate (~1e-12 (1 + |ln F|))
            if rel > bound or bound > tol + 1e-11 * (1 + abs(r[k])):
                bad.append("gap %g part %d: error %.2e, bound %.2e" % (g, k, rel, bound))
    report(not bad, "%s: %d gaps (ln F_total %.4g .. %.4g) against the mpmath multi-index sum, "
           "worst relative error %.1e" % (name, len(gaps), min(r[1] for r in rows),
                                          max(r[1] for r in rows), worst), "; ".join(bad[:4]))


# ------------------------------------------------------------ error bound ---

def check_bound_tightness():
    """At tol 1e-4 the lattice is coarse (exponent A = ln(4/(tol/16)) ~ 13):
    the error must stay within the reported bound everywhere, and reach at
    least 1e-4 of it somewhere (the Poisson amplitude cos(2 pi m c / delta)
    takes every phase as the gap moves)."""
    modes = [(61.7, 0.385, None), (185.5, 0.2385, None)]
    lam, T = 38.5, 298.15
    gaps = [-300.0 + 13.7 * i for i in range(60)]
    rows, why = sum_rows("thermal", modes, lam, T, 1e-4, gaps)
    if rows is None:
        report(False, "error bound at tolerance 1e-4", why)
        return
    ratios, bad = [], []
    for g, r in zip(gaps, rows):
        ref = brute("thermal", modes, lam, T, g)
        rel = abs(float(mp.expm1(mp.mpf(r[1]) - ref[0])))
        ratios.append(rel / r[4])
        if rel > r[4] or r[4] > 1e-4:
            bad.append("gap %g: error %.2e, bound %.2e" % (g, rel, r[4]))
    report(not bad and max(ratios) > 1e-4,
           "error bound at tolerance 1e-4 holds on %d gaps and is reached to within "
           "a factor %.0f" % (len(gaps), 1 / max(ratios)), "; ".join(bad[:4]) or
           "bound loose by more than 1e4 everywhere")


# ---------------------------------------------------------------- damping ---

def f_quad(stats, modes, lam, T, eps):
    """(1/pi) Re int_0^inf exp(i eps s - g(s)) ds, s = t / hbar in meV^-1,
    g(s) = i lam s + lam kT s^2 + sum_j S_j [c_j (1 - D_j cos w_j s) + i D_j sin w_j s],
    D_j = exp(-s / 2 T1_j) (physics reference, "Time domain")."""
    kT = float(KB_MEV) * T
    par = []
    for w, S, t1 in modes:
        c = 1.0 if stats == "frozen" else 1.0 / math.tanh(w / (2 * kT))
        gam = 0.0 if t1 is None else float(HBAR_MEV_PS) / (2 * t1)
        par.append((w, S, c, gam))

    def integrand(s):
        re = lam * kT * s * s
        im = lam * s
        for w, S, c, gam in par:
            D = math.exp(-gam * s)
            re += S * c * (1 - D * math.cos(w * s))
            im += S * D * math.sin(w * s)
        return math.exp(-re) * math.cos(eps * s - im)

    smax = math.sqrt(2 * 50.0 / (2 * lam * kT))  # envelope e^-50 there
    with warnings.catch_warnings():
        # where F is far below int |f| quad cannot reach epsrel and says so;
        # its own error estimate is returned and checked by the caller
        warnings.simplefilter("ignore", integrate.IntegrationWarning)
        v, e = integrate.quad(integrand, 0.0, smax, limit=4000, epsabs=0.0, epsrel=1e-12)
    return v / math.pi, e / math.pi


def check_damped(stats, modes, lam, T, what):
    gaps = [-250.0 + 37.5 * i for i in range(24)]
    rows, why = sum_rows(stats, modes, lam, T, 1e-11, gaps)
    fft = run_dump([modes_line(stats, modes),
                    "fft %.17g %.17g %.17g %.17g %d" % (lam, T, gaps[0], 37.5, len(gaps))])
    if rows is None or fft[0].startswith("error"):
        report(False, "damped mode against scipy quad", why or fft[0])
        return
    ref = [f_quad(stats, modes, lam, T, g) for g in gaps]
    fmax = max(q for q, _ in ref)
    ws, wf, bad = 0.0, 0.0, []
    for g, r, fl, (q, qe) in zip(gaps, rows, fft, ref):
        if q < 1e-6 * fmax:  # quad's absolute error ~1e-16 int |f|: relative 1e-10 here
            continue
        if qe > 1e-10 * q:  # ten times below the tolerance of the check
            bad.append("gap %g: quad's own error estimate %.1e relative" % (g, qe / q))
        es = abs(math.exp(r[1]) / q - 1)
        f = [float(v) for v in fl.split()]
        ef = abs(math.exp(f[1]) / q - 1) if f[3] == 1 else float("inf")
        ws, wf = max(ws, es), max(wf, ef)
        if es > 1e-9 or ef > 1e-9:
            bad.append("gap %g: sum %.2e, fft %.2e" % (g, es, ef))
    report(not bad, "%s: sum engine (worst %.1e) and FFT engine (worst %.1e) against scipy "
           "quad of the damped time integral, to 1e-9" % (what, ws, wf), "; ".join(bad[:4]))


def main():
    check_voigt()
    a = [(61.7, 0.385, None), (185.5, 0.2385, None)]
    gaps_a = [-1200.0, -455.5, -100.0, 0.0, 38.5, 150.3, 420.0, 1100.0, 2385.0]
    check_brute("two modes, thermal, 298 K", "thermal", a, 38.5, 298.15, gaps_a)
    check_brute("two modes, frozen, 298 K", "frozen", a, 38.5, 298.15, gaps_a)
    b = [(23.85, 1.385, None), (148.3, 0.512, None), (371.3, 0.0815, None)]
    check_brute("three modes, thermal, 151 K", "thermal", b, 123.4, 151.3,
                [-800.0, -238.5, 0.0, 123.4, 385.0, 777.7, 1500.0], reach=(-80, 60))
    check_brute("three modes, frozen, 151 K", "frozen", b, 123.4, 151.3,
                [-300.0, 60.0, 123.4, 385.0, 777.7, 1500.0])
    d = [(185.5, 0.155, None), (371.3, 0.0415, None)]
    check_brute("two modes, thermal, 77 K (channels ten widths apart)", "thermal", d,
                23.85, 77.3, [-200.0, 23.85, 116.5, 209.35, 302.2, 580.0, 950.0])
    check_bound_tightness()
    check_damped("thermal", [(61.7, 0.385, 0.55), (185.5, 0.2385, None)], 38.5, 298.15,
                 "thermal, lifetime 0.55 ps")
    check_damped("frozen", [(148.3, 0.512, 0.0385), (371.3, 0.0815, 2.385)], 61.85, 211.7,
                 "frozen, lifetimes 0.0385 and 2.385 ps")
    return 0 if all(o[0] for o in outcomes) else 1


if __name__ == "__main__":
    sys.exit(main())

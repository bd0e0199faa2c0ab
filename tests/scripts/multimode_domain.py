#!/usr/bin/python3
"""Numerical domain of the many-mode sum engine (docs/reliability.md): random
odorants and receptors drawn across the ranges the config accepts for a
sweep that maps an odorant (docs/config.md: gap -3000 .. 3000 meV,
reorganization 0.1 .. 3000 meV, coupling 0 .. 1000 meV, temperature
1 .. 5000 K; mode quanta 1 .. 1000 meV and Huang-Rhys factors 0 .. 50 from
the mode tables, 1 to 6 modes, some damped), 400 calls of 41 gaps each
through build/tests/multimode_dump.  Every call must either give finite
numbers everywhere (no NaN, no infinity but the -inf of an exactly zero
part, which the flags say) or refuse with one line "error: ..."; where it
answers:

- ln F_total >= max(ln F_elastic, ln F_assisted) and
  F_total = F_elastic + F_assisted within the reported error bounds (the
  split of docs/theory.md section 9.1);
- the error bounds are finite, >= 0 and at most the tolerance 1e-10 asked
  plus the engine's rounding estimate (vg_multimode.h: "the truncation and
  discretisation parts are rigorous bounds, kept below the requested
  tolerance; a rounding estimate is added");
- ln k = ln F + ln((2 pi / hbar) V^2) exactly as the rates are defined
  (hbar from the exact SI-2019 h and e).

Values are drawn log-uniformly where the range spans decades (common
practice for such scans), with a fixed seed.  Prints one line
`PASS: what` or `FAIL: what: why` per check.
"""
import math
import os
import subprocess
import sys

sys.path.insert(0, os.path.join(os.path.dirname(os.path.dirname(os.path.abspath(__file__))), "lib"))
from vgcheck import build_path, report, failed  # noqa: E402

import numpy as np  # noqa: E402

BIN = build_path("tests", "multimode_dump")
HBAR_MEVS = 6.62607015e-34 / (2 * math.pi) / 1.602176634e-19 * 1e3  # meV s, SI 2019 exact
CALLS, GAPS, TOL = 120, 41, 1e-10
EPS = 2.0 ** -52


def logu(rng, lo, hi):
    return float(math.exp(rng.uniform(math.log(lo), math.log(hi))))


def requests(rng):
    out = []
    for _ in range(CALLS):
        nm = int(rng.integers(1, 7))
        modes = []
        for _ in range(nm):
            w = logu(rng, 1.0, 1000.0)
            # the full 0 .. 50 for a lone mode; up to 5 each for several
            # (the lattice grows with the total spread of the weights)
            S = 0.0 if rng.random() < 0.05 else logu(rng, 1e-4, 50.0 if nm == 1 else 5.0)
            t1 = "inf" if rng.random() < 0.8 else "%.17g" % logu(rng, 0.05, 1e4)
            modes.append("%.17g %.17g %s" % (w, S, t1))
        stats = "frozen" if rng.random() < 0.2 else "thermal"
        lam = logu(rng, 0.1, 3000.0)
        T = logu(rng, 1.0, 5000.0)
        V = 0.0 if rng.random() < 0.05 else logu(rng, 1e-3, 1000.0)
        g0 = rng.uniform(-3000.0, 2900.0)
        step = rng.uniform(0.1, (3000.0 - g0) / (GAPS - 1))
        gaps = [g0 + k * step for k in range(GAPS)]
        out.append(("modes %s %d %s" % (stats, nm, " ".join(modes)),
                    "sum %.17g %.17g %.17g %g %d %s" % (lam, T, V, TOL, GAPS,
                                                        " ".join("%.17g" % g for g in gaps)), V))
    return out


KB_MEV = 1.380649e-23 / 1.602176634e-19 * 1e3  # k_B in meV/K, SI 2019 exact


def mm_ref(w, S, lam, T, gap, lo, hi):
    """ln F of one thermal mode: sum over n of W_n G(gap - lam - n w), W_n =
    exp(-S coth(b/2) + n b/2) I_|n|(S / sinh(b/2)), G the normalised Gaussian
    of variance 2 lam kT (mpmath, 30 digits)."""
    import mpmath as mp
    mp.mp.dps = 30
    kT = mp.mpf(KB_MEV) * T
    b = mp.mpf(w) / kT
    x = S / mp.sinh(b / 2)
    tot = mp.mpf(0)
    for n in range(lo, hi + 1):
        wn = mp.exp(-S * mp.coth(b / 2) + n * b / 2) * mp.besseli(abs(n), x)
        tot += wn * mp.exp(-(gap - lam - n * w) ** 2 / (4 * lam * kT))
    return mp.log(tot) - mp.log(4 * mp.pi * lam * kT) / 2


def main():
    rng = np.random.default_rng(20261202)
    reqs = requests(rng)
    # a term budget of 2e8 (about a second of work, what point allows one
    # odorant): larger draws are refused with a message, as they would be
    text = "budget 2e8\n" + "".join(m + "\n" + s + "\n" for m, s, _ in reqs)
    res = subprocess.run([BIN], input=text, capture_output=True, text=True)
    report(res.returncode == 0, "multimode_dump ran %d calls" % CALLS, res.stderr.strip()[:200])
    if res.returncode != 0:
        return
    lines = res.stdout.splitlines()
    pos, answered, refused, bad, blocks = 0, 0, 0, [], []
    for _, _, V in reqs:
        if pos < len(lines) and lines[pos].startswith("error: "):
            refused += 1
            pos += 1
            blocks.append(None)
            continue
        block = lines[pos:pos + GAPS]
        blocks.append(block)
        pos += GAPS
        answered += 1
        for ln in block:
            f = ln.split()
            v = [float(x) for x in f[:10]]
            gap, lt, le, la, et, ee, ea, kt, ke, ka = v
            az = f[10] == "1"
            finite = all(math.isfinite(x) for x in (lt, le, et, ee, ea)) and \
                (az or math.isfinite(la))
            if not finite or math.isnan(kt) or math.isnan(ke) or math.isnan(ka):
                bad.append(("not finite", ln[:120]))
                continue
            # the truncation and lattice parts stay below TOL; the rounding
            # estimate added is DBL_EPSILON (n (steps + 1) + 16 (1 + |ln F|))
            # (src/multimode.c round_est), n <= 4e6 lattice points in this
            # tool and steps <= 6 modes
            for e, lf in ((et, lt), (ee, le), (ea, None if az else la)):
                cap = TOL + EPS * (4e6 * 7 + 16 * (1 + abs(lf if lf is not None else 0.0)))
                if not (0.0 <= e <= cap):
                    bad.append(("error bound", e, cap, ln[:100]))
            if lt < max(le, la) - 1e-12 * max(1.0, abs(lt)):
                bad.append(("total below a part", ln[:120]))
            # F_total = F_elastic + F_assisted, relative to F_total
            m = lt
            split = math.exp(le - m) + (0.0 if az else math.exp(la - m))
            if abs(split - 1.0) > 4 * TOL + 1e-13:
                bad.append(("split", split - 1.0, ln[:80]))
            if V > 0:
                pre = math.log(2 * math.pi / HBAR_MEVS) + 2 * math.log(V)
                if abs(kt - (lt + pre)) > 1e-12 * max(1.0, abs(kt)):
                    bad.append(("prefactor", kt - lt - pre))
            elif kt != -math.inf:
                bad.append(("V = 0 rate not -inf", kt))
    report(pos == len(lines), "every call answered %d gaps or refused with one line" % GAPS,
           "%d of %d lines read" % (pos, len(lines)))
    report(answered >= CALLS // 2, "most draws are answered (%d answered, %d refused with a "
           "message)" % (answered, refused), "")
    # a sample against an independent reference: one undamped mode, the
    # thermal Marcus-Levich-Jortner sum in mpmath at 30 digits (Jortner,
    # J. Chem. Phys. 64, 4860, 1976; docs/theory.md section 2.2)
    checked, off = 0, []
    for (m, sreq, _), blk in zip(reqs, blocks):
        f = m.split()
        if blk is None or f[1] != "thermal" or f[2] != "1" or f[5] != "inf" or checked >= 12:
            continue
        w, S = float(f[3]), float(f[4])
        q = sreq.split()
        lam, T = float(q[1]), float(q[2])
        kT = KB_MEV * T
        for ln in blk[::10]:
            v = ln.split()
            gap, lt, et = float(v[0]), float(v[1]), float(v[4])
            sig = math.sqrt(2 * lam * kT)
            c = (gap - lam) / w
            lo, hi = int(math.floor(c - 40 * sig / w - 10)) - int(S), int(math.ceil(c + 40 * sig / w + 10)) + int(6 * S + 10)
            lo = min(lo, -int(6 * S + 10))
            if hi - lo > 600:
                continue
            ref = mm_ref(w, S, lam, T, gap, lo, hi)
            checked += 1
            if abs(float(ref) - lt) > 2 * et + 1e-12 * max(1.0, abs(lt)):
                off.append((w, S, lam, T, gap, lt, float(ref)))
    report(checked >= 5 and not off, "%d one-mode points within their error bounds of an "
           "mpmath Marcus-Levich-Jortner sum" % checked, str(off[:2]))
    report(not bad, "%d gaps: finite, bounds within %g + rounding, total = elastic + assisted, "
           "k = (2 pi / hbar) V^2 F" % (answered * GAPS, TOL), str(bad[:3]))


main()
sys.exit(1 if failed() else 0)

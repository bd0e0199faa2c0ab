#!/usr/bin/python3
"""The rate kernel over the whole accepted domain.

Runs build/tests/domain_probe ($VG_BUILD/tests/domain_probe) and checks:
  - over 10^6 random points of the domain the config accepts and its 864
    corners (the draws are described in tests/tools/domain_probe.c): no
    kernel error, no NaN or Inf in any defined field of vg_rates or in any
    metric, fill values exactly where docs/theory.md (section 5) puts them,
    the invariants of vg_rate.h (flags, window order, fraction in [0, 1],
    total = elastic + assisted);
  - random grids through vg_sweep_run at 1 and 2 threads: bit-identical to
    each other and to direct vg_rate_eval calls;
  - a stratified sample of about 300 of those points against an mpmath
    reference at 30 digits written here from the formulas of the Marcus-
    Levich-Jortner rate (Jortner, J. Chem. Phys. 64, 4860, 1976; Marcus &
    Sutin, BBA 811, 265, 1985):
        k_n = (2 pi/hbar) V^2 (4 pi lam kT)^(-1/2) W_n exp(-(eps - lam - n hw)^2 / (4 lam kT))
        thermal W_n = exp(-S coth(b/2)) exp(n b/2) I_|n|(S / sinh(b/2)),  b = hw/kT
        frozen  W_n = exp(-S) S^n / n!  (n >= 0)
    The Bessel values come from Miller's backward recurrence
    I_{k-1} = I_{k+1} + (2k/x) I_k (A&S 9.6.26; stable downward, I_n being
    the minimal solution), started far above both x and the largest order
    needed, and normalised by the generating function
    sum_n exp(n b/2) I_|n|(x) = exp(x cosh(b/2)) = exp(S coth(b/2)) (A&S 9.6.33),
    i.e. sum_n W_n = 1; the recurrence itself is checked against
    mpmath.besseli.  Constants from the exact SI 2019 definitions of h, e and
    k (CODATA 2018 prints k_B = 8.617333262e-5 eV/K and
    hbar = 6.582119569e-16 eV s, the same values rounded to 10 digits).

Channel window of the reference (its own, not the kernel's): the terms are
log-concave in n, so their peak lies between the Gaussian's centre
(eps - lam)/hw and the weights' centre S; the window runs M channels beyond
both, M = 12 (sigma_g + sigma_w) + 30 with sigma_g = sqrt(2 lam kT)/hw and
sigma_w = sqrt(S coth(b/2)) (thermal) or sqrt(S) (frozen), and is accepted
only if both edge terms are below 1e-40 of the sum and fall outward (so the
rest of each side is smaller still); otherwise it is doubled.  The window
is capped at 200000 channels (the kernel refuses |n| > 10^5; accepted
inputs need a few 10^4): a point needing more would be reported, not
skipped silently.

Tolerance.  The kernel documents (vg_rate.h, docs/theory.md 4.2) that the
channels it leaves out change the assisted and total rates by less than the
point's tolerance tol (relative), i.e. their logs by less than tol; the
elastic and bare rates are not truncated.  On top of that the logs carry
double rounding: a handful of operations on quantities as large as
Q = max(1, |ln P|, the Gaussian exponent and |ln W_n| at the elastic channel
and at the largest assisted channel), each good to one ulp, plus about two
ulps per channel for the terms formed as products of neighbour ratios
(docs/theory.md 4.2a) over the C channels of the reference's window that
hold 1 - 1e-30 of the sum.  The limit on |ln k - ln k_ref| is therefore
    tol (assisted, total only) + 64 eps Q + 4 eps C,   eps = 2^-52,
a relative agreement of about 1.4e-14 of Q where |ln k| is large (Q reaches
~1e9 at 1 K with 0.1 meV reorganization, where a double holds ln k only to
~1e-7 absolute).  The assisted fraction f = 1/(1 + exp(-D)) with
D = ln k_assisted - ln k_elastic moves by f (1 - f) dD, so it must agree to
tol + 4 eps + f (1 - f) 2 (64 eps Q + 4 eps C) (absolute).

Prints one "PASS: what" or "FAIL: what: why" line per check.
"""
import math
import os
import subprocess
import sys
import tempfile
import time

import mpmath as mp

mp.mp.dps = 30
EPS = 2.0 ** -52
MAX_CHANNELS = 200000
# Exact defining constants of the SI (2019): h, e, k (BIPM SI Brochure, 9th ed.).
SI_H = mp.mpf("6.62607015e-34")
SI_E = mp.mpf("1.602176634e-19")
SI_K = mp.mpf("1.380649e-23")
KB_MEV = SI_K / SI_E * 1000          # meV / K
HBAR_EVS = SI_H / (2 * mp.pi * SI_E)  # eV s

BUILD = os.environ.get("VG_BUILD", "build")
PROBE = os.path.join(BUILD, "tests", "domain_probe")
FIELDS = ["ln_k_elastic", "ln_k_assisted", "ln_k_total", "ln_k_bare", "ln_fc_elastic",
          "ln_fc_assisted", "ln_fc_total", "ln_fc_bare", "assisted_fraction"]

failures = 0


def report(ok, what, why=""):
    """One PASS or FAIL line; failures counted for the exit status."""
    global failures
    failures += not ok
    print(("PASS: %s" % what) if ok else ("FAIL: %s: %s" % (what, why)))


# ------------------------------------------------------------ the probe ---

def run_probe(sample_path):
    res = subprocess.run([PROBE, "-o", sample_path], capture_output=True, text=True, check=False)
    if res.returncode != 0:
        report(False, "domain_probe ran", "exit %d: %s" % (res.returncode, res.stderr.strip()))
        sys.exit(1)
    counts, details = {}, []
    for line in res.stdout.splitlines():
        if line.startswith("detail: "):
            details.append(line[8:])
            continue
        words = line.split()
        counts[" ".join(words[:-1])] = int(words[-1])
    return counts, details


def check_counts(c, details):
    """The probe's tallies: every one must be zero but the sizes."""
    n = c["points"]
    why = "; ".join(details[:5])
    report(n >= 10 ** 6, "domain_probe evaluated %d points (10^6 random + 864 corners)" % n)
    report(c["kernel_errors"] == 0, "no kernel error at any accepted point (%d points)" % n,
           "%d errors: %s" % (c["kernel_errors"], why))
    for key in sorted(k for k in c if k.startswith("nonfinite_")):
        kind, name = key.split()
        report(c[key] == 0, "no NaN or Inf in %s %s (%d points)"
               % ("metric" if kind == "nonfinite_metric" else "field", name, n),
               "%d non-finite: %s" % (c[key], why))
    report(c["fill_rule_violations"] == 0, "fill values exactly where docs/theory.md section 5 "
           "puts them (V = 0, S = 0)", "%d violations: %s" % (c["fill_rule_violations"], why))
    report(c["invariant_violations"] == 0, "flags, n_lo <= n_peak <= n_hi, fraction in [0, 1], "
           "total = elastic + assisted within 2 tol", "%d violations: %s"
           % (c["invariant_violations"], why))
    print("note: %d undefined logs (zero rates) hold NaN (allowed by vg_rate.h; not in any "
          "output)" % c["undefined_logs_nan"])
    g, p, split = c["sweep_grids"], c["sweep_points"], c["sweep_split_grids"]
    report(c["sweep_failures"] == 0 and p >= 3000, "vg_sweep_run over %d random grids "
           "(%d points) succeeded at 1 and 2 threads" % (g, p), why)
    # threads share a chunk only in blocks of 1024 points (src/sweep.c)
    report(split >= 3, "%d of those grids have chunks above 1024 points, which the two "
           "threads share" % split, "too few to compare thread counts")
    report(c["sweep_thread_mismatches"] == 0, "sweep bit-identical at 1 and 2 threads "
           "(%d points)" % p, "%d differ: %s" % (c["sweep_thread_mismatches"], why))
    report(c["sweep_direct_mismatches"] == 0 and c["sweep_direct_errors"] == 0,
           "sweep bit-identical to direct vg_rate_eval + vg_metrics_from_rates (%d points)" % p,
           "%d differ, %d errors: %s" % (c["sweep_direct_mismatches"],
                                         c["sweep_direct_errors"], why))


# ------------------------------------------------------------ reference ---

def bessel_table(x, nmax):
    """I_0 .. I_nmax (x) up to one common factor, by Miller's recurrence
    from far above nmax and x (A&S 9.6.26)."""
    start = int(max(nmax, x) + 20 * mp.sqrt(x + 1) + 100)
    hi, cur = mp.mpf(0), mp.mpf(1)
    table = [None] * (nmax + 1)
    for k in range(start, 0, -1):  # cur = I_k, hi = I_{k+1}
        if k <= nmax:
            table[k] = cur
        hi, cur = cur, hi + (2 * k / x) * cur  # no overflow: mpf exponents are unbounded
    table[0] = cur
    return table, start


def thermal_weights(S, beta, lo, hi):
    """W_n for n in lo .. hi (lo <= 0 <= hi), normalised so that the sum over
    all n is 1 (generating function, A&S 9.6.33)."""
    x = S / mp.sinh(beta / 2)
    nmax = max(-lo, hi)
    table, start = bessel_table(x, start_order(x, nmax))
    half = mp.exp(beta / 2)
    total, p = table[0], mp.mpf(1)
    for k in range(1, len(table)):  # both signs: e^{k b/2} + e^{-k b/2}
        p *= half
        total += table[k] * (p + 1 / p)
    w = {}
    for n in range(lo, hi + 1):
        w[n] = mp.exp(n * beta / 2) * table[abs(n)] / total
    return w


def start_order(x, nmax):
    """Orders kept in the table: every order whose weight is not negligible
    in the normalising sum, and every order of the window."""
    return int(max(nmax, x + 30 * mp.sqrt(x + 1) + 60))


def frozen_weights(S, lo, hi):
    return {n: (mp.exp(-S + n * mp.log(S) - mp.loggamma(n + 1)) if n >= 0 else mp.mpf(0))
            for n in range(lo, hi + 1)}


def weights(stats, S, beta, lo, hi):
    if S == 0:
        return {n: mp.mpf(1 if n == 0 else 0) for n in range(lo, hi + 1)}
    if stats == "frozen":
        return frozen_weights(S, lo, hi)
    return thermal_weights(S, beta, lo, hi)


def window(stats, S, beta, d, var4, hw, widen):
    sig_g = mp.sqrt(var4 / 2) / hw
    sig_w = mp.sqrt(S) if stats == "frozen" else mp.sqrt(S / mp.tanh(beta / 2))
    m = widen * (12 * (sig_g + sig_w) + 30)
    lo = int(mp.floor(min(d / hw, S) - m))
    hi = int(mp.ceil(max(d / hw, S) + m))
    return (max(lo, 0) if stats == "frozen" else min(lo, 0)), max(hi, 0)


def reference(p):
    """30-digit logs of the elastic, assisted, total and bare sums (None for
    an exact zero), ln P (None at V = 0), the fraction, the scales Q and C."""
    stats = p["stats"]
    gap, lam, V, S, hw, T = (mp.mpf(p[k]) for k in ("gap", "reorg", "V", "S", "mode", "T"))
    kT = KB_MEV * T
    beta, d, var4 = hw / kT, gap - lam, 4 * lam * kT
    widen = 1
    while True:
        lo, hi = window(stats, S, beta, d, var4, hw, widen)
        if hi - lo > MAX_CHANNELS:
            return None
        w = weights(stats, S, beta, lo, hi)
        t = {n: w[n] * mp.exp(-(d - n * hw) ** 2 / var4) for n in w}
        total = mp.fsum(t.values())
        edge_ok = all(t[e] <= total * mp.mpf("1e-40") and (t[e] <= t[e + s] or t[e] == 0)
                      for e, s in ((lo, 1), (hi, -1))
                      if not (stats == "frozen" and e == 0) and lo < hi)
        if edge_ok:
            break
        widen *= 2
    assisted = mp.fsum(v for n, v in t.items() if n != 0)  # not total - t[0]: it may be tiny
    peak = max((n for n in t if n != 0), key=lambda n: t[n]) if S > 0 else 0
    big = sorted(t.values(), reverse=True)
    acc, count = mp.mpf(0), 0
    while count < len(big) and acc < total * (1 - mp.mpf("1e-30")):
        acc += big[count]
        count += 1

    def lnw(n):
        return abs(mp.log(w[n])) if w[n] > 0 else 0

    ln_p = None
    if V > 0:
        ln_p = (mp.log(2 * mp.pi / HBAR_EVS) + 2 * mp.log(V / 1000)
                - mp.log(4 * mp.pi * lam * kT / 10 ** 6) / 2)
    q = max(1, d * d / var4, lnw(0), (d - peak * hw) ** 2 / var4, lnw(peak),
            abs(ln_p) if ln_p is not None else 0)
    return {"el": mp.log(t[0]), "as": mp.log(assisted) if S > 0 else None,
            "tot": mp.log(total), "bare": -d * d / var4, "ln_p": ln_p,
            "frac": assisted / total, "Q": float(q), "C": count, "width": hi - lo + 1}


# -------------------------------------------------------------- compare ---

def parse_sample(path):
    pts = []
    with open(path) as f:
        for line in f:
            w = line.split()
            p = {"stats": w[0]}
            for k, v in zip(("gap", "reorg", "V", "S", "mode", "T", "tol"), w[1:8]):
                p[k] = v
            p["vals"] = [None if v == "-" else float(v) for v in w[8:17]]
            pts.append(p)
    return pts


def expected(ref):
    """Reference values of the nine fields, in the probe's order, with
    truncation flags (1 where the kernel's tolerance applies)."""
    ln_p = ref["ln_p"]
    k = [None if ln_p is None or v is None else ln_p + v
         for v in (ref["el"], ref["as"], ref["tot"], ref["bare"])]
    return (k + [ref["el"], ref["as"], ref["tot"], ref["bare"], ref["frac"]],
            [0, 1, 1, 0, 0, 1, 1, 0, 1])


def compare_point(p, ref):
    """(worst error / limit, description) for one point."""
    tol = float(p["tol"])
    rounding = 64 * EPS * ref["Q"] + 4 * EPS * ref["C"]
    want, trunc = expected(ref)
    worst, where = 0.0, ""
    for i, (got, exp) in enumerate(zip(p["vals"], want)):
        if (got is None) != (exp is None):
            return math.inf, "%s: kernel %r, reference %s" % (FIELDS[i], got, exp)
        if got is None:
            continue
        if i == 8:  # f = 1/(1 + e^-D), D = ln k_as - ln k_el: df = f (1 - f) dD
            f = float(exp)
            limit = tol + 4 * EPS + f * (1 - f) * 2 * rounding
        else:
            limit = tol * trunc[i] + rounding
        r = float(abs(mp.mpf(got) - exp)) / limit
        if r > worst:
            worst, where = r, "%s: kernel %.17g, reference %s, limit %.3g" % (
                FIELDS[i], got, mp.nstr(exp, 22), limit)
    return worst, where


def check_sample(pts):
    t0 = time.time()
    rows, skipped, widest = [], [], 0
    for p in pts:
        ref = reference(p)
        if ref is None:
            skipped.append(p)
            continue
        widest = max(widest, ref["width"])
        rows.append((p, compare_point(p, ref)))
    dt = time.time() - t0
    report(not skipped, "every sampled point within the reference's %d-channel cap" % MAX_CHANNELS,
           "%d points need more, first %s" % (len(skipped), skipped[:1]))
    for stats in ("thermal", "frozen"):
        mine = [(p, r) for p, r in rows if p["stats"] == stats]
        worst = max(mine, key=lambda pr: pr[1][0]) if mine else None
        w = worst[1][0] if worst else math.inf
        where = "" if not worst else "%s at %s" % (worst[1][1], " ".join(
            worst[0][k] for k in ("gap", "reorg", "V", "S", "mode", "T", "tol")))
        report(w <= 1.0, "%s: ln rates and assisted fraction of %d sampled points vs mpmath "
               "30 digits (worst %.3g of the limit tol + 64 eps Q + 4 eps C)" % (stats, len(mine), w),
               where)
    print("note: mpmath reference for %d points in %.1f s, widest window %d channels"
          % (len(rows), dt, widest))


def check_reference():
    """The reference's own parts against independent values."""
    # CODATA 2018 (Tiesinga et al., Rev. Mod. Phys. 93, 025010, 2021), as printed.
    ok = (abs(KB_MEV / 1000 / mp.mpf("8.617333262e-5") - 1) < 1e-9 and
          abs(HBAR_EVS / mp.mpf("6.582119569e-16") - 1) < 1e-9)
    report(ok, "k_B and hbar from the exact SI constants agree with CODATA 2018's printed "
           "8.617333262e-5 eV/K and 6.582119569e-16 eV s to 1e-9")
    worst = mp.mpf(0)
    for S, beta in (("0.0385", "0.05"), ("2.385", "1.7"), ("23.85", "0.0021"), ("1e-5", "40")):
        S, beta = mp.mpf(S), mp.mpf(beta)
        x = S / mp.sinh(beta / 2)
        w = thermal_weights(S, beta, -6, 6)
        for n in range(-6, 7):
            direct = mp.exp(-S / mp.tanh(beta / 2) + n * beta / 2) * mp.besseli(abs(n), x)
            worst = max(worst, abs(w[n] / direct - 1))
    report(worst < mp.mpf("1e-25"), "reference thermal weights (Miller + generating-function "
           "normalisation) vs mpmath.besseli, 4 modes, n = -6..6 (worst %s, limit 1e-25)"
           % mp.nstr(worst, 3))


def main():
    if not os.access(PROBE, os.X_OK):
        report(False, "domain_probe", "%s not built" % PROBE)
        return 1
    check_reference()
    with tempfile.TemporaryDirectory() as tmp:
        sample = os.path.join(tmp, "sample.txt")
        t0 = time.time()
        counts, details = run_probe(sample)
        print("note: domain_probe took %.1f s" % (time.time() - t0))
        check_counts(counts, details)
        pts = parse_sample(sample)
    report(len(pts) >= 250, "sample of %d points (12 strata of statistics x S class x V class, "
           "and corners)" % len(pts))
    check_sample(pts)
    return 1 if failures else 0


if __name__ == "__main__":
    sys.exit(main())

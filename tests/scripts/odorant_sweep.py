#!/usr/bin/python3
"""End-to-end check of sweeps that map a many-mode odorant ([model] odorant,
[model] against; docs/config.md).

A small grid with a two-mode odorant "a" and a three-mode odorant "b"
(invented values, written by this script) is swept, and sweep.nc is
checked against an independent brute-force reference computed here:

- F(eps) = sum over n_1..n_M of prod_j W_{n_j} G(eps - lambda - sum_j n_j hbar w_j),
  W_n the thermal weights of one mode, exp(-S coth(b/2) + n b/2) I_n(S / sinh(b/2))
  with b = hbar w / k_B T (Jortner, J. Chem. Phys. 64, 4860, 1976; docs/theory.md
  section 2.2 and section 9), I_n from scipy.special.ive, G the normalised
  Gaussian of variance 2 lambda k_B T (Marcus & Sutin 1985), summed over
  |n_j| <= 40 (the weights beyond are below 1e-60 here);
- k = (2 pi / hbar) V^2 F, hbar = h / 2 pi with h and e exact (SI 2019);
- log10_k_total, log10_k_elastic (every n_j = 0), log10_discrimination =
  log10 k_a - log10 k_b, and the isotope effect against the heavy form of
  "a" given as a second table;
- every one within 1e-9 relative (the engine's tolerance is 1e-12; the
  brute-force double-precision sum itself is good to about 1e-13).
It also checks that 1 and 2 threads give the same bits in every variable,
also on a grid whose rows the engine's blocks of 1024 points cut (every row
is computed whole, whichever thread holds a block).

Prints one line `PASS: what` or `FAIL: what: why` per check.
"""
import itertools
import json
import math
import os
import subprocess
import sys
import tempfile

sys.path.insert(0, os.path.join(os.path.dirname(os.path.dirname(os.path.abspath(__file__))), "lib"))
from vgcheck import build_path, report, failed  # noqa: E402

import numpy as np  # noqa: E402
from scipy.special import ive  # noqa: E402
import netCDF4  # noqa: E402

BINARY = build_path("vibrogate")
KB_MEV = 1.380649e-23 / 1.602176634e-19 * 1e3   # k_B in meV/K, SI 2019 exact
HBAR_MEVS = 6.62607015e-34 / (2 * math.pi) / 1.602176634e-19 * 1e3  # meV s

A = [(180.0, 0.12), (95.0, 0.3)]             # (hbar w / meV, S), invented
A_HEAVY = [(132.2, 0.1635), (95.0, 0.3)]      # the first mode "deuterated", invented
B = [(210.0, 0.08), (120.0, 0.2), (60.0, 0.4)]

CONFIG = """[parameters]
gap = -100 .. 500 meV, %d points
reorganization = 40, 120 meV
electronic_coupling = 2 meV
huang_rhys = 0.05
mode = 200 meV
temperature = 280, 320 K
[model]
odorant = a
against = b
[isotope]
frequency_ratio = 1.362
[odorant.a]
modes = a.csv
heavy_modes = ah.csv
[odorant.b]
modes = b.csv
[validity]
criteria = solvent, resolved
relaxation_time = 0.08 ps
[output]
directory = out
data = netcdf
"""

# The same receptor with the single mode of [parameters], for the valid
# metric of a single-mode sweep.
SINGLE = """[parameters]
gap = 0 .. 400 meV, 5 points
reorganization = 10 .. 400 meV, 41 points, log
electronic_coupling = 0.5, 2, 6 meV
huang_rhys = 0.1
mode = 150 meV
temperature = 300 K
[validity]
criteria = solvent, resolved
relaxation_time = 0.3 ps
[output]
data = netcdf
"""


def kappa(V, lam, tau_ps):
    """Zusman's adiabaticity parameter 4 pi V^2 tau_L / (hbar lambda) (Zusman,
    Chem. Phys. 49, 295, 1980; Rips & Jortner, J. Chem. Phys. 87, 2090, 1987)."""
    return 4 * math.pi * V * V * tau_ps * 1e-12 / (HBAR_MEVS * lam)


def failed_ref(V, lam, T, mode, tau_ps):
    """The failed_criteria bits: 2 solvent, 4 resolved (docs/config.md)."""
    return (2.0 if kappa(V, lam, tau_ps) >= 0.1 else 0.0) + \
        (4.0 if max(V / mode, V / (KB_MEV * T)) >= 0.1 else 0.0)


def valid_ref(V, lam, T, mode, tau_ps):
    """1 where kappa_A < 0.1 and max(V / hbar w, V / k_B T) < 0.1 (the default
    thresholds, "much less than" read as a factor of ten: common practice)."""
    return 1.0 if kappa(V, lam, tau_ps) < 0.1 and max(V / mode, V / (KB_MEV * T)) < 0.1 else 0.0


def table(modes):
    return "energy_meV, huang_rhys\n" + "".join("%.17g, %.17g\n" % m for m in modes)


def ln_weights(w, S, T, nmax=40):
    b = w / (KB_MEV * T)
    x = S / math.sinh(b / 2)
    n = np.arange(-nmax, nmax + 1)
    # ive(n, x) = I_n(x) e^-x, so ln I_n = ln ive + x
    return n, -S / math.tanh(b / 2) + n * b / 2 + np.log(ive(np.abs(n), x)) + x


def ln_f(modes, gap, lam, T):
    """ln F at each gap by the brute-force multi-index sum."""
    kT = KB_MEV * T
    per = [ln_weights(w, S, T) for w, S in modes]
    shifts, lws = [0.0], [0.0]
    for (w, _), (n, lw) in zip(modes, per):
        shifts = [s + k * w for s in shifts for k in n]
        lws = [a + b for a in lws for b in lw]
    shifts, lws = np.array(shifts), np.array(lws)
    keep = lws > lws.max() - 140.0
    shifts, lws = shifts[keep], lws[keep]
    out = []
    for g in gap:
        e = lws - (g - lam - shifts) ** 2 / (4 * lam * kT)
        m = e.max()
        out.append(m + math.log(np.exp(e - m).sum()) - 0.5 * math.log(4 * math.pi * lam * kT))
    return np.array(out)


def ln_f_elastic(modes, gap, lam, T):
    kT = KB_MEV * T
    lw0 = sum(ln_weights(w, S, T)[1][40] for w, S in modes)
    return lw0 - (gap - lam) ** 2 / (4 * lam * kT) - 0.5 * math.log(4 * math.pi * lam * kT)


def sweep(tmp, name, npoints, threads):
    d = os.path.join(tmp, name)
    os.makedirs(d)
    for f, m in (("a.csv", A), ("ah.csv", A_HEAVY), ("b.csv", B)):
        with open(os.path.join(d, f), "w") as fh:
            fh.write(table(m))
    with open(os.path.join(d, "c.ini"), "w") as fh:
        fh.write(CONFIG % npoints)
    env = dict(os.environ, OMP_NUM_THREADS=str(threads))
    r = subprocess.run([BINARY, "sweep", os.path.join(d, "c.ini"), "--quiet",
                        "--out", os.path.join(d, "out")],
                       capture_output=True, text=True, env=env)
    return r, os.path.join(d, "out", "sweep.nc")


def same_values(a, b):
    """Every variable of two sweep.nc files equal bit for bit (the files
    themselves differ in the paths and times they record)."""
    with netCDF4.Dataset(a) as x, netCDF4.Dataset(b) as y:
        if set(x.variables) != set(y.variables):
            return False
        for k in x.variables:
            u, w = np.asarray(x[k][:]), np.asarray(y[k][:])
            if u.shape != w.shape or u.tobytes() != w.tobytes():
                return False
    return True


def main():
    ln_pre = math.log(2 * math.pi / HBAR_MEVS) + 2 * math.log(2.0)
    ln10 = math.log(10)
    with tempfile.TemporaryDirectory() as tmp:
        r, nc = sweep(tmp, "s1", 61, 1)
        report(r.returncode == 0, "a two-odorant sweep runs (status 0)", r.stderr.strip())
        if r.returncode != 0:
            return
        ds = netCDF4.Dataset(nc)
        gap = np.array(ds["gap"][:], dtype=float)
        lams = np.array(ds["reorganization"][:], dtype=float)
        temps = np.array(ds["temperature"][:], dtype=float)
        v = {k: np.array(ds[k][:], dtype=float) for k in
             ("log10_k_total", "log10_k_elastic", "log10_discrimination",
              "log10_isotope_effect")}
        valid = np.array(ds["valid"][:], dtype=float)
        dims = ds["log10_k_total"].dimensions
        ds.close()
        report(dims == ("temperature", "reorganization", "gap"),
               "the odorant sweep's axes are temperature, reorganization, gap", str(dims))
        worst = {k: 0.0 for k in v}
        for (it, T), (il, lam) in itertools.product(enumerate(temps), enumerate(lams)):
            fa, fb = ln_f(A, gap, lam, T), ln_f(B, gap, lam, T)
            fh = ln_f(A_HEAVY, gap, lam, T)
            ref = {"log10_k_total": (ln_pre + fa) / ln10,
                   "log10_k_elastic": (ln_pre + ln_f_elastic(A, gap, lam, T)) / ln10,
                   "log10_discrimination": (fa - fb) / ln10,
                   "log10_isotope_effect": (fa - fh) / ln10}
            for k in v:
                got = v[k][it, il, :]
                # relative error of the rate (a difference of logs is an
                # absolute error of ln, i.e. a relative error of the ratio)
                err = np.max(np.abs(got - ref[k]) * ln10)
                worst[k] = max(worst[k], err)
        # the odorant's criteria use its lowest active mode (95 meV here)
        want = np.array([[[valid_ref(2.0, lam, T, 95.0, 0.08)] * len(gap) for lam in lams]
                         for T in temps])
        report(np.array_equal(valid, want), "valid of the odorant sweep: solvent and resolved "
               "criteria as computed by hand (%d of %d points valid)"
               % (int(want.sum()), want.size), "%s vs %s" % (valid.ravel()[:6], want.ravel()[:6]))
        for k in v:
            report(worst[k] < 1e-9, "%s matches the brute-force multi-mode sum (worst "
                   "relative %.1e, limit 1e-9)" % (k, worst[k]), "")
        r2, nc2 = sweep(tmp, "s2", 61, 2)
        same = r2.returncode == 0 and same_values(nc, nc2)
        report(same, "1 and 2 threads give the same bits in every variable", r2.stderr.strip())
        # 2 x 2 x 700 points: blocks of 1024 points cut rows, and with two
        # threads the two halves of a cut row are computed by different
        # threads
        r3, nc3 = sweep(tmp, "s3", 700, 2)
        r4, nc4 = sweep(tmp, "s4", 700, 1)
        same = r3.returncode == 0 and r4.returncode == 0 and same_values(nc3, nc4)
        report(same, "a 2800-point odorant sweep whose rows cross block boundaries gives "
               "the same bits at 1 and 2 threads", r3.stderr.strip() + r4.stderr.strip())


def single(tmp):
    d = os.path.join(tmp, "single")
    os.makedirs(d)
    with open(os.path.join(d, "c.ini"), "w") as fh:
        fh.write(SINGLE)
    r = subprocess.run([BINARY, "sweep", os.path.join(d, "c.ini"), "--quiet",
                        "--out", os.path.join(d, "out")], capture_output=True, text=True)
    if r.returncode != 0:
        report(False, "a single-mode sweep with [validity] runs", r.stderr.strip())
        return
    with netCDF4.Dataset(os.path.join(d, "out", "sweep.nc")) as ds:
        valid = np.array(ds["valid"][:], dtype=float)
        failed = np.array(ds["failed_criteria"][:], dtype=float)
        dims = ds["valid"].dimensions
        lams = np.array(ds["reorganization"][:], dtype=float)
        vs = np.array(ds["electronic_coupling"][:], dtype=float)
        gaps = np.array(ds["gap"][:], dtype=float)
    want = np.array([[[valid_ref(V, lam, 300.0, 150.0, 0.3)] * len(gaps) for lam in lams]
                     for V in vs])
    report(dims == ("electronic_coupling", "reorganization", "gap") and
           np.array_equal(valid, want), "valid of a single-mode sweep matches the hand-computed "
           "criteria at every point (%d of %d valid)" % (int(want.sum()), want.size), str(dims))
    bits = np.array([[[failed_ref(V, lam, 300.0, 150.0, 0.3)] * len(gaps) for lam in lams]
                     for V in vs])
    report(np.array_equal(failed, bits), "failed_criteria names the failing criteria (2 solvent, "
           "4 resolved) at every point as computed by hand", "")
    with open(os.path.join(d, "out", "summary.json")) as fh:
        summ = json.load(fh)["validity"]
    want_fails = {"solvent": int(((bits.astype(int) >> 1) & 1).sum()),
                  "resolved": int(((bits.astype(int) >> 2) & 1).sum())}
    report(summ["fails"] == want_fails and summ["valid_points"] == int(want.sum()),
           "summary.json counts the points where each criterion fails (%s)" % want_fails,
           str(summ))


# The same receptor twice: the single mode of [parameters], and one
# odorant given by 'mode' and 'huang_rhys' in its section (no table).
ONE = """[parameters]
gap = -100 .. 600 meV, 36 points
reorganization = 30, 120, 400 meV
electronic_coupling = 1 meV
huang_rhys = 0.3
mode = 1600 cm-1
temperature = 300 K
%s[output]
data = netcdf
"""


def one_mode(tmp):
    """The many-mode engine on one mode against the single-mode kernel: both
    exact to the tolerance 1e-12 (docs/theory.md sections 4 and 9), so the
    rates must agree to about 1e-12 relative."""
    out = {}
    for name, extra in (("kernel", ""), ("odorant", "[model]\nodorant = one\n[odorant.one]\n"
                                         "mode = 1600 cm-1\nhuang_rhys = 0.3\n")):
        d = os.path.join(tmp, "one-" + name)
        os.makedirs(d)
        with open(os.path.join(d, "c.ini"), "w") as fh:
            fh.write(ONE % extra)
        r = subprocess.run([BINARY, "sweep", os.path.join(d, "c.ini"), "--quiet",
                            "--out", os.path.join(d, "out")], capture_output=True, text=True)
        if r.returncode != 0:
            report(False, "one-mode sweep (%s) runs" % name, r.stderr.strip())
            return
        with netCDF4.Dataset(os.path.join(d, "out", "sweep.nc")) as ds:
            out[name] = {k: np.array(ds[k][:], dtype=float)
                         for k in ("log10_k_total", "log10_k_elastic", "log10_k_assisted")}
    worst = max(np.max(np.abs(out["kernel"][k] - out["odorant"][k])) * math.log(10)
                for k in out["kernel"])
    report(worst < 1e-10, "an odorant given by 'mode' and 'huang_rhys' sweeps as the single "
           "mode does (worst relative difference %.1e, limit 1e-10)" % worst, "")


# The demo's twenty-mode tables, engine = fft against engine = sum.
DEMO_TABLES = os.path.join(os.path.dirname(os.path.dirname(os.path.dirname(
    os.path.abspath(__file__)))), "configs", "odorants")
FFT = """[parameters]
gap = %s
reorganization = 60, 120 meV
electronic_coupling = 1 meV
huang_rhys = 0.05
mode = 2950 cm-1
temperature = 310 K
[model]
odorant = velarone
against = velarone-d
engine = %s
[odorant.velarone]
modes = %s/velarone.csv
[odorant.velarone-d]
modes = %s/velarone-d.csv
[output]
data = netcdf
"""


def fft_engine(tmp):
    """The time-domain FFT engine (docs/theory.md section 9.3) against the
    sum engine on a sweep: the issue's agreement is 1e-6 relative wherever the
    rate is above 1e-10 of its maximum; outside its dynamic range the FFT
    sweep must stop with one line instead of storing noise."""
    out, runs = {}, {}
    for eng in ("sum", "fft"):
        d = os.path.join(tmp, "fft-" + eng)
        os.makedirs(d)
        with open(os.path.join(d, "c.ini"), "w") as fh:
            fh.write(FFT % ("200 .. 500 meV, 31 points", eng, DEMO_TABLES, DEMO_TABLES))
        r = subprocess.run([BINARY, "sweep", os.path.join(d, "c.ini"), "--quiet",
                            "--out", os.path.join(d, "out")], capture_output=True, text=True)
        runs[eng] = r
        if r.returncode == 0:
            with netCDF4.Dataset(os.path.join(d, "out", "sweep.nc")) as ds:
                out[eng] = {k: np.array(ds[k][:], dtype=float) for k in ds.variables
                            if ds[k].dimensions == ("reorganization", "gap")}
    report(len(out) == 2, "a twenty-mode sweep runs with engine = sum and engine = fft",
           runs["fft"].stderr.strip())
    if len(out) != 2:
        return
    names = sorted(out["fft"])
    report(names == ["discrimination", "log10_contrast", "log10_discrimination", "log10_k_bare",
                     "log10_k_total"],
           "engine = fft stores the total-rate metrics only", str(names))
    worst = max(np.max(np.abs(out["fft"][k] - out["sum"][k])) * math.log(10)
                for k in ("log10_k_total", "log10_discrimination"))
    report(worst < 1e-6, "FFT sweep against sum sweep: log10_k_total and the discrimination "
           "within 1e-6 relative (worst %.1e)" % worst, "")
    r = subprocess.run([BINARY, "check", os.path.join(tmp, "fft-fft", "c.ini")],
                       capture_output=True, text=True)
    want = ("odorant: velarone (20 modes) in place of the single mode (huang_rhys and mode "
            "unused), against velarone-d (20 modes), FFT engine")
    report(r.returncode == 0 and want in r.stdout.splitlines(),
           "check names the mapped odorant, the one compared against and the engine",
           r.stdout[-300:] + r.stderr)
    d = os.path.join(tmp, "fft-wide")
    os.makedirs(d)
    with open(os.path.join(d, "c.ini"), "w") as fh:
        fh.write(FFT % ("-1000 .. 2000 meV, 61 points", "fft", DEMO_TABLES, DEMO_TABLES))
    r = subprocess.run([BINARY, "sweep", os.path.join(d, "c.ini"), "--quiet",
                        "--out", os.path.join(d, "out")], capture_output=True, text=True)
    # the first failing row in grid order (reorganization 60 meV) is the
    # one named, whichever thread met a later one
    report(r.returncode == 1 and r.stderr.count("\n") == 1
           and "below the FFT's dynamic range" in r.stderr
           and "gap -1000 meV" in r.stderr and "reorganization 60 meV" in r.stderr
           and not os.path.exists(os.path.join(d, "out", "sweep.nc")),
           "beyond its dynamic range the FFT sweep stops: status 1, one line, no sweep.nc",
           "%d %s" % (r.returncode, r.stderr.strip()))


with tempfile.TemporaryDirectory() as top:
    single(top)
    one_mode(top)
    fft_engine(top)
main()
sys.exit(1 if failed() else 0)

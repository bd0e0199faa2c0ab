#!/usr/bin/python3
"""End-to-end check of the isotope metrics and the feasibility window.

Runs `vibrogate sweep` on a hypothetical receptor scenario written here
(three axes: gap, reorganization, temperature; a 2950 cm-1 C-H stretch and
its C-D isotopologue; three conditions) and checks, independently of the
program:

- the heavy isotopologue's total rate at sample points against a separate
  implementation of the Marcus-Levich-Jortner sum with thermal Bessel
  weights (scipy.special.ive; Jortner, J. Chem. Phys. 64, 4860, 1976), at
  hbar omega / 1.362 and, by the Born-Oppenheimer rule, S * 1.362;
- isotope_effect = 10**log10_isotope_effect = k_light / k_heavy;
- feasible = every condition evaluated by numpy on the stored metrics;
- summary.json: the feasible fraction and per-axis ranges from the data,
  and the most robust point against a brute-force distance (every feasible
  point against every infeasible point and every point of the frame one
  step outside the grid, axes scaled to their range, log axes in log units;
  docs/config.md);
- no file but the expected outputs; no NaN or Inf in the data.

Prints one line `PASS: what` or `FAIL: what: why` per check.  Environment:
VG_BUILD (build directory, default "build").
"""
import json
import math
import os
import shutil
import subprocess
import sys
import tempfile

import numpy as np
import netCDF4
from scipy import special

sys.path.insert(0, os.path.join(os.path.dirname(os.path.dirname(os.path.abspath(__file__))), "lib"))
from vgcheck import build_path, report, failed  # noqa: E402

BINARY = build_path("vibrogate")

# CODATA 2018 (exact in SI-2019): k_B/e and hbar/e; 1 cm-1 = h c e^-1 100 eV.
KB_EV = 1.380649e-23 / 1.602176634e-19
HBAR_EVS = 6.62607015e-34 / (2 * math.pi) / 1.602176634e-19
CM1_MEV = 6.62607015e-34 * 299792458.0 * 100 / 1.602176634e-19 * 1000

CONFIG = """[scenario]
title = receptor HR-12 against a hypothetical C-H odorant and its deuterated form
[parameters]
gap = 100 .. 600 meV, 41 points
reorganization = 10 .. 300 meV, 23 points, log
electronic_coupling = 1 meV
huang_rhys = 0.05
mode = 2950 cm-1
temperature = 280, 298.15, 310 K
[isotope]
frequency_ratio = 1.362
[feasibility]
require = log10_ratio > 1
require = tau_assisted < 1 ns
require = isotope_effect > 2
[output]
data = netcdf
"""



def ln_k_total(gap, lam, V, S, hw, T):
    """ln of the thermal MLJ total rate in s^-1 (energies meV), summed over
    every channel within 60 widths of the Gaussian's centre."""
    kT = KB_EV * 1000 * T
    b = hw / kT
    x = S / math.sinh(b / 2)
    c = (gap - lam) / hw
    w = 60 * math.sqrt(2 * lam * kT) / hw + 60
    n = np.arange(math.floor(min(c, 0) - w), math.ceil(max(c, 0) + w) + 1)
    # ln W_n = -S coth(b/2) + n b/2 + ln I_|n|(x), ln I = ln ive + x
    with np.errstate(divide="ignore"):  # ive underflows to 0 far out: weight 0
        lnw = -S / math.tanh(b / 2) + n * b / 2 + np.log(special.ive(np.abs(n), x)) + x
    a = lnw - (gap - lam - n * hw) ** 2 / (4 * lam * kT)
    a = a[np.isfinite(a)]
    m = a.max()
    lnp = math.log(2 * math.pi / HBAR_EVS * (V * 1e-3) ** 2
                   / math.sqrt(4 * math.pi * lam * 1e-3 * kT * 1e-3))
    return lnp + m + math.log(np.exp(a - m).sum())


def positions(values, log):
    v = np.asarray(values, dtype=float)
    if log:
        v = np.log(v)
    return (v - v[0]) / (v[-1] - v[0])


def brute_robust(feas, axes):
    """Largest distance of a feasible point to an infeasible or frame point."""
    pos = [positions(vals, log) for vals, log in axes]
    ext = []
    for p in pos:  # the frame: one step beyond each end
        ext.append(np.concatenate(([p[0] - (p[1] - p[0])], p, [p[-1] + (p[-1] - p[-2])])))
    shape = tuple(len(e) for e in ext)
    src = np.ones(shape, dtype=bool)
    src[tuple(slice(1, -1) for _ in shape)] = ~feas
    grids = np.meshgrid(*ext, indexing="ij")
    sources = np.stack([g[src] for g in grids], axis=1)
    fidx = np.argwhere(feas)
    best, arg = -1.0, None
    for idx in fidx:
        pt = np.array([pos[k][idx[k]] for k in range(len(pos))])
        d = np.sqrt(((sources - pt) ** 2).sum(axis=1)).min()
        if d > best:
            best, arg = d, tuple(idx)
    return best, arg


def main():
    if not os.access(BINARY, os.X_OK):
        report(False, "binary", BINARY + " not built")
        return
    tmp = tempfile.mkdtemp(prefix="vg_window_")
    try:
        ini = os.path.join(tmp, "hr12.ini")
        out = os.path.join(tmp, "out")
        with open(ini, "w") as f:
            f.write(CONFIG)
        r = subprocess.run([BINARY, "sweep", ini, "--out", out, "-q"], capture_output=True,
                           text=True)
        report(r.returncode == 0, "sweep with [isotope] and [feasibility] exits 0",
               r.stderr.strip())
        if r.returncode != 0:
            return
        report(sorted(os.listdir(out)) == ["summary.json", "summary.txt", "sweep.nc"],
               "outputs are sweep.nc, summary.json, summary.txt", str(os.listdir(out)))
        d = netCDF4.Dataset(os.path.join(out, "sweep.nc"))
        d.set_auto_mask(False)
        T = d["temperature"][:]
        lam = d["reorganization"][:]
        gap = d["gap"][:]
        data = {k: np.asarray(d[k][:]) for k in d.variables
                if d[k].dimensions == ("temperature", "reorganization", "gap")}
        d.close()
        finite = all(np.isfinite(v).all() for v in data.values())
        report(finite and len(data) == 11, "11 metrics stored over the grid, all finite",
               "%d metrics" % len(data))

        hw = 2950 * CM1_MEV
        worst = 0.0
        for (t, l, g) in [(0, 0, 0), (1, 5, 17), (2, 11, 20), (1, 22, 40), (0, 14, 33),
                          (2, 3, 9)]:
            ref = ln_k_total(gap[g], lam[l], 1.0, 0.05 * 1.362, hw / 1.362, T[t]) / math.log(10)
            got = data["log10_k_total_heavy"][t, l, g]
            worst = max(worst, abs(got - ref) / max(1.0, abs(ref)))
        report(worst < 1e-9, "log10_k_total_heavy against an independent scipy sum at "
               "hbar omega / 1.362 and S * 1.362 (6 points, worst %.2g, limit 1e-9)" % worst)
        ie = data["isotope_effect"]
        l10 = data["log10_isotope_effect"]
        rel = np.abs(ie / 10 ** l10 - 1).max()
        diff = np.abs(l10 - (data["log10_k_total"] - data["log10_k_total_heavy"])).max()
        report(rel < 1e-12 and diff < 1e-9, "isotope_effect = 10^log10_isotope_effect = "
               "k_light / k_heavy (worst %.2g relative, %.2g in log10)" % (rel, diff))

        want = ((data["log10_ratio"] > 1) & (data["log10_k_assisted"] > 9)
                & (data["log10_isotope_effect"] > math.log10(2)))
        feas = data["feasible"] == 1
        report(np.array_equal(feas, want) and set(np.unique(data["feasible"])) <= {0.0, 1.0},
               "feasible = the three conditions evaluated by numpy (%d of %d points)"
               % (want.sum(), want.size), "%d differ" % (feas != want).sum())

        with open(os.path.join(out, "summary.json")) as f:
            s = json.load(f)
        report(s["points"] == feas.size and s["feasible_points"] == feas.sum()
               and abs(s["fraction_feasible"] - feas.mean()) < 1e-15,
               "summary: feasible fraction %.4f" % feas.mean(), str(s["fraction_feasible"]))
        ok = True
        for name, vals, axis in [("temperature", T, 0), ("reorganization", lam, 1),
                                 ("gap", gap, 2)]:
            idx = np.where(feas.any(axis=tuple(a for a in range(3) if a != axis)))[0]
            lo_hi = [float(vals[idx[0]]), float(vals[idx[-1]])]
            ok = ok and s["axes"][name]["feasible"] == lo_hi
        report(ok, "summary: per-axis feasible ranges are the window's projection",
               json.dumps(s["axes"]))
        best, arg = brute_robust(feas, [(T, False), (lam, True), (gap, False)])
        rp = s["robust_point"]
        got = (list(T).index(rp["temperature_K"]), list(lam).index(rp["reorganization_meV"]),
               list(gap).index(rp["gap_meV"]))
        report(abs(rp["distance_to_edge"] - best) < 1e-12 and got == arg,
               "summary: most robust point against a brute-force distance (%.4f at %s)"
               % (best, arg), "got %.6g at %s" % (rp["distance_to_edge"], got))
        # point names the heavy isotopologue: hbar omega / 1.362 and, by the
        # Born-Oppenheimer rule, S * 1.362 (physics reference)
        pini = os.path.join(tmp, "one.ini")
        with open(pini, "w") as f:
            f.write(CONFIG.replace("gap = 100 .. 600 meV, 41 points", "gap = 400 meV")
                    .replace("reorganization = 10 .. 300 meV, 23 points, log",
                             "reorganization = 30 meV")
                    .replace("temperature = 280, 298.15, 310 K", "temperature = 310 K"))
        r = subprocess.run([BINARY, "point", pini, "--json"], capture_output=True, text=True)
        ok = r.returncode == 0
        if ok:
            h = json.loads(r.stdout)["heavy"]
            ok = (abs(h["mode_meV"] / (2950 * CM1_MEV / 1.362) - 1) < 1e-12
                  and abs(h["huang_rhys"] / (0.05 * 1.362) - 1) < 1e-12)
        report(ok, "point --json names the heavy mode (hbar omega / 1.362) and S * 1.362",
               r.stderr.strip() or r.stdout[:200])
    finally:
        shutil.rmtree(tmp, ignore_errors=True)


main()
sys.exit(1 if failed() else 0)

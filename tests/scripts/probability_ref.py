#!/usr/bin/python3
"""End-to-end check of `vibrogate uncertainty` against a brute-force reference.

Probability map: a hypothetical receptor (invented values) with gap and
reorganization as the map's axes and priors on the Huang-Rhys factor, the
coupling and the mode quantum; the conditions log10_ratio > 0.5 and
tau_total < 10 ns.  For a few cells the probability that both hold is
estimated again here by plain Monte Carlo with numpy's own random draws
(numpy.random.default_rng, another generator and seed than the program's)
and an independent implementation of the rates of docs/theory.md:

    k_n = (2 pi / hbar) V^2 W_n (4 pi lam kT)^-1/2 exp[-(eps - lam - n hw)^2 / (4 lam kT)]
    W_n = exp(-S coth(b/2)) exp(n b/2) I_|n|(S / sinh(b/2)),  b = hw / kT

(Marcus-Levich-Jortner; Jortner, J. Chem. Phys. 64, 4860, 1976), with
I_n(x) = ive(n, x) e^x from scipy.special.ive and the exact SI 2019
constants (h, e, k).  Truncated priors are sampled here by rejection, an
independent route to the same distribution.  Two independent binomial
estimates of one probability differ by less than 3 combined standard
errors sqrt(se1^2 + se2^2) except with probability 0.27 %.

Also checked: the CF-1.8 layout of probability.nc (dimensions named after
the axes in grid order, coordinate variables in meV, units "1"),
probability.csv against probability.nc to the last bit, the same numbers at
1 and 2 threads, no temporary file left, a prior on an axis refused with
exit status 3 and no output, a final name taken by a directory refused
with exit status 4 and the earlier files kept; and the Sobol indices of log10_k_total in a
case whose indices are known by quadrature (scipy.integrate.quad): at
gap 0 and huang_rhys 0 the total is the Marcus rate, additive in
log10 V and a function of T.

Prints one line `PASS: what` or `FAIL: what: why` per check.  Environment:
VG_BUILD (build directory, default "build").
"""
import json
import math
import os
import shutil
import struct
import subprocess
import sys
import tempfile

import numpy as np
import netCDF4
from scipy import integrate, special

sys.path.insert(0, os.path.join(os.path.dirname(os.path.dirname(os.path.abspath(__file__))), "lib"))
from vgcheck import build_path, report, failed  # noqa: E402

BINARY = build_path("vibrogate")

# Exact defining constants of the SI (2019).
SI_H, SI_E, SI_K = 6.62607015e-34, 1.602176634e-19, 1.380649e-23
HBAR_EVS = SI_H / (2 * math.pi * SI_E)
KB_MEV = SI_K / SI_E * 1000.0

MAP_CONFIG = """[scenario]
title = hypothetical receptor OR-7x, probability check
[parameters]
gap = 100 .. 400 meV, 7 points
reorganization = 10 .. 80 meV, 5 points
electronic_coupling = 1 meV
huang_rhys = 0.05
mode = 200 meV
temperature = 300 K
[uncertainty]
huang_rhys = loguniform 0.01 .. 0.2
electronic_coupling = lognormal 1 meV, 0.7
mode = normal 190 meV, 25 meV
samples = 3000
seed = 17
[feasibility]
require = log10_ratio > 0.5
require = tau_total < 10 ns
"""

SOBOL_CONFIG = """[parameters]
gap = 0 meV
reorganization = 600 meV
electronic_coupling = 1 meV
huang_rhys = 0
mode = 200 meV
temperature = 300 K
[uncertainty]
electronic_coupling = loguniform 0.7 .. 1.4 meV
temperature = uniform 250 .. 350 K
metric = log10_k_total
samples = 4096
"""



def run(config_text, out, *extra):
    cfg = os.path.join(out, "case.ini")
    with open(cfg, "w") as f:
        f.write(config_text)
    env = dict(os.environ, SOURCE_DATE_EPOCH="1700000000")
    return subprocess.run([BINARY, "uncertainty", cfg, "--out", os.path.join(out, "o"), "-q"]
                          + list(extra), capture_output=True, text=True, env=env, timeout=900)


# ------------------------------------------------------------ reference ---

def log10_rates(eps, lam, V, S, hw, T):
    """log10 k_total and log10(k_assisted / k_elastic), thermal mode, for
    arrays V, S, hw (meV) at one eps, lam (meV) and T (K)."""
    kT = KB_MEV * T
    b = hw / kT
    x = S / np.sinh(b / 2)
    n = np.arange(-40, 81)[None, :]
    with np.errstate(divide="ignore"):  # ive underflows to 0 far out: ln W = -inf
        lnW = (-S / np.tanh(b / 2))[:, None] + n * (b / 2)[:, None] \
            + np.log(special.ive(np.abs(n), x[:, None])) + x[:, None]
    # prefactor (2 pi / hbar) V^2 (4 pi lam kT)^-1/2 in s^-1, energies in eV
    lnpre = np.log(2 * math.pi / HBAR_EVS * (V * 1e-3) ** 2
                   / math.sqrt(4 * math.pi * lam * 1e-3 * kT * 1e-3))
    lnk = lnpre[:, None] + lnW - (eps - lam - n * hw[:, None]) ** 2 / (4 * lam * kT)
    if not np.all(lnk[:, [0, -1]] < lnk.max(axis=1)[:, None] - 60):
        raise RuntimeError("channel window too small")
    el = lnk[:, n[0] == 0][:, 0]
    others = np.delete(lnk, np.where(n[0] == 0)[0][0], axis=1)
    ln_as = special.logsumexp(others, axis=1)
    ln_tot = np.logaddexp(el, ln_as)
    return ln_tot / math.log(10), (ln_as - el) / math.log(10)


def truncated(sample, lo, hi, rng, m):
    """m draws of sample(rng, m) kept inside [lo, hi] by rejection."""
    out = np.empty(0)
    while out.size < m:
        x = sample(rng, 2 * m)
        out = np.concatenate([out, x[(x >= lo) & (x <= hi)]])
    return out[:m]


def reference_probability(eps, lam, m, rng):
    """P(log10_ratio > 0.5 and log10 k_total > 8), tau < 10 ns being
    k > 1e8 s^-1, over the priors of MAP_CONFIG, from m draws."""
    S = np.exp(rng.uniform(math.log(0.01), math.log(0.2), m))
    V = truncated(lambda r, k: np.exp(r.normal(0.0, 0.7, k)), 0.0, 1000.0, rng, m)
    hw = truncated(lambda r, k: r.normal(190.0, 25.0, k), 1.0, 1000.0, rng, m)
    ltot, lratio = log10_rates(eps, lam, V, S, hw, 300.0)
    hits = np.count_nonzero((lratio > 0.5) & (ltot > 8.0))
    p = hits / m
    return p, math.sqrt(p * (1 - p) / m)


# --------------------------------------------------------------- checks ---

def bits(a):
    return [struct.pack("<d", float(v)) for v in np.ravel(a)]


def check_layout(ds):
    report(ds.Conventions == "CF-1.8", "probability.nc declares CF-1.8", ds.Conventions)
    v = ds.variables["feasible_probability"]
    report(v.dimensions == ("reorganization", "gap"),
           "probability dimensions are the axes in grid order (reorganization, gap)",
           str(v.dimensions))
    report(ds["gap"].units == "meV" and ds["reorganization"].units == "meV"
           and np.allclose(ds["gap"][:], np.linspace(100, 400, 7), rtol=0, atol=1e-12),
           "coordinate variables gap and reorganization in meV", "")
    se = ds.variables["feasible_probability_standard_error"]
    report(v.units == "1" and se.units == "1" and v.long_name and se.long_name
           and v.ancillary_variables == se.name,
           "probability and standard error carry units '1', long_name, ancillary_variables", "")
    p = np.asarray(v[:])
    report(np.all(np.isfinite(p)) and np.all((p >= 0) & (p <= 1)),
           "every probability finite and in [0, 1]", "")


def check_csv(out, ds):
    with open(os.path.join(out, "o", "probability.csv")) as f:
        rows = [line.rstrip("\n").split(",") for line in f]
    head, body = rows[0], rows[1:]
    p = np.asarray(ds["feasible_probability"][:]).ravel()
    col = head.index("feasible_probability")
    ok = len(body) == p.size and bits([float(r[col]) for r in body]) == bits(p)
    report(ok, "probability.csv equals probability.nc to the last bit", "%d rows" % len(body))


def check_cells(ds):
    p = np.asarray(ds["feasible_probability"][:])
    se = np.asarray(ds["feasible_probability_standard_error"][:])
    gaps, lams = np.asarray(ds["gap"][:]), np.asarray(ds["reorganization"][:])
    cells = [(i, j) for i in range(p.shape[0]) for j in range(p.shape[1])
             if 0.1 < p[i, j] < 0.9]
    report(len(cells) >= 3, "at least 3 cells with a probability between 0.1 and 0.9",
           "%d" % len(cells))
    rng = np.random.default_rng(20261201)
    for i, j in cells[::max(1, len(cells) // 5)][:5]:
        ref, ref_se = reference_probability(gaps[j], lams[i], 20000, rng)
        tol = 3 * math.sqrt(se[i, j] ** 2 + ref_se ** 2)
        report(abs(p[i, j] - ref) <= tol,
               "cell gap %g meV, reorganization %g meV: %.4f vs brute force %.4f (3 combined "
               "standard errors %.4f)" % (gaps[j], lams[i], p[i, j], ref, tol), "outside")


def check_map(tmp):
    out = os.path.join(tmp, "map")
    os.makedirs(out)
    r = run(MAP_CONFIG, out, "--threads", "2")
    report(r.returncode == 0, "uncertainty map runs", r.stderr.strip())
    if r.returncode != 0:
        return
    names = sorted(os.listdir(os.path.join(out, "o")))
    report(names == ["probability.csv", "probability.nc"], "only the two outputs, no temporary",
           str(names))
    with netCDF4.Dataset(os.path.join(out, "o", "probability.nc")) as ds:
        check_layout(ds)
        check_csv(out, ds)
        check_cells(ds)
        p2 = np.asarray(ds["feasible_probability"][:])
    r = run(MAP_CONFIG, out, "--threads", "1")
    with netCDF4.Dataset(os.path.join(out, "o", "probability.nc")) as ds:
        p1 = np.asarray(ds["feasible_probability"][:])
    report(r.returncode == 0 and bits(p1) == bits(p2), "same probabilities at 1 and 2 threads")
    fig = os.path.join(tmp, "fig")
    os.makedirs(fig)
    r = run(MAP_CONFIG, fig, "--set", "output.figures=png,svg")
    names = sorted(os.listdir(os.path.join(fig, "o")))
    want = ["map-feasible_probability.png", "map-feasible_probability.svg", "probability.csv",
            "probability.nc"]
    ok = r.returncode == 0 and names == want
    if ok:  # a PNG (its signature, ISO/IEC 15948) and an SVG naming the mapped quantity
        with open(os.path.join(fig, "o", want[0]), "rb") as f:
            ok = f.read(8) == b"\x89PNG\r\n\x1a\n"
        with open(os.path.join(fig, "o", want[1])) as f:
            ok = ok and "<svg" in f.read(4096)
    report(ok, "with figures asked for, the map is drawn as PNG and SVG beside the data",
           "%s %s" % (names, r.stderr.strip()))


def check_prior_on_axis(tmp):
    out = os.path.join(tmp, "bad")
    os.makedirs(out)
    r = run(MAP_CONFIG.replace("mode = normal 190 meV, 25 meV", "gap = uniform 150 .. 250 meV"),
            out)
    ok = r.returncode == 3 and "'gap' has a prior and is also an axis" in r.stderr \
        and not os.path.exists(os.path.join(out, "o"))
    report(ok, "a prior on an axis: exit status 3, one message, no output",
           "%d %s" % (r.returncode, r.stderr.strip()))


def check_commit(tmp):
    """A directory at one final name: exit status 4 before any rename, the
    earlier probability.nc untouched, no temporary left."""
    out = os.path.join(tmp, "commit")
    os.makedirs(out)
    r = run(MAP_CONFIG, out)
    nc = os.path.join(out, "o", "probability.nc")
    with open(nc, "rb") as f:
        before = f.read()
    os.remove(os.path.join(out, "o", "probability.csv"))
    os.mkdir(os.path.join(out, "o", "probability.csv"))
    r = run(MAP_CONFIG.replace("seed = 17", "seed = 18"), out)
    with open(nc, "rb") as f:
        same = f.read() == before
    names = sorted(os.listdir(os.path.join(out, "o")))
    report(r.returncode == 4 and "probability.csv': is a directory" in r.stderr and same
           and names == ["probability.csv", "probability.nc"],
           "final name taken by a directory: exit status 4, earlier output kept, no temporary",
           "%d %s %s" % (r.returncode, r.stderr.strip(), names))


def marcus_t_term(T, lam=600.0):
    kT = KB_MEV * T
    return (-0.5 * math.log(T) - lam / (4 * kT)) / math.log(10)


def check_sobol(tmp):
    out = os.path.join(tmp, "sobol")
    os.makedirs(out)
    r = run(SOBOL_CONFIG, out, "--json", "--set", "output.figures=png,svg")
    report(r.returncode == 0, "uncertainty Sobol runs", r.stderr.strip())
    if r.returncode != 0:
        return
    names = sorted(os.listdir(os.path.join(out, "o")))
    report(names == ["sobol-log10_k_total.png", "sobol-log10_k_total.svg", "uncertainty.json",
                     "uncertainty.txt"], "Sobol outputs: table, JSON and the chart, nothing else",
           str(names))
    res = json.loads(r.stdout)
    with open(os.path.join(out, "o", "uncertainty.json")) as f:
        report(json.load(f) == res, "uncertainty.json holds what --json printed")
    # variance of 2 log10 V, V log-uniform on [0.7, 1.4]: log10 V uniform over log10 2
    vv = 4 * math.log10(2.0) ** 2 / 12
    m1 = integrate.quad(marcus_t_term, 250, 350)[0] / 100
    m2 = integrate.quad(lambda t: marcus_t_term(t) ** 2, 250, 350)[0] / 100
    vt = m2 - m1 * m1
    want = {"electronic_coupling": vv / (vv + vt), "temperature": vt / (vv + vt)}
    for p in res["parameters"]:
        w = want[p["name"]]
        report(abs(p["S1"] - w) <= 0.01 and abs(p["ST"] - w) <= 0.01,
               "Sobol indices of %s: S1 %.4f, ST %.4f vs %.4f by quadrature (within 0.01)"
               % (p["name"], p["S1"], p["ST"], w), "outside")


def main():
    if not os.path.exists(BINARY):
        report(False, "vibrogate binary", "missing: " + BINARY)
        return 1
    tmp = tempfile.mkdtemp(prefix="vg-prob-")
    try:
        check_map(tmp)
        check_prior_on_axis(tmp)
        check_commit(tmp)
        check_sobol(tmp)
    finally:
        shutil.rmtree(tmp)
    return 1 if failed() else 0


if __name__ == "__main__":
    sys.exit(main())

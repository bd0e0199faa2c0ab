#!/usr/bin/python3
"""End-to-end check of `vibrogate sensitivity` against an mpmath reference.

- The elasticities in the JSON output are compared with d ln M / d ln p
  computed here from the model's formulas (docs/theory.md 2.1-2.2: Marcus
  Gaussians per channel, thermal weights exp(-S coth(b/2)) e^{n b/2}
  I_|n|(S / sinh(b/2)), frozen Poisson weights; heavy isotopologue under the
  Born-Oppenheimer rule: hbar omega / r and S r) at 40 digits with
  mpmath.besseli and differentiated by mpmath.diff; the prefactor
  constants cancel from every elasticity, V^2 and (lambda kT)^-1/2 do not.
  k_B = 1.380649e-23 / 1.602176634e-19 eV/K (exact SI 2019).
- Each reported error must cover the actual error (plus 1e-8 relative for
  the kernel's own agreement with the reference formulas, whose sums are
  truncated at tolerance 1e-15), and be below 1e-6 relative.
- The table and the JSON on stdout are byte for byte sensitivity.txt and
  sensitivity.json in the output directory; the charts asked for are
  written, nothing else (no temporary file); no NaN or Inf anywhere.
- Errors: a parameter with several values is exit status 3 with one line
  and no output directory; an output directory that cannot be created is
  exit status 4 and leaves no file.
- With SOURCE_DATE_EPOCH = 1000000000 the PNG carries 2001-09-09T01:46:40Z
  (date -u -d @1000000000), and two runs give identical files.

Prints one line `PASS: what` or `FAIL: what: why` per check.  Environment:
VG_BUILD (build directory, default "build").
"""
import json
import os
import re
import shutil
import subprocess
import sys
import tempfile

import mpmath as mp

sys.path.insert(0, os.path.join(os.path.dirname(os.path.dirname(os.path.abspath(__file__))), "lib"))
from vgcheck import build_path, report  # noqa: E402

BINARY = build_path("vibrogate")
KB_MEV = mp.mpf("1.380649e-23") / mp.mpf("1.602176634e-19") * 1000  # meV/K, exact SI
KEYS = ["gap", "reorganization", "electronic_coupling", "huang_rhys", "mode", "temperature"]



mp.mp.dps = 40
NMAX = 80  # channels -NMAX..NMAX: W_n < 1e-60 beyond for the points below


def weights(S, hw, T, frozen):
    if S == 0:
        return {0: mp.mpf(1)}
    if frozen:
        return {n: mp.exp(-S) * S ** n / mp.factorial(n) for n in range(0, NMAX + 1)}
    b = hw / (KB_MEV * T)
    x = S / mp.sinh(b / 2)
    return {n: mp.exp(-S * mp.coth(b / 2) + n * b / 2) * mp.besseli(abs(n), x)
            for n in range(-NMAX, NMAX + 1)}


def rates(p, frozen):
    """(k_elastic, k_assisted) up to the constant 2 pi / hbar (4 pi)^-1/2."""
    gap, lam, V, S, hw, T = p
    kT = KB_MEV * T
    pre = V ** 2 / mp.sqrt(lam * kT)
    w = weights(S, hw, T, frozen)
    k = {n: pre * wn * mp.exp(-(gap - lam - n * hw) ** 2 / (4 * lam * kT)) for n, wn in w.items()}
    return k[0], mp.fsum(v for n, v in k.items() if n != 0)


def ln_metric(name, p, frozen, ratio):
    if name == "k_total":
        ke, ka = rates(p, frozen)
        return mp.log(ke + ka)
    if name == "ratio":
        ke, ka = rates(p, frozen)
        return mp.log(ka / ke)
    gap, lam, V, S, hw, T = p  # isotope effect, Born-Oppenheimer rule
    heavy = [gap, lam, V, S * ratio, hw / ratio, T]
    return mp.log(sum(rates(p, frozen))) - mp.log(sum(rates(heavy, frozen)))


def elasticity(name, p, i, frozen, ratio):
    p = [mp.mpf(repr(x)) for x in p]

    def f(u):
        q = list(p)
        q[i] = p[i] + u if i == 0 else p[i] * mp.exp(u)
        return ln_metric(name, q, frozen, ratio)
    d = mp.diff(f, 0)
    return float(p[0] * d) if i == 0 else float(d)


def write_config(path, p, frozen=False, isotope=None, figures="png, svg"):
    with open(path, "w") as fh:
        fh.write("[scenario]\ntitle = sensitivity check (invented values)\n[parameters]\n")
        fh.write("gap = %r meV\nreorganization = %r meV\nelectronic_coupling = %r meV\n"
                 "huang_rhys = %r\nmode = %r meV\ntemperature = %r K\n" % tuple(p))
        fh.write("[model]\ntolerance = 1e-15\nmode_statistics = %s\n"
                 % ("frozen" if frozen else "thermal"))
        if isotope:
            fh.write("[isotope]\nfrequency_ratio = %r\n" % isotope)
        fh.write("[output]\nfigures = %s\n" % figures)


def run(args, env=None):
    e = dict(os.environ)
    e.update(env or {})
    return subprocess.run([BINARY] + args, capture_output=True, text=True, env=e)


def no_nan(text):
    return re.search(r"\b(nan|inf|infinity)\b", text, re.IGNORECASE) is None


def check_reference(tmp, label, p, frozen, isotope):
    cfg = os.path.join(tmp, label + ".ini")
    out = os.path.join(tmp, label + "-out")
    write_config(cfg, p, frozen, isotope)
    r = run(["sensitivity", cfg, "--json", "-q", "--out", out])
    report(r.returncode == 0, label + ": exit status 0", "status %d: %s" % (r.returncode, r.stderr))
    if r.returncode != 0:
        return
    report(no_nan(r.stdout), label + ": no NaN or Inf in the JSON")
    doc = json.loads(r.stdout)
    names = ["k_total", "ratio"] + (["isotope_effect"] if isotope else [])
    report(sorted(doc["metrics"]) == sorted(names), label + ": metrics " + ", ".join(names),
           "got %s" % sorted(doc["metrics"]))
    bad = []
    for name in names:
        m = doc["metrics"][name]
        for i, key in enumerate(KEYS):
            e = m["elasticities"][key]
            ref = elasticity(name, p, i, frozen, isotope)
            got, err = e["elasticity"], e["error"]
            allowed = err + 1e-8 * (1 + abs(ref))
            if not (abs(got - ref) <= allowed and err <= 1e-6 * (1 + abs(ref))):
                bad.append("%s/%s: got %.12g +- %.2g, reference %.12g" % (name, key, got, err, ref))
    report(not bad, label + ": elasticities within their errors of the mpmath reference",
           "; ".join(bad))


def main():
    if not os.access(BINARY, os.X_OK):
        report(False, "binary", BINARY + " is missing (run make)")
        return
    tmp = tempfile.mkdtemp(prefix="vg-sens-")
    try:
        # invented operating points (demo-like receptor and odorant modes)
        check_reference(tmp, "near resonance, isotope", [400.0, 30.0, 1.0, 0.05, 365.75, 310.0],
                        False, 1.362)
        check_reference(tmp, "low mode, thermal", [210.0, 95.0, 0.4, 1.7, 42.0, 295.0], False, None)
        check_reference(tmp, "uphill, frozen", [-80.0, 160.0, 3.0, 0.6, 180.0, 250.0], True, None)

        # table and JSON on stdout are the files; the charts and nothing else
        cfg = os.path.join(tmp, "files.ini")
        out = os.path.join(tmp, "files-out")
        write_config(cfg, [400.0, 30.0, 1.0, 0.05, 365.75, 310.0], isotope=1.362)
        env = {"SOURCE_DATE_EPOCH": "1000000000"}
        t = run(["sensitivity", cfg, "--out", out], env)
        j = run(["sensitivity", cfg, "--out", out, "--json", "-q"], env)
        report(t.returncode == 0 and j.returncode == 0, "files: exit status 0",
               t.stderr + j.stderr)
        names = sorted(os.listdir(out)) if os.path.isdir(out) else []
        want = sorted(["sensitivity.txt", "sensitivity.json"] +
                      ["sensitivity-%s.%s" % (m, x) for m in ["k_total", "ratio", "isotope_effect"]
                       for x in ["png", "svg"]])
        report(names == want, "files: the reports and the charts asked for, nothing else",
               "got %s" % names)
        if names == want:
            with open(os.path.join(out, "sensitivity.txt")) as fh:
                report(fh.read() == t.stdout, "files: sensitivity.txt is the table printed")
            with open(os.path.join(out, "sensitivity.json")) as fh:
                report(fh.read() == j.stdout, "files: sensitivity.json is the JSON printed")
            rows = [k for k in KEYS if re.search(r"^  %s\s" % k, t.stdout, re.M)]
            report(len(rows) >= 6 and no_nan(t.stdout), "files: table has six parameter rows, "
                   "no NaN", t.stdout[:400])
            with open(os.path.join(out, "sensitivity-ratio.png"), "rb") as fh:
                png = fh.read()
            report(png[:8] == b"\x89PNG\r\n\x1a\n" and b"2001-09-09T01:46:40Z" in png,
                   "files: PNG with the SOURCE_DATE_EPOCH time stamp")
            before = {n: open(os.path.join(out, n), "rb").read() for n in names}
            run(["sensitivity", cfg, "--out", out, "-q"], env)
            after = {n: open(os.path.join(out, n), "rb").read() for n in names}
            report(before == after, "files: a second run writes identical files",
                   "differ: %s" % [n for n in names if before[n] != after[n]])

        # zero parameters: reported, not garbage
        cfg = os.path.join(tmp, "zero.ini")
        write_config(cfg, [0.0, 120.0, 1.0, 0.0, 200.0, 300.0], figures="none")
        r = run(["sensitivity", cfg, "--json", "-q", "--out", os.path.join(tmp, "zero-out")])
        ok = r.returncode == 0 and no_nan(r.stdout)
        if ok:
            doc = json.loads(r.stdout)
            kt = doc["metrics"]["k_total"]["elasticities"]
            ok = (doc["metrics"]["ratio"]["defined"] is False
                  and kt["huang_rhys"]["kind"] == "parameter_zero"
                  and kt["huang_rhys"]["elasticity"] == 0
                  and kt["gap"]["kind"] == "parameter_zero"
                  and kt["electronic_coupling"]["elasticity"] == 2)
        report(ok, "gap = 0 and huang_rhys = 0: parameter_zero entries, ratio undefined",
               r.stdout[:600] + r.stderr)

        # errors
        cfg = os.path.join(tmp, "axis.ini")
        out = os.path.join(tmp, "axis-out")
        write_config(cfg, [400.0, 30.0, 1.0, 0.05, 365.75, 310.0])
        r = run(["sensitivity", cfg, "--out", out, "--set", "parameters.gap=0 .. 600 meV, 7 points"])
        report(r.returncode == 3 and r.stderr.count("\n") == 1
               and "'sensitivity' needs every parameter scalar" in r.stderr
               and not os.path.exists(out),
               "an axis: exit status 3, one line, no output", "%d %r" % (r.returncode, r.stderr))
        blocker = os.path.join(tmp, "a-file")
        open(blocker, "w").close()
        r = run(["sensitivity", cfg, "--out", os.path.join(blocker, "sub")])
        report(r.returncode == 4 and r.stderr.startswith("vibrogate: ") and r.stdout == "",
               "unwritable output: exit status 4, nothing printed",
               "%d %r" % (r.returncode, r.stderr))
    finally:
        shutil.rmtree(tmp)


main()

#!/usr/bin/python3
"""End-to-end check of the data files of `vibrogate sweep`.

Runs the demo scenario (configs/demo.ini) into temporary directories and
reads sweep.nc with netCDF4-python and sweep.csv with a plain line parser:

- CF-1.8 layout: one dimension and coordinate variable per axis in the axis
  order of vg_grid.h, canonical units of the physics conventions (meV, K,
  "1"), scalar variables for the other parameters, metric variables over all
  axes with units, long_name, _FillValue and a "coordinates" list (CF-1.8
  sections 2.6, 3.1, 3.3, 5.7; NetCDF's default double fill, netcdf.h);
- global attributes (Conventions, title, source, history, config_text,
  constants checked against CODATA 2018);
- every metric equals its CSV column to the last bit (float() of the
  "%.17g" text, compared as 64-bit patterns), empty CSV fields exactly where
  the NetCDF value is the fill value, no NaN or Inf anywhere;
- 1 and 2 threads give identical CSV bytes and identical NetCDF values;
- `--set parameters.temperature=310 K` (and 287.5 K when the demo is at
  310 K already, so that the column visibly changes) sets the temperature
  column and is recorded in config_overrides.

Prints one line `PASS: what` or `FAIL: what: why` per check.  Environment:
VG_BUILD (build directory, default "build").
"""
import math
import os
import shutil
import subprocess
import sys
import tempfile

import numpy as np
import netCDF4

sys.path.insert(0, os.path.join(os.path.dirname(os.path.dirname(os.path.abspath(__file__))), "lib"))
from vgcheck import ROOT, build_path, report, failed  # noqa: E402

BINARY = build_path("vibrogate")
CONFIG = os.path.join(ROOT, "configs", "demo.ini")

# Axis order, slowest first (vg_grid.h) and canonical units (docs/theory.md table).
AXIS_ORDER = ["temperature", "mode", "huang_rhys", "electronic_coupling",
              "reorganization", "gap"]
UNITS = {"gap": "meV", "reorganization": "meV", "electronic_coupling": "meV",
         "huang_rhys": "1", "mode": "meV", "temperature": "K"}
# CSV parameter columns, in CSV order (vg_output.h / docs).
CSV_PARAMS = ["gap_meV", "reorganization_meV", "electronic_coupling_meV",
              "huang_rhys", "mode_meV", "temperature_K"]
CSV_KEYS = ["gap", "reorganization", "electronic_coupling", "huang_rhys", "mode",
            "temperature"]
NC_FILL_DOUBLE = 9.9692099683868690e+36  # netcdf.h



def run_sweep(out, *extra):
    cmd = [BINARY, "sweep", CONFIG, "--out", out, "--quiet"] + list(extra)
    p = subprocess.run(cmd, cwd=ROOT, capture_output=True, text=True, timeout=900)
    return p.returncode, p.stderr.strip()


def read_csv(path):
    """Header list and rows as lists of strings (empty fields kept)."""
    with open(path, "r", newline="") as f:
        text = f.read()
    lines = text.split("\n")
    if lines and lines[-1] == "":
        lines.pop()
    return lines[0].split(","), [ln.split(",") for ln in lines[1:]], text


def bits(a):
    return np.ascontiguousarray(np.asarray(a, dtype=np.float64)).view(np.uint64)


def param_names(ds):
    return [k for k in AXIS_ORDER if k in ds.variables]


def metric_names(ds):
    return [v for v in ds.variables if v not in AXIS_ORDER]


def raw(var):
    var.set_auto_maskandscale(False)
    return np.array(var[...], dtype=np.float64)


def check_globals(ds):
    a = ds.__dict__
    report(ds.file_format == "NETCDF4", "netcdf: NetCDF-4 format", ds.file_format)
    report(a.get("Conventions") == "CF-1.8", "netcdf: Conventions CF-1.8", a.get("Conventions"))
    report(bool(a.get("title")), "netcdf: title present")
    report(str(a.get("source", "")).startswith("vibrogate "), "netcdf: source",
           a.get("source"))
    report(bool(a.get("history")), "netcdf: history present")
    with open(CONFIG, "r") as f:
        report(a.get("config_text") == f.read(), "netcdf: config_text is the config file",
               "differs")
    report("model prediction" in str(a.get("comment", "")), "netcdf: comment says model predictions")
    report(a.get("mode_statistics") in ("thermal", "frozen"), "netcdf: mode_statistics",
           a.get("mode_statistics"))
    tol = a.get("tolerance")
    report(tol is not None and 0 < float(tol) < 1, "netcdf: tolerance", tol)
    report("CODATA 2018" in str(a.get("physical_constants", "")), "netcdf: constants named")
    # CODATA 2018: k_B = 8.617333262e-5 eV/K, hbar = 6.582119569e-16 eV s.
    kb, hbar = a.get("k_B_eV_per_K"), a.get("hbar_eV_s")
    report(kb is not None and abs(float(kb) / 8.617333262e-5 - 1) < 1e-9,
           "netcdf: k_B is CODATA 2018", kb)
    report(hbar is not None and abs(float(hbar) / 6.582119569e-16 - 1) < 1e-9,
           "netcdf: hbar is CODATA 2018", hbar)
    report("config_overrides" not in a, "netcdf: no config_overrides without --set")


def check_layout(ds):
    dims = list(ds.dimensions)
    want = [k for k in AXIS_ORDER if k in dims]
    report(dims == want and len(dims) > 0, "netcdf: dimensions in axis order", dims)
    report(sorted(param_names(ds)) == sorted(AXIS_ORDER), "netcdf: all six parameters stored",
           param_names(ds))
    bad = []
    for k in param_names(ds):
        v = ds.variables[k]
        shape_ok = v.dimensions == ((k,) if k in dims else ())
        if not shape_ok or v.getncattr("units") != UNITS[k] or not v.getncattr("long_name"):
            bad.append(k)
    report(not bad, "netcdf: coordinate/scalar variables, units and long_name", bad)
    # CF-1.8 section 1.3: coordinate variables are strictly monotonic.
    bad = [k for k in dims if not (np.all(np.diff(raw(ds.variables[k])) > 0)
                                   or np.all(np.diff(raw(ds.variables[k])) < 0))]
    report(not bad, "netcdf: coordinate variables strictly monotonic", bad)
    scalars = sorted(k for k in AXIS_ORDER if k not in dims)
    bad = []
    for m in metric_names(ds):
        v = ds.variables[m]
        a = v.__dict__
        if (v.dimensions != tuple(dims) or v.dtype != np.float64 or not a.get("units")
                or not a.get("long_name") or a.get("_FillValue") != NC_FILL_DOUBLE
                or sorted(str(a.get("coordinates", "")).split()) != scalars):
            bad.append(m)
    report(metric_names(ds) and not bad, "netcdf: metric variables (dims, units, _FillValue)", bad)


def check_finite(ds, rows):
    bad = [n for n in ds.variables
           if not np.all(np.isfinite(raw(ds.variables[n])))]
    report(not bad, "netcdf: no NaN or Inf", bad)
    bad = 0
    for r in rows:
        for x in r:
            if x and not math.isfinite(float(x)):
                bad += 1
    report(bad == 0, "csv: no NaN or Inf", "%d fields" % bad)


def check_csv_params(ds, header, rows):
    report(header[:6] == CSV_PARAMS, "csv: parameter columns", header[:6])
    dims = list(ds.dimensions)
    shape = [len(ds.dimensions[d]) for d in dims]
    npts = int(np.prod(shape)) if shape else 1
    report(len(rows) == npts, "csv: one row per grid point", "%d rows, %d points" % (len(rows), npts))
    if len(rows) != npts:
        return
    idx = np.unravel_index(np.arange(npts), shape) if shape else ()
    bad = []
    for c, key in enumerate(CSV_KEYS):
        vals = raw(ds.variables[key])
        want = vals[idx[dims.index(key)]] if key in dims else np.full(npts, float(vals))
        got = np.array([float(r[c]) for r in rows])
        if not np.array_equal(bits(got), bits(want)):
            bad.append(key)
    report(not bad, "csv: parameter columns equal the NetCDF coordinates bit for bit", bad)


def check_csv_metrics(ds, header, rows):
    names = metric_names(ds)
    report(header[6:] == names, "csv: metric columns are the NetCDF metrics", header[6:])
    if header[6:] != names:
        return
    bad = []
    for j, m in enumerate(names):
        nc = raw(ds.variables[m]).ravel()  # C order = flat grid order
        col = [r[6 + j] for r in rows]
        fill = np.array([x == "" for x in col])
        got = np.array([float(x) if x else NC_FILL_DOUBLE for x in col])
        if not (np.array_equal(fill, nc == NC_FILL_DOUBLE)
                and np.array_equal(bits(got), bits(nc))):
            bad.append(m)
    report(not bad, "csv: every metric equals the NetCDF value to the last bit", bad)


def check_one_run(out):
    nc_path, csv_path = os.path.join(out, "sweep.nc"), os.path.join(out, "sweep.csv")
    left = sorted(os.listdir(out))
    data = [n for n in left if not n.startswith("map-")]
    # the demo also draws its maps (configs/demo.ini [output] figures)
    report(data == ["sweep.csv", "sweep.nc"] and not any(n.startswith(".") for n in left),
           "sweep: the two data files (and maps), no temporary file",
           left)
    if not (os.path.exists(nc_path) and os.path.exists(csv_path)):
        return
    header, rows, _ = read_csv(csv_path)
    with netCDF4.Dataset(nc_path) as ds:
        check_globals(ds)
        check_layout(ds)
        check_finite(ds, rows)
        check_csv_params(ds, header, rows)
        check_csv_metrics(ds, header, rows)


def same_nc_values(a, b):
    with netCDF4.Dataset(a) as da, netCDF4.Dataset(b) as db:
        if list(da.variables) != list(db.variables):
            return False
        return all(np.array_equal(bits(raw(da.variables[n])), bits(raw(db.variables[n])))
                   for n in da.variables)


def check_threads(tmp):
    one, two = os.path.join(tmp, "t1"), os.path.join(tmp, "t2")
    r1, r2 = run_sweep(one, "--threads", "1"), run_sweep(two, "--threads", "2")
    if not report(r1[0] == 0 and r2[0] == 0, "threads: 1 and 2 threads run", "%s %s" % (r1, r2)):
        return
    with open(os.path.join(one, "sweep.csv"), "rb") as f1, \
            open(os.path.join(two, "sweep.csv"), "rb") as f2:
        report(f1.read() == f2.read(), "threads: identical CSV bytes", "files differ")
    report(same_nc_values(os.path.join(one, "sweep.nc"), os.path.join(two, "sweep.nc")),
           "threads: identical NetCDF values", "values differ")


def check_one_set(tmp, value, base, base_rows):
    setting = "parameters.temperature=%g K" % value
    out = os.path.join(tmp, "set%g" % value)
    rc, err = run_sweep(out, "--set", setting)
    if not report(rc == 0, "set: sweep with --set %s runs" % setting, err):
        return
    header, rows, _ = read_csv(os.path.join(out, "sweep.csv"))
    temps = set(float(r[header.index("temperature_K")]) for r in rows)
    report(temps == {value}, "set: temperature column is %g K" % value, sorted(temps)[:5])
    if value not in base:
        report(temps != base, "set: temperature column changed from the demo's",
               "before %s, after %s" % (sorted(base)[:5], sorted(temps)[:5]))
    report(len(rows) * len(base) == len(base_rows), "set: the other axes unchanged",
           "%d rows vs %d" % (len(rows), len(base_rows)))
    with netCDF4.Dataset(os.path.join(out, "sweep.nc")) as ds:
        ov = ds.__dict__.get("config_overrides", "")
        report(setting in ov, "set: config_overrides records %s" % setting, ov)
        t = ds.variables["temperature"]
        report(t.dimensions == () and float(raw(t)) == value,
               "set: temperature is a scalar %g K" % value, t.dimensions)
        report(t.__dict__.get("comment") == "set on the command line (--set)",
               "set: temperature notes its origin", t.__dict__.get("comment"))


def check_set(tmp, base_out):
    """--set parameters.temperature=310 K; the demo itself is at 310 K, so
    also 287.5 K, which must change the column."""
    header, base_rows, _ = read_csv(os.path.join(base_out, "sweep.csv"))
    col = header.index("temperature_K")
    base = set(float(r[col]) for r in base_rows)
    for value in [310.0] + ([287.5] if base == {310.0} else []):
        check_one_set(tmp, value, base, base_rows)


def main():
    if not os.access(BINARY, os.X_OK):
        report(False, "e2e data", "program '%s' not found (run make first)" % BINARY)
        return 1
    if not os.path.isfile(CONFIG):
        report(False, "e2e data", "demo config '%s' not found" % CONFIG)
        return 1
    tmp = tempfile.mkdtemp(prefix="vg_e2e_data.")
    try:
        base = os.path.join(tmp, "base")
        rc, err = run_sweep(base)
        if report(rc == 0, "sweep: demo runs", "status %d: %s" % (rc, err)):
            check_one_run(base)
            check_threads(tmp)
            check_set(tmp, base)
    finally:
        shutil.rmtree(tmp, ignore_errors=True)
    return 1 if failed() else 0


if __name__ == "__main__":
    sys.exit(main())

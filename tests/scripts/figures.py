"""Figure tests: file metadata, reproducibility, rendering from a saved data
file, and pixel probes against the colour map and the rate functions.

References: the PNG specification (ISO/IEC 15948, W3C PNG 2nd ed.) for the
chunk layout, CRC and filters; pdfinfo (poppler-utils) for the PDF; Python's
XML parser for the SVG.  Expected colours come from the colour map's table
as the figure module is specified to use it (cell value -> position in the
colour range -> linear interpolation in the table); the dominance boundary
is located independently by bisection on the rate functions (rate_dump).
Prints PASS:/FAIL: lines.
"""
import os
import shutil
import struct
import subprocess
import sys
import tempfile
import xml.etree.ElementTree as ET
import zlib

import numpy as np

B = os.environ.get("VG_BUILD", "build")
VG = os.path.join(B, "vibrogate")
PROBE = os.path.join(B, "tests", "figure_probe")
DUMP = os.path.join(B, "tests", "rate_dump")
CFG = "tests/figures/probe.ini"
EPOCH = "1700000000"  # 2023-11-14T22:13:20Z
failures = 0


def check(ok, what, why=""):
    global failures
    print(("PASS: " if ok else "FAIL: ") + what + ("" if ok else ": " + str(why)))
    failures += 0 if ok else 1


def run(args, env_extra=None):
    env = dict(os.environ)
    env.update(env_extra or {})
    return subprocess.run(args, capture_output=True, text=True, env=env)


def png_chunks(path):
    data = open(path, "rb").read()
    assert data[:8] == b"\x89PNG\r\n\x1a\n", "not a PNG signature"
    pos, chunks = 8, []
    while pos < len(data):
        (n,) = struct.unpack(">I", data[pos:pos + 4])
        typ = data[pos + 4:pos + 8]
        body = data[pos + 8:pos + 8 + n]
        (crc,) = struct.unpack(">I", data[pos + 8 + n:pos + 12 + n])
        chunks.append((typ.decode("latin-1"), body, crc == zlib.crc32(typ + body) & 0xFFFFFFFF))
        pos += 12 + n
    return chunks


def itxt(chunks):
    out = {}
    for typ, body, _ in chunks:
        if typ != "iTXt":
            continue
        key, rest = body.split(b"\0", 1)
        comp, _method = rest[0], rest[1]
        rest = rest[2:]
        _lang, rest = rest.split(b"\0", 1)
        _tkey, text = rest.split(b"\0", 1)
        out[key.decode("latin-1")] = (zlib.decompress(text) if comp else text).decode("utf-8")
    return out


def png_pixels(chunks):
    """Decode an 8-bit RGB, non-interlaced PNG (filters per the PNG spec)."""
    ihdr = next(b for t, b, _ in chunks if t == "IHDR")
    w, h, depth, ctype, _c, _f, inter = struct.unpack(">IIBBBBB", ihdr)
    assert depth == 8 and ctype == 2 and inter == 0, "expected 8-bit RGB, not interlaced"
    raw = zlib.decompress(b"".join(b for t, b, _ in chunks if t == "IDAT"))
    bpp, stride = 3, 3 * w
    img = np.zeros((h, stride), dtype=np.int32)
    prev = np.zeros(stride, dtype=np.int32)
    for y in range(h):
        ft = raw[y * (stride + 1)]
        line = np.frombuffer(raw, dtype=np.uint8, count=stride, offset=y * (stride + 1) + 1).astype(np.int32)
        cur = np.zeros(stride, dtype=np.int32)
        if ft in (0, 2):
            cur = (line + (prev if ft == 2 else 0)) & 255
        else:
            for x in range(stride):
                a = cur[x - bpp] if x >= bpp else 0
                b = prev[x]
                c = prev[x - bpp] if x >= bpp else 0
                if ft == 1:
                    p = a
                elif ft == 3:
                    p = (a + b) // 2
                else:  # Paeth
                    pa, pb, pc = abs(b - c), abs(a - c), abs(a + b - 2 * c)
                    p = a if pa <= pb and pa <= pc else (b if pb <= pc else c)
                cur[x] = (line[x] + p) & 255
        img[y] = cur
        prev = cur
    return img.reshape(h, w, 3)


def probe_geometry(nc, metric):
    r = run([PROBE, nc, metric])
    assert r.returncode == 0, r.stderr
    lines = r.stdout.split("\n")
    g = lines[0].split()[1:]
    keys = "W H ncol nrow x0 y0 w h gapx gapy xlo xhi ylo yhi xlog ylog xscale yscale lo hi clo chi".split()
    geom = dict(zip(keys, [float(v) for v in g]))
    cmap = np.array([[float(v) for v in l.split()[2:]] for l in lines[1:] if l.startswith("cmap")])
    return geom, cmap


def cmap_colour(cmap, t):
    t = min(max(t, 0.0), 1.0) * (len(cmap) - 1)
    i = min(int(t), len(cmap) - 2)
    f = t - i
    return np.rint(255 * ((1 - f) * cmap[i] + f * cmap[i + 1]))


def main():
    tmp = tempfile.mkdtemp()
    try:
        body(tmp)
    finally:
        shutil.rmtree(tmp)
    return 0


def body(tmp):
    a, b = os.path.join(tmp, "a"), os.path.join(tmp, "b")
    r = run([VG, "sweep", CFG, "--out", a, "--quiet"], {"SOURCE_DATE_EPOCH": EPOCH})
    check(r.returncode == 0, "sweep with figures succeeds", r.stderr)
    if r.returncode:
        return
    names = sorted(os.listdir(a))
    want = sorted(["sweep.nc"] + ["map-%s.%s" % (m, e) for m in ("log10_ratio", "assisted_fraction")
                                  for e in ("png", "pdf", "svg")])
    check(names == want, "sweep writes one file per map and format", names)

    # PNG chunks (PNG spec: CRC-32 over type and data; pHYs unit 1 = metre).
    png = os.path.join(a, "map-log10_ratio.png")
    ch = png_chunks(png)
    check(all(ok for _, _, ok in ch), "every PNG chunk has a valid CRC")
    check(ch[0][0] == "IHDR" and ch[-1][0] == "IEND", "IHDR first, IEND last")
    w, h = struct.unpack(">II", ch[0][1][:8])
    check(w == 700, "PNG width = 7 in x 100 dpi", w)
    phys = [b for t, b, _ in ch if t == "pHYs"]
    ppm = round(100 / 0.0254)
    check(phys and struct.unpack(">IIB", phys[0]) == (ppm, ppm, 1), "pHYs = 100 dpi in pixels per metre", phys)
    check(any(t == "sRGB" for t, _, _ in ch), "sRGB chunk present")
    tx = itxt(ch)
    cfg_text = open(CFG, encoding="utf-8").read()
    check(tx.get("vibrogate config") == cfg_text, "the config text is recoverable from the PNG")
    check(tx.get("Software", "").startswith("vibrogate "), "Software chunk", tx.get("Software"))
    check(tx.get("Creation Time") == "2023-11-14T22:13:20Z", "Creation Time from SOURCE_DATE_EPOCH", tx.get("Creation Time"))
    check("Figure probe" in tx.get("Title", ""), "Title chunk", tx.get("Title"))

    # PDF through poppler's pdfinfo; SVG through an XML parser.
    pdf = os.path.join(a, "map-log10_ratio.pdf")
    r = run(["pdfinfo", pdf])
    check(r.returncode == 0, "pdfinfo opens the PDF", r.stderr)
    info = dict(l.split(":", 1) for l in r.stdout.splitlines() if ":" in l)
    check(info.get("Creator", "").strip().startswith("vibrogate"), "PDF Creator set", info.get("Creator"))
    check("Figure probe" in info.get("Title", ""), "PDF Title set", info.get("Title"))
    check(info.get("Page size", "").strip().startswith("504 x"), "PDF page 7 in = 504 pt wide", info.get("Page size"))
    try:
        root = ET.parse(os.path.join(a, "map-log10_ratio.svg")).getroot()
        check(root.tag.endswith("svg") and root.get("width", "").startswith("504"), "SVG parses as XML, 504 pt wide", root.get("width"))
    except ET.ParseError as e:
        check(False, "SVG parses as XML", e)

    # Reproducible: a second run with the same SOURCE_DATE_EPOCH, and a
    # render from the saved data alone, give byte-identical figures.
    r = run([VG, "sweep", CFG, "--out", b, "--quiet", "--threads", "1"], {"SOURCE_DATE_EPOCH": EPOCH})
    for n in want[:-1] if False else [x for x in want if x != "sweep.nc"]:
        same = open(os.path.join(a, n), "rb").read() == open(os.path.join(b, n), "rb").read()
        check(same, "byte-identical rerun: " + n)
    c = os.path.join(tmp, "c")
    os.mkdir(c)
    r = run([VG, "render", os.path.join(a, "sweep.nc"), "--out", c, "--quiet"], {"SOURCE_DATE_EPOCH": EPOCH})
    check(r.returncode == 0, "render from sweep.nc succeeds", r.stderr)
    for n in [x for x in want if x != "sweep.nc"]:
        p = os.path.join(c, n)
        same = os.path.exists(p) and open(p, "rb").read() == open(os.path.join(a, n), "rb").read()
        check(same, "render reproduces " + n + " byte for byte")

    probes(a, png)
    spectrum(tmp)
    hatching(tmp)
    without_ratio(tmp)


def without_ratio(tmp):
    """Maps of a sweep that does not store log10_ratio (the dominance
    boundary's metric) are drawn without the boundary, not refused after
    the data are written."""
    d = os.path.join(tmp, "noratio")
    r = run([VG, "sweep", CFG, "--out", d, "--quiet", "--set", "output.figures=png",
             "--set", "output.metrics=log10_k_total", "--set", "output.maps=log10_k_total"],
            {"SOURCE_DATE_EPOCH": EPOCH})
    names = sorted(os.listdir(d)) if os.path.isdir(d) else []
    check(r.returncode == 0 and names == ["map-log10_k_total.png", "sweep.nc"],
          "a map without log10_ratio stored: exit 0, the map drawn", "%d %s %s"
          % (r.returncode, r.stderr.strip(), names))


def hatching(tmp):
    """Cells where a [validity] criterion fails are hatched; the others keep
    their colour.  The probe config twice, without and with the solvent
    criterion (kappa_A = 4 pi V^2 tau_L / (hbar lambda), Zusman 1980, fails
    below lambda = 57 meV at V = 1 meV, tau_L = 0.3 ps): valid cells must be
    the same pixels in both maps, invalid ones must differ and hold dark
    hatch pixels."""
    import netCDF4
    plain = ["--set", "output.figures=png", "--set", "output.maps=log10_ratio",
             "--set", "output.contours=none"]
    crit = ["--set", "validity.criteria=solvent", "--set", "validity.relaxation_time=0.3 ps"]
    d0, d1 = os.path.join(tmp, "h0"), os.path.join(tmp, "h1")
    r0 = run([VG, "sweep", CFG, "--out", d0, "--quiet"] + plain, {"SOURCE_DATE_EPOCH": EPOCH})
    r1 = run([VG, "sweep", CFG, "--out", d1, "--quiet"] + plain + crit, {"SOURCE_DATE_EPOCH": EPOCH})
    check(r0.returncode == 0 and r1.returncode == 0, "sweeps without and with [validity] succeed",
          r0.stderr + r1.stderr)
    if r0.returncode or r1.returncode:
        return
    img0 = png_pixels(png_chunks(os.path.join(d0, "map-log10_ratio.png")))
    img1 = png_pixels(png_chunks(os.path.join(d1, "map-log10_ratio.png")))
    geom, _ = probe_geometry(os.path.join(d1, "sweep.nc"), "log10_ratio")
    with netCDF4.Dataset(os.path.join(d1, "sweep.nc")) as ds:
        gap = np.array(ds["gap"][:])
        lam = np.array(ds["reorganization"][:])
        valid = np.array(ds["valid"][:])
        ratio = np.array(ds["log10_ratio"][:])
    check(img0.shape == img1.shape and 0 < valid.sum() < valid.size,
          "same image size; some cells valid and some not (%d of %d valid)"
          % (int(valid.sum()), valid.size))
    k = 100 / 72.0
    same, differ, wrong = 0, 0, []
    for c in range(valid.shape[0]):
        for j in range(2, len(lam) - 2, 3):
            for i in range(2, len(gap) - 2, 5):
                nb = valid[c, j - 1:j + 2, i - 1:i + 2]
                near_line = np.ptp(np.sign(ratio[c, j - 2:j + 3, i - 2:i + 3])) != 0
                if np.ptp(nb) != 0 or near_line:
                    continue
                x0 = geom["x0"] + c * (geom["w"] + geom["gapx"])
                dx = (gap[i] / geom["xscale"] - geom["xlo"]) / (geom["xhi"] - geom["xlo"])
                dy = (np.log10(lam[j] / geom["yscale"]) - geom["ylo"]) / (geom["yhi"] - geom["ylo"])
                px, py = int((x0 + geom["w"] * dx) * k), int((geom["y0"] + geom["h"] * (1 - dy)) * k)
                b0 = img0[py - 3:py + 4, px - 3:px + 4]
                b1 = img1[py - 3:py + 4, px - 3:px + 4]
                if valid[c, j, i] == 1:
                    same += 1
                    if not np.array_equal(b0, b1):
                        wrong.append(("valid cell changed", c, i, j))
                else:
                    differ += 1
                    changed = int(np.sum(np.any(b0 != b1, axis=2)))
                    if changed < 3 or b1.sum(axis=2).min() >= 3 * 90:
                        wrong.append(("invalid cell not hatched", c, i, j, changed))
    check(same >= 20 and differ >= 20 and not wrong,
          "hatching: %d valid cells unchanged, %d invalid cells hatched" % (same, differ),
          wrong[:3])


def spectrum(tmp):
    """The spectrum command: same formats and metadata as the maps."""
    d = os.path.join(tmp, "spec")
    r = run([VG, "spectrum", "configs/point.ini", "--out", d, "--quiet",
             "--set", "output.figures=png, pdf, svg"], {"SOURCE_DATE_EPOCH": EPOCH})
    check(r.returncode == 0, "spectrum succeeds", r.stderr)
    if r.returncode:
        return
    check(sorted(os.listdir(d)) == ["spectrum.pdf", "spectrum.png", "spectrum.svg"],
          "spectrum writes png, pdf and svg", os.listdir(d))
    ch = png_chunks(os.path.join(d, "spectrum.png"))
    tx = itxt(ch)
    check(all(ok for _, _, ok in ch) and tx.get("vibrogate config") == open("configs/point.ini", encoding="utf-8").read(),
          "spectrum PNG carries the config text, valid CRCs")
    r2 = run(["pdfinfo", os.path.join(d, "spectrum.pdf")])
    check(r2.returncode == 0 and "vibrogate" in r2.stdout, "pdfinfo opens the spectrum PDF", r2.stderr)
    try:
        ET.parse(os.path.join(d, "spectrum.svg"))
        check(True, "spectrum SVG parses as XML")
    except ET.ParseError as e:
        check(False, "spectrum SVG parses as XML", e)
    r3 = run([VG, "spectrum", CFG, "--out", d, "--quiet"])
    check(r3.returncode == 3 and "'spectrum' needs every parameter but 'gap' scalar" in r3.stderr,
          "spectrum refuses a config with axes other than gap", r3.stderr)
    r4 = run([VG, "check", "configs/point.ini", "--set", "output.figures=png"])
    check(r4.returncode == 3 and "figures need at least two axes" in r4.stderr,
          "check refuses maps on a grid without two axes", r4.stderr)


def probes(a, png):
    import netCDF4
    nc = os.path.join(a, "sweep.nc")
    geom, cmap = probe_geometry(nc, "log10_ratio")
    img = png_pixels(png_chunks(png))
    ds = netCDF4.Dataset(nc)
    gap = np.array(ds["gap"][:])
    lam = np.array(ds["reorganization"][:])
    mode = np.array(ds["mode"][:])
    ratio = np.array(ds["log10_ratio"][:])  # (mode, reorganization, gap)
    ds.close()
    k = 100 / 72.0  # pixels per point at 100 dpi

    def cell_px(c, i, j):
        x0 = geom["x0"] + c * (geom["w"] + geom["gapx"])
        dx = (gap[i] / geom["xscale"] - geom["xlo"]) / (geom["xhi"] - geom["xlo"])
        dy = (np.log10(lam[j] / geom["yscale"]) - geom["ylo"]) / (geom["yhi"] - geom["ylo"])
        return int((x0 + geom["w"] * dx) * k), int((geom["y0"] + geom["h"] * (1 - dy)) * k)

    # Cell colours: cells well inside one side of the boundary, away from
    # the drawn lines (contours at +-5, the mark) -- pick cells whose
    # neighbours are all within the same 1-unit band.
    tested, bad = 0, []
    rng = np.random.default_rng(7)
    for _ in range(4000):
        c, j, i = rng.integers(0, 2), rng.integers(2, len(lam) - 2), rng.integers(2, len(gap) - 2)
        nb = ratio[c, j - 2:j + 3, i - 2:i + 3]
        v = ratio[c, j, i]
        if np.ptp(np.floor(nb)) != 0 or abs(v) < 0.5 or np.any(np.abs(np.abs(nb) - 5) < 1):
            continue
        px, py = cell_px(c, i, j)
        want = cmap_colour(cmap, (v - geom["lo"]) / (geom["hi"] - geom["lo"]))
        got = img[py, px]
        if np.max(np.abs(got - want)) > 1:
            bad.append((c, i, j, v, got.tolist(), want.tolist()))
        tested += 1
        if tested >= 60:
            break
    check(tested >= 30 and not bad, "%d cell centres have the colour map's colour within 1/255" % tested, bad[:3])

    # Boundary: for rows of the first panel whose ratio changes sign exactly
    # once along the gap, bisect k_assisted = k_elastic on the rate
    # functions and look for the black line there.
    rows = [j for j in range(3, len(lam) - 3, 4) if np.sum(np.diff(np.sign(ratio[0, j])) != 0) == 1]
    found, missed = 0, []
    for j in rows:
        i = int(np.nonzero(np.diff(np.sign(ratio[0, j])))[0][0])
        lo, hi = gap[i], gap[i + 1]
        for _ in range(50):
            mid = 0.5 * (lo + hi)
            line = "thermal %.17g %.17g 1 0.08 %.17g 300\n" % (mid, lam[j], mode[0])
            out = subprocess.run([DUMP], input=line, capture_output=True, text=True).stdout.split()
            r = float(out[4])  # log10_ratio (metrics in vg_metrics.h order)
            if (r > 0) == (ratio[0, j, i + 1] > 0):
                hi = mid
            else:
                lo = mid
        x0 = geom["x0"]
        px = int((x0 + geom["w"] * (0.5 * (lo + hi) / geom["xscale"] - geom["xlo"]) / (geom["xhi"] - geom["xlo"])) * k)
        _, py = cell_px(0, i, j)
        window = img[py - 1:py + 2, px - 3:px + 4]
        if window.size and window.sum(axis=2).min() < 3 * 60:
            found += 1
        else:
            missed.append((j, 0.5 * (lo + hi)))
    check(len(rows) >= 3 and not missed, "dominance boundary drawn where bisection puts k_assisted = k_elastic (%d rows)" % len(rows), missed[:3])


if __name__ == "__main__":
    main()
    sys.exit(1 if failures else 0)

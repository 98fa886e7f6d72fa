#!/usr/bin/python3
"""`zeeline measure CUBE --pixel X,Y` and `--world LON,LAT` (run as: measure_pixel_check.py <zeeline>).

The bundled demo cube's pixel spectrum is extracted independently with astropy (FITS reader and WCS of the
spectral axis, AWAV in nm) and written as a text table; `measure` on the table and `measure --pixel` on the
cube must give the same JSON numbers (same samples, same frame: the table has no frame, so the catalog
line's air wavelength is used as given, which is the cube's AWAV frame). Pixels count from 1 like FITS.
`--world` with the world coordinates astropy computes for a pixel centre picks that pixel.
"""
import json
import math
import os
import subprocess
import sys
import tempfile

import numpy as np
from astropy.io import fits
from astropy.wcs import WCS

ZEELINE = sys.argv[1]
SRC = os.path.dirname(os.path.dirname(os.path.dirname(os.path.abspath(__file__))))
CATALOG = os.path.join(SRC, "demo_maps", "lines.csv")
CUBE = os.path.join(SRC, "demo_maps", "bipolar_region.fits")
failures = []


def check(cond, what):
    print(("ok   " if cond else "FAIL ") + what)
    if not cond:
        failures.append(what)


def measure(*args):
    p = subprocess.run([ZEELINE, "measure", *args, "--line", "FeI_6302", "--catalog", CATALOG, "--json"],
                       capture_output=True, text=True)
    return p.returncode, (json.loads(p.stdout) if p.returncode == 0 else {}), p.stderr


def numbers(d, prefix=""):
    """Flattened numeric leaves of a JSON object (the estimates and characteristics)."""
    out = {}
    if isinstance(d, dict):
        for k, v in d.items():
            out.update(numbers(v, prefix + "/" + k))
    elif isinstance(d, list):
        for i, v in enumerate(d):
            out.update(numbers(v, prefix + "/" + str(i)))
    elif isinstance(d, (int, float)) and not isinstance(d, bool):
        out[prefix] = float(d)
    return out


X1, Y1 = 15, 22  # 1-based pixel in the positive concentration's outskirts
with fits.open(CUBE) as h, tempfile.TemporaryDirectory() as tmp:
    data = h[0].data.astype(float)  # numpy order (stokes, wavelength, y, x)
    w = WCS(h[0].header)
    nw = data.shape[1]
    # Spectral axis (FITS axis 3) in nm from astropy's WCS at the chosen pixel.
    pix = np.zeros((nw, 4))
    pix[:, 0], pix[:, 1], pix[:, 2] = X1 - 1, Y1 - 1, np.arange(nw)
    wl_nm = w.all_pix2world(pix, 0)[:, 2] * 1e9  # astropy returns spectral coordinates in SI (m)
    table = os.path.join(tmp, "pixel.txt")
    with open(table, "w") as f:
        f.write("wavelength_nm I Q U V\n")
        for k in range(nw):
            vals = [data[s, k, Y1 - 1, X1 - 1] for s in range(4)]
            f.write("%.12f %s\n" % (wl_nm[k], " ".join(repr(v) for v in vals)))
    rc_t, jt, et = measure(table)
    rc_c, jc, ec = measure(CUBE, "--pixel", "%d,%d" % (X1, Y1))
    check(rc_t == 0 and rc_c == 0, f"both runs succeed: table {rc_t} {et.strip()[:120]}, cube {rc_c} {ec.strip()[:120]}")
    check(jc.get("input", {}).get("file", "").endswith("pixel (%d, %d)" % (X1, Y1)), f"source names the pixel: {jc.get('input')}")
    nt, nc = numbers(jt.get("estimates", {})), numbers(jc.get("estimates", {}))
    nt.update(numbers(jt.get("characteristics", {}))), nc.update(numbers(jc.get("characteristics", {})))
    check(nt.keys() == nc.keys() and len(nt) > 20, f"same keys ({len(nt)})")
    worst = 0.0
    for k in nt:
        a, b = nt[k], nc.get(k, math.nan)
        if math.isnan(a) and math.isnan(b):
            continue
        worst = max(worst, abs(a - b) / max(1e-12, abs(a), abs(b)))
    # Same float32 samples; the wavelengths differ only by the 12 decimals of the table (1e-12 nm).
    check(worst < 1e-6, f"cube pixel = table spectrum: worst relative difference {worst:.2e} < 1e-6")
    print("wfa B_LOS %.2f G (pixel), %.2f G (table)" % (jc["estimates"]["wfa"]["blos_gauss"], jt["estimates"]["wfa"]["blos_gauss"]))

    # --world: astropy's world coordinates of the pixel centre (deg) in arcsec pick the same pixel.
    lon, lat = w.celestial.all_pix2world([[X1 - 1, Y1 - 1]], 0)[0]
    lon = lon - 360.0 if lon > 180.0 else lon  # helioprojective longitude east of centre is negative
    rc_w, jw, ew = measure(CUBE, "--world", "%.6f,%.6f" % (lon * 3600.0, lat * 3600.0))
    check(rc_w == 0 and jw.get("input", {}).get("file") == jc.get("input", {}).get("file"),
          f"--world {lon * 3600:.3f},{lat * 3600:.3f} arcsec picks pixel ({X1}, {Y1}): {jw.get('input', {}).get('file')} {ew.strip()}")
    rc_d, jd, _ = measure(CUBE, "--world", "%.9fdeg,%.9fdeg" % (lon, lat))
    check(rc_d == 0 and jd.get("input", {}).get("file") == jc.get("input", {}).get("file"), "--world in deg")

    # Errors: outside the image (exit 1, counting from 1), malformed and conflicting options (exit 2).
    p = subprocess.run([ZEELINE, "measure", CUBE, "--pixel", "49,1", "--line", "FeI_6302", "--catalog", CATALOG],
                       capture_output=True, text=True)
    check(p.returncode == 1 and "48 x 40" in p.stderr, f"pixel outside: exit {p.returncode} {p.stderr.strip()}")
    for bad in (["--pixel", "0,3"], ["--pixel", "3"], ["--pixel", "1,1", "--world", "0,0"], ["--world", "1,2furlong"]):
        p = subprocess.run([ZEELINE, "measure", CUBE, *bad, "--line", "FeI_6302", "--catalog", CATALOG],
                           capture_output=True, text=True)
        check(p.returncode == 2, f"{bad}: exit {p.returncode} (2): {p.stderr.strip()[:100]}")

if failures:
    sys.exit(f"{len(failures)} check(s) failed")
print("all measure --pixel checks passed")

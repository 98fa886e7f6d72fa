#!/usr/bin/python3
"""`zeeline info` and `zeeline view` checked against astropy (independent FITS/WCS implementation).

Cubes are made here with astropy in several axis orders and spectral types; `zeeline info --json` must
report the same wavelength grid (astropy.wcs, converted to nm), Stokes list and spatial world
coordinates (astropy.wcs on the reported spatial cards vs the input's spatial sub-WCS). Bad inputs
must fail with a non-zero exit and a message naming the file. `zeeline view` output is opened with
PIL. usage: cli_info_view_check.py /path/to/zeeline
"""
import json
import os
import subprocess
import sys
import tempfile

import numpy as np
from astropy.io import fits
from astropy.wcs import WCS

ZEELINE = sys.argv[1]
C = 299792458.0  # m/s, exact (SI)
WAVELENGTH_TOL_NM = 1e-9   # two double-precision evaluations of a linear axis near 630 nm
WORLD_TOL_DEG = 1e-9
failures = []


def check(cond, message):
    if not cond:
        failures.append(message)
        print("FAIL:", message)


def run(*args):
    p = subprocess.run([ZEELINE, *args], capture_output=True, text=True)
    return p.returncode, p.stdout, p.stderr


def make_cube(path, order, spectral=("AWAV", "Angstrom", 6302.0, 0.02), stokes=(1, 2, 3, 4), ext=None,
              data_fn=None):
    """order: string of roles per FITS axis 1..4, e.g. 'xyws' (x, y spatial; w spectral; s Stokes)."""
    sizes = {"x": 6, "y": 5, "w": 7, "s": len(stokes)}
    shape = tuple(sizes[r] for r in reversed(order))  # numpy order is reversed FITS order
    rng = np.random.default_rng(1)
    data = rng.normal(size=shape).astype(np.float32) if data_fn is None else data_fn(shape)
    h = fits.Header()
    for i, r in enumerate(order, start=1):
        if r == "x":
            h["CTYPE%d" % i], h["CUNIT%d" % i] = "HPLN-TAN", "arcsec"
            h["CRPIX%d" % i], h["CRVAL%d" % i], h["CDELT%d" % i] = 3.0, -250.0, 0.3
        elif r == "y":
            h["CTYPE%d" % i], h["CUNIT%d" % i] = "HPLT-TAN", "arcsec"
            h["CRPIX%d" % i], h["CRVAL%d" % i], h["CDELT%d" % i] = 2.0, 410.0, 0.3
        elif r == "w":
            ctype, cunit, crval, cdelt = spectral
            h["CTYPE%d" % i], h["CUNIT%d" % i] = ctype, cunit
            h["CRPIX%d" % i], h["CRVAL%d" % i], h["CDELT%d" % i] = 1.0, crval, cdelt
        else:
            h["CTYPE%d" % i] = "STOKES"
            h["CRPIX%d" % i], h["CRVAL%d" % i] = 1.0, float(stokes[0])
            h["CDELT%d" % i] = float(stokes[1] - stokes[0]) if len(stokes) > 1 else 1.0
    if ext:
        hdul = fits.HDUList([fits.PrimaryHDU(), fits.ImageHDU(data=data, header=h, name=ext)])
    else:
        hdul = fits.HDUList([fits.PrimaryHDU(data=data, header=h)])
    hdul.writeto(path, overwrite=True)
    return h


def expected_from_astropy(path, hdu_index):
    with fits.open(path) as f:
        h = f[hdu_index].header
    w = WCS(h)
    roles = {}
    for i in range(1, 5):
        c = h["CTYPE%d" % i]
        roles[i] = "s" if c == "STOKES" else ("w" if c[:4] in ("WAVE", "AWAV", "FREQ", "WAVN") else "p")
    spatial = [i for i in range(1, 5) if roles[i] == "p"]
    spec = [i for i in range(1, 5) if roles[i] == "w"][0]
    st = [i for i in range(1, 5) if roles[i] == "s"][0]
    sw = np.asarray(w.sub([spec]).pixel_to_world_values(np.arange(h["NAXIS%d" % spec]))).ravel()
    ctype = h["CTYPE%d" % spec][:4]
    nm = C / sw * 1e9 if ctype == "FREQ" else sw * 1e9
    codes = np.asarray(w.sub([st]).pixel_to_world_values(np.arange(h["NAXIS%d" % st]))).ravel()
    return w.sub(spatial), np.sort(nm), [("IQUV"[int(round(c)) - 1]) for c in codes], spatial


with tempfile.TemporaryDirectory() as tmp:
    # ---- info against astropy, several axis orders and spectral types
    cases = [("xyws", {}), ("wsxy", {}), ("sxwy", {}), ("ywsx", {}),
             ("xwys", {"spectral": ("FREQ", "Hz", 4.757e14, -2.0e9)}),
             ("xyws", {"spectral": ("WAVE", "nm", 630.40, 0.002), "stokes": (1, 4)}),
             ("wxsy", {"ext": "STOKES_DATA"})]
    for n, (order, kw) in enumerate(cases):
        path = os.path.join(tmp, "cube%d.fits" % n)
        make_cube(path, order, **kw)
        target = path + ("[STOKES_DATA]" if kw.get("ext") else "")
        rc, out, err = run("info", target, "--json")
        check(rc == 0, "%s: info exit %d: %s" % (order, rc, err))
        if rc != 0:
            continue
        info = json.loads(out)
        spatial_wcs, nm, stokes, spatial_axes = expected_from_astropy(path, 1 if kw.get("ext") else 0)
        check(np.allclose(info["wavelength_nm"], nm, rtol=0, atol=WAVELENGTH_TOL_NM),
              "%s %s: wavelengths %s vs astropy %s" % (order, kw, info["wavelength_nm"], nm))
        check(info["stokes"] == stokes, "%s: stokes %s vs %s" % (order, info["stokes"], stokes))
        check(info["frame"] == ("air" if kw.get("spectral", ("AWAV",))[0] == "AWAV" else "vacuum"),
              "%s: frame %s" % (order, info["frame"]))
        roles = [a["role"] for a in info["axes"]]
        check(roles.index("x") + 1 == spatial_axes[0] and roles.index("y") + 1 == spatial_axes[1],
              "%s: x/y axes %s vs spatial %s" % (order, roles, spatial_axes))
        reported = WCS(fits.Header.fromstring("\n".join(info["spatial_wcs"]), sep="\n"))
        for (i, j) in [(0, 0), (info["nx"] - 1, 0), (2, info["ny"] - 1)]:
            a = np.array(spatial_wcs.pixel_to_world_values(i, j), dtype=float)
            b = np.array(reported.pixel_to_world_values(i, j), dtype=float)
            check(np.all(np.abs(a - b) <= WORLD_TOL_DEG), "%s: spatial world (%d,%d) %s vs %s" % (order, i, j, a, b))

    # ---- statistics: NaN count and range (numpy on the same data)
    path = os.path.join(tmp, "nan.fits")

    def with_nans(shape):
        d = np.arange(np.prod(shape), dtype=np.float32).reshape(shape)
        d.flat[5] = np.nan
        d.flat[77] = np.nan
        return d
    make_cube(path, "xyws", data_fn=with_nans)
    rc, out, err = run("info", path, "--json")
    st = json.loads(out)["statistics"] if rc == 0 else {}
    data = fits.getdata(path)
    check(st.get("nan_samples") == int(np.isnan(data).sum()), "NaN count %s" % st.get("nan_samples"))
    check(st.get("min") == float(np.nanmin(data)) and st.get("max") == float(np.nanmax(data)), "data range %s" % st)

    # ---- air -> vacuum on request: Morton (2000) eq. 8 evaluated here independently
    path = os.path.join(tmp, "air.fits")
    make_cube(path, "xyws")
    rc, out, err = run("info", path, "--json", "--frame", "vacuum")
    vac = np.array(json.loads(out)["wavelength_nm"]) if rc == 0 else np.zeros(7)
    air = 630.2 + 0.002 * np.arange(7)
    s2 = (1e3 / vac) ** 2
    n = 1 + 8.34254e-5 + 2.406147e-2 / (130 - s2) + 1.5998e-4 / (38.9 - s2)
    check(np.allclose(vac / n, air, rtol=0, atol=1e-9), "vacuum grid %s does not map back to air %s" % (vac, air))

    # ---- bad inputs: non-zero exit, message names the file and the problem
    bad = []
    p = os.path.join(tmp, "text.fits")
    open(p, "w").write("not fits\n")
    bad.append((p, "not a FITS file"))
    p = os.path.join(tmp, "nospec.fits")
    h = make_cube(p, "xyws")
    with fits.open(p, mode="update") as f:
        f[0].header["CTYPE3"] = "PIXEL"
    bad.append((p, "no spectral axis"))
    p = os.path.join(tmp, "nostokes.fits")
    make_cube(p, "xyws")
    with fits.open(p, mode="update") as f:
        f[0].header["CTYPE4"] = "POLN"
    bad.append((p, "no STOKES axis"))
    p = os.path.join(tmp, "rrll.fits")
    make_cube(p, "xyws", stokes=(-1, -2))
    bad.append((p, "(RR)"))
    p = os.path.join(tmp, "allnan.fits")
    make_cube(p, "xyws", data_fn=lambda s: np.full(s, np.nan, dtype=np.float32))
    bad.append((p, "NaN or Inf"))
    p = os.path.join(tmp, "trunc.fits")
    make_cube(p, "xyws")
    with open(p, "r+b") as f:
        f.truncate(2880 + 200)
    bad.append((p, "truncated"))
    # One HDU numbering (docs/fits.md): a problem in cube.fits[1] is reported as "HDU 1", the index of the
    # extended filename and of astropy's HDUList.
    p = os.path.join(tmp, "ext_nospec.fits")
    make_cube(p, "xyws", ext="CUBE")
    with fits.open(p, mode="update") as f:
        f[1].header["CTYPE3"] = "PIXEL"
    rc, out, err = run("info", p + "[1]")
    check(rc == 1 and "HDU 1" in err and "HDU 2" not in err, "extension [1] reported as HDU 1: %s" % err)
    rc, out, err = run("info", os.path.join(tmp, "air.fits"), "--json")
    check(rc == 0 and json.loads(out).get("hdu") == 0, "info --json hdu of a primary-HDU cube is 0: %s" % out[:80])
    for path, fragment in bad:
        rc, out, err = run("info", path)
        check(rc == 1, "%s: exit %d (expected 1 = bad input)" % (path, rc))
        check(path in err and fragment in err, "%s: message lacks file or '%s': %s" % (path, fragment, err))

    # ---- view: maps written with astropy, PNGs opened with PIL
    from PIL import Image
    maps = os.path.join(tmp, "maps.fits")
    y, x = np.mgrid[0:30, 0:40]
    blos = (x - 20.0) * 10.0
    blos[3, 4] = np.nan
    hdus = [fits.PrimaryHDU(),
            fits.ImageHDU(data=np.hypot(x, y).astype(np.float32), name="B_TOTAL"),
            fits.ImageHDU(data=blos.astype(np.float32), name="B_LOS"),
            fits.ImageHDU(data=(x * 4.0 % 180).astype(np.float32), name="B_AZIM")]
    for hh, unit in zip(hdus[1:], ["G", "G", "deg"]):
        hh.header["BUNIT"] = unit
    fits.HDUList(hdus).writeto(maps)
    outdir = os.path.join(tmp, "ql")
    rc, out, err = run("view", maps, "-o", outdir)
    check(rc == 0, "view exit %d: %s" % (rc, err))
    pngs = out.split()
    names = [os.path.basename(p) for p in pngs]
    check(names == ["maps_b_total.png", "maps_b_los.png", "maps_b_azim.png", "maps_summary.png"], "view printed %s" % names)
    for p in pngs:
        with Image.open(p) as im:
            check(im.format == "PNG" and im.size[0] > 40 and im.size[1] > 30, "%s: %s %s" % (p, im.format, im.size))
    rc, out, err = run("view", maps, "-o", outdir)
    check(rc == 3 and "--overwrite" in err, "second view without --overwrite: exit %d %s" % (rc, err))
    rc, out, err = run("view", maps, "-o", outdir, "--overwrite")
    check(rc == 0, "view --overwrite exit %d" % rc)

print("%d failure(s)" % len(failures))
sys.exit(1 if failures else 0)

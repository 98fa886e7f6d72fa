#!/usr/bin/python3
"""Reads files written by the zeeline FITS writers back with astropy (an implementation independent of
cfitsio/wcslib) and compares them with the input cube they were derived from.

usage: astropy_compare.py INPUT_CUBE MAPS_FILE STOKES_FILE NAME:UNIT[,NAME:UNIT...]
Exit status 0 when every check passes; failures are printed one per line.
"""
import sys

import numpy as np
from astropy.io import fits
from astropy.wcs import WCS

# Two wcslib evaluations of the same TAN projection written with 17 significant digits: agreement to
# ~1e-12 deg; 1e-9 deg (4 microarcsec) leaves room for astropy's own arithmetic.
WORLD_TOL_DEG = 1e-9
failures = []


def check(cond, message):
    if not cond:
        failures.append(message)


def spatial_axes(header):
    """1-based FITS axes that are neither spectral nor STOKES, in file order (x first)."""
    out = []
    for i in range(1, header["NAXIS"] + 1):
        ctype = header.get("CTYPE%d" % i, "")
        if ctype == "STOKES" or ctype[:4] in ("WAVE", "AWAV", "FREQ", "WAVN"):
            continue
        out.append(i)
    return out


def sample_pixels(nx, ny):
    return [(0, 0), (nx - 1, 0), (0, ny - 1), (nx - 1, ny - 1), (nx // 2, ny // 3)]


def main():
    cube_path, maps_path, stokes_path, names = sys.argv[1:5]
    expected = dict(item.split(":", 1) for item in names.split(","))
    with fits.open(cube_path) as cube:
        hdr = cube[0].header if cube[0].header["NAXIS"] == 4 else cube[1].header
        full = WCS(hdr)
        sx, sy = spatial_axes(hdr)
        spatial = full.sub([sx, sy])
        nx, ny = hdr["NAXIS%d" % sx], hdr["NAXIS%d" % sy]
        spec_axis = [i for i in range(1, 5) if hdr["CTYPE%d" % i][:4] in ("WAVE", "AWAV", "FREQ", "WAVN")][0]
        spec_wcs = full.sub([spec_axis])
        nw = hdr["NAXIS%d" % spec_axis]
        in_lambda_m = spec_wcs.pixel_to_world_values(np.arange(nw))
        in_lambda_m = np.asarray(in_lambda_m).ravel()

    def compare_spatial(w, label):
        for (i, j) in sample_pixels(nx, ny):
            a = np.array(spatial.pixel_to_world_values(i, j), dtype=float)
            b = np.array(w.pixel_to_world_values(i, j), dtype=float)
            check(np.all(np.abs(a - b) <= WORLD_TOL_DEG),
                  "%s: world coordinates of pixel (%d,%d) differ: input %s, output %s" % (label, i, j, a, b))

    with fits.open(maps_path) as maps:
        check(maps[0].header["NAXIS"] == 0, "maps primary HDU has data")
        check(str(maps[0].header.get("CREATOR", "")).startswith("zeeline "), "CREATOR missing")
        check("DATE" in maps[0].header, "DATE missing")
        names_found = [h.header.get("EXTNAME") for h in maps[1:]]
        check(names_found == list(expected), "EXTNAMEs %s != %s" % (names_found, list(expected)))
        for h in maps[1:]:
            name = h.header.get("EXTNAME")
            unit = expected.get(name)
            got = h.header.get("BUNIT", "")
            check(got == unit, "%s: BUNIT '%s' != '%s'" % (name, got, unit))
            check(h.data.shape == (ny, nx), "%s: shape %s != %s" % (name, h.data.shape, (ny, nx)))
            compare_spatial(WCS(h.header), "maps " + name)

    with fits.open(stokes_path) as st:
        h = st[0].header
        check(h["NAXIS"] == 4, "Stokes cube NAXIS != 4")
        check(h["CTYPE3"] == "AWAV" and h["CTYPE4"] == "STOKES", "Stokes cube CTYPE3/4 wrong")
        w = WCS(h)
        compare_spatial(w.sub([1, 2]), "Stokes cube")
        out_lambda_m = np.asarray(w.sub([3]).pixel_to_world_values(np.arange(h["NAXIS3"]))).ravel()
        # Input may be decreasing (FREQ) -- the writer stores increasing wavelengths.
        check(np.allclose(np.sort(in_lambda_m), out_lambda_m, rtol=1e-12, atol=0),
              "Stokes cube wavelengths %s != input %s" % (out_lambda_m, in_lambda_m))
        codes = np.asarray(w.sub([4]).pixel_to_world_values(np.arange(h["NAXIS4"]))).ravel()
        check(np.allclose(codes, [1, 2, 3, 4]), "STOKES codes %s" % codes)
        for ext in st[1:]:
            compare_spatial(WCS(ext.header), "Stokes-cube extension " + ext.header.get("EXTNAME", "?"))

    for f in failures:
        print("FAIL:", f)
    return 1 if failures else 0


if __name__ == "__main__":
    sys.exit(main())

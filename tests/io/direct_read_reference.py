#!/usr/bin/python3
"""Reference cubes for the direct read of io/cube_reader (CubeReadOptions::direct_read), made with astropy and
numpy (independent of cfitsio and of the reader under test).

usage: direct_read_reference.py OUT_DIR
Writes two float32 Stokes cubes (IEEE-754 big-endian, FITS standard 4.0 sect. 5.3) with NaN, +-Inf, -0,
subnormal and extreme samples, and beside each the values a reader must deliver: raw native float64 in
pixel-major order [y][x][Stokes][wavelength], wavelengths increasing (FITS WCS Paper I: the spectral value at
pixel p is CRVAL + CDELT (p - CRPIX), so a negative CDELT stores wavelengths decreasing), x the first spatial
axis in the file:
  lxsy.fits / lxsy.f64   axes (wavelength, x, Stokes, y): the spectral axis fastest
  xylsr.fits / xylsr.f64 axes (x, y, wavelength, Stokes) with CDELT3 < 0: planes, wavelengths reversed
"""
import os
import sys

import numpy as np
from astropy.io import fits


def samples(shape, seed):
    rng = np.random.default_rng(seed)
    v = (rng.normal(0.0, 1.0e3, size=shape)).astype(np.float32)
    flat = v.reshape(-1)
    specials = np.array([np.nan, np.inf, -np.inf, -0.0, 1.0e-42, -3.0e-41, np.finfo(np.float32).max,
                         -np.finfo(np.float32).max, np.finfo(np.float32).tiny, 1.0], dtype=np.float32)
    where = rng.choice(flat.size, size=200, replace=False)
    flat[where] = specials[np.arange(where.size) % specials.size]
    return v


def spatial_cards(h, ax, ay):
    h["CTYPE%d" % ax], h["CUNIT%d" % ax], h["CRPIX%d" % ax], h["CRVAL%d" % ax], h["CDELT%d" % ax] = \
        "HPLN-TAN", "arcsec", 1.0, 100.0, 0.5
    h["CTYPE%d" % ay], h["CUNIT%d" % ay], h["CRPIX%d" % ay], h["CRVAL%d" % ay], h["CDELT%d" % ay] = \
        "HPLT-TAN", "arcsec", 1.0, -200.0, 0.5


def write(path, data, cards):
    hdu = fits.PrimaryHDU(data.astype(">f4"))
    for k, v in cards.items():
        hdu.header[k] = v
    hdu.writeto(path, overwrite=True)


def main():
    out = sys.argv[1]
    nx, ny, nw, ns = 50, 7, 30, 4
    # (wavelength, x, Stokes, y): numpy shape (y, Stokes, x, wavelength).
    d = samples((ny, ns, nx, nw), 11)
    h = {}
    h["CTYPE1"], h["CUNIT1"], h["CRPIX1"], h["CRVAL1"], h["CDELT1"] = "AWAV", "nm", 1.0, 630.2, 0.002
    h["CTYPE3"], h["CRPIX3"], h["CRVAL3"], h["CDELT3"] = "STOKES", 1.0, 1.0, 1.0
    spatial_cards(h, 2, 4)
    write(os.path.join(out, "lxsy.fits"), d, h)
    np.transpose(d, (0, 2, 1, 3)).astype(np.float64).tofile(os.path.join(out, "lxsy.f64"))

    nx, ny, nw, ns = 64, 80, 12, 4
    # (x, y, wavelength, Stokes): numpy shape (Stokes, wavelength, y, x); CDELT3 < 0.
    d = samples((ns, nw, ny, nx), 12)
    h = {}
    h["CTYPE3"], h["CUNIT3"], h["CRPIX3"], h["CRVAL3"], h["CDELT3"] = "AWAV", "nm", 1.0, 630.3, -0.002
    h["CTYPE4"], h["CRPIX4"], h["CRVAL4"], h["CDELT4"] = "STOKES", 1.0, 1.0, 1.0
    spatial_cards(h, 1, 2)
    write(os.path.join(out, "xylsr.fits"), d, h)
    expected = np.transpose(d, (2, 3, 0, 1))[:, :, :, ::-1]  # [y][x][Stokes][wavelength increasing]
    np.ascontiguousarray(expected).astype(np.float64).tofile(os.path.join(out, "xylsr.f64"))


if __name__ == "__main__":
    main()

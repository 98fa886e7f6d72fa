#!/usr/bin/python3
"""Writes demo_maps/calibration/crosstalk_scan.fits: an invented scenario -- a small raster scan of a
magnetic region (Fe I 630.25 nm, g_eff 2.5) taken with the "Tarn Hollow" bench polarimeter before its
modulator was recalibrated, so the demodulated data carry residual crosstalk:
    I -> Q +0.004, I -> U -0.003, I -> V +0.006, V -> Q +0.05, V -> U -0.03
(observed: V_o = V + aV I, Q_o = Q + aQ I + bQ V, U_o = U + aU I + bU V). Noise 1e-3 of the continuum
is added to the clean Stokes vector before the crosstalk (the instrument sees the noisy sky).

Independent of zeeline: numpy and astropy only. Weak-field profiles (Landi Degl'Innocenti & Landolfi
2004, eqs. 9.77 and 9.83) of a Gaussian line, I = 1 - 0.6 exp(-(dl/0.0035 nm)^2), with fields of
100..500 G (g times the Zeeman shift at most 0.66 of the Doppler width, so |Q|, |U|, |V| < I everywhere),
random inclinations and azimuths and line-of-sight velocities of +-1 km/s.
The file's axes are in an unusual order on purpose -- NAXIS1 wavelength (AWAV, nm), NAXIS2 STOKES,
NAXIS3/NAXIS4 helioprojective x/y in arcsec -- so the corrected cube shows that the layout is kept.

Usage: /usr/bin/python3 make_crosstalk_cube.py [OUTPUT] [--seed N] [--clean CLEAN.fits]
"""
import argparse
import os

import numpy as np
from astropy.io import fits

CROSSTALK = {"I_to_Q": 0.004, "I_to_U": -0.003, "I_to_V": 0.006, "V_to_Q": 0.05, "V_to_U": -0.03}
NOISE = 1e-3
LAMBDA0 = 630.2494
NX, NY, NW = 24, 20, 48
STEP_NM = 0.0017


def clean_cube(seed):
    rng = np.random.default_rng(seed)
    wl = LAMBDA0 - 0.5 * (NW - 1) * STEP_NM + STEP_NM * np.arange(NW)
    b = rng.uniform(100.0, 500.0, (NY, NX))  # g dl_B <= 0.66 Doppler widths: |Q|, |U|, |V| < I
    gamma = np.radians(rng.uniform(0.0, 180.0, (NY, NX)))
    chi = np.radians(rng.uniform(0.0, 180.0, (NY, NX)))
    v = rng.uniform(-1.0, 1.0, (NY, NX))
    centre = LAMBDA0 * (1 + v / 299792.458)
    dl = wl[None, None, :] - centre[:, :, None]
    w = 0.0035
    prof = np.exp(-(dl / w) ** 2)
    i = 1 - 0.6 * prof
    di = 0.6 * prof * 2 * dl / w ** 2                       # dI/dlambda
    d2i = 0.6 * prof * (2 / w ** 2 - 4 * dl ** 2 / w ** 4)  # d2I/dlambda2
    lb = 4.6686e-13 * (LAMBDA0 * 10) ** 2 * b * 0.1         # Lorentz unit, nm
    g, gg = 2.5, 6.25
    vv = -(lb * g * np.cos(gamma))[:, :, None] * di
    lin = -0.25 * (lb ** 2 * gg * np.sin(gamma) ** 2)[:, :, None] * d2i
    q = lin * np.cos(2 * chi)[:, :, None]
    u = lin * np.sin(2 * chi)[:, :, None]
    stokes = np.stack([i, q, u, vv], axis=2)  # (y, x, stokes, wavelength)
    stokes = stokes + rng.normal(0.0, NOISE, stokes.shape)
    return wl, stokes


def add_crosstalk(stokes, c=CROSSTALK):
    i, q, u, v = (stokes[:, :, k, :] for k in range(4))
    return np.stack([i, q + c["I_to_Q"] * i + c["V_to_Q"] * v, u + c["I_to_U"] * i + c["V_to_U"] * v,
                     v + c["I_to_V"] * i], axis=2)


def header(wl):
    h = fits.Header()
    h["CTYPE1"], h["CUNIT1"], h["CRPIX1"], h["CRVAL1"], h["CDELT1"] = "AWAV", "nm", 1.0, wl[0], STEP_NM
    h["CTYPE2"], h["CRPIX2"], h["CRVAL2"], h["CDELT2"] = "STOKES", 1.0, 1.0, 1.0
    h["CTYPE3"], h["CUNIT3"], h["CRPIX3"], h["CRVAL3"], h["CDELT3"] = "HPLN-TAN", "arcsec", 12.5, 310.0, 0.5
    h["CTYPE4"], h["CUNIT4"], h["CRPIX4"], h["CRVAL4"], h["CDELT4"] = "HPLT-TAN", "arcsec", 10.5, -145.0, 0.5
    h["OBJECT"] = "invented demo scan"
    return h


def write(path, wl, stokes):
    fits.PrimaryHDU(stokes.astype(np.float32), header=header(wl)).writeto(path, overwrite=True)


if __name__ == "__main__":
    ap = argparse.ArgumentParser()
    ap.add_argument("output", nargs="?",
                    default=os.path.join(os.path.dirname(os.path.abspath(__file__)), "crosstalk_scan.fits"))
    ap.add_argument("--seed", type=int, default=630)
    ap.add_argument("--clean")
    args = ap.parse_args()
    wl, st = clean_cube(args.seed)
    write(args.output, wl, add_crosstalk(st))
    if args.clean:
        write(args.clean, wl, st)

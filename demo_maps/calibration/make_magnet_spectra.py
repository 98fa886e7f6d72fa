#!/usr/bin/python3
"""Writes the lab-magnet demo spectra of demo_maps/calibration/: an invented scenario -- the "Tarn Hollow"
bench polarimeter looks at discharge lamps between the poles of an electromagnet set to a nominal 10 kG
(cadmium) and 15 kG (neon) whose true field is 3.8 % lower (field scale f = 0.962), through a chain whose
response matrix X (observed = X emitted) is
    [[1,      0.02,  -0.01,  0.005],
     [0.012,  0.97,   0.03,  0.02 ],
     [-0.008, -0.025, 0.95,  0.01 ],
     [0.006,  0.012, -0.015, 0.93 ]].
  cd_long.csv   Cd I 643.847 nm (1P1 - 1D2, normal triplet), field along the line of sight (0, 0)
  cd_trans.csv  the same across the line of sight, azimuth 0 (90, 0)
  ne_long.csv   Ne I 640.2248 nm, jK(2P3/2,s,3/2,2) - jK(2P3/2,p,5/2,3), g_l 1.503, g_u 1.329 (demo_maps/
                lines.csv), at 15 kG nominal (0, 0)
  ne_trans.csv  the same at (90, 0), ne_trans45.csv at (90, 45)
Spectrograph: 2 pm (FWHM) Gaussian instrument profile; noise 0.4 % of the peak; counts.

Independent of zeeline: numpy, scipy.special.wofz (Voigt) and sympy's wigner_3j (component strengths
3 (Ju Jl 1; -Mu Ml -q)^2, LL04 eq. 3.13). Thin-line emission (LL04 sect. 6.6, signs of docs/conventions.md):
  e_I = A/2 [phi_0 sin^2 g + (phi_-1 + phi_+1)(1 + cos^2 g)/2] + background
  e_Q = A/2 [phi_0 - (phi_-1 + phi_+1)/2] sin^2 g cos 2chi,   e_U likewise with sin 2chi
  e_V = A/2 (phi_+1 - phi_-1) cos g
Lorentz unit 4.6686e-13 lambda[A]^2 B[G] A (LL04 eq. 3.8).

Usage: /usr/bin/python3 make_magnet_spectra.py [OUTDIR] [--seed N]
"""
import argparse
import os

import numpy as np
from scipy.special import wofz
from sympy.physics.wigner import wigner_3j
from sympy import Rational

F_TRUE = 0.962
X_TRUE = np.array([[1.0, 0.02, -0.01, 0.005], [0.012, 0.97, 0.03, 0.02], [-0.008, -0.025, 0.95, 0.01],
                   [0.006, 0.012, -0.015, 0.93]])
INSTRUMENT_FWHM_NM = 0.002
NOISE_REL = 0.004
LINES = {
    "cd": dict(lambda0=643.847, two_jl=2, gl=1.0, two_ju=4, gu=1.0, field=1.0e4, doppler=0.00058, damping=0.02),
    "ne": dict(lambda0=640.2248, two_jl=4, gl=1.503, two_ju=6, gu=1.329, field=1.5e4, doppler=0.00123, damping=0.02),
}


def pattern(two_jl, gl, two_ju, gu):
    """(q, shift in Lorentz units, strength) of every component; q = Ml - Mu."""
    jl, ju = Rational(two_jl, 2), Rational(two_ju, 2)
    comps = []
    for two_mu in range(-two_ju, two_ju + 1, 2):
        for q in (-1, 0, 1):
            mu = Rational(two_mu, 2)
            ml = mu + q
            if abs(ml) > jl:
                continue
            s = 3 * float(wigner_3j(ju, jl, 1, -mu, ml, -q)) ** 2
            if s > 0:
                comps.append((q, gl * float(ml) - gu * float(mu), s))
    return comps


def voigt_area1(wl, centre, doppler, damping):
    s = INSTRUMENT_FWHM_NM / (2 * np.sqrt(np.log(2)))
    wp = np.hypot(doppler, s)
    return wofz((wl - centre) / wp + 1j * damping * doppler / wp).real / (np.sqrt(np.pi) * wp)


def spectrum(line, incl_deg, azim_deg, rng, amplitude=2.0, background=20.0):
    p = LINES[line]
    wl = p["lambda0"] - 0.08 + 0.0005 * np.arange(321)
    lb = 4.6686e-13 * (p["lambda0"] * 10) ** 2 * p["field"] * F_TRUE * 0.1
    phi = {q: np.zeros_like(wl) for q in (-1, 0, 1)}
    for q, shift, s in pattern(p["two_jl"], p["gl"], p["two_ju"], p["gu"]):
        phi[q] += s * voigt_area1(wl, p["lambda0"] + shift * lb, p["doppler"], p["damping"])
    g, chi = np.radians(incl_deg), np.radians(azim_deg)
    e_i = amplitude / 2 * (phi[0] * np.sin(g) ** 2 + (phi[-1] + phi[1]) * (1 + np.cos(g) ** 2) / 2) + background
    lin = amplitude / 2 * (phi[0] - (phi[-1] + phi[1]) / 2) * np.sin(g) ** 2
    e = np.stack([e_i, lin * np.cos(2 * chi), lin * np.sin(2 * chi), amplitude / 2 * (phi[1] - phi[-1]) * np.cos(g)])
    obs = X_TRUE @ e
    peak = (e_i - background).max()
    return wl, obs + rng.normal(0.0, NOISE_REL * peak, obs.shape)


SET = [("cd_long.csv", "cd", 0, 0), ("cd_trans.csv", "cd", 90, 0), ("ne_long.csv", "ne", 0, 0),
       ("ne_trans.csv", "ne", 90, 0), ("ne_trans45.csv", "ne", 90, 45)]


def write_all(outdir, seed):
    rng = np.random.default_rng(seed)
    paths = {}
    for name, line, incl, azim in SET:
        wl, st = spectrum(line, incl, azim, rng)
        path = os.path.join(outdir, name)
        with open(path, "w") as f:
            f.write("# Invented demo: %s lamp line in a magnet, geometry inclination %g deg, azimuth %g deg\n"
                    % (line, incl, azim))
            f.write("# made by demo_maps/calibration/make_magnet_spectra.py (injected f = %g)\n" % F_TRUE)
            f.write("wavelength_nm I Q U V\n")
            for k in range(wl.size):
                f.write("%.5f %.4f %.4f %.4f %.4f\n" % (wl[k], st[0, k], st[1, k], st[2, k], st[3, k]))
        paths[name] = path
    return paths


if __name__ == "__main__":
    ap = argparse.ArgumentParser()
    ap.add_argument("outdir", nargs="?", default=os.path.dirname(os.path.abspath(__file__)))
    ap.add_argument("--seed", type=int, default=1962)
    args = ap.parse_args()
    write_all(args.outdir, args.seed)

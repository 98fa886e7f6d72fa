#!/usr/bin/python3
"""Writes demo_maps/spectra/cd_lamp_1T.txt: an invented laboratory scenario -- a cadmium discharge lamp
between the poles of an electromagnet at 1.000 T, the Cd I 643.847 nm (1P1 - 1D2) normal triplet viewed at
45 deg to the field through a spectrograph with a 2 pm (FWHM) Gaussian instrument profile, polarimetry
I, Q, U, V in counts, Gaussian noise of 3 counts (fixed seed).

Independent of zeeline: numpy/scipy only. Thin-line emission (LL04 sect. 6.6):
  I = bg + E [phi_pi sin^2 g / 2 + (phi_b + phi_r)(1 + cos^2 g) / 4]
  Q = E [phi_pi - (phi_b + phi_r)/2] sin^2 g cos 2chi / 2,  U likewise with sin 2chi
  V = E (phi_r - phi_b) cos g / 2   (docs/conventions.md: V < 0 in the blue wing in emission for a field
                                     toward the observer)
Each phi is a Voigt profile of unit area, Doppler 1/e half-width 0.58 pm (Cd near 500 K), damping 0.02,
convolved analytically with the instrument Gaussian. Lorentz unit 4.6686e-13 lambda[A]^2 B[G] A (LL04 3.8).

Usage: /usr/bin/python3 make_cd_lamp.py [OUTPUT]   (default: cd_lamp_1T.txt next to this script)
"""
import os
import sys

import numpy as np
from scipy.special import wofz

LAMBDA0_NM = 643.847
FIELD_G = 1.0e4
INCLINATION_DEG = 45.0
AZIMUTH_DEG = 0.0
DOPPLER_NM = 0.00058
DAMPING = 0.02
INSTRUMENT_FWHM_NM = 0.002
AREA = 2.0          # counts x nm
BACKGROUND = 20.0   # counts
NOISE = 3.0         # counts
SEED = 643


def profile(wl, centre):
    wi = INSTRUMENT_FWHM_NM / (2.0 * np.sqrt(np.log(2.0)))
    wp = np.hypot(DOPPLER_NM, wi)
    ap = DAMPING * DOPPLER_NM / wp
    return wofz((wl - centre) / wp + 1j * ap).real / (np.sqrt(np.pi) * wp)


def spectrum(wl):
    dlb = 4.6686e-13 * (LAMBDA0_NM * 10.0) ** 2 * FIELD_G * 0.1
    g, chi = np.radians(INCLINATION_DEG), np.radians(AZIMUTH_DEG)
    pb, pp, pr = profile(wl, LAMBDA0_NM - dlb), profile(wl, LAMBDA0_NM), profile(wl, LAMBDA0_NM + dlb)
    s2, c2 = np.sin(g) ** 2, np.cos(g) ** 2
    I = BACKGROUND + AREA * (pp * s2 / 2 + (pb + pr) * (1 + c2) / 4)
    lin = AREA * (pp - (pb + pr) / 2) * s2 / 2
    return I, lin * np.cos(2 * chi), lin * np.sin(2 * chi), AREA * (pr - pb) * np.cos(g) / 2


def main():
    out = sys.argv[1] if len(sys.argv) > 1 else os.path.join(os.path.dirname(os.path.abspath(__file__)), "cd_lamp_1T.txt")
    wl = np.linspace(LAMBDA0_NM - 0.05, LAMBDA0_NM + 0.05, 161)
    rng = np.random.default_rng(SEED)
    cols = [c + rng.normal(0.0, NOISE, wl.size) for c in spectrum(wl)]
    header = ("Invented demo: Cd I 643.847 nm (1P1-1D2) lamp in a 1.000 T electromagnet, viewed at 45 deg to the field\n"
              "2 pm instrument FWHM, counts, noise 3 counts; made by demo_maps/spectra/make_cd_lamp.py\n"
              "wavelength_nm I Q U V")
    np.savetxt(out, np.column_stack([wl] + cols), fmt=["%.5f"] + ["%.2f"] * 4, header=header, comments="# ")
    # The last header line must be the column header, not a comment.
    text = open(out).read().replace("# wavelength_nm I Q U V", "wavelength_nm I Q U V")
    open(out, "w").write(text)


if __name__ == "__main__":
    main()

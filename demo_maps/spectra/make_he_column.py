#!/usr/bin/python3
"""Writes two invented demo spectra of a helium plasma column for `zeeline broadening diagnose`:

  he_column_magnetised.txt  -- the column inside its solenoid at 0.450 T, viewed at 60 deg to the field,
                               electron temperature irrelevant, He I atoms at 1.00 eV; Stokes I and V.
  he_column_hot.txt         -- the same column with the coils off, hotter (He I at 3.00 eV); Stokes I only.

Scenario (invented): a small linear helium discharge ("the column") observed through a window with a
spectrograph of 3 pm (FWHM) Gaussian instrument profile; three He I singlet lines (501.5678, 667.8151,
728.1349 nm, from demo_maps/plasma_lines.csv), each recorded in a window of +-0.25 nm sampled every 1.5 pm, in
counts on a flat background, with Gaussian noise of fixed sigma (fixed seeds).

Independent of zeeline: numpy/scipy only. Thin-line emission of a normal triplet (LL04 sect. 6.6):
  I = bg + A [phi_pi sin^2 g / 2 + (phi_b + phi_r)(1 + cos^2 g) / 4]
  V = A (phi_r - phi_b) cos g / 2      (docs/conventions.md: V < 0 in the blue wing in emission for a field
                                        toward the observer)
phi: Voigt profile of unit area (scipy.special.wofz), Doppler 1/e half-width lambda/c sqrt(2kT/m), Lorentzian
HWHM gamma, convolved analytically with the instrument Gaussian (1/e widths in quadrature); the sigma components
sit at -+ Delta lambda_B = 4.6686e-13 lambda[A]^2 B[G] A (LL04 eq. 3.8), the pi component at the line centre,
everything Doppler-shifted by v.

Usage: /usr/bin/python3 make_he_column.py [OUTPUT_DIR]   (default: this script's directory)
"""
import math
import os
import sys

import numpy as np
from scipy.special import wofz

K_B = 1.380649e-23
AMU = 1.66053906660e-27
E_CHARGE = 1.602176634e-19
C = 299792458.0
MASS_U = 4.002602
INSTRUMENT_FWHM_NM = 0.003
LINES_NM = [501.5678, 667.8151, 728.1349]
HALF_RANGE_NM = 0.25
STEP_NM = 0.0015
BACKGROUND = 40.0

SCENES = {
    "he_column_magnetised.txt": dict(T_eV=1.0, field_G=4500.0, incl_deg=60.0, gamma_nm=0.0010, v_kms=1.5,
                                     areas=[40.0, 60.0, 25.0], noise=4.0, seed=4500, stokes_v=True,
                                     title="magnetised: 0.450 T at 60 deg to the line of sight, He I at 1.00 eV"),
    "he_column_hot.txt": dict(T_eV=3.0, field_G=0.0, incl_deg=90.0, gamma_nm=0.0015, v_kms=-0.8,
                              areas=[40.0, 60.0, 25.0], noise=4.0, seed=3000, stokes_v=False,
                              title="hot, coils off: no field, He I at 3.00 eV"),
}


def profile(wl, centre, doppler_nm, gamma_nm):
    wi = INSTRUMENT_FWHM_NM / (2.0 * math.sqrt(math.log(2.0)))
    w = math.hypot(doppler_nm, wi)
    return wofz((wl - centre) / w + 1j * gamma_nm / w).real / (math.sqrt(math.pi) * w)


def line_stokes(wl, lam0, area, p):
    u = math.sqrt(2.0 * K_B * p["T_eV"] * E_CHARGE / K_B / (MASS_U * AMU))
    doppler = lam0 * u / C
    centre = lam0 * (1.0 + p["v_kms"] * 1e3 / C)
    dlb = 4.6686e-13 * (lam0 * 10.0) ** 2 * p["field_G"] * 0.1  # nm
    g = math.radians(p["incl_deg"])
    pb = profile(wl, centre - dlb, doppler, p["gamma_nm"])
    pp = profile(wl, centre, doppler, p["gamma_nm"])
    pr = profile(wl, centre + dlb, doppler, p["gamma_nm"])
    I = area * (pp * math.sin(g) ** 2 / 2 + (pb + pr) * (1 + math.cos(g) ** 2) / 4)
    V = area * (pr - pb) * math.cos(g) / 2
    return I, V


def main():
    out_dir = sys.argv[1] if len(sys.argv) > 1 else os.path.dirname(os.path.abspath(__file__))
    for name, p in SCENES.items():
        rng = np.random.default_rng(p["seed"])
        rows = []
        for lam0, area in zip(LINES_NM, p["areas"]):
            n = int(round(2 * HALF_RANGE_NM / STEP_NM)) + 1
            wl = lam0 - HALF_RANGE_NM + STEP_NM * np.arange(n)
            I, V = line_stokes(wl, lam0, area, p)
            I = BACKGROUND + I + rng.normal(0.0, p["noise"], n)
            V = V + rng.normal(0.0, p["noise"], n)
            rows += [(w, i, v) for w, i, v in zip(wl, I, V)]
        header = ("Invented demo: helium plasma column, " + p["title"] + "\n"
                  "He I 501.57, 667.82, 728.13 nm windows; 3 pm instrument FWHM; counts, noise sigma %.0f counts; "
                  "made by demo_maps/spectra/make_he_column.py\n" % p["noise"])
        with open(os.path.join(out_dir, name), "w") as f:
            f.write("# " + header.replace("\n", "\n# ").rstrip("# ") )
            if p["stokes_v"]:
                f.write("wavelength_nm I V\n")
                for w, i, v in rows:
                    f.write("%.5f %.2f %.2f\n" % (w, i, v))
            else:
                f.write("wavelength_nm I\n")
                for w, i, v in rows:
                    f.write("%.5f %.2f\n" % (w, i))


if __name__ == "__main__":
    main()

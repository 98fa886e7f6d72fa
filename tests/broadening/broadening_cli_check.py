#!/usr/bin/python3
"""Outside checks of `zeeline broadening` (budget, inglis-teller, diagnose) through the command line.

budget: the Doppler FWHM against the formula with scipy.constants (CODATA 2018); the impact width's scaling
with pressure; the Voigt total against a numerical FWHM of scipy.special.wofz; JSON keys of the contract; the
bar-chart PNG (read back with PIL); exit codes for bad units (2) and an existing output (3).
inglis-teller: the published form log10 N = 23.26 - 7.5 log10 n (Inglis & Teller 1939) both ways.
diagnose: spectra made here with numpy/scipy (thin-line Zeeman emission, LL04 sect. 6.6, scipy.special.wofz
Voigt profiles; Lorentz unit 4.6686e-13 lambda[A]^2 B[G] A, LL04 eq. 3.8), independent of zeeline:
  * three He I lines in a field, Stokes I only: the field is detected at the significance expected from the
    noise-free ("Asimov", Cowan et al. 2011, Eur. Phys. J. C 71, 1554) spectrum, whose non-magnetic best fit is
    made here with scipy.optimize.least_squares, and recovered within 3 sigma;
  * the same plasma hot and without field: no detection, an upper limit above zero;
  * one line, and two lines with equal width factor x lambda^2, in a field: `degenerate`, no detection;
  * two absorption lines with Stokes V in a field, as a table and as a FITS file (astropy): the same answer
    from both; their width factor x lambda^2 differ by only 4 %, so the set is degenerate and the detection
    rests on V; the fitted inclination must be below 90 deg (field toward the observer), which checks the sign
    of V in absorption: V = A (phi_r - phi_b) cos(g) / 2 with A < 0 tends, for small splitting, to
    V = -Delta lambda_B g_eff cos(g) dI/dlambda (LL04 eq. 9.77, docs/conventions.md);
  * errors: lines of two species, a line without mass (exit 1).

Usage: /usr/bin/python3 broadening_cli_check.py PATH/TO/zeeline
"""
import json
import math
import os
import subprocess
import sys
import tempfile

import numpy as np
from astropy.io import fits
import scipy.constants as sc
from scipy.optimize import brentq, least_squares
from scipy.special import wofz
from scipy.stats import norm

MASS_U = 4.002602
INSTR = 0.003
HALF = 0.2
STEP = 0.0015
LINES = {"HeI_5016": (501.5678, "1S0", "1P1"), "HeI_6678": (667.8151, "1P1", "1D2"),
         "HeI_7281": (728.1349, "1P1", "1S0")}
CATALOG = """name,wavelength,frame,species,lower,upper,g_lower,g_upper,mass_amu
HeI_4922,492.1931nm,air,He I,1P1,1D2,,,4.002602
HeI_5016,501.5678nm,air,He I,1S0,1P1,,,4.002602
HeI_6678,667.8151nm,air,He I,1P1,1D2,,,4.002602
HeI_7281,728.1349nm,air,He I,1P1,1S0,,,4.002602
EQ_500,500.0nm,air,He I,1S0,1P1,,,4.002602
EQ_707,707.10678nm,air,He I,1S0,1P1,0,0.5,4.002602
ArI_7504,750.3869nm,air,Ar I,1S0,1P1,,,39.948
NOMASS_600,600.0nm,air,He I,1S0,1P1,,,
"""


def profile(wl, centre, doppler, gamma):
    wi = INSTR / (2 * math.sqrt(math.log(2)))
    w = math.hypot(doppler, wi)
    return wofz((wl - centre) / w + 1j * gamma / w).real / (math.sqrt(math.pi) * w)


def triplet(wl, lam0, area, T, B, incl, gamma, v, g_upper=1.0):
    """Thin-line I of a 1S0-1P1-like triplet (shifts -g, 0, +g Lorentz units) or a 1P1-1D2 normal triplet."""
    u = math.sqrt(2 * sc.k * T / (MASS_U * sc.atomic_mass))
    dop = lam0 * u / sc.c
    c = lam0 * (1 + v * 1e3 / sc.c)
    d = g_upper * 4.6686e-13 * (lam0 * 10) ** 2 * B * 0.1
    g = math.radians(incl)
    return area * (profile(wl, c, dop, gamma) * math.sin(g) ** 2 / 2 +
                   (profile(wl, c - d, dop, gamma) + profile(wl, c + d, dop, gamma)) * (1 + math.cos(g) ** 2) / 4)


def write_spectrum(path, lines, T, B, incl, gamma, v, noise, seed, bg=30.0):
    rng = np.random.default_rng(seed)
    rows, clean = [], []
    for lam0, area, gu in lines:
        wl = lam0 - HALF + STEP * np.arange(int(round(2 * HALF / STEP)) + 1)
        I0 = bg + triplet(wl, lam0, area, T, B, incl, gamma, v, gu)
        clean.append((wl, I0))
        rows += list(zip(wl, I0 + rng.normal(0, noise, wl.size)))
    with open(path, "w") as f:
        f.write("wavelength_nm I\n")
        for w, i in rows:
            f.write("%.6f %.5f\n" % (w, i))
    return clean


def asimov_lambda(clean, noise):
    """chi2 of the best non-magnetic fit (shared u, gamma, v; free areas and linear continua) to noise-free data."""
    lam0s = [np.mean(wl) for wl, _ in clean]

    def resid(p):
        u, gamma, v = p
        out = []
        for (wl, I), lam0 in zip(clean, lam0s):
            dop = lam0 * u * 1e3 / sc.c
            X = np.column_stack([profile(wl, lam0 * (1 + v * 1e3 / sc.c), dop, gamma), np.ones_like(wl), wl - lam0])
            coef, *_ = np.linalg.lstsq(X, I, rcond=None)
            out.append((I - X @ coef) / noise)
        return np.concatenate(out)

    best = min((least_squares(resid, [u0, g0, 0.0], bounds=([0.1, 0.0, -20], [100, 0.05, 20]), x_scale=[1, 1e-3, 1],
                              xtol=1e-12, ftol=1e-12) for u0 in (7.0, 9.0) for g0 in (1e-4, 3e-3)),
               key=lambda r: 2 * r.cost)
    return 2 * best.cost


def main():
    zeeline = sys.argv[1]
    failures = []

    def check(ok, what):
        print(("ok   " if ok else "FAIL ") + what)
        if not ok:
            failures.append(what)

    def run(*args):
        return subprocess.run([zeeline, "broadening", *args], capture_output=True, text=True, timeout=300)

    tmp = tempfile.mkdtemp(prefix="zeeline_broadening_")
    # ---------------------------------------------------------------- budget
    r = run("budget", "--wavelength", "656.28nm", "--mass", "1.00794", "--temperature", "10000K",
            "--microturbulence", "1.5km/s", "--pressure", "50000Pa", "--perturber-mass", "4.0026",
            "--collision-diameter", "0.3nm", "--electron-density", "1e15cm-3", "--hydrogen", "3-2",
            "--instrument-fwhm", "3pm", "--upper-decay-rate", "4.4e7/s", "--json")
    check(r.returncode == 0, "budget --json runs (%s)" % r.stderr.strip())
    b = json.loads(r.stdout)
    names = [m["name"] for m in b["mechanisms"]]
    check(names == ["natural", "doppler", "pressure", "stark", "instrument"], "mechanisms in order: %s" % names)
    check(all(set(m) >= {"name", "fwhm_nm", "profile"} for m in b["mechanisms"]), "mechanism keys name/fwhm_nm/profile")
    check({"total_fwhm_nm", "dominant"} <= set(b), "total_fwhm_nm and dominant present")
    mech = {m["name"]: m for m in b["mechanisms"]}
    dop = 2 * math.sqrt(math.log(2)) * 656.28 / sc.c * math.sqrt(2 * sc.k * 1e4 / (1.00794 * sc.atomic_mass) + 1500.0 ** 2)
    check(abs(mech["doppler"]["fwhm_nm"] / dop - 1) < 1e-9, "Doppler FWHM = scipy.constants formula (%.6g nm)" % dop)
    check(abs(mech["instrument"]["fwhm_nm"] - 0.003) < 1e-15, "instrument 3pm = 0.003 nm")
    G = math.sqrt(sum(mech[k]["fwhm_nm"] ** 2 for k in ("doppler", "instrument")))
    L = sum(mech[k]["fwhm_nm"] for k in ("natural", "pressure", "stark"))
    s = G / (2 * math.sqrt(2 * math.log(2)))
    V = lambda x: wofz((x + 1j * L / 2) / (s * math.sqrt(2))).real
    numeric = 2 * brentq(lambda x: V(x) - V(0) / 2, 0, 10 * (G + L), xtol=1e-15)
    check(abs(b["total_fwhm_nm"] / numeric - 1) < 2.4e-4,
          "total = Voigt FWHM of scipy wofz within Olivero-Longbothum accuracy (%.6g vs %.6g nm)" % (b["total_fwhm_nm"], numeric))
    check(b["dominant"] == max(b["mechanisms"], key=lambda m: m["fwhm_nm"])["name"], "dominant is the widest")
    r2 = run("budget", "--wavelength", "656.28nm", "--mass", "1.00794", "--temperature", "10000K", "--pressure",
             "100000Pa", "--perturber-mass", "4.0026", "--collision-diameter", "0.3nm", "--json")
    p2 = {m["name"]: m for m in json.loads(r2.stdout)["mechanisms"]}["pressure"]["fwhm_nm"]
    check(abs(p2 / mech["pressure"]["fwhm_nm"] - 2) < 1e-12, "impact width doubles with the pressure")
    png = os.path.join(tmp, "budget.png")
    r = run("budget", "--wavelength", "667.815nm", "--mass", "4.0026", "--temperature", "1eV", "--field", "0.5T",
            "--lower", "1P1", "--upper", "1D2", "--png", png)
    check(r.returncode == 0 and os.path.exists(png), "budget --png writes the bar chart")
    try:
        from PIL import Image
        with Image.open(png) as im:
            check(im.format == "PNG" and im.size[0] >= 600, "bar chart is a PNG %s" % (im.size,))
    except ImportError:
        check(False, "PIL available")
    r = run("budget", "--wavelength", "667.815nm", "--mass", "4.0026", "--temperature", "1eV", "--png", png)
    check(r.returncode == 3 and "overwrite" in r.stderr, "existing PNG refused with exit 3")
    r = run("budget", "--wavelength", "667.815nm", "--mass", "4.0026", "--temperature", "300C")
    check(r.returncode == 2 and "300C" in r.stderr, "bad temperature unit: exit 2 naming the text")
    r = run("budget", "--wavelength", "656.28nm", "--mass", "1", "--temperature", "1e4K", "--electron-density", "1e15cm-3")
    check(r.returncode == 2 and "--hydrogen" in r.stderr, "Stark without --hydrogen: exit 2")
    r = run("budget", "--wavelength", "656.28nm", "--mass", "1", "--temperature", "1e4K", "--field", "1T")
    check(r.returncode == 2 and "--lower" in r.stderr, "--field without levels: exit 2")

    # ---------------------------------------------------------------- inglis-teller
    r = run("inglis-teller", "--last-resolved", "10", "--json")
    it = json.loads(r.stdout)
    check(abs(it["electron_density_cm3"] / 10 ** 15.76 - 1) < 1e-12, "Inglis-Teller n=10 -> 10^15.76 cm^-3")
    r = run("inglis-teller", "--electron-density", "1e14cm-3", "--json")
    check(abs(json.loads(r.stdout)["last_resolved_n"] - 10 ** ((23.26 - 14) / 7.5)) < 1e-9, "Inglis-Teller inverse")
    r = run("inglis-teller", "--last-resolved", "10", "--electron-density", "1e14")
    check(r.returncode == 2, "both directions at once: exit 2")

    # ---------------------------------------------------------------- diagnose
    cat = os.path.join(tmp, "lines.csv")
    with open(cat, "w") as f:
        f.write(CATALOG)
    three = [(LINES[n][0], a, 1.0) for n, a in zip(("HeI_5016", "HeI_6678", "HeI_7281"), (30.0, 45.0, 20.0))]
    T, B, INCL, GAMMA, VEL, NOISE = 11604.5, 3500.0, 70.0, 0.001, 1.2, 4.0
    mag = os.path.join(tmp, "magnetised.txt")
    clean = write_spectrum(mag, three, T, B, INCL, GAMMA, VEL, NOISE, seed=7)
    lam_a = asimov_lambda(clean, NOISE)
    z_expected = norm.isf(math.exp(-lam_a / 2))
    r = run("diagnose", mag, "--catalog", cat, "--lines", "HeI_5016,HeI_6678,HeI_7281", "--instrument-fwhm", "3pm",
            "--window", "0.2nm", "--noise", str(NOISE), "--json")
    check(r.returncode == 0, "diagnose magnetised runs (%s)" % r.stderr.strip()[:300])
    d = json.loads(r.stdout)
    for key in ("magnetic_required", "field_gauss", "field_err_gauss", "significance_sigma", "upper_limit_gauss",
                "degenerate", "temperature_K"):
        check(key in d, "diagnose JSON has %s" % key)
    check(d["magnetic_required"] is True and d["degenerate"] is False, "injected 3500 G field detected from I alone")
    check(all(l["sense"] == "emission" for l in d["lines"]), "emission detected for the three lines")
    check(abs(d["significance_sigma"] - z_expected) < 3.0,
          "significance %.2f sigma vs Asimov expectation %.2f sigma (likelihood ratio %.1f vs %.1f)"
          % (d["significance_sigma"], z_expected, d["likelihood_ratio"], lam_a))
    pull = (d["field_gauss"] - B) / d["field_err_gauss"]
    check(abs(pull) < 3.0, "field %.0f +- %.0f G vs injected %.0f G (pull %.2f)" % (d["field_gauss"], d["field_err_gauss"], B, pull))
    check(abs(d["temperature_K"] - T) < 3 * d["temperature_err_K"] + 1e-9,
          "temperature %.0f +- %.0f K vs %.0f K" % (d["temperature_K"], d["temperature_err_K"], T))
    print("     magnetised: B %.1f +- %.1f G (truth %.0f), %.2f sigma (expected %.2f), T %.0f +- %.0f K"
          % (d["field_gauss"], d["field_err_gauss"], B, d["significance_sigma"], z_expected, d["temperature_K"],
             d["temperature_err_K"]))

    hot = os.path.join(tmp, "hot.txt")
    write_spectrum(hot, three, 3 * 11604.5, 0.0, 90.0, 0.0015, -0.5, NOISE, seed=8)
    r = run("diagnose", hot, "--catalog", cat, "--instrument-fwhm", "3pm", "--window", "0.2nm", "--json")
    d = json.loads(r.stdout)
    check(r.returncode == 0 and d["magnetic_required"] is False, "hot unmagnetised: no field required")
    check(d["upper_limit_gauss"] is not None and d["upper_limit_gauss"] > 0, "hot: an upper limit is given")
    check(abs(d["temperature_K"] / (3 * 11604.5) - 1) < 0.03, "hot: temperature %.0f K vs 34814 K" % d["temperature_K"])
    print("     hot: significance %.2f sigma, 95 %% upper limit %.0f G, T %.0f K"
          % (d["significance_sigma"], d["upper_limit_gauss"] or float("nan"), d["temperature_K"]))

    one = os.path.join(tmp, "one.txt")
    write_spectrum(one, [(667.8151, 45.0, 1.0)], T, 6000.0, 70.0, GAMMA, VEL, 1.0, seed=9)
    r = run("diagnose", one, "--catalog", cat, "--instrument-fwhm", "3pm", "--json")
    d = json.loads(r.stdout)
    check(r.returncode == 0 and d["degenerate"] is True and d["magnetic_required"] is False,
          "single line in 6000 G: degenerate, no detection (significance %.1f)" % d["significance_sigma"])
    check("single line" in d["degeneracy_reason"], "reason in plain words: %s" % d["degeneracy_reason"])

    eq = os.path.join(tmp, "equal.txt")
    write_spectrum(eq, [(500.0, 30.0, 1.0), (707.10678, 30.0, 0.5)], T, 6000.0, 70.0, GAMMA, VEL, 1.0, seed=10)
    r = run("diagnose", eq, "--catalog", cat, "--lines", "EQ_500,EQ_707", "--instrument-fwhm", "3pm", "--json")
    d = json.loads(r.stdout)
    check(r.returncode == 0 and d["degenerate"] is True and d["magnetic_required"] is False,
          "equal width factor x lambda^2: degenerate, no detection (significance %.1f)" % d["significance_sigma"])
    check("lambda^2" in d["degeneracy_reason"], "reason names z lambda^2")

    # Absorption with V, one contiguous spectrum 491.9 - 501.9 nm, table and FITS.
    wl = 491.9 + 0.0025 * np.arange(4001)
    Bv, Gv = 4000.0, 40.0
    I = np.full(wl.size, 1000.0)
    V = np.zeros(wl.size)
    u = math.sqrt(2 * sc.k * T / (MASS_U * sc.atomic_mass))
    for lam0, area in ((492.1931, -25.0), (501.5678, -35.0)):
        dop, d = lam0 * u / sc.c, 4.6686e-13 * (lam0 * 10) ** 2 * Bv * 0.1
        g = math.radians(Gv)
        pb, pp, pr = (profile(wl, lam0 + s_ * d, dop, GAMMA) for s_ in (-1, 0, 1))
        I += area * (pp * math.sin(g) ** 2 / 2 + (pb + pr) * (1 + math.cos(g) ** 2) / 4)
        V += area * (pr - pb) * math.cos(g) / 2
    rng = np.random.default_rng(12)
    I += rng.normal(0, 3.0, wl.size)
    V += rng.normal(0, 3.0, wl.size)
    table = os.path.join(tmp, "absorption.txt")
    np.savetxt(table, np.column_stack([wl, I, V]), fmt="%.10f", header="wavelength_nm I V", comments="")
    fitsfile = os.path.join(tmp, "absorption.fits")
    hdu = fits.PrimaryHDU(np.vstack([I, 0 * I, 0 * I, V]))
    h = hdu.header
    h["CTYPE1"], h["CUNIT1"], h["CRVAL1"], h["CDELT1"], h["CRPIX1"] = "AWAV", "nm", wl[0], 0.0025, 1.0
    h["CTYPE2"], h["CRVAL2"], h["CDELT2"], h["CRPIX2"] = "STOKES", 1.0, 1.0, 1.0
    hdu.writeto(fitsfile)
    answers = []
    for path in (table, fitsfile):
        r = run("diagnose", path, "--catalog", cat, "--lines", "HeI_4922,HeI_5016", "--instrument-fwhm", "3pm",
                "--window", "0.15nm", "--json")
        check(r.returncode == 0, "diagnose %s runs (%s)" % (os.path.basename(path), r.stderr.strip()[:200]))
        answers.append(json.loads(r.stdout) if r.returncode == 0 else None)
    if all(answers):
        a, f = answers
        check(abs(a["field_gauss"] - f["field_gauss"]) < 1e-3 * a["field_err_gauss"], "table and FITS agree")
        check(a["degenerate"] is True and a["magnetic_required"] is True,
              "near-equal z lambda^2 (4 %%): degenerate, detection from V (%s)" % a["verdict"])
        check(abs(a["field_gauss"] - Bv) < 3 * a["field_err_gauss"],
              "absorption: field %.0f +- %.0f G vs %.0f G" % (a["field_gauss"], a["field_err_gauss"], Bv))
        check(a["inclination_deg"] < 90 and abs(a["inclination_deg"] - Gv) < 3 * a["inclination_err_deg"] + 1e-9,
              "absorption: inclination %.1f +- %.1f deg vs %.0f (sign of V)" % (a["inclination_deg"], a["inclination_err_deg"], Gv))
        check(all(x["cog_blos_gauss"] > 0 for x in a["cross_check"]), "centre-of-gravity B_LOS positive too")
        check([l["sense"] for l in a["lines"]] == ["absorption", "absorption"], "absorption detected for both lines")
        print("     absorption I+V: B %.0f +- %.0f G (truth %.0f), inclination %.1f +- %.1f (truth %.0f)"
              % (a["field_gauss"], a["field_err_gauss"], Bv, a["inclination_deg"], a["inclination_err_deg"], Gv))

    r = run("diagnose", mag, "--catalog", cat, "--lines", "HeI_5016,ArI_7504")
    check(r.returncode == 1 and "species" in r.stderr, "two species: exit 1 naming the species")
    r = run("diagnose", mag, "--catalog", cat, "--lines", "NOMASS_600")
    check(r.returncode == 1 and "mass_amu" in r.stderr and "NOMASS_600" in r.stderr, "no mass: exit 1 naming the line")
    r = run("diagnose", mag, "--catalog", cat, "--lines", "HeI_9999")
    check(r.returncode == 1, "unknown line name: exit 1")

    if failures:
        print("%d check(s) failed" % len(failures))
        sys.exit(1)
    print("all broadening CLI checks passed")


if __name__ == "__main__":
    main()

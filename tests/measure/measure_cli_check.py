#!/usr/bin/python3
"""Outside check of `zeeline measure`: a spectrum made here with numpy/scipy (scipy.special.wofz Voigt
profiles, thin-line emission, LL04 sect. 6.6; Lorentz unit 4.6686e-13 lambda[A]^2 B[G] A, LL04 eq. 3.8) is
written as a table and as a FITS file with astropy (2-D image, CTYPE1 = 'AWAV', CTYPE2 = 'STOKES');
`zeeline measure --json` runs on both; the results must agree with each other and with the injected truth.
Also checks the refusal to overwrite, and a malformed table's message and exit code.

Usage: /usr/bin/python3 measure_cli_check.py PATH/TO/zeeline
"""
import json
import os
import subprocess
import sys
import tempfile

import numpy as np
from astropy.io import fits
from scipy.special import wofz

LAMBDA0 = 643.847     # nm, Cd I 1P1 - 1D2 (normal triplet, g_eff = 1)
B_TOTAL = 8000.0        # G
INCL = 60.0           # deg: B_LOS = 4000 G
V_LOS = 0.8            # km/s (redshift)
DOPPLER = 0.0006      # nm
INSTR = 0.002         # nm FWHM
AREA, BG, NOISE = 2.0, 10.0, 2.0
C_KMS = 299792.458


def make(wl):
    dlb = 4.6686e-13 * (LAMBDA0 * 10) ** 2 * B_TOTAL * 0.1
    lc = LAMBDA0 * (1 + V_LOS / C_KMS)
    wi = INSTR / (2 * np.sqrt(np.log(2)))
    wp = np.hypot(DOPPLER, wi)

    def prof(c):
        return wofz((wl - c) / wp + 1j * 0.0).real / (np.sqrt(np.pi) * wp)

    g = np.radians(INCL)
    pb, pp, pr = prof(lc - dlb), prof(lc), prof(lc + dlb)
    I = BG + AREA * (pp * np.sin(g) ** 2 / 2 + (pb + pr) * (1 + np.cos(g) ** 2) / 4)
    Q = AREA * (pp - (pb + pr) / 2) * np.sin(g) ** 2 / 2
    V = AREA * (pr - pb) * np.cos(g) / 2
    rng = np.random.default_rng(11)
    return [c + rng.normal(0, NOISE, wl.size) for c in (I, Q, 0 * Q, V)], dlb


def run(zeeline, *args):
    return subprocess.run([zeeline, "measure", *args], capture_output=True, text=True, timeout=60)


def main():
    zeeline = sys.argv[1]
    failures = []

    def check(ok, what):
        print(("ok   " if ok else "FAIL ") + what)
        if not ok:
            failures.append(what)

    wl = LAMBDA0 - 0.06 + 0.0005 * np.arange(241)
    (I, Q, U, V), dlb = make(wl)
    line = ["--lower", "1P1", "--upper", "1D2", "--wavelength", "643.847nm", "--gs", "2", "--instrument-fwhm", "2pm",
            "--json", "--realisations", "50"]
    with tempfile.TemporaryDirectory() as d:
        table = os.path.join(d, "lamp.txt")
        np.savetxt(table, np.column_stack([wl, I, Q, U, V]), fmt="%.17g", header="wavelength_nm I Q U V", comments="")
        fitsfile = os.path.join(d, "lamp.fits")
        hdu = fits.PrimaryHDU(np.vstack([I, Q, U, V]))
        h = hdu.header
        h["CTYPE1"], h["CUNIT1"], h["CRVAL1"], h["CDELT1"], h["CRPIX1"] = "AWAV", "nm", wl[0], 0.0005, 1.0
        h["CTYPE2"], h["CRVAL2"], h["CDELT2"], h["CRPIX2"] = "STOKES", 1.0, 1.0, 1.0
        hdu.writeto(fitsfile)

        results = []
        for path in (table, fitsfile):
            p = run(zeeline, path, *line)
            check(p.returncode == 0, f"measure {os.path.basename(path)} exits 0 ({p.stderr.strip()[:200]})")
            if p.returncode != 0:
                continue
            results.append(json.loads(p.stdout))
            check("safety" in p.stderr, "emission line prints the safety note on stderr")
        if len(results) == 2:
            a, b = results
            fa, fb = a["components"]["field_gauss"], b["components"]["field_gauss"]
            # The grids differ only by rounding in the WCS nm -> m -> nm conversion (~1e-15 relative).
            check(abs(fa - fb) <= 1e-5 * fa, f"table and FITS give the same split field ({fa} vs {fb})")
            check(abs(a["estimates"]["cog"]["blos_gauss"] - b["estimates"]["cog"]["blos_gauss"]) < 1e-6 * B_TOTAL,
                  "table and FITS give the same COG B_LOS")
            check(b["input"]["frame"] == "air" and a["input"]["frame"] is None, "frame from CTYPE1 (FITS) only")
            c = a["components"]
            check(abs(c["field_gauss"] - B_TOTAL) < 3 * c["field_err_gauss"],
                  f"split field {c['field_gauss']:.1f} +- {c['field_err_gauss']:.1f} G vs injected {B_TOTAL} (3 sigma)")
            check(abs(c["vlos_kms"] - V_LOS) < 3 * c["vlos_err_kms"],
                  f"component vlos {c['vlos_kms']:.3f} +- {c['vlos_err_kms']:.3f} vs injected {V_LOS} (3 sigma)")
            groups = {g["label"]: g for g in c["groups"]}
            shift = LAMBDA0 * V_LOS / C_KMS
            for label, off in (("sigma_b", -dlb), ("pi", 0.0), ("sigma_r", dlb)):
                g = groups[label]
                check(abs(g["offset_nm"] - shift - off) < 3 * g["position_err_nm"],
                      f"{label} at {g['offset_nm']:.6f} nm, textbook {shift + off:.6f} nm (3 sigma)")
            check(c["resolved"] and a["estimates"]["split"]["valid"], "split valid (resolved)")
            cog = a["estimates"]["cog"]
            blos = B_TOTAL * np.cos(np.radians(INCL))
            check(abs(cog["blos_gauss"] - blos) < 3 * cog["blos_err_gauss"],
                  f"COG B_LOS {cog['blos_gauss']:.0f} +- {cog['blos_err_gauss']:.0f} vs B cos(g) = {blos:.0f}")
            check(not a["estimates"]["wfa"]["valid"], "wfa flagged outside validity for a resolved triplet")
            ch = a["characteristics"]
            check(ch["v_blue_amplitude"] < 0, "emission, field toward observer: V < 0 in the blue wing")
            check(abs(ch["zero_crossing_vlos_kms"] - V_LOS) < 3 * ch["zero_crossing_vlos_err_kms"],
                  f"V zero crossing {ch['zero_crossing_vlos_kms']:.2f} +- {ch['zero_crossing_vlos_err_kms']:.2f} km/s")
            check(a["sense"] == "emission", "emission detected")

        # Refuses to overwrite; malformed table names line and column; exit codes.
        png = os.path.join(d, "out.png")
        open(png, "w").write("keep")
        p = run(zeeline, table, *line[:-3], "--png", png)
        check(p.returncode == 3 and open(png).read() == "keep", "existing --png is not overwritten (exit 3)")
        p = run(zeeline, table, *line[:-3], "--png", png, "--overwrite")
        check(p.returncode == 0 and open(png, "rb").read(4) == b"\x89PNG", "--overwrite writes a PNG")
        bad = os.path.join(d, "bad.txt")
        rows = open(table).read().splitlines()
        rows[5] = rows[5].split()[0] + " 1.0 x 0 0"
        open(bad, "w").write("\n".join(rows) + "\n")
        p = run(zeeline, bad, *line)
        check(p.returncode == 1 and "line 6, column 3 (Q)" in p.stderr, f"malformed table: {p.stderr.strip()}")
    if failures:
        print(f"{len(failures)} check(s) failed")
        sys.exit(1)
    print("all checks passed")


if __name__ == "__main__":
    main()

#!/usr/bin/python3
"""Outside check of `zeeline calibrate crosstalk`: cubes written with astropy in an unusual axis order
(wavelength, STOKES, x, y) from numpy weak-field profiles with injected crosstalk
(demo_maps/calibration/make_crosstalk_cube.py). The recovered coefficients must match the injection within
their reported sigma; the corrected cube (read back with astropy) must match the clean one within the noise
and keep the input's layout and WCS (astropy.wcs), and pass fitsverify (HEASARC) when it is installed.
Usage: /usr/bin/python3 calibrate_crosstalk_cli_check.py ZEELINE"""
import json
import os
import shutil
import subprocess
import sys
import tempfile

import numpy as np
from astropy.io import fits
from astropy.wcs import WCS

HERE = os.path.dirname(os.path.abspath(__file__))
sys.path.insert(0, os.path.join(HERE, "..", "..", "demo_maps", "calibration"))
import make_crosstalk_cube as sim  # noqa: E402

MAX_PULL = 4.0
# The noise is in the clean cube already (added before the crosstalk), so corrected - clean is the
# coefficients' estimation error times the signal: it must stay below the noise level.
NOISE_RMS_TOL = 1.0


def run(args):
    return subprocess.run(args, capture_output=True, text=True)


def main():
    z = sys.argv[1]
    failures = []
    with tempfile.TemporaryDirectory() as tmp:
        obs, clean, out = (os.path.join(tmp, n) for n in ("obs.fits", "clean.fits", "corr.fits"))
        for seed in (21, 22):
            wl, st = sim.clean_cube(seed)
            sim.write(obs, wl, sim.add_crosstalk(st))
            sim.write(clean, wl, st)
            r = run([z, "calibrate", "crosstalk", obs, "--json", "--correct", "-o", out, "--overwrite"])
            if r.returncode != 0:
                failures.append("seed %d: exit %d %s" % (seed, r.returncode, r.stderr))
                continue
            j = json.loads(r.stdout)
            for key, true in sim.CROSSTALK.items():
                pull = (j[key] - true) / j[key + "_err"]
                print("seed %d %s: %.5f +- %.5f (injected %.5f, pull %+.2f)" % (seed, key, j[key], j[key + "_err"], true, pull))
                if abs(pull) > MAX_PULL:
                    failures.append("seed %d %s pull %.2f" % (seed, key, pull))
            with fits.open(out) as hc, fits.open(obs) as ho, fits.open(clean) as hk:
                for k in ("NAXIS", "NAXIS1", "NAXIS2", "NAXIS3", "NAXIS4", "CTYPE1", "CTYPE2", "CTYPE3", "CTYPE4",
                          "BITPIX", "OBJECT"):
                    if hc[0].header.get(k) != ho[0].header.get(k):
                        failures.append("header %s changed: %r -> %r" % (k, ho[0].header.get(k), hc[0].header.get(k)))
                wc, wo = WCS(hc[0].header), WCS(ho[0].header)
                pix = np.array([[0, 0, 0, 0], [10, 2, 5, 7], [47, 3, 23, 19]], dtype=float)
                if not np.allclose(wc.all_pix2world(pix, 0), wo.all_pix2world(pix, 0), rtol=1e-12, atol=0):
                    failures.append("WCS changed")
                corr, cl, ob = hc[0].data.astype(float), hk[0].data.astype(float), ho[0].data.astype(float)
                for s, name in enumerate("IQUV"):
                    rms = np.sqrt(np.mean((corr[:, :, s, :] - cl[:, :, s, :]) ** 2))
                    before = np.sqrt(np.mean((ob[:, :, s, :] - cl[:, :, s, :]) ** 2))
                    print("seed %d %s: rms(corrected - clean) %.2e, before %.2e, noise %.1e" % (seed, name, rms, before, sim.NOISE))
                    if rms > NOISE_RMS_TOL * sim.NOISE:
                        failures.append("seed %d %s: corrected - clean RMS %.2e" % (seed, name, rms))
                    if name != "I" and not before > 2 * sim.NOISE:
                        failures.append("seed %d %s: the injected crosstalk is too small to test" % (seed, name))
                if not np.array_equal(corr[:, :, 0, :], ob[:, :, 0, :]):
                    failures.append("I was changed")
            if shutil.which("fitsverify"):
                v = run(["fitsverify", "-q", "-e", out])
                if v.returncode != 0 or "OK" not in v.stdout:
                    failures.append("fitsverify: " + v.stdout + v.stderr)
        # Hostile pixels (data-sanity check, docs/errors.md): a fill value of 1e30, a NaN, a pixel with I < 0
        # and one with |V| > I. Each is left out whole and counted; without the check the 1e30 alone would
        # dominate sum(I^2) and every coefficient. The injected values must still be recovered.
        wl, st = sim.clean_cube(23)
        bad = sim.add_crosstalk(st)
        bad[3, 4, 0, 7] = 1e30
        bad[5, 6, 1, 0] = np.nan
        bad[7, 8, 0, :] *= -1.0
        bad[9, 10, 3, 20:30] = 3.0 * bad[9, 10, 0, 20:30]
        hostile = os.path.join(tmp, "hostile.fits")
        sim.write(hostile, wl, bad)
        r = run([z, "calibrate", "crosstalk", hostile, "--json"])
        if r.returncode != 0:
            failures.append("hostile pixels: exit %d %s" % (r.returncode, r.stderr))
        else:
            j = json.loads(r.stdout)
            print("hostile pixels: rejected %s, warnings %s" % (j.get("rejected_pixels"), j.get("warnings")))
            if j.get("rejected_pixels") != 4:
                failures.append("hostile pixels: rejected_pixels %r, expected 4" % j.get("rejected_pixels"))
            text = " ".join(j.get("warnings", []))
            for name in ("ABSURD_INPUT 1", "NONFINITE_INPUT 1", "NONPOSITIVE_I 1", "POL_EXCEEDS_I 1"):
                if name not in text:
                    failures.append("hostile pixels: warning lacks %r: %s" % (name, text))
            for key, true in sim.CROSSTALK.items():
                pull = (j[key] - true) / j[key + "_err"]
                print("hostile %s: %.5f +- %.5f (injected %.5f, pull %+.2f)" % (key, j[key], j[key + "_err"], true, pull))
                if abs(pull) > MAX_PULL:
                    failures.append("hostile pixels: %s pull %.2f" % (key, pull))
        nothing = os.path.join(tmp, "nothing.fits")
        sim.write(nothing, wl, np.full_like(bad, np.nan))
        r = run([z, "calibrate", "crosstalk", nothing])
        if r.returncode != 1 or "no usable pixel" not in r.stderr:
            failures.append("all-NaN cube: exit %d %s" % (r.returncode, r.stderr))
        # Errors: existing output -> 3, --correct without -o -> 2, a cube without V -> 1.
        r = run([z, "calibrate", "crosstalk", obs, "--correct", "-o", out])
        if r.returncode != 3:
            failures.append("existing output: exit %d" % r.returncode)
        r = run([z, "calibrate", "crosstalk", obs, "--correct"])
        if r.returncode != 2:
            failures.append("--correct without -o: exit %d" % r.returncode)
        r = run([z, "calibrate", "crosstalk", obs, "--continuum", "630.2nm"])
        if r.returncode != 2 or "START:END" not in r.stderr:
            failures.append("bad --continuum: exit %d %s" % (r.returncode, r.stderr))
        with fits.open(obs) as h:
            data, hdr = h[0].data[:, :, :3, :], h[0].header.copy()
        iqu = os.path.join(tmp, "iqu.fits")
        fits.PrimaryHDU(data, header=hdr).writeto(iqu)
        r = run([z, "calibrate", "crosstalk", iqu])
        if r.returncode != 1 or "Stokes V" not in r.stderr:
            failures.append("cube without V: exit %d %s" % (r.returncode, r.stderr))
    if failures:
        print("FAILED:\n  " + "\n  ".join(failures))
        return 1
    print("calibrate crosstalk: all checks passed")
    return 0


if __name__ == "__main__":
    sys.exit(main())

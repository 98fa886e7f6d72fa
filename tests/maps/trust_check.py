#!/usr/bin/python3
"""No silently wrong pixel from the default paths: `zeeline map` with `--method auto` and `--method wfa`
(default options otherwise) on cubes the project's Milne-Eddington synthesis makes and on the bundled demo.

A pixel is *silently wrong* when QUALITY = 0 and a map misses its truth by more than 20 % and by more than
5 of its own sigma (the criterion of the trust issue). Checked maps: B_TOTAL, B_LOS, B_TRANS, B_INCL.
Truth: the parameter maps given to the synthesis (and the TRUE_* maps of the demo cube). Noise 1e-3 of the
continuum, Fe I 630.25 nm (5P1-5D0), air.
Cubes:
  * grid: eta0 in {0.5, 1, 3, 10, 30} x field 50 G - 3 kG (log-spaced) x inclination 10-170 deg, azimuths
    and velocities varied; both methods must leave no pixel silently wrong.
  * saturated: eta0 3-10, 150-400 G (the trust issue's independent cube): the default weak-field B_T
    (`--method wfa`) has a median error within 10 % -- the textbook whole-line second-derivative form
    (`--transverse whole`, Landi Degl'Innocenti & Landolfi 2004 sect. 9.6) is shown to miss by more.
Usage: /usr/bin/python3 trust_check.py /path/to/zeeline
"""
import os
import subprocess
import sys
import tempfile

import numpy as np
from astropy.io import fits

ZEELINE = sys.argv[1]
SRC = os.path.dirname(os.path.dirname(os.path.dirname(os.path.abspath(__file__))))
CATALOG = os.path.join(SRC, "demo_maps", "lines.csv")
DEMO = os.path.join(SRC, "demo_maps", "bipolar_region.fits")
failures = []

# Map extension names (docs/fits.md) and the parameter-map names `simulate --params` reads.
FIELD, BLOS, BTRANS, INCL = "B_TOTAL", "B_LOS", "B_TRANS", "B_INCL"
SIGMA = "_SIGMA"
P_FIELD, P_INCL, P_AZIM, P_VLOS = "B_TOTAL", "B_INCL", "B_AZIM", "V_LOS"
SIMULATE = "simulate"


def check(cond, what):
    if not cond:
        failures.append(what)
        print("FAIL:", what)


def run(args):
    p = subprocess.run([ZEELINE, *args], capture_output=True, text=True)
    if p.returncode != 0:
        failures.append(f"{' '.join(args[:3])}...: exit {p.returncode}: {p.stderr.strip()[:400]}")
    return p


def write_params(path, field, incl, azim, vlos, eta0, doppler_nm):
    hdus = [fits.PrimaryHDU()]
    for name, unit, val in [(P_FIELD, "G", field), (P_INCL, "deg", incl), (P_AZIM, "deg", azim),
                            (P_VLOS, "km/s", vlos), ("ETA0", "", eta0), ("DOPPLER_WIDTH", "nm", doppler_nm)]:
        h = fits.ImageHDU(np.asarray(val, dtype=np.float64), name=name)
        if unit:
            h.header["BUNIT"] = unit
        hdus.append(h)
    fits.HDUList(hdus).writeto(path, overwrite=True)


def truth_from_params(field, incl):
    g = np.radians(incl)
    return {FIELD: field, BLOS: field * np.cos(g), BTRANS: field * np.sin(g), INCL: incl}


def silently_wrong(maps_path, truth, label, ignore_bits=0, min_usable=0):
    """Silently wrong values among the pixels whose QUALITY, IGNORE_BITS aside, is 0 (at least MIN_USABLE)."""
    with fits.open(maps_path) as m:
        q = m["QUALITY"].data & ~ignore_bits
        count = 0
        for name, t in truth.items():
            v = m[name].data.astype(float)
            e = m[name + SIGMA].data.astype(float)
            d = np.abs(v - t)
            bad = (q == 0) & np.isfinite(v) & (d > 0.2 * np.abs(t)) & (d > 5 * e)
            n = int(bad.sum())
            count += n
            if n:
                ys, xs = np.nonzero(bad)
                for y, x in list(zip(ys, xs))[:3]:
                    print(f"  {label} {name} pixel x={x + 1} y={y + 1}: {v[y, x]:.4g} +- {e[y, x]:.3g}, truth {t[y, x]:.4g}")
        usable = int((q == 0).sum())
        print(f"{label}: {count} silently wrong values; {usable} of {q.size} pixels with QUALITY 0"
              + (f" (bits {ignore_bits} aside)" if ignore_bits else ""))
        check(usable >= min_usable, f"{label}: {usable} usable pixels, expected at least {min_usable}")
        return count


def map_cube(cube, out, method, extra=()):
    run(["map", cube, "--line", "FeI_6302", "--catalog", CATALOG, "-o", out, "--method", method, "--overwrite",
         "--quiet", *extra])


def simulate_and_check(tmp, label, maps, seed, range_nm, points, methods):
    """Synthesise a cube from parameter maps {field, incl, azim, vlos, eta0, doppler} (noise 1e-3) and check
    that no pixel is silently wrong with each method."""
    params = os.path.join(tmp, f"{label}_params.fits")
    write_params(params, maps["field"], maps["incl"], maps["azim"], maps["vlos"], maps["eta0"], maps["doppler"])
    cube = os.path.join(tmp, f"{label}.fits")
    run([SIMULATE, "--params", params, "--line", "FeI_6302", "--catalog", CATALOG, "-o", cube, "--noise", "1e-3",
         "--seed", str(seed), "--range", range_nm, "--points", str(points), "--quiet"])
    truth = truth_from_params(maps["field"], maps["incl"])
    for method in methods:
        out = os.path.join(tmp, f"{label}_{method}.fits")
        map_cube(cube, out, method)
        check(silently_wrong(out, truth, f"{label} cube, --method {method}") == 0,
              f"{label} cube --method {method}: pixels silently wrong")
    return cube


with tempfile.TemporaryDirectory() as tmp:
    rng = np.random.default_rng(20261202)
    # ---- grid cube: every regime at once
    eta_vals = np.array([0.5, 1.0, 3.0, 10.0, 30.0])
    fields = np.geomspace(50.0, 3000.0, 12)
    incls = np.array([10.0, 40.0, 70.0, 90.0, 120.0, 170.0])
    ny, nx = len(eta_vals) * 4, len(fields) * len(incls) // 4 * 1
    E, F, G = np.meshgrid(eta_vals, fields, incls, indexing="ij")
    E, F, G = E.reshape(-1), F.reshape(-1), G.reshape(-1)
    n = E.size  # 360
    nx = 24
    ny = n // nx
    shape = (ny, nx)
    grid = {"field": F, "incl": G, "azim": rng.uniform(0, 180, n), "vlos": rng.uniform(-1, 1, n), "eta0": E,
            "doppler": rng.uniform(2.2e-3, 3.0e-3, n)}
    cube = simulate_and_check(tmp, "grid", {k: v.reshape(shape) for k, v in grid.items()}, 7, "0.08nm", 128,
                              ("auto", "wfa"))

    # Values that were not measured are NaN, never absurd numbers (split maps once held 3e10 deg errors).
    for method in ("split", "cog"):
        out = os.path.join(tmp, f"grid_{method}.fits")
        map_cube(cube, out, method)
        with fits.open(out) as m:
            for h in m[1:]:
                if h.name in ("METHOD", "QUALITY") or h.data is None:
                    continue
                v = h.data.astype(float)
                limit = 180.0 if h.name.startswith(INCL) else 1e5
                check(not np.any(np.abs(v[np.isfinite(v)]) > limit),
                      f"--method {method}: {h.name} holds values beyond {limit:g} (not measured must be NaN)")

    # ---- saturated-line cube: the default weak-field B_T within 10 % (median)
    n = 20 * 20
    shape = (20, 20)
    eta = rng.uniform(3.0, 10.0, n)
    field = rng.uniform(150.0, 400.0, n)
    incl = rng.uniform(60.0, 120.0, n)
    params = os.path.join(tmp, "sat_params.fits")
    write_params(params, field.reshape(shape), incl.reshape(shape), rng.uniform(0, 180, n).reshape(shape),
                 rng.uniform(-0.5, 0.5, n).reshape(shape), eta.reshape(shape), np.full(shape, 2.6e-3))
    cube = os.path.join(tmp, "sat.fits")
    run([SIMULATE, "--params", params, "--line", "FeI_6302", "--catalog", CATALOG, "-o", cube, "--noise", "1e-3",
         "--seed", "11", "--range", "0.06nm", "--points", "96", "--quiet"])
    bt_true = (field * np.sin(np.radians(incl))).reshape(shape)
    medians = {}
    for label, extra in (("default", ()), ("whole", ("--transverse", "whole"))):
        out = os.path.join(tmp, f"sat_{label}.fits")
        map_cube(cube, out, "wfa", extra)
        with fits.open(out) as m:
            rel = m[BTRANS].data.astype(float) / bt_true - 1.0
        medians[label] = float(np.nanmedian(rel))
        print(f"saturated cube, --method wfa, transverse {label}: median B_T error {100 * medians[label]:+.1f} %")
    check(abs(medians["default"]) <= 0.10, "default weak-field B_T on saturated lines within 10 % (median)")
    check(medians["whole"] < -0.10, "the textbook whole-line fit is biased on saturated lines (shows the test can fail)")
    out = os.path.join(tmp, "sat_auto.fits")
    map_cube(cube, out, "auto")
    check(silently_wrong(out, truth_from_params(field.reshape(shape), incl.reshape(shape)), "saturated cube, auto") == 0,
          "saturated cube --method auto: pixels silently wrong")

    # ---- quiet cube: weak fields (10-40 G) whose linear polarisation stays below the noise, inverted with the
    # Milne-Eddington model (`--method me`; `auto` sends such pixels there when the weak-field shape test fails).
    # The fitted B_T is then the length of a noise vector, biased high, and the inclination follows it: such
    # pixels must carry LOW_TRANSVERSE like weak-field ones (on the 479 MiB bench cube 109 of 90 026 unflagged
    # Milne-Eddington pixels were silently wrong before; here 1 600 pixels).
    shape = (40, 40)
    quiet = {"field": rng.uniform(10.0, 40.0, shape), "incl": rng.uniform(30.0, 150.0, shape),
             "azim": rng.uniform(0, 180, shape), "vlos": rng.uniform(-1.0, 1.0, shape),
             "eta0": rng.uniform(3.0, 10.0, shape), "doppler": rng.uniform(2.2e-3, 3.0e-3, shape)}
    simulate_and_check(tmp, "quiet", quiet, 13, "0.06nm", 96, ("me", "auto"))
    # Nearly all those pixels are flagged LOW_TRANSVERSE; their B_LOS, which the flag does not concern
    # (docs/fits.md), must still be right.
    los_truth = {BLOS: truth_from_params(quiet["field"], quiet["incl"])[BLOS]}
    for method in ("me", "auto"):
        check(silently_wrong(os.path.join(tmp, f"quiet_{method}.fits"), los_truth, f"quiet cube B_LOS, --method {method}",
                             ignore_bits=1024, min_usable=1000) == 0, f"quiet cube --method {method}: B_LOS silently wrong")

    # ---- the bundled demo and its TRUE_* maps
    with fits.open(DEMO) as d:
        demo_truth = {k: d["TRUE_" + k].data.astype(float) for k in (FIELD, BLOS, BTRANS, INCL)}
    for method in ("auto", "wfa"):
        out = os.path.join(tmp, f"demo_{method}.fits")
        map_cube(DEMO, out, method)
        check(silently_wrong(out, demo_truth, f"demo, --method {method}") == 0, f"demo --method {method}: pixels silently wrong")

if failures:
    print(f"{len(failures)} failure(s)")
    sys.exit(1)
print("trust check: OK")

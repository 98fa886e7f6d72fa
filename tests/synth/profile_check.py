#!/usr/bin/python3
"""Outside check of `zeeline profile` (run by ctest as: /usr/bin/python3 profile_check.py <zeeline>).

1. The --json contract: keys wavelength_nm, I, Q, U, V with --points samples spanning --range centred on
   --wavelength.
2. An independent Milne-Eddington implementation written here with numpy/scipy: a normal Zeeman triplet
   (1P1 - 1D2 with g_s = 2, textbook shifts -1, 0, +1 Lorentz units), the propagation matrix of
   docs/line_formation.md with scipy.special.wofz, the Lorentz unit from scipy.constants (LL04 eq. 3.8),
   and S = s0 e0 + mu s1 K^-1 e0 solved with numpy.linalg.solve (LL04 sect. 9.8). Compared with
   `--voigt reference` (libcerf) to 1e-9.
3. --png writes a PNG (signature bytes) and refuses to overwrite without --overwrite (exit code 3);
   bad option values exit with code 2.
"""
import json
import os
import subprocess
import sys
import tempfile

import numpy as np
from scipy import constants
from scipy.special import wofz


def run(args, expect=0):
    proc = subprocess.run(args, capture_output=True, text=True)
    if proc.returncode != expect:
        sys.exit(f"FAIL: {' '.join(args)} exited {proc.returncode} (expected {expect}): {proc.stderr}")
    return proc.stdout


def me_triplet(wl, lam0, B, incl_deg, azi_deg, vlos, wd, a, eta0, s0, s1, mu):
    lb = constants.e * (lam0 * 1e-9) ** 2 * (B * 1e-4) / (4 * np.pi * constants.m_e * constants.c) * 1e9
    centre = lam0 * (1 + vlos * 1e3 / constants.c)
    prof = {q: wofz((wl - centre - q * lb) / wd + 1j * a) for q in (-1, 0, 1)}
    g, chi = np.radians(incl_deg), np.radians(azi_deg)
    A = eta0 / 2
    out = np.zeros((len(wl), 4))
    for k in range(len(wl)):
        pb, pp, pr = prof[-1][k], prof[0][k], prof[1][k]
        lin = pp - 0.5 * (pb + pr)
        eI = 1 + A * (pp.real * np.sin(g) ** 2 + 0.5 * (pb.real + pr.real) * (1 + np.cos(g) ** 2))
        eQ, rQ = (A * lin * np.sin(g) ** 2 * np.cos(2 * chi)).real, (A * lin * np.sin(g) ** 2 * np.cos(2 * chi)).imag
        eU, rU = (A * lin * np.sin(g) ** 2 * np.sin(2 * chi)).real, (A * lin * np.sin(g) ** 2 * np.sin(2 * chi)).imag
        eV, rV = (A * (pr - pb) * np.cos(g)).real, (A * (pr - pb) * np.cos(g)).imag
        K = np.array([[eI, eQ, eU, eV], [eQ, eI, rV, -rU], [eU, -rV, eI, rQ], [eV, rU, -rQ, eI]])
        y = np.linalg.solve(K, [1.0, 0.0, 0.0, 0.0])
        out[k] = mu * s1 * y
        out[k, 0] += s0
    return out


def main():
    exe = sys.argv[1]
    par = dict(B=1800.0, incl_deg=35.0, azi_deg=110.0, vlos=-0.7, wd=2.5e-3, a=0.15, eta0=6.0, s0=0.2, s1=0.8,
               mu=0.9)
    lam0 = 525.0
    args = [exe, "profile", "--lower", "1P1", "--upper", "1D2", "--gs", "2", "--wavelength", f"{lam0}nm",
            "--field", f"{par['B']}G", "--inclination", str(par["incl_deg"]), "--azimuth", str(par["azi_deg"]),
            "--vlos", f"{par['vlos']}km/s", "--doppler-width", f"{par['wd'] * 10}A", "--damping", str(par["a"]),
            "--eta0", str(par["eta0"]), "--s0", str(par["s0"]), "--s1", str(par["s1"]), "--mu", str(par["mu"]),
            "--range", "0.06nm", "--points", "121", "--voigt", "reference", "--json"]
    data = json.loads(run(args))
    for key in ("wavelength_nm", "I", "Q", "U", "V"):
        assert key in data and len(data[key]) == 121, f"FAIL: key {key} missing or wrong length"
    wl = np.array(data["wavelength_nm"])
    assert abs(wl[0] - (lam0 - 0.03)) < 1e-12 and abs(wl[-1] - (lam0 + 0.03)) < 1e-12, "FAIL: grid span"
    assert abs(wl[60] - lam0) < 1e-12, "FAIL: grid centre"
    got = np.column_stack([data[k] for k in ("I", "Q", "U", "V")])
    expected = me_triplet(wl, lam0, **par)
    err = np.abs(got - expected).max()
    assert err < 1e-9, f"FAIL: independent Milne-Eddington differs by {err}"
    # default (fast Voigt) path: within the measured Humlicek accuracy
    fast = json.loads(run([x for x in args if x not in ("--voigt", "reference")]))
    err_fast = np.abs(np.column_stack([fast[k] for k in ("I", "Q", "U", "V")]) - expected).max()
    assert err_fast < 1e-4, f"FAIL: fast path differs by {err_fast}"

    with tempfile.TemporaryDirectory() as tmp:
        png = os.path.join(tmp, "stokes.png")
        base = [exe, "profile", "--lower", "5P1", "--upper", "5D0", "--wavelength", "630.2494nm", "--field",
                "1200G", "--inclination", "30", "--png", png]
        run(base)
        with open(png, "rb") as f:
            assert f.read(8) == b"\x89PNG\r\n\x1a\n", "FAIL: not a PNG"
        run(base, expect=3)
        run(base + ["--overwrite"])
    run([exe, "profile", "--lower", "5P1", "--upper", "5D0", "--wavelength", "630.2494nm", "--fill", "1.5"], expect=2)
    run([exe, "profile", "--lower", "5P1", "--upper", "5D0", "--wavelength", "630.2494nm", "--points", "1"], expect=2)
    print(f"profile_check: OK (reference path max diff {err:.2e}, fast path {err_fast:.2e})")


if __name__ == "__main__":
    main()

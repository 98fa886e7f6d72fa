#!/usr/bin/python3
"""Outside check of `zeeline map --method me` (run as: /usr/bin/python3 me_cli_check.py <zeeline>).

Synthesises a small demo cube (`zeeline simulate --demo`, which writes TRUE_* truth maps of the Milne-Eddington
parameters it used), maps it with `--method me --disambiguate`, reads both files with astropy (independent
FITS reader) and compares the maps with the truth using numpy. Tolerances (stated beside each check) are
judgement calls for noise 1e-3 of the continuum, the demo's default. The fitted azimuth is compared with
TRUE_B_AZIM modulo 180; TRUE_B_AZIM is the direction of the horizontal field on [0, 360) (field fanning out
of the positive concentration, converging into the negative patch), so the disambiguated B_AZIM is also
compared with it modulo 360 where the true transverse field is strong (the acute-angle rule is tested
against a closed-form field in disambiguation_test.cpp).
"""
import os
import subprocess
import sys
import tempfile

import numpy as np
from astropy.io import fits


def run(args):
    r = subprocess.run(args, capture_output=True, text=True)
    if r.returncode != 0:
        sys.exit(f"FAIL: {' '.join(args)} exited {r.returncode}\n{r.stdout}\n{r.stderr}")
    return r.stdout


def main():
    if len(sys.argv) != 2:
        sys.exit("usage: me_cli_check.py <zeeline binary>")
    zeeline = sys.argv[1]
    here = os.path.dirname(os.path.abspath(__file__))
    catalog = os.path.join(here, "..", "..", "demo_maps", "lines.csv")
    failures = []

    def check(ok, what):
        print(("ok   " if ok else "FAIL ") + what)
        if not ok:
            failures.append(what)

    with tempfile.TemporaryDirectory() as tmp:
        cube = os.path.join(tmp, "cube.fits")
        maps = os.path.join(tmp, "maps.fits")
        run([zeeline, "simulate", "--demo", "--nx", "16", "--ny", "16", "--line", "FeI_6302", "--catalog", catalog,
             "-o", cube, "--quiet"])
        ql = os.path.join(tmp, "ql")
        out = run([zeeline, "map", cube, "--line", "FeI_6302", "--catalog", catalog, "--method", "me",
                   "--disambiguate", "--threads", "2", "-o", maps, "--png", ql])
        print(out.strip())
        with fits.open(cube) as c, fits.open(maps) as m:
            names = [h.name for h in m]
            for required in ["B_TOTAL", "B_TOTAL_SIGMA", "B_INCL", "B_INCL_SIGMA", "B_AZIM", "B_AZIM_SIGMA",
                             "B_LOS", "B_LOS_SIGMA", "B_TRANS", "B_TRANS_SIGMA", "V_LOS", "V_LOS_SIGMA", "CHI2", "METHOD",
                             "QUALITY", "AZIM_PICK"]:
                check(required in names, f"HDU {required} present")
            if failures:
                sys.exit(1)
            t_field = c["TRUE_B_TOTAL"].data.astype(float)
            t_incl = c["TRUE_B_INCL"].data.astype(float)
            t_azi = c["TRUE_B_AZIM"].data.astype(float)
            t_vlos = c["TRUE_V_LOS"].data.astype(float)
            field = m["B_TOTAL"].data.astype(float)
            field_err = m["B_TOTAL_SIGMA"].data.astype(float)
            incl = m["B_INCL"].data.astype(float)
            azi = m["B_AZIM"].data.astype(float)
            vlos = m["V_LOS"].data.astype(float)
            chi2 = m["CHI2"].data.astype(float)
            method = m["METHOD"].data
            quality = m["QUALITY"].data
            two_comp = c["TRUE_WEIGHT"].data < 1 if "TRUE_WEIGHT" in [h.name for h in c] else np.zeros_like(t_field, bool)

            check(np.all(method == 4), "METHOD = 4 (me) everywhere")
            single = ~two_comp
            # The model matches the data in single-component pixels: median reduced chi2 near 1 (the noise
            # is measured from the continuum, so within 20 %).
            med_chi2 = np.nanmedian(chi2[single])
            check(0.8 < med_chi2 < 1.2, f"median CHI2 {med_chi2:.3f} in (0.8, 1.2)")
            strong = single & (t_field > 300)
            weak = single & (t_field <= 300)
            if strong.any():
                rel = np.nanmedian(np.abs(field[strong] - t_field[strong]) / t_field[strong])
                check(rel < 0.02, f"median |dB|/B {rel:.4f} < 2 % where B > 300 G ({strong.sum()} px)")
                di = np.nanmedian(np.abs(incl[strong] - t_incl[strong]))
                check(di < 2.0, f"median |d inclination| {di:.3f} deg < 2 deg where B > 300 G")
                # Azimuth: compare modulo 180 (the truth is reported in [0, 180)).
                da = np.abs(np.mod(azi[strong] - t_azi[strong] + 90.0, 180.0) - 90.0)
                check(np.nanmedian(da) < 3.0, f"median |d azimuth| (mod 180) {np.nanmedian(da):.3f} deg < 3 deg")
                # Reported errors: pull width of B near 1 (0.6-1.6 on this small sample).
                pull = (field[strong] - t_field[strong]) / field_err[strong]
                width = 1.4826 * np.nanmedian(np.abs(pull - np.nanmedian(pull)))
                check(0.6 < width < 1.6, f"robust pull width of B_TOTAL {width:.3f} in (0.6, 1.6)")
            if weak.any():
                blos_t = t_field * np.cos(np.radians(t_incl))
                d = np.nanmedian(np.abs(m["B_LOS"].data[weak] - blos_t[weak]))
                check(d < 10.0, f"median |d B_LOS| {d:.2f} G < 10 G where B <= 300 G ({weak.sum()} px)")
            dv = np.nanmedian(np.abs(vlos[single] - t_vlos[single]))
            check(dv < 0.05, f"median |d V_LOS| {dv:.4f} km/s < 0.05 km/s")
            check(np.all(np.isfinite(azi) & (azi >= 0) & (azi < 360)), "disambiguated B_AZIM in [0, 360)")
            check(np.all((t_azi >= 0) & (t_azi < 360)) and np.any(t_azi >= 180), "TRUE_B_AZIM unfolded on [0, 360)")
            # The file says what its codes mean: AZRANGE on B_AZIM, QBITn naming each QUALITY bit as
            # docs/fits.md lists them (bit 2 = NOT_CONVERGED, bit 5 = BAD_FIT, ...).
            check(m["B_AZIM"].header.get("AZRANGE") == 360, f"B_AZIM AZRANGE = {m['B_AZIM'].header.get('AZRANGE')}")
            qh = m["QUALITY"].header
            for bit, name in ((0, "NONFINITE_INPUT"), (1, "LOW_SIGNAL"), (2, "NOT_CONVERGED"), (5, "BAD_FIT")):
                check(qh.get("QBIT%d" % bit) == name, f"QUALITY QBIT{bit} = {qh.get('QBIT%d' % bit)!r} ({name})")
            # Quicklooks: the truth maps of the cube are drawn next to the results.
            pngs = sorted(os.listdir(ql))
            check("maps_true_b_los.png" in pngs and "maps_b_los.png" in pngs, f"truth quicklooks written: {pngs}")
            # Disambiguation against the truth modulo 360 where the true B_TRANS > 200 G (there the potential
            # field of this bipole points the same way as the scene's field; 95 % is a judgement call).
            tt = c["TRUE_B_TRANS"].data.astype(float) > 200.0
            d360 = np.abs(np.mod(azi[tt] - t_azi[tt] + 180.0, 360.0) - 180.0)
            right = np.mean(d360 < 30.0)
            check(tt.sum() >= 10 and right >= 0.95,
                  f"disambiguated azimuth within 30 deg of the truth (mod 360) in {right:.3f} of {tt.sum()} px")
            converged = np.mean((quality & 4) == 0)
            check(converged > 0.95, f"{converged:.3f} of pixels converged (> 95 %)")
    if failures:
        sys.exit(f"{len(failures)} check(s) failed")
    print("all ME CLI checks passed")


if __name__ == "__main__":
    main()

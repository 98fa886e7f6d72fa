#!/usr/bin/python3
"""Outside check of `zeeline calibrate magnet`: lamp spectra simulated with numpy, scipy's wofz (Voigt) and
sympy's wigner_3j (component strengths, LL04 eq. 3.13) from the thin-line emission formulas (LL04 sect. 6.6)
with an injected field scale f and response matrix X (demo_maps/calibration/make_magnet_spectra.py): a normal
triplet (Cd I 643.8 nm) and a jK line (Ne I 640.2 nm). f and every constrained element of X must agree with
the injection within 4 reported sigma, unexcited columns must be reported (null), v_sign must be the sign of
the injected X_VV, the safety caution must be printed, and bad inputs give the documented exit codes.
Usage: /usr/bin/python3 calibrate_magnet_cli_check.py ZEELINE"""
import json
import os
import subprocess
import sys
import tempfile

import numpy as np

HERE = os.path.dirname(os.path.abspath(__file__))
ROOT = os.path.join(HERE, "..", "..")
sys.path.insert(0, os.path.join(ROOT, "demo_maps", "calibration"))
import make_magnet_spectra as sim  # noqa: E402

MAX_PULL = 4.0
LINES = os.path.join(ROOT, "demo_maps", "lines.csv")


def run(args):
    return subprocess.run(args, capture_output=True, text=True)


def main():
    z = sys.argv[1]
    failures = []
    with tempfile.TemporaryDirectory() as tmp:
        paths = sim.write_all(tmp, 77)
        cases = [
            ("Cd normal triplet", ["cd_long.csv:0,0", "cd_trans.csv:90,0"], "CdI_6438", "10kG", ["U"]),
            ("Ne jK line", ["ne_long.csv:0,0", "ne_trans.csv:90,0", "ne_trans45.csv:90,45"], "NeI_6402", "15kG", []),
        ]
        for label, specs, line, field, unconstrained in cases:
            args = [z, "calibrate", "magnet", "--line", line, "--catalog", LINES, "--field", field,
                    "--instrument-fwhm", "2pm", "--damping", "0.02", "--json"]
            for s in specs:
                args += ["--spectrum", os.path.join(tmp, s)]
            r = run(args)
            if r.returncode != 0:
                failures.append("%s: exit %d %s" % (label, r.returncode, r.stderr))
                continue
            j = json.loads(r.stdout)
            for key in ("field_scale", "field_scale_err", "response_matrix", "response_matrix_err", "unconstrained",
                        "v_sign"):
                if key not in j:
                    failures.append("%s: missing key %s" % (label, key))
            pull = (j["field_scale"] - sim.F_TRUE) / j["field_scale_err"]
            print("%s: f = %.5f +- %.5f (injected %.3f, pull %+.2f)" % (label, j["field_scale"], j["field_scale_err"],
                                                                        sim.F_TRUE, pull))
            if abs(pull) > MAX_PULL:
                failures.append("%s: field scale pull %.2f" % (label, pull))
            if j["unconstrained"] != unconstrained:
                failures.append("%s: unconstrained %s, expected %s" % (label, j["unconstrained"], unconstrained))
            x, xe = j["response_matrix"], j["response_matrix_err"]
            pulls = []
            for c in range(4):
                col_null = "IQUV"[c] in unconstrained
                for row in range(4):
                    if col_null:
                        if x[row][c] is not None:
                            failures.append("%s: X[%d][%d] should be null" % (label, row, c))
                        continue
                    if row == 0 and c == 0:
                        if x[0][0] != 1.0:
                            failures.append("%s: X_II must be 1" % label)
                        continue
                    pulls.append((x[row][c] - sim.X_TRUE[row, c]) / xe[row][c])
            pulls = np.array(pulls)
            print("%s: %d X elements, max |pull| %.2f, RMS %.2f" % (label, len(pulls), np.abs(pulls).max(),
                                                                    np.sqrt(np.mean(pulls ** 2))))
            if np.abs(pulls).max() > MAX_PULL:
                failures.append("%s: X pull %.2f" % (label, np.abs(pulls).max()))
            if j["v_sign"] != 1:
                failures.append("%s: v_sign %s" % (label, j["v_sign"]))
            if "pacemaker" not in r.stderr or "pacemaker" not in j.get("safety", ""):
                failures.append("%s: safety caution missing" % label)
        # Text output carries the caution too.
        r = run([z, "calibrate", "magnet", "--line", "CdI_6438", "--catalog", LINES, "--field", "1T",
                 "--spectrum", paths["cd_long.csv"] + ":0,0"])
        if r.returncode != 0 or "pacemakers" not in r.stdout or "high voltage" not in r.stdout:
            failures.append("text output: exit %d, caution missing" % r.returncode)
        # Errors: malformed geometry -> 2; missing file -> 1; existing --png -> 3.
        r = run([z, "calibrate", "magnet", "--line", "CdI_6438", "--catalog", LINES, "--field", "1T",
                 "--spectrum", paths["cd_long.csv"] + ":zero,0"])
        if r.returncode != 2 or "INCLINATION" not in r.stderr:
            failures.append("bad geometry: exit %d %s" % (r.returncode, r.stderr))
        r = run([z, "calibrate", "magnet", "--line", "CdI_6438", "--catalog", LINES, "--field", "1T",
                 "--spectrum", os.path.join(tmp, "nope.csv") + ":0,0"])
        if r.returncode != 1:
            failures.append("missing spectrum: exit %d" % r.returncode)
        png = os.path.join(tmp, "m.png")
        open(png, "w").write("keep")
        r = run([z, "calibrate", "magnet", "--line", "CdI_6438", "--catalog", LINES, "--field", "1T",
                 "--spectrum", paths["cd_long.csv"] + ":0,0", "--png", png])
        if r.returncode != 3 or open(png).read() != "keep":
            failures.append("existing --png: exit %d" % r.returncode)
    if failures:
        print("FAILED:\n  " + "\n  ".join(failures))
        return 1
    print("calibrate magnet: all checks passed")
    return 0


if __name__ == "__main__":
    sys.exit(main())

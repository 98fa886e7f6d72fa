#!/usr/bin/python3
"""Outside check of `zeeline calibrate modulation`: calibration sequences simulated with numpy Mueller
matrices written out from the textbook formulas (demo_maps/calibration/make_bench_sequence.py; Collett 2005)
and Poisson + read noise; the fitted O, retardance, offset and transmissions must agree with the injected
values within the reported sigma, D O = 1 (numpy), the efficiencies obey del Toro Iniesta & Collados (2000)
bounds, degenerate sequences and bad inputs give the documented exit codes (docs/cli.md).
Usage: /usr/bin/python3 calibrate_modulation_cli_check.py ZEELINE"""
import json
import os
import subprocess
import sys
import tempfile

import numpy as np

HERE = os.path.dirname(os.path.abspath(__file__))
sys.path.insert(0, os.path.join(HERE, "..", "..", "demo_maps", "calibration"))
import make_bench_sequence as sim  # noqa: E402

MAX_PULL = 4.5          # no single parameter beyond 4.5 sigma (62 parameters over 3 seeds: p ~ 1e-3)
PULL_RMS = (0.6, 1.5)   # RMS of all pulls (~190 values) near 1


def run(args):
    return subprocess.run(args, capture_output=True, text=True)


def main():
    z = sys.argv[1]
    failures = []
    pulls = []
    with tempfile.TemporaryDirectory() as tmp:
        for seed in (11, 12, 13):
            rows, o_true, t_true = sim.simulate("good", seed)
            path = os.path.join(tmp, "seq%d.csv" % seed)
            sim.write(path, rows, "good")
            r = run([z, "calibrate", "modulation", path, "--json", "--gain", str(sim.GAIN),
                     "--read-noise", str(sim.READ_NOISE)])
            if r.returncode != 0:
                failures.append("seed %d: exit %d: %s" % (seed, r.returncode, r.stderr))
                continue
            j = json.loads(r.stdout)
            for key in ("modulation_matrix", "modulation_matrix_err", "demodulation_matrix", "efficiency",
                        "retardance_deg", "retardance_err_deg", "retarder_offset_deg", "retarder_offset_err_deg",
                        "transmission", "chi2_reduced"):
                if key not in j:
                    failures.append("missing key " + key)
            o = np.array(j["modulation_matrix"])
            oe = np.array(j["modulation_matrix_err"])
            d = np.array(j["demodulation_matrix"])
            pulls += list(((o - o_true) / oe).ravel())
            pulls.append((j["retardance_deg"] - sim.RETARDANCE_DEG) / j["retardance_err_deg"])
            pulls.append((j["retarder_offset_deg"] - sim.OFFSET_DEG) / j["retarder_offset_err_deg"])
            for name, t in t_true.items():
                if name != "open":
                    pulls.append((j["transmission"][name] - t) / j["transmission_err"][name])
            if abs(j["transmission"]["open"] - 1.0) > 0:
                failures.append("the first open state must have transmission 1")
            if not np.allclose(d @ o, np.eye(4), atol=1e-9):
                failures.append("D O is not the identity")
            e = j["efficiency"]
            if e["I"] > 1 + 1e-12 or e["Q"] ** 2 + e["U"] ** 2 + e["V"] ** 2 > 1 + 1e-12:
                failures.append("efficiency bounds violated: %s" % e)
            # efficiencies of O normalised to max O_k0 = 1 (del Toro Iniesta & Collados 2000, eq. 34), numpy
            on = o / o[:, 0].max()
            dn = np.linalg.pinv(on)
            eps = 1.0 / np.sqrt(on.shape[0] * (dn ** 2).sum(axis=1))
            if not np.allclose(eps, [e["I"], e["Q"], e["U"], e["V"]], rtol=1e-9):
                failures.append("efficiencies differ from numpy: %s vs %s" % (eps, e))
            if not 0.4 < j["chi2_reduced"] < 2.0:
                failures.append("chi2_reduced %g" % j["chi2_reduced"])
        pulls = np.array(pulls)
        if np.abs(pulls).max() > MAX_PULL:
            failures.append("largest |pull| %.2f" % np.abs(pulls).max())
        rms = np.sqrt(np.mean(pulls ** 2))
        if not PULL_RMS[0] < rms < PULL_RMS[1]:
            failures.append("pull RMS %.3f" % rms)
        print("modulation fit: %d pulls, RMS %.3f, max |pull| %.2f" % (len(pulls), rms, np.abs(pulls).max()))

        # Degenerate designs: exit 1 naming the V column; no output written.
        for kind in ("polariser-only", "parallel"):
            rows, _, _ = sim.simulate(kind, 5)
            path = os.path.join(tmp, kind + ".csv")
            sim.write(path, rows, kind)
            out = os.path.join(tmp, kind + ".json")
            r = run([z, "calibrate", "modulation", path, "-o", out])
            if r.returncode != 1 or "V column" not in r.stderr or os.path.exists(out):
                failures.append("%s: exit %d, stderr %r" % (kind, r.returncode, r.stderr))
        # Output exists without --overwrite: exit 3; with --overwrite: replaced.
        rows, _, _ = sim.simulate("good", 11)
        good = os.path.join(tmp, "good.csv")
        sim.write(good, rows, "good")
        out = os.path.join(tmp, "cal.json")
        open(out, "w").write("keep")
        r = run([z, "calibrate", "modulation", good, "-o", out])
        if r.returncode != 3 or open(out).read() != "keep":
            failures.append("existing output: exit %d" % r.returncode)
        r = run([z, "calibrate", "modulation", good, "-o", out, "--overwrite"])
        if r.returncode != 0 or "modulation_matrix" not in json.load(open(out)):
            failures.append("--overwrite: exit %d %s" % (r.returncode, r.stderr))
        # Bad option value: exit 2. Malformed table: exit 1 naming the line and column.
        r = run([z, "calibrate", "modulation", good, "--gain", "-1"])
        if r.returncode != 2 or "gain" not in r.stderr:
            failures.append("bad --gain: exit %d %s" % (r.returncode, r.stderr))
        bad = os.path.join(tmp, "bad.csv")
        open(bad, "w").write("state_name,polarizer_deg,retarder_deg,m1,m2,m3,m4\nopen,,,1,2,3,4\npol,0,,1,2,x,4\n")
        r = run([z, "calibrate", "modulation", bad])
        if r.returncode != 1 or "bad.csv:3: column 6 (m3)" not in r.stderr:
            failures.append("malformed table: exit %d %s" % (r.returncode, r.stderr))
        r = run([z, "calibrate", "modulation", os.path.join(tmp, "missing.csv")])
        if r.returncode != 1:
            failures.append("missing table: exit %d" % r.returncode)
    if failures:
        print("FAILED:\n  " + "\n  ".join(failures))
        return 1
    print("calibrate modulation: all checks passed")
    return 0


if __name__ == "__main__":
    sys.exit(main())

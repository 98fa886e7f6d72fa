#!/usr/bin/python3
"""Writes demo_maps/calibration/bench_sequence.csv: an invented laboratory scenario -- the "Tarn Hollow"
bench spectropolarimeter, a four-state modulator in front of a CCD (gain 2.1 e-/count, read noise 6 counts,
dark level 210 counts), calibrated with a sliding calibration unit: a wire-grid polariser followed by a
mica retarder sold as quarter-wave (true retardance 83.7 deg at the working wavelength, mount offset
+0.9 deg of its fast axis). The lamp brightens by 0.15 % per state while the sequence runs.

Independent of zeeline: the Mueller matrices are written out here from the textbook formulas (Collett,
Field Guide to Polarization, 2005, pp. 20-24) with numpy. Noise: Poisson photo-electrons plus Gaussian
read noise, fixed seed.

Usage: /usr/bin/python3 make_bench_sequence.py [OUTPUT] [--seed N] [--design good|polariser-only|parallel]
"""
import argparse
import os

import numpy as np

GAIN = 2.1            # e- per count
READ_NOISE = 6.0      # counts
DARK = np.array([210.0, 205.0, 214.0, 208.0])  # counts per modulation state
RETARDANCE_DEG = 83.7
OFFSET_DEG = 0.9
FLUX = 30000.0        # counts of the open beam summed over a modulation cycle / 2
DRIFT_PER_STATE = 0.0015


def polariser(theta_deg):
    c, s = np.cos(2 * np.radians(theta_deg)), np.sin(2 * np.radians(theta_deg))
    return 0.5 * np.array([[1, c, s, 0], [c, c * c, c * s, 0], [s, c * s, s * s, 0], [0, 0, 0, 0]])


def retarder(theta_deg, delta_deg):
    c, s = np.cos(2 * np.radians(theta_deg)), np.sin(2 * np.radians(theta_deg))
    cd, sd = np.cos(np.radians(delta_deg)), np.sin(np.radians(delta_deg))
    return np.array([[1, 0, 0, 0], [0, c * c + s * s * cd, c * s * (1 - cd), -s * sd],
                     [0, c * s * (1 - cd), s * s + c * c * cd, c * sd], [0, s * sd, -c * sd, cd]])


def true_modulation():
    """Four states of a 127-deg retarder at -51.7, -15.1, 15.1, 51.7 deg before an analyser at 0 deg,
    with a few per cent of unequal state throughput (invented)."""
    rows = [(polariser(0.0) @ retarder(a, 127.0))[0] for a in (-51.7, -15.1, 15.1, 51.7)]
    throughput = np.array([1.00, 0.97, 1.02, 0.99])
    return 2 * FLUX * throughput[:, None] * np.array(rows)


def design(kind):
    states = [("dark_start", None, None), ("dark_end", None, None), ("open", None, None)]
    if kind == "good":
        states += [("pol_%03d" % p, p, None) for p in (0, 45, 90, 135)]
        states += [("qwp_%03d" % r, 0.0, r) for r in (0, 30, 60, 90, 120, 150)]
        states += [("qwp45_%03d" % r, 45.0, r) for r in (15, 75)]
    elif kind == "polariser-only":
        states += [("pol_%03d" % p, p, None) for p in (0, 45, 90, 135, 30, 60)]
    elif kind == "parallel":
        states += [("pol_%03d" % p, p, None) for p in (0, 45, 90, 135)]
        states += [("par_%03d" % p, p, p) for p in (0, 45)] + [("perp_%03d" % p, p, p + 90) for p in (0, 45)]
    states.append(("open_end", None, None))
    return states


def simulate(kind="good", seed=4242):
    rng = np.random.default_rng(seed)
    o = true_modulation()
    rows = []
    truth_t = {}
    for k, (name, pol, ret) in enumerate(design(kind)):
        s = np.array([1.0, 0, 0, 0])
        if pol is not None:
            s = polariser(pol) @ s
        if ret is not None:
            s = retarder(ret + OFFSET_DEG, RETARDANCE_DEG) @ s
        t = 1.0 if name == "open" else 1.0 + DRIFT_PER_STATE * k
        if name.startswith("dark"):
            light = np.zeros(4)
        else:
            light = t * (o @ s)
            truth_t[name] = t
        electrons = rng.poisson(np.maximum(light, 0) * GAIN)
        counts = electrons / GAIN + DARK + rng.normal(0.0, READ_NOISE, 4)
        rows.append((name, pol, ret, counts))
    return rows, o, truth_t


def write(path, rows, kind):
    def a(v):
        return "" if v is None else "%g" % v
    with open(path, "w") as f:
        f.write("# Invented demo: calibration sequence of the Tarn Hollow bench polarimeter (design: %s)\n" % kind)
        f.write("# made by demo_maps/calibration/make_bench_sequence.py; counts per modulation state m1..m4\n")
        f.write("state_name,polarizer_deg,retarder_deg,m1,m2,m3,m4\n")
        for name, pol, ret, c in rows:
            f.write("%s,%s,%s,%s\n" % (name, a(pol), a(ret), ",".join("%.1f" % x for x in c)))


if __name__ == "__main__":
    ap = argparse.ArgumentParser()
    ap.add_argument("output", nargs="?",
                    default=os.path.join(os.path.dirname(os.path.abspath(__file__)), "bench_sequence.csv"))
    ap.add_argument("--seed", type=int, default=4242)
    ap.add_argument("--design", default="good", choices=["good", "polariser-only", "parallel"])
    args = ap.parse_args()
    rows, _, _ = simulate(args.design, args.seed)
    write(args.output, rows, args.design)

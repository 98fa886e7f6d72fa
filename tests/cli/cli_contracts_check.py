#!/usr/bin/python3
"""One vocabulary and one set of rules across zeeline's commands (run as: cli_contracts_check.py <zeeline>).

* JSON key family: `line` and `profile` report a given field's Lorentz unit as `lorentz_shift_nm` (and
  `sigma_shift_nm` = g_eff x it), checked against e lambda^2 B / (4 pi m_e c) from scipy.constants (CODATA,
  LL04 eq. 3.8); `measure` gives `lorentz_shift_per_gauss_nm`; no `lorentz_unit*` key anywhere; the sigma
  groups are labelled sigma_b / pi / sigma_r in `line` and `measure`.
* `--weak-ratio` has the same default in `map` and `measure` (their --help).
* Text tables do not mix pm and nm (`line`, `measure`).
* A negative --field is refused by `line` and `profile` alike (exit 2); a line whose levels both state the
  same parity is refused (Laporte's rule, Condon & Shortley 1935 sect. 4.9, from memory).
* `profile --line NAME --catalog FILE` gives the same spectrum as the levels and wavelength spelled out.
* Outputs (docs/cli.md "Outputs"): a missing or non-directory parent exits 3 before any work -- shown by
  giving an input that does not exist, which would be exit 1 if anything were read -- for every command
  and output kind; no parent directory is created; a directory output is created when its parent exists.
* An interrupted `simulate` exits 130, says so on stderr and leaves no file.
"""
import json
import math
import os
import re
import signal
import subprocess
import sys
import tempfile
import time

import scipy.constants as sc

ZEELINE = sys.argv[1]
SRC = os.path.dirname(os.path.dirname(os.path.dirname(os.path.abspath(__file__))))
CATALOG = os.path.join(SRC, "demo_maps", "lines.csv")
CUBE = os.path.join(SRC, "demo_maps", "bipolar_region.fits")
LAMP = os.path.join(SRC, "demo_maps", "spectra", "cd_lamp_1T.txt")
failures = []


def check(cond, what):
    print(("ok   " if cond else "FAIL ") + what)
    if not cond:
        failures.append(what)


def run(*args):
    p = subprocess.run([ZEELINE, *args], capture_output=True, text=True)
    return p.returncode, p.stdout, p.stderr


def keys(obj):
    if isinstance(obj, dict):
        for k, v in obj.items():
            yield k
            yield from keys(v)
    elif isinstance(obj, list):
        for v in obj:
            yield from keys(v)


# ---- the Lorentz unit under one name
lam_nm, b_gauss = 630.2494, 1000.0
lorentz_nm = sc.e * (lam_nm * 1e-9) ** 2 * (b_gauss * 1e-4) / (4 * math.pi * sc.m_e * sc.c) * 1e9
rc, out, err = run("line", "--lower", "5P1", "--upper", "5D0", "--wavelength", "630.2494nm", "--field", "1000G", "--json")
line = json.loads(out) if rc == 0 else {}
rc2, out2, err2 = run("profile", "--lower", "5P1", "--upper", "5D0", "--wavelength", "630.2494nm", "--field", "1000G",
                      "--json")
prof = json.loads(out2) if rc2 == 0 else {}
for name, d in (("line", line), ("profile", prof)):
    check(abs(d.get("lorentz_shift_nm", 0) - lorentz_nm) < 1e-6 * lorentz_nm,
          f"{name}: lorentz_shift_nm {d.get('lorentz_shift_nm')} = scipy {lorentz_nm:.9g} nm")
    check(abs(d.get("sigma_shift_nm", 0) - d.get("g_eff", 0) * lorentz_nm) < 1e-6 * lorentz_nm * 3,
          f"{name}: sigma_shift_nm = g_eff x lorentz_shift_nm")
    check(d.get("field_gauss") == b_gauss, f"{name}: field_gauss echoes the field given")
rc3, out3, err3 = run("measure", LAMP, "--line", "CdI_6438", "--catalog", CATALOG, "--instrument-fwhm", "2pm", "--json")
meas = json.loads(out3) if rc3 == 0 else {}
per_gauss = meas.get("line", {}).get("lorentz_shift_per_gauss_nm", 0)
lam_cd = meas.get("line", {}).get("rest_wavelength_nm", 643.847)
expect = sc.e * (lam_cd * 1e-9) ** 2 * 1e-4 / (4 * math.pi * sc.m_e * sc.c) * 1e9
check(abs(per_gauss - expect) < 1e-6 * expect, f"measure: lorentz_shift_per_gauss_nm {per_gauss} = scipy {expect:.9g}")
for name, d in (("line", line), ("profile", prof), ("measure", meas)):
    stray = [k for k in keys(d) if k.startswith("lorentz_unit")]
    check(not stray, f"{name}: no lorentz_unit* key ({stray})")

# ---- sigma-group labels
groups_line = {c.get("group") for c in line.get("components", [])}
check(groups_line == {"sigma_b", "pi", "sigma_r"}, f"line: component groups {groups_line}")
labels_meas = {g.get("label") for g in meas.get("components", {}).get("groups", [])}
check(labels_meas == {"sigma_b", "pi", "sigma_r"}, f"measure: fitted group labels {labels_meas}")
rc, text, _ = run("line", "--lower", "5P1", "--upper", "5D0", "--wavelength", "630.2494nm", "--field", "1000G")
check("sigma_b" in text and "sig_b" not in text.replace("sigma_b", ""), "line text uses sigma_b / sigma_r")

# ---- one --weak-ratio default
def default_of(cmd):
    _, h, _ = run(cmd, "--help")
    m = re.search(r"--weak-ratio FLOAT=([0-9.]+)", h)
    return m.group(1) if m else None
dm, dme = default_of("map"), default_of("measure")
check(dm is not None and dm == dme, f"--weak-ratio default: map {dm}, measure {dme}")

# ---- units in text tables: pm only between the table header and the footer
table = [l for l in text.splitlines() if l.startswith("  ")]
check(table and all(" nm" not in l for l in table), "line: the component table has no nm values")
footer = [l for l in text.splitlines() if "lorentz_shift" in l]
check(footer and footer[0].count(" pm") == 2 and footer[0].count(" nm") == 1, f"line footer in pm: {footer}")
rc, mtext, _ = run("measure", LAMP, "--line", "CdI_6438", "--catalog", CATALOG, "--instrument-fwhm", "2pm")
blocks = mtext.split("\n\n")
comp = [b for b in blocks if b.startswith("components")]
chars = [b for b in blocks if b.startswith("characteristics")]
check(comp and " nm" not in comp[0], "measure: components block has no nm values")
check(chars and " nm" not in chars[0], "measure: characteristics block has no nm values")

# ---- negative --field: one rule for line and profile
rc_l, _, err_l = run("line", "--lower", "5P1", "--upper", "5D0", "--wavelength", "630.25nm", "--field", "-100G")
rc_p, _, err_p = run("profile", "--lower", "5P1", "--upper", "5D0", "--wavelength", "630.25nm", "--field", "-100G")
check(rc_l == 2 and rc_p == 2, f"negative --field: line exit {rc_l}, profile exit {rc_p} (both 2)")
check(err_l == err_p and ">= 0" in err_l, f"same message: {err_l.strip()!r} / {err_p.strip()!r}")

# ---- parity (electric-dipole lines change parity when both parities are stated)
rc, _, err = run("line", "--lower", "5Po1", "--upper", "5Do0", "--wavelength", "630.25nm")
check(rc == 1 and "parity" in err and "5Po1" in err, f"5Po1 -> 5Do0 refused: exit {rc} {err.strip()!r}")
rc, _, err = run("profile", "--lower", "5Pe1", "--upper", "5De0", "--wavelength", "630.25nm", "--json")
check(rc == 1 and "even" in err, f"profile 5Pe1 -> 5De0 refused: exit {rc}")
rc, _, err = run("line", "--lower", "5Po1", "--upper", "5De0", "--wavelength", "630.25nm")
check(rc == 0, f"5Po1 -> 5De0 (odd -> even) accepted: exit {rc} {err.strip()}")

# ---- profile --line NAME --catalog FILE
rc_a, out_a, err_a = run("profile", "--line", "FeI_6302", "--catalog", CATALOG, "--field", "800G", "--inclination", "40",
                         "--json")
rc_b, out_b, _ = run("profile", "--lower", "5P1", "--upper", "5D0", "--wavelength", "630.2494nm", "--frame", "air",
                     "--field", "800G", "--inclination", "40", "--json")
same = rc_a == 0 and rc_b == 0 and json.loads(out_a)["V"] == json.loads(out_b)["V"]
check(same, f"profile --line/--catalog equals the spelled-out line (exit {rc_a}, {rc_b}) {err_a.strip()}")

# ---- outputs: exit 3 before any work, no parent directory created
with tempfile.TemporaryDirectory() as tmp:
    missing = os.path.join(tmp, "no_such_dir")
    afile = os.path.join(tmp, "plain_file")
    open(afile, "w").write("x\n")
    nocube = os.path.join(tmp, "absent_cube.fits")  # reading it would be exit 1
    cases = [
        ("map -o", ["map", nocube, "--line", "FeI_6302", "--catalog", CATALOG, "-o", os.path.join(missing, "m.fits")]),
        ("map -o under a file", ["map", nocube, "--line", "FeI_6302", "--catalog", CATALOG, "-o",
                                 os.path.join(afile, "m.fits")]),
        ("map --png", ["map", nocube, "--line", "FeI_6302", "--catalog", CATALOG, "-o", os.path.join(tmp, "m.fits"),
                       "--png", os.path.join(missing, "ql")]),
        ("simulate -o", ["simulate", "--demo", "--line", "FeI_6302", "--catalog", CATALOG, "-o",
                         os.path.join(missing, "c.fits")]),
        ("measure --png", ["measure", os.path.join(tmp, "absent.txt"), "--line", "CdI_6438", "--catalog", CATALOG,
                           "--png", os.path.join(missing, "p.png")]),
        ("measure --json-file", ["measure", os.path.join(tmp, "absent.txt"), "--line", "CdI_6438", "--catalog",
                                 CATALOG, "--json-file", os.path.join(missing, "p.json")]),
        ("profile --png", ["profile", "--line", "FeI_6302", "--catalog", CATALOG, "--png",
                           os.path.join(missing, "p.png")]),
        ("view -o", ["view", CUBE, "-o", os.path.join(missing, "deeper")]),
    ]
    for name, args in cases:
        rc, out, err = run(*args)
        check(rc == 3 and "nothing was computed" in err, f"{name}: exit {rc} (3) before any work: {err.strip()[:160]}")
        check(not os.path.exists(missing), f"{name}: no parent directory created")
    check(os.listdir(tmp) == ["plain_file"], f"nothing written: {os.listdir(tmp)}")
    if os.geteuid() != 0:  # root writes anywhere, so an unwritable directory can only be shown as a user
        ro = os.path.join(tmp, "read_only")
        os.mkdir(ro, 0o555)
        rc, _, err = run("map", nocube, "--line", "FeI_6302", "--catalog", CATALOG, "-o", os.path.join(ro, "m.fits"))
        check(rc == 3 and "not writable" in err, f"unwritable directory: exit {rc} {err.strip()[:120]}")
    # A directory output is created when its parent exists.
    ql = os.path.join(tmp, "ql")
    rc, out, err = run("view", CUBE, "-o", ql)
    check(rc == 0 and os.path.isdir(ql) and len(os.listdir(ql)) > 1, f"view -o NEWDIR creates it: exit {rc} {err.strip()}")

    # ---- interrupted simulate
    big = os.path.join(tmp, "big.fits")
    p = subprocess.Popen([ZEELINE, "simulate", "--demo", "--nx", "600", "--ny", "600", "--points", "400", "--line",
                          "FeI_6302", "--catalog", CATALOG, "--threads", "1", "-o", big],
                         stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True)
    time.sleep(1.0)
    p.send_signal(signal.SIGINT)
    out, err = p.communicate(timeout=120)
    check(p.returncode == 130 and "interrupted" in err, f"interrupted simulate: exit {p.returncode}, {err.strip()!r}")
    check(not os.path.exists(big) and not [f for f in os.listdir(tmp) if f.startswith("big")],
          "interrupted simulate left no file")

if failures:
    sys.exit(f"{len(failures)} check(s) failed")
print("all CLI contract checks passed")

#!/usr/bin/python3
"""`zeeline bench --quick` keeps the output format that docs/scaling.md documents (the contract scripts rely
on), and its figures are consistent. Speed itself is not judged here (benchmarks print, tests do not time).

* Every line that is not a '#' comment is `key value unit description`; the keys and units are exactly
  those of the table in docs/scaling.md, each once, in the documented order.
* Values are numbers; `n/a` only for the mpi.* keys of a build without MPI (host.mpi = 0).
* Consistency: cube.decoded_mib = pixels x wavelengths x 4 Stokes x 8 bytes / 2^20 (arithmetic);
  synth.jacobian_us > synth.profile_us (the Jacobian adds derivative spectra to the same synthesis, common
  practice); me.iterations_per_px >= 1 (every inverted pixel takes at least one step); peak memory > 0.
* The temporary bench directory named in the header is gone afterwards.
Usage: /usr/bin/python3 bench_check.py /path/to/zeeline
"""
import os
import re
import subprocess
import sys

ZEELINE = sys.argv[1]
SRC = os.path.dirname(os.path.dirname(os.path.dirname(os.path.abspath(__file__))))
failures = []


def check(cond, what):
    if not cond:
        failures.append(what)
        print("FAIL:", what)


def documented_keys():
    """(key, unit) rows of the bench table in docs/scaling.md: | `key` | unit | meaning |."""
    text = open(os.path.join(SRC, "docs", "scaling.md"), encoding="utf-8").read()
    section = text.split("<!-- bench keys -->")[1].split("<!-- /bench keys -->")[0]
    return [(m.group(1), m.group(2).strip()) for m in re.finditer(r"^\| `([a-z0-9_.]+)` \| ([^|]+) \|", section, re.M)]


env = dict(os.environ, OMPI_MCA_btl_vader_single_copy_mechanism="none")
p = subprocess.run([ZEELINE, "bench", "--quick"], capture_output=True, text=True, env=env, timeout=600)
check(p.returncode == 0, f"bench --quick: exit {p.returncode}; stderr={p.stderr.strip()[:400]}")
rows, tmpdir = [], None
for line in p.stdout.splitlines():
    if line.startswith("#"):
        m = re.search(r"files in (\S+) \(removed at the end\)", line)
        if m:
            tmpdir = m.group(1)
        continue
    parts = line.split(None, 3)
    check(len(parts) == 4, f"line is not 'key value unit description': {line!r}")
    if len(parts) == 4:
        rows.append(parts)

doc = documented_keys()
check(len(doc) >= 20, f"docs/scaling.md bench table not found or too short: {doc}")
check([(r[0], r[2]) for r in rows] == doc,
      "keys/units differ from docs/scaling.md:\n  printed    " + str([(r[0], r[2]) for r in rows]) +
      "\n  documented " + str(doc))
values = {}
mpi = any(r[0] == "host.mpi" and r[1] == "1" for r in rows)
for key, value, unit, _ in rows:
    if value == "n/a":
        check(key.startswith("mpi.") and not mpi, f"{key} is n/a")
        continue
    try:
        values[key] = float(value)
    except ValueError:
        check(False, f"{key}: value {value!r} is not a number")

if all(k in values for k in ("cube.pixels", "cube.wavelengths", "cube.decoded_mib")):
    expected = values["cube.pixels"] * values["cube.wavelengths"] * 4 * 8 / 2 ** 20
    check(abs(values["cube.decoded_mib"] - expected) <= 1e-4 * expected,
          f"cube.decoded_mib {values['cube.decoded_mib']} vs {expected}")
if "synth.jacobian_us" in values and "synth.profile_us" in values:
    check(values["synth.jacobian_us"] > values["synth.profile_us"], "the Jacobian should cost more than the profile")
check(values.get("me.iterations_per_px", 0) >= 1, f"me.iterations_per_px = {values.get('me.iterations_per_px')}")
for key in ("rss.map_wfa_mib", "rss.map_me_mib"):
    check(values.get(key, 0) > 0, f"{key} = {values.get(key)}")
check(tmpdir is not None and not os.path.exists(tmpdir), f"bench directory {tmpdir} was not removed")

if failures:
    print(f"{len(failures)} failure(s)")
    sys.exit(1)
print("bench format checks passed")

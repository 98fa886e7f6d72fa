#!/usr/bin/python3
"""`mpirun -np N zeeline map` against the one-process run, read back with astropy (Debian python3-astropy).

* Bit-identical maps: every HDU's data (all maps, METHOD, QUALITY, AZIM_PICK) of -np 2 (2 threads per rank)
  and -np 3 (1 thread) runs equal the one-process run exactly (NaN where NaN), for wfa, me and auto with the
  azimuth disambiguation; -np 3
  on 23 rows in tasks of 3 (8 tasks: they do not divide among 3 ranks, the last task has 2 rows).
* A rank given no work: -np 3 on a 16-row cube in tasks of 8 rows; the run succeeds and the summary names a
  rank with 0 pixels.
* A failing rank: the cube tile-compressed with fpack (Debian libcfitsio-bin), the compressed bytes of one
  spatial row overwritten, so that reading that row fails in cfitsio on whichever rank gets it. The run
  exits 1 with one message naming the rank, the rows and the file; no map file is written; the checkpoint
  (--resume) keeps the rows before the bad one. With the row repaired, --resume continues from there
  ("resumed at row N", N > 1) and the maps equal the one-process run on the same compressed cube.
* The build without MPI (zeeline_serial, the same objects with cli/parallel.cpp compiled without MPI) maps
  alone exactly like zeeline, and refuses to run as 2 copies (exit 2, message says so, no output).
* Other commands run on rank 0 only: `lande` under -np 2 prints its table once.
* An existing output is not replaced without --overwrite under MPI either (exit 3, file untouched); set-up
  failures (existing output, missing cube, missing output directory) print one error line, no MPI_Abort.
Usage: /usr/bin/python3 mpi_map_check.py ZEELINE ZEELINE_SERIAL MPIEXEC
"""
import os
import shutil
import sys
import tempfile

import numpy as np
from astropy.io import fits

sys.path.insert(0, os.path.join(os.path.dirname(os.path.dirname(os.path.abspath(__file__))), "common"))
from damaged_fits import corrupt_row, fpack  # noqa: E402
from script_checks import check, finish, run as run_checked  # noqa: E402

ZEELINE, ZEELINE_SERIAL, MPIEXEC = sys.argv[1:4]
SRC = os.path.dirname(os.path.dirname(os.path.dirname(os.path.abspath(__file__))))
LINE = ["--line", "FeI_6302", "--catalog", os.path.join(SRC, "demo_maps", "lines.csv")]
# Shared-memory transport without the single-copy mechanism: works in containers that forbid ptrace.
ENV = dict(os.environ, OMPI_MCA_btl_vader_single_copy_mechanism="none", OMPI_MCA_rmaps_base_oversubscribe="1")


def run(cmd, expect_rc=0):
    return run_checked(cmd, expect_rc, ENV)


def mpirun(n, binary=ZEELINE):
    return [MPIEXEC, "--oversubscribe", "--allow-run-as-root", "-np", str(n), binary]


def data_units(path):
    with fits.open(path) as h:
        return [(x.name, None if x.data is None else np.array(x.data)) for x in h]


def same_maps(a, b, what):
    ua, ub = data_units(a), data_units(b)
    check([n for n, _ in ua] == [n for n, _ in ub], f"{what}: HDUs {[n for n, _ in ua]} vs {[n for n, _ in ub]}")
    for (name, x), (_, y) in zip(ua, ub):
        if x is None or y is None:
            check(x is None and y is None, f"{what}: {name} has data in only one file")
            continue
        same = x.shape == y.shape and x.dtype == y.dtype and np.array_equal(x, y, equal_nan=True)
        check(same, f"{what}: {name} differs from the one-process run")


with tempfile.TemporaryDirectory() as tmp:
    def path(name):
        return os.path.join(tmp, name)

    cube = path("cube.fits")
    run([ZEELINE, "simulate", "--demo", "--nx", "16", "--ny", "23", *LINE, "--seed", "11", "-o", cube, "-q"])
    # One pixel 1e10 times too bright, in a row a worker rank computes: the data-sanity ceiling (1e8 x the
    # cube's median level, fixed by rank 0) must reach every rank (ABSURD_INPUT, QUALITY bit 11, docs/errors.md).
    ABSURD_Y, ABSURD_X = 20, 5
    with fits.open(cube, mode="update") as h:
        h[0].data[:, :, ABSURD_Y, ABSURD_X] *= 1e10  # numpy axes (Stokes, wavelength, y, x)

    # ---- bit-identical maps, one process vs 2 and 3 ranks
    for method, extra in (("wfa", []), ("me", []), ("auto", ["--disambiguate", "--smooth-azimuth", "2"])):
        common = [cube, *LINE, "--method", method, *extra, "-q"]
        one = path(f"one_{method}.fits")
        run([ZEELINE, "map", *common, "--threads", "2", "-o", one])
        two = path(f"two_{method}.fits")
        run([*mpirun(2), "map", *common, "--threads", "2", "-o", two])  # OpenMP threads inside each rank
        three = path(f"three_{method}.fits")
        p = run([*mpirun(3), "map", *common[:-1], "--threads", "1", "--rows-per-task", "3", "-o", three])
        check("8 tasks of 3 rows" in p.stdout, f"{method} -np 3: summary {p.stdout.strip()[-200:]!r}")
        for f, label in ((two, "-np 2"), (three, "-np 3")):
            if os.path.exists(one) and os.path.exists(f):
                same_maps(one, f, f"{method} {label}")
            else:
                check(False, f"{method} {label}: a map file is missing")
    for method in ("wfa", "me", "auto"):
        with fits.open(path(f"three_{method}.fits")) as h:
            q = int(h["QUALITY"].data[ABSURD_Y, ABSURD_X])
            check(q & (1 << 11), f"{method} -np 3: the absurd pixel has QUALITY {q}, not ABSURD_INPUT")
    with fits.open(path("three_auto.fits")) as h:
        counts = np.bincount(h["METHOD"].data.ravel(), minlength=5)
        check(counts[1] > 0 and counts[4] > 0, f"auto should mix wfa and me pixels here: METHOD counts {counts}")
        check("AZIM_PICK" in [x.name for x in h], "auto --disambiguate: no AZIM_PICK map")

    # ---- a rank with nothing to do
    tiny = path("tiny.fits")
    run([ZEELINE, "simulate", "--demo", "--nx", "16", "--ny", "16", *LINE, "--seed", "5", "-o", tiny, "-q"])
    run([ZEELINE, "map", tiny, *LINE, "--method", "auto", "-o", path("tiny_one.fits"), "-q"])
    p = run([*mpirun(3), "map", tiny, *LINE, "--method", "auto", "--threads", "1", "--rows-per-task", "8",
             "-o", path("tiny_three.fits")])
    summary = [l for l in p.stdout.splitlines() if l.startswith("mpi:")]
    check(len(summary) == 1 and " 0" in summary[0].split("pixels per rank")[-1] + " ",
          f"-np 3 on 2 tasks: summary {summary}")
    if os.path.exists(path("tiny_three.fits")):
        same_maps(path("tiny_one.fits"), path("tiny_three.fits"), "-np 3 on 2 tasks")

    # ---- a failing rank, then --resume
    packed = path("packed.fits")
    fp = fpack(cube, packed)
    check(fp.returncode == 0 and os.path.exists(packed), f"fpack failed: {fp.stderr.strip()}")
    if os.path.exists(packed):
        tiles = ["--tile-mib", "0.05"]  # one-row reader tiles: the spectral window comes from row 1 only
        ref = path("packed_one.fits")
        run([ZEELINE, "map", packed, *LINE, "--method", "wfa", *tiles, "-o", ref, "-q"])
        bad = path("bad.fits")
        corrupt_row(packed, bad, 13)  # 0-based row 13 = FITS row 14, in task 5 (rows 13..15)
        out = path("bad_maps.fits")
        args = ["map", bad, *LINE, "--method", "wfa", *tiles, "--threads", "1", "--rows-per-task", "3", "--resume",
                "-o", out]
        p = run([*mpirun(3), *args], expect_rc=1)
        errors = [l for l in p.stderr.splitlines() if l.startswith("zeeline: error")]
        check(len(errors) == 1, f"failing rank: expected one error line, got {errors}")
        if errors:
            check("rank " in errors[0] and "bad.fits" in errors[0] and "rows 13..15" in errors[0],
                  f"failing rank: message should name the rank, the file and the rows: {errors[0]}")
        check(not os.path.exists(out), "failing rank: a map file was written")
        check(os.path.exists(out + ".checkpoint"), "failing rank: no checkpoint kept for --resume")
        shutil.copyfile(packed, bad)  # repaired: same size and name, so the checkpoint matches
        # The partial map file gone: rank 0 cannot reopen it (an output error, exit 3 on every rank), one line,
        # no MPI_Abort; the checkpoint stays.
        os.rename(out + ".partial", out + ".partial.kept")
        p = run([*mpirun(3), *args], expect_rc=3)
        errors = [l for l in p.stderr.splitlines() if l.startswith("zeeline:")]
        check(len(errors) == 1 and "partial" in errors[0] and "MPI_ABORT" not in p.stderr,
              f"--resume without the partial file under MPI: {p.stderr.strip()[:400]!r}")
        os.rename(out + ".partial.kept", out + ".partial")
        p = run([*mpirun(3), *args])
        check("resumed at row 13" in p.stdout, f"--resume under MPI: {p.stdout.strip()[-200:]!r}")
        check(not os.path.exists(out + ".checkpoint"), "--resume: checkpoint left after success")
        if os.path.exists(out):
            same_maps(ref, out, "resumed -np 3")

    # ---- the build without MPI
    alone = path("alone.fits")
    run([ZEELINE_SERIAL, "map", cube, *LINE, "--method", "auto", "-o", alone, "-q"])
    run([ZEELINE, "map", cube, *LINE, "--method", "auto", "-o", path("alone_ref.fits"), "-q"])
    if os.path.exists(alone):
        same_maps(path("alone_ref.fits"), alone, "zeeline_serial")
    refused = path("refused.fits")
    p = run([*mpirun(2, ZEELINE_SERIAL), "map", cube, *LINE, "-o", refused], expect_rc=2)
    check("built without MPI" in p.stderr, f"zeeline_serial under mpirun: {p.stderr.strip()[:300]}")
    check(not os.path.exists(refused), "zeeline_serial under mpirun wrote an output")

    # ---- other commands on rank 0 only; outputs never replaced silently
    p = run([*mpirun(2), "lande", "5D4"])
    check(p.stdout.count("5D4") == 1, f"lande under -np 2 should print once: {p.stdout!r}")
    existing = path("two_wfa.fits")
    before = open(existing, "rb").read() if os.path.exists(existing) else b""
    p = run([*mpirun(2), "map", cube, *LINE, "--method", "wfa", "-o", existing], expect_rc=3)
    check("exists" in p.stderr, f"existing output under MPI: {p.stderr.strip()[:300]}")
    check(os.path.exists(existing) and open(existing, "rb").read() == before, "existing output was changed")
    # A set-up failure every rank meets is agreed on, not aborted: one error line, no MPI_Abort (docs/cli.md).
    for args, rc, what in (([cube, *LINE, "--method", "wfa", "-o", existing], 3, "exists"),
                           ([path("missing.fits"), *LINE, "-o", path("never.fits")], 1, "no such file"),
                           ([cube, *LINE, "-o", path("no_dir/never.fits")], 3, "does not exist")):
        p = run([*mpirun(2), "map", *args], expect_rc=rc)
        lines = [l for l in p.stderr.splitlines() if l.startswith("zeeline:")]
        check(len(lines) == 1 and what in lines[0] and "MPI_ABORT" not in p.stderr,
              f"set-up failure under MPI ({what}): {p.stderr.strip()[:400]!r}")

finish("mpi map checks passed")

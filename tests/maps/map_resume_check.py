#!/usr/bin/python3
"""`zeeline map --resume` in one process, the map file written as the rows are finished, read back with astropy.

* A run that fails part-way (the cube tile-compressed with fpack, one row's compressed bytes overwritten, so
  cfitsio cannot read that row: tests/common/damaged_fits.py) exits 1 naming the file and writes no map
  file; without --resume it leaves nothing behind, with --resume it keeps OUTPUT.checkpoint and
  OUTPUT.partial (no temporary file either way).
* With the row repaired, --resume continues and the map file equals the uninterrupted run on the same cube
  HDU by HDU (names, data bit for bit, NaN where NaN, and every header card but DATE), for wfa and for auto
  with the azimuth disambiguation (which needs B_LOS, B_TRANS, B_AZIM of the rows done before); the
  checkpoint and the partial file are gone; fitsverify (HEASARC, Debian package) finds the file clean.
Usage: /usr/bin/python3 map_resume_check.py ZEELINE
"""
import os
import shutil
import subprocess
import sys
import tempfile

import numpy as np
from astropy.io import fits

sys.path.insert(0, os.path.join(os.path.dirname(os.path.dirname(os.path.abspath(__file__))), "common"))
from damaged_fits import corrupt_row, fpack  # noqa: E402
from script_checks import check, finish, run  # noqa: E402

ZEELINE = sys.argv[1]
SRC = os.path.dirname(os.path.dirname(os.path.dirname(os.path.abspath(__file__))))
LINE = ["--line", "FeI_6302", "--catalog", os.path.join(SRC, "demo_maps", "lines.csv")]


def same_file(a, b, what):
    with fits.open(a) as ha, fits.open(b) as hb:
        check([x.name for x in ha] == [x.name for x in hb], f"{what}: HDUs {[x.name for x in ha]} vs {[x.name for x in hb]}")
        for x, y in zip(ha, hb):
            cards_x = [c for c in x.header.cards if c.keyword != "DATE"]
            cards_y = [c for c in y.header.cards if c.keyword != "DATE"]
            check([str(c) for c in cards_x] == [str(c) for c in cards_y], f"{what}: {x.name} header differs")
            if x.data is None or y.data is None:
                check(x.data is None and y.data is None, f"{what}: {x.name} has data in only one file")
                continue
            same = x.data.shape == y.data.shape and x.data.dtype == y.data.dtype and \
                np.array_equal(x.data, y.data, equal_nan=True)
            check(same, f"{what}: {x.name} data differ from the uninterrupted run")


with tempfile.TemporaryDirectory() as tmp:
    cube, packed, bad = (os.path.join(tmp, n) for n in ("cube.fits", "packed.fits", "bad.fits"))
    run([ZEELINE, "simulate", "--demo", "--nx", "16", "--ny", "23", *LINE, "--seed", "11", "-o", cube, "-q"])
    fp = fpack(cube, packed)
    check(fp.returncode == 0 and os.path.exists(packed), f"fpack failed: {fp.stderr.strip()}")
    tiles = ["--tile-mib", "0.05"]  # one-row reader tiles: a checkpoint after every row
    for method, extra in (("wfa", []), ("auto", ["--disambiguate"])):
        out_dir = os.path.join(tmp, method)
        os.mkdir(out_dir)
        ref, out = os.path.join(out_dir, "ref.fits"), os.path.join(out_dir, "maps.fits")
        common = [*LINE, "--method", method, *extra, *tiles, "--threads", "2", "-q"]
        # Every run has the same command line (ZLCMD and ZLINPUT are compared): the reference is the
        # uninterrupted run on the undamaged copy, moved aside.
        resume = [ZEELINE, "map", bad, *common, "--resume", "-o", out]
        shutil.copyfile(packed, bad)
        run(resume)
        shutil.move(out, ref)
        corrupt_row(packed, bad, 13)
        p = run([ZEELINE, "map", bad, *common, "-o", out], expect_rc=1)
        check("bad.fits" in p.stderr, f"{method}: the read error should name the file: {p.stderr.strip()[:300]}")
        check(os.listdir(out_dir) == ["ref.fits"], f"{method}: a failed run left {sorted(os.listdir(out_dir))}")
        run(resume, expect_rc=1)
        left = sorted(os.listdir(out_dir))
        check(left == ["maps.fits.checkpoint", "maps.fits.partial", "ref.fits"],
              f"{method}: a failed --resume run should keep the checkpoint and the partial file only: {left}")
        # A cube rewritten in place (same name and size, other content: here its DATE card, as when it is made
        # again) must not be resumed with the old rows: the fingerprint holds a digest of the file's ends.
        data = open(bad, "rb").read()
        at = data.find(b"DATE    = '")
        check(at >= 0, "no DATE card in the packed cube")
        year = b"1999" if data[at + 11:at + 15] != b"1999" else b"2000"
        open(bad, "wb").write(data[:at + 11] + year + data[at + 15:])
        p = run(resume, expect_rc=1)
        check("another input" in p.stderr, f"{method}: a rewritten cube was resumed: {p.stderr.strip()[:300]}")
        shutil.copyfile(packed, bad)  # repaired: same size, name and ends, so the checkpoint matches
        run(resume)
        check(sorted(os.listdir(out_dir)) == ["maps.fits", "ref.fits"],
              f"{method}: after the resumed run: {sorted(os.listdir(out_dir))}")
        if os.path.exists(out) and os.path.exists(ref):
            same_file(ref, out, method)
            v = subprocess.run(["fitsverify", "-q", out], capture_output=True, text=True)
            check(v.returncode == 0 and "verification OK" in v.stdout, f"{method}: fitsverify: {v.stdout.strip()}")

finish("map --resume: OK")

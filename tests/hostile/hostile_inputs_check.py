#!/usr/bin/python3
"""The hostile-input corpus: what zeeline must do with each bad input a user can hand it (docs/errors.md).

Every case is one row of CASES below: a name, how the input is made, the command, and the expected outcome --
either a clear error (exit code of docs/cli.md and words the message must contain, the file name among them) or a
partial result (exit 0, a map file whose QUALITY bits mark exactly the bad pixels, named in the QUALITY header).
Nothing may crash (exit codes >= 128 or sanitizer reports), hang (each command gets 120 s), or leave a map file
behind after an error.

FITS inputs are made at test time from a small cube written by `zeeline simulate` and edited with astropy.io.fits
(Debian python3-astropy); text inputs are written inline. Usage: /usr/bin/python3 hostile_inputs_check.py ZEELINE
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
failures = []

# QUALITY bits (io/quality_flags.hpp, docs/fits.md).
NONFINITE, ABSURD, NONPOSITIVE_I, POL_EXCEEDS_I = 1 << 0, 1 << 11, 1 << 12, 1 << 13
SANITY = NONFINITE | ABSURD | NONPOSITIVE_I | POL_EXCEEDS_I


def fail(what):
    failures.append(what)
    print("FAIL:", what)


def run(args):
    try:
        return subprocess.run([ZEELINE, *args], capture_output=True, text=True, timeout=120, errors="replace")
    except subprocess.TimeoutExpired:
        fail(f"{args}: no answer within 120 s")
        return None


def expect_error(name, args, rc, words, output=None):
    """A clear error: exit code rc, every word in the message, no output left behind."""
    p = run(args)
    if p is None:
        return
    msg = p.stderr
    if p.returncode != rc:
        fail(f"{name}: exit {p.returncode}, expected {rc}; stderr={msg.strip()[:400]}")
    for w in words:
        if w not in msg:
            fail(f"{name}: message lacks {w!r}: {msg.strip()[:400]}")
    for bad in ("AddressSanitizer", "runtime error:", "terminate called", "Segmentation"):
        if bad in msg:
            fail(f"{name}: {bad} in stderr")
    if output and os.path.exists(output):
        fail(f"{name}: {output} was written despite the error")


def map_args(cube, out, *extra):
    return ["map", cube, "--line", "FeI_6302", "--catalog", CATALOG, "--method", "wfa", "-o", out, "-q", *extra]


def expect_maps(name, cube, out, flagged, bits):
    """A partial result: exit 0; QUALITY has `bits` set exactly where `flagged` (bool ny x nx) is true, and no
    data-sanity bit elsewhere; the bits are named in the QUALITY header."""
    p = run(map_args(cube, out))
    if p is None:
        return None
    if p.returncode != 0:
        fail(f"{name}: exit {p.returncode}; stderr={p.stderr.strip()[:400]}")
        return None
    with fits.open(out) as m:
        q = m["QUALITY"].data.astype(np.int64)
        hdr = m["QUALITY"].header
        blos = m["B_LOS"].data.copy()
    got = (q & bits) == bits
    if not np.array_equal(got, flagged):
        fail(f"{name}: QUALITY bits {bits} at {np.argwhere(got).tolist()}, expected {np.argwhere(flagged).tolist()}")
    if np.any((q[~flagged] & SANITY) != 0):
        fail(f"{name}: data-sanity bits outside the bad pixels: {np.argwhere((q & SANITY != 0) & ~flagged).tolist()}")
    if not np.all(np.isnan(blos[flagged])):
        fail(f"{name}: flagged pixels were inverted (B_LOS finite)")
    names = {hdr.get(f"QBIT{b}") for b in range(31)}
    for b, n in ((0, "NONFINITE_INPUT"), (11, "ABSURD_INPUT"), (12, "NONPOSITIVE_I"), (13, "POL_EXCEEDS_I")):
        if hdr.get(f"QBIT{b}") != n:
            fail(f"{name}: QUALITY header QBIT{b} = {hdr.get(f'QBIT{b}')!r}, expected {n!r} ({sorted(filter(None, names))})")
    os.remove(out)
    return blos


def write_variant(base, path, edit, dtype=None):
    """Copies the simulated cube's primary HDU (x, y, wavelength, Stokes in FITS order) through edit(data, header)."""
    with fits.open(base) as f:
        data = f[0].data.astype(np.float64)  # numpy order: (stokes, wavelength, y, x)
        header = f[0].header.copy()
    data, header = edit(data, header)
    hdu = fits.PrimaryHDU(data=data if dtype is None else data.astype(dtype), header=header)
    hdu.writeto(path, overwrite=True)


with tempfile.TemporaryDirectory() as tmp:
    T = lambda n: os.path.join(tmp, n)  # noqa: E731
    base = T("base.fits")
    p = run(["simulate", "--demo", "--nx", "16", "--ny", "16", "--points", "60", "--line", "FeI_6302", "--catalog", CATALOG, "--seed", "5",
             "-o", base, "-q"])
    if p is None or p.returncode != 0:
        print("cannot make the base cube:", p and p.stderr)
        sys.exit(1)
    with fits.open(base) as f:
        ns, nw, ny, nx = f[0].data.shape
    block = np.zeros((ny, nx), bool)
    block[2:4, 3:5] = True

    # ---- files that are not cubes
    open(T("empty.fits"), "wb").close()
    expect_error("empty file", map_args(T("empty.fits"), T("o1.fits")), 1, ["empty.fits", "empty"], T("o1.fits"))
    os.mkdir(T("adir.fits"))
    expect_error("directory", map_args(T("adir.fits"), T("o2.fits")), 1, ["adir.fits", "directory"], T("o2.fits"))
    raw = open(base, "rb").read()
    open(T("trunc.fits"), "wb").write(raw[: len(raw) // 2])
    expect_error("truncated data", map_args(T("trunc.fits"), T("o3.fits")), 1, ["trunc.fits", "truncated"], T("o3.fits"))

    # Header claiming terabytes: NAXIS1 = NAXIS2 = 2^20 (1e15 bytes of float32 claimed), the small data unit kept.
    hdr_bytes = bytearray(raw)
    hdr_text = raw[:2880 * 4].decode("ascii", errors="replace")
    for key in ("NAXIS1", "NAXIS2"):
        i = hdr_text.index(key.ljust(8) + "=")
        card = f"{key:<8}= {1 << 20:>20}".ljust(80)
        hdr_bytes[i : i + 80] = card.encode()
    open(T("tera.fits"), "wb").write(bytes(hdr_bytes))
    expect_error("header claiming terabytes", map_args(T("tera.fits"), T("o4.fits")), 1,
                 ["tera.fits", "NAXIS1..NAXIS4", "bytes"], T("o4.fits"))

    # A string value without its closing quote (made wcslib's header parser overrun a buffer and abort).
    hdr_bytes = bytearray(raw)
    i = hdr_text.index("CTYPE1  =")
    hdr_bytes[i : i + 80] = ("CTYPE1  = 'HPLN-TAN" + " " * 61).encode()
    open(T("quote.fits"), "wb").write(bytes(hdr_bytes))
    expect_error("header string without a closing quote", map_args(T("quote.fits"), T("o4q.fits")), 1,
                 ["quote.fits", "CTYPE1", "closing quote"], T("o4q.fits"))

    # ---- spectral axis
    def zero_step(d, h):
        h["CDELT3"] = 0.0
        return d, h

    write_variant(base, T("zerostep.fits"), zero_step)
    expect_error("zero spectral step", map_args(T("zerostep.fits"), T("o5.fits")), 1, ["zerostep.fits", "CDELT3 = 0"],
                 T("o5.fits"))

    def one_wavelength(d, h):
        return d[:, nw // 2 : nw // 2 + 1], h

    write_variant(base, T("onewl.fits"), one_wavelength)
    expect_error("one wavelength", map_args(T("onewl.fits"), T("o6.fits")), 1, ["onewl.fits", "1 samples"], T("o6.fits"))

    # Stored decreasing: the same data reversed along the spectral axis, CRVAL3 at the red end, CDELT3 < 0.
    def decreasing(d, h):
        n = d.shape[1]
        h["CRVAL3"] = h["CRVAL3"] + (n - h["CRPIX3"]) * h["CDELT3"]
        h["CRPIX3"] = 1.0
        h["CDELT3"] = -h["CDELT3"]
        return d[:, ::-1].copy(), h

    write_variant(base, T("increasing.fits"), lambda d, h: (d, h))
    write_variant(base, T("decreasing.fits"), decreasing)
    none = np.zeros((ny, nx), bool)
    inc = expect_maps("increasing reference", T("increasing.fits"), T("o7.fits"), none, NONFINITE)
    dec = expect_maps("wavelength axis stored decreasing", T("decreasing.fits"), T("o8.fits"), none, NONFINITE)
    if inc is not None and dec is not None:
        # Same samples, reversed on read: the maps agree to float rounding of the WCS wavelengths.
        if not np.allclose(inc, dec, rtol=1e-5, atol=1e-4, equal_nan=True):
            fail(f"decreasing axis: B_LOS differs from the increasing cube by up to {np.nanmax(np.abs(inc - dec))} G")

    # ---- sizes
    write_variant(base, T("onepixel.fits"), lambda d, h: (d[:, :, 2:3, 3:4].copy(), h))
    expect_maps("one pixel", T("onepixel.fits"), T("o9.fits"), np.zeros((1, 1), bool), NONFINITE)

    # ---- values
    def all_nan(d, h):
        return np.full_like(d, np.nan), h

    write_variant(base, T("allnan.fits"), all_nan, np.float32)
    expect_error("all-NaN cube", map_args(T("allnan.fits"), T("o10.fits")), 1, ["allnan.fits", "no usable pixel"],
                 T("o10.fits"))

    def negative_i(d, h):
        return -d, h

    write_variant(base, T("negative.fits"), negative_i, np.float32)
    expect_error("Stokes I negative everywhere", map_args(T("negative.fits"), T("o11.fits")), 1,
                 ["negative.fits", "no usable pixel", "continuum Stokes I <= 0"], T("o11.fits"))

    for label, value, stokes, all_wl, bit in (("+Inf in V at one wavelength", np.inf, 3, False, NONFINITE),
                                               ("-Inf in Q at all wavelengths", -np.inf, 1, True, NONFINITE),
                                               ("+3e38 in V at one wavelength", 3e38, 3, False, ABSURD),
                                               ("-3e38 in U at all wavelengths", -3e38, 2, True, ABSURD),
                                               ("3e38 block in I", 3e38, 0, True, ABSURD)):
        def put(d, h, value=value, stokes=stokes, all_wl=all_wl):
            sl = slice(None) if all_wl else slice(nw // 2, nw // 2 + 1)
            d[stokes, sl, 2:4, 3:5] = value
            return d, h

        write_variant(base, T("block.fits"), put, np.float32)
        expect_maps(label, T("block.fits"), T("o12.fits"), block, bit)
        # One spectrum of the block (1-based x = 4, y = 3): refused with the pixel named.
        expect_error(f"measure --pixel, {label}", ["measure", T("block.fits"), "--pixel", "4,3", "--line", "FeI_6302",
                                                   "--catalog", CATALOG], 1, ["block.fits pixel (4, 3)"])

    # int16 with BSCALE/BZERO and BLANK: blank samples become NaN -> NONFINITE_INPUT on those pixels only.
    with fits.open(base) as f:
        d = f[0].data.astype(np.float64)
        h = f[0].header.copy()
    scale = np.abs(d).max() / 30000.0
    q = np.round(d / scale).astype(np.int16)
    q[:, nw // 3, 2:4, 3:5] = -32768
    hdu = fits.PrimaryHDU(data=q, header=h)
    hdu.header["BSCALE"] = scale
    hdu.header["BZERO"] = 0.0
    hdu.header["BLANK"] = -32768
    hdu.writeto(T("int16.fits"), overwrite=True, output_verify="silentfix")
    expect_maps("int16 with BLANK and BSCALE", T("int16.fits"), T("o13.fits"), block, NONFINITE)

    # |V| > I: Stokes V of the block 1.5 times I (e.g. a wrong scale factor on V only).
    def v_over_i(d, h):
        d[3, :, 2:4, 3:5] = 1.5 * d[0, :, 2:4, 3:5]
        return d, h

    write_variant(base, T("vexceeds.fits"), v_over_i, np.float32)
    expect_maps("|V| > I block", T("vexceeds.fits"), T("o14.fits"), block, POL_EXCEEDS_I)

    # ---- level strings and units on the command line (exit 1: bad level data; exit 2: bad option value)
    expect_error("level with 400 digits", ["lande", "5D" + "9" * 400], 1, ["level", "at most 4 digits"])
    expect_error("level with a control byte", ["lande", "5D\x014"], 1, ["level", "\\x01"])
    expect_error("level with nested brackets", ["lande", "jK(jK(jK(2P3/2,p,5/2,2),p,5/2,2),p,5/2,2)"], 1,
                 ["level", "jK"])
    expect_error("level with an unclosed bracket", ["lande", "jj((2P1/2,2S1/2,1"], 1, ["level"])
    for text in ("1e400nm", "nan", "inf", "-inf nm", "630..2nm", "630nm\x07"):
        expect_error(f"wavelength {text!r}", ["line", "--lower", "5P1", "--upper", "5D0", "--wavelength", text], 2,
                     ["wavelength"])
    expect_error("field 1e400G", ["line", "--lower", "5P1", "--upper", "5D0", "--wavelength", "630.25nm", "--field",
                                  "1e400G"], 2, ["magnetic field"])

    # ---- line lists and spectrum tables with absurd cells (exit 1, file and line named)
    with open(T("bad_lines.csv"), "w") as f:
        f.write("name,wavelength,frame,species,lower,upper\nX,1e400nm,air,Fe I,5P1,5D0\n")
    expect_error("line list with 1e400nm", ["line", "--catalog", T("bad_lines.csv")], 1, ["bad_lines.csv:2", "wavelength", "1e400nm"])
    with open(T("nested.csv"), "w") as f:
        f.write("name,wavelength,frame,species,lower,upper\nX,630nm,air,Fe I,jK(jK(2P3/2,p,5/2,2),p,5/2,2),5D0\n")
    expect_error("line list with nested brackets", ["line", "--catalog", T("nested.csv")], 1, ["nested.csv:2", "lower", "jK"])
    with open(T("spec_nonmono.txt"), "w") as f:
        for k in range(20):
            f.write(f"{630.0 + 0.01 * (k if k != 10 else 3)} {1.0 - 0.3 * np.exp(-((k - 10) / 3.0) ** 2)} 0.0\n")
    expect_error("spectrum with a non-monotonic wavelength column",
                 ["measure", T("spec_nonmono.txt"), "--lower", "5P1", "--upper", "5D0", "--wavelength", "630.1nm"], 1,
                 ["spec_nonmono.txt"])
    with open(T("spec_zerostep.txt"), "w") as f:
        for k in range(20):
            f.write(f"{630.0 + 0.01 * min(k, 12)} 1.0 0.0\n")
    expect_error("spectrum with a zero wavelength step",
                 ["measure", T("spec_zerostep.txt"), "--lower", "5P1", "--upper", "5D0", "--wavelength", "630.1nm"], 1,
                 ["spec_zerostep.txt"])

if failures:
    print(f"{len(failures)} hostile-input expectation(s) failed")
    sys.exit(1)
print("hostile-input corpus: every case gave its expected outcome")

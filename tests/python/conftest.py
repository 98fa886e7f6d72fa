"""Shared fixtures of the Python-module tests: the module, the CLI binary, the demo data.

Run from ctest (tests/CMakeLists.txt) with /usr/bin/python3 -m pytest; ctest sets PYTHONPATH to the
build's python/ directory and ZEELINE_BINARY / ZEELINE_SOURCE_DIR.
"""
import json
import math
import os
import subprocess

import numpy as np
import pytest

import zeeline  # noqa: F401  (the module under test: PYTHONPATH=build/python)

BINARY = os.environ.get("ZEELINE_BINARY", "zeeline")
SOURCE = os.environ.get("ZEELINE_SOURCE_DIR", os.path.join(os.path.dirname(__file__), "..", ".."))
DEMO = os.path.join(SOURCE, "demo_maps")
LINES = os.path.join(DEMO, "lines.csv")
CUBE = os.path.join(DEMO, "bipolar_region.fits")


def run_cli(*args, expect_code=0):
    """Runs the zeeline binary; returns (stdout, stderr) after checking the exit code."""
    p = subprocess.run([BINARY, *[str(a) for a in args]], capture_output=True, text=True)
    assert p.returncode == expect_code, f"zeeline {args}: exit {p.returncode}\n{p.stderr}"
    return p.stdout, p.stderr


def cli_json(*args):
    out, _ = run_cli(*args, "--json")
    return json.loads(out)


def cli_error(*args, expect_code):
    """The CLI's error message (what follows 'zeeline: error: ') for a failing command."""
    _, err = run_cli(*args, expect_code=expect_code)
    line = [l for l in err.splitlines() if l.startswith("zeeline: error: ")]
    assert line, err
    return line[0][len("zeeline: error: "):]


def write_cube(path, data, wl, ctype):
    """A FITS cube (Stokes, wavelength, y, x) written by astropy with the header that map() and
    calibrate_crosstalk() give an array: a linear spectral axis from wl (CTYPE3 `ctype`), STOKES 1, 2, ..."""
    from astropy.io import fits
    h = fits.PrimaryHDU(data)
    h.header["CTYPE3"], h.header["CUNIT3"], h.header["CRPIX3"] = ctype, "nm", 1.0
    h.header["CRVAL3"], h.header["CDELT3"] = wl[0], (wl[-1] - wl[0]) / (len(wl) - 1)
    h.header["CTYPE4"], h.header["CRPIX4"], h.header["CRVAL4"], h.header["CDELT4"] = "STOKES", 1.0, 1.0, 1.0
    h.writeto(path)


def _numbers(x):
    return isinstance(x, list) and len(x) > 0 and all(
        v is None or (isinstance(v, (int, float)) and not isinstance(v, bool)) for v in x)


def assert_same_as_json(result, reference, where="result"):
    """`result` (from the module) holds exactly the numbers of `reference` (json.loads of the CLI's
    --json): same keys; a list of numbers is a numpy array equal element by element (null <-> NaN), a
    rectangular list of such lists a 2-D array; scalars equal (null <-> None). Exact equality: the JSON
    carries 17 significant digits, which give back every double."""
    if isinstance(reference, dict):
        assert isinstance(result, dict), f"{where}: expected a dict, got {type(result)}"
        assert sorted(result) == sorted(reference), f"{where}: keys {sorted(result)} != {sorted(reference)}"
        for k in reference:
            assert_same_as_json(result[k], reference[k], f"{where}[{k!r}]")
        return
    rows = (isinstance(reference, list) and len(reference) > 0 and all(_numbers(r) for r in reference)
            and len({len(r) for r in reference}) == 1)
    if _numbers(reference) or rows:
        assert isinstance(result, np.ndarray), f"{where}: expected a numpy array, got {type(result)}"
        nan = lambda v: math.nan if v is None else v  # noqa: E731
        expected = np.array([[nan(v) for v in r] for r in reference] if rows else [nan(v) for v in reference])
        assert result.shape == expected.shape, f"{where}: shape {result.shape} != {expected.shape}"
        assert np.array_equal(result, expected, equal_nan=result.dtype.kind == "f"), f"{where}: values differ"
        return
    if isinstance(reference, list):
        assert isinstance(result, list) and len(result) == len(reference), f"{where}: expected a list like the JSON"
        for i, (a, b) in enumerate(zip(result, reference)):
            assert_same_as_json(a, b, f"{where}[{i}]")
        return
    assert type(result) is type(reference) and result == reference, f"{where}: {result!r} != {reference!r}"


def assert_identical(a, b, where="result"):
    """Two results of the module hold the same keys, dtypes and numbers (NaN equal to NaN)."""
    assert type(a) is type(b), f"{where}: {type(a)} != {type(b)}"
    if isinstance(a, dict):
        assert sorted(a) == sorted(b), f"{where}: keys differ"
        for k in a:
            assert_identical(a[k], b[k], f"{where}[{k!r}]")
    elif isinstance(a, np.ndarray):
        assert a.dtype == b.dtype and a.shape == b.shape, f"{where}: {a.dtype}{a.shape} != {b.dtype}{b.shape}"
        assert np.array_equal(a, b, equal_nan=a.dtype.kind == "f"), f"{where}: values differ"
    elif isinstance(a, list):
        assert len(a) == len(b), f"{where}: lengths differ"
        for i, (x, y) in enumerate(zip(a, b)):
            assert_identical(x, y, f"{where}[{i}]")
    elif isinstance(a, float) and math.isnan(a):
        assert math.isnan(b), f"{where}: nan != {b!r}"
    else:
        assert a == b, f"{where}: {a!r} != {b!r}"


@pytest.fixture
def tmp(tmp_path):
    return tmp_path

"""map() of the Python module: the maps of `zeeline map` (read back with astropy) for a FITS cube and for
the same cube as a numpy array (float32, float64, strided); clear errors for wrong shapes; NaN blocks
flagged NONFINITE_INPUT; the GIL released while the maps are computed."""
import threading
import time

import numpy as np
import pytest
from astropy.io import fits

import zeeline
from conftest import CUBE, LINES, cli_error, run_cli, write_cube

FE = dict(line="FeI_6302", catalog=LINES)
# A sub-region of the demo cube (y, x) with strong and weak field, small enough for the me pixels of auto.
Y0, Y1, X0, X1 = 12, 28, 14, 34


def _cli_maps(cube_path, out, *options):
    run_cli("map", cube_path, "--line", "FeI_6302", "--catalog", LINES, "-o", out, "-q", *options)
    with fits.open(out) as h:  # astropy reads the map file independently of zeeline
        return {x.header["EXTNAME"]: x.data.astype(x.data.dtype.newbyteorder("="))
                for x in h[1:] if x.is_image and x.data is not None and x.data.ndim == 2}


def _assert_same_maps(result, reference):
    assert sorted(result) == sorted(reference)
    for name, expected in reference.items():
        got = result[name]
        assert got.shape == expected.shape, name
        assert got.dtype == expected.dtype, f"{name}: {got.dtype} != {expected.dtype}"
        assert np.array_equal(got, expected, equal_nan=got.dtype.kind == "f"), f"{name} differs"


def _demo_arrays():
    wl = zeeline.info(CUBE)["wavelength_nm"]
    with fits.open(CUBE) as h:
        data = np.array(h[0].data)  # (Stokes, wavelength, y, x) in numpy order
    return wl, data


def test_map_of_the_demo_file_is_identical_to_the_cli_map_file(tmp):
    reference = _cli_maps(CUBE, tmp / "maps.fits", "--method", "wfa")
    result = zeeline.map(CUBE, method="wfa", **FE)
    _assert_same_maps(result, reference)
    assert result["B_LOS"].shape == (40, 48) and result["QUALITY"].dtype == np.int32


@pytest.mark.parametrize("dtype", [np.float32, np.float64])
def test_map_of_an_array_is_identical_to_the_cli_on_the_same_cube(tmp, dtype):
    wl, data = _demo_arrays()
    sub = np.ascontiguousarray(data[:, :, Y0:Y1, X0:X1]).astype(dtype)
    write_cube(tmp / "sub.fits", sub, wl, "AWAV")
    reference = _cli_maps(tmp / "sub.fits", tmp / "maps.fits", "--method", "auto")
    result = zeeline.map(sub, wavelength_nm=wl, method="auto", **FE)
    _assert_same_maps(result, reference)
    assert (result["METHOD"] == 4).any(), "the region should include Milne-Eddington pixels"


def test_float32_float64_and_strided_arrays_give_the_same_maps():
    wl, data = _demo_arrays()
    sub32 = np.ascontiguousarray(data[:, :, Y0:Y1, X0:X1])
    base = zeeline.map(sub32, wavelength_nm=wl, method="wfa", **FE)
    # float64 copy: the reader works in double, so the maps do not change.
    same64 = zeeline.map(sub32.astype(np.float64), wavelength_nm=wl, method="wfa", **FE)
    # Non-contiguous: every second x of a wider, interleaved array.
    wide = np.zeros(sub32.shape[:3] + (2 * sub32.shape[3],), dtype=np.float32)
    wide[..., ::2] = sub32
    strided = wide[..., ::2]
    assert not strided.flags["C_CONTIGUOUS"]
    same_strided = zeeline.map(strided, wavelength_nm=list(wl), method="wfa", **FE)
    for other in (same64, same_strided):
        _assert_same_maps(other, base)


def test_nan_blocks_are_flagged_and_their_neighbours_keep_their_values():
    wl, data = _demo_arrays()
    sub = np.ascontiguousarray(data[:, :, Y0:Y1, X0:X1])
    options = dict(method="wfa", window="0.02nm", continuum_exclude="0.03nm", noise=1e-3, **FE)
    clean = zeeline.map(sub, wavelength_nm=wl, **options)
    holed = sub.copy()
    holed[3, 40:50, 2:5, 3:7] = np.nan  # a block of V samples in 3 x 4 pixels
    holed[0, :, 10, 10] = np.inf        # a whole I spectrum
    maps = zeeline.map(holed, wavelength_nm=wl, **options)
    bad = np.zeros(clean["QUALITY"].shape, bool)
    bad[2:5, 3:7] = True
    bad[10, 10] = True
    assert np.all(maps["QUALITY"][bad] & 1), "NONFINITE_INPUT (bit 0, docs/fits.md) on every hit pixel"
    assert all("NONFINITE_INPUT" in zeeline.quality_names(int(q)) for q in maps["QUALITY"][bad])
    assert not np.any(maps["QUALITY"][~bad] & 1)
    assert np.all(np.isnan(maps["B_LOS"][bad]))
    for name in clean:
        assert np.array_equal(maps[name][~bad], clean[name][~bad], equal_nan=True), name


@pytest.mark.parametrize("call, message", [
    (lambda d, wl: zeeline.map(d[0], wavelength_nm=wl, **FE), "expected a 4-D array (Stokes, wavelength, y, x)"),
    (lambda d, wl: zeeline.map(d[:2], wavelength_nm=wl, **FE), "axis 0 has 2 planes but stokes='IQUV' names 4"),
    (lambda d, wl: zeeline.map(d, wavelength_nm=wl[:-1], **FE), "axis 1 has 96 wavelengths but wavelength_nm has 95"),
    (lambda d, wl: zeeline.map(d, **FE), "give wavelength_nm"),
    (lambda d, wl: zeeline.map(d, wavelength_nm=wl ** 1.01, **FE), "must be uniform"),
    (lambda d, wl: zeeline.map(d[[0, 3]], wavelength_nm=wl, stokes="IX", **FE), "expected letters I, Q, U, V"),
    (lambda d, wl: zeeline.map(d[[3, 0]], wavelength_nm=wl, stokes="VI", **FE), "in the order I, Q, U, V"),
    (lambda d, wl: zeeline.map(CUBE, wavelength_nm=wl, **FE), "wavelength_nm is for array cubes"),
    (lambda d, wl: zeeline.map(d, wavelength_nm=wl, method="fast", **FE), "fast"),
    (lambda d, wl: zeeline.map(d, wavelength_nm=wl, output="x.fits", **FE), "--output"),
    (lambda d, wl: zeeline.map(d[[0, 3]], wavelength_nm=wl, stokes="IV", require_transverse=True, **FE), "(numpy cube)"),
])
def test_wrong_shapes_and_options_raise_clear_value_errors(call, message):
    wl, data = _demo_arrays()
    sub = data[:, :, :6, :6]
    with pytest.raises(ValueError) as e:
        call(sub, wl)
    assert message in str(e.value)


def test_stokes_i_and_v_arrays_give_the_line_of_sight_maps(tmp):
    wl, data = _demo_arrays()
    iv = np.ascontiguousarray(data[[0, 3], :, Y0:Y1, X0:X1])
    maps = zeeline.map(iv, wavelength_nm=wl, stokes="IV", method="wfa", **FE)
    assert "B_LOS" in maps and "B_TRANS" not in maps and "B_AZIM" not in maps


def test_stokes_i_q_u_give_the_transverse_field_and_no_inclination(tmp):
    # Without V there is no B_LOS, so |B| and the inclination are undetermined (B_T = |B| sin(gamma) alone;
    # common practice): they must be NaN, not B_T and 90 deg.
    wl, data = _demo_arrays()
    iqu = np.ascontiguousarray(data[:3, :, Y0:Y1, X0:X1])
    maps = zeeline.map(iqu, wavelength_nm=wl, stokes="IQU", **FE)  # auto: wfa refuses a cube without V
    assert np.isfinite(maps["B_TRANS"]).sum() > 0
    assert np.isfinite(maps["B_AZIM"]).sum() > 0
    wfa = maps["METHOD"] == 1  # resolved-splitting pixels (METHOD 3) do measure |B| from Q, U alone
    assert wfa.sum() > 0
    for name in ("B_LOS", "B_TOTAL", "B_INCL"):
        assert name not in maps or not np.isfinite(maps[name][wfa]).any(), name


def test_a_missing_cube_file_is_an_os_error_with_the_cli_message(tmp):
    message = cli_error("map", "/nonexistent/cube.fits", "--line", "FeI_6302", "--catalog", LINES, "-o",
                        tmp / "m.fits", expect_code=1)
    with pytest.raises(OSError) as e:
        zeeline.map("/nonexistent/cube.fits", **FE)
    assert str(e.value) == message


def test_the_gil_is_released_while_the_maps_are_computed():
    wl, data = _demo_arrays()
    stamps = []
    stop = threading.Event()

    def tick():  # a Python thread that keeps time-stamping while map() runs
        while not stop.is_set():
            stamps.append(time.perf_counter())
            time.sleep(0.001)

    t = threading.Thread(target=tick)
    t.start()
    time.sleep(0.02)
    start = time.perf_counter()
    # The whole demo cube, Milne-Eddington everywhere, one thread: some 0.1-1 s of work (2 cores, 2026).
    zeeline.map(data, wavelength_nm=wl, method="me", threads=1, **FE)
    end = time.perf_counter()
    stop.set()
    t.join()
    inside = [s for s in stamps if start < s < end]
    # With the GIL held the thread could not run at all between start and end: no stamp inside. Released,
    # it stamps through the call (a margin for a busy machine that leaves it without a core for a while).
    assert end - start > 0.02, "map() too quick to tell"
    assert len(inside) >= 2 and inside[-1] - inside[0] > 0.4 * (end - start), (len(inside), end - start)


def test_quality_names_match_the_qbit_keywords_of_the_cli_map_file(tmp):
    run_cli("map", CUBE, "--line", "FeI_6302", "--catalog", LINES, "-o", tmp / "m.fits", "-q", "--method", "wfa")
    header = fits.getheader(tmp / "m.fits", "QUALITY")
    bits = {int(k[4:]): v for k, v in header.items() if k.startswith("QBIT")}
    assert bits, "the map file names its QUALITY bits"
    for bit, name in bits.items():
        assert zeeline.quality_names(1 << bit) == [name]
    assert zeeline.quality_names(0) == []
    assert zeeline.quality_names(1 | 2) == [bits[0], bits[1]]


def test_the_maps_do_not_depend_on_the_thread_count():
    wl, data = _demo_arrays()
    sub = np.ascontiguousarray(data[:, :, Y0:Y1, X0:X1])
    one = zeeline.map(sub, wavelength_nm=wl, method="auto", threads=1, **FE)
    _assert_same_maps(zeeline.map(sub, wavelength_nm=wl, method="auto", threads=2, **FE), one)


def test_few_continuum_samples_give_a_warning_unless_the_noise_is_given():
    # docs/methods.md, "Few continuum samples": the central part of the demo's spectral range leaves fewer than
    # 16 continuum samples; the CLI warns on stderr, the module with a UserWarning.
    wl, data = _demo_arrays()
    lo, hi = len(wl) // 2 - 16, len(wl) // 2 + 16
    sub = np.ascontiguousarray(data[:, lo:hi, Y0:Y1, X0:X1])
    with pytest.warns(UserWarning, match="continuum samples"):
        zeeline.map(sub, wavelength_nm=wl[lo:hi], method="wfa", **FE)
    import warnings
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        zeeline.map(sub, wavelength_nm=wl[lo:hi], method="wfa", noise=1e-3, **FE)
        zeeline.map(np.ascontiguousarray(data[:, :, Y0:Y1, X0:X1]), wavelength_nm=wl, method="wfa", **FE)

"""measure() of the Python module: numpy arrays (float64, float32, strided) and files give exactly what
`zeeline measure --json` gives on the same samples; bad arrays raise ValueError naming the array."""
import numpy as np
import pytest

import zeeline
from conftest import CUBE, DEMO, LINES, assert_identical, assert_same_as_json, cli_error, cli_json, run_cli

CD_LAMP = f"{DEMO}/spectra/cd_lamp_1T.txt"
CD_LINE = dict(line="CdI_6438", catalog=LINES, instrument_fwhm="2pm")


def _write_table(path, w, I, Q=None, U=None, V=None):
    """A spectrum table with 17 significant digits: the CLI reads back exactly these doubles."""
    cols, names = [w, I], ["wavelength_nm", "I"]
    if Q is not None:
        cols += [Q, U]
        names += ["Q", "U"]
    if V is not None:
        cols.append(V)
        names.append("V")
    np.savetxt(path, np.column_stack([np.asarray(c, dtype=np.float64) for c in cols]), fmt="%.17g",
               header=" ".join(names), comments="")


def _without_input_file(result):
    result = dict(result)
    result["input"] = {k: v for k, v in result["input"].items() if k != "file"}
    return result


def _synthetic_umbra():
    """An invented sunspot-umbra spectrum: Fe I 630.25 nm at 2500 G from profile(), with fixed noise."""
    p = zeeline.profile(line="FeI_6302", catalog=LINES, field="2500G", inclination=40, azimuth=30, vlos=0.3,
                        points=181, range="0.09nm")
    rng = np.random.default_rng(20261202)
    noisy = {k: p[k] + rng.normal(0.0, 1e-3, p[k].size) for k in ("I", "Q", "U", "V")}
    return p["wavelength_nm"], noisy


@pytest.mark.filterwarnings("ignore:safety:UserWarning")  # a lamp line (see the last test)
def test_measure_of_a_file_is_identical_to_the_cli():
    reference = cli_json("measure", CD_LAMP, "--line", "CdI_6438", "--catalog", LINES, "--instrument-fwhm", "2pm")
    assert_same_as_json(zeeline.measure(CD_LAMP, **CD_LINE), reference)


def test_measure_of_a_cube_pixel_is_identical_to_the_cli():
    reference = cli_json("measure", CUBE, "--pixel", "15,22", "--line", "FeI_6302", "--catalog", LINES)
    assert_same_as_json(zeeline.measure(CUBE, pixel="15,22", line="FeI_6302", catalog=LINES), reference)


@pytest.mark.parametrize("dtype", [np.float64, np.float32])
def test_measure_of_arrays_is_identical_to_the_cli_on_the_same_samples(tmp, dtype):
    w, s = _synthetic_umbra()
    arrays = {k: v.astype(dtype) for k, v in s.items()}
    table = tmp / "umbra.txt"
    _write_table(table, w, arrays["I"], arrays["Q"], arrays["U"], arrays["V"])
    reference = cli_json("measure", table, "--line", "FeI_6302", "--catalog", LINES)
    result = zeeline.measure(w, arrays["I"], arrays["Q"], arrays["U"], arrays["V"], line="FeI_6302", catalog=LINES)
    assert result["input"]["file"] == "(numpy arrays)"
    assert_same_as_json(_without_input_file(result), _without_input_file(reference))
    # The arrays were read as meant: the Milne-Eddington estimate finds the injected 2500 G (invented data).
    assert abs(result["estimates"]["me"]["field_gauss"] - 2500.0) < 5 * result["estimates"]["me"]["field_err_gauss"] + 10


def test_measure_of_strided_arrays_equals_contiguous_copies():
    w, s = _synthetic_umbra()
    # Every second sample of an interleaved buffer: non-contiguous views.
    buffer = np.zeros((5, 2 * w.size))
    buffer[:, ::2] = [w, s["I"], s["Q"], s["U"], s["V"]]
    views = [buffer[k, ::2] for k in range(5)]
    assert not views[0].flags["C_CONTIGUOUS"]
    a = zeeline.measure(*views, line="FeI_6302", catalog=LINES)
    b = zeeline.measure(*[np.ascontiguousarray(v) for v in views], line="FeI_6302", catalog=LINES)
    assert_identical(a, b)


def test_v_sign_of_arrays_works_as_for_files():
    w, s = _synthetic_umbra()
    plain = zeeline.measure(w, s["I"], s["Q"], s["U"], s["V"], line="FeI_6302", catalog=LINES)
    iau = zeeline.measure(w, s["I"], s["Q"], s["U"], -s["V"], line="FeI_6302", catalog=LINES, v_sign=-1)
    assert_identical(plain, iau)
    with pytest.raises(ValueError, match="v_sign"):
        zeeline.measure(w, s["I"], line="FeI_6302", catalog=LINES, v_sign=2)


def test_measure_of_stokes_i_and_v_only(tmp):
    w, s = _synthetic_umbra()
    table = tmp / "iv.txt"
    _write_table(table, w, s["I"], V=s["V"])
    reference = cli_json("measure", table, "--line", "FeI_6302", "--catalog", LINES)
    result = zeeline.measure(w, s["I"], V=s["V"], line="FeI_6302", catalog=LINES)
    assert_same_as_json(_without_input_file(result), _without_input_file(reference))
    assert result["input"]["stokes"] == "IV"


@pytest.mark.parametrize("change, message", [
    (lambda a: a.update(I=a["I"][:-1]), "I: 180 samples, wavelength_nm has 181"),
    (lambda a: a.update(V=a["V"].reshape(1, -1)), "V: expected a 1-D array, got shape (1, 181)"),
    (lambda a: a["V"].__setitem__(40, np.nan), "V[40] = nan"),
    (lambda a: a["wavelength_nm"].__setitem__(10, a["wavelength_nm"][9]), "wavelength_nm[10]"),
    (lambda a: a.update(U=None), "Q and U must be given together"),
    (lambda a: a.update({k: a[k][:5] for k in a if a[k] is not None}), "expected at least 8"),
    (lambda a: a.update(I=np.array(["a"] * 181)), "I: expected an array of numbers"),
])
def test_bad_arrays_raise_value_errors_naming_the_array(change, message):
    w, s = _synthetic_umbra()
    a = {"wavelength_nm": w.copy(), **{k: v.copy() for k, v in s.items()}}
    change(a)
    with pytest.raises(ValueError) as e:
        zeeline.measure(a["wavelength_nm"], a["I"], a["Q"], a["U"], a["V"], line="FeI_6302", catalog=LINES)
    assert message in str(e.value)


def test_option_errors_carry_the_cli_message(tmp):
    w, s = _synthetic_umbra()
    table = tmp / "umbra.txt"
    _write_table(table, w, s["I"], s["Q"], s["U"], s["V"])
    message = cli_error("measure", table, "--line", "FeI_6302", "--catalog", LINES, "--emission", "--absorption",
                        expect_code=2)
    with pytest.raises(ValueError) as e:
        zeeline.measure(w, s["I"], s["Q"], s["U"], s["V"], line="FeI_6302", catalog=LINES, emission=True,
                        absorption=True)
    assert str(e.value) == message
    with pytest.raises(ValueError, match="png"):
        zeeline.measure(w, s["I"], line="FeI_6302", catalog=LINES, png=str(tmp / "x.png"))


def test_a_missing_spectrum_file_is_an_os_error_with_the_cli_message():
    message = cli_error("measure", "/nonexistent/spectrum.txt", "--line", "FeI_6302", "--catalog", LINES,
                        expect_code=1)
    with pytest.raises(OSError) as e:
        zeeline.measure("/nonexistent/spectrum.txt", line="FeI_6302", catalog=LINES)
    assert str(e.value) == message


def test_the_lab_safety_note_of_a_lamp_line_becomes_a_warning(tmp):
    _, err = run_cli("measure", CD_LAMP, "--line", "CdI_6438", "--catalog", LINES, "--instrument-fwhm", "2pm", "--json")
    note = [l for l in err.splitlines() if l.startswith("safety:")]
    assert len(note) == 1
    with pytest.warns(UserWarning) as caught:
        zeeline.measure(CD_LAMP, **CD_LINE)
    assert [str(w.message) for w in caught] == note
    # The same spectrum as arrays gives the same note.
    table = np.loadtxt(CD_LAMP, skiprows=3)
    with pytest.warns(UserWarning) as caught:
        zeeline.measure(*table.T, **CD_LINE)
    assert [str(w.message) for w in caught] == note

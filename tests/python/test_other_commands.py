"""info, broadening and calibrate functions of the Python module: the same result as the CLI's --json on the
bundled demo inputs (docs/broadening.md, docs/polarimetry.md)."""
import numpy as np
import pytest
from astropy.io import fits

import zeeline
from conftest import CUBE, DEMO, LINES, assert_same_as_json, cli_error, cli_json, run_cli, write_cube

# The lab-safety notes of these commands come as UserWarnings (checked in test_safety_notes_are_warnings).
pytestmark = pytest.mark.filterwarnings("ignore:safety:UserWarning")

PLASMA = f"{DEMO}/plasma_lines.csv"
CAL = f"{DEMO}/calibration"


def test_info_equals_the_cli():
    assert_same_as_json(zeeline.info(CUBE), cli_json("info", CUBE))
    assert_same_as_json(zeeline.info(CUBE, frame="vacuum", no_scan=True),
                        cli_json("info", CUBE, "--frame", "vacuum", "--no-scan"))


def test_broadening_budget_equals_the_cli():
    args = dict(wavelength="667.8151nm", mass=4.0026, temperature="1eV", instrument_fwhm="3pm", field="0.45T",
                lower="1P1", upper="1D2")
    reference = cli_json("broadening", "budget", "--wavelength", "667.8151nm", "--mass", "4.0026", "--temperature",
                         "1eV", "--instrument-fwhm", "3pm", "--field", "0.45T", "--lower", "1P1", "--upper", "1D2")
    assert_same_as_json(zeeline.broadening_budget(**args), reference)


def test_broadening_inglis_teller_equals_the_cli():
    assert_same_as_json(zeeline.broadening_inglis_teller(last_resolved=12),
                        cli_json("broadening", "inglis-teller", "--last-resolved", "12"))


def test_broadening_diagnose_equals_the_cli():
    spectrum = f"{DEMO}/spectra/he_column_magnetised.txt"
    reference = cli_json("broadening", "diagnose", spectrum, "--catalog", PLASMA, "--instrument-fwhm", "3pm")
    assert_same_as_json(zeeline.broadening_diagnose(spectrum, catalog=PLASMA, instrument_fwhm="3pm"), reference)


def test_broadening_diagnose_of_arrays_equals_the_cli_on_the_same_samples():
    spectrum = f"{DEMO}/spectra/he_column_magnetised.txt"
    w, i, v = np.loadtxt(spectrum, skiprows=3).T  # both parsers give the correctly rounded doubles
    reference = cli_json("broadening", "diagnose", spectrum, "--catalog", PLASMA, "--instrument-fwhm", "3pm")
    result = zeeline.broadening_diagnose(w, i, v, catalog=PLASMA, instrument_fwhm="3pm")
    assert result["input"].pop("file") == "(numpy arrays)"
    reference["input"].pop("file")
    assert_same_as_json(result, reference)
    # V in the IAU 1974 sense with v_sign=-1 gives the same diagnosis.
    flipped = zeeline.broadening_diagnose(w, i, -v, catalog=PLASMA, instrument_fwhm="3pm", v_sign=-1)
    assert flipped["field_gauss"] == result["field_gauss"] and flipped["verdict"] == result["verdict"]
    with pytest.raises(ValueError, match="png"):
        zeeline.broadening_diagnose(w, i, v, catalog=PLASMA, png="x.png")


def test_calibrate_modulation_equals_the_cli():
    table = f"{CAL}/bench_sequence.csv"
    reference = cli_json("calibrate", "modulation", table, "--gain", "2.1", "--read-noise", "6")
    assert_same_as_json(zeeline.calibrate_modulation(table, gain=2.1, read_noise=6), reference)


def test_calibrate_crosstalk_equals_the_cli():
    cube = f"{CAL}/crosstalk_scan.fits"
    assert_same_as_json(zeeline.calibrate_crosstalk(cube), cli_json("calibrate", "crosstalk", cube))


def test_calibrate_crosstalk_of_an_array_equals_the_cli_on_the_same_cube(tmp):
    cube = f"{CAL}/crosstalk_scan.fits"
    wl = zeeline.info(cube)["wavelength_nm"]
    with fits.open(cube) as h:
        data = h[0].data.transpose(2, 3, 0, 1)  # file axes (wavelength, Stokes, x, y) -> (Stokes, wavelength, y, x)
    assert not data.flags["C_CONTIGUOUS"]
    write_cube(tmp / "same.fits", np.ascontiguousarray(data), wl, "WAVE")
    reference = cli_json("calibrate", "crosstalk", tmp / "same.fits")
    result = zeeline.calibrate_crosstalk(data, wl)
    assert result.pop("input") == "(numpy cube)"
    reference.pop("input")
    assert_same_as_json(result, reference)
    # The corrected cube is written like the CLI's (here: read back and checked against the coefficients).
    zeeline.calibrate_crosstalk(data, wl, correct=True, output=str(tmp / "corrected.fits"))
    corrected = fits.getdata(tmp / "corrected.fits")
    assert corrected.shape == data.shape
    # V' = V - aV I (the correction stated in the corrected file's HISTORY, docs/polarimetry.md); float32 file.
    i, v = data[0].astype(np.float64), data[3].astype(np.float64)
    assert np.allclose(corrected[3], v - result["I_to_V"] * i, rtol=0, atol=1e-6 * np.abs(i).max())
    with pytest.raises(ValueError, match="wavelength_nm"):
        zeeline.calibrate_crosstalk(data)


def test_calibrate_magnet_equals_the_cli():
    spectra = [f"{CAL}/cd_long.csv:0,0", f"{CAL}/cd_trans.csv:90,0"]
    reference = cli_json("calibrate", "magnet", "--spectrum", spectra[0], "--spectrum", spectra[1], "--line",
                         "CdI_6438", "--catalog", LINES, "--field", "10kG", "--instrument-fwhm", "2pm", "--damping",
                         "0.02")
    result = zeeline.calibrate_magnet(spectrum=spectra, line="CdI_6438", catalog=LINES, field="10kG",
                                      instrument_fwhm="2pm", damping=0.02)
    assert_same_as_json(result, reference)


def test_calibration_errors_carry_the_cli_messages(tmp):
    message = cli_error("calibrate", "modulation", "/nonexistent/sequence.csv", expect_code=1)
    with pytest.raises(OSError) as e:
        zeeline.calibrate_modulation("/nonexistent/sequence.csv")
    assert str(e.value) == message
    message = cli_error("broadening", "budget", "--wavelength", "656nm", "--mass", "1", "--temperature", "-5K",
                        expect_code=2)
    with pytest.raises(ValueError) as e:
        zeeline.broadening_budget(wavelength="656nm", mass=1, temperature="-5K")
    assert str(e.value) == message


def test_docstrings_carry_the_command_options():
    assert "--doppler-width" in zeeline.profile.__doc__
    assert "--extra-line" in zeeline.map.__doc__
    assert zeeline.__version__


@pytest.mark.filterwarnings("default")
def test_safety_notes_are_warnings_with_the_cli_text():
    _, err = run_cli("broadening", "budget", "--wavelength", "656.28nm", "--mass", "1.008", "--temperature", "1eV",
                     "--json")
    note = [l for l in err.splitlines() if l.startswith("safety:")]
    assert len(note) == 1
    with pytest.warns(UserWarning) as caught:
        zeeline.broadening_budget(wavelength="656.28nm", mass=1.008, temperature="1eV")
    assert [str(w.message) for w in caught] == note

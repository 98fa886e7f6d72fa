"""lande, line and profile of the Python module against the zeeline CLI on the same options, plus outside
checks: the textbook LS Landé formula and the Lorentz unit from scipy.constants (CODATA 2018)."""
import math

import numpy as np
import pytest
import scipy.constants as sc

import zeeline
from conftest import LINES, assert_same_as_json, cli_error, cli_json

FE_6302 = dict(lower="5P1", upper="5D0", wavelength="630.2494nm")


def test_lande_equals_cli_for_every_coupling():
    levels = ["5D4", "2P3/2", "jK(2P3/2,p,5/2,2)", "jj(2P1/2,2S1/2,1)", "5D4:g=1.50"]
    rows = cli_json("lande", *levels)
    assert zeeline.lande(levels) == [r["g"] for r in rows]
    for level, row in zip(levels, rows):
        assert zeeline.lande(level) == row["g"]


def test_lande_with_textbook_spin_factor_is_the_ls_formula():
    # g = 1 + [J(J+1) + S(S+1) - L(L+1)] / [2 J(J+1)] with g_s = 2 (textbook LS formula, common practice).
    def g_ls(S, L, J):
        return 1 + (J * (J + 1) + S * (S + 1) - L * (L + 1)) / (2 * J * (J + 1))
    assert zeeline.lande("2P3/2", gs=2) == pytest.approx(g_ls(0.5, 1, 1.5), rel=1e-12)  # 4/3
    assert zeeline.lande("5D4", gs=2.0) == pytest.approx(g_ls(2, 2, 4), rel=1e-12)      # 1.5
    assert zeeline.lande("2P3/2", gs=2) == cli_json("lande", "2P3/2", "--gs", "2")[0]["g"]


def test_line_equals_cli_with_unit_strings_and_plain_numbers():
    reference = cli_json("line", "--lower", "5P1", "--upper", "5D0", "--wavelength", "630.2494nm", "--field", "1200G")
    assert_same_as_json(zeeline.line(**FE_6302, field="1200G"), reference)
    # Plain numbers are the base units: nm and gauss.
    assert_same_as_json(zeeline.line(lower="5P1", upper="5D0", wavelength=630.2494, field=1200), reference)
    assert_same_as_json(zeeline.line(**FE_6302, field="1.2kG"), reference)
    assert_same_as_json(zeeline.line(**FE_6302, field="0.12T"), reference)


def test_line_of_a_whole_catalog_is_a_list_like_the_cli():
    reference = cli_json("line", "--catalog", LINES, "--field", "0.5T")
    result = zeeline.line(catalog=LINES, field="0.5T")
    assert isinstance(result, list) and len(result) == len(reference) > 1
    assert_same_as_json(result, reference)
    assert_same_as_json(zeeline.line(catalog=LINES, line="FeI_6302"), cli_json("line", "--catalog", LINES, "--line", "FeI_6302"))


PROFILE_CASES = [
    dict(field="1200G", inclination=30, azimuth=20, vlos="0.5km/s"),
    dict(field=800.0, inclination=120.0, azimuth=-35.5, vlos=-1.25, doppler_width="3.2pm", damping=0.2, eta0=8,
         s0=0.25, s1=0.75, points=151, instrument_fwhm="2.5pm", macroturbulence=1.0),
    dict(field="1.5kG", inclination=60, voigt="reference", range="0.08nm", mu=0.8, fill=0.7),
]


def _cli_args(options):
    args = []
    for k, v in options.items():
        args.append("--" + k.replace("_", "-") + "=" + (repr(v) if isinstance(v, float) else str(v)))
    return args


@pytest.mark.parametrize("options", PROFILE_CASES)
def test_profile_is_identical_to_profile_json(options):
    reference = cli_json("profile", *_cli_args(FE_6302), *_cli_args(options))
    result = zeeline.profile(**FE_6302, **options)
    assert_same_as_json(result, reference)
    for k in ("wavelength_nm", "I", "Q", "U", "V"):
        assert result[k].dtype == np.float64 and result[k].shape == (options.get("points", 201),)


def test_profile_of_a_catalog_line_matches_the_cli():
    reference = cli_json("profile", "--line", "FeI_6302", "--catalog", LINES, "--field", "800G")
    assert_same_as_json(zeeline.profile(line="FeI_6302", catalog=LINES, field="800G"), reference)


def test_profile_without_field_has_no_polarisation_and_the_codata_lorentz_unit():
    p = zeeline.profile(**FE_6302, field=0)
    for k in ("Q", "U", "V"):  # B = 0: no polarisation (invariant, docs/line_formation.md)
        assert np.all(p[k] == 0.0)
    q = zeeline.profile(**FE_6302, field="1000G")
    # Lorentz unit e lambda^2 B / (4 pi m_e c) (Landi Degl'Innocenti & Landolfi 2004, eq. 3.8), CODATA via
    # scipy.constants, B = 0.1 T, lambda in m -> nm.
    lam = 630.2494e-9
    expected_nm = sc.e * lam ** 2 * 0.1 / (4 * math.pi * sc.m_e * sc.c) * 1e9
    assert q["lorentz_shift_nm"] == pytest.approx(expected_nm, rel=1e-9)
    assert q["sigma_shift_nm"] == pytest.approx(expected_nm * q["g_eff"], rel=1e-9)


@pytest.mark.parametrize("options, code", [
    (dict(lower="5X9", upper="5D0", wavelength="630nm"), 1),
    (dict(**FE_6302, field="-5G"), 2),
    (dict(**FE_6302, field="12 parsecs"), 2),
    (dict(**FE_6302, points=1), 2),
    (dict(lower="5P1", upper="5P0", wavelength="630nm"), 1),
])
def test_profile_errors_are_value_errors_with_the_cli_message(options, code):
    message = cli_error("profile", *_cli_args(options), expect_code=code)
    with pytest.raises(ValueError) as e:
        zeeline.profile(**options)
    assert str(e.value) == message


def test_unknown_keywords_and_wrong_types_are_refused():
    with pytest.raises(ValueError, match="--not-an-option"):
        zeeline.profile(**FE_6302, not_an_option=3)
    with pytest.raises(TypeError):
        zeeline.profile(**FE_6302, field=object())
    with pytest.raises(ValueError, match="json"):
        zeeline.line(**FE_6302, json=True)
    with pytest.raises(TypeError):
        zeeline.lande(5)


def test_missing_catalog_is_an_os_error_with_the_cli_message():
    message = cli_error("line", "--catalog", "/nonexistent/lines.csv", expect_code=1)
    with pytest.raises(OSError) as e:
        zeeline.line(catalog="/nonexistent/lines.csv")
    assert str(e.value) == message


def test_commands_called_from_several_threads_each_get_their_own_result():
    from concurrent.futures import ThreadPoolExecutor
    fields = [f"{100 * k}G" for k in range(1, 13)]
    sequential = [zeeline.profile(**FE_6302, field=f, inclination=45) for f in fields]
    with ThreadPoolExecutor(max_workers=4) as pool:
        parallel = list(pool.map(lambda f: zeeline.profile(**FE_6302, field=f, inclination=45), fields))
    for a, b in zip(sequential, parallel):
        assert a["field_gauss"] == b["field_gauss"]
        assert np.array_equal(a["V"], b["V"]) and np.array_equal(a["Q"], b["Q"])

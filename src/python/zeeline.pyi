# Type stubs of the compiled `zeeline` module (src/python/module.cpp; docs/python.md).
# Keyword arguments are the options of the matching `zeeline` command with '_' for '-'; values are the
# command-line text ('630.2494nm', '1200G', '0.5km/s') or plain numbers in the base units (nm, G, km/s,
# deg, K, u). Results carry the keys of the command's --json output; lists of numbers are numpy arrays and
# JSON null is None (NaN inside arrays). Bad values raise ValueError, unreadable files OSError, with the
# message the CLI prints.
import os
from typing import Any, Dict, List, Optional, Sequence, Union, overload

import numpy as np
import numpy.typing as npt

__version__: str

_Value = Union[str, float, int]
_Path = Union[str, os.PathLike]
_Array = npt.ArrayLike
Result = Dict[str, Any]

@overload
def lande(level: str, gs: Optional[float] = ...) -> float: ...
@overload
def lande(level: Sequence[str], gs: Optional[float] = ...) -> List[float]: ...

def line(
    *,
    lower: Optional[str] = ...,
    upper: Optional[str] = ...,
    wavelength: Optional[_Value] = ...,
    field: Optional[_Value] = ...,
    catalog: Optional[_Path] = ...,
    line: Optional[str] = ...,
    gs: Optional[float] = ...,
    regime: Optional[str] = ...,
    upper_term_energies: Optional[str] = ...,
    lower_term_energies: Optional[str] = ...,
    fields: Optional[str] = ...,
    png: Optional[_Path] = ...,
    overwrite: bool = ...,
) -> Union[Result, List[Result]]: ...

def profile(
    *,
    lower: Optional[str] = ...,
    upper: Optional[str] = ...,
    wavelength: Optional[_Value] = ...,
    line: Optional[str] = ...,
    catalog: Optional[_Path] = ...,
    frame: Optional[str] = ...,
    gs: Optional[float] = ...,
    field: _Value = ...,
    inclination: float = ...,
    azimuth: float = ...,
    vlos: _Value = ...,
    doppler_width: _Value = ...,
    damping: float = ...,
    eta0: float = ...,
    s0: float = ...,
    s1: float = ...,
    mu: float = ...,
    fill: float = ...,
    range: _Value = ...,
    points: int = ...,
    instrument_fwhm: Optional[_Value] = ...,
    macroturbulence: Optional[_Value] = ...,
    voigt: str = ...,
    png: Optional[_Path] = ...,
    overwrite: bool = ...,
) -> Result:
    """dict(wavelength_nm, I, Q, U, V, continuum, g_eff, G, field_gauss, lorentz_shift_nm, sigma_shift_nm)."""

def measure(
    wavelength_nm: Union[_Array, _Path],
    I: Optional[_Array] = ...,
    Q: Optional[_Array] = ...,
    U: Optional[_Array] = ...,
    V: Optional[_Array] = ...,
    *,
    lower: Optional[str] = ...,
    upper: Optional[str] = ...,
    wavelength: Optional[_Value] = ...,
    line: Optional[str] = ...,
    catalog: Optional[_Path] = ...,
    frame: Optional[str] = ...,
    gs: Optional[float] = ...,
    g_eff: Optional[float] = ...,
    emission: bool = ...,
    absorption: bool = ...,
    free_components: int = ...,
    instrument_fwhm: Optional[_Value] = ...,
    damping: Optional[float] = ...,
    window: Optional[_Value] = ...,
    noise: float = ...,
    weak_ratio: float = ...,
    resolution_ratio: float = ...,
    realisations: int = ...,
    regime: str = ...,
    upper_term_energies: Optional[str] = ...,
    lower_term_energies: Optional[str] = ...,
    v_sign: int = ...,
    pixel: Optional[str] = ...,
    world: Optional[str] = ...,
    **options: Any,
) -> Result: ...

def map(
    cube: Union[_Path, _Array],
    wavelength_nm: Optional[_Array] = ...,
    *,
    stokes: str = ...,
    cube_frame: Optional[str] = ...,
    lower: Optional[str] = ...,
    upper: Optional[str] = ...,
    wavelength: Optional[_Value] = ...,
    line: Optional[str] = ...,
    catalog: Optional[_Path] = ...,
    frame: Optional[str] = ...,
    gs: Optional[float] = ...,
    method: str = ...,
    window: Optional[_Value] = ...,
    continuum_exclude: Optional[_Value] = ...,
    noise: float = ...,
    transverse: str = ...,
    core: Optional[_Value] = ...,
    wing_start: Optional[_Value] = ...,
    weak_ratio: float = ...,
    resolution_ratio: float = ...,
    detection_sigma: float = ...,
    transverse_detection: float = ...,
    transverse_model_error: float = ...,
    cog_model_error: float = ...,
    shape_test_sigma: float = ...,
    v_sign: int = ...,
    require_transverse: bool = ...,
    threads: int = ...,
    fix: Optional[str] = ...,
    free: Optional[str] = ...,
    bounds: Optional[str] = ...,
    stokes_weights: Optional[str] = ...,
    extra_line: Optional[Union[str, Sequence[str]]] = ...,
    restarts: int = ...,
    max_iterations: int = ...,
    bad_chi2: float = ...,
    mu: float = ...,
    no_auto_me: bool = ...,
    disambiguate: bool = ...,
    smooth_azimuth: int = ...,
    disambig_sigma: float = ...,
) -> Dict[str, np.ndarray]:
    """2-D maps (y, x) named like the map file's extensions: B_TOTAL, B_INCL, B_AZIM, B_LOS, B_TRANS, V_LOS,
    CHI2 with their *_SIGMA where the method gives them (float32), METHOD (int16), AZIM_PICK (int16, with
    disambiguate) and QUALITY (int32)."""

def info(cube: _Path, *, frame: Optional[str] = ..., no_scan: bool = ...) -> Result: ...

def broadening_budget(
    *,
    wavelength: _Value,
    mass: _Value,
    temperature: _Value,
    microturbulence: Optional[_Value] = ...,
    pressure: Optional[_Value] = ...,
    perturber_mass: Optional[_Value] = ...,
    collision_diameter: Optional[_Value] = ...,
    upper_decay_rate: Optional[_Value] = ...,
    lower_decay_rate: Optional[_Value] = ...,
    electron_density: Optional[_Value] = ...,
    hydrogen: Optional[str] = ...,
    self_density: Optional[_Value] = ...,
    oscillator_strength: Optional[float] = ...,
    instrument_fwhm: Optional[_Value] = ...,
    field: Optional[_Value] = ...,
    lower: Optional[str] = ...,
    upper: Optional[str] = ...,
    gs: Optional[float] = ...,
    png: Optional[_Path] = ...,
    overwrite: bool = ...,
) -> Result: ...

def broadening_inglis_teller(
    *, last_resolved: Optional[int] = ..., electron_density: Optional[_Value] = ...
) -> Result: ...

def broadening_diagnose(
    spectrum: Union[_Path, _Array],
    I: Optional[_Array] = ...,
    V: Optional[_Array] = ...,
    *,
    catalog: _Path,
    lines: Optional[str] = ...,
    instrument_fwhm: Optional[_Value] = ...,
    microturbulence: Optional[_Value] = ...,
    window: Optional[_Value] = ...,
    noise: Optional[float] = ...,
    noise_v: Optional[float] = ...,
    detection_sigma: float = ...,
    degeneracy_tolerance: float = ...,
    no_v: bool = ...,
    v_sign: int = ...,
    gs: Optional[float] = ...,
    png: Optional[_Path] = ...,
    overwrite: bool = ...,
) -> Result: ...

def calibrate_modulation(
    table: _Path,
    *,
    output: Optional[_Path] = ...,
    png: Optional[_Path] = ...,
    retardance_start: Optional[float] = ...,
    gain: float = ...,
    read_noise: Optional[float] = ...,
    overwrite: bool = ...,
    **options: Any,
) -> Result: ...

def calibrate_crosstalk(
    cube: Union[_Path, _Array],
    wavelength_nm: Optional[_Array] = ...,
    *,
    stokes: str = ...,
    cube_frame: Optional[str] = ...,
    correct: bool = ...,
    output: Optional[_Path] = ...,
    continuum: Optional[str] = ...,
    continuum_depth: Optional[float] = ...,
    strong_v_sigma: float = ...,
    v_sign: int = ...,
    overwrite: bool = ...,
    **options: Any,
) -> Result: ...

def calibrate_magnet(
    *,
    spectrum: Union[str, Sequence[str]],
    field: _Value,
    lower: Optional[str] = ...,
    upper: Optional[str] = ...,
    wavelength: Optional[_Value] = ...,
    line: Optional[str] = ...,
    catalog: Optional[_Path] = ...,
    instrument_fwhm: Optional[_Value] = ...,
    damping: Optional[float] = ...,
    v_sign: int = ...,
    png: Optional[_Path] = ...,
    overwrite: bool = ...,
    **options: Any,
) -> Result: ...

def quality_names(flags: int) -> List[str]: ...

"""The checked public entry points of gapmatch (what the CLI calls).

>>> import gapmatch as gm
>>> res = gm.evaluate([1.63, 0.96], connection="series", spectrum="AM1.5G")
>>> round(100 * res.efficiency[0], 1)
45.7
"""

from __future__ import annotations

from pathlib import Path

import numpy as np

from .core.connections import CONNECTIONS
from .core.diodes import DARK_MODELS, make_diodes
from .core.engine import solve_stacks, step_photocurrents
from .core.spectra import Spectrum
from .errors import InputError, check_finite_array, check_range
from .io.spectra import get_spectrum
from .results import BatchResult, Conditions
from .units import EV

__all__ = [
    "GAP_RANGE_EV",
    "TEMPERATURE_RANGE_K",
    "MAX_JUNCTIONS",
    "evaluate",
    "check_gaps",
    "jv_curve",
]

#: allowed band gaps [eV]
GAP_RANGE_EV = (0.1, 5.0)
#: allowed cell temperatures [K]
TEMPERATURE_RANGE_K = (100.0, 1000.0)
#: largest number of junctions in a stack
MAX_JUNCTIONS = 6


def check_gaps(gaps_eV, *, require_descending: bool = True) -> np.ndarray:  # noqa: N803
    """Validate band gaps and return them as an ``(M, N)`` array [eV].

    Parameters
    ----------
    gaps_eV : array_like
        One stack (1-D, top first) or a batch (2-D, one stack per row) [eV].
    require_descending : bool
        Require gaps to decrease strictly from top to bottom.

    Raises
    ------
    InputError
        For a shape other than 1 to 6 junctions, a value outside 0.1-5.0 eV, or (when
        required) gaps that do not decrease from the top.
    """
    try:
        g = np.asarray(gaps_eV, dtype=float)
    except (TypeError, ValueError):
        raise InputError("gaps_eV", "must be numbers [eV]", gaps_eV) from None
    if g.ndim == 1:
        g = g[None, :]
    if g.ndim != 2 or g.shape[0] == 0 or not 1 <= g.shape[1] <= MAX_JUNCTIONS:
        raise InputError("gaps_eV", f"needs 1 to {MAX_JUNCTIONS} gaps per stack "
                         "(a 1-D list, or a 2-D array with one stack per row)", g.shape)
    check_finite_array("gaps_eV", g, *GAP_RANGE_EV, unit="eV")
    if require_descending and g.shape[1] > 1 and np.any(np.diff(g, axis=1) >= 0):
        row = int(np.argmax(np.any(np.diff(g, axis=1) >= 0, axis=1)))
        raise InputError("gaps_eV", "gaps must decrease strictly from the top junction "
                         "(facing the sun) to the bottom", g[row].tolist())
    return g


def _per_junction(name: str, value, n: int, low: float, high: float, unit: str,
                  low_inclusive: bool = True):
    a = np.asarray(value, dtype=float) if not np.isscalar(value) else None
    if a is None or a.ndim == 0:
        v = check_range(name, value, low, high, low_inclusive=low_inclusive, unit=unit)
        return v
    if a.shape[-1] != n:
        raise InputError(name, f"needs one value, or one per junction ({n})", a.tolist())
    check_finite_array(name, a, low, high, unit=unit)
    if not low_inclusive and np.any(a <= low):
        raise InputError(name, f"every value must be > {low:g} {unit}".strip(), a.tolist())
    return a


def evaluate(
    gaps_eV,  # noqa: N803
    connection: str = "series",
    spectrum: str | Spectrum = "AM1.5G",
    *,
    spectrum_file: str | Path | None = None,
    sun_temperature_K: float = 6000.0,  # noqa: N803
    irradiance_W_m2: float | None = None,  # noqa: N803
    concentration: float = 1.0,
    temperature_K=300.0,  # noqa: N803
    ere=1.0,
    dark_current: str = "boltzmann",
    cells_per_string=None,
    require_descending: bool = True,
) -> BatchResult:
    """Detailed-balance efficiency of one stack or a batch of stacks.

    Parameters
    ----------
    gaps_eV : array_like
        Band gaps [eV], top junction first: a list for one stack or an ``(M, N)``
        array for ``M`` stacks; 1 to 6 junctions, each 0.1-5.0 eV.
    connection : {"series", "independent", "voltage-matched"}
        Two-terminal series (current matched), independently connected (four-/multi-
        terminal), or voltage-matched strings.
    spectrum : str or Spectrum
        ``"AM1.5G"``, ``"AM1.5D"``, ``"AM0"`` (ASTM G173-03) or ``"blackbody"``.
    spectrum_file : str or pathlib.Path, optional
        CSV spectrum (wavelength [nm], irradiance [W m^-2 nm^-1]); overrides ``spectrum``.
    sun_temperature_K : float
        Blackbody sun temperature [K], 1000-20000 (blackbody only).
    irradiance_W_m2 : float, optional
        Rescale the spectrum to this total [W m^-2] before concentration.
    concentration : float
        Concentration [suns], in (0, 46,200].
    temperature_K : float or array_like
        Cell temperature [K], 100-1000, scalar or one per junction.
    ere : float or array_like
        External radiative efficiency, in (0, 1], scalar or one per junction.
    dark_current : {"boltzmann", "bose-einstein"}
        Form of the radiative dark current.
    cells_per_string : sequence of int, optional
        Voltage matching only: cells per string for each junction (e.g. ``(2, 3)``);
        by default the best ratio is chosen per stack among strings of at most
        ``AUTO_MAX_CELLS[N]`` cells (6 for 2-3 junctions, 5, 4, 3 for 4, 5, 6).
    require_descending : bool
        Reject stacks whose gaps do not decrease from the top (set False to evaluate
        full maps; a junction below a smaller gap then receives no light).

    Returns
    -------
    BatchResult

    Raises
    ------
    InputError
        Naming the field and the allowed range for every invalid input.

    References
    ----------
    .. [1] W. Shockley and H. J. Queisser, J. Appl. Phys. 32, 510 (1961).
    .. [2] A. De Vos, J. Phys. D 13, 839 (1980).
    """
    g = check_gaps(gaps_eV, require_descending=require_descending)
    n = g.shape[1]
    if connection not in CONNECTIONS:
        raise InputError("connection", f"must be one of {', '.join(CONNECTIONS)}", connection)
    if dark_current not in DARK_MODELS:
        raise InputError("dark_current", f"must be one of {', '.join(DARK_MODELS)}",
                         dark_current)
    t = _per_junction("temperature_K", temperature_K, n, *TEMPERATURE_RANGE_K, "K")
    e = _per_junction("ere", ere, n, 0.0, 1.0, "", low_inclusive=False)
    ratio = None
    if cells_per_string is not None:
        if connection != "voltage-matched":
            raise InputError("cells_per_string", "applies to connection 'voltage-matched' only")
        try:
            r = np.asarray(cells_per_string, dtype=float)
        except (TypeError, ValueError):
            raise InputError("cells_per_string", "must be whole numbers", cells_per_string) from None
        if r.shape != (n,) or np.any(r != np.round(r)) or np.any(r < 1) or np.any(r > 100):
            raise InputError("cells_per_string", f"needs {n} whole numbers in [1, 100], one "
                             "per junction", cells_per_string)
        ratio = r.astype(int)
    spec = get_spectrum(spectrum, spectrum_file=spectrum_file,
                        sun_temperature_K=sun_temperature_K,
                        irradiance_W_m2=irradiance_W_m2, concentration=concentration)
    sol = solve_stacks(g * EV, spec, connection, temperature_K=t, ere=e,
                       dark_model=dark_current, vm_ratio=ratio)
    cond = Conditions(spectrum=spec.describe(), incident_W_m2=spec.total_irradiance_W_m2,
                      temperature_K=t, ere=e, dark_current=dark_current)
    return BatchResult(connection, sol, cond, input_gaps_eV=g)


def jv_curve(result: BatchResult, i: int = 0, spectrum: str | Spectrum = "AM1.5G",
             points: int = 200, **conditions) -> dict:
    """Current-voltage curves of stack ``i`` of a result, for plotting.

    Parameters
    ----------
    result : BatchResult
        An evaluation.
    i : int
        Stack index.
    spectrum : str or Spectrum
        The spectrum the result was evaluated under (with the same keyword conditions
        as :func:`evaluate`: ``temperature_K``, ``ere``, ``dark_current``, ...).
    points : int
        Points per curve.

    Returns
    -------
    dict
        ``junctions``: a list of ``(voltage [V], current density [mA cm^-2])`` arrays,
        one per junction from 0 to its V_oc; ``stack``: the series string's curve
        (series connection only, else ``None``).
    """
    t = conditions.get("temperature_K", 300.0)
    e = conditions.get("ere", 1.0)
    model = conditions.get("dark_current", "boltzmann")
    spec = get_spectrum(spectrum, **{k: v for k, v in conditions.items()
                                     if k in ("spectrum_file", "sun_temperature_K",
                                              "irradiance_W_m2", "concentration")})
    gaps = result.solution.gaps_J[i:i + 1]
    jph = step_photocurrents(gaps, spec)
    d = make_diodes(model, jph, gaps, t, e, 1.0)
    voc = d.voc()[0]
    curves = []
    dk = make_diodes(model, np.repeat(jph, points, 0), np.repeat(gaps, points, 0), t, e, 1.0)
    for k in range(gaps.shape[1]):
        v = np.linspace(0.0, voc[k], points)
        volts = np.zeros((points, gaps.shape[1]))  # other junctions at 0 V: always valid
        volts[:, k] = v
        curves.append((v, 0.1 * dk.current(volts)[:, k]))
    stack = None
    if result.connection == "series":
        jmin = jph.min()
        j = np.linspace(0.0, jmin, points)
        dd = make_diodes(model, np.repeat(jph, points, 0), np.repeat(gaps, points, 0), t, e, 1.0)
        with np.errstate(divide="ignore"):
            v = dd.voltage(j[:, None]).sum(axis=1)
        stack = (v, 0.1 * j)
    return {"junctions": curves, "stack": stack}

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
from .core.engine import solve_stacks, solve_stacks_nonideal, step_photocurrents
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
    "evaluate_thickness",
    "check_gaps",
    "check_cell_conditions",
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
        raise InputError(
            "gaps_eV",
            f"needs 1 to {MAX_JUNCTIONS} gaps per stack "
            "(a 1-D list, or a 2-D array with one stack per row)",
            g.shape,
        )
    check_finite_array("gaps_eV", g, *GAP_RANGE_EV, unit="eV")
    if require_descending and g.shape[1] > 1 and np.any(np.diff(g, axis=1) >= 0):
        row = int(np.argmax(np.any(np.diff(g, axis=1) >= 0, axis=1)))
        raise InputError(
            "gaps_eV",
            "gaps must decrease strictly from the top junction (facing the sun) to the bottom",
            g[row].tolist(),
        )
    return g


def _per_junction(
    name: str, value, n: int, low: float, high: float, unit: str, low_inclusive: bool = True
):
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


def _names(field: str, value, n: int, allowed: tuple) -> list:
    vals = [value] * n if isinstance(value, str) else list(value)
    if len(vals) == 1:
        vals = vals * n
    if len(vals) != n:
        raise InputError(field, f"needs one value, or one per junction ({n})", value)
    for v in vals:
        if v not in allowed:
            raise InputError(field, f"every value must be one of {', '.join(allowed)}", v)
    return vals


def _build_device(
    g,
    connection,
    spec,
    t,
    dark_current,
    *,
    absorber,
    thickness_nm,
    alpha0_per_cm,
    urbach_energy_meV,
    alpha_file,
    light_trapping,
    refractive_index,
    coupling_fraction,
    emission_half_angle_deg,
    varshni,
    dEg_dT_eV_K,
    gap_reference_K,
    collection_efficiency,  # noqa: N803
    series_resistance_ohm_cm2,
):
    """Validate the opt-in physics keywords; ``(None, None)`` when all are at defaults."""
    import math

    from .core.absorption import (
        ABSORBER_MODELS,
        DEFAULT_ALPHA0_PER_CM,
        LIGHT_TRAPPING,
        DirectGapAbsorption,
        IndirectGapAbsorption,
    )
    from .core.coupling import emission_factor_from_half_angle
    from .core.engine import DeviceModel
    from .core.spectra import SUN_DILUTION
    from .core.temperature import GapTemperature

    m, n = g.shape
    models = _names("absorber", "step" if absorber is None else absorber, n, ABSORBER_MODELS)
    trapping = _names("light_trapping", light_trapping, n, LIGHT_TRAPPING)
    nidx = _per_junction("refractive_index", refractive_index, n, 1.0, 6.0, "")
    eu = _per_junction("urbach_energy_meV", urbach_energy_meV, n, 0.0, 100.0, "meV")
    finite = [k for k in range(n) if models[k] != "step"]
    absorbers: list = [None] * n
    thick = np.full((m, n), np.nan)
    if finite:
        if dark_current != "boltzmann":
            raise InputError(
                "dark_current", "finite absorbers need the 'boltzmann' dark current", dark_current
            )
        if thickness_nm is None:
            raise InputError(
                "thickness_nm",
                "is needed for every junction whose absorber is "
                f"not 'step' (junctions {', '.join(str(k + 1) for k in finite)})",
            )
        try:
            tarr = np.asarray(thickness_nm, dtype=float)
        except (TypeError, ValueError):
            raise InputError("thickness_nm", "must be numbers [nm]", thickness_nm) from None
        if tarr.ndim == 0:
            tarr = np.full(n, float(tarr))
        if tarr.shape not in ((n,), (m, n)):
            raise InputError(
                "thickness_nm",
                f"needs one value, one per junction ({n}) or an ({m}, {n}) array",
                tarr.shape,
            )
        tb = np.broadcast_to(tarr, (m, n))[:, finite]
        if np.any(~np.isfinite(tb) | (tb < 1.0) | (tb > 1e8)):
            raise InputError(
                "thickness_nm",
                "every value for a non-step junction must be in [1, 1e8] nm",
                tb[~np.isfinite(tb) | (tb < 1) | (tb > 1e8)].ravel()[:3].tolist(),
            )
        thick = np.broadcast_to(tarr, (m, n)) * 1e-9
        a0 = None
        if alpha0_per_cm is not None:
            a0 = np.broadcast_to(
                _per_junction("alpha0_per_cm", alpha0_per_cm, n, 1.0, 1e7, "cm^-1"), (n,)
            )
        eub = np.broadcast_to(eu, (n,))
        files = alpha_file
        if files is None or isinstance(files, str | Path):
            files = [files] * n
        files = list(files)
        if len(files) != n:
            raise InputError(
                "alpha_file", f"needs one path, or one entry per junction ({n})", alpha_file
            )
        for k in finite:
            if models[k] == "table":
                if files[k] is None:
                    raise InputError(
                        "alpha_file",
                        f"junction {k + 1} has absorber 'table' but no absorption file",
                    )
                from .io.absorption import read_alpha_csv

                absorbers[k] = read_alpha_csv(files[k])
                continue
            alpha0 = DEFAULT_ALPHA0_PER_CM[models[k]] if a0 is None else float(a0[k])
            cls = DirectGapAbsorption if models[k] == "direct" else IndirectGapAbsorption
            absorbers[k] = cls(alpha0 * 100.0, float(eub[k]) * 1e-3 * EV)
    elif alpha_file is not None:
        raise InputError("alpha_file", "applies only to junctions with absorber 'table'")
    cf = None
    if coupling_fraction is not None:
        if connection not in ("series", "independent"):
            raise InputError(
                "coupling_fraction",
                "luminescent coupling needs connection 'series' or 'independent'",
                connection,
            )
        if dark_current != "boltzmann":
            raise InputError(
                "dark_current",
                "luminescent coupling needs the 'boltzmann' dark current",
                dark_current,
            )
        a = (
            np.asarray(coupling_fraction, dtype=float)
            if not np.isscalar(coupling_fraction)
            else None
        )
        if a is not None and a.ndim == 1 and a.size != max(n - 1, 1):
            raise InputError(
                "coupling_fraction", f"needs one value, or one per interface ({n - 1})", a.tolist()
            )
        cf = (
            check_range("coupling_fraction", coupling_fraction, 0.0, 1.0)
            if a is None
            else check_finite_array("coupling_fraction", a, 0.0, 1.0)
        )
    dil = min(1.0, spec.concentration * SUN_DILUTION)
    theta_min = math.degrees(math.asin(math.sqrt(dil)))
    ang = _per_junction(
        "emission_half_angle_deg",
        emission_half_angle_deg,
        n,
        theta_min,
        90.0,
        f"deg (smallest: the sun's apparent half-angle at this concentration, {theta_min:.4g} deg)",
    )
    ff = emission_factor_from_half_angle(np.radians(ang))
    gt = None
    if varshni is not None and dEg_dT_eV_K is not None:
        raise InputError("varshni", "give either varshni or dEg_dT_eV_K, not both")
    check_range("gap_reference_K", gap_reference_K, 0.0, 1000.0, unit="K")
    if varshni is not None:
        try:
            v = np.asarray(varshni, dtype=float)
        except (TypeError, ValueError):
            raise InputError("varshni", "must be (alpha [eV/K], beta [K]) pairs", varshni) from None
        if v.shape not in ((2,), (n, 2)):
            raise InputError(
                "varshni",
                f"needs one (alpha [eV/K], beta [K]) pair or one per junction ({n})",
                v.tolist(),
            )
        v = np.broadcast_to(v, (n, 2))
        check_finite_array("varshni alpha", v[:, 0], 0.0, 0.01, unit="eV K^-1")
        check_finite_array("varshni beta", v[:, 1], 1e-9, 5000.0, unit="K")
        nan = np.full(n, np.nan)
        gt = GapTemperature(v[:, 0] * EV, v[:, 1].copy(), nan, float(gap_reference_K))
    elif dEg_dT_eV_K is not None:
        s_ = np.broadcast_to(
            _per_junction("dEg_dT_eV_K", dEg_dT_eV_K, n, -0.01, 0.01, "eV K^-1"), (n,)
        )
        nan = np.full(n, np.nan)
        gt = GapTemperature(nan, nan, np.asarray(s_, float) * EV, float(gap_reference_K))
    if gt is not None:
        shifted = gt.gaps_at(g * EV, np.broadcast_to(t, g.shape)) / EV
        if np.any((shifted < GAP_RANGE_EV[0]) | (shifted > GAP_RANGE_EV[1])):
            raise InputError(
                "temperature_K",
                f"moves a gap outside {GAP_RANGE_EV[0]:g}-{GAP_RANGE_EV[1]:g} eV",
                float(shifted[(shifted < GAP_RANGE_EV[0]) | (shifted > GAP_RANGE_EV[1])][0]),
            )
    eta = _per_junction(
        "collection_efficiency", collection_efficiency, n, 0.0, 1.0, "", low_inclusive=False
    )
    rs = _per_junction(
        "series_resistance_ohm_cm2", series_resistance_ohm_cm2, n, 0.0, 100.0, "ohm cm^2"
    )
    if np.ndim(rs) and connection != "independent":
        raise InputError(
            "series_resistance_ohm_cm2",
            "one value per junction applies to "
            "connection 'independent' only; give one value for the stack",
        )
    if np.any(np.asarray(rs) > 0) and connection == "voltage-matched":
        raise InputError(
            "series_resistance_ohm_cm2",
            "series resistance needs connection 'series' or 'independent'",
        )
    ideal = (
        not finite
        and cf is None
        and np.all(ff == 1.0)
        and gt is None
        and np.all(np.asarray(eta) == 1.0)
        and np.all(np.asarray(rs) == 0.0)
    )
    if ideal:
        return None, None
    device = DeviceModel(
        absorbers=tuple(absorbers),
        thickness_m=thick,
        trapping=tuple(trapping),
        refractive_index=np.broadcast_to(nidx, (n,)).astype(float),
        coupling_fraction=cf,
        emission_factor=np.broadcast_to(ff, (n,)).astype(float),
        collection=np.broadcast_to(eta, (n,)).astype(float),
        series_r=np.asarray(rs, dtype=float) * 1e-4,
        gap_temperature=gt,
    )

    def conv(x):
        a = np.asarray(x)
        return a.tolist() if a.ndim else float(a)

    physics = {
        "absorber": models,
        "thickness_nm": None
        if not finite
        else (
            [
                None if not math.isfinite(x) else x
                for x in np.atleast_1d(np.asarray(thickness_nm, float)).tolist()
            ]
            if np.ndim(thickness_nm) < 2
            else "per stack"
        ),
        "light_trapping": trapping,
        "refractive_index": conv(nidx),
        "urbach_energy_meV": conv(eu),
        "coupling_fraction": None if cf is None else conv(cf),
        "emission_half_angle_deg": conv(ang),
        "gap_temperature": (
            None
            if gt is None
            else {"varshni": conv(varshni)}
            if varshni is not None
            else {"dEg_dT_eV_K": conv(dEg_dT_eV_K)}
        ),
        "gap_reference_K": float(gap_reference_K),
        "collection_efficiency": conv(eta),
        "series_resistance_ohm_cm2": conv(rs),
    }
    emission = (
        "front surface into a cone of half-angle "
        f"{', '.join(f'{x:g}' for x in np.atleast_1d(ang))} deg, refractive index 1"
        if np.any(ff < 1)
        else "front surface only, into a hemisphere, refractive index 1"
    )
    if cf is not None:
        emission += (
            f"; downward emission n^2 x front (n = {conv(nidx)}), fraction "
            f"{conv(cf)} absorbed by the junction below, bottom junction on an "
            "ideal mirror"
        )
    physics["emission"] = emission
    return device, physics


def check_cell_conditions(n: int, temperature_K, ere, dark_current: str):  # noqa: N803
    """Validate the cell conditions of ``n``-junction stacks.

    Parameters
    ----------
    n : int
        Junctions per stack.
    temperature_K : float or array_like
        Cell temperature [K], 100-1000, scalar or one per junction.
    ere : float or array_like
        External radiative efficiency in (0, 1], scalar or one per junction.
    dark_current : str
        One of ``DARK_MODELS``.

    Returns
    -------
    tuple
        ``(temperature_K, ere)`` as floats or per-junction arrays.

    Raises
    ------
    InputError
        Naming the field and its allowed range.
    """
    if dark_current not in DARK_MODELS:
        raise InputError("dark_current", f"must be one of {', '.join(DARK_MODELS)}", dark_current)
    t = _per_junction("temperature_K", temperature_K, n, *TEMPERATURE_RANGE_K, "K")
    e = _per_junction("ere", ere, n, 0.0, 1.0, "", low_inclusive=False)
    return t, e


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
    absorber=None,
    thickness_nm=None,
    alpha0_per_cm=None,
    urbach_energy_meV=0.0,  # noqa: N803
    alpha_file=None,
    light_trapping="single",
    refractive_index=3.5,
    coupling_fraction=None,
    emission_half_angle_deg=90.0,
    varshni=None,
    dEg_dT_eV_K=None,  # noqa: N803
    gap_reference_K: float = 300.0,  # noqa: N803
    collection_efficiency=1.0,
    series_resistance_ohm_cm2=0.0,
    losses: bool = False,
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

    Other Parameters
    ----------------
    absorber : str or sequence of str, optional
        Absorptance model per junction (one value for all, or one per junction):
        ``"step"`` (default, the ideal limit), ``"direct"`` (square-root edge with Urbach
        tail), ``"indirect"`` (quadratic edge with Urbach tail) or ``"table"`` (tabulated
        absorption coefficient from ``alpha_file``).
    thickness_nm : float or array_like, optional
        Absorber thickness [nm], 1 to 1e8, one value, one per junction, or an ``(M, N)``
        array (one row per stack); needed by every non-step junction (step junctions
        ignore it, NaN allowed there).
    alpha0_per_cm : float or array_like, optional
        Absorption coefficient 1 eV above the gap [cm^-1], 1 to 1e7 (direct/indirect);
        default 5e4 (direct) and 4.5e3 (indirect).
    urbach_energy_meV : float or array_like
        Urbach energy of the exponential tail below the gap [meV], 0 to 100 (0: no tail).
    alpha_file : str, pathlib.Path or sequence, optional
        CSV of wavelength [nm] and absorption coefficient [cm^-1] for ``"table"``
        junctions: one path for all of them, or one entry per junction (None elsewhere).
    light_trapping : str or sequence of str
        ``"single"`` pass (default), ``"double"`` pass (ideal rear mirror) or
        ``"lambertian"`` (4 n^2 path enhancement), per junction.
    refractive_index : float or array_like
        Refractive index per junction, 1 to 6 (default 3.5): Lambertian trapping and
        downward emission.
    coupling_fraction : float or array_like, optional
        Model downward emission (``n^2`` times the front emission): the fraction of each
        junction's downward emission absorbed by the junction below, in [0, 1] (one
        value, or one per interface, N-1 values); the rest is lost. Series or independent
        connection only. Default ``None``: downward emission not modelled.
    emission_half_angle_deg : float or array_like
        Half-angle of the front emission cone [deg], from the sun's apparent half-angle
        (times sqrt(concentration)) to 90 (default, hemisphere). Assumes all incident
        light arrives inside the cone.
    varshni : sequence, optional
        Varshni ``(alpha [eV K^-1], beta [K])`` for all junctions, or one pair per
        junction: alpha in [0, 0.01], beta in (0, 5000].
    dEg_dT_eV_K : float or array_like, optional
        Linear gap temperature coefficient [eV K^-1], -0.01 to 0.01, per junction
        (alternative to ``varshni``).
    gap_reference_K : float
        Temperature [K] at which ``gaps_eV`` hold when a gap temperature model is given,
        0 to 1000 (default 300).
    collection_efficiency : float or array_like
        Fraction of absorbed photons collected, (0, 1], per junction.
    series_resistance_ohm_cm2 : float or array_like
        Series resistance [ohm cm^2], 0 to 100: one value (series stack, or every sub-cell
        in independent connection) or one per junction (independent only).
    losses : bool
        Also compute the loss breakdown (``BatchResult.losses``).

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
    t, e = check_cell_conditions(n, temperature_K, ere, dark_current)
    ratio = None
    if cells_per_string is not None:
        if connection != "voltage-matched":
            raise InputError("cells_per_string", "applies to connection 'voltage-matched' only")
        try:
            r = np.asarray(cells_per_string, dtype=float)
        except (TypeError, ValueError):
            raise InputError(
                "cells_per_string", "must be whole numbers", cells_per_string
            ) from None
        if r.shape != (n,) or np.any(r != np.round(r)) or np.any(r < 1) or np.any(r > 100):
            raise InputError(
                "cells_per_string",
                f"needs {n} whole numbers in [1, 100], one per junction",
                cells_per_string,
            )
        ratio = r.astype(int)
    spec = get_spectrum(
        spectrum,
        spectrum_file=spectrum_file,
        sun_temperature_K=sun_temperature_K,
        irradiance_W_m2=irradiance_W_m2,
        concentration=concentration,
    )
    device, physics = _build_device(
        g,
        connection,
        spec,
        t,
        dark_current,
        absorber=absorber,
        thickness_nm=thickness_nm,
        alpha0_per_cm=alpha0_per_cm,
        urbach_energy_meV=urbach_energy_meV,
        alpha_file=alpha_file,
        light_trapping=light_trapping,
        refractive_index=refractive_index,
        coupling_fraction=coupling_fraction,
        emission_half_angle_deg=emission_half_angle_deg,
        varshni=varshni,
        dEg_dT_eV_K=dEg_dT_eV_K,
        gap_reference_K=gap_reference_K,
        collection_efficiency=collection_efficiency,
        series_resistance_ohm_cm2=series_resistance_ohm_cm2,
    )
    if not isinstance(losses, bool | np.bool_):
        raise InputError("losses", "must be True or False", losses)
    cond_extra = {}
    if device is None:
        # the ideal engine (benchmarked hot path), numbers exactly as before
        sol = solve_stacks(
            g * EV,
            spec,
            connection,
            temperature_K=t,
            ere=e,
            dark_model=dark_current,
            vm_ratio=ratio,
        )
        if losses:
            sol.losses = solve_stacks_nonideal(
                g * EV,
                spec,
                connection,
                None,
                temperature_K=t,
                ere=e,
                dark_model=dark_current,
                vm_ratio=ratio,
                losses=True,
                given=sol,
            ).losses
    else:
        sol = solve_stacks_nonideal(
            g * EV,
            spec,
            connection,
            device,
            temperature_K=t,
            ere=e,
            dark_model=dark_current,
            vm_ratio=ratio,
            losses=bool(losses),
        )
        cond_extra = {"physics": physics, "emission": physics["emission"]}
        if device.gap_temperature is None:
            sol.extras.pop("gaps_ref_J", None)
    cond = Conditions(
        spectrum=spec.describe(),
        incident_W_m2=spec.total_irradiance_W_m2,
        temperature_K=t,
        ere=e,
        dark_current=dark_current,
        **cond_extra,
    )
    return BatchResult(connection, sol, cond, input_gaps_eV=g)


def evaluate_thickness(
    gaps_eV,  # noqa: N803
    thickness_nm,
    connection: str = "series",
    *,
    junction: int = 0,
    **kwargs,
) -> BatchResult:
    """Evaluate a batch of stacks with a per-stack thickness of one junction (search hook).

    Parameters
    ----------
    gaps_eV : array_like
        Gaps [eV]: one stack (1-D, repeated for every thickness) or ``(M, N)``.
    thickness_nm : array_like
        Thickness of junction ``junction`` [nm], ``(M,)`` (or one value), 1 to 1e8.
    connection : str
        As in :func:`evaluate`.
    junction : int
        Index of the junction whose thickness varies (0 = top, the default).
    **kwargs
        Any other :func:`evaluate` keyword. ``thickness_nm`` given there sets the other
        junctions' thicknesses; ``absorber`` defaults to ``"direct"`` for the varied
        junction and ``"step"`` for the others.

    Returns
    -------
    BatchResult
        One row per stack, in the order given.

    Raises
    ------
    InputError
        For invalid gaps, thicknesses or conditions.
    """
    g = check_gaps(gaps_eV, require_descending=kwargs.get("require_descending", True))
    try:
        th = np.atleast_1d(np.asarray(thickness_nm, dtype=float))
    except (TypeError, ValueError):
        raise InputError("thickness_nm", "must be numbers [nm]", thickness_nm) from None
    if th.ndim != 1:
        raise InputError("thickness_nm", "needs one thickness per stack (1-D)", th.shape)
    m = max(g.shape[0], th.size)
    if g.shape[0] not in (1, m) or th.size not in (1, m):
        raise InputError(
            "thickness_nm", f"needs one value or one per stack ({g.shape[0]})", th.size
        )
    n = g.shape[1]
    if not isinstance(junction, int | np.integer) or not 0 <= junction < n:
        raise InputError("junction", f"must be a junction index in [0, {n - 1}]", junction)
    g = np.broadcast_to(g, (m, n)).copy()
    other = kwargs.pop("thickness_nm", None)
    full = np.full((m, n), np.nan)
    if other is not None:
        full[:] = np.broadcast_to(np.asarray(other, dtype=float), (m, n))
    full[:, junction] = np.broadcast_to(th, (m,))
    if kwargs.get("absorber") is None:
        kwargs["absorber"] = ["direct" if i == junction else "step" for i in range(n)]
    return evaluate(g, connection, thickness_nm=full, **kwargs)


def jv_curve(
    result: BatchResult,
    i: int = 0,
    spectrum: str | Spectrum = "AM1.5G",
    points: int = 200,
    **conditions,
) -> dict:
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

    Notes
    -----
    For a result evaluated with non-ideal physics (finite absorbers, emission cone, gap
    temperature model, collection, series resistance) the curves are rebuilt from the
    result's own photocurrents and open-circuit voltages (Boltzmann diodes), and
    ``spectrum`` and ``conditions`` are not used; the series curve includes the stack's
    series resistance. Luminescent coupling and the Bose-Einstein dark current are not
    drawn (InputError).
    """
    if result.conditions.physics is not None:
        return _jv_curve_nonideal(result, i, points)
    t = conditions.get("temperature_K", 300.0)
    e = conditions.get("ere", 1.0)
    model = conditions.get("dark_current", "boltzmann")
    spec = get_spectrum(
        spectrum,
        **{
            k: v
            for k, v in conditions.items()
            if k in ("spectrum_file", "sun_temperature_K", "irradiance_W_m2", "concentration")
        },
    )
    gaps = result.solution.gaps_J[i : i + 1]
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


def _jv_curve_nonideal(result: BatchResult, i: int, points: int) -> dict:
    """J-V curves of a non-ideal result from its own photocurrents and V_oc."""
    from .units import K_B, Q

    phys = result.conditions.physics
    if phys.get("coupling_fraction") is not None:
        raise InputError("jv_curve", "curves of luminescently coupled stacks are not drawn")
    if result.conditions.dark_current != "boltzmann":
        raise InputError("jv_curve", "non-ideal curves need the 'boltzmann' dark current")
    sol = result.solution
    n = sol.jph.shape[1]
    t = np.broadcast_to(np.asarray(result.conditions.temperature_K, float), (n,))
    vt = K_B * t / Q
    jph = sol.jph[i]
    voc = sol.voc_junction[i]
    j0 = jph / np.expm1(voc / vt)
    curves = []
    for k in range(n):
        v = np.linspace(0.0, voc[k], points)
        curves.append((v, 0.1 * (jph[k] - j0[k] * np.expm1(v / vt[k]))))
    stack = None
    if result.connection == "series":
        r = float(np.asarray(phys.get("series_resistance_ohm_cm2", 0.0), float).ravel()[0])
        j = np.linspace(0.0, jph.min(), points)
        with np.errstate(divide="ignore"):
            v = (vt * np.log1p((jph - j[:, None]) / j0)).sum(axis=1) - r * 1e-4 * j
        stack = (v, 0.1 * j)
    return {"junctions": curves, "stack": stack}

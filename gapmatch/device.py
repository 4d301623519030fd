"""Building the opt-in non-ideal physics of a stack from the keywords users give.

:func:`build_physics` validates the keywords of :func:`gapmatch.evaluate` that go beyond
the ideal limit (finite absorbers, light trapping, luminescent coupling, emission cone,
gap temperature model, collection, series resistance), converts them from the edge
units (nm, cm^-1, meV, deg, ohm cm^2) to SI and returns a
:class:`gapmatch.model.NonIdealPhysics`, or ``None`` when every keyword is at its
ideal default.
"""

from __future__ import annotations

import math
from pathlib import Path
from types import MappingProxyType

import numpy as np

from .core.registry import connection_model
from .core.spectra import Spectrum
from .errors import InputError, check_finite_array, check_range
from .limits import GAP_RANGE_EV, per_junction, per_junction_names
from .model import NonIdealPhysics
from .units import EV, ev_to_nm, j_to_ev, mev_to_j, nm_to_m, ohm_cm2_to_ohm_m2, per_cm_to_per_m

__all__ = ["PHYSICS_DEFAULTS", "build_physics"]

#: keyword -> ideal default (the keywords :func:`build_physics` takes)
PHYSICS_DEFAULTS = {
    "absorber": None,
    "thickness_nm": None,
    "alpha0_per_cm": None,
    "urbach_energy_meV": 0.0,
    "alpha_file": None,
    "light_trapping": "single",
    "refractive_index": 3.5,
    "coupling_fraction": None,
    "emission_half_angle_deg": 90.0,
    "varshni": None,
    "dEg_dT_eV_K": None,
    "gap_reference_K": 300.0,
    "collection_efficiency": 1.0,
    "series_resistance_ohm_cm2": 0.0,
}


def _absorbers(g, dark_current, models, eu, thickness_nm, alpha0_per_cm, alpha_file):
    """Absorption models and thicknesses [m] of the finite (non-step) junctions."""
    from .core.absorption import DEFAULT_ALPHA0_PER_CM, DirectGapAbsorption, IndirectGapAbsorption

    m, n = g.shape
    finite = [k for k in range(n) if models[k] != "step"]
    absorbers: list = [None] * n
    thick = np.full((m, n), np.nan)
    if not finite:
        if alpha_file is not None:
            raise InputError("alpha_file", "applies only to junctions with absorber 'table'")
        return finite, absorbers, thick
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
    bad = ~np.isfinite(tb) | (tb < 1.0) | (tb > 1e8)
    if np.any(bad):
        raise InputError(
            "thickness_nm",
            "every value for a non-step junction must be in [1, 1e8] nm",
            tb[bad].ravel()[:3].tolist(),
        )
    thick = nm_to_m(np.broadcast_to(tarr, (m, n)))
    a0 = None
    if alpha0_per_cm is not None:
        a0 = np.broadcast_to(
            per_junction("alpha0_per_cm", alpha0_per_cm, n, 1.0, 1e7, "cm^-1"), (n,)
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
            _check_table_reaches_gap(absorbers[k], float(np.min(g[:, k])), k, files[k])
            continue
        alpha0 = DEFAULT_ALPHA0_PER_CM[models[k]] if a0 is None else float(a0[k])
        cls = DirectGapAbsorption if models[k] == "direct" else IndirectGapAbsorption
        absorbers[k] = cls(float(per_cm_to_per_m(alpha0)), float(mev_to_j(float(eub[k]))))
    return finite, absorbers, thick


def _check_table_reaches_gap(table, gap_eV: float, k: int, path) -> None:
    """Refuse an absorption table whose first row lies above the junction's gap.

    Below its first row the table gives alpha = 0, so a table starting above the gap
    silently turns the junction into a wider-gap cell (a 1.3 eV junction with a table
    from 1.5 eV showed a V_oc of 2.7 V). The table is not extended: it must reach the gap.
    """
    start_eV = float(j_to_ev(table.energy_J[0]))
    # 1e-6 eV: rounding of a table row written at the gap's own wavelength
    if start_eV > gap_eV + 1e-6:
        raise InputError(
            "alpha_file",
            f"the absorption table of junction {k + 1} starts at {start_eV:.4g} eV "
            f"({float(ev_to_nm(start_eV)):.1f} nm), above the junction's gap {gap_eV:.4g} eV; "
            "it must cover the gap (below its first row alpha is 0, which would make "
            "a wider-gap cell): add rows down to the gap's wavelength or longer",
            str(path),
        )


def _coupling(coupling_fraction, connection, dark_current, n):
    if coupling_fraction is None:
        return None
    if not connection_model(connection).coupling:
        raise InputError(
            "coupling_fraction",
            "luminescent coupling needs connection 'series' or 'independent'",
            connection,
        )
    if dark_current != "boltzmann":
        raise InputError(
            "dark_current", "luminescent coupling needs the 'boltzmann' dark current", dark_current
        )
    a = np.asarray(coupling_fraction, dtype=float) if not np.isscalar(coupling_fraction) else None
    if a is not None and a.ndim == 1 and a.size != max(n - 1, 1):
        raise InputError(
            "coupling_fraction", f"needs one value, or one per interface ({n - 1})", a.tolist()
        )
    if a is None:
        return check_range("coupling_fraction", coupling_fraction, 0.0, 1.0)
    return check_finite_array("coupling_fraction", a, 0.0, 1.0)


def _gap_temperature(g, t, n, varshni, dEg_dT_eV_K, gap_reference_K):
    from .core.temperature import GapTemperature

    if varshni is not None and dEg_dT_eV_K is not None:
        raise InputError("varshni", "give either varshni or dEg_dT_eV_K, not both")
    check_range("gap_reference_K", gap_reference_K, 0.0, 1000.0, unit="K")
    gt = None
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
            per_junction("dEg_dT_eV_K", dEg_dT_eV_K, n, -0.01, 0.01, "eV K^-1"), (n,)
        )
        nan = np.full(n, np.nan)
        gt = GapTemperature(nan, nan, np.asarray(s_, float) * EV, float(gap_reference_K))
    if gt is not None:
        shifted = gt.gaps_at(g * EV, np.broadcast_to(t, g.shape)) / EV
        out = (shifted < GAP_RANGE_EV[0]) | (shifted > GAP_RANGE_EV[1])
        if np.any(out):
            raise InputError(
                "temperature_K",
                f"moves a gap outside {GAP_RANGE_EV[0]:g}-{GAP_RANGE_EV[1]:g} eV",
                float(shifted[out][0]),
            )
    return gt


def _plain(x):
    a = np.asarray(x)
    return a.tolist() if a.ndim else float(a)


def build_physics(
    g: np.ndarray,
    connection: str,
    spectrum: Spectrum,
    temperature_K,
    dark_current: str,
    **options,
) -> NonIdealPhysics | None:
    """Validate the opt-in physics keywords of :func:`gapmatch.evaluate`.

    Parameters
    ----------
    g : numpy.ndarray
        Validated gaps [eV], ``(M, N)``.
    connection : str
        The stack's connection (coupling and resistance depend on it).
    spectrum : Spectrum
        The incident spectrum (its concentration bounds the emission cone).
    temperature_K : float or numpy.ndarray
        Validated cell temperature [K] (a gap temperature model must keep every gap in
        range there).
    dark_current : str
        Validated dark-current form (finite absorbers and coupling need Boltzmann).
    **options
        The keywords of :data:`PHYSICS_DEFAULTS` (see :func:`gapmatch.evaluate`).

    Returns
    -------
    NonIdealPhysics or None
        ``None`` when every keyword is at its ideal default.

    Raises
    ------
    InputError
        Naming the field and the allowed range.
    """
    from .core.absorption import ABSORBER_MODELS, LIGHT_TRAPPING
    from .core.coupling import emission_factor_from_half_angle
    from .core.engine import DeviceModel
    from .core.spectra import SUN_DILUTION

    unknown = set(options) - set(PHYSICS_DEFAULTS)
    if unknown:
        raise TypeError(f"unexpected keyword(s) {', '.join(sorted(unknown))}")
    o = PHYSICS_DEFAULTS | options
    m, n = g.shape
    absorber = "step" if o["absorber"] is None else o["absorber"]
    models = per_junction_names("absorber", absorber, n, ABSORBER_MODELS)
    trapping = per_junction_names("light_trapping", o["light_trapping"], n, LIGHT_TRAPPING)
    nidx = per_junction("refractive_index", o["refractive_index"], n, 1.0, 6.0, "")
    eu = per_junction("urbach_energy_meV", o["urbach_energy_meV"], n, 0.0, 100.0, "meV")
    finite, absorbers, thick = _absorbers(
        g, dark_current, models, eu, o["thickness_nm"], o["alpha0_per_cm"], o["alpha_file"]
    )
    cf = _coupling(o["coupling_fraction"], connection, dark_current, n)
    dil = min(1.0, spectrum.concentration * SUN_DILUTION)
    theta_min = math.degrees(math.asin(math.sqrt(dil)))
    ang = per_junction(
        "emission_half_angle_deg",
        o["emission_half_angle_deg"],
        n,
        theta_min,
        90.0,
        f"deg (smallest: the sun's apparent half-angle at this concentration, {theta_min:.4g} deg)",
    )
    emission_factor = emission_factor_from_half_angle(np.radians(ang))
    gt = _gap_temperature(g, temperature_K, n, o["varshni"], o["dEg_dT_eV_K"], o["gap_reference_K"])
    eta = per_junction(
        "collection_efficiency", o["collection_efficiency"], n, 0.0, 1.0, "", low_inclusive=False
    )
    rs = per_junction(
        "series_resistance_ohm_cm2", o["series_resistance_ohm_cm2"], n, 0.0, 100.0, "ohm cm^2"
    )
    model = connection_model(connection)
    if np.ndim(rs) and model.terminals != "junction":
        raise InputError(
            "series_resistance_ohm_cm2",
            "one value per junction applies to "
            "connection 'independent' only; give one value for the stack",
        )
    if np.any(np.asarray(rs) > 0) and model.solve_resistive is None:
        raise InputError(
            "series_resistance_ohm_cm2",
            "series resistance needs connection 'series' or 'independent'",
        )
    ideal = (
        not finite
        and cf is None
        and np.all(emission_factor == 1.0)
        and gt is None
        and np.all(np.asarray(eta) == 1.0)
        and np.all(np.asarray(rs) == 0.0)
    )
    if ideal:
        return None
    device = DeviceModel(
        absorbers=tuple(absorbers),
        thickness_m=thick,
        trapping=tuple(trapping),
        refractive_index=np.broadcast_to(nidx, (n,)).astype(float),
        coupling_fraction=cf,
        emission_factor=np.broadcast_to(emission_factor, (n,)).astype(float),
        collection=np.broadcast_to(eta, (n,)).astype(float),
        series_resistance_ohm_m2=ohm_cm2_to_ohm_m2(rs),
        gap_temperature=gt,
    )
    thickness_nm = o["thickness_nm"]
    varshni, slope = o["varshni"], o["dEg_dT_eV_K"]
    settings = {
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
        "refractive_index": _plain(nidx),
        "urbach_energy_meV": _plain(eu),
        "coupling_fraction": None if cf is None else _plain(cf),
        "emission_half_angle_deg": _plain(ang),
        "gap_temperature": (
            None
            if gt is None
            else {"varshni": _plain(varshni)}
            if varshni is not None
            else {"dEg_dT_eV_K": _plain(slope)}
        ),
        "gap_reference_K": float(o["gap_reference_K"]),
        "collection_efficiency": _plain(eta),
        "series_resistance_ohm_cm2": _plain(rs),
    }
    emission = (
        "front surface into a cone of half-angle "
        f"{', '.join(f'{x:g}' for x in np.atleast_1d(ang))} deg, refractive index 1"
        if np.any(emission_factor < 1)
        else "front surface only, into a hemisphere, refractive index 1"
    )
    if cf is not None:
        emission += (
            f"; downward emission n^2 x front (n = {_plain(nidx)}), fraction "
            f"{_plain(cf)} absorbed by the junction below, bottom junction on an "
            "ideal mirror"
        )
    settings["emission"] = emission
    return NonIdealPhysics(
        device=device,
        settings=MappingProxyType(settings),
        emission=emission,
        options=MappingProxyType({k: v for k, v in options.items()}),
    )

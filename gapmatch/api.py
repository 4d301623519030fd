"""The checked public entry points of gapmatch (what the CLI calls).

:func:`evaluate` is the convenient front: it validates its keywords once, builds the
model objects of :mod:`gapmatch.model` (illumination, cell conditions, stack) and solves
them with :func:`solve`. The result carries those objects, so :func:`reevaluate` (other
conditions) and :func:`gapmatch.jv.jv_curve` need nothing re-specified.

>>> import gapmatch as gm
>>> res = gm.evaluate([1.63, 0.96], connection="series", spectrum="AM1.5G")
>>> round(100 * res.efficiency[0], 1)
45.7
"""

from __future__ import annotations

import os
from pathlib import Path

import numpy as np

from .core.engine import solve_stacks, solve_stacks_nonideal, solve_stacks_series
from .core.registry import CONNECTIONS, REGISTRY, connection_model
from .core.spectra import Spectrum
from .device import build_physics
from .errors import InputError
from .jv import jv_curve
from .limits import (
    GAP_RANGE_EV,
    MAX_JUNCTIONS,
    TEMPERATURE_RANGE_K,
    check_cell_conditions,
    check_gaps,
)
from .model import CellConditions, Illumination, IlluminationSeries, Stack
from .results import BatchResult, Conditions, SeriesResult, ThicknessSweep
from .units import EV

__all__ = [
    "GAP_RANGE_EV",
    "TEMPERATURE_RANGE_K",
    "MAX_JUNCTIONS",
    "evaluate",
    "solve",
    "reevaluate",
    "solve_series",
    "evaluate_thickness",
    "thickness_sweep",
    "check_gaps",
    "check_cell_conditions",
    "jv_curve",
    "LOSS_BYTES_PER_STACK_JUNCTION",
    "loss_memory_estimate_bytes",
    "loss_memory_limit_bytes",
]

#: peak memory of an evaluation with the loss breakdown, per stack and junction [bytes]:
#: 395-410 B measured with tracemalloc by ``benchmarks/loss_memory.py`` (2 and 3
#: junctions, ideal and finite-absorber paths); rounded up
LOSS_BYTES_PER_STACK_JUNCTION = 450
#: extra memory of one finite-absorber work unit per stack and junction [bytes] (its
#: spectral grid; 1.4e5-2.0e5 B measured by the same script), times the stacks of a unit
#: (256) and the worker threads
WORK_UNIT_BYTES_PER_STACK_JUNCTION = 2.1e5
#: stacks per finite-absorber work unit (gapmatch.core.engine.solve_stacks_nonideal)
_UNIT_STACKS = 256
#: environment variable that sets the memory limit of a batch with losses [GB]
MEMORY_LIMIT_ENV = "GAPMATCH_MEMORY_LIMIT_GB"


def loss_memory_limit_bytes() -> int:
    """Largest memory a batch evaluation with losses may need [bytes].

    ``GAPMATCH_MEMORY_LIMIT_GB`` if set (a positive number of GB, 1 GB = 1e9 bytes),
    else half the physical memory of the machine (4 GB where it cannot be read).
    """
    given = os.environ.get(MEMORY_LIMIT_ENV)
    if given is not None:
        try:
            gb = float(given)
        except ValueError:
            gb = float("nan")
        if not gb > 0 or gb == float("inf"):
            raise InputError(MEMORY_LIMIT_ENV, "must be a positive number of GB", given)
        return int(gb * 1e9)
    try:
        return int(os.sysconf("SC_PHYS_PAGES") * os.sysconf("SC_PAGE_SIZE") // 2)
    except (AttributeError, ValueError, OSError):  # pragma: no cover - not POSIX
        return int(4e9)


def loss_memory_estimate_bytes(n_stacks: int, n_junctions: int, *, finite: bool = False) -> int:
    """Peak memory of evaluating a batch with the loss breakdown [bytes].

    Parameters
    ----------
    n_stacks, n_junctions : int
        Batch size.
    finite : bool
        Finite absorbers (or other optics on a spectral grid): add the work units'
        grids (:data:`WORK_UNIT_BYTES_PER_STACK_JUNCTION` for each stack of the units
        that run at once, one per CPU).

    Returns
    -------
    int
        :data:`LOSS_BYTES_PER_STACK_JUNCTION` per stack and junction, plus the work units.
    """
    m, n = int(n_stacks), int(n_junctions)
    need = m * n * LOSS_BYTES_PER_STACK_JUNCTION
    if finite:
        need += int(
            min(m, _UNIT_STACKS * (os.cpu_count() or 1)) * n * WORK_UNIT_BYTES_PER_STACK_JUNCTION
        )
    return need


def _check_loss_memory(m: int, n: int, finite: bool) -> None:
    need = loss_memory_estimate_bytes(m, n, finite=finite)
    limit = loss_memory_limit_bytes()
    if need > limit:
        parts = max(1, limit // (n * LOSS_BYTES_PER_STACK_JUNCTION))
        raise InputError(
            "losses",
            f"a loss breakdown of {m:,} stacks x {n} junctions needs about "
            f"{need / 1e9:.3g} GB, above the limit of {limit / 1e9:.3g} GB "
            f"({MEMORY_LIMIT_ENV}, default half the machine's memory); evaluate the batch "
            f"in parts of at most {parts:,} stacks, or without losses",
        )


_SPECTRUM_DEFAULTS = {
    "spectrum_file": None,
    "sun_temperature_K": 6000.0,
    "irradiance_W_m2": None,
    "concentration": 1.0,
}


def _cells_per_string(cells_per_string, connection: str, n: int):
    if cells_per_string is None:
        return None
    if not connection_model(connection).cell_ratio:
        raise InputError("cells_per_string", "applies to connection 'voltage-matched' only")
    try:
        r = np.asarray(cells_per_string, dtype=float)
    except (TypeError, ValueError):
        raise InputError("cells_per_string", "must be whole numbers", cells_per_string) from None
    if r.shape != (n,) or np.any(r != np.round(r)) or np.any(r < 1) or np.any(r > 100):
        raise InputError(
            "cells_per_string",
            f"needs {n} whole numbers in [1, 100], one per junction",
            cells_per_string,
        )
    return tuple(int(x) for x in r)


def _illumination(spectrum, spectrum_kw: dict) -> Illumination:
    if isinstance(spectrum, Illumination):
        changed = [k for k, v in spectrum_kw.items() if v != _SPECTRUM_DEFAULTS[k]]
        if changed:
            raise InputError(
                changed[0],
                "is part of the Illumination given as spectrum; build the Illumination "
                "with it instead",
            )
        return spectrum
    return Illumination.from_options(spectrum, **spectrum_kw)


def evaluate(
    gaps_eV,
    connection: str = "series",
    spectrum: str | Spectrum | Illumination = "AM1.5G",
    *,
    spectrum_file: str | Path | None = None,
    sun_temperature_K: float = 6000.0,
    irradiance_W_m2: float | None = None,
    concentration: float = 1.0,
    temperature_K=300.0,
    ere=1.0,
    dark_current: str = "boltzmann",
    cells_per_string=None,
    require_descending: bool = True,
    absorber=None,
    thickness_nm=None,
    alpha0_per_cm=None,
    urbach_energy_meV=0.0,
    alpha_file=None,
    light_trapping="single",
    refractive_index=3.5,
    coupling_fraction=None,
    emission_half_angle_deg=90.0,
    varshni=None,
    dEg_dT_eV_K=None,
    gap_reference_K: float = 300.0,
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
    spectrum : str, Spectrum or Illumination
        ``"AM1.5G"``, ``"AM1.5D"``, ``"AM0"`` (ASTM G173-03) or ``"blackbody"``, a
        Spectrum object, or an :class:`~gapmatch.model.Illumination` built before
        (then the other spectrum keywords must stay at their defaults).
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
        External radiative efficiency in [1e-12, 1] (``limits.ERE_RANGE``), scalar or one
        per junction.
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
        Also compute the loss breakdown (``BatchResult.losses``). A batch whose
        breakdown would need more memory than the limit is refused before anything is
        computed (see :func:`solve`: about 450 bytes per stack and junction; limit
        ``GAPMATCH_MEMORY_LIMIT_GB``, default half the machine's memory).

    Returns
    -------
    BatchResult
        Carrying the :class:`~gapmatch.model.Stack`, :class:`~gapmatch.model.Illumination`
        and :class:`~gapmatch.model.CellConditions` it was solved for.

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
    # build the model objects (each validates its own inputs), then solve them
    if not isinstance(connection, str) or connection not in CONNECTIONS:
        raise InputError("connection", f"must be one of {', '.join(CONNECTIONS)}", connection)
    cell = CellConditions.from_options(n, temperature_K, ere, dark_current)
    ratio = _cells_per_string(cells_per_string, connection, n)
    illumination = _illumination(
        spectrum,
        {
            "spectrum_file": spectrum_file,
            "sun_temperature_K": sun_temperature_K,
            "irradiance_W_m2": irradiance_W_m2,
            "concentration": concentration,
        },
    )
    physics = build_physics(
        g,
        connection,
        illumination.spectrum,
        cell.temperature_K,
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
    stack = Stack(g, connection, ratio, physics)
    return solve(stack, illumination, cell, losses=bool(losses))


def solve(
    stack: Stack,
    illumination: Illumination,
    cell: CellConditions | None = None,
    *,
    losses: bool = False,
) -> BatchResult:
    """Solve validated model objects at their maximum power points.

    Parameters
    ----------
    stack : Stack
        The stack (or batch of stacks) with its connection and physics.
    illumination : Illumination
        The incident light.
    cell : CellConditions, optional
        Cell temperature, ERE and dark-current form (default 300 K, ERE 1, Boltzmann).
    losses : bool
        Also compute the loss breakdown. Its peak memory is estimated first
        (:func:`loss_memory_estimate_bytes`: about 450 bytes per stack and junction, so
        5 million two-junction stacks need 4.5 GB); a batch above
        :func:`loss_memory_limit_bytes` (``GAPMATCH_MEMORY_LIMIT_GB``, default half the
        machine's memory) is refused with an :class:`InputError` naming the batch size,
        the estimate and the limit, before anything is computed.

    Returns
    -------
    BatchResult
        Carrying ``stack``, ``illumination`` and ``cell``.

    References
    ----------
    .. [1] W. Shockley and H. J. Queisser, J. Appl. Phys. 32, 510 (1961).
    .. [2] A. De Vos, J. Phys. D 13, 839 (1980).
    """
    cell = cell or CellConditions()
    if losses:
        finite = stack.physics is not None and not stack.physics.device.all_step()
        _check_loss_memory(*stack.gaps_eV.shape, finite)
    spec = illumination.spectrum
    gaps_J = stack.gaps_eV * EV
    ratio = None if stack.cells_per_string is None else np.asarray(stack.cells_per_string)
    t, e, dark = cell.temperature_K, cell.ere, cell.dark_current
    cond_extra = {}
    if stack.physics is None:
        # the ideal engine (benchmarked hot path)
        sol = solve_stacks(
            gaps_J,
            spec,
            stack.connection,
            temperature_K=t,
            ere=e,
            dark_current=dark,
            vm_ratio=ratio,
        )
        if losses:
            sol.losses = solve_stacks_nonideal(
                gaps_J,
                spec,
                stack.connection,
                None,
                temperature_K=t,
                ere=e,
                dark_current=dark,
                vm_ratio=ratio,
                losses=True,
                given=sol,
            ).losses
    else:
        device = stack.physics.device
        sol = solve_stacks_nonideal(
            gaps_J,
            spec,
            stack.connection,
            device,
            temperature_K=t,
            ere=e,
            dark_current=dark,
            vm_ratio=ratio,
            losses=losses,
        )
        cond_extra = {
            "physics": dict(stack.physics.settings),
            "emission": stack.physics.emission,
        }
        if device.gap_temperature is None:
            sol.extras.pop("gaps_ref_J", None)
    cond = Conditions(
        spectrum=spec.describe(),
        incident_W_m2=spec.total_irradiance_W_m2,
        temperature_K=t,
        ere=e,
        dark_current=dark,
        **cond_extra,
    )
    return BatchResult(
        stack.connection,
        sol,
        cond,
        input_gaps_eV=stack.gaps_eV,
        stack_model=stack,
        illumination=illumination,
        cell=cell,
    )


def solve_series(
    stack: Stack,
    illumination: IlluminationSeries,
    *,
    temperature_K=300.0,
    ere=1.0,
    dark_current: str = "boltzmann",
) -> SeriesResult:
    """Solve a batch of stacks under each of a batch of illuminations, in one call.

    Parameters
    ----------
    stack : Stack
        ``M`` ideal stacks (step absorptance; non-ideal physics is not solved here).
    illumination : IlluminationSeries
        ``H`` spectra on one wavelength grid, with their durations [h].
    temperature_K : float or array_like
        Cell temperature [K], 100-1000: one value, one per illumination ``(H,)``, or one
        per illumination and junction ``(H, N)``.
    ere : float or array_like
        External radiative efficiency in [1e-12, 1], one value or one per junction.
    dark_current : {"boltzmann", "bose-einstein"}
        Form of the radiative dark current.

    Returns
    -------
    SeriesResult

    Raises
    ------
    InputError
        For non-ideal stacks, or conditions out of range or of the wrong shape.

    References
    ----------
    .. [1] W. Shockley and H. J. Queisser, J. Appl. Phys. 32, 510 (1961).
    """
    from .errors import check_finite_array

    if stack.physics is not None:
        raise InputError("stack", "solve_series takes ideal stacks (no opt-in physics)")
    h, n = len(illumination), stack.n_junctions
    _, e = check_cell_conditions(n, 300.0, ere, dark_current)
    t = np.asarray(temperature_K, dtype=float)
    if t.shape not in ((), (h,), (h, n)):
        raise InputError(
            "temperature_K", f"needs one value, one per illumination ({h}) or ({h}, {n})", t.shape
        )
    check_finite_array("temperature_K", t, *TEMPERATURE_RANGE_K, unit="K")
    ratio = None if stack.cells_per_string is None else np.asarray(stack.cells_per_string)
    sol = solve_stacks_series(
        stack.gaps_eV * EV,
        illumination.series,
        stack.connection,
        temperature_K=t,
        ere=e,
        dark_current=dark_current,
        vm_ratio=ratio,
    )
    return SeriesResult(sol, stack, illumination, t, e, dark_current)


def reevaluate(result: BatchResult, *, losses: bool | None = None, **changes) -> BatchResult:
    """Evaluate the stacks of a result again with some inputs changed.

    Parameters
    ----------
    result : BatchResult
        A result of :func:`evaluate` (it carries its stack, illumination and cell
        conditions).
    losses : bool, optional
        Compute the loss breakdown (default: as the result did).
    **changes
        Any keyword of :func:`evaluate` except ``gaps_eV``, e.g. ``temperature_K=350``
        or ``connection="independent"``. Spectrum keywords build a new illumination
        from the result's own options.

    Returns
    -------
    BatchResult

    Raises
    ------
    InputError
        For a result without its model objects, or an invalid change.
    """
    stack, illum, cell = result.stack_model, result.illumination, result.cell
    if stack is None or illum is None or cell is None:
        raise InputError("result", "carries no model objects (build it with gapmatch.evaluate)")
    kw: dict = {"connection": stack.connection, "cells_per_string": stack.cells_per_string}
    kw |= cell.options()
    if stack.physics is not None:
        kw |= dict(stack.physics.options)
    spectrum_keys = {"spectrum", *_SPECTRUM_DEFAULTS}
    if spectrum_keys & set(changes):
        kw |= {k: v for k, v in illum.options.items() if k in spectrum_keys}
        if "spectrum" in changes and "spectrum_file" not in changes:
            kw["spectrum_file"] = None  # a new spectrum replaces the file
    else:
        kw["spectrum"] = illum
    model = REGISTRY.get(changes.get("connection", stack.connection))
    if model is None or not model.cell_ratio:  # (an unknown name: evaluate says so)
        kw.pop("cells_per_string")
    kw |= changes
    kw["losses"] = (result.solution.losses is not None) if losses is None else losses
    return evaluate(stack.gaps_eV, require_descending=False, **kw)


def evaluate_thickness(
    gaps_eV,
    thickness_nm,
    connection: str = "series",
    *,
    junction: int = 1,
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
        Number of the junction whose thickness varies (1 = top, the default).
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
    if not isinstance(junction, int | np.integer) or not 1 <= junction <= n:
        raise InputError("junction", f"must be a junction number in [1, {n}] (1 = top)", junction)
    k = int(junction) - 1
    g = np.broadcast_to(g, (m, n)).copy()
    other = kwargs.pop("thickness_nm", None)
    full = np.full((m, n), np.nan)
    if other is not None:
        full[:] = np.broadcast_to(np.asarray(other, dtype=float), (m, n))
    full[:, k] = np.broadcast_to(th, (m,))
    if kwargs.get("absorber") is None:
        kwargs["absorber"] = ["direct" if i == k else "step" for i in range(n)]
    return evaluate(g, connection, thickness_nm=full, **kwargs)


def thickness_sweep(
    gaps_eV, thickness_nm, connection: str = "series", *, junction: int = 1, **kwargs
) -> ThicknessSweep:
    """Efficiency of one stack versus one junction's absorber thickness.

    Parameters
    ----------
    gaps_eV : sequence of float
        One stack's gaps [eV], top first.
    thickness_nm : array_like
        Thicknesses of junction ``junction`` [nm], 1 to 1e8, ``(M,)``.
    connection : str
        As in :func:`evaluate`.
    junction : int
        The varied junction (1 = top, the default).
    **kwargs
        Further :func:`evaluate` keywords (absorber model, Urbach energy, light
        trapping, ...), as in :func:`evaluate_thickness`.

    Returns
    -------
    ThicknessSweep

    References
    ----------
    .. [1] T. Tiedje et al., IEEE Trans. Electron Devices 31, 711 (1984) (absorptance of a
       finite absorber).
    """
    th = np.atleast_1d(np.asarray(thickness_nm, dtype=float))
    res = evaluate_thickness(gaps_eV, th, connection, junction=junction, **kwargs)
    return ThicknessSweep(th, int(junction), res)

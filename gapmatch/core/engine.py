"""Batch detailed-balance evaluation of multi-junction stacks (SI units, no I/O).

:func:`solve_stacks` is the hot path: ``M`` stacks of ``N`` junctions in one vectorised
call. Junctions are ordered from the top (facing the sun) to the bottom. With step
absorptance a junction absorbs every photon above its gap that no junction above it
absorbed, so its photon flux is

    Phi_i = max(F(E_i), max_{j<=i} F(E_j)) - max_{j<i} F(E_j),

where ``F(E)`` is the spectrum's photon flux above ``E``; for gaps that decrease from the
top this is the familiar ``F(E_i) - F(E_{i-1})``.

References
----------
.. [1] W. Shockley and H. J. Queisser, J. Appl. Phys. 32, 510 (1961).
.. [2] A. De Vos, J. Phys. D 13, 839 (1980).
"""

from __future__ import annotations

import os
from concurrent.futures import ThreadPoolExecutor
from dataclasses import dataclass
from typing import Any

import numpy as np

from ..units import K_B, Q
from .connections import OperatingPoint
from .diodes import make_diodes
from .registry import connection_model
from .spectra import Spectrum, SpectrumSeries
from .steps import step_shares

__all__ = [
    "step_shares",
    "step_photocurrents",
    "solve_stacks_series",
    "StackSolution",
    "solve_stacks",
    "DeviceModel",
    "solve_stacks_nonideal",
]


def step_photocurrents(gaps_J: np.ndarray, spectrum: Spectrum) -> np.ndarray:
    """Photocurrent density of every junction with step absorptance [A m^-2].

    Parameters
    ----------
    gaps_J : numpy.ndarray
        Band gaps [J], shape ``(M, N)``, top junction first.
    spectrum : Spectrum
        Incident spectrum.

    Returns
    -------
    numpy.ndarray
        ``q * Phi_i`` [A m^-2], shape ``(M, N)``; their sum over a stack equals ``q`` times
        the photon flux above the stack's smallest gap.
    """
    return Q * step_shares(spectrum.photon_flux_above(gaps_J))[0]


@dataclass
class StackSolution:
    """Raw SI solution of a batch (see :class:`gapmatch.results.BatchResult` for the
    user-facing object).

    Attributes
    ----------
    gaps_J : numpy.ndarray
        Band gaps [J], ``(M, N)``.
    jph : numpy.ndarray
        Photocurrent densities [A m^-2], ``(M, N)``.
    voc_junction : numpy.ndarray
        Each junction's open-circuit voltage alone [V], ``(M, N)``.
    op : OperatingPoint
        Operating point at maximum power.
    incident_W_m2 : float
        Incident power density [W m^-2] (the spectrum's integral).
    absorbed_W_m2 : numpy.ndarray
        Power density of the photons the stack absorbs [W m^-2], ``(M,)``.
    """

    gaps_J: np.ndarray
    jph: np.ndarray
    voc_junction: np.ndarray
    op: OperatingPoint
    incident_W_m2: float
    absorbed_W_m2: np.ndarray
    #: loss breakdown (:class:`gapmatch.core.losses.LossBreakdown`) when requested
    losses: Any = None
    #: extra per-junction arrays of the non-ideal path (``gaps_ref_J``: gaps at the
    #: reference temperature; ``jph_total``: photocurrent including coupled
    #: luminescence at the operating point [A m^-2])
    extras: dict | None = None


def solve_stacks(
    gaps_J: np.ndarray,
    spectrum: Spectrum,
    connection: str = "series",
    *,
    temperature_K: np.ndarray | float = 300.0,
    ere: np.ndarray | float = 1.0,
    dark_current: str = "boltzmann",
    emission_factor: np.ndarray | float = 1.0,
    vm_ratio: np.ndarray | None = None,
    vm_max_cells: int | None = None,
    threads: int | None = None,
    chunk: int = 32768,
    dark_model: str | None = None,
) -> StackSolution:
    """Evaluate a batch of stacks at their exact maximum power points.

    Parameters
    ----------
    gaps_J : numpy.ndarray
        Band gaps [J], shape ``(M, N)``, top junction first. Inputs are assumed valid
        (see :func:`gapmatch.evaluate` for the checked entry point).
    spectrum : Spectrum
        Incident spectrum.
    connection : {"series", "independent", "voltage-matched"}
        How the junctions are connected.
    temperature_K : float or numpy.ndarray
        Cell temperature [K], broadcast to ``(M, N)``.
    ere : float or numpy.ndarray
        External radiative efficiency in (0, 1], broadcast to ``(M, N)``.
    dark_current : {"boltzmann", "bose-einstein"}
        Form of the radiative dark current.
    emission_factor : float or numpy.ndarray
        Multiplier on hemispherical front emission (dimensionless).
    vm_ratio : numpy.ndarray, optional
        Cells per string for voltage matching, shape ``(N,)`` or ``(M, N)``. ``None``
        chooses, per stack, the best small-integer ratio (up to ``vm_max_cells``).
    vm_max_cells : int, optional
        Largest string length tried when ``vm_ratio`` is ``None`` (default
        ``AUTO_MAX_CELLS[N]`` of :mod:`.connections`).
    threads : int, optional
        Worker threads for large batches (numpy releases the GIL in its loops); default
        the number of CPUs. Results do not depend on it.
    chunk : int
        Stacks per work unit.
    dark_model : str, optional
        Former name of ``dark_current`` (accepted while callers move over).

    Returns
    -------
    StackSolution
    """
    if dark_model is not None:
        dark_current = dark_model
    gaps = np.atleast_2d(np.asarray(gaps_J, dtype=float))
    kw = dict(
        temperature_K=temperature_K,
        ere=ere,
        dark_current=dark_current,
        emission_factor=emission_factor,
        vm_ratio=vm_ratio,
        vm_max_cells=vm_max_cells,
    )
    m = gaps.shape[0]
    threads = (os.cpu_count() or 1) if threads is None else max(1, int(threads))
    if m <= chunk or threads == 1 and m <= 4 * chunk:
        return _solve(gaps, spectrum, connection, **kw)
    shape = gaps.shape
    bounds = list(range(0, m, chunk)) + [m]

    def part(i):
        sl = slice(bounds[i], bounds[i + 1])
        sub = {k: (_rows(v, shape, sl) if k != "vm_max_cells" else v) for k, v in kw.items()}
        return _solve(gaps[sl], spectrum, connection, **sub)

    with ThreadPoolExecutor(max_workers=threads) as pool:
        parts = list(pool.map(part, range(len(bounds) - 1)))
    return _concat(parts)


def solve_stacks_series(
    gaps_J: np.ndarray,
    series: SpectrumSeries,
    connection: str = "series",
    *,
    temperature_K: np.ndarray | float = 300.0,
    ere: np.ndarray | float = 1.0,
    dark_current: str = "boltzmann",
    vm_ratio: np.ndarray | None = None,
    vm_max_cells: int | None = None,
) -> StackSolution:
    """Solve ``M`` stacks under each of ``H`` spectra in one vectorised call.

    Parameters
    ----------
    gaps_J : numpy.ndarray
        Band gaps [J], ``(M, N)``, top junction first (assumed valid).
    series : SpectrumSeries
        ``H`` spectra on one wavelength grid.
    connection : {"series", "independent", "voltage-matched"}
        How the junctions are connected.
    temperature_K : float or numpy.ndarray
        Cell temperature [K]: one value, one per spectrum ``(H,)``, or one per spectrum
        and junction ``(H, N)``.
    ere : float or numpy.ndarray
        External radiative efficiency, one value or one per junction ``(N,)``.
    dark_current : {"boltzmann", "bose-einstein"}
        Form of the radiative dark current.
    vm_ratio, vm_max_cells
        As in :func:`solve_stacks`.

    Returns
    -------
    StackSolution
        ``H * M`` rows, spectrum-major (row ``h * M + i`` is stack ``i`` under spectrum
        ``h``); ``incident_W_m2`` is an ``(H * M,)`` array.

    References
    ----------
    .. [1] W. Shockley and H. J. Queisser, J. Appl. Phys. 32, 510 (1961).
    """
    gaps = np.atleast_2d(np.asarray(gaps_J, dtype=float))
    m, n = gaps.shape
    h = len(series)
    jph = Q * step_shares(series.photon_flux_above(gaps))[0]  # (H, M, N)
    t = np.asarray(temperature_K, dtype=float)
    if t.ndim == 1:  # one per spectrum
        t = t[:, None, None]
    elif t.ndim == 2:
        t = t[:, None, :]
    full = (h, m, n)
    g = np.broadcast_to(gaps, full).reshape(h * m, n)
    tt = np.broadcast_to(t, full).reshape(h * m, n)
    diodes = make_diodes(dark_current, jph.reshape(h * m, n), g, tt, ere, 1.0)
    ratio = vm_ratio if vm_ratio is None or np.ndim(vm_ratio) == 1 else np.tile(vm_ratio, (h, 1))
    op = connection_model(connection).solve(diodes, ratio, vm_max_cells)
    absorbed = series.power_above(gaps.min(axis=1)).reshape(h * m)
    incident = np.repeat(series.total_irradiance_W_m2, m)
    return StackSolution(g, jph.reshape(h * m, n), diodes.voc(), op, incident, absorbed)


def _rows(value, shape, sl):
    """Rows ``sl`` of a per-stack parameter that broadcasts to ``shape``."""
    if value is None or isinstance(value, str):
        return value
    a = np.asarray(value)
    if a.ndim == 2 and a.shape[0] == shape[0] and shape[0] > 1:
        return a[sl]
    return a


def _cat_rows(arrays: list[np.ndarray]) -> np.ndarray:
    """``np.concatenate(arrays)`` along the stacks, keeping the parts' memory order: the
    engine's ``(M, N)`` arrays are Fortran-ordered, and concatenating them into a
    C-ordered result reads them with strides (15 % of a 100,000-stack 2J series call
    split into work units, measured)."""
    first = arrays[0]
    if first.ndim != 2 or first.flags.c_contiguous or not first.flags.f_contiguous:
        return np.concatenate(arrays)
    out = np.empty((sum(a.shape[0] for a in arrays), first.shape[1]), first.dtype, order="F")
    r = 0
    for a in arrays:
        out[r : r + a.shape[0]] = a
        r += a.shape[0]
    return out


def _concat(parts: list[StackSolution]) -> StackSolution:
    cat = _cat_rows
    ops = [p.op for p in parts]
    ratio = None if ops[0].ratio is None else cat([o.ratio for o in ops])
    op = OperatingPoint(
        *(
            cat([getattr(o, f) for o in ops])
            for f in ("p_mpp", "v_mpp", "j_mpp", "voc", "jsc", "v_junction", "j_junction")
        ),
        ratio=ratio,
    )
    return StackSolution(
        cat([p.gaps_J for p in parts]),
        cat([p.jph for p in parts]),
        cat([p.voc_junction for p in parts]),
        op,
        parts[0].incident_W_m2,
        cat([p.absorbed_W_m2 for p in parts]),
    )


def _solve(
    gaps,
    spectrum,
    connection,
    *,
    temperature_K,
    ere,
    dark_current,
    emission_factor,
    vm_ratio,
    vm_max_cells,
) -> StackSolution:
    model = connection_model(connection)
    gaps = np.asfortranarray(gaps)
    jph = step_photocurrents(gaps, spectrum)
    diodes = make_diodes(dark_current, jph, gaps, temperature_K, ere, emission_factor)
    op = model.solve(diodes, vm_ratio, vm_max_cells)
    e_min = gaps.min(axis=1)
    absorbed = spectrum.power_above(e_min)
    return StackSolution(gaps, jph, diodes.voc(), op, spectrum.total_irradiance_W_m2, absorbed)


# ---------------------------------------------------------------------------------------
# Beyond the ideal limit (opt-in; the hot path above is not touched)
# ---------------------------------------------------------------------------------------


@dataclass(frozen=True, eq=False)
class DeviceModel:
    """Non-ideal junction physics for :func:`solve_stacks_nonideal` (SI units).

    Parameters
    ----------
    absorbers : tuple
        Per junction ``None`` (step absorptance) or an absorption model from
        :mod:`.absorption`; empty means every junction is a step absorber.
    thickness_m : float or numpy.ndarray
        Absorber thickness [m], ``(N,)`` or ``(M, N)`` (ignored for step junctions).
    trapping : tuple of str
        Per junction ``"single"``, ``"double"`` or ``"lambertian"``; empty: single pass.
    refractive_index : float or numpy.ndarray
        Refractive index per junction (Lambertian trapping and downward emission).
    coupling_fraction : float, numpy.ndarray or None
        ``None``: downward emission not modelled (the ideal engine's convention).
        Otherwise the fraction of each junction's downward emission absorbed by the
        junction below, one value or ``(N-1,)``, in [0, 1]; the rest is lost. The bottom
        junction's rear emission is returned by an ideal mirror.
    emission_factor : float or numpy.ndarray
        Front emission factor per junction (``sin^2`` of the emission half-angle).
    collection : float or numpy.ndarray
        Collection efficiency per junction, (0, 1]; by reciprocity it also scales the
        radiative saturation current (Rau 2007).
    series_resistance_ohm_m2 : float or numpy.ndarray
        Series resistance [ohm m^2]: one value for a series stack, or per junction for
        independent connection.
    gap_temperature : GapTemperature, optional
        Temperature dependence of the gaps (given gaps hold at its reference).
    """

    absorbers: tuple = ()
    thickness_m: Any = np.nan
    trapping: tuple = ()
    refractive_index: Any = 3.5
    coupling_fraction: Any = None
    emission_factor: Any = 1.0
    collection: Any = 1.0
    series_resistance_ohm_m2: Any = 0.0
    gap_temperature: Any = None

    def all_step(self) -> bool:
        """Whether every junction has step absorptance."""
        return all(a is None for a in self.absorbers)


def solve_stacks_nonideal(
    gaps_J: np.ndarray,
    spectrum: Spectrum,
    connection: str = "series",
    device: DeviceModel | None = None,
    *,
    temperature_K: np.ndarray | float = 300.0,
    ere: np.ndarray | float = 1.0,
    dark_current: str = "boltzmann",
    vm_ratio: np.ndarray | None = None,
    vm_max_cells: int = 6,
    losses: bool = False,
    chunk: int | None = None,
    threads: int | None = None,
    given: StackSolution | None = None,
    dark_model: str | None = None,
) -> StackSolution:
    """Evaluate stacks with finite absorbers, coupling, temperature and practical losses.

    Parameters
    ----------
    gaps_J : numpy.ndarray
        Gaps [J] at the reference temperature, ``(M, N)``, top first.
    spectrum : Spectrum
        Incident spectrum.
    connection : {"series", "independent", "voltage-matched"}
        Connection. Luminescent coupling and series resistance need series or
        independent connection.
    device : DeviceModel
        The non-ideal physics (default: ideal, which reproduces :func:`solve_stacks`).
    temperature_K, ere : float or numpy.ndarray
        Cell temperature [K] and radiative efficiency (fraction of recombination that is
        radiative, all emission channels), broadcast to ``(M, N)``.
    dark_current : {"boltzmann", "bose-einstein"}
        Bose-Einstein only with step absorbers and no luminescent coupling.
    vm_ratio, vm_max_cells
        As in :func:`solve_stacks`.
    losses : bool
        Also compute the loss breakdown (``StackSolution.losses``).
    chunk : int, optional
        Stacks per work unit (default: 256 with finite absorbers, all at once otherwise).
    threads : int, optional
        Worker threads over work units (default: the number of CPUs).
    given : StackSolution, optional
        Ideal device only: the :func:`solve_stacks` solution of the same batch; its
        operating point is used as is and only the loss breakdown is computed.
    dark_model : str, optional
        Former name of ``dark_current``.

    Returns
    -------
    StackSolution
        ``gaps_J`` are the gaps at the cell temperature; ``jph`` the photocurrents from
        the incident light; ``extras`` holds ``gaps_ref_J`` and ``jph_total``.

    References
    ----------
    .. [1] U. Rau, Phys. Rev. B 76, 085303 (2007).
    .. [2] T. Tiedje et al., IEEE Trans. Electron Devices 31, 711 (1984).
    .. [3] L. C. Hirst and N. J. Ekins-Daukes, Prog. Photovolt. 19, 286 (2011).
    """
    if dark_model is not None:
        dark_current = dark_model
    device = device or DeviceModel()
    g = np.atleast_2d(np.asarray(gaps_J, dtype=float))
    m, n = g.shape
    full = {
        "temperature_K": np.broadcast_to(np.asarray(temperature_K, float), (m, n)),
        "ere": np.broadcast_to(np.asarray(ere, float), (m, n)),
        "thickness": np.broadcast_to(np.asarray(device.thickness_m, float), (m, n)),
    }
    if chunk is None:
        chunk = m if device.all_step() else 256
    if given is not None:
        chunk = m

    def part(s0):
        sl = slice(s0, min(m, s0 + chunk))
        return _solve_nonideal(
            g[sl],
            spectrum,
            connection,
            device,
            {k: v[sl] for k, v in full.items()},
            dark_current,
            vm_ratio if vm_ratio is None or np.ndim(vm_ratio) == 1 else np.asarray(vm_ratio)[sl],
            vm_max_cells,
            losses,
            given,
        )

    starts = list(range(0, m, chunk))
    threads = (os.cpu_count() or 1) if threads is None else max(1, int(threads))
    if len(starts) == 1 or threads == 1:
        parts = [part(s0) for s0 in starts]
    else:  # numpy releases the GIL in its loops; results do not depend on threads
        with ThreadPoolExecutor(max_workers=threads) as pool:
            parts = list(pool.map(part, starts))
    if len(parts) == 1:
        return parts[0]
    sol = _concat(parts)
    sol.extras = {k: np.concatenate([p.extras[k] for p in parts]) for k in parts[0].extras}
    if losses:
        from .losses import LossBreakdown

        lb = [p.losses for p in parts]
        sol.losses = LossBreakdown(
            {k: np.concatenate([x.junction[k] for x in lb]) for k in lb[0].junction},
            {k: np.concatenate([x.stack[k] for x in lb]) for k in lb[0].stack},
            lb[0].incident_W_m2,
            np.concatenate([x.output_W_m2 for x in lb]),
            lb[0].blackbody,
            np.concatenate([x.junction_output_W_m2 for x in lb]),
        )
    return sol


def _per_junction_array(value, shape, pad=0.0):
    """Broadcast a scalar, ``(N,)``, ``(N-1,)`` (padded) or ``(M, N)`` value to ``shape``."""
    a = np.asarray(value, dtype=float)
    if a.ndim == 1 and a.size == shape[-1] - 1:
        a = np.concatenate([a, [pad]])
    return np.broadcast_to(a, shape)


@dataclass
class _Junctions:
    """The diode model of every junction of a batch (internal, SI)."""

    gaps: np.ndarray  # gaps at the cell temperature [J]
    t: np.ndarray  # cell temperature [K]
    ere: np.ndarray
    optics: Any  # absorption.Optics
    eta: np.ndarray  # collection efficiency
    front: np.ndarray  # front emission factor
    nidx: np.ndarray  # refractive index
    rear_on: np.ndarray  # 1 where a junction emits downwards into a junction below
    c: np.ndarray  # coupling fraction per interface (0 at the bottom)
    n2r: np.ndarray  # rear emission factor n^2 (where rear_on)
    jph: np.ndarray  # photocurrent from the incident light [A m^-2]
    vt: np.ndarray  # thermal voltage [V]
    j0: np.ndarray  # dark saturation current [A m^-2]
    k: np.ndarray  # coupling coefficients
    diodes: Any
    bose: bool
    coupled: bool


def _optics(g_ref, spectrum, device, t, thickness):
    """Gaps at the cell temperature [J] and the stack's optics."""
    from .absorption import stack_optics, step_optics

    n = g_ref.shape[1]
    gt = device.gap_temperature
    g = gt.gaps_at(g_ref, t) if gt is not None else g_ref.copy()
    if device.all_step():
        return g, step_optics(g, spectrum)
    absorbers = tuple(device.absorbers) + (None,) * (n - len(device.absorbers))
    trapping = tuple(device.trapping) or ("single",) * n
    optics = stack_optics(
        g,
        t,
        spectrum,
        absorbers,
        thickness,
        trapping,
        _per_junction_array(device.refractive_index, (n,)),
    )
    return g, optics


def _junction_diodes(g, t, ere, optics, device, dark_current) -> _Junctions:
    """Photocurrents, saturation currents and coupling of every junction."""
    from .coupling import coupling_coefficients, downward_fraction
    from .diodes import BoltzmannDiodes, BoseEinsteinDiodes, ln_j0_radiative

    shape = g.shape
    eta = _per_junction_array(device.collection, shape)
    front = _per_junction_array(device.emission_factor, shape)
    nidx = _per_junction_array(device.refractive_index, shape)
    coupled = device.coupling_fraction is not None
    rear_on = np.zeros(shape)
    c = np.zeros(shape)
    if coupled:
        rear_on[:, :-1] = 1.0
        c = _per_junction_array(device.coupling_fraction, shape) * rear_on
    n2r = nidx**2 * rear_on
    jph = eta * Q * optics.phi_abs
    vt = K_B * t / Q
    if optics.j0_unit is None:
        j0_unit = np.exp(ln_j0_radiative(g, t, 1.0))
    else:
        j0_unit = optics.j0_unit
    j0_unit = eta * j0_unit  # reciprocity: emission follows the EQE
    j0 = (front + n2r) * j0_unit / ere
    bose = dark_current == "bose-einstein"
    if bose and (coupled or not device.all_step()):
        raise ValueError(
            "the Bose-Einstein dark current needs step absorbers and no luminescent coupling"
        )
    if bose:
        diodes = BoseEinsteinDiodes(jph, g, t, ere, eta * front)
    else:
        diodes = BoltzmannDiodes(jph, j0, vt)
    k = coupling_coefficients(downward_fraction(ere, front, nidx, rear_on), c, eta)
    return _Junctions(
        g, t, ere, optics, eta, front, nidx, rear_on, c, n2r, jph, vt, j0, k, diodes, bose, coupled
    )


def _operating_point(jn: _Junctions, connection, device, vm_ratio, vm_max_cells, given):
    """Maximum power point of every stack, with coupling and series resistance.

    Returns ``(op, voc_junction, jph_total, r_junction, r_stack)``.
    """
    from .coupling import series_chain, solve_independent_coupled

    model = connection_model(connection)
    shape = jn.gaps.shape
    m = shape[0]
    r = np.asarray(device.series_resistance_ohm_m2, dtype=float)
    jeff_act = jn.jph
    r_junction = np.zeros(shape)
    r_stack = np.zeros(m)
    if given is not None:
        return given.op, given.voc_junction, jeff_act, r_junction, r_stack
    if (jn.coupled and not model.coupling) or (np.any(r > 0) and model.solve_resistive is None):
        raise ValueError(
            "luminescent coupling and series resistance need series or independent connection"
        )
    if model.terminals == "stack":
        r_stack = np.broadcast_to(r if r.ndim == 0 else r.reshape(-1)[0], (m,))
        dd = jn.diodes
        if jn.coupled:
            dd, a, b = series_chain(jn.jph, jn.j0, jn.vt, jn.k)
        op = model.solve_resistive(dd, r_stack) if np.any(r_stack > 0) else model.solve(dd)
        voc_j = dd.voc()
        if jn.coupled:
            jeff_act = a - (b - 1.0) * op.j_mpp[:, None]
    elif model.terminals == "junction":
        r_junction = np.ascontiguousarray(_per_junction_array(r, shape))
        if jn.coupled:
            j, v, jeff_act = solve_independent_coupled(jn.jph, jn.j0, jn.vt, jn.k, r_junction)
            p = (j * (v - r_junction * j)).sum(axis=1)
            nan = np.full(m, np.nan)
            op = OperatingPoint(p, nan, nan, nan, nan, v, j)
            voc_j = jn.vt * np.log1p(jeff_act / jn.j0)
        elif np.any(r_junction > 0):
            op = model.solve_resistive(jn.diodes, r_junction)
            voc_j = jn.diodes.voc()
        else:
            op = model.solve(jn.diodes)
            voc_j = jn.diodes.voc()
    else:
        op = model.solve(jn.diodes, vm_ratio, vm_max_cells)
        voc_j = jn.diodes.voc()
    return op, voc_j, jeff_act, r_junction, r_stack


def _losses(jn: _Junctions, spectrum, connection, op, r_junction, r_stack):
    """Loss breakdown at the operating point ``op`` (Hirst and Ekins-Daukes 2011)."""
    from .coupling import solve_independent_coupled
    from .diodes import BoseEinsteinDiodes
    from .losses import compute_losses

    if jn.coupled:
        rj, rv, rjeff = solve_independent_coupled(jn.jph, jn.j0, jn.vt, jn.k, 0.0)
    elif connection_model(connection).terminals == "junction" and not np.any(r_junction > 0):
        rj, rv, rjeff = op.j_junction, op.v_junction, jn.jph
    else:
        rv, rj = jn.diodes.mpp()
        rjeff = jn.jph
    if jn.bose:
        rvoc = BoseEinsteinDiodes(rjeff, jn.gaps, jn.t, jn.ere, jn.eta * jn.front).voc()
        rvoc_rad = BoseEinsteinDiodes(rjeff, jn.gaps, jn.t, 1.0, jn.eta * jn.front).voc()
    else:
        rvoc = jn.vt * np.log1p(rjeff / jn.j0)
        rvoc_rad = jn.vt * np.log1p(rjeff / (jn.j0 * jn.ere))
    bb = spectrum.is_blackbody
    return compute_losses(
        gaps_J=jn.gaps,
        temperature_K=jn.t,
        incident_W_m2=spectrum.total_irradiance_W_m2,
        optics=jn.optics,
        ere=jn.ere,
        collection=jn.eta,
        front_factor=jn.front,
        n2r=jn.n2r,
        coupling_fraction=jn.c,
        ref_j=rj,
        ref_v=rv,
        ref_jeff=rjeff,
        ref_voc=rvoc,
        ref_voc_rad=rvoc_rad,
        act_j=op.j_junction,
        act_v=op.v_junction,
        junction_r=r_junction,
        p_out=op.p_mpp,
        stack_r=r_stack,
        stack_j=op.j_mpp,
        sun_K=getattr(spectrum, "sun_temperature_K", None) if bb else None,
        sun_dilution=getattr(spectrum, "dilution", None) if bb else None,
    )


def _solve_nonideal(
    g_ref,
    spectrum,
    connection,
    device,
    arrs,
    dark_current,
    vm_ratio,
    vm_max_cells,
    want_losses,
    given=None,
) -> StackSolution:
    """optics -> diodes -> operating point -> losses, for one work unit."""
    t = np.ascontiguousarray(arrs["temperature_K"])
    ere = np.ascontiguousarray(arrs["ere"])
    g, optics = _optics(g_ref, spectrum, device, t, arrs["thickness"])
    jn = _junction_diodes(g, t, ere, optics, device, dark_current)
    op, voc_j, jeff_act, r_junction, r_stack = _operating_point(
        jn, connection, device, vm_ratio, vm_max_cells, given
    )
    sol = StackSolution(
        g,
        jn.jph,
        voc_j,
        op,
        spectrum.total_irradiance_W_m2,
        optics.p_abs.sum(axis=1),
        extras={"gaps_ref_J": g_ref, "jph_total": np.array(jeff_act, float)},
    )
    if want_losses:
        sol.losses = _losses(jn, spectrum, connection, op, r_junction, r_stack)
    return sol

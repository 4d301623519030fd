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

import numpy as np

from ..units import Q
from .connections import (
    OperatingPoint,
    best_ratio_voltage_matched,
    solve_independent,
    solve_series,
    solve_voltage_matched,
)
from .diodes import make_diodes
from .spectra import Spectrum

__all__ = ["step_photocurrents", "StackSolution", "solve_stacks"]


def step_photocurrents(gaps_J: np.ndarray, spectrum: Spectrum) -> np.ndarray:  # noqa: N803
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
    f = spectrum.photon_flux_above(gaps_J)
    acc = np.maximum.accumulate(f, axis=1)
    prev = np.concatenate([np.zeros((f.shape[0], 1)), acc[:, :-1]], axis=1)
    return Q * (acc - prev)


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


def solve_stacks(
    gaps_J: np.ndarray,  # noqa: N803
    spectrum: Spectrum,
    connection: str = "series",
    *,
    temperature_K: np.ndarray | float = 300.0,  # noqa: N803
    ere: np.ndarray | float = 1.0,
    dark_model: str = "boltzmann",
    emission_factor: np.ndarray | float = 1.0,
    vm_ratio: np.ndarray | None = None,
    vm_max_cells: int | None = None,
    threads: int | None = None,
    chunk: int = 32768,
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
    dark_model : {"boltzmann", "bose-einstein"}
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

    Returns
    -------
    StackSolution
    """
    gaps = np.atleast_2d(np.asarray(gaps_J, dtype=float))
    kw = dict(temperature_K=temperature_K, ere=ere, dark_model=dark_model,
              emission_factor=emission_factor, vm_ratio=vm_ratio, vm_max_cells=vm_max_cells)
    m = gaps.shape[0]
    threads = os.cpu_count() or 1 if threads is None else max(1, int(threads))
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


def _rows(value, shape, sl):
    """Rows ``sl`` of a per-stack parameter that broadcasts to ``shape``."""
    if value is None or isinstance(value, str):
        return value
    a = np.asarray(value)
    if a.ndim == 2 and a.shape[0] == shape[0] and shape[0] > 1:
        return a[sl]
    return a


def _concat(parts: list[StackSolution]) -> StackSolution:
    cat = np.concatenate
    ops = [p.op for p in parts]
    ratio = None if ops[0].ratio is None else cat([o.ratio for o in ops])
    op = OperatingPoint(*(cat([getattr(o, f) for o in ops]) for f in
                          ("p_mpp", "v_mpp", "j_mpp", "voc", "jsc", "v_junction", "j_junction")),
                        ratio=ratio)
    return StackSolution(cat([p.gaps_J for p in parts]), cat([p.jph for p in parts]),
                         cat([p.voc_junction for p in parts]), op, parts[0].incident_W_m2,
                         cat([p.absorbed_W_m2 for p in parts]))


def _solve(gaps, spectrum, connection, *, temperature_K, ere, dark_model,  # noqa: N803
           emission_factor, vm_ratio, vm_max_cells) -> StackSolution:
    gaps = np.asfortranarray(gaps)
    jph = step_photocurrents(gaps, spectrum)
    diodes = make_diodes(dark_model, jph, gaps, temperature_K, ere, emission_factor)
    if connection == "series":
        op = solve_series(diodes)
    elif connection == "independent":
        op = solve_independent(diodes)
    elif connection == "voltage-matched":
        if vm_ratio is not None:
            op = solve_voltage_matched(diodes, np.asarray(vm_ratio))
        else:
            op = best_ratio_voltage_matched(diodes, vm_max_cells)
    else:
        raise ValueError(f"unknown connection {connection!r}")
    e_min = gaps.min(axis=1)
    absorbed = spectrum.power_above(e_min)
    return StackSolution(gaps, jph, diodes.voc(), op, spectrum.total_irradiance_W_m2, absorbed)

"""The one registry of connection models: how each wiring is solved and what it supports.

Every layer that needs to know about a connection asks here: the ideal fast path and the
non-ideal path of :mod:`.engine` (which solver, with and without series resistance),
input validation (luminescent coupling, series resistance, cells per string), results
(terminals: whether the stack has one V_oc and J_sc) and study files (the names).

References
----------
.. [1] A. De Vos, J. Phys. D 13, 839 (1980) (series and independent tandems).
.. [2] R. Strandberg, Appl. Phys. Lett. 106, 033902 (2015) (voltage matching).
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass

import numpy as np

from .connections import (
    CONNECTIONS as _SOLVER_NAMES,
)
from .connections import (
    OperatingPoint,
    best_ratio_voltage_matched,
    solve_independent,
    solve_independent_resistive,
    solve_series,
    solve_series_resistive,
    solve_voltage_matched,
)

__all__ = ["ConnectionModel", "REGISTRY", "CONNECTIONS", "connection_model"]


@dataclass(frozen=True)
class ConnectionModel:
    """How one connection is solved and what it supports.

    Attributes
    ----------
    name : str
        ``"series"``, ``"independent"`` or ``"voltage-matched"``.
    terminals : {"stack", "junction", "strings"}
        One pair of terminals for the stack (series), one per junction (independent),
        or strings of cells in parallel at one voltage (voltage matched). Only
        ``"stack"`` connections have a stack V_oc and J_sc.
    solve : callable
        ``solve(diodes, ratio, max_cells) -> OperatingPoint`` without resistance.
    solve_resistive : callable or None
        ``solve_resistive(diodes, r_ohm_m2) -> OperatingPoint`` with series resistance
        (``r`` per stack ``(M,)`` for ``"stack"``, per junction ``(M, N)`` for
        ``"junction"``); ``None`` when resistance is not modelled.
    coupling : bool
        Whether luminescent coupling between junctions is modelled.
    cell_ratio : bool
        Whether the connection takes cells per string.
    """

    name: str
    terminals: str
    solve: Callable[..., OperatingPoint]
    solve_resistive: Callable[..., OperatingPoint] | None
    coupling: bool
    cell_ratio: bool = False

    @property
    def has_stack_terminals(self) -> bool:
        """Whether the stack has one terminal pair (a stack V_oc, J_sc, V_mpp, J_mpp)."""
        return self.terminals != "junction"


def _voltage_matched(d, ratio, max_cells) -> OperatingPoint:
    if ratio is not None:
        return solve_voltage_matched(d, np.asarray(ratio))
    return best_ratio_voltage_matched(d, max_cells)


#: name -> ConnectionModel, in the order users see them
REGISTRY: dict[str, ConnectionModel] = {
    "series": ConnectionModel(
        "series",
        "stack",
        lambda d, ratio=None, max_cells=None: solve_series(d),
        solve_series_resistive,
        coupling=True,
    ),
    "independent": ConnectionModel(
        "independent",
        "junction",
        lambda d, ratio=None, max_cells=None: solve_independent(d),
        solve_independent_resistive,
        coupling=True,
    ),
    "voltage-matched": ConnectionModel(
        "voltage-matched",
        "strings",
        _voltage_matched,
        None,
        coupling=False,
        cell_ratio=True,
    ),
}

#: every connection name
CONNECTIONS: tuple[str, ...] = tuple(REGISTRY)
assert CONNECTIONS == tuple(_SOLVER_NAMES), "registry and solvers disagree"


def connection_model(name: str) -> ConnectionModel:
    """The registered model of connection ``name``.

    Raises
    ------
    ValueError
        For an unknown name (inputs are validated before they reach the core).
    """
    try:
        return REGISTRY[name]
    except KeyError:
        raise ValueError(f"unknown connection {name!r}") from None

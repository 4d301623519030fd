"""What a band-gap search looks for: variables, constraints and objectives.

A :class:`SearchProblem` fixes the number of junctions, the connection, the conditions,
each junction's gap window (or a fixed gap), the ordering rule (top > ... > bottom with a
minimum spacing), an optional limit on the photocurrent mismatch ratio, the objective and
an optional robustness objective. It evaluates batches of candidate stacks in one
vectorised call and reports, for each, the objective values and the constraint values in
optuna's convention (``<= 0`` is feasible).

Objectives are pluggable: anything implementing :class:`Objective` (a batch of gaps in,
one value per stack and the photocurrents out) can be searched. Energy yield plugs in the
same way; further design variables (absorber thicknesses) are meant to enter as extra
columns named in :attr:`Objective.extra_variables` (none for efficiency).

References
----------
.. [1] W. Shockley and H. J. Queisser, J. Appl. Phys. 32, 510 (1961).
.. [2] A. De Vos, J. Phys. D 13, 839 (1980).
"""

from __future__ import annotations

import hashlib
import itertools
import json
from abc import ABC, abstractmethod
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import numpy as np

from ..api import GAP_RANGE_EV, MAX_JUNCTIONS, evaluate
from ..core.connections import CONNECTIONS
from ..core.engine import solve_stacks
from ..errors import InputError, check_range
from ..io.spectra import get_spectrum
from ..units import EV

__all__ = [
    "DEFAULT_WINDOW_EV",
    "DEFAULT_MIN_SPACING_EV",
    "DEFAULT_ROBUSTNESS_EV",
    "Objective",
    "ObjectiveBatch",
    "EfficiencyObjective",
    "Evaluation",
    "SearchProblem",
    "make_problem",
]

#: default gap window of a free junction [eV]
DEFAULT_WINDOW_EV = (0.5, 3.0)
#: default smallest difference between neighbouring gaps [eV]
DEFAULT_MIN_SPACING_EV = 0.05
#: default gap tolerance of the robustness objective [eV]
DEFAULT_ROBUSTNESS_EV = 0.02
#: largest robustness tolerance accepted [eV]
MAX_ROBUSTNESS_EV = 0.2


@dataclass
class ObjectiveBatch:
    """What an objective returns for ``M`` stacks.

    Attributes
    ----------
    value : numpy.ndarray
        Objective value per stack, ``(M,)`` (larger is better; efficiency as a fraction).
    jph_A_m2 : numpy.ndarray
        Photocurrent density of each junction [A m^-2], ``(M, N)`` (for the mismatch
        constraint).
    """

    value: np.ndarray
    jph_A_m2: np.ndarray  # noqa: N815


class Objective(ABC):
    """A quantity to maximise over a batch of stacks.

    Subclasses set :attr:`name` (a column name, e.g. ``"efficiency"``), :attr:`label`
    (axis label with unit), :attr:`scale` (factor from the value to the label's unit)
    and implement :meth:`evaluate`; a slow objective declares
    :attr:`cost_per_stack_s`. An energy-yield objective would integrate the
    stack's power over a year of spectra and temperatures in :meth:`evaluate`; the rest
    of the search does not change. Extra design variables (for example absorber
    thicknesses [m]) are reserved: :attr:`extra_variables` (``name -> (low, high)``)
    and the ``extra`` argument of :meth:`evaluate` are the interface they will use, but
    the search does not vary them yet and :func:`make_problem` rejects an objective that
    declares any.
    """

    name: str = "objective"
    label: str = "objective"
    scale: float = 1.0
    extra_variables: dict[str, tuple[float, float]] = {}
    #: declared evaluation cost per stack [s] (a nominal figure for a 2-core desktop,
    #: never measured at run time): the search sizes its Sobol stage and its polish
    #: from it, so one seed gives one answer under any load. Declare it for objectives
    #: much slower than the ideal detailed-balance paths (about 1e-6 s per stack).
    cost_per_stack_s: float = 1e-6

    @abstractmethod
    def evaluate(
        self,
        gaps_eV: np.ndarray,
        extra: np.ndarray | None = None,  # noqa: N803
    ) -> ObjectiveBatch:
        """Evaluate ``(M, N)`` gaps [eV] (top first), unvalidated, in one batch."""

    def describe(self) -> dict:
        """JSON-ready identity of the objective (stored with the study)."""
        return {"name": self.name}


class EfficiencyObjective(Objective):
    """Detailed-balance power conversion efficiency (fraction) under one spectrum.

    Parameters
    ----------
    connection : {"series", "independent", "voltage-matched"}
        How the junctions are connected.
    conditions : dict
        Keyword conditions of :func:`gapmatch.evaluate` (``spectrum``, ``spectrum_file``,
        ``sun_temperature_K``, ``irradiance_W_m2``, ``concentration``, ``temperature_K``
        [K], ``ere``, ``dark_current``, ``cells_per_string``); validated by the caller.

    References
    ----------
    .. [1] W. Shockley and H. J. Queisser, J. Appl. Phys. 32, 510 (1961).
    """

    name = "efficiency"
    label = "efficiency [%]"
    scale = 100.0

    def __init__(self, connection: str, conditions: dict) -> None:
        self.connection = connection
        self.conditions = dict(conditions)
        c = self.conditions
        self.cost_per_stack_s = declared_cost_s(connection, c)
        self.spectrum = get_spectrum(
            c.get("spectrum", "AM1.5G"),
            spectrum_file=c.get("spectrum_file"),
            sun_temperature_K=c.get("sun_temperature_K", 6000.0),
            irradiance_W_m2=c.get("irradiance_W_m2"),
            concentration=c.get("concentration", 1.0),
        )
        cps = c.get("cells_per_string")
        self._kw = dict(
            temperature_K=np.asarray(c.get("temperature_K", 300.0), dtype=float),
            ere=np.asarray(c.get("ere", 1.0), dtype=float),
            dark_model=c.get("dark_current", "boltzmann"),
            vm_ratio=None if cps is None else np.asarray(cps, dtype=int),
        )

    def evaluate(self, gaps_eV, extra=None) -> ObjectiveBatch:  # noqa: N803
        sol = solve_stacks(
            np.asarray(gaps_eV, dtype=float) * EV, self.spectrum, self.connection, **self._kw
        )
        return ObjectiveBatch(sol.op.p_mpp / sol.incident_W_m2, sol.jph)

    def describe(self) -> dict:
        c = {k: (str(v) if isinstance(v, Path) else v) for k, v in self.conditions.items()}
        c = {
            k: (np.asarray(v).tolist() if isinstance(v, np.ndarray | list | tuple) else v)
            for k, v in c.items()
        }
        if not isinstance(c.get("spectrum", ""), str):  # a Spectrum object: its description
            c["spectrum"] = self.spectrum.describe()
        return {"name": self.name, "connection": self.connection, "conditions": c}


#: declared cost per stack of the ideal (Boltzmann, step-absorber) paths [s]
IDEAL_COST_S = 1e-6
#: declared cost per stack with the Bose-Einstein dark current [s]
BOSE_EINSTEIN_COST_S = 1.8e-4
#: declared cost per stack of voltage matching with the automatic string ratio [s]
AUTO_RATIO_COST_S = 7e-5


def declared_cost_s(connection: str, conditions: dict) -> float:
    """Declared evaluation cost per stack [s] of an efficiency objective, from its kind.

    Nominal figures measured once on a 2-core desktop (``benchmarks/engine.py``), not at
    run time: the ideal paths about 1e-6 s, voltage matching with the automatic
    cells-per-string ratio about 7e-5 s, the Bose-Einstein dark current about
    1.8e-4 s. A change in engine speed changes these constants, not a search's answer
    from one run to the next.
    """
    cost = IDEAL_COST_S
    if conditions.get("dark_current", "boltzmann") == "bose-einstein":
        cost = max(cost, BOSE_EINSTEIN_COST_S)
    if connection == "voltage-matched" and conditions.get("cells_per_string") is None:
        cost = max(cost, AUTO_RATIO_COST_S)
    return cost


@dataclass
class Evaluation:
    """Objective and constraint values of a batch of ``M`` stacks.

    Attributes
    ----------
    gaps_eV : numpy.ndarray
        ``(M, N)`` gaps [eV], top first.
    value : numpy.ndarray
        Main objective, ``(M,)`` (efficiency as a fraction).
    robust : numpy.ndarray or None
        Worst main objective over the 2^k corners and centre of the +/- delta box of the
        ``k`` free gaps, ``(M,)``; ``None`` without the robustness objective.
    mismatch_ratio : numpy.ndarray
        Smallest over largest junction photocurrent, ``(M,)``.
    constraints : numpy.ndarray
        ``(M, C)`` constraint values in optuna's convention (``<= 0`` feasible), columns
        named by :attr:`SearchProblem.constraint_names`.
    """

    gaps_eV: np.ndarray  # noqa: N815
    value: np.ndarray
    robust: np.ndarray | None
    mismatch_ratio: np.ndarray
    constraints: np.ndarray

    @property
    def feasible(self) -> np.ndarray:
        """True where every constraint holds, ``(M,)``."""
        return np.all(self.constraints <= 0, axis=1)


@dataclass
class SearchProblem:
    """A validated band-gap search problem (build it with :func:`make_problem`).

    Attributes
    ----------
    n_junctions : int
        Junctions per stack (2-6).
    connection : str
        Connection name.
    bounds_eV : numpy.ndarray
        ``(N, 2)`` gap windows [eV], top first (a fixed junction has low == high).
    fixed : numpy.ndarray
        ``(N,)`` bool, True for a fixed gap.
    min_spacing_eV : float
        Smallest allowed ``E_i - E_{i+1}`` [eV].
    min_mismatch_ratio : float or None
        Smallest allowed ``min(J_ph) / max(J_ph)``.
    robustness_eV : float or None
        Tolerance of the robustness objective [eV]; ``None`` for a single objective.
    objective : Objective
        What is maximised.
    conditions : dict
        The :func:`gapmatch.evaluate` keyword conditions (for the final full evaluation).
    """

    n_junctions: int
    connection: str
    bounds_eV: np.ndarray  # noqa: N815
    fixed: np.ndarray
    min_spacing_eV: float  # noqa: N815
    min_mismatch_ratio: float | None
    robustness_eV: float | None  # noqa: N815
    objective: Objective
    conditions: dict = field(default_factory=dict)

    # ---- variables ---------------------------------------------------------------------
    @property
    def free(self) -> np.ndarray:
        """Indices of the free junctions (0 = top)."""
        return np.flatnonzero(~self.fixed)

    @property
    def n_free(self) -> int:
        """Number of free gaps."""
        return int((~self.fixed).sum())

    @property
    def param_names(self) -> list[str]:
        """optuna parameter names of the free gaps (``gap_<k>_eV``, 1 = top)."""
        return [f"gap_{k + 1}_eV" for k in self.free]

    @property
    def objective_names(self) -> list[str]:
        """Names of the objectives (one, or two with robustness)."""
        names = [self.objective.name]
        if self.robustness_eV is not None:
            names.append(f"worst_{self.objective.name}")
        return names

    @property
    def constraint_names(self) -> list[str]:
        """Names of the constraint columns (``<= 0`` feasible)."""
        names = ["spacing_violation_eV"]
        if self.min_mismatch_ratio is not None:
            names.append("mismatch_violation")
        return names

    def full_gaps(self, x: np.ndarray) -> np.ndarray:
        """``(M, N)`` gaps [eV] from ``(M, n_free)`` free gaps (fixed ones filled in)."""
        x = np.atleast_2d(np.asarray(x, dtype=float))
        g = np.broadcast_to(self.bounds_eV[:, 0], (x.shape[0], self.n_junctions)).copy()
        g[:, self.free] = x
        return g

    # ---- evaluation ------------------------------------------------------------------
    def spacing_violation(self, gaps_eV: np.ndarray) -> np.ndarray:  # noqa: N803
        """Largest shortfall of neighbour spacing [eV], ``(M,)`` (``<= 0`` when ordered)."""
        return np.max(self.min_spacing_eV - (gaps_eV[:, :-1] - gaps_eV[:, 1:]), axis=1)

    def evaluate(self, gaps_eV: np.ndarray, *, robust: bool | None = None) -> Evaluation:  # noqa: N803
        """Objective and constraints of ``(M, N)`` gaps [eV] in one batch.

        Parameters
        ----------
        gaps_eV : numpy.ndarray
            Gaps [eV], top first (not validated; the search keeps them in the windows).
        robust : bool, optional
            Also evaluate the robustness objective (default: when the problem has one).
            The 2^k corners and the centre of every stack's box go through the
            evaluator in the same batch.
        """
        g = np.atleast_2d(np.asarray(gaps_eV, dtype=float))
        m, n = g.shape
        if robust is None:
            robust = self.robustness_eV is not None
        worst = None
        if robust and self.robustness_eV is not None:
            offs = self.corner_offsets()
            allg = (g[:, None, :] + offs[None, :, :]).reshape(-1, n)
            ob = self.objective.evaluate(np.clip(allg, *GAP_RANGE_EV))
            vals = ob.value.reshape(m, len(offs))
            value, jph = vals[:, 0], ob.jph_A_m2.reshape(m, len(offs), n)[:, 0]
            worst = vals.min(axis=1)
        else:
            ob = self.objective.evaluate(g)
            value, jph = ob.value, ob.jph_A_m2
        mx = jph.max(axis=1)
        with np.errstate(divide="ignore", invalid="ignore"):
            ratio = np.where(mx > 0, jph.min(axis=1) / mx, 0.0)
        cons = [self.spacing_violation(g)]
        if self.min_mismatch_ratio is not None:
            cons.append(self.min_mismatch_ratio - ratio)
        return Evaluation(g, value, worst, ratio, np.stack(cons, axis=1))

    def corner_offsets(self) -> np.ndarray:
        """Centre, then the 2^k corners of the +/- delta box of the free gaps [eV].

        Returns an array of shape ``(1 + 2^k, N)``.
        """
        d = float(self.robustness_eV or 0.0)
        offs = np.zeros((1 + 2**self.n_free, self.n_junctions))
        for i, signs in enumerate(itertools.product((-1.0, 1.0), repeat=self.n_free)):
            offs[1 + i, self.free] = d * np.asarray(signs)
        return offs

    def full_evaluation(self, gaps_eV) -> dict:  # noqa: N803
        """The checked evaluation of one stack, with its loss breakdown: exactly what
        ``gapmatch evaluate --json`` prints for it (``BatchResult.stack(0)``)."""
        gaps = list(map(float, gaps_eV))
        return evaluate(gaps, self.connection, losses=True, **self.conditions).stack(0)

    # ---- identity ----------------------------------------------------------------------
    def describe(self) -> dict:
        """JSON-ready definition (stored with the study, compared on resume)."""
        return {
            "n_junctions": self.n_junctions,
            "connection": self.connection,
            "bounds_eV": self.bounds_eV.round(6).tolist(),
            "fixed": self.fixed.tolist(),
            "min_spacing_eV": self.min_spacing_eV,
            "min_mismatch_ratio": self.min_mismatch_ratio,
            "robustness_eV": self.robustness_eV,
            "objective": self.objective.describe(),
        }

    def fingerprint(self) -> str:
        """Short hash of :meth:`describe` (default study names use it)."""
        raw = json.dumps(self.describe(), sort_keys=True, default=str).encode()
        return hashlib.sha1(raw).hexdigest()[:8]

    def default_study_name(self) -> str:
        """``<N>J-<connection>-<spectrum>-<hash>``."""
        spec = str(
            self.conditions.get("spectrum_file") or self.conditions.get("spectrum", "AM1.5G")
        )
        spec = Path(spec).stem if self.conditions.get("spectrum_file") else spec
        return f"{self.n_junctions}J-{self.connection}-{spec}-{self.fingerprint()}"


def _window(value: Any, field_name: str) -> tuple[float, float]:
    try:
        lo, hi = (float(v) for v in value)
    except (TypeError, ValueError):
        raise InputError(field_name, "needs a (low, high) pair [eV]", value) from None
    lo = check_range(field_name, lo, *GAP_RANGE_EV, unit="eV")
    hi = check_range(field_name, hi, *GAP_RANGE_EV, unit="eV")
    if not lo < hi:
        raise InputError(field_name, "low must be below high [eV]", [lo, hi])
    return lo, hi


def make_problem(
    n_junctions: int,
    connection: str = "series",
    *,
    bounds_eV=None,  # noqa: N803
    fixed_eV=None,  # noqa: N803
    min_spacing_eV: float = DEFAULT_MIN_SPACING_EV,  # noqa: N803
    min_mismatch_ratio: float | None = None,
    robustness_eV: float | None = None,  # noqa: N803
    objective: Objective | None = None,
    **conditions,
) -> SearchProblem:
    """Build and validate a band-gap search problem.

    Parameters
    ----------
    n_junctions : int
        Junctions per stack, 2-6.
    connection : {"series", "independent", "voltage-matched"}
        How the junctions are connected.
    bounds_eV : (low, high) or sequence of (low, high), optional
        Gap window [eV] of every junction, or one per junction (top first); default
        0.5-3.0 eV. Windows lie within 0.1-5.0 eV.
    fixed_eV : dict or sequence, optional
        Fixed gaps [eV]: ``{junction: gap}`` with junction numbered 1 (top) to N, or a
        length-N sequence with ``None`` for free junctions. E.g. ``{2: 1.12}`` fixes a
        silicon bottom cell of a tandem.
    min_spacing_eV : float
        Smallest allowed difference between neighbouring gaps [eV], 0-1 (default 0.05).
    min_mismatch_ratio : float, optional
        Smallest allowed ratio of the smallest to the largest junction photocurrent, in
        (0, 1] (e.g. 0.95 for an independently connected design that must also work in
        series).
    robustness_eV : float, optional
        Adds a second objective: the worst efficiency when every free gap moves by up to
        +/- this amount [eV], in (0, 0.2] (e.g. 0.02); the result is then a Pareto front.
    objective : Objective, optional
        What to maximise (default :class:`EfficiencyObjective` under ``conditions``).
    **conditions
        Keyword conditions of :func:`gapmatch.evaluate`: ``spectrum``, ``spectrum_file``,
        ``sun_temperature_K`` [K], ``irradiance_W_m2`` [W m^-2], ``concentration``
        [suns], ``temperature_K`` [K], ``ere``, ``dark_current``, ``cells_per_string``.

    Returns
    -------
    SearchProblem

    Raises
    ------
    InputError
        Naming the field and the allowed range: junction count, windows, fixed gaps,
        spacing, mismatch ratio, robustness tolerance, or a window/spacing combination
        that no ordered stack can satisfy.
    """
    if (
        isinstance(n_junctions, bool)
        or not isinstance(n_junctions, int | np.integer)
        or not 2 <= int(n_junctions) <= MAX_JUNCTIONS
    ):
        raise InputError(
            "n_junctions", f"must be a whole number from 2 to {MAX_JUNCTIONS}", n_junctions
        )
    n = int(n_junctions)
    if connection not in CONNECTIONS:
        raise InputError("connection", f"must be one of {', '.join(CONNECTIONS)}", connection)
    # windows
    if bounds_eV is None:
        win = np.array([DEFAULT_WINDOW_EV] * n, dtype=float)
    else:
        arr = np.asarray(bounds_eV, dtype=object)
        if arr.ndim == 1 and len(arr) == 2 and not isinstance(arr[0], list | tuple | np.ndarray):
            win = np.array([_window(bounds_eV, "bounds_eV")] * n)
        else:
            items = list(bounds_eV)
            if len(items) != n:
                raise InputError(
                    "bounds_eV",
                    f"needs one (low, high) window, or one per junction ({n}), top first",
                    bounds_eV,
                )
            win = np.array([_window(b, f"bounds_eV[{i + 1}]") for i, b in enumerate(items)])
    fixed = np.zeros(n, dtype=bool)
    if fixed_eV is not None:
        if isinstance(fixed_eV, dict):
            pairs = list(fixed_eV.items())
        else:
            items = list(fixed_eV)
            if len(items) != n:
                raise InputError(
                    "fixed_eV",
                    f"needs {n} entries (None for a free junction) or a {{junction: gap}} mapping",
                    fixed_eV,
                )
            pairs = [(i + 1, v) for i, v in enumerate(items) if v is not None]
        for j, v in pairs:
            if isinstance(j, bool) or not isinstance(j, int | np.integer) or not 1 <= j <= n:
                raise InputError("fixed_eV", f"junction numbers run from 1 (top) to {n}", j)
            g = check_range(f"fixed_eV[{j}]", v, *GAP_RANGE_EV, unit="eV")
            win[j - 1] = (g, g)
            fixed[j - 1] = True
    if fixed.all():
        raise InputError("fixed_eV", "leaves no free gap to search", fixed_eV)
    sp = check_range("min_spacing_eV", min_spacing_eV, 0.0, 1.0, unit="eV")
    # an ordered stack must fit: the highest reachable gap of each junction, walking down
    top = win[0, 1]
    for i in range(1, n):
        top = min(win[i, 1], top - sp)
        if top < win[i, 0]:
            raise InputError(
                "bounds_eV",
                f"no stack with gaps decreasing by at least {sp:g} eV "
                f"fits the windows (junction {i + 1} cannot lie below junction {i})",
                win.tolist(),
            )
    if min_mismatch_ratio is not None:
        min_mismatch_ratio = check_range(
            "min_mismatch_ratio", min_mismatch_ratio, 0.0, 1.0, low_inclusive=False
        )
    if robustness_eV is not None:
        robustness_eV = check_range(
            "robustness_eV", robustness_eV, 0.0, MAX_ROBUSTNESS_EV, low_inclusive=False, unit="eV"
        )
    # conditions: validated by one checked evaluation of an ordered stack inside the windows
    probe = np.empty(n)
    top = win[0, 1]
    probe[0] = top
    for i in range(1, n):
        probe[i] = min(win[i, 1], probe[i - 1] - sp)
    probe = np.maximum(probe, win[:, 0])
    allowed = {
        "spectrum",
        "spectrum_file",
        "sun_temperature_K",
        "irradiance_W_m2",
        "concentration",
        "temperature_K",
        "ere",
        "dark_current",
        "cells_per_string",
    }
    for k in conditions:
        if k not in allowed:
            raise InputError(k, f"is not a condition; use one of {', '.join(sorted(allowed))}")
    conditions = {k: v for k, v in conditions.items() if v is not None}
    if connection == "voltage-matched" and n > 2 and conditions.get("cells_per_string") is None:
        raise InputError(
            "cells_per_string",
            "must be given to search voltage-matched stacks "
            "of more than 2 junctions (the automatic ratio choice is too slow to "
            "search), e.g. (1, 2, 3)",
        )
    evaluate(probe.tolist(), connection, require_descending=False, **conditions)
    if objective is None:
        objective = EfficiencyObjective(connection, conditions)
    elif not isinstance(objective, Objective):
        raise InputError("objective", "must be a gapmatch.search.Objective", type(objective))
    if objective.extra_variables:
        raise InputError(
            "objective",
            "extra design variables (e.g. thicknesses) are not searched yet; only band gaps",
            sorted(objective.extra_variables),
        )
    return SearchProblem(
        n, connection, win, fixed, sp, min_mismatch_ratio, robustness_eV, objective, conditions
    )

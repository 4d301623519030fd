"""What a band-gap search looks for: variables, constraints and objectives.

A :class:`SearchProblem` fixes the number of junctions, the connection, the conditions,
each junction's gap window (or a fixed gap), the ordering rule (top > ... > bottom with a
minimum spacing), an optional limit on the photocurrent mismatch ratio, the objective and
an optional robustness objective. It evaluates batches of candidate stacks in one
vectorised call and reports, for each, the objective values and the constraint values in
optuna's convention (``<= 0`` is feasible).

Objectives are pluggable: anything implementing :class:`Objective` (a batch of gaps in,
one value per stack and the photocurrents out) can be searched. Energy yield plugs in the
same way.

Absorber thicknesses can be searched with the gaps (``thickness_windows_nm``): a junction
with a finite absorber (``absorber`` ``"direct"``, ``"indirect"`` or ``"table"``, of
:mod:`gapmatch.core.absorption`) and a thickness window gets one more variable, searched
as ``log10`` of the thickness [m] (windows span nm to mm). Thinning the top cell of a
two-terminal stack passes light on to the cells below and so shares current among them
when the top gap is too low for current matching at full thickness; Bremner et al. [3]_
discuss this as a way to use materials whose gaps miss the ideal combination. Thickness
variables enter :meth:`Objective.evaluate` as its ``extra`` argument, ``(M, K)``
thicknesses [m] of the windowed junctions, top first.

References
----------
.. [1] W. Shockley and H. J. Queisser, J. Appl. Phys. 32, 510 (1961).
.. [2] A. De Vos, J. Phys. D 13, 839 (1980).
.. [3] S. P. Bremner, C. Yi, I. Almansouri, A. Ho-Baillie and M. A. Green, "Optimum band
   gap combinations to make best use of new photovoltaic materials", Solar Energy 135,
   750 (2016).
"""

from __future__ import annotations

import dataclasses
import hashlib
import itertools
import json
import math
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
    "ABSORBER_CONDITIONS",
    "THICKNESS_RANGE_NM",
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
#: thickness range a thickness window must lie in [nm] (that of :func:`gapmatch.evaluate`)
THICKNESS_RANGE_NM = (1.0, 1e8)
#: the :func:`gapmatch.evaluate` keywords of finite absorbers a search accepts as
#: conditions (``thickness_nm`` sets the junctions without a thickness window)
ABSORBER_CONDITIONS = (
    "absorber",
    "thickness_nm",
    "alpha0_per_cm",
    "urbach_energy_meV",
    "alpha_file",
    "light_trapping",
    "refractive_index",
)


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
    of the search does not change. Extra design variables use :attr:`extra_variables`
    (``name -> (low, high)``) and the ``extra`` argument of :meth:`evaluate`: the
    efficiency objective declares its searched absorber thicknesses [m] there (built by
    :func:`make_problem` from ``thickness_windows_nm``); :func:`make_problem` rejects a
    custom objective that declares any.
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
        [K], ``ere``, ``dark_current``, ``cells_per_string``, and the finite-absorber
        keywords of :data:`ABSORBER_CONDITIONS`); validated by the caller.
    thickness_windows_m : dict, optional
        ``{junction index (0 = top): (low, high)}`` thickness windows [m] of the junctions
        whose thickness is searched; their thicknesses arrive as the ``extra`` columns of
        :meth:`evaluate`, in junction order. Each needs a finite absorber.
    probe_gaps_eV : array_like, optional
        ``(P, N)`` gaps [eV] spanning the search windows, used once to build and check the
        absorber models (a tabulated absorption coefficient must reach the lowest gap).

    Notes
    -----
    With finite absorbers the absorber models are built once (files read once) and every
    batch only swaps in its thicknesses, so no file is read while the search runs.

    References
    ----------
    .. [1] W. Shockley and H. J. Queisser, J. Appl. Phys. 32, 510 (1961).
    .. [2] T. Tiedje et al., IEEE Trans. Electron Devices 31, 711 (1984) (absorptance of
       a finite absorber).
    """

    name = "efficiency"
    label = "efficiency [%]"
    scale = 100.0

    def __init__(
        self,
        connection: str,
        conditions: dict,
        *,
        thickness_windows_m: dict[int, tuple[float, float]] | None = None,
        probe_gaps_eV=None,  # noqa: N803
    ) -> None:
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
        self.thickness_windows_m = dict(sorted((thickness_windows_m or {}).items()))
        self.extra_variables = {
            f"thickness_{k + 1}_m": (float(lo), float(hi))
            for k, (lo, hi) in self.thickness_windows_m.items()
        }
        self._device = None
        if any(k in c for k in ABSORBER_CONDITIONS):
            self._device, self._base_thickness_m = _finite_device(
                connection, c, self.spectrum, self.thickness_windows_m, probe_gaps_eV
            )

    @property
    def finite(self) -> bool:
        """True when some junction has a finite absorber."""
        return self._device is not None

    def thickness_matrix_m(self, m: int, extra: np.ndarray | None) -> np.ndarray:
        """``(M, N)`` thicknesses [m] of ``M`` stacks: the fixed ones, with the searched
        junctions' columns from ``extra`` ``(M, K)`` (default: each window's upper end)."""
        th = np.broadcast_to(self._base_thickness_m, (m, len(self._base_thickness_m))).copy()
        cols = list(self.thickness_windows_m)
        if cols:
            if extra is None:
                extra = np.array([hi for _, hi in self.thickness_windows_m.values()])
            th[:, cols] = np.broadcast_to(np.asarray(extra, dtype=float), (m, len(cols)))
        return th

    def evaluate(self, gaps_eV, extra=None) -> ObjectiveBatch:  # noqa: N803
        g = np.atleast_2d(np.asarray(gaps_eV, dtype=float))
        if self._device is None:
            sol = solve_stacks(g * EV, self.spectrum, self.connection, **self._kw)
        else:
            from ..core.engine import solve_stacks_nonideal

            dev = dataclasses.replace(
                self._device, thickness_m=self.thickness_matrix_m(g.shape[0], extra)
            )
            kw = self._kw
            sol = solve_stacks_nonideal(
                g * EV,
                self.spectrum,
                self.connection,
                dev,
                temperature_K=kw["temperature_K"],
                ere=kw["ere"],
                dark_current=kw["dark_model"],
                vm_ratio=kw["vm_ratio"],
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
        out = {"name": self.name, "connection": self.connection, "conditions": c}
        if self.thickness_windows_m:  # (absent otherwise: older studies keep their names)
            out["thickness_windows_m"] = {
                str(k + 1): [float(lo), float(hi)]
                for k, (lo, hi) in self.thickness_windows_m.items()
            }
        return out


def _per_junction_nm(value, n: int) -> np.ndarray:
    """``(N,)`` thicknesses [nm] from one value or one per junction (NaN where absent)."""
    if value is None:
        return np.full(n, np.nan)
    try:
        a = np.array(
            [np.nan if v is None else v for v in np.atleast_1d(np.asarray(value, dtype=object))],
            dtype=float,
        )
    except (TypeError, ValueError):
        raise InputError("thickness_nm", "must be numbers [nm]", value) from None
    if a.size == 1:
        return np.full(n, float(a[0]))
    if a.shape != (n,):
        raise InputError(
            "thickness_nm", f"needs one value or one per junction ({n}), top first [nm]", value
        )
    return a


def _finite_device(connection, c, spectrum, windows_m, probe_gaps_eV):
    """The device model of a search with finite absorbers, built (and checked) once, and
    the fixed thicknesses [m] ``(N,)`` (NaN for step and searched junctions)."""
    from ..device import build_physics

    probe = np.atleast_2d(np.asarray(probe_gaps_eV, dtype=float))
    n = probe.shape[1]
    base_nm = _per_junction_nm(c.get("thickness_nm"), n)
    probe_nm = base_nm.copy()
    for k, (_, hi) in windows_m.items():
        probe_nm[k] = hi * 1e9
    kw = {k: c[k] for k in ABSORBER_CONDITIONS if k in c}
    kw["thickness_nm"] = probe_nm
    physics = build_physics(
        probe,
        connection,
        spectrum,
        np.asarray(c.get("temperature_K", 300.0), dtype=float),
        c.get("dark_current", "boltzmann"),
        **kw,
    )
    if physics is None:  # every junction a step absorber
        return None, np.full(n, np.nan)
    base_m = base_nm * 1e-9
    for k in windows_m:
        base_m[k] = np.nan
    return physics.device, base_m


#: declared cost per stack of the ideal (Boltzmann, step-absorber) paths [s]
IDEAL_COST_S = 1e-6
#: declared cost per stack with the Bose-Einstein dark current [s]
BOSE_EINSTEIN_COST_S = 1.8e-4
#: declared cost per stack of voltage matching with the automatic string ratio [s]
AUTO_RATIO_COST_S = 7e-5
#: declared cost per stack with finite absorbers (``absorber`` not all step) [s]
FINITE_ABSORBER_COST_S = 8e-4


def declared_cost_s(connection: str, conditions: dict) -> float:
    """Declared evaluation cost per stack [s] of an efficiency objective, from its kind.

    Nominal figures measured once on a 2-core desktop (``benchmarks/engine.py``), not at
    run time: the ideal paths about 1e-6 s, voltage matching with the automatic
    cells-per-string ratio about 7e-5 s, the Bose-Einstein dark current about
    1.8e-4 s, finite absorbers about 8e-4 s (batches of 1000, ``benchmarks/
    search_thickness.py``). A change in engine speed changes these constants, not a search's answer
    from one run to the next.
    """
    cost = IDEAL_COST_S
    if conditions.get("dark_current", "boltzmann") == "bose-einstein":
        cost = max(cost, BOSE_EINSTEIN_COST_S)
    if connection == "voltage-matched" and conditions.get("cells_per_string") is None:
        cost = max(cost, AUTO_RATIO_COST_S)
    absorber = conditions.get("absorber")
    if absorber is not None and any(a != "step" for a in np.atleast_1d(absorber)):
        cost = max(cost, FINITE_ABSORBER_COST_S)
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
    thickness_m : numpy.ndarray or None
        ``(M, K)`` thicknesses [m] of the junctions with a thickness window, top first;
        ``None`` without thickness variables.
    """

    gaps_eV: np.ndarray  # noqa: N815
    value: np.ndarray
    robust: np.ndarray | None
    mismatch_ratio: np.ndarray
    constraints: np.ndarray
    thickness_m: np.ndarray | None = None

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
    thickness_junctions : numpy.ndarray
        ``(K,)`` indices (0 = top) of the junctions whose absorber thickness is searched,
        in order; empty for a gap-only search.
    thickness_bounds_m : numpy.ndarray
        ``(K, 2)`` their thickness windows [m].

    Notes
    -----
    The search variables ``x`` are the free gaps [eV] followed by ``log10`` of each
    searched thickness [m] (:attr:`var_bounds`); :meth:`split` turns them into gaps and
    thicknesses, :meth:`evaluate_vars` evaluates them.
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
    thickness_junctions: np.ndarray = field(default_factory=lambda: np.zeros(0, dtype=int))
    thickness_bounds_m: np.ndarray = field(default_factory=lambda: np.zeros((0, 2)))

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
    def n_thick(self) -> int:
        """Number of searched thicknesses."""
        return len(self.thickness_junctions)

    @property
    def n_vars(self) -> int:
        """Number of search variables (free gaps, then searched thicknesses)."""
        return self.n_free + self.n_thick

    @property
    def param_names(self) -> list[str]:
        """optuna parameter names: the free gaps (``gap_<k>_eV``, 1 = top), then the
        searched thicknesses (``thickness_<k>_m``, sampled on a log scale)."""
        return [f"gap_{k + 1}_eV" for k in self.free] + [
            f"thickness_{k + 1}_m" for k in self.thickness_junctions
        ]

    @property
    def var_bounds(self) -> np.ndarray:
        """``(n_vars, 2)`` bounds of the search variables: free gaps [eV], then ``log10``
        of the thickness windows [m]."""
        return np.vstack(
            [self.bounds_eV[self.free], np.log10(self.thickness_bounds_m).reshape(-1, 2)]
        )

    def split(self, x: np.ndarray) -> tuple[np.ndarray, np.ndarray | None]:
        """``(M, N)`` gaps [eV] and ``(M, K)`` thicknesses [m] (``None`` for a gap-only
        search) from ``(M, n_vars)`` search variables."""
        x = np.atleast_2d(np.asarray(x, dtype=float))
        gaps = self.full_gaps(x[:, : self.n_free])
        if not self.n_thick:
            return gaps, None
        return gaps, 10.0 ** x[:, self.n_free :]

    def params_from_x(self, x: np.ndarray) -> dict[str, float]:
        """optuna parameters (gaps [eV], thicknesses [m]) of one variable vector."""
        x = np.asarray(x, dtype=float).ravel()
        vals = [float(v) for v in x[: self.n_free]] + [float(10.0**v) for v in x[self.n_free :]]
        return dict(zip(self.param_names, vals, strict=True))

    def x_from_params(self, params: dict) -> np.ndarray:
        """The variable vector of optuna parameters (inverse of :meth:`params_from_x`)."""
        names = self.param_names
        g = [float(params[nm]) for nm in names[: self.n_free]]
        t = [math.log10(float(params[nm])) for nm in names[self.n_free :]]
        return np.array(g + t, dtype=float)

    def thickness_windows_nm(self) -> dict[int, tuple[float, float]]:
        """``{junction (1 = top): (low, high)}`` thickness windows [nm]."""

        def nm(v: float) -> float:  # 12 digits: undo the round-off of nm -> m
            return float(f"{float(v) * 1e9:.12g}")

        return {
            int(k) + 1: (nm(lo), nm(hi))
            for k, (lo, hi) in zip(self.thickness_junctions, self.thickness_bounds_m, strict=True)
        }

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

    def evaluate(
        self,
        gaps_eV: np.ndarray,  # noqa: N803
        *,
        robust: bool | None = None,
        thickness_m: np.ndarray | None = None,
    ) -> Evaluation:
        """Objective and constraints of ``(M, N)`` gaps [eV] in one batch.

        Parameters
        ----------
        gaps_eV : numpy.ndarray
            Gaps [eV], top first (not validated; the search keeps them in the windows).
        robust : bool, optional
            Also evaluate the robustness objective (default: when the problem has one).
            The 2^k corners and the centre of every stack's box go through the
            evaluator in the same batch (the box is over the free gaps; thicknesses are
            held).
        thickness_m : numpy.ndarray, optional
            ``(M, K)`` thicknesses [m] of the searched junctions (default: each window's
            upper end, the thick absorber).
        """
        g = np.atleast_2d(np.asarray(gaps_eV, dtype=float))
        m, n = g.shape
        if robust is None:
            robust = self.robustness_eV is not None
        th = None
        if self.n_thick:
            th = self.thickness_bounds_m[:, 1] if thickness_m is None else thickness_m
            th = np.broadcast_to(np.asarray(th, dtype=float), (m, self.n_thick))
        worst = None
        if robust and self.robustness_eV is not None:
            offs = self.corner_offsets()
            allg = (g[:, None, :] + offs[None, :, :]).reshape(-1, n)
            extra = None if th is None else np.repeat(th, len(offs), axis=0)
            ob = self.objective.evaluate(np.clip(allg, *GAP_RANGE_EV), extra)
            vals = ob.value.reshape(m, len(offs))
            value, jph = vals[:, 0], ob.jph_A_m2.reshape(m, len(offs), n)[:, 0]
            worst = vals.min(axis=1)
        else:
            ob = self.objective.evaluate(g) if th is None else self.objective.evaluate(g, th)
            value, jph = ob.value, ob.jph_A_m2
        mx = jph.max(axis=1)
        with np.errstate(divide="ignore", invalid="ignore"):
            ratio = np.where(mx > 0, jph.min(axis=1) / mx, 0.0)
        cons = [self.spacing_violation(g)]
        if self.min_mismatch_ratio is not None:
            cons.append(self.min_mismatch_ratio - ratio)
        return Evaluation(g, value, worst, ratio, np.stack(cons, axis=1), th)

    def evaluate_vars(self, x: np.ndarray, *, robust: bool | None = None) -> Evaluation:
        """:meth:`evaluate` of ``(M, n_vars)`` search variables (see :meth:`split`)."""
        gaps, th = self.split(x)
        return self.evaluate(gaps, robust=robust, thickness_m=th)

    def corner_offsets(self) -> np.ndarray:
        """Centre, then the 2^k corners of the +/- delta box of the free gaps [eV].

        Returns an array of shape ``(1 + 2^k, N)``.
        """
        d = float(self.robustness_eV or 0.0)
        offs = np.zeros((1 + 2**self.n_free, self.n_junctions))
        for i, signs in enumerate(itertools.product((-1.0, 1.0), repeat=self.n_free)):
            offs[1 + i, self.free] = d * np.asarray(signs)
        return offs

    def full_evaluation(self, gaps_eV, thickness_m=None) -> dict:  # noqa: N803
        """The checked evaluation of one stack, with its loss breakdown: exactly what
        ``gapmatch evaluate --json`` prints for it (``BatchResult.stack(0)``).
        ``thickness_m`` ``(K,)`` [m] sets the searched junctions' thicknesses (default:
        each window's upper end)."""
        gaps = list(map(float, gaps_eV))
        return evaluate(
            gaps, self.connection, losses=True, **self.evaluate_conditions(thickness_m)
        ).stack(0)

    def evaluate_conditions(self, thickness_m=None) -> dict:
        """The :func:`gapmatch.evaluate` keywords of one stack of this problem, with the
        searched thicknesses ``(K,)`` [m] (default: each window's upper end) filled into
        ``thickness_nm``."""
        cond = dict(self.conditions)
        if not self.n_thick:
            return cond
        th = self.thickness_bounds_m[:, 1] if thickness_m is None else thickness_m
        nm = _per_junction_nm(cond.get("thickness_nm"), self.n_junctions)
        nm[self.thickness_junctions] = np.asarray(th, dtype=float).ravel() * 1e9
        cond["thickness_nm"] = [None if not math.isfinite(v) else float(v) for v in nm]
        return cond

    def thick_problem(self) -> SearchProblem:
        """The same problem with every searched thickness held at its window's upper end
        (the thick-absorber reference a thinned optimum is compared with)."""
        if not self.n_thick:
            return self
        cond = self.evaluate_conditions(None)
        probe = np.vstack([self.bounds_eV[:, 0], self.bounds_eV[:, 1]])
        obj = EfficiencyObjective(self.connection, cond, probe_gaps_eV=probe)
        return dataclasses.replace(
            self,
            objective=obj,
            conditions=cond,
            thickness_junctions=np.zeros(0, dtype=int),
            thickness_bounds_m=np.zeros((0, 2)),
        )

    # ---- identity ----------------------------------------------------------------------
    def describe(self) -> dict:
        """JSON-ready definition (stored with the study, compared on resume)."""
        d = {
            "n_junctions": self.n_junctions,
            "connection": self.connection,
            "bounds_eV": self.bounds_eV.round(6).tolist(),
            "fixed": self.fixed.tolist(),
            "min_spacing_eV": self.min_spacing_eV,
            "min_mismatch_ratio": self.min_mismatch_ratio,
            "robustness_eV": self.robustness_eV,
            "objective": self.objective.describe(),
        }
        if self.n_thick:  # (absent otherwise: older studies keep their names)
            d["thickness_windows_nm"] = {
                str(j): [round(lo, 6), round(hi, 6)]
                for j, (lo, hi) in self.thickness_windows_nm().items()
            }
        return d

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
    thickness_windows_nm=None,
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
    thickness_windows_nm : dict, optional
        Search absorber thicknesses with the gaps: ``{junction: (low, high)}`` [nm],
        junction numbered 1 (top) to N (or ``"top"`` / ``"bottom"``), each window inside
        1-1e8 nm with low < high, e.g. ``{1: (100, 2000)}`` thins the top cell. Every
        such junction needs a finite absorber (``absorber`` ``"direct"``,
        ``"indirect"`` or ``"table"``); thicknesses are searched on a log scale, jointly
        with the gaps and under the same constraints (robustness moves the gaps only).
        Efficiency objective only. Motivation: Bremner et al., Solar Energy 135, 750
        (2016), on thinning the top cell of a two-terminal stack to share current.
    **conditions
        Keyword conditions of :func:`gapmatch.evaluate`: ``spectrum``, ``spectrum_file``,
        ``sun_temperature_K`` [K], ``irradiance_W_m2`` [W m^-2], ``concentration``
        [suns], ``temperature_K`` [K], ``ere``, ``dark_current``, ``cells_per_string``,
        and finite absorbers (:data:`ABSORBER_CONDITIONS`): ``absorber``,
        ``thickness_nm`` [nm] (junctions without a thickness window), ``alpha0_per_cm``
        [cm^-1], ``urbach_energy_meV`` [meV], ``alpha_file``, ``light_trapping``,
        ``refractive_index``.

    Returns
    -------
    SearchProblem

    Raises
    ------
    InputError
        Naming the field and the allowed range: junction count, windows, fixed gaps,
        spacing, mismatch ratio, robustness tolerance, thickness windows (reversed,
        outside 1-1e8 nm, junction out of range, or on a step absorber), or a
        window/spacing combination that no ordered stack can satisfy.
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
    twin = _thickness_windows(thickness_windows_nm, n)
    if fixed.all() and not twin:
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
        *ABSORBER_CONDITIONS,
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
    absorber = conditions.get("absorber")
    models = [absorber] * n if absorber is None or isinstance(absorber, str) else list(absorber)
    if len(models) == 1:
        models = models * n
    for j in twin:
        if len(models) == n and models[j - 1] in (None, "step"):
            raise InputError(
                f"thickness_windows_nm[{j}]",
                f"junction {j} has absorber 'step' (no absorption model, so its "
                "thickness does not matter); give it absorber 'direct', 'indirect' or "
                "'table'",
                list(twin[j]),
            )
    check = dict(conditions)
    if twin:
        nm = _per_junction_nm(check.get("thickness_nm"), n)
        for j, (_, hi) in twin.items():
            nm[j - 1] = hi
        check["thickness_nm"] = [None if not math.isfinite(v) else float(v) for v in nm]
    evaluate(probe.tolist(), connection, require_descending=False, **check)
    windows_m = {j - 1: (lo * 1e-9, hi * 1e-9) for j, (lo, hi) in twin.items()}
    if objective is None:
        objective = EfficiencyObjective(
            connection,
            conditions,
            thickness_windows_m=windows_m,
            probe_gaps_eV=np.vstack([win[:, 0], win[:, 1]]),
        )
    elif not isinstance(objective, Objective):
        raise InputError("objective", "must be a gapmatch.search.Objective", type(objective))
    elif twin:
        raise InputError(
            "thickness_windows_nm",
            "applies to the efficiency objective only (leave objective unset)",
            sorted(twin),
        )
    elif objective.extra_variables:
        raise InputError(
            "objective",
            "extra design variables of a custom objective are not searched yet; "
            "absorber thicknesses are searched with thickness_windows_nm (efficiency "
            "objective)",
            sorted(objective.extra_variables),
        )
    tj = np.array(sorted(windows_m), dtype=int)
    tb = np.array([windows_m[k] for k in tj], dtype=float).reshape(-1, 2)
    return SearchProblem(
        n,
        connection,
        win,
        fixed,
        sp,
        min_mismatch_ratio,
        robustness_eV,
        objective,
        conditions,
        tj,
        tb,
    )


def _thickness_windows(value, n: int) -> dict[int, tuple[float, float]]:
    """``{junction (1 = top): (low, high)}`` [nm] from ``thickness_windows_nm``, checked."""
    if value is None:
        return {}
    name = "thickness_windows_nm"
    if isinstance(value, dict):
        pairs = list(value.items())
    else:
        try:
            pairs = [(j, (lo, hi)) for j, lo, hi in value]
        except (TypeError, ValueError):
            raise InputError(
                name,
                "needs a {junction: (low, high)} mapping [nm] or (junction, low, high) triples",
                value,
            ) from None
    out: dict[int, tuple[float, float]] = {}
    for key, w in pairs:
        j = key
        if isinstance(key, str):
            k = key.strip().lower()
            j = 1 if k == "top" else n if k == "bottom" else int(k) if k.isdigit() else None
        if isinstance(j, bool) or not isinstance(j, int | np.integer) or not 1 <= j <= n:
            raise InputError(
                name, f"junction numbers run from 1 (top) to {n} (or 'top', 'bottom')", key
            )
        j = int(j)
        if j in out:
            raise InputError(name, f"gives junction {j} twice", key)
        fld = f"{name}[{j}]"
        try:
            lo, hi = (float(v) for v in w)
        except (TypeError, ValueError):
            raise InputError(fld, "needs a (low, high) pair [nm]", w) from None
        lo = check_range(fld, lo, *THICKNESS_RANGE_NM, unit="nm")
        hi = check_range(fld, hi, *THICKNESS_RANGE_NM, unit="nm")
        if not lo < hi:
            raise InputError(fld, "low must be below high [nm]", [lo, hi])
        out[j] = (lo, hi)
    return dict(sorted(out.items()))

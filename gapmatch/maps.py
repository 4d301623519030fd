"""Efficiency maps over the band gaps of two junctions, and one-dimensional cuts.

A map evaluates a regular grid of gaps for two chosen junctions of a stack (for two
junctions: top x bottom) for several connections in one batched call to the engine. For
stacks of three or more junctions the other gaps are either held fixed or re-optimised
at every grid point (vectorised: a coarse grid over the free gaps, then a batched
pattern search, no Python loop per point).

From a map follow the optimum, the best-partner ridge (for every gap of the first axis,
the second-axis gap that maximises efficiency), the tolerance window (every point
within ``within_pct`` absolute percent of the optimum), the independent-minus-series
difference and the photocurrent mismatch of the series stack.

Grids are stored as ``(ny, nx)`` arrays: rows follow the second axis (``y``, default the
bottom junction), columns the first (``x``, default the top junction), as plotly draws
them. Efficiencies are fractions (0-1) in arrays and percent in frames (``_pct``).

>>> import gapmatch.maps as gmm
>>> m = gmm.compute_map(x_range_eV=(1.5, 1.8), y_range_eV=(0.9, 1.0), step_eV=0.01)
>>> opt = m.optimum("series")
>>> [round(g, 2) for g in opt["gaps_eV"]], round(opt["efficiency_pct"], 1)
([1.63, 0.96], 45.7)

References
----------
.. [1] W. Shockley and H. J. Queisser, J. Appl. Phys. 32, 510 (1961).
.. [2] A. De Vos, J. Phys. D 13, 839 (1980) (detailed balance of tandem stacks).
.. [3] S. P. Bremner, M. Y. Levy and C. B. Honsberg, Prog. Photovolt. 16, 225 (2008)
   (efficiency maps of tandem stacks and their tolerance to gap deviations).
.. [4] R. Hooke and T. A. Jeeves, J. ACM 8, 212 (1961) (pattern search, used here in a
   batched form to re-optimise the free gaps).
"""

from __future__ import annotations

import itertools
import math
from dataclasses import dataclass, field
from typing import TYPE_CHECKING, Any

import numpy as np

from .core.engine import solve_stacks
from .core.registry import CONNECTIONS
from .core.spectra import Spectrum
from .errors import InputError, check_range
from .limits import GAP_RANGE_EV, MAX_JUNCTIONS, MAX_MAP_POINTS, check_cell_conditions, check_gaps
from .model import Illumination
from .results import Conditions
from .units import EV, a_m2_to_ma_cm2

if TYPE_CHECKING:
    import pandas as pd

__all__ = [
    "MAP_CONNECTIONS",
    "MAX_MAP_POINTS",
    "OTHERS_MODES",
    "MapResult",
    "CutResult",
    "ToleranceWindow",
    "grid_axis",
    "compute_map",
    "compute_cut",
]

#: connections a map can be computed for
MAP_CONNECTIONS = tuple(CONNECTIONS)
#: what happens to the junctions that are not on the map's axes
OTHERS_MODES = ("fixed", "optimised")
#: engine evaluations per batch when re-optimising free gaps (memory bound)
_BATCH = 400_000


def grid_axis(lo: float, hi: float, step: float, name: str = "range") -> np.ndarray:
    """Regular grid of gaps from ``lo`` to ``hi`` (inclusive when reachable) [eV].

    Parameters
    ----------
    lo, hi : float
        First and last gap [eV], ``lo < hi``, both within 0.1-5.0 eV.
    step : float
        Spacing [eV], in [0.0005, 1].
    name : str
        Field name used in error messages.

    Returns
    -------
    numpy.ndarray
        ``lo + k * step`` for ``k = 0 .. floor((hi - lo) / step)``, rounded to 1e-9 eV.
    """
    lo = check_range(f"{name}[0]", lo, *GAP_RANGE_EV, unit="eV")
    hi = check_range(f"{name}[1]", hi, *GAP_RANGE_EV, unit="eV")
    step = check_range("step_eV", step, 0.0005, 1.0, unit="eV")
    if hi <= lo:
        raise InputError(name, "needs the first gap below the last one [eV]", [lo, hi])
    n = int(math.floor((hi - lo) / step + 1e-9)) + 1
    if n < 2:
        raise InputError("step_eV", f"must be at most the width of {name} ({hi - lo:g} eV)", step)
    return np.round(lo + step * np.arange(n), 9)


@dataclass(frozen=True)
class ToleranceWindow:
    """The region of a map within ``within_pct`` absolute percent of its optimum.

    Attributes
    ----------
    connection : str
        Connection of the map.
    within_pct : float
        Width of the window [absolute %].
    level_pct : float
        Efficiency at the window's edge [%] (optimum minus ``within_pct``).
    mask : numpy.ndarray
        Boolean ``(ny, nx)`` grid, True inside the window.
    x_range_eV, y_range_eV : tuple of float
        Smallest and largest gap of each axis inside the window [eV].
    y_range_at_opt_x_eV : tuple of float
        Second-axis gaps inside the window at the optimum's first-axis gap [eV].
    x_range_at_opt_y_eV : tuple of float
        First-axis gaps inside the window at the optimum's second-axis gap [eV].
    """

    connection: str
    within_pct: float
    level_pct: float
    mask: np.ndarray
    x_range_eV: tuple[float, float]
    y_range_eV: tuple[float, float]
    y_range_at_opt_x_eV: tuple[float, float]
    x_range_at_opt_y_eV: tuple[float, float]

    @property
    def points(self) -> int:
        """Number of grid points inside the window."""
        return int(self.mask.sum())

    def to_dict(self) -> dict:
        """JSON-ready dictionary (without the mask)."""
        return {
            "connection": self.connection,
            "within_pct": self.within_pct,
            "level_pct": self.level_pct,
            "points": self.points,
            "x_range_eV": list(self.x_range_eV),
            "y_range_eV": list(self.y_range_eV),
            "y_range_at_opt_x_eV": list(self.y_range_at_opt_x_eV),
            "x_range_at_opt_y_eV": list(self.x_range_at_opt_y_eV),
        }


@dataclass
class MapResult:
    """Efficiency over a grid of two junctions' gaps, for one or more connections.

    Attributes
    ----------
    x_eV : numpy.ndarray
        Gaps of the first axis junction [eV], ``(nx,)``.
    y_eV : numpy.ndarray
        Gaps of the second axis junction [eV], ``(ny,)``.
    axes : tuple of int
        Junction numbers on the axes (1 = top), e.g. ``(1, 2)``.
    n_junctions : int
        Junctions per stack.
    others : str
        ``"none"`` (two junctions), ``"fixed"`` or ``"optimised"``.
    base_gaps_eV : numpy.ndarray or None
        The stack whose other gaps are held fixed (or start the optimisation) [eV].
    efficiency : dict
        Connection -> efficiency grid (fraction), ``(ny, nx)``.
    gaps_eV : dict
        Connection -> every junction's gap at every point [eV], ``(ny, nx, N)``
        (differs between connections only when the others are re-optimised).
    jph_mA_cm2 : dict
        Connection -> photocurrent densities [mA cm^-2], ``(ny, nx, N)``.
    conditions : Conditions
        Spectrum and cell conditions.
    spectrum : Spectrum
        The spectrum object (not serialised).
    settings : dict
        Grid settings for the summary.
    """

    x_eV: np.ndarray
    y_eV: np.ndarray
    axes: tuple[int, int]
    n_junctions: int
    others: str
    base_gaps_eV: np.ndarray | None
    efficiency: dict[str, np.ndarray]
    gaps_eV: dict[str, np.ndarray]
    jph_mA_cm2: dict[str, np.ndarray]
    conditions: Conditions
    spectrum: Spectrum
    settings: dict = field(default_factory=dict)

    # ---- basic properties ----------------------------------------------------------------
    @property
    def connections(self) -> tuple[str, ...]:
        """Connections computed."""
        return tuple(self.efficiency)

    @property
    def shape(self) -> tuple[int, int]:
        """``(ny, nx)``."""
        return (self.y_eV.size, self.x_eV.size)

    def axis_label(self, k: int) -> str:
        """Words for axis ``k`` (0 = x, 1 = y), e.g. ``"top gap"``."""
        j = self.axes[k]
        if j == 1:
            return "top gap"
        if j == self.n_junctions:
            return "bottom gap"
        return f"junction {j} gap"

    @property
    def descending(self) -> np.ndarray:
        """Boolean ``(ny, nx)``: True where the first axis junction's gap is larger than
        the second's when the first lies above it (the physically ordered half)."""
        xx, yy = np.meshgrid(self.x_eV, self.y_eV)
        return xx > yy if self.axes[0] < self.axes[1] else yy > xx

    def _check_connection(self, connection: str) -> np.ndarray:
        if connection not in self.efficiency:
            raise InputError(
                "connection", f"this map has {', '.join(self.connections)} only", connection
            )
        return self.efficiency[connection]

    # ---- derived quantities -------------------------------------------------------------
    def optimum(self, connection: str) -> dict:
        """Most efficient grid point.

        Returns
        -------
        dict
            ``connection``, ``x_eV``, ``y_eV``, ``gaps_eV`` (whole stack, top first),
            ``efficiency`` (fraction), ``efficiency_pct``, ``index`` ``(iy, ix)``.
        """
        eff = self._check_connection(connection)
        iy, ix = np.unravel_index(int(np.argmax(eff)), eff.shape)
        return {
            "connection": connection,
            "x_eV": float(self.x_eV[ix]),
            "y_eV": float(self.y_eV[iy]),
            "gaps_eV": [float(g) for g in self.gaps_eV[connection][iy, ix]],
            "efficiency": float(eff[iy, ix]),
            "efficiency_pct": float(100 * eff[iy, ix]),
            "index": (int(iy), int(ix)),
        }

    def ridge(self, connection: str, descending_only: bool = True) -> pd.DataFrame:
        """Best-partner ridge: for every first-axis gap, the second-axis gap of highest
        efficiency on the grid.

        Parameters
        ----------
        connection : str
            A connection of the map.
        descending_only : bool
            Consider only partners in physical order (for a top x bottom map: bottom gaps
            below the top gap); first-axis gaps without any such partner are dropped.

        Returns
        -------
        pandas.DataFrame
            ``x_eV``, ``best_y_eV``, ``efficiency_pct`` (one row per grid column).
        """
        eff = self._check_connection(connection)
        if descending_only:
            eff = np.where(self.descending, eff, -np.inf)
        iy = np.argmax(eff, axis=0)
        best = eff[iy, np.arange(eff.shape[1])]
        keep = np.isfinite(best)
        import pandas as pd

        return pd.DataFrame(
            {
                "x_eV": self.x_eV[keep],
                "best_y_eV": self.y_eV[iy[keep]],
                "efficiency_pct": 100 * best[keep],
            }
        )

    def tolerance_window(self, connection: str, within_pct: float = 1.0) -> ToleranceWindow:
        """Grid points within ``within_pct`` absolute percent of the optimum.

        Parameters
        ----------
        connection : str
            A connection of the map.
        within_pct : float
            Window width [absolute %], in (0, 100].

        Returns
        -------
        ToleranceWindow
        """
        within_pct = check_range(
            "within_pct", within_pct, 0.0, 100.0, low_inclusive=False, unit="%"
        )
        eff = 100 * self._check_connection(connection)
        opt = self.optimum(connection)
        level = opt["efficiency_pct"] - within_pct
        mask = eff >= level
        iy, ix = opt["index"]
        cols = np.flatnonzero(mask.any(axis=0))
        rows = np.flatnonzero(mask.any(axis=1))
        at_x = np.flatnonzero(mask[:, ix])
        at_y = np.flatnonzero(mask[iy, :])

        def rng(values, idx):
            return (float(values[idx.min()]), float(values[idx.max()]))

        return ToleranceWindow(
            connection,
            within_pct,
            float(level),
            mask,
            rng(self.x_eV, cols),
            rng(self.y_eV, rows),
            rng(self.y_eV, at_x),
            rng(self.x_eV, at_y),
        )

    def difference(self, a: str = "independent", b: str = "series") -> np.ndarray:
        """Efficiency of connection ``a`` minus that of ``b`` [absolute %], ``(ny, nx)``."""
        return 100 * (self._check_connection(a) - self._check_connection(b))

    def mismatch_ratio(self, connection: str = "series") -> np.ndarray:
        """Smallest over largest photocurrent of the stack at every point, ``(ny, nx)``
        (1 = current matched)."""
        self._check_connection(connection)
        j = self.jph_mA_cm2[connection]
        mx = j.max(axis=2)
        with np.errstate(divide="ignore", invalid="ignore"):
            return np.where(mx > 0, j.min(axis=2) / mx, 0.0)

    def current_excess_mA_cm2(self, connection: str = "series") -> np.ndarray:
        """Photocurrent of the first axis junction minus the second's [mA cm^-2]."""
        self._check_connection(connection)
        j = self.jph_mA_cm2[connection]
        return j[:, :, self.axes[0] - 1] - j[:, :, self.axes[1] - 1]

    def matched_current_line(self, connection: str = "series") -> tuple[np.ndarray, np.ndarray]:
        """Current-matched curve of the two axis junctions.

        Returns
        -------
        tuple of numpy.ndarray
            ``(x_eV, y_eV)``: for every first-axis gap [eV], the second-axis gap [eV]
            where the two axis junctions' photocurrents are equal (linear interpolation
            between grid points), NaN where there is none.
        """
        ex = self.current_excess_mA_cm2(connection)
        ys = np.full(self.x_eV.size, np.nan)
        s = np.sign(ex)
        change = (s[:-1] * s[1:] <= 0) & (s[:-1] != s[1:]) & self.descending[:-1]
        for_cols = change.any(axis=0)
        iy = np.argmax(change, axis=0)
        cols = np.flatnonzero(for_cols)
        e0, e1 = ex[iy[cols], cols], ex[iy[cols] + 1, cols]
        f = e0 / (e0 - e1)
        ys[cols] = self.y_eV[iy[cols]] + f * (self.y_eV[iy[cols] + 1] - self.y_eV[iy[cols]])
        return self.x_eV, ys

    def value_at(self, connection: str, x_eV: float, y_eV: float) -> float:
        """Efficiency (fraction) at the grid point nearest to ``(x_eV, y_eV)``."""
        eff = self._check_connection(connection)
        ix = int(np.argmin(np.abs(self.x_eV - x_eV)))
        iy = int(np.argmin(np.abs(self.y_eV - y_eV)))
        return float(eff[iy, ix])

    # ---- export --------------------------------------------------------------------------
    def to_frame(self) -> pd.DataFrame:
        """Tidy grid data: one row per grid point.

        Returns
        -------
        pandas.DataFrame
            The columns of :meth:`columns`, in that order.
        """
        import pandas as pd

        return pd.DataFrame(self.columns())

    def columns(self) -> dict[str, np.ndarray]:
        """The columns of :meth:`to_frame` as plain arrays (no pandas needed).

        Returns
        -------
        dict of str to numpy.ndarray
            One 1-D array per column, one row per grid point:
            ``gap_<i>_eV`` and ``gap_<j>_eV`` for the axis junctions ``i, j`` (1 = top),
            ``gaps_in_physical_order`` (True where the upper of the two axis junctions has
            the larger gap), then per connection
            ``efficiency_<connection>_pct``, ``mismatch_ratio_<connection>``, and for
            re-optimised maps the free gaps ``gap_<k>_<connection>_eV``; with both
            series and independent maps ``difference_independent_minus_series_pct``.
        """
        xx, yy = np.meshgrid(self.x_eV, self.y_eV)
        i, j = self.axes
        cols: dict[str, Any] = {
            f"gap_{i}_eV": xx.ravel(),
            f"gap_{j}_eV": yy.ravel(),
            "gaps_in_physical_order": self.descending.ravel(),
        }
        if self.others == "fixed":
            for k in range(self.n_junctions):
                if k + 1 not in self.axes:
                    cols[f"gap_{k + 1}_eV"] = np.full(xx.size, float(self.base_gaps_eV[k]))
        for c in self.connections:
            cols[f"efficiency_{c.replace('-', '_')}_pct"] = 100 * self.efficiency[c].ravel()
            cols[f"mismatch_ratio_{c.replace('-', '_')}"] = self.mismatch_ratio(c).ravel()
            if self.others == "optimised":
                for k in range(self.n_junctions):
                    if k + 1 not in self.axes:
                        cols[f"gap_{k + 1}_{c.replace('-', '_')}_eV"] = self.gaps_eV[c][
                            :, :, k
                        ].ravel()
        if "series" in self.efficiency and "independent" in self.efficiency:
            cols["difference_independent_minus_series_pct"] = self.difference().ravel()
        return cols

    def summary(self, within_pct: float = 1.0) -> dict:
        """JSON-ready summary: grid settings, conditions and per connection the optimum
        and its tolerance window."""
        out: dict[str, Any] = {
            "axes_junctions": list(self.axes),
            "axis_labels": [self.axis_label(0), self.axis_label(1)],
            "n_junctions": self.n_junctions,
            "others": self.others,
            "base_gaps_eV": None
            if self.base_gaps_eV is None
            else [float(g) for g in self.base_gaps_eV],
            "grid": {
                "x_min_eV": float(self.x_eV[0]),
                "x_max_eV": float(self.x_eV[-1]),
                "y_min_eV": float(self.y_eV[0]),
                "y_max_eV": float(self.y_eV[-1]),
                "nx": int(self.x_eV.size),
                "ny": int(self.y_eV.size),
                **{k: v for k, v in self.settings.items() if k.endswith("_eV")},
            },
            "conditions": self.conditions.to_dict(),
            "connections": {},
        }
        for c in self.connections:
            opt = self.optimum(c)
            opt.pop("index")
            out["connections"][c] = {
                "optimum": opt,
                "tolerance_window": self.tolerance_window(c, within_pct).to_dict(),
            }
        return out


@dataclass
class CutResult:
    """Efficiency along one junction's gap with the others held fixed.

    Attributes
    ----------
    junction : int
        The varied junction (1 = top).
    values_eV : numpy.ndarray
        Its gaps [eV].
    base_gaps_eV : numpy.ndarray
        The stack (the varied junction's entry is ignored) [eV].
    efficiency : dict
        Connection -> efficiency (fraction) along the cut.
    """

    junction: int
    values_eV: np.ndarray
    base_gaps_eV: np.ndarray
    efficiency: dict[str, np.ndarray]

    def optimum(self, connection: str) -> tuple[float, float]:
        """``(gap [eV], efficiency [%])`` of the best point of the cut."""
        e = self.efficiency[connection]
        k = int(np.argmax(e))
        return float(self.values_eV[k]), float(100 * e[k])

    def to_frame(self) -> pd.DataFrame:
        """One row per point: ``gap_<junction>_eV``, the fixed ``gap_<k>_eV`` and
        ``efficiency_<connection>_pct``."""
        cols: dict[str, Any] = {f"gap_{self.junction}_eV": self.values_eV}
        for k, g in enumerate(self.base_gaps_eV):
            if k + 1 != self.junction:
                cols[f"gap_{k + 1}_eV"] = float(g)
        for c, e in self.efficiency.items():
            cols[f"efficiency_{c.replace('-', '_')}_pct"] = 100 * e
        import pandas as pd

        return pd.DataFrame(cols)


# ---- computation ---------------------------------------------------------------------------
_SPECTRUM_DEFAULTS = {
    "spectrum_file": None,
    "sun_temperature_K": 6000.0,
    "irradiance_W_m2": None,
    "concentration": 1.0,
}


def _conditions(n: int, spectrum, temperature_K, ere, dark_current, spectrum_kw):
    t, e = check_cell_conditions(n, temperature_K, ere, dark_current)
    if isinstance(spectrum, Illumination):
        illum = spectrum
        changed = {k: v for k, v in spectrum_kw.items() if v != _SPECTRUM_DEFAULTS.get(k)}
        if changed:
            k = next(iter(changed))
            raise InputError(k, "is part of the Illumination given as spectrum", changed[k])
    else:
        illum = Illumination.from_options(spectrum, **spectrum_kw)
    spec = illum.spectrum
    cond = Conditions(
        spectrum=spec.describe(),
        incident_W_m2=spec.total_irradiance_W_m2,
        temperature_K=t,
        ere=e,
        dark_current=dark_current,
    )
    return spec, t, e, cond


def _check_connections(connections) -> tuple[str, ...]:
    if isinstance(connections, str):
        connections = (connections,)
    conns = tuple(connections)
    if not conns:
        raise InputError("connections", "needs at least one of " + ", ".join(MAP_CONNECTIONS))
    for c in conns:
        if c not in MAP_CONNECTIONS:
            raise InputError("connections", f"each must be one of {', '.join(MAP_CONNECTIONS)}", c)
    return tuple(dict.fromkeys(conns))


def _efficiency(gaps_eV: np.ndarray, spec, conn, t, e, dark):
    """Efficiency (fraction) and photocurrents [mA cm^-2] of a batch, unchecked."""
    sol = solve_stacks(gaps_eV * EV, spec, conn, temperature_K=t, ere=e, dark_current=dark)
    return sol.op.p_mpp / sol.incident_W_m2, a_m2_to_ma_cm2(sol.jph)


def _efficiency_chunk(gaps_eV: np.ndarray, *, spec, conn, t, e, dark):
    """:func:`_efficiency` of one chunk of grid points, run on a cluster worker."""
    return _efficiency(gaps_eV, spec, conn, t, e, dark)


def _optimise_free(
    gaps: np.ndarray,
    free: list[int],
    bounds: tuple[float, float],
    spec,
    conn,
    t,
    e,
    dark,
    *,
    budget: int = 4_000_000,
    xtol_eV: float = 2e-4,
) -> np.ndarray:
    """Re-optimise the ``free`` gaps of every row of ``gaps`` (``(P, N)`` eV), batched.

    A coarse grid over the free gaps picks a start for every row; a batched pattern
    search (all rows at once, step halved until ``xtol_eV``) then refines it. Returns
    the optimised ``(P, N)`` gaps.
    """
    p, _ = gaps.shape
    k = len(free)
    lo, hi = bounds
    per_dim = int(np.clip(round((budget / max(p, 1)) ** (1.0 / k)), 5, 41))
    coarse = np.linspace(lo, hi, per_dim)
    cand = np.array(list(itertools.product(coarse, repeat=k)))  # (C, k)
    c = cand.shape[0]
    best = gaps.copy()
    best_eff = np.full(p, -np.inf)
    rows_per = max(1, _BATCH // c)
    for s in range(0, p, rows_per):
        sl = slice(s, min(p, s + rows_per))
        block = np.repeat(gaps[sl], c, axis=0)
        block[:, free] = np.tile(cand, (sl.stop - sl.start, 1))
        eff, _ = _efficiency(block, spec, conn, t, e, dark)
        eff = eff.reshape(-1, c)
        arg = np.argmax(eff, axis=1)
        best[sl.start : sl.stop, free] = cand[arg]
        best_eff[sl] = eff[np.arange(eff.shape[0]), arg]
    # pattern search: full 3^k neighbourhood for k <= 3, axis moves beyond
    if k <= 3:
        moves = np.array(list(itertools.product((-1.0, 0.0, 1.0), repeat=k)))
    else:
        moves = np.vstack([np.zeros(k), np.eye(k), -np.eye(k)])
    moves = moves[np.any(moves != 0, axis=1)]
    h = (coarse[1] - coarse[0]) / 2
    while h >= xtol_eV:
        for _ in range(3):  # a few moves per step size
            trial = np.repeat(best, len(moves), axis=0)
            trial[:, free] += np.tile(moves * h, (p, 1))
            trial[:, free] = np.clip(trial[:, free], GAP_RANGE_EV[0], GAP_RANGE_EV[1])
            eff = np.empty(trial.shape[0])
            for s in range(0, trial.shape[0], _BATCH):
                eff[s : s + _BATCH], _ = _efficiency(trial[s : s + _BATCH], spec, conn, t, e, dark)
            eff = eff.reshape(p, len(moves))
            arg = np.argmax(eff, axis=1)
            top = eff[np.arange(p), arg]
            better = top > best_eff
            if not better.any():
                break
            best[better] = trial.reshape(p, len(moves), -1)[better, arg[better]]
            best_eff[better] = top[better]
        h /= 2
    return best


def compute_map(
    connections=("series", "independent"),
    *,
    x_range_eV: tuple[float, float] = (0.5, 2.5),
    y_range_eV: tuple[float, float] | None = None,
    step_eV: float = 0.01,
    stack_eV=None,
    axes: tuple[int, int] | None = None,
    others: str = "fixed",
    free_range_eV: tuple[float, float] = (0.3, 3.0),
    spectrum: str | Spectrum | Illumination = "AM1.5G",
    spectrum_file=None,
    sun_temperature_K: float = 6000.0,
    irradiance_W_m2: float | None = None,
    concentration: float = 1.0,
    temperature_K=300.0,
    ere=1.0,
    dark_current: str = "boltzmann",
    progress=None,
    client=None,
    chunk_points: int = 16_384,
) -> MapResult:
    """Efficiency map over the gaps of two junctions, for several connections at once.

    Parameters
    ----------
    connections : sequence of str
        Any of ``"series"``, ``"independent"``, ``"voltage-matched"`` (default the first
        two). Voltage matching tries every small cell ratio at every point: about 400 times
        slower than series (a minute for 201 x 201 points), and at most 3 junctions.
    x_range_eV, y_range_eV : tuple of float
        First and last gap of each axis [eV], within 0.1-5.0; ``y_range_eV`` defaults
        to ``x_range_eV``.
    step_eV : float
        Grid spacing of both axes [eV], in [0.0005, 1].
    stack_eV : sequence of float, optional
        For three or more junctions: a whole stack (top first) [eV] whose other gaps
        are held fixed (``others="fixed"``); with ``others="optimised"`` its length sets
        the number of junctions. Omit for a two-junction top x bottom map.
    axes : tuple of int, optional
        Junction numbers (1 = top) on the x and y axes, distinct; default top and
        bottom.
    others : {"fixed", "optimised"}
        Hold the other junctions' gaps at ``stack_eV`` or re-optimise them at every
        grid point (within ``free_range_eV``).
    free_range_eV : tuple of float
        Search interval of re-optimised gaps [eV].
    spectrum, spectrum_file, sun_temperature_K, irradiance_W_m2, concentration,
    temperature_K, ere, dark_current
        As for :func:`gapmatch.evaluate`.
    progress : callable, optional
        Called with a short message as each connection starts.
    client : distributed.Client, optional
        Evaluate the grid on a Dask cluster (see :mod:`gapmatch.cluster`), in chunks of
        ``chunk_points`` points, the spectrum scattered to the workers once. The numbers
        are bit-identical to the single-process map. With ``others="optimised"`` the
        free gaps are re-optimised here and only the evaluation is distributed.
    chunk_points : int
        Grid points per cluster task.

    Returns
    -------
    MapResult

    Raises
    ------
    InputError
        For invalid ranges, steps, axes, modes or conditions, or more than
        ``MAX_MAP_POINTS`` points.

    Notes
    -----
    Every grid point is evaluated, including those whose gaps are not in physical
    order (``MapResult.descending`` is False there); with step absorptance a junction
    below a smaller gap then receives no light, so these points show the efficiency of
    the remaining junctions.

    References
    ----------
    .. [1] S. P. Bremner, M. Y. Levy and C. B. Honsberg, Prog. Photovolt. 16, 225 (2008).
    """
    conns = _check_connections(connections)
    if others not in OTHERS_MODES:
        raise InputError("others", f"must be one of {', '.join(OTHERS_MODES)}", others)
    x = grid_axis(*_pair("x_range_eV", x_range_eV), step_eV, "x_range_eV")
    y = grid_axis(
        *_pair("y_range_eV", y_range_eV if y_range_eV is not None else x_range_eV),
        step_eV,
        "y_range_eV",
    )
    if x.size * y.size > MAX_MAP_POINTS:
        raise InputError(
            "step_eV",
            f"gives {x.size} x {y.size} points; at most "
            f"{MAX_MAP_POINTS:,} per map (use a larger step or smaller ranges)",
            step_eV,
        )
    if stack_eV is None:
        n = 2
        base = None
    else:
        base = check_gaps(stack_eV, require_descending=False)
        if base.shape[0] != 1:
            raise InputError("stack_eV", "needs one stack (a list of gaps, top first)", stack_eV)
        base = base[0]
        n = base.size
        if not 2 <= n <= MAX_JUNCTIONS:
            raise InputError("stack_eV", f"needs 2 to {MAX_JUNCTIONS} gaps", list(base))
    if "voltage-matched" in conns and n > 3:
        raise InputError(
            "connections",
            "voltage-matched maps need at most 3 junctions "
            "(the cell ratio is chosen automatically)",
            list(base),
        )
    if axes is None:
        axes = (1, n)
    try:
        axes = (int(axes[0]), int(axes[1]))
    except (TypeError, ValueError, IndexError):
        raise InputError("axes", "needs two junction numbers (1 = top)", axes) from None
    if axes[0] == axes[1] or not all(1 <= a <= n for a in axes):
        raise InputError("axes", f"needs two different junction numbers in [1, {n}]", axes)
    mode = "none" if n == 2 else others
    if mode == "optimised":
        fr = _pair("free_range_eV", free_range_eV)
        check_range("free_range_eV[0]", fr[0], *GAP_RANGE_EV, unit="eV")
        check_range("free_range_eV[1]", fr[1], *GAP_RANGE_EV, unit="eV")
        if fr[1] <= fr[0]:
            raise InputError("free_range_eV", "needs the first gap below the last", list(fr))
    spec, t, e, cond = _conditions(
        n,
        spectrum,
        temperature_K,
        ere,
        dark_current,
        dict(
            spectrum_file=spectrum_file,
            sun_temperature_K=sun_temperature_K,
            irradiance_W_m2=irradiance_W_m2,
            concentration=concentration,
        ),
    )
    xx, yy = np.meshgrid(x, y)
    pts = np.empty((xx.size, n))
    if base is not None:
        pts[:] = base
    pts[:, axes[0] - 1] = xx.ravel()
    pts[:, axes[1] - 1] = yy.ravel()
    free = [k for k in range(n) if k + 1 not in axes]
    eff_d, gaps_d, jph_d = {}, {}, {}
    for c in conns:
        if progress is not None:
            progress(f"map: {c} ({x.size} x {y.size} points)")
        g = pts
        if mode == "optimised" and free:
            g = _optimise_free(pts, free, fr, spec, c, t, e, dark_current)
        if client is None:
            eff, jph = _efficiency(g, spec, c, t, e, dark_current)
        else:
            from .cluster import map_chunks

            n_chunks = max(1, -(-g.shape[0] // max(1, int(chunk_points))))
            parts = map_chunks(
                _efficiency_chunk,
                np.array_split(g, n_chunks),
                client=client,
                shared=dict(spec=spec, conn=c, t=t, e=e, dark=dark_current),
                desc=f"map {c}",
            )
            eff = np.concatenate([p[0] for p in parts])
            jph = np.concatenate([p[1] for p in parts])
        eff_d[c] = eff.reshape(xx.shape)
        gaps_d[c] = g.reshape(*xx.shape, n)
        jph_d[c] = jph.reshape(*xx.shape, n)
    settings = {"step_eV": float(step_eV)}
    if mode == "optimised":
        settings["free_range_eV"] = [float(v) for v in free_range_eV]
    return MapResult(x, y, axes, n, mode, base, eff_d, gaps_d, jph_d, cond, spec, settings)


def _pair(name: str, value) -> tuple[float, float]:
    try:
        a, b = value
        return float(a), float(b)
    except (TypeError, ValueError):
        raise InputError(name, "needs two gaps [first, last] in eV", value) from None


def compute_cut(
    base_gaps_eV,
    junction: int = 1,
    values_eV=None,
    connections=("series", "independent"),
    *,
    spectrum: str | Spectrum | Illumination = "AM1.5G",
    temperature_K=300.0,
    ere=1.0,
    dark_current: str = "boltzmann",
    **spectrum_kw,
) -> CutResult:
    """One-dimensional cut: efficiency versus one junction's gap, the others fixed.

    Parameters
    ----------
    base_gaps_eV : sequence of float
        The stack, top first [eV]; the varied junction's entry is replaced.
    junction : int
        Varied junction (1 = top).
    values_eV : array_like, optional
        Gaps of the varied junction [eV], 0.1-5.0; default 0.5-2.5 eV in 0.005 eV.
    connections : sequence of str
        Connections to evaluate.
    spectrum, temperature_K, ere, dark_current, **spectrum_kw
        As for :func:`gapmatch.evaluate`.

    Returns
    -------
    CutResult
    """
    conns = _check_connections(connections)
    base = check_gaps(base_gaps_eV, require_descending=False)
    if base.shape[0] != 1:
        raise InputError("base_gaps_eV", "needs one stack", base_gaps_eV)
    base = base[0]
    n = base.size
    if not 1 <= int(junction) <= n:
        raise InputError("junction", f"must be a junction number in [1, {n}]", junction)
    junction = int(junction)
    vals = (
        np.round(np.arange(0.5, 2.5 + 1e-9, 0.005), 9)
        if values_eV is None
        else check_gaps(np.asarray(values_eV, dtype=float)[:, None])[:, 0]
    )
    spec, t, e, _ = _conditions(n, spectrum, temperature_K, ere, dark_current, spectrum_kw)
    g = np.tile(base, (vals.size, 1))
    g[:, junction - 1] = vals
    effs = {c: _efficiency(g, spec, c, t, e, dark_current)[0] for c in conns}
    return CutResult(junction, vals, base, effs)

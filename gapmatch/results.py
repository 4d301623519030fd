"""User-facing result objects of an evaluation.

:class:`BatchResult` holds the SI arrays of a batch of stacks and converts them to the
units people read (eV, mA cm^-2, %) at the edge: :meth:`BatchResult.to_frame` gives one
row per stack, :meth:`BatchResult.junction_frame` one row per junction, and
:meth:`BatchResult.stack` one JSON-ready dictionary per stack.

Column and key names carry their unit as a suffix: ``_eV``, ``_V``, ``_mA_cm2``,
``_W_m2``, ``_pct``; ``efficiency`` and ``ff`` are fractions (0-1).
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import TYPE_CHECKING, Any

import numpy as np

from .core.engine import StackSolution
from .core.registry import connection_model
from .units import EV, K_B, Q, a_m2_to_ma_cm2

if TYPE_CHECKING:  # pragma: no cover
    import pandas as pd

    from .model import CellConditions, Illumination, IlluminationSeries, Stack

__all__ = [
    "BOLTZMANN_MARGIN_KT",
    "Conditions",
    "BatchResult",
    "LossTable",
    "ThicknessSweep",
    "SeriesResult",
]

#: smallest E_g - qV_oc [kT] at which the Boltzmann dark current is trusted: the
#: Boltzmann and Bose-Einstein occupations of a photon at the gap differ by a factor
#: 1 - exp(-(E_g - qV)/kT), 5 % at 3 kT (common practice, no source)
BOLTZMANN_MARGIN_KT = 3.0


@dataclass(frozen=True)
class Conditions:
    """Conditions a batch was evaluated under (for reports and reproducibility).

    Attributes
    ----------
    spectrum : str
        Spectrum description (name, integral [W m^-2], concentration).
    incident_W_m2 : float
        Incident power density [W m^-2] that efficiencies divide by.
    temperature_K : Any
        Cell temperature [K] (scalar or per junction).
    ere : Any
        External radiative efficiency (scalar or per junction).
    dark_current : str
        ``"boltzmann"`` or ``"bose-einstein"``.
    emission : str
        Emission geometry in words.
    physics : dict or None
        The opt-in non-ideal physics as given (absorbers, thicknesses, coupling, gap
        temperature model, collection, series resistance); ``None`` for the ideal limit.
    """

    spectrum: str
    incident_W_m2: float
    temperature_K: Any = 300.0
    ere: Any = 1.0
    dark_current: str = "boltzmann"
    emission: str = "front surface only, into a hemisphere, refractive index 1"
    physics: dict | None = None  #: opt-in non-ideal physics (None: the ideal limit)

    def to_dict(self) -> dict:
        """JSON-ready dictionary."""

        def conv(v):
            a = np.asarray(v)
            return a.tolist() if a.ndim else float(a)

        return {
            "spectrum": self.spectrum,
            "incident_W_m2": self.incident_W_m2,
            "temperature_K": conv(self.temperature_K),
            "ere": conv(self.ere),
            "dark_current": self.dark_current,
            "emission": self.emission,
        } | ({} if self.physics is None else {"physics": self.physics})


@dataclass
class LossTable:
    """Loss breakdown of a batch [W m^-2] (see :mod:`gapmatch.core.losses` for the terms).

    Attributes
    ----------
    breakdown : gapmatch.core.losses.LossBreakdown
        The SI arrays.
    gaps_eV : numpy.ndarray
        Gaps of the stacks as given [eV], ``(M, N)``.
    """

    breakdown: Any
    gaps_eV: np.ndarray

    @property
    def terms(self) -> tuple[str, ...]:
        """Term names in display order (``output`` last)."""
        return self.breakdown.terms

    def totals(self) -> dict:
        """Stack totals per term [W m^-2], ``(M,)`` arrays."""
        return self.breakdown.totals()

    def closure_error(self) -> np.ndarray:
        """Relative difference between the incident power and the sum of all terms."""
        return self.breakdown.closure_error()

    def to_frame(self) -> pd.DataFrame:
        """One row per stack: ``gap_i_eV``, ``<term>_W_m2`` for every term (stack totals,

        ``output_W_m2`` last but one), ``incident_W_m2`` and ``closure_rel`` (relative
        closure error)."""
        import pandas as pd

        cols: dict[str, Any] = {}
        for i in range(self.gaps_eV.shape[1]):
            cols[f"gap_{i + 1}_eV"] = self.gaps_eV[:, i]
        for k, v in self.totals().items():
            cols[f"{k}_W_m2"] = v
        cols["incident_W_m2"] = self.breakdown.incident_W_m2
        cols["closure_rel"] = self.closure_error()
        return pd.DataFrame(cols)

    def junction_frame(self) -> pd.DataFrame:
        """One row per junction: ``stack``, ``junction`` (1 = top), ``gap_eV`` and

        ``<term>_W_m2`` for every per-junction term, ``output_W_m2`` last."""
        import pandas as pd

        b = self.breakdown
        m, n = self.gaps_eV.shape
        cols: dict[str, Any] = {
            "stack": np.repeat(np.arange(m), n),
            "junction": np.tile(np.arange(1, n + 1), m),
            "gap_eV": self.gaps_eV.ravel(),
        }
        for k, v in b.junction.items():
            cols[f"{k}_W_m2"] = v.ravel()
        cols["output_W_m2"] = b.junction_output_W_m2.ravel()
        return pd.DataFrame(cols)

    def stack(self, i: int = 0) -> dict:
        """JSON-ready breakdown of stack ``i`` [W m^-2]: ``incident``, every term's stack
        total (``output`` included) and ``junctions`` (per-junction terms, top first;
        stack-level terms are not repeated there). Every number is in W m^-2; the
        relative closure error is :meth:`closure_error` (``loss_closure_rel`` beside
        ``losses_W_m2`` in :meth:`BatchResult.stack`)."""
        b = self.breakdown
        out: dict[str, Any] = {"incident": b.incident_W_m2}
        for k, v in self.totals().items():
            out[k] = float(v[i])
        out["junctions"] = [
            {
                "junction": k + 1,
                **{t: float(v[i, k]) for t, v in b.junction.items()},
                "output": float(b.junction_output_W_m2[i, k]),
            }
            for k in range(self.gaps_eV.shape[1])
        ]
        return out


#: readable labels of the loss terms, in display order (tables, figures)
LOSS_LABELS = {
    "below_gap": "below-gap transmission",
    "incomplete_absorption": "incomplete absorption",
    "thermalisation": "thermalisation",
    "incomplete_collection": "incomplete collection",
    "emission": "emission",
    "nonradiative": "non-radiative recombination",
    "carnot": "Carnot",
    "boltzmann": "Boltzmann (etendue)",
    "voltage_radiative": "voltage, radiative",
    "voltage_nonradiative": "voltage, non-radiative",
    "voltage_mpp": "voltage, V_oc to V_mpp",
    "mismatch": "current mismatch (vs each junction at its own MPP)",
    "series_resistance": "series resistance",
    "luminescent_transfer": "luminescent transfer",
    "output": "delivered power",
}


def _num(x: float) -> float | None:
    x = float(x)
    return None if math.isnan(x) else x


@dataclass
class BatchResult:
    """Detailed-balance evaluation of ``M`` stacks of ``N`` junctions.

    Attributes
    ----------
    connection : str
        ``"series"``, ``"independent"`` or ``"voltage-matched"``.
    solution : StackSolution
        The raw SI arrays (see :class:`gapmatch.core.engine.StackSolution`).
    conditions : Conditions
        What the batch was evaluated under, in words and numbers (for JSON and reports).
    input_gaps_eV : numpy.ndarray, optional
        The gaps as given [eV], ``(M, N)`` (with a gap temperature model: at its
        reference temperature).
    stack_model : Stack, optional
        The stack it was solved for (connection, cells per string, non-ideal physics).
    illumination : Illumination, optional
        The incident light.
    cell : CellConditions, optional
        Cell temperature, ERE and dark-current form.

    Notes
    -----
    For independent connection the stack has no single pair of terminals: the stack's
    V_oc, J_sc, V_mpp and J_mpp are NaN in arrays and frames and ``null`` in JSON, and
    ``ff`` is ``P_mpp / sum_i V_oc,i J_sc,i``.
    """

    connection: str
    solution: StackSolution
    conditions: Conditions
    input_gaps_eV: np.ndarray | None = None
    stack_model: Stack | None = None
    illumination: Illumination | None = None
    cell: CellConditions | None = None

    # ---- arrays (SI unless the name says otherwise) -----------------------------------
    def __len__(self) -> int:
        return self.solution.gaps_J.shape[0]

    @property
    def n_junctions(self) -> int:
        """Junctions per stack."""
        return self.solution.gaps_J.shape[1]

    @property
    def gaps_eV(self) -> np.ndarray:
        """Band gaps [eV], ``(M, N)``, top junction first."""
        if self.input_gaps_eV is not None:
            return self.input_gaps_eV
        return self.solution.gaps_J / EV

    @property
    def pmpp_W_m2(self) -> np.ndarray:
        """Power density at maximum power [W m^-2], ``(M,)``."""
        return self.solution.op.p_mpp

    @property
    def efficiency(self) -> np.ndarray:
        """Power conversion efficiency (fraction 0-1), ``(M,)``."""
        return self.solution.op.p_mpp / self.solution.incident_W_m2

    @property
    def ff(self) -> np.ndarray:
        """Fill factor (fraction), ``(M,)``."""
        op = self.solution.op
        if not connection_model(self.connection).has_stack_terminals:
            denom = (self.solution.voc_junction * self.solution.jph).sum(axis=1)
        else:
            denom = op.voc * op.jsc
        with np.errstate(divide="ignore", invalid="ignore"):
            return np.where(denom > 0, op.p_mpp / denom, 0.0)

    @property
    def mismatch_ratio(self) -> np.ndarray:
        """Smallest over largest junction photocurrent, ``(M,)`` (1 = matched)."""
        jph = self.solution.jph
        mx = jph.max(axis=1)
        with np.errstate(divide="ignore", invalid="ignore"):
            return np.where(mx > 0, jph.min(axis=1) / mx, 0.0)

    @property
    def power_share(self) -> np.ndarray:
        """Each junction's share of the stack power (fraction), ``(M, N)``."""
        p = self.solution.op.p_junction
        tot = self.solution.op.p_mpp[:, None]
        with np.errstate(divide="ignore", invalid="ignore"):
            return np.where(tot > 0, p / tot, 0.0)

    @property
    def losses(self) -> LossTable | None:
        """Loss breakdown (``evaluate(..., losses=True)``), else ``None``."""
        if self.solution.losses is None:
            return None
        return LossTable(self.solution.losses, self.gaps_eV)

    def best(self) -> int:
        """Index of the most efficient stack."""
        return int(np.argmax(self.efficiency))

    # ---- tables -----------------------------------------------------------------------
    def to_frame(self) -> pd.DataFrame:
        """One row per stack, in the units people read.


        Returns
        -------
        pandas.DataFrame
            Columns ``gap_1_eV ... gap_N_eV`` (top first), ``efficiency_pct``,
            ``pmpp_W_m2``, ``voc_V``, ``jsc_mA_cm2``, ``ff``, ``vmpp_V``, ``jmpp_mA_cm2``,
            ``mismatch_ratio`` and, for voltage matching, ``cells_per_string``.
        """
        import pandas as pd

        op = self.solution.op
        cols: dict[str, Any] = {}
        for i in range(self.n_junctions):
            cols[f"gap_{i + 1}_eV"] = self.gaps_eV[:, i]
        cols.update(
            connection=self.connection,
            efficiency_pct=100 * self.efficiency,
            pmpp_W_m2=op.p_mpp,
            voc_V=op.voc,
            jsc_mA_cm2=a_m2_to_ma_cm2(op.jsc),
            ff=self.ff,
            vmpp_V=op.v_mpp,
            jmpp_mA_cm2=a_m2_to_ma_cm2(op.j_mpp),
            mismatch_ratio=self.mismatch_ratio,
        )
        if op.ratio is not None:
            cols["cells_per_string"] = [":".join(map(str, r)) for r in op.ratio]
        return pd.DataFrame(cols)

    def junction_frame(self) -> pd.DataFrame:
        """One row per junction of every stack (long format).


        Returns
        -------
        pandas.DataFrame
            ``stack``, ``junction`` (1 = top), ``gap_eV``, ``jph_mA_cm2``,
            ``jsc_mA_cm2``, ``voc_V``, ``v_op_V``, ``j_op_mA_cm2``, ``p_op_W_m2``,
            ``power_share_pct``.
        """
        import pandas as pd

        s = self.solution
        m, n = s.gaps_J.shape
        return pd.DataFrame(
            {
                "stack": np.repeat(np.arange(m), n),
                "junction": np.tile(np.arange(1, n + 1), m),
                "gap_eV": self.gaps_eV.ravel(),
                "jph_mA_cm2": a_m2_to_ma_cm2(s.jph.ravel()),
                "jsc_mA_cm2": a_m2_to_ma_cm2(s.jph.ravel()),
                "voc_V": s.voc_junction.ravel(),
                "v_op_V": s.op.v_junction.ravel(),
                "j_op_mA_cm2": a_m2_to_ma_cm2(s.op.j_junction.ravel()),
                "p_op_W_m2": s.op.p_junction.ravel(),
                "power_share_pct": 100 * self.power_share.ravel(),
            }
        )

    def stack(self, i: int = 0) -> dict:
        """JSON-ready description of stack ``i``.

        Returns
        -------
        dict
            Top-level keys ``efficiency`` (fraction), ``efficiency_pct``, ``gaps_eV``,
            ``connection``, ``pmpp_W_m2``, ``voc_V``, ``jsc_mA_cm2``, ``ff``, ``vmpp_V``,
            ``jmpp_mA_cm2``, ``mismatch_ratio``, ``absorbed_W_m2``, ``incident_W_m2``,
            ``conditions``, and ``junctions``: a list (top first) of objects with
            ``gap_eV``, ``jph_mA_cm2``, ``jsc_mA_cm2``, ``voc_V``, ``v_op_V``,
            ``j_op_mA_cm2``, ``p_op_W_m2``, ``power_share``. With non-ideal physics the
            junction objects also carry ``jph_total_mA_cm2`` (incident plus coupled
            luminescence at the operating point) and, with a gap temperature model,
            ``gap_cell_eV`` (the gap at the cell temperature; ``gap_eV`` is the gap as
            given); ``conditions`` gains ``physics``. With ``losses=True`` the top level
            gains ``losses_W_m2`` (see :meth:`LossTable.stack`).
        """
        s = self.solution
        op = s.op
        out: dict[str, Any] = {
            "efficiency": float(self.efficiency[i]),
            "efficiency_pct": float(100 * self.efficiency[i]),
            "gaps_eV": [float(g) for g in self.gaps_eV[i]],
            "connection": self.connection,
            "pmpp_W_m2": float(op.p_mpp[i]),
            "voc_V": _num(op.voc[i]),
            "jsc_mA_cm2": _num(a_m2_to_ma_cm2(op.jsc[i])),
            "ff": float(self.ff[i]),
            "vmpp_V": _num(op.v_mpp[i]),
            "jmpp_mA_cm2": _num(a_m2_to_ma_cm2(op.j_mpp[i])),
            "mismatch_ratio": float(self.mismatch_ratio[i]),
            "absorbed_W_m2": float(s.absorbed_W_m2[i]),
            "incident_W_m2": float(s.incident_W_m2),
        }
        if op.ratio is not None:
            out["cells_per_string"] = [int(r) for r in op.ratio[i]]
        out["conditions"] = self.conditions.to_dict()
        out["junctions"] = [
            {
                "junction": k + 1,
                "gap_eV": float(self.gaps_eV[i, k]),
                "jph_mA_cm2": float(a_m2_to_ma_cm2(s.jph[i, k])),
                "jsc_mA_cm2": float(a_m2_to_ma_cm2(s.jph[i, k])),
                "voc_V": float(s.voc_junction[i, k]),
                "v_op_V": float(op.v_junction[i, k]),
                "j_op_mA_cm2": float(a_m2_to_ma_cm2(op.j_junction[i, k])),
                "p_op_W_m2": float(op.p_junction[i, k]),
                "power_share": float(self.power_share[i, k]),
            }
            for k in range(self.n_junctions)
        ]
        ex = s.extras or {}
        for k, row in enumerate(out["junctions"]):
            if "gaps_ref_J" in ex:
                row["gap_cell_eV"] = float(s.gaps_J[i, k] / EV)
            if "jph_total" in ex:
                row["jph_total_mA_cm2"] = float(a_m2_to_ma_cm2(ex["jph_total"][i, k]))
        if s.losses is not None:
            out["losses_W_m2"] = self.losses.stack(i)
            out["loss_closure_rel"] = float(self.losses.closure_error()[i])
        out["warnings"] = self.stack_warnings(i)
        return out

    @property
    def warnings(self) -> list[str]:
        """What a reader of these numbers must know: model limits crossed by any stack.

        With the Boltzmann dark current, a junction whose ``E_g - qV_oc`` (gap at the
        cell temperature) is below :data:`BOLTZMANN_MARGIN_KT` ``kT`` is outside the
        approximation's validity (at high concentration V_oc can even exceed E_g / q):
        one sentence names the worst junction. :meth:`stack` lists stack ``i``'s own.

        Returns
        -------
        list of str
            One sentence per warning (empty when there is none).
        """
        return self.stack_warnings(None)

    def stack_warnings(self, i: int | None = 0) -> list[str]:
        """:attr:`warnings` of stack ``i`` alone (``None``: of every stack)."""
        if self.cell is None or self.cell.dark_current != "boltzmann" or len(self) == 0:
            return []
        s = self.solution
        rows = slice(None) if i is None else slice(i, i + 1)
        kt_J = K_B * self.cell.temperature_per_junction(self.n_junctions)
        with np.errstate(invalid="ignore"):
            margin = (s.gaps_J[rows] - Q * s.voc_junction[rows]) / kt_J
        margin = np.where(np.isfinite(margin), margin, np.inf)
        bad = margin < BOLTZMANN_MARGIN_KT
        if not bad.any():
            return []
        m, k = np.unravel_index(int(np.argmin(margin)), margin.shape)
        row = m if i is None else i
        many = int(bad.any(axis=1).sum())
        where = f"junction {k + 1}" + (
            f" of stack {row + 1} (and {many - 1} other stacks)" if many > 1 else ""
        )
        return [
            f"Boltzmann dark current outside its validity: {where} has qV_oc = "
            f"{s.voc_junction[row, k]:.3f} eV against a gap of "
            f"{s.gaps_J[row, k] / EV:.3f} eV (E_g - qV_oc = {margin[m, k]:.1f} kT, below "
            f"{BOLTZMANN_MARGIN_KT:g} kT), so V_oc and the efficiency are overestimated. "
            "Use the Bose-Einstein dark current (--dark-current bose-einstein on the "
            'command line, dark_current = "bose-einstein" in Python and study files).'
        ]


@dataclass(frozen=True, eq=False)
class ThicknessSweep:
    """Efficiency of one stack as one junction's absorber thickness varies.

    Attributes
    ----------
    thickness_nm : numpy.ndarray
        Thicknesses of junction ``junction`` [nm], ``(M,)``.
    junction : int
        The varied junction (1 = top).
    result : BatchResult
        One row per thickness.
    """

    thickness_nm: np.ndarray
    junction: int
    result: BatchResult

    @property
    def efficiency_pct(self) -> np.ndarray:
        """Efficiency [%] at every thickness, ``(M,)``."""
        return 100.0 * self.result.efficiency

    def best(self) -> int:
        """Index of the most efficient thickness."""
        return int(np.argmax(self.efficiency_pct))

    def to_frame(self) -> pd.DataFrame:
        """One row per thickness: ``thickness_nm``, ``efficiency_pct`` and
        ``jph_<k>_mA_cm2`` (photocurrent of junction ``k``, 1 = top)."""
        import pandas as pd

        cols: dict[str, Any] = {
            f"thickness_{self.junction}_nm": self.thickness_nm,
            "efficiency_pct": self.efficiency_pct,
        }
        jph = a_m2_to_ma_cm2(self.result.solution.jph)
        for k in range(self.result.n_junctions):
            cols[f"jph_{k + 1}_mA_cm2"] = jph[:, k]
        return pd.DataFrame(cols)


@dataclass(frozen=True, eq=False)
class SeriesResult:
    """``M`` stacks under each of ``H`` illuminations (see :func:`gapmatch.api.solve_series`).

    Attributes
    ----------
    solution : StackSolution
        ``H * M`` rows, illumination-major (row ``h * M + i``: stack ``i`` under
        illumination ``h``).
    stack_model : Stack
        The stacks.
    illumination : IlluminationSeries
        The illuminations, with their durations [h].
    temperature_K : numpy.ndarray
        Cell temperature [K] per illumination ``(H,)`` or per illumination and junction
        ``(H, N)``.
    ere : float or numpy.ndarray
        External radiative efficiency (one value or one per junction).
    dark_current : str
        Form of the radiative dark current.
    """

    solution: StackSolution
    stack_model: Stack
    illumination: IlluminationSeries
    temperature_K: Any
    ere: Any
    dark_current: str

    @property
    def shape(self) -> tuple[int, int]:
        """``(H, M)``: illuminations, stacks."""
        return len(self.illumination), len(self.stack_model)

    @property
    def pmpp_W_m2(self) -> np.ndarray:
        """Power density at maximum power [W m^-2], ``(H, M)``."""
        return self.solution.op.p_mpp.reshape(self.shape)

    @property
    def efficiency(self) -> np.ndarray:
        """Efficiency under each illumination (fraction), ``(H, M)``."""
        return self.pmpp_W_m2 / self.illumination.total_irradiance_W_m2[:, None]

    def energy_Wh_m2(self) -> np.ndarray:
        """Energy delivered over all illuminations [W h m^-2], ``(M,)``: the sum of
        power times duration (each stack at its maximum power point throughout)."""
        return (self.pmpp_W_m2 * self.illumination.duration_h[:, None]).sum(axis=0)

    def energy_efficiency(self) -> np.ndarray:
        """Delivered over incident energy (fraction), ``(M,)``."""
        incident = (self.illumination.total_irradiance_W_m2 * self.illumination.duration_h).sum()
        return self.energy_Wh_m2() / incident

    def to_frame(self) -> pd.DataFrame:
        """One row per illumination and stack: ``illumination`` (0-based index, as the
        rows were given), ``stack`` (0-based), ``gap_<k>_eV``, ``incident_W_m2``,
        ``pmpp_W_m2``, ``efficiency_pct``."""
        import pandas as pd

        h, m = self.shape
        g = self.stack_model.gaps_eV
        cols: dict[str, Any] = {
            "illumination": np.repeat(np.arange(h), m),
            "stack": np.tile(np.arange(m), h),
        }
        for k in range(g.shape[1]):
            cols[f"gap_{k + 1}_eV"] = np.tile(g[:, k], h)
        cols["incident_W_m2"] = np.repeat(self.illumination.total_irradiance_W_m2, m)
        cols["pmpp_W_m2"] = self.pmpp_W_m2.ravel()
        cols["efficiency_pct"] = 100 * self.efficiency.ravel()
        return pd.DataFrame(cols)

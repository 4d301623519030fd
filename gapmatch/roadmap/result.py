"""Result objects of a roadmap run: tables, JSON and CSV files.

:class:`RoadmapResult` holds one :class:`CandidateOutcome` per candidate and milestone
and turns them into tables (pandas, units in the column names) and the JSON object that
``gapmatch roadmap --json`` prints. Values are kept in the evaluator's base unit
(efficiency: a fraction) and scaled at the edge (``_pct`` columns).

Every table row lists the ``marks`` of the numbers behind it: the statuses other than
"cited" of the library values it used ("from memory", "common practice, no source") and
"study assumption" for projections.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from pathlib import Path
from typing import TYPE_CHECKING, Any

import numpy as np

from .schema import Candidate, RoadmapStudy  # noqa: F401 - documented types

if TYPE_CHECKING:  # pandas loads only when a table is asked for
    import pandas as pd

#: causes of the headroom, in the order they are switched off (each step evaluates the
#: stack with that cause and all earlier ones removed; the differences add up to the
#: radiative limit minus the likely value)
HEADROOM_ORDER = (
    ("resistance", "series resistance set to 0"),
    ("collection", "collection efficiency set to 1"),
    ("thickness", "finite absorbers replaced by step absorbers (full absorption above the gap)"),
    ("non_radiative", "ERE set to 1 (radiative recombination only)"),
    ("current_mismatch", "sub-cells connected independently (no current or voltage matching)"),
)


__all__ = ["CandidateOutcome", "RoadmapResult", "CAUTION"]

#: caution attached to every roadmap output
CAUTION = (
    "Projections are scenario assumptions, not forecasts. Results are detailed-balance "
    "ceilings under those assumptions, not ratings of any device; values marked 'from "
    "memory' or 'common practice, no source' are unchecked. For anything built or sold, "
    "rely on accredited measurement (IEC 60904 family; IEC 61853 for energy rating) and "
    "licensed engineering practice."
)


@dataclass
class CandidateOutcome:
    """One candidate at one milestone.

    Attributes
    ----------
    candidate : Candidate
        The candidate.
    year : int
        Milestone.
    gaps_eV : numpy.ndarray
        Design gaps at 300 K [eV], top first.
    gaps_cell_eV : numpy.ndarray
        The same gaps at the cell temperature [eV].
    compositions : dict
        Alloy compositions of the design gaps (``material -> {"x", "x_name"}``).
    values : numpy.ndarray
        The evaluator's value of every draw, ``(draws,)`` (efficiency: fraction).
    likely : float
        Value at the likely inputs.
    headroom : dict
        ``likely``, ``radiative_limit`` and ``causes`` (cause -> value gained by
        switching it off, in :data:`gapmatch.roadmap.HEADROOM_ORDER`).
    sensitivity : list of dict
        Per uncertain input, largest swing first.
    inputs : dict
        ``"material.parameter" -> (draws,)`` sampled values.
    search : dict
        How the gaps were chosen.
    probability_best : float
        Share of the draws in which this candidate is the best of its milestone.
    """

    candidate: Candidate
    year: int
    gaps_eV: np.ndarray  # noqa: N815
    gaps_cell_eV: np.ndarray  # noqa: N815
    compositions: dict
    values: np.ndarray
    likely: float
    headroom: dict
    sensitivity: list
    inputs: dict
    search: dict
    probability_best: float = float("nan")

    def percentiles(self) -> tuple[float, float, float]:
        """P10, P50, P90 of the draws (linear interpolation), base unit."""
        p = np.percentile(self.values, [10, 50, 90])
        return float(p[0]), float(p[1]), float(p[2])


@dataclass
class RoadmapResult:
    """All outcomes of a roadmap run.

    Attributes
    ----------
    study : RoadmapStudy
        The study as validated.
    outcomes : list of CandidateOutcome
        Milestone by milestone, candidates in study order.
    evaluator : Evaluator
        What was evaluated (name, unit, scale, label).
    elapsed_s : float
        Wall time of the run [s].
    """

    study: RoadmapStudy
    outcomes: list
    evaluator: Any
    elapsed_s: float = 0.0
    _marks: dict = field(default_factory=dict, repr=False)

    # ---- lookup --------------------------------------------------------------------------
    def outcome(self, candidate: str, year: int) -> CandidateOutcome:
        """The outcome of a candidate (by name) at a milestone."""
        for o in self.outcomes:
            if o.candidate.name == candidate and o.year == year:
                return o
        raise KeyError((candidate, year))

    @property
    def unit(self) -> str:
        """Unit suffix of the value columns (``"pct"`` for efficiency)."""
        return self.evaluator.unit

    def used_numbers(self, o: CandidateOutcome) -> list[tuple[str, Any]]:
        """``(field, Source)`` of every number behind an outcome: the library's gap and
        temperature model of each material, its absorption numbers when a thickness is
        projected, and the projected (or library) ERE, thickness, collection, resistance
        and gap window of the milestone."""
        out: list[tuple[str, Any]] = []
        y = o.year
        for mat in o.candidate.materials:
            mt = self.study.library[mat]
            p = self.study.projection(mat, y)
            out += [(s.field, s.source) for s in mt.gap.sourced()]
            out.append((f"{mat}.ere@{y}", p.ere_source))
            if p.source is None:
                continue
            if p.thickness_nm is not None:
                out += [(s.field, s.source) for s in (mt.alpha0_per_cm, mt.refractive_index)]
                out.append((f"{mat}.thickness_nm@{y}", p.source))
            for name, given in (
                ("collection_efficiency", p.collection_efficiency != 1.0),
                ("series_resistance_ohm_cm2", p.series_resistance_ohm_cm2 != 0.0),
                ("gap_window_eV", p.gap_window_eV is not None),
            ):
                if given:
                    out.append((f"{mat}.{name}@{y}", p.source))
        return out

    def marks(self, o: CandidateOutcome) -> list[str]:
        """Statuses other than "cited" of the numbers behind an outcome."""
        key = (o.candidate.name, o.year)
        if key not in self._marks:
            st = {src.status for _, src in self.used_numbers(o) if src.flagged}
            self._marks[key] = sorted(st)
        return self._marks[key]

    # ---- tables --------------------------------------------------------------------------
    def ranking_frame(self) -> pd.DataFrame:
        """One row per milestone and candidate, ranked by P50 within each milestone:
        ``year``, ``rank``, ``candidate``, ``connection``, ``materials``, ``gaps_eV``
        (text, top first) and ``gap_<i>_eV`` (numbers; 1 = top; 300 K), ``p10_<unit>``,
        ``p50_<unit>``, ``p90_<unit>``, ``likely_<unit>``, ``radiative_limit_<unit>``,
        ``probability_best``, ``top_input``, ``marks``."""
        import pandas as pd

        u, s = self.unit, self.evaluator.scale
        rows = []
        for year in self.study.milestones:
            group = [o for o in self.outcomes if o.year == year]
            order = sorted(group, key=lambda o: -o.percentiles()[1])
            for rank, o in enumerate(order, 1):
                p10, p50, p90 = o.percentiles()
                row = {
                    "year": year,
                    "rank": rank,
                    "candidate": o.candidate.name,
                    "connection": o.candidate.connection,
                    "materials": " / ".join(o.candidate.materials),
                    "gaps_eV": " / ".join(f"{g:.3f}" for g in o.gaps_eV),
                    **{f"gap_{i + 1}_eV": float(g) for i, g in enumerate(o.gaps_eV)},
                    f"p10_{u}": s * p10,
                    f"p50_{u}": s * p50,
                    f"p90_{u}": s * p90,
                    f"likely_{u}": s * o.likely,
                    f"radiative_limit_{u}": s * o.headroom["radiative_limit"],
                    "probability_best": o.probability_best,
                    "top_input": o.sensitivity[0]["input"] if o.sensitivity else "",
                    "marks": "; ".join(self.marks(o)),
                }
                rows.append(row)
        frame = pd.DataFrame(rows)
        gaps = sorted(
            (c for c in frame.columns if c.startswith("gap_")), key=lambda c: int(c[4:-3])
        )
        rest = [c for c in frame.columns if not c.startswith("gap_")]
        at = rest.index("gaps_eV") + 1
        return frame[rest[:at] + gaps + rest[at:]]

    to_frame = ranking_frame

    def draws_frame(self) -> pd.DataFrame:
        """Long table of every draw: ``year``, ``candidate``, ``draw``, ``<name>_<unit>``
        and one column per sampled input (``<material>.<parameter>``)."""
        import pandas as pd

        u, s = self.unit, self.evaluator.scale
        parts = []
        for o in self.outcomes:
            d = {
                "year": o.year,
                "candidate": o.candidate.name,
                "draw": np.arange(o.values.size),
                f"{self.evaluator.name}_{u}": s * o.values,
            }
            d.update(o.inputs)
            parts.append(pd.DataFrame(d))
        return pd.concat(parts, ignore_index=True)

    def headroom_frame(self) -> pd.DataFrame:
        """One row per milestone and candidate: ``likely_<unit>``, one
        ``<cause>_<unit>`` column per cause (gain from switching it off, in the documented
        order) and ``radiative_limit_<unit>``."""
        import pandas as pd

        u, s = self.unit, self.evaluator.scale
        rows = []
        for o in self.outcomes:
            row = {"year": o.year, "candidate": o.candidate.name}
            row[f"likely_{u}"] = s * o.headroom["likely"]
            for cause, v in o.headroom["causes"].items():
                row[f"{cause}_{u}"] = s * v
            row[f"radiative_limit_{u}"] = s * o.headroom["radiative_limit"]
            row["marks"] = "; ".join(self.marks(o))
            rows.append(row)
        return pd.DataFrame(rows)

    def sensitivity_frame(self) -> pd.DataFrame:
        """One row per milestone, candidate and uncertain input: ``rank_correlation``
        (Spearman), ``swing_low_<unit>``, ``swing_high_<unit>`` (change from the likely
        value with the input at its low / high value) and the input's range."""
        import pandas as pd

        u, s = self.unit, self.evaluator.scale
        rows = []
        for o in self.outcomes:
            for d in o.sensitivity:
                rows.append(
                    {
                        "year": o.year,
                        "candidate": o.candidate.name,
                        "input": d["input"],
                        "distribution": d["distribution"],
                        "low": d["low"],
                        "likely": d["likely"],
                        "high": d["high"],
                        "rank_correlation": d["rank_correlation"],
                        f"swing_low_{u}": s * d["swing_low"],
                        f"swing_high_{u}": s * d["swing_high"],
                    }
                )
        cols = ["year", "candidate", "input", "distribution", "low", "likely", "high"]
        cols += ["rank_correlation", f"swing_low_{u}", f"swing_high_{u}"]
        return pd.DataFrame(rows, columns=cols)

    def sources(self) -> list[dict]:
        """Every source behind the numbers used (see :meth:`used_numbers`), each with
        its status and the fields that use it (``used_by``)."""
        out: dict[str, dict] = {}
        for o in self.outcomes:
            for fld, src in self.used_numbers(o):
                d = out.setdefault(src.key, src.to_dict() | {"used_by": []})
                if fld not in d["used_by"]:
                    d["used_by"].append(fld)
        return list(out.values())

    def sources_frame(self) -> pd.DataFrame:
        """One row per source: ``key``, ``status``, ``citation``, ``where``, ``used_by``."""
        import pandas as pd

        return pd.DataFrame(
            [
                {
                    "key": d["key"],
                    "status": d["status"],
                    "citation": d["citation"],
                    "where": d["where"],
                    "used_by": "; ".join(d["used_by"]),
                }
                for d in self.sources()
            ]
        )

    # ---- JSON ----------------------------------------------------------------------------
    def to_dict(self) -> dict:
        """The JSON object of ``gapmatch roadmap --json``."""
        u, s = self.unit, self.evaluator.scale
        st = self.study
        miles = []
        for year in st.milestones:
            cands = []
            for o in (o for o in self.outcomes if o.year == year):
                p10, p50, p90 = o.percentiles()
                cands.append(
                    {
                        "name": o.candidate.name,
                        "connection": o.candidate.connection,
                        "materials": list(o.candidate.materials),
                        "gaps_eV": [round(float(g), 6) for g in o.gaps_eV],
                        "gaps_cell_eV": [round(float(g), 6) for g in o.gaps_cell_eV],
                        "compositions": o.compositions,
                        f"p10_{u}": s * p10,
                        f"p50_{u}": s * p50,
                        f"p90_{u}": s * p90,
                        f"likely_{u}": s * o.likely,
                        "probability_best": o.probability_best,
                        f"headroom_{u}": {
                            "radiative_limit": s * o.headroom["radiative_limit"],
                            **{k: s * v for k, v in o.headroom["causes"].items()},
                        },
                        "sensitivity": [
                            {
                                "input": d["input"],
                                "rank_correlation": d["rank_correlation"],
                                f"swing_low_{u}": s * d["swing_low"],
                                f"swing_high_{u}": s * d["swing_high"],
                            }
                            for d in o.sensitivity
                        ],
                        "search": o.search,
                        "marks": self.marks(o),
                    }
                )
            miles.append({"year": year, "candidates": cands})
        return {
            "study": {
                "name": st.name,
                "title": st.title,
                "organisation": st.organisation,
                "file": st.origin,
            },
            "quantity": self.evaluator.describe() | {"unit": u, "label": self.evaluator.label},
            "draws": st.draws,
            "seed": st.seed,
            "method": {
                "design": "gaps chosen at the likely values (gapmatch.search), held over the draws",
                "sampling": "inverse-CDF transform of seeded uniforms per (material, "
                "parameter, milestone): common random numbers across candidates; "
                "triangular {low, likely, high} or uniform {low, high}; ERE in log10 space",
                "percentiles": "numpy.percentile, linear interpolation",
                "probability_best": "share of draws with the highest value; ties share a draw",
                "headroom_order": [f"{c}: {d}" for c, d in HEADROOM_ORDER],
                "sensitivity": "Spearman rank correlation over the draws; one-at-a-time "
                "swings to each input's low and high value",
            },
            "milestones": miles,
            "sources": self.sources(),
            "elapsed_s": self.elapsed_s,
            "caution": CAUTION,
        }

    def write_csv(self, folder: str | Path) -> list[Path]:
        """Write every table and the draws as CSV files (atomically) into ``folder``:
        ``<name>-ranking.csv``, ``-headroom.csv``, ``-sensitivity.csv``,
        ``-sources.csv``, ``-draws.csv``. Returns the paths."""
        from ..io.atomic import write_atomic

        folder = Path(folder)
        name = self.study.name
        out = []
        for suffix, frame in (
            ("ranking", self.ranking_frame()),
            ("headroom", self.headroom_frame()),
            ("sensitivity", self.sensitivity_frame()),
            ("sources", self.sources_frame()),
            ("draws", self.draws_frame()),
        ):
            out.append(write_atomic(folder / f"{name}-{suffix}.csv", frame.to_csv(index=False)))
        return out

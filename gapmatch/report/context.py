"""What a section builder gets: the study, its model objects, and a cache of shared
results (the map, the stacks of interest, the cut), each computed once per report."""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass, field
from typing import Any

import numpy as np

from ..api import evaluate
from ..maps import CutResult, MapResult, compute_cut, compute_map
from ..model import CellConditions, Illumination
from ..results import BatchResult
from ..study import Study

__all__ = ["ReportContext"]


@dataclass
class ReportContext:
    """Everything a section builder needs, with a cache of shared results.

    Attributes
    ----------
    study : Study
        The validated study.
    cache : dict
        Shared results by key (see :meth:`get`).
    """

    study: Study
    cache: dict = field(default_factory=dict)

    def get(self, key: str, factory: Callable[[], Any]) -> Any:
        """The cached result ``key``, computing it with ``factory()`` the first time."""
        if key not in self.cache:
            self.cache[key] = factory()
        return self.cache[key]

    # ---- the study's model objects -------------------------------------------------------
    @property
    def illumination(self) -> Illumination:
        """The study's illumination (a spectrum file is read once, by the study)."""
        return self.study.illumination

    @property
    def spectrum(self):
        """The study's spectrum (scaled as the study says)."""
        return self.study.illumination.spectrum

    @property
    def cell(self) -> CellConditions:
        """The study's cell conditions."""
        return self.study.cell

    def cell_options(self) -> dict:
        """The cell conditions as :func:`gapmatch.evaluate` keywords."""
        return self.cell.options()

    # ---- built-in shared results -------------------------------------------------------
    @property
    def map(self) -> MapResult:
        """The study's efficiency map."""
        return self.get(
            "map",
            lambda: compute_map(
                spectrum=self.spectrum, **self.study.map_settings(), **self.cell_options()
            ),
        )

    @property
    def map_connections(self) -> list[str]:
        """Connections on the map."""
        return list(self.map.connections)

    @property
    def stack_results(self) -> dict[tuple[str, str], BatchResult]:
        """(stack name, connection) -> evaluation of every stack of interest."""

        def make():
            out = {}
            for s in self.study.stacks:
                for c in self.study.connections:
                    out[(s.name, c)] = evaluate(
                        list(s.gaps_eV), c, self.illumination, **self.cell_options()
                    )
            return out

        return self.get("stacks", make)

    @property
    def cut(self) -> CutResult:
        """Efficiency versus the top gap at the study's fixed bottom gap."""

        def make():
            m = self.study.map
            n = self.study.n_junctions
            base = list(m["stack_eV"]) if m["stack_eV"] is not None else [2.0, 1.0]
            base[n - 1] = self.study.cut["bottom_gap_eV"]
            lo, hi = m["x_gap_range_eV"] if m["axes"][0] == 1 else (0.5, 2.5)
            step = self.study.cut["step_eV"]
            # only top gaps above every other gap (physical order)
            lo = max(lo, round(max(base[1:]) + step, 9))
            if lo >= hi:
                hi = min(lo + 1.5, 5.0)
            vals = np.round(lo + step * np.arange(int(np.floor((hi - lo) / step + 1e-9)) + 1), 9)
            return compute_cut(
                base,
                1,
                vals,
                self.study.connections,
                spectrum=self.spectrum,
                **self.cell_options(),
            )

        return self.get("cut", make)

    @property
    def tolerance_pct(self) -> float:
        """Tolerance of the window below the optimum [absolute %]."""
        return float(self.study.map["tolerance_pct"])

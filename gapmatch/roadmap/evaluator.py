"""What a roadmap ranks candidates by: the evaluator of a batch of stacks.

The roadmap calls an evaluator with a batch of stacks -- gaps at the cell temperature
and the per-junction physics of every draw as ``(M, N)`` arrays -- and gets one value per
stack. :class:`EfficiencyEvaluator` (the default) returns the detailed-balance efficiency
through one :func:`gapmatch.evaluate` call. An annual-energy evaluator for a site plugs in
the same way: anything with the attributes and the call signature of
:class:`Evaluator` can be passed to :func:`gapmatch.roadmap.run_roadmap`.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any, Protocol, runtime_checkable

import numpy as np

__all__ = ["Evaluator", "EvaluatorBatch", "EfficiencyEvaluator"]


@dataclass
class EvaluatorBatch:
    """Values of ``M`` stacks.

    Attributes
    ----------
    value : numpy.ndarray
        ``(M,)`` in the evaluator's base unit (efficiency: fraction).
    jph_A_m2 : numpy.ndarray
        ``(M, N)`` photocurrent densities [A m^-2] (used by the gap search).
    """

    value: np.ndarray
    jph_A_m2: np.ndarray  # noqa: N815


@runtime_checkable
class Evaluator(Protocol):
    """Interface of a roadmap evaluator.

    Attributes
    ----------
    name : str
        Quantity, e.g. ``"efficiency"`` or ``"annual_energy"``.
    unit : str
        Suffix of output keys and columns (``"pct"`` gives ``p50_pct``).
    scale : float
        Factor from the base unit to ``unit`` (100 for a fraction shown in %).
    label : str
        Axis label with unit.
    """

    name: str
    unit: str
    scale: float
    label: str

    def __call__(
        self, gaps_eV: np.ndarray, connection: str, physics: dict[str, Any]
    ) -> EvaluatorBatch:  # noqa: N803
        """Evaluate ``(M, N)`` gaps [eV] at the cell temperature (top first) with the
        keyword physics of :func:`gapmatch.evaluate` (``ere``, ``absorber``,
        ``thickness_nm``, ``alpha0_per_cm``, ``light_trapping``, ``refractive_index``,
        ``collection_efficiency``, ``series_resistance_ohm_cm2``, ``cells_per_string``)."""
        ...

    def describe(self) -> dict:
        """JSON-ready identity (spectrum, temperature ...)."""
        ...


class EfficiencyEvaluator:
    """Detailed-balance efficiency under one spectrum, in one batched evaluate call.

    Parameters
    ----------
    spectrum : str
        ``"AM1.5G"`` (default), ``"AM1.5D"``, ``"AM0"`` or ``"blackbody"``.
    spectrum_file : str, optional
        CSV spectrum (overrides ``spectrum``).
    concentration : float
        Concentration [suns].
    irradiance_W_m2 : float, optional
        Rescale the spectrum to this total [W m^-2].
    temperature_K : float
        Cell temperature [K].

    References
    ----------
    .. [1] W. Shockley and H. J. Queisser, J. Appl. Phys. 32, 510 (1961).
    .. [2] U. Rau, Phys. Rev. B 76, 085303 (2007) (ERE, collection and reciprocity).
    """

    name = "efficiency"
    unit = "pct"
    scale = 100.0
    label = "efficiency [%]"

    def __init__(
        self,
        spectrum: str = "AM1.5G",
        *,
        spectrum_file: str | None = None,
        concentration: float = 1.0,
        irradiance_W_m2: float | None = None,  # noqa: N803
        temperature_K: float = 300.0,  # noqa: N803
    ) -> None:
        from .. import get_spectrum

        self.temperature_K = float(temperature_K)
        self._desc = {
            "quantity": "detailed-balance efficiency",
            "spectrum": spectrum_file or spectrum,
            "concentration": concentration,
            "irradiance_W_m2": irradiance_W_m2,
            "temperature_K": self.temperature_K,
        }
        self.spectrum = get_spectrum(
            spectrum,
            spectrum_file=spectrum_file,
            irradiance_W_m2=irradiance_W_m2,
            concentration=concentration,
        )

    def __call__(self, gaps_eV, connection, physics) -> EvaluatorBatch:  # noqa: N803
        from .. import evaluate

        res = evaluate(
            gaps_eV,
            connection,
            self.spectrum,
            temperature_K=self.temperature_K,
            require_descending=False,
            **physics,
        )
        return EvaluatorBatch(np.asarray(res.efficiency, float), res.solution.jph)

    def describe(self) -> dict:
        return dict(self._desc)

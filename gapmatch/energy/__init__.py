"""Energy yield at a site: a year of hourly spectra and cell temperatures.

Read a weather file (:func:`read_weather`), model its hourly in-plane spectra
(:func:`site_spectra`), and get the annual energy of stacks in series and independent
connection (:func:`annual_yield`, :class:`YieldResult`); search the yield-optimal gaps
beside the AM1.5G optimum (:func:`optimise_yield`). Results are modelled energies of
idealised cells, not energy ratings (see :data:`YIELD_CAUTION`).
"""

from __future__ import annotations

from .api import annual_yield, site_spectra, yield_from_spectra
from .celltemp import CellTemperature
from .geometry import Mounting
from .readers import demo_weather_path, read_spectra_csv, read_weather
from .result import YIELD_CAUTION, YieldResult
from .spectra import HourlySpectra
from .weather import Location, Weather

__all__ = [
    "annual_yield",
    "site_spectra",
    "yield_from_spectra",
    "read_weather",
    "read_spectra_csv",
    "demo_weather_path",
    "Weather",
    "Location",
    "Mounting",
    "CellTemperature",
    "HourlySpectra",
    "YieldResult",
    "YIELD_CAUTION",
    "optimise_yield",
    "YieldSearchResult",
]


def __getattr__(name: str):
    # the search front needs optuna: imported only when asked for
    if name in ("optimise_yield", "YieldSearchResult"):
        from . import search

        return getattr(search, name)
    raise AttributeError(f"module {__name__!r} has no attribute {name!r}")

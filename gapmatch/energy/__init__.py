"""Energy yield at a site: a year of hourly spectra and cell temperatures.

Read a weather file (:func:`read_weather`), model its hourly in-plane spectra
(:func:`site_spectra`), and get the annual energy of stacks in series and independent
connection (:func:`annual_yield`, :class:`YieldResult`); search the yield-optimal gaps
beside the AM1.5G optimum (:func:`optimise_yield`). Results are modelled energies of
idealised cells, not energy ratings (see :data:`YIELD_CAUTION`).
"""

from __future__ import annotations

from importlib import import_module

#: public name -> submodule; loaded on first use, so that the command line can read the
#: site option lists (``celltemp``, ``geometry``, ``readers``, ``spectra`` constants)
#: without importing pandas and pvlib
_WHERE = {
    "annual_yield": "api",
    "site_spectra": "api",
    "yield_from_spectra": "api",
    "CellTemperature": "celltemp",
    "Mounting": "geometry",
    "demo_weather_path": "readers",
    "read_spectra_csv": "readers",
    "read_weather": "readers",
    "YIELD_CAUTION": "result",
    "YieldResult": "result",
    "HourlySpectra": "spectra",
    "Location": "weather",
    "Weather": "weather",
    # the search front needs optuna
    "optimise_yield": "search",
    "YieldSearchResult": "search",
}

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
    if name in _WHERE:
        value = getattr(import_module(f".{_WHERE[name]}", __name__), name)
        globals()[name] = value
        return value
    raise AttributeError(f"module {__name__!r} has no attribute {name!r}")


def __dir__() -> list[str]:
    return sorted(set(globals()) | set(__all__))

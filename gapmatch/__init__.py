"""gapmatch: detailed-balance limits of multi-junction solar cells.

Choose the band gaps of a stack of absorbers, how its sub-cells are connected, and see
the efficiency the stack can ultimately reach. Results are theoretical limits, not
ratings of any device.

Main entry points
-----------------
evaluate
    Efficiency and operating point of one stack or a batch of stacks.
jv_curve
    Current-voltage curves of an evaluated stack (under the result's own conditions).
Illumination, CellConditions, Stack
    What a user describes, as validated objects (see :mod:`gapmatch.model`); every
    result carries them.
standard_spectrum, get_spectrum, read_spectrum_csv
    Spectra (ASTM G173-03 through pvlib, blackbody sun, CSV files).
retain_freed_memory
    Keep freed memory for reuse (glibc): fewer page faults in large batches.

The names are loaded on first use, so that ``import gapmatch`` (and the command line's
``--help``) stay fast.
"""

from __future__ import annotations

import importlib
from typing import TYPE_CHECKING, Any

#: public name -> module that defines it
_EXPORTS = {
    "evaluate": "api",
    "reevaluate": "api",
    "check_gaps": "limits",
    "jv_curve": "jv",
    "BatchResult": "results",
    "Conditions": "results",
    "InputError": "errors",
    "Illumination": "model",
    "CellConditions": "model",
    "Stack": "model",
    "Spectrum": "core.spectra",
    "TabulatedSpectrum": "core.spectra",
    "BlackbodySun": "core.spectra",
    "standard_spectrum": "io.spectra",
    "get_spectrum": "io.spectra",
    "read_spectrum_csv": "io.spectra",
    "retain_freed_memory": "runtime",
}

__all__ = [
    "__version__",
    "evaluate",
    "reevaluate",
    "check_gaps",
    "jv_curve",
    "BatchResult",
    "Conditions",
    "InputError",
    "Illumination",
    "CellConditions",
    "Stack",
    "Spectrum",
    "TabulatedSpectrum",
    "BlackbodySun",
    "standard_spectrum",
    "get_spectrum",
    "read_spectrum_csv",
    "retain_freed_memory",
]
assert set(__all__) == {"__version__", *_EXPORTS}

if TYPE_CHECKING:  # pragma: no cover
    from .api import evaluate, reevaluate
    from .core.spectra import BlackbodySun, Spectrum, TabulatedSpectrum
    from .errors import InputError
    from .io.spectra import get_spectrum, read_spectrum_csv, standard_spectrum
    from .jv import jv_curve
    from .limits import check_gaps
    from .model import CellConditions, Illumination, Stack
    from .results import BatchResult, Conditions
    from .runtime import retain_freed_memory


def _version() -> str:
    from importlib.metadata import PackageNotFoundError, version

    try:
        return version("gapmatch")
    except PackageNotFoundError:  # running from a source tree without installation
        return "0.1.0"


def __getattr__(name: str) -> Any:
    if name == "__version__":
        value = _version()
    elif name in _EXPORTS:
        value = getattr(importlib.import_module(f".{_EXPORTS[name]}", __name__), name)
    else:
        raise AttributeError(f"module 'gapmatch' has no attribute {name!r}")
    globals()[name] = value
    return value


def __dir__() -> list[str]:
    return sorted(set(globals()) | set(__all__))

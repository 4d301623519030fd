"""gapmatch: detailed-balance limits of multi-junction solar cells.

Choose the band gaps of a stack of absorbers, how its sub-cells are connected, and see
the efficiency the stack can ultimately reach. Results are theoretical limits, not
ratings of any device.

Main entry points
-----------------
evaluate
    Efficiency and operating point of one stack or a batch of stacks.
standard_spectrum, get_spectrum, read_spectrum_csv
    Spectra (ASTM G173-03 through pvlib, blackbody sun, CSV files).
"""

from __future__ import annotations

from importlib.metadata import PackageNotFoundError, version

from .api import check_gaps, evaluate, jv_curve
from .core.spectra import BlackbodySun, Spectrum, TabulatedSpectrum
from .errors import InputError
from .io.spectra import get_spectrum, read_spectrum_csv, standard_spectrum
from .results import BatchResult, Conditions

try:
    __version__ = version("gapmatch")
except PackageNotFoundError:  # running from a source tree without installation
    __version__ = "0.1.0"

__all__ = [
    "__version__",
    "evaluate",
    "check_gaps",
    "jv_curve",
    "BatchResult",
    "Conditions",
    "InputError",
    "Spectrum",
    "TabulatedSpectrum",
    "BlackbodySun",
    "standard_spectrum",
    "get_spectrum",
    "read_spectrum_csv",
]

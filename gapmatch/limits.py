"""Allowed ranges of the inputs, and the checks every entry point shares.

The ranges are the edges of the model's validity (and of sensible input), stated once:
band gaps, cell temperatures, junction counts and map sizes. The check functions turn a
value as a user gives it (scalar, list, array) into a validated array or raise
:class:`gapmatch.errors.InputError` naming the field and the allowed range.
"""

from __future__ import annotations

import numpy as np

from .core.diodes import DARK_MODELS
from .errors import InputError, check_finite_array, check_range

__all__ = [
    "GAP_RANGE_EV",
    "TEMPERATURE_RANGE_K",
    "ERE_RANGE",
    "MAX_JUNCTIONS",
    "MAX_MAP_POINTS",
    "check_gaps",
    "check_cell_conditions",
    "per_junction",
    "per_junction_names",
]

#: allowed band gaps [eV]
GAP_RANGE_EV = (0.1, 5.0)
#: allowed cell temperatures [K]
TEMPERATURE_RANGE_K = (100.0, 1000.0)
#: allowed external radiative efficiency (fraction). The lower bound is physical, not
#: numerical: ERE lowers V_oc by (kT/q) ln(1/ERE), 0.72 V at 300 K for 1e-12, more than
#: the V_oc of the poorest cells ever reported (ERE near 1e-8 to 1e-6 for amorphous and
#: organic absorbers, from memory), so a smaller value describes no real junction. It
#: also keeps J0/ERE and exp(qV/kT) far from the float64 limits (a subnormal ERE such as
#: 5e-324 made J0/ERE infinite and the efficiency NaN).
ERE_RANGE = (1e-12, 1.0)
#: largest number of junctions in a stack
MAX_JUNCTIONS = 6
#: largest number of grid points of one map
MAX_MAP_POINTS = 1_000_000


def check_gaps(gaps_eV, *, require_descending: bool = True) -> np.ndarray:
    """Validate band gaps and return them as an ``(M, N)`` array [eV].

    Parameters
    ----------
    gaps_eV : array_like
        One stack (1-D, top first) or a batch (2-D, one stack per row) [eV].
    require_descending : bool
        Require gaps to decrease strictly from top to bottom.

    Returns
    -------
    numpy.ndarray
        The gaps [eV], ``(M, N)`` (a view of the input where numpy allows).

    Raises
    ------
    InputError
        For a shape other than 1 to 6 junctions, a value outside 0.1-5.0 eV, or (when
        required) gaps that do not decrease from the top.
    """
    try:
        g = np.asarray(gaps_eV, dtype=float)
    except (TypeError, ValueError):
        raise InputError("gaps_eV", "must be numbers [eV]", gaps_eV) from None
    if g.ndim == 1:
        g = g[None, :]
    if g.ndim != 2 or g.shape[0] == 0 or not 1 <= g.shape[1] <= MAX_JUNCTIONS:
        raise InputError(
            "gaps_eV",
            f"needs 1 to {MAX_JUNCTIONS} gaps per stack "
            "(a 1-D list, or a 2-D array with one stack per row)",
            g.shape,
        )
    check_finite_array("gaps_eV", g, *GAP_RANGE_EV, unit="eV")
    if require_descending and g.shape[1] > 1 and np.any(np.diff(g, axis=1) >= 0):
        row = int(np.argmax(np.any(np.diff(g, axis=1) >= 0, axis=1)))
        raise InputError(
            "gaps_eV",
            "gaps must decrease strictly from the top junction (facing the sun) to the bottom",
            g[row].tolist(),
        )
    return g


def per_junction(
    name: str, value, n: int, low: float, high: float, unit: str, low_inclusive: bool = True
):
    """Check one value for every junction, or one per junction (``(N,)``).

    Parameters
    ----------
    name : str
        Field name for the error message.
    value : float or array_like
        A scalar or ``n`` values.
    n : int
        Junctions per stack.
    low, high : float
        Allowed range, in the unit of ``value`` (``low`` excluded when
        ``low_inclusive`` is False).
    unit : str
        Unit shown in the message.
    low_inclusive : bool
        Whether ``low`` itself is allowed.

    Returns
    -------
    float or numpy.ndarray
        The scalar as a float, or the ``(n,)`` array.
    """
    a = np.asarray(value, dtype=float) if not np.isscalar(value) else None
    if a is None or a.ndim == 0:
        return check_range(name, value, low, high, low_inclusive=low_inclusive, unit=unit)
    if a.shape[-1] != n:
        raise InputError(name, f"needs one value, or one per junction ({n})", a.tolist())
    check_finite_array(name, a, low, high, unit=unit)
    if not low_inclusive and np.any(a <= low):
        raise InputError(name, f"every value must be > {low:g} {unit}".strip(), a.tolist())
    return a


def per_junction_names(field: str, value, n: int, allowed: tuple) -> list:
    """Check one name for every junction, or one per junction; returns ``n`` names."""
    vals = [value] * n if isinstance(value, str) else list(value)
    if len(vals) == 1:
        vals = vals * n
    if len(vals) != n:
        raise InputError(field, f"needs one value, or one per junction ({n})", value)
    for v in vals:
        if v not in allowed:
            raise InputError(field, f"every value must be one of {', '.join(allowed)}", v)
    return vals


def check_cell_conditions(n: int, temperature_K, ere, dark_current: str):
    """Validate the cell conditions of ``n``-junction stacks.

    Parameters
    ----------
    n : int
        Junctions per stack.
    temperature_K : float or array_like
        Cell temperature [K], 100-1000, scalar or one per junction.
    ere : float or array_like
        External radiative efficiency in [1e-12, 1] (:data:`ERE_RANGE`), scalar or one
        per junction.
    dark_current : str
        One of :data:`gapmatch.core.diodes.DARK_MODELS`.

    Returns
    -------
    tuple
        ``(temperature_K, ere)`` as floats or per-junction arrays.

    Raises
    ------
    InputError
        Naming the field and its allowed range.
    """
    if dark_current not in DARK_MODELS:
        raise InputError("dark_current", f"must be one of {', '.join(DARK_MODELS)}", dark_current)
    t = per_junction("temperature_K", temperature_K, n, *TEMPERATURE_RANGE_K, "K")
    e = per_junction("ere", ere, n, *ERE_RANGE, "")
    return t, e

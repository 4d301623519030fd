"""Error types raised for bad user input.

Every validation failure in gapmatch raises :class:`InputError`, whose message names the
offending field, the value received and the allowed range, so that the CLI can print one
readable line instead of a traceback.
"""

from __future__ import annotations

from typing import Any

__all__ = ["InputError", "check_range", "check_finite_array"]


class InputError(ValueError):
    """Invalid user input.

    Parameters
    ----------
    field : str
        Name (or key path) of the offending input, e.g. ``"temperature_K"`` or
        ``"study.spectrum.irradiance_W_m2"``.
    problem : str
        What is wrong, in words, including the allowed range where one exists.
    value : Any, optional
        The value received; shown in the message when given.
    """

    def __init__(self, field: str, problem: str, value: Any = None) -> None:
        self.field = field
        self.problem = problem
        self.value = value
        shown = "" if value is None else f" (got {value!r})"
        super().__init__(f"{field}: {problem}{shown}")


def check_range(
    field: str,
    value: Any,
    low: float,
    high: float,
    *,
    low_inclusive: bool = True,
    high_inclusive: bool = True,
    unit: str = "",
) -> float:
    """Check that a scalar lies in a closed or open interval and return it as float.

    Parameters
    ----------
    field : str
        Name of the input, used in the error message.
    value : Any
        Value to check; must be convertible to a finite float.
    low, high : float
        Interval bounds, in the unit of ``value``.
    low_inclusive, high_inclusive : bool
        Whether each bound belongs to the allowed interval.
    unit : str
        Unit shown in the message, e.g. ``"K"``.

    Returns
    -------
    float
        ``value`` as a float.

    Raises
    ------
    InputError
        If ``value`` is not a finite number in the interval.
    """
    lb = "[" if low_inclusive else "("
    hb = "]" if high_inclusive else ")"
    u = f" {unit}" if unit else ""
    allowed = f"must be a number in {lb}{low:g}, {high:g}{hb}{u}"
    try:
        x = float(value)
    except (TypeError, ValueError):
        raise InputError(field, allowed, value) from None
    if not (x == x) or x in (float("inf"), float("-inf")):
        raise InputError(field, allowed, value)
    ok_low = x >= low if low_inclusive else x > low
    ok_high = x <= high if high_inclusive else x < high
    if not (ok_low and ok_high):
        raise InputError(field, allowed, value)
    return x


def check_finite_array(field: str, arr: Any, low: float, high: float, unit: str = ""):
    """Check that every element of an array is finite and within ``[low, high]``.

    Parameters
    ----------
    field : str
        Name of the input, used in the error message.
    arr : array_like
        Values to check.
    low, high : float
        Inclusive bounds, in the unit of ``arr``.
    unit : str
        Unit shown in the message.

    Returns
    -------
    numpy.ndarray
        ``arr`` as a float64 array.
    """
    import numpy as np

    u = f" {unit}" if unit else ""
    try:
        a = np.asarray(arr, dtype=float)
    except (TypeError, ValueError):
        raise InputError(field, f"must be numbers in [{low:g}, {high:g}]{u}", arr) from None
    bad = ~np.isfinite(a) | (a < low) | (a > high)
    if np.any(bad):
        first = float(a[bad].flat[0])
        raise InputError(
            field,
            f"every value must be finite and in [{low:g}, {high:g}]{u}; "
            f"{int(bad.sum())} value(s) are not, first {first!r}",
        )
    return a

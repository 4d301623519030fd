"""Small validation helpers for TOML tables: key paths and did-you-mean suggestions.

Every failure raises :class:`gapmatch.errors.InputError` whose field is the key path of
the offending value (``materials.Si.gap.beta_K``, ``candidates[2].materials[1]``;
entries of arrays counted from 1), so the CLI prints one line.
"""

from __future__ import annotations

import difflib
import math
from collections.abc import Iterable
from typing import Any

from ..errors import InputError

__all__ = [
    "suggest",
    "check_keys",
    "need",
    "number",
    "integer",
    "string",
    "table",
    "array",
    "choice",
]


def suggest(word: str, options: Iterable[str]) -> str:
    """``"; did you mean 'x'?"`` for the closest option, or ``""``."""
    close = difflib.get_close_matches(str(word), list(options), n=1, cutoff=0.6)
    return f"; did you mean {close[0]!r}?" if close else ""


def _type(value: Any) -> str:
    if isinstance(value, bool):
        return "a boolean"
    if isinstance(value, int):
        return "an integer"
    if isinstance(value, float):
        return "a number"
    if isinstance(value, str):
        return "a string"
    if isinstance(value, list):
        return "an array"
    if isinstance(value, dict):
        return "a table"
    return type(value).__name__


def check_keys(tbl: dict, allowed: Iterable[str], path: str) -> None:
    """Reject keys of ``tbl`` outside ``allowed``, with a suggestion."""
    allowed = list(allowed)
    for k in tbl:
        if k not in allowed:
            where = f"{path}.{k}" if path else str(k)
            raise InputError(
                where,
                f"unknown key; allowed here: {', '.join(allowed)}{suggest(k, allowed)}",
            )


def need(tbl: dict, key: str, path: str) -> Any:
    """The value of a required key."""
    if key not in tbl:
        raise InputError(f"{path}.{key}" if path else key, "is required")
    return tbl[key]


def number(
    value: Any,
    path: str,
    low: float,
    high: float,
    unit: str = "",
    *,
    low_open: bool = False,
) -> float:
    """A finite number in ``[low, high]`` (``(low, high]`` with ``low_open``)."""
    u = f" {unit}" if unit else ""
    rng = f"{'(' if low_open else '['}{low:g}, {high:g}]{u}"
    if isinstance(value, bool) or not isinstance(value, int | float):
        raise InputError(path, f"must be a number in {rng}, not {_type(value)}", value)
    x = float(value)
    ok = math.isfinite(x) and (x > low if low_open else x >= low) and x <= high
    if not ok:
        raise InputError(path, f"out of range: must be a number in {rng}", value)
    return x


def integer(value: Any, path: str, low: int, high: int) -> int:
    """A whole number in ``[low, high]``."""
    if isinstance(value, bool) or not isinstance(value, int):
        raise InputError(
            path, f"must be a whole number in [{low}, {high}], not {_type(value)}", value
        )
    if not low <= value <= high:
        raise InputError(path, f"out of range: must be a whole number in [{low}, {high}]", value)
    return int(value)


def string(value: Any, path: str, max_len: int = 500) -> str:
    """A string of 1 to ``max_len`` characters."""
    if not isinstance(value, str):
        raise InputError(path, f"must be a string, not {_type(value)}", value)
    if not 1 <= len(value) <= max_len:
        raise InputError(path, f"must be 1 to {max_len} characters long", value)
    return value


def table(value: Any, path: str) -> dict:
    """A TOML table."""
    if not isinstance(value, dict):
        raise InputError(path, f"must be a table, not {_type(value)}", value)
    return value


def array(value: Any, path: str, min_len: int = 1, max_len: int = 1000) -> list:
    """A TOML array of ``min_len`` to ``max_len`` items."""
    if not isinstance(value, list):
        raise InputError(path, f"must be an array, not {_type(value)}", value)
    if not min_len <= len(value) <= max_len:
        raise InputError(path, f"needs {min_len} to {max_len} entries", len(value))
    return value


def choice(value: Any, path: str, options: Iterable[str]) -> str:
    """One of ``options``, with a suggestion."""
    options = list(options)
    if not isinstance(value, str) or value not in options:
        raise InputError(
            path,
            f"must be one of {', '.join(options)}{suggest(str(value), options)}",
            value,
        )
    return value

"""A small schema language for TOML files: typed fields with ranges, defaults and
did-you-mean suggestions, whose errors name the key path.

Nodes: :class:`Num`, :class:`Int`, :class:`Bool`, :class:`Str`, :class:`Choice`,
:class:`List`, :class:`Table` and :class:`Records` (an array of tables). ``check(value,
path)`` returns the validated value or raises :class:`gapmatch.errors.InputError` naming
``path`` (e.g. ``materials[2].gap_eV``, entries of arrays counted from 1), the value and
what is allowed. The study file (:mod:`gapmatch.study`) is one schema written in it.
"""

from __future__ import annotations

import difflib
import re
from typing import Any

from .errors import InputError

__all__ = ["Field", "Num", "Int", "Bool", "Str", "Choice", "List", "Table", "Records"]

_MISSING = object()


class Field:
    """Base of the schema nodes; ``check(value, path)`` returns the validated value."""

    def __init__(self, default: Any = _MISSING, doc: str = "") -> None:
        self.default = default
        self.doc = doc

    @property
    def required(self) -> bool:
        return self.default is _MISSING

    def describe(self) -> str:  # pragma: no cover - overridden
        return "a value"

    def check(self, value: Any, path: str) -> Any:  # pragma: no cover - overridden
        return value


def _typename(value: Any) -> str:
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


class Num(Field):
    """A number (TOML float or integer) in ``[low, high]`` (open ends optional)."""

    def __init__(
        self,
        low: float,
        high: float,
        unit: str = "",
        *,
        low_open: bool = False,
        default: Any = _MISSING,
        doc: str = "",
    ) -> None:
        super().__init__(default, doc)
        self.low, self.high, self.unit, self.low_open = low, high, unit, low_open

    def describe(self) -> str:
        u = f" {self.unit}" if self.unit else ""
        lb = "(" if self.low_open else "["
        return f"a number in {lb}{self.low:g}, {self.high:g}]{u}"

    def check(self, value, path):
        if isinstance(value, bool) or not isinstance(value, int | float):
            raise InputError(path, f"must be {self.describe()}, not {_typename(value)}", value)
        x = float(value)
        ok = (x > self.low if self.low_open else x >= self.low) and x <= self.high
        if not ok or x != x:
            raise InputError(path, f"out of range: must be {self.describe()}", value)
        return x


class Int(Field):
    """A whole number in ``[low, high]``."""

    def __init__(self, low: int, high: int, *, default: Any = _MISSING, doc: str = "") -> None:
        super().__init__(default, doc)
        self.low, self.high = low, high

    def describe(self) -> str:
        return f"a whole number in [{self.low}, {self.high}]"

    def check(self, value, path):
        if isinstance(value, bool) or not isinstance(value, int):
            raise InputError(path, f"must be {self.describe()}, not {_typename(value)}", value)
        if not self.low <= value <= self.high:
            raise InputError(path, f"out of range: must be {self.describe()}", value)
        return value


class Bool(Field):
    """``true`` or ``false``."""

    def describe(self) -> str:
        return "true or false"

    def check(self, value, path):
        if not isinstance(value, bool):
            raise InputError(path, f"must be {self.describe()}, not {_typename(value)}", value)
        return value


class Str(Field):
    """A string of at most ``max_len`` characters, optionally matching ``pattern``."""

    def __init__(
        self,
        *,
        max_len: int = 500,
        pattern: str | None = None,
        pattern_doc: str = "",
        min_len: int = 0,
        default: Any = _MISSING,
        doc: str = "",
    ) -> None:
        super().__init__(default, doc)
        self.max_len, self.min_len = max_len, min_len
        self.pattern = re.compile(pattern) if pattern else None
        self.pattern_doc = pattern_doc

    def describe(self) -> str:
        extra = f" ({self.pattern_doc})" if self.pattern_doc else ""
        return f"a string of {self.min_len} to {self.max_len} characters{extra}"

    def check(self, value, path):
        if not isinstance(value, str):
            raise InputError(path, f"must be {self.describe()}, not {_typename(value)}", value)
        if not self.min_len <= len(value) <= self.max_len:
            raise InputError(path, f"out of range: must be {self.describe()}", value)
        if self.pattern and not self.pattern.fullmatch(value):
            raise InputError(path, f"must be {self.describe()}", value)
        return value


class Choice(Field):
    """One of a fixed set of strings (the set may be given as a callable, evaluated at
    validation time)."""

    def __init__(self, choices, *, default: Any = _MISSING, doc: str = "") -> None:
        super().__init__(default, doc)
        self._choices = choices

    @property
    def choices(self) -> tuple[str, ...]:
        c = self._choices() if callable(self._choices) else self._choices
        return tuple(c)

    def describe(self) -> str:
        return "one of " + ", ".join(f"'{c}'" for c in self.choices)

    def check(self, value, path):
        if not isinstance(value, str):
            raise InputError(path, f"must be {self.describe()}, not {_typename(value)}", value)
        if value not in self.choices:
            close = difflib.get_close_matches(value, self.choices, n=1, cutoff=0.6)
            hint = f"; did you mean '{close[0]}'?" if close else ""
            raise InputError(path, f"must be {self.describe()}{hint}", value)
        return value


class List(Field):
    """An array of ``item`` values with ``min_len`` to ``max_len`` entries."""

    def __init__(
        self,
        item: Field,
        *,
        min_len: int = 0,
        max_len: int = 1000,
        unique: bool = False,
        default: Any = _MISSING,
        doc: str = "",
    ) -> None:
        super().__init__(default, doc)
        self.item, self.min_len, self.max_len, self.unique = item, min_len, max_len, unique

    def describe(self) -> str:
        n = (
            f"{self.min_len}"
            if self.min_len == self.max_len
            else f"{self.min_len} to {self.max_len}"
        )
        return f"an array of {n} entries, each {self.item.describe()}"

    def check(self, value, path):
        if not isinstance(value, list):
            raise InputError(path, f"must be {self.describe()}, not {_typename(value)}", value)
        if not self.min_len <= len(value) <= self.max_len:
            raise InputError(
                path, f"out of range: must be {self.describe()} (has {len(value)})", value
            )
        out = [self.item.check(v, f"{path}[{i + 1}]") for i, v in enumerate(value)]
        if self.unique and len(set(map(repr, out))) != len(out):
            raise InputError(path, "entries must not repeat", value)
        return out


class Table(Field):
    """A TOML table with known keys; unknown keys are errors with a suggestion."""

    def __init__(self, fields: dict[str, Field], *, default: Any = _MISSING, doc: str = "") -> None:
        super().__init__(default, doc)
        self.fields = fields

    def describe(self) -> str:
        return "a table"

    def check(self, value, path):
        if not isinstance(value, dict):
            raise InputError(
                path or "study file", f"must be a table, not {_typename(value)}", value
            )
        out: dict[str, Any] = {}
        for key in value:
            if key not in self.fields:
                kp = f"{path}.{key}" if path else key
                close = difflib.get_close_matches(key, list(self.fields), n=1, cutoff=0.6)
                hint = f"did you mean '{close[0]}'? " if close else ""
                allowed = ", ".join(self.fields) or "none"
                raise InputError(kp, f"unknown key; {hint}(allowed here: {allowed})")
        for key, spec in self.fields.items():
            kp = f"{path}.{key}" if path else key
            if key in value:
                out[key] = spec.check(value[key], kp)
            elif spec.required:
                raise InputError(kp, f"is required: {spec.describe()}")
            else:
                d = spec.default
                d = d() if callable(d) else d
                # an omitted table gets every default of its own keys (a table whose
                # default is None stays absent: None)
                out[key] = spec.check(d, kp) if isinstance(spec, Table) and d is not None else d
        return out


class Records(Field):
    """An array of tables (``[[name]]``), each checked against ``table``."""

    def __init__(
        self, table: Table, *, max_len: int = 100, default: Any = list, doc: str = ""
    ) -> None:
        super().__init__(default, doc)
        self.table, self.max_len = table, max_len

    def describe(self) -> str:
        return f"an array of at most {self.max_len} tables"

    def check(self, value, path):
        if not isinstance(value, list) or not all(isinstance(v, dict) for v in value):
            raise InputError(
                path, f"must be {self.describe()} (write [[{path}]] entries)", _typename(value)
            )
        if len(value) > self.max_len:
            raise InputError(path, f"out of range: at most {self.max_len} entries", len(value))
        return [self.table.check(v, f"{path}[{i + 1}]") for i, v in enumerate(value)]

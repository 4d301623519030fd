"""A small schema language for TOML files: typed fields with ranges, defaults and
did-you-mean suggestions, whose errors name the key path.

Nodes: :class:`Num`, :class:`Int`, :class:`Bool`, :class:`Str`, :class:`Choice`,
:class:`List`, :class:`PerJunction` (one number or one per junction), :class:`Table` and
:class:`Records` (an array of tables). ``check(value, path)`` returns the validated value
or raises :class:`gapmatch.errors.InputError` naming ``path`` (e.g. ``materials[2].gap_eV``,
entries of arrays counted from 1), the value and what is allowed. The study file
(:mod:`gapmatch.study`) is one schema written in it.

Every node carries a ``doc`` string and an optional ``example``; :func:`reference` writes
the key reference of a schema (plain text or Markdown) from them, so that the reference
and the validation are one thing. A :class:`Table` may list renamed keys
(``renamed={"old": "new"}``): the old name is still accepted, with a
:class:`RenamedKeyWarning` naming the new one.
"""

from __future__ import annotations

import difflib
import re
import warnings
from typing import Any

from .errors import InputError

__all__ = [
    "Field",
    "Num",
    "Int",
    "Bool",
    "Str",
    "Choice",
    "List",
    "Either",
    "PerJunction",
    "Table",
    "Records",
    "RenamedKeyWarning",
    "reference",
    "walk",
]


class RenamedKeyWarning(UserWarning):
    """A key was given under its old name (still accepted); the message names the new
    key path."""


_MISSING = object()


class Field:
    """Base of the schema nodes; ``check(value, path)`` returns the validated value."""

    #: what the reference calls this kind of value
    kind = "value"
    #: unit shown in the reference ("" for none)
    unit = ""

    def __init__(self, default: Any = _MISSING, doc: str = "", example: Any = _MISSING) -> None:
        self.default = default
        self.doc = doc
        self.example = example

    @property
    def required(self) -> bool:
        return self.default is _MISSING

    def allowed(self) -> str:
        """The allowed values in words (for the reference)."""
        return self.describe()

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
        example: Any = _MISSING,
    ) -> None:
        super().__init__(default, doc, example)
        self.low, self.high, self.unit, self.low_open = low, high, unit, low_open

    kind = "number"

    def allowed(self) -> str:
        lb = "(" if self.low_open else "["
        return f"{lb}{self.low:g}, {self.high:g}]"

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

    kind = "whole number"

    def __init__(
        self,
        low: int,
        high: int,
        *,
        default: Any = _MISSING,
        doc: str = "",
        example: Any = _MISSING,
    ) -> None:
        super().__init__(default, doc, example)
        self.low, self.high = low, high

    def allowed(self) -> str:
        return f"[{self.low}, {self.high}]"

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

    kind = "boolean"

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
        example: Any = _MISSING,
    ) -> None:
        super().__init__(default, doc, example)
        self.max_len, self.min_len = max_len, min_len
        self.pattern = re.compile(pattern) if pattern else None
        self.pattern_doc = pattern_doc

    kind = "string"

    def allowed(self) -> str:
        extra = f"; {self.pattern_doc}" if self.pattern_doc else ""
        return f"{self.min_len} to {self.max_len} characters{extra}"

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

    kind = "string"

    def __init__(
        self, choices, *, default: Any = _MISSING, doc: str = "", example: Any = _MISSING
    ) -> None:
        super().__init__(default, doc, example)
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
        example: Any = _MISSING,
    ) -> None:
        super().__init__(default, doc, example)
        self.item, self.min_len, self.max_len, self.unique = item, min_len, max_len, unique

    @property
    def kind(self) -> str:  # type: ignore[override]
        return f"array of {self.item.kind}s"

    @property
    def unit(self) -> str:  # type: ignore[override]
        return self.item.unit

    def allowed(self) -> str:
        n = (
            f"{self.min_len}"
            if self.min_len == self.max_len
            else f"{self.min_len} to {self.max_len}"
        )
        extra = "; no repeats" if self.unique else ""
        return f"{n} entries, each {self.item.allowed()}{extra}"

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


class Either(Field):
    """A whole number (``number``) or a string (``text``): e.g. a column given by its
    number or its header name."""

    def __init__(
        self,
        number: Int,
        text: Str,
        *,
        default: Any = _MISSING,
        doc: str = "",
        example: Any = _MISSING,
    ) -> None:
        super().__init__(default, doc, example)
        self.number, self.text = number, text

    @property
    def kind(self) -> str:  # type: ignore[override]
        return f"{self.number.kind} or {self.text.kind}"

    def allowed(self) -> str:
        return f"{self.number.allowed()}, or {self.text.allowed()}"

    def describe(self) -> str:
        return f"{self.number.describe()}, or {self.text.describe()}"

    def check(self, value, path):
        if isinstance(value, str):
            return self.text.check(value, path)
        if isinstance(value, bool) or not isinstance(value, int):
            raise InputError(path, f"must be {self.describe()}, not {_typename(value)}", value)
        return self.number.check(value, path)


class PerJunction(Field):
    """One number for every junction, or an array of one number per junction (top
    first). The array's length is checked against the stacks it applies to by the
    schema's user (the junction count is not known here)."""

    kind = "number or array of numbers"

    def __init__(
        self,
        item: Num,
        *,
        max_len: int = 6,
        default: Any = _MISSING,
        doc: str = "",
        example: Any = _MISSING,
    ) -> None:
        super().__init__(default, doc, example)
        self.item, self.max_len = item, max_len

    @property
    def unit(self) -> str:  # type: ignore[override]
        return self.item.unit

    def allowed(self) -> str:
        return f"{self.item.allowed()}; one value, or 1 to {self.max_len} (one per junction)"

    def describe(self) -> str:
        return f"{self.item.describe()}, or an array of one such number per junction"

    def check(self, value, path):
        if isinstance(value, list):
            if not 1 <= len(value) <= self.max_len:
                raise InputError(
                    path,
                    f"out of range: must be {self.describe()} (1 to {self.max_len} entries, "
                    f"has {len(value)})",
                    value,
                )
            return [self.item.check(v, f"{path}[{i + 1}]") for i, v in enumerate(value)]
        try:
            return self.item.check(value, path)
        except InputError as exc:
            raise InputError(
                path, f"{exc.problem} (or an array of one per junction)", exc.value
            ) from None


class Table(Field):
    """A TOML table with known keys; unknown keys are errors with a suggestion.

    ``renamed`` maps old key names to their new names: an old name is accepted as the
    new one with a :class:`RenamedKeyWarning` (an error if both are given).
    """

    kind = "table"

    def __init__(
        self,
        fields: dict[str, Field],
        *,
        default: Any = _MISSING,
        doc: str = "",
        renamed: dict[str, str] | None = None,
    ) -> None:
        super().__init__(default, doc)
        self.fields = fields
        self.renamed = dict(renamed or {})

    def describe(self) -> str:
        return "a table"

    def check(self, value, path):
        if not isinstance(value, dict):
            raise InputError(
                path or "study file", f"must be a table, not {_typename(value)}", value
            )
        value = self._renames(value, path)
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

    def _renames(self, value: dict, path: str) -> dict:
        if not any(k in value for k in self.renamed):
            return value
        value = dict(value)
        for old, new in self.renamed.items():
            if old not in value:
                continue
            kold, knew = (f"{path}.{k}" if path else k for k in (old, new))
            if new in value:
                raise InputError(kold, f"is the old name of {knew}; give only {knew}")
            value[new] = value.pop(old)
            warnings.warn(
                RenamedKeyWarning(f"{kold} is now called {knew} (the old name still works)"),
                stacklevel=2,
            )
        return value


class Records(Field):
    """An array of tables (``[[name]]``), each checked against ``table``."""

    kind = "array of tables"

    def __init__(
        self, table: Table, *, max_len: int = 100, default: Any = list, doc: str = ""
    ) -> None:
        super().__init__(default, doc)
        self.table, self.max_len = table, max_len

    @property
    def fields(self) -> dict[str, Field]:
        """The keys of each entry."""
        return self.table.fields

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


# ---- the key reference -------------------------------------------------------------------
def walk(node: Table | Records, path: str = ""):
    """Every key of a schema, depth first: ``(key path, field)`` pairs.

    Tables and arrays of tables are yielded before their own keys (arrays of tables as
    ``name[]``); keys are in the schema's order.
    """
    for key, spec in node.fields.items():
        kp = f"{path}.{key}" if path else key
        if isinstance(spec, Records):
            yield f"{kp}[]", spec
            yield from walk(spec, f"{kp}[]")
        elif isinstance(spec, Table) and spec.fields:
            yield kp, spec
            yield from walk(spec, kp)
        else:
            yield kp, spec


def _toml(value: Any) -> str:
    """A value written as TOML."""
    if isinstance(value, bool):
        return "true" if value else "false"
    if isinstance(value, str):
        return '"' + value.replace("\\", "\\\\").replace('"', '\\"') + '"'
    if isinstance(value, float):
        return repr(value) if abs(value) < 1e6 or value == 0 else f"{value:g}"
    if isinstance(value, list | tuple):
        return "[" + ", ".join(_toml(v) for v in value) + "]"
    return str(value)


def _default_text(spec: Field) -> str:
    if spec.required:
        return "required"
    d = spec.default
    if isinstance(spec, Table | Records):
        return "optional" if d is None or isinstance(spec, Records) else "defaults below"
    d = d() if callable(d) else d
    if d is None:
        return "none"
    if isinstance(d, list) and not d:
        return "[]"
    return _toml(d)


def _example(key: str, spec: Field) -> str:
    """A TOML line for the key: its ``example``, else its default."""
    name = key.rsplit(".", 1)[-1]
    if spec.example is not _MISSING:
        return f"{name} = {_toml(spec.example)}"
    if not spec.required:
        d = spec.default() if callable(spec.default) else spec.default
        if d is not None and d != [] and d != "":
            return f"{name} = {_toml(d)}"
    return ""


def _md_text(text: str) -> str:
    """Text for a Markdown page: angle brackets shown, not taken for HTML."""
    return text.replace("<", "&lt;").replace(">", "&gt;")


def _wrap(text: str, indent: str) -> str:
    import textwrap

    return textwrap.fill(
        text, width=92, initial_indent=indent, subsequent_indent=indent, break_long_words=False
    )


def reference(documents: list[tuple[str, str, Table]], *, markdown: bool = False) -> str:
    """The key reference of one or more schemas, from their fields.

    Parameters
    ----------
    documents : list of (title, intro, Table)
        Each file kind: a heading, a paragraph said before its keys, and its schema.
    markdown : bool
        Markdown (headings and one table per TOML table) instead of plain text.

    Returns
    -------
    str
        For every table and key: type, unit, default, allowed range, description and an
        example line; ends with a newline.
    """
    out: list[str] = []
    for title, intro, schema in documents:
        out += [f"## {title}" if markdown else title.upper(), ""]
        if intro:
            out += [intro if markdown else _wrap(intro, ""), ""]
        groups: list[tuple[str, Field, list[tuple[str, Field]]]] = []
        top: list[tuple[str, Field]] = []
        for kp, spec in walk(schema):
            if isinstance(spec, Table | Records) and spec.fields:
                groups.append((kp, spec, []))
                continue
            owner = next((g for g in reversed(groups) if kp.startswith(g[0] + ".")), None)
            (owner[2] if owner is not None else top).append((kp, spec))
        if top:
            groups.insert(0, ("(top level)", schema, top))
        for name, spec, keys in groups:
            head = f"[[{name[:-2]}]]" if name.endswith("[]") else f"[{name}]"
            if name == "(top level)":
                head = "top-level keys"
            status = _default_text(spec) if name != "(top level)" else ""
            if markdown:
                out += [f"### `{head}`", ""]
            else:
                out += [f"{head}", "-" * len(head)]
            if spec.doc:
                line = spec.doc + (f" ({status})" if status else "")
                out += [_md_text(line) if markdown else _wrap(line, ""), ""]
            elif status:
                out += [f"({status})", ""]
            if markdown and keys:
                out += [
                    "| key | type | unit | default | allowed | description | example |",
                    "|---|---|---|---|---|---|---|",
                ]
            for kp, f in keys:
                key = kp[len(name) + 1 :] if name != "(top level)" else kp
                cells = [
                    key,
                    f.kind,
                    f.unit or "-",
                    _default_text(f),
                    f.allowed(),
                    f.doc,
                    _example(kp, f),
                ]
                if markdown:
                    esc = [c.replace("|", "\\|") for c in cells]
                    esc[4:6] = [_md_text(c) for c in esc[4:6]]
                    esc[0] = f"`{esc[0]}`"
                    esc[6] = f"`{esc[6]}`" if esc[6] else ""
                    esc[3] = f"`{esc[3]}`" if esc[3] not in ("required", "none") else esc[3]
                    out.append("| " + " | ".join(esc) + " |")
                else:
                    unit = f" [{f.unit}]" if f.unit else ""
                    out.append(f"  {key}{unit}: {f.kind}, default {cells[3]}")
                    for text in (
                        f"allowed: {cells[4]}",
                        f.doc,
                        cells[6] and f"example: {cells[6]}",
                    ):
                        if text:
                            out.append(_wrap(text, "      "))
            if keys or markdown:
                out.append("")
    return "\n".join(out).rstrip("\n") + "\n"

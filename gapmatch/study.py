"""Study files: one TOML file that describes a whole analysis and its report.

A study file names the study, its spectrum and cell conditions, the connections to
compare, the stacks of interest, candidate materials (a fixed gap or a tunable window),
the map ranges and which report sections to include. :func:`load_study` reads and
validates it completely before anything is computed; every problem raises one
:class:`gapmatch.InputError` naming the key path (e.g. ``map.step_eV`` or
``materials[2].gap_eV``, entries of arrays of tables counted from 1), the value and the
allowed range. Unknown keys get a "did you mean" suggestion; TOML syntax errors give the
line and column.

Minimal example::

    [study]
    name = "my-study"
    title = "Wide-gap top cells on silicon"

    [[stacks]]
    name = "candidate A"
    gaps_eV = [1.72, 1.12]

Other features add their own tables with :func:`register_table` (schema objects
:class:`Table`, :class:`Num`, :class:`Int`, :class:`Str`, :class:`Choice`,
:class:`List`, :class:`Records`); their validated content is in ``Study.extra``.
"""

from __future__ import annotations

import difflib
import hashlib
import re
import tomllib
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from .api import GAP_RANGE_EV, MAX_JUNCTIONS, TEMPERATURE_RANGE_K, check_gaps
from .core.connections import CONNECTIONS
from .core.diodes import DARK_MODELS
from .core.spectra import MAX_CONCENTRATION
from .errors import InputError
from .io.spectra import SPECTRUM_CHOICES

__all__ = [
    "Study",
    "Material",
    "StackOfInterest",
    "load_study",
    "parse_study",
    "register_table",
    "STUDY_SCHEMA",
    "SEARCH_TABLE",
    "THICKNESS_TABLE",
    "Table",
    "Num",
    "Int",
    "Str",
    "Bool",
    "Choice",
    "List",
    "Records",
]

_MISSING = object()


# ---- a small schema language ----------------------------------------------------------------
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
                # an omitted table gets every default of its own keys
                out[key] = spec.check(d, kp) if isinstance(spec, Table) else d
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


# ---- the study schema ---------------------------------------------------------------------
def _section_names() -> tuple[str, ...]:
    from .report.sections import SECTIONS

    return tuple(SECTIONS)


def _default_sections() -> list[str]:
    from .report.sections import DEFAULT_SECTIONS

    return list(DEFAULT_SECTIONS)


_GAP = Num(*GAP_RANGE_EV, "eV")
_NAME = Str(min_len=1, max_len=120)

STUDY_SCHEMA = Table(
    {
        "study": Table(
            {
                "name": Str(
                    min_len=1,
                    max_len=80,
                    pattern=r"[A-Za-z0-9][A-Za-z0-9_.-]*",
                    pattern_doc="letters, digits, '-', '_' and '.', starting with a letter "
                    "or digit; it names the report file",
                ),
                "title": Str(min_len=1, max_len=200),
                "author": Str(max_len=200, default=""),
                "organisation": Str(max_len=200, default=""),
                "description": Str(max_len=5000, default=""),
                "connections": List(
                    Choice(CONNECTIONS),
                    min_len=1,
                    max_len=len(CONNECTIONS),
                    unique=True,
                    default=lambda: ["series", "independent"],
                ),
                "sections": List(
                    Choice(_section_names),
                    min_len=1,
                    max_len=100,
                    unique=True,
                    default=_default_sections,
                ),
            }
        ),
        "conditions": Table(
            {
                "spectrum": Choice(SPECTRUM_CHOICES, default="AM1.5G"),
                "spectrum_file": Str(min_len=1, max_len=1000, default=None),
                "sun_temperature_K": Num(1000.0, 20000.0, "K", default=6000.0),
                "irradiance_W_m2": Num(0.0, 1e5, "W m^-2", low_open=True, default=None),
                "concentration": Num(0.0, MAX_CONCENTRATION, "suns", low_open=True, default=1.0),
                "temperature_K": Num(*TEMPERATURE_RANGE_K, "K", default=300.0),
                "ere": Num(0.0, 1.0, low_open=True, default=1.0),
                "dark_current": Choice(DARK_MODELS, default="boltzmann"),
            },
            default=dict,
        ),
        "map": Table(
            {
                "x_range_eV": List(_GAP, min_len=2, max_len=2, default=lambda: [0.5, 2.5]),
                "y_range_eV": List(_GAP, min_len=2, max_len=2, default=None),
                "step_eV": Num(0.0005, 1.0, "eV", default=0.01),
                "stack_eV": List(_GAP, min_len=2, max_len=MAX_JUNCTIONS, default=None),
                "axes": List(Int(1, MAX_JUNCTIONS), min_len=2, max_len=2, default=None),
                "others": Choice(("fixed", "optimised"), default="fixed"),
                "free_range_eV": List(_GAP, min_len=2, max_len=2, default=lambda: [0.3, 3.0]),
                "tolerance_pct": Num(0.0, 100.0, "%", low_open=True, default=1.0),
                "connections": List(
                    Choice(CONNECTIONS),
                    min_len=1,
                    max_len=len(CONNECTIONS),
                    unique=True,
                    default=None,
                ),
            },
            default=dict,
        ),
        "cut": Table(
            {
                "bottom_gap_eV": Num(*GAP_RANGE_EV, "eV", default=1.12),
                "step_eV": Num(0.0005, 1.0, "eV", default=0.005),
            },
            default=dict,
        ),
        "materials": Records(
            Table(
                {
                    "name": _NAME,
                    "gap_eV": Num(*GAP_RANGE_EV, "eV", default=None),
                    "gap_range_eV": List(_GAP, min_len=2, max_len=2, default=None),
                    "role": Choice(("top", "bottom", "any"), default="any"),
                    "note": Str(max_len=1000, default=""),
                }
            )
        ),
        "stacks": Records(
            Table(
                {
                    "name": _NAME,
                    "gaps_eV": List(_GAP, min_len=1, max_len=MAX_JUNCTIONS),
                    "note": Str(max_len=1000, default=""),
                }
            ),
            max_len=50,
        ),
    }
)

#: tables added by other features (name -> Table); validated content in ``Study.extra``
EXTRA_TABLES: dict[str, Table] = {}


def register_table(name: str, table: Table) -> None:
    """Add an optional top-level table to the study schema (for other features).

    Parameters
    ----------
    name : str
        Table name in the study file, e.g. ``"search"``.
    table : Table
        Its schema; give it ``default=dict`` (or another default) to make it optional.
    """
    if name in STUDY_SCHEMA.fields:
        raise ValueError(f"study table {name!r} already exists")
    STUDY_SCHEMA.fields[name] = table
    EXTRA_TABLES[name] = table


#: ``[search]``: the band-gap search a study runs (see :mod:`gapmatch.search.study_table`)
SEARCH_TABLE = Table(
    {
        "junctions": Int(2, MAX_JUNCTIONS, default=2, doc="junctions per stack"),
        "connection": Choice(CONNECTIONS, default="series"),
        "materials": List(
            Str(min_len=1, max_len=200),
            max_len=MAX_JUNCTIONS,
            default=list,
            doc="per junction, top first: a [[materials]] name or 'any'",
        ),
        "bounds_eV": List(
            Num(*GAP_RANGE_EV, "eV"), min_len=2, max_len=2, default=lambda: [0.5, 3.0]
        ),
        "min_spacing_eV": Num(0.0, 1.0, "eV", default=0.05),
        "min_mismatch_ratio": Num(0.0, 1.0, default=0.0, doc="0: no mismatch constraint"),
        "trials": Int(0, 100_000, default=0, doc="0: the default trial count"),
        "seed": Int(0, 2**31 - 1, default=0),
    },
    default=dict,
)

#: ``[thickness]``: efficiency versus one absorber's thickness (report section)
THICKNESS_TABLE = Table(
    {
        "stack": Str(default="", doc="a stack of interest (default: the first)"),
        "junction": Int(1, MAX_JUNCTIONS, default=1, doc="1 = top"),
        "connection": Choice(CONNECTIONS, default="series"),
        "absorber": Choice(("direct", "indirect"), default="direct"),
        "light_trapping": Choice(("single", "double", "lambertian"), default="single"),
        "range_nm": List(Num(1.0, 1e8, "nm"), min_len=2, max_len=2, default=lambda: [30.0, 3000.0]),
        "points": Int(5, 200, default=40),
    },
    default=dict,
)

register_table("search", SEARCH_TABLE)
register_table("thickness", THICKNESS_TABLE)


# ---- the validated study ---------------------------------------------------------------------
@dataclass(frozen=True)
class Material:
    """A candidate absorber: a fixed gap or a tunable window [eV]."""

    name: str
    gap_eV: float | None = None
    gap_range_eV: tuple[float, float] | None = None
    role: str = "any"
    note: str = ""

    @property
    def is_tunable(self) -> bool:
        """True for a tunable window."""
        return self.gap_range_eV is not None

    def describe_gap(self) -> str:
        """The gap (or window) in words, e.g. ``"1.60-1.80 eV"``."""
        if self.gap_range_eV is not None:
            return f"{self.gap_range_eV[0]:.2f}-{self.gap_range_eV[1]:.2f} eV (tunable)"
        return f"{self.gap_eV:.2f} eV"


@dataclass(frozen=True)
class StackOfInterest:
    """A named stack to mark on maps and evaluate in full."""

    name: str
    gaps_eV: tuple[float, ...]
    note: str = ""


@dataclass
class Study:
    """A validated study file.

    Attributes
    ----------
    name, title, author, organisation, description : str
        From ``[study]``.
    connections : list of str
        Connections to compare.
    sections : list of str
        Report sections, in order.
    conditions : dict
        Keyword arguments for :func:`gapmatch.evaluate` (spectrum and conditions;
        ``spectrum_file`` resolved relative to the study file).
    map : dict
        Map settings (see ``[map]``); ``y_range_eV`` filled in.
    cut : dict
        One-dimensional cut settings.
    materials : list of Material
    stacks : list of StackOfInterest
    extra : dict
        Validated tables added with :func:`register_table`.
    path : pathlib.Path or None
        The study file.
    sha256 : str
        SHA-256 of the file's bytes (hex).
    """

    name: str
    title: str
    author: str
    organisation: str
    description: str
    connections: list[str]
    sections: list[str]
    conditions: dict
    map: dict
    cut: dict
    materials: list[Material]
    stacks: list[StackOfInterest]
    extra: dict = field(default_factory=dict)
    path: Path | None = None
    sha256: str = ""

    @property
    def n_junctions(self) -> int:
        """Junctions of the map's stacks."""
        s = self.map.get("stack_eV")
        return 2 if s is None else len(s)

    @property
    def map_connections(self) -> list[str]:
        """Connections the map is computed for: ``map.connections`` if given, else the
        study's series and independent connections (voltage-matched maps search cell
        ratios at every point and take about a minute for 201 x 201 points, so they are
        mapped only when ``map.connections`` asks for them)."""
        if self.map.get("connections"):
            return list(self.map["connections"])
        c = [x for x in self.connections if x != "voltage-matched"]
        return c or ["series", "independent"]

    def map_kwargs(self) -> dict:
        """Keyword arguments of :func:`gapmatch.maps.compute_map`."""
        m = self.map
        kw = dict(
            connections=self.map_connections,
            x_range_eV=tuple(m["x_range_eV"]),
            y_range_eV=tuple(m["y_range_eV"]),
            step_eV=m["step_eV"],
            **self.conditions,
        )
        if m["stack_eV"] is not None:
            kw.update(
                stack_eV=m["stack_eV"],
                axes=tuple(m["axes"]),
                others=m["others"],
                free_range_eV=tuple(m["free_range_eV"]),
            )
        return kw


_POS_RE = re.compile(r"\(at line (\d+), column (\d+)\)")


def parse_study(
    text: str,
    *,
    source: str = "study file",
    base_dir: Path | None = None,
    raw_bytes: bytes | None = None,
) -> Study:
    """Validate study-file text.

    Parameters
    ----------
    text : str
        TOML text.
    source : str
        Name of the file, used in syntax-error messages.
    base_dir : pathlib.Path, optional
        Folder that relative ``conditions.spectrum_file`` paths are resolved against.
    raw_bytes : bytes, optional
        The file's bytes for the hash (default: ``text`` encoded as UTF-8).

    Returns
    -------
    Study

    Raises
    ------
    InputError
        The first problem found, naming the key path, the value and the allowed range
        (or, for TOML syntax errors, the line and column).
    """
    try:
        data = tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        msg = str(exc)
        m = _POS_RE.search(msg)
        where = f"line {m.group(1)}, column {m.group(2)}" if m else "end of file"
        reason = _POS_RE.sub("", msg).strip()
        raise InputError(source, f"TOML syntax error at {where}: {reason}") from None
    if "study" not in data:
        raise InputError("study", "is required: a [study] table with at least name and title")
    v = STUDY_SCHEMA.check(data, "")
    return _build(v, base_dir, raw_bytes if raw_bytes is not None else text.encode("utf-8"))


def load_study(path: str | Path) -> Study:
    """Read and validate a study file (see :func:`parse_study`).

    Parameters
    ----------
    path : str or pathlib.Path
        A TOML study file.

    Returns
    -------
    Study
    """
    p = Path(path)
    if not p.is_file():
        raise InputError(str(p), "study file not found (give the path of a .toml file)")
    raw = p.read_bytes()
    try:
        text = raw.decode("utf-8")
    except UnicodeDecodeError:
        raise InputError(str(p), "must be UTF-8 text") from None
    st = parse_study(text, source=str(p), base_dir=p.parent, raw_bytes=raw)
    st.path = p
    return st


def _build(v: dict, base_dir: Path | None, raw: bytes) -> Study:
    s = v["study"]
    cond = dict(v["conditions"])
    if cond["spectrum_file"] is not None:
        f = Path(cond["spectrum_file"])
        if not f.is_absolute() and base_dir is not None:
            f = base_dir / f
        if not f.is_file():
            raise InputError(
                "conditions.spectrum_file",
                "file not found (paths are relative to the study file)",
                cond["spectrum_file"],
            )
        cond["spectrum_file"] = str(f)
    if cond["spectrum"] != "blackbody" and cond["sun_temperature_K"] != 6000.0:
        raise InputError(
            "conditions.sun_temperature_K",
            "applies to spectrum 'blackbody' only",
            cond["sun_temperature_K"],
        )

    m = dict(v["map"])
    if m["y_range_eV"] is None:
        m["y_range_eV"] = list(m["x_range_eV"])
    for key in ("x_range_eV", "y_range_eV", "free_range_eV"):
        lo, hi = m[key]
        if hi <= lo:
            raise InputError(f"map.{key}", "needs the first gap below the last one [eV]", m[key])
    for key in ("x_range_eV", "y_range_eV"):
        lo, hi = m[key]
        if (hi - lo) / m["step_eV"] < 1 - 1e-9:
            raise InputError(
                "map.step_eV",
                f"must be at most the width of map.{key} ({hi - lo:g} eV)",
                m["step_eV"],
            )
    from .maps import MAX_MAP_POINTS

    npts = ((m["x_range_eV"][1] - m["x_range_eV"][0]) / m["step_eV"] + 1) * (
        (m["y_range_eV"][1] - m["y_range_eV"][0]) / m["step_eV"] + 1
    )
    if npts > MAX_MAP_POINTS * 1.0001:
        raise InputError(
            "map.step_eV",
            f"gives about {npts:,.0f} grid points; at most "
            f"{MAX_MAP_POINTS:,} (use a larger step or smaller ranges)",
            m["step_eV"],
        )
    if m["stack_eV"] is None:
        if m["axes"] is not None and sorted(m["axes"]) != [1, 2]:
            raise InputError(
                "map.axes",
                "without map.stack_eV the map has two junctions: axes must be [1, 2]",
                m["axes"],
            )
        m["axes"] = m["axes"] or [1, 2]
    else:
        n = len(m["stack_eV"])
        m["axes"] = m["axes"] or [1, n]
        a = m["axes"]
        if a[0] == a[1] or not all(1 <= k <= n for k in a):
            raise InputError(
                "map.axes", f"needs two different junction numbers in [1, {n}] (1 = top)", a
            )

    mats = []
    names: set[str] = set()
    for i, md in enumerate(v["materials"], start=1):
        kp = f"materials[{i}]"
        if (md["gap_eV"] is None) == (md["gap_range_eV"] is None):
            raise InputError(
                kp,
                "needs exactly one of gap_eV (a fixed gap) or gap_range_eV "
                "(a tunable window [low, high])",
                md["name"],
            )
        rng = None
        if md["gap_range_eV"] is not None:
            lo, hi = md["gap_range_eV"]
            if hi <= lo:
                raise InputError(
                    f"{kp}.gap_range_eV",
                    "needs the low gap first, below the high one [eV]",
                    md["gap_range_eV"],
                )
            rng = (lo, hi)
        if md["name"] in names:
            raise InputError(f"{kp}.name", "repeats an earlier material's name", md["name"])
        names.add(md["name"])
        mats.append(Material(md["name"], md["gap_eV"], rng, md["role"], md["note"]))

    stacks = []
    names = set()
    for i, sd in enumerate(v["stacks"], start=1):
        kp = f"stacks[{i}]"
        try:
            check_gaps(sd["gaps_eV"])
        except InputError as exc:
            raise InputError(f"{kp}.gaps_eV", exc.problem, sd["gaps_eV"]) from None
        if "voltage-matched" in s["connections"] and len(sd["gaps_eV"]) > 3:
            raise InputError(
                f"{kp}.gaps_eV",
                "voltage matching is chosen automatically for "
                "at most 3 junctions; drop 'voltage-matched' from "
                "study.connections or use a shorter stack",
                sd["gaps_eV"],
            )
        if sd["name"] in names:
            raise InputError(f"{kp}.name", "repeats an earlier stack's name", sd["name"])
        names.add(sd["name"])
        stacks.append(StackOfInterest(sd["name"], tuple(sd["gaps_eV"]), sd["note"]))

    extra = {k: v[k] for k in EXTRA_TABLES if k in v}
    return Study(
        name=s["name"],
        title=s["title"],
        author=s["author"],
        organisation=s["organisation"],
        description=s["description"],
        connections=list(s["connections"]),
        sections=list(s["sections"]),
        conditions=cond,
        map=m,
        cut=dict(v["cut"]),
        materials=mats,
        stacks=stacks,
        extra=extra,
        sha256=hashlib.sha256(raw).hexdigest(),
    )

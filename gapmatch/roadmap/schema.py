"""Roadmap study files: candidates, milestones and projected material parameters.

A roadmap study is one TOML file, read and validated completely before anything is
computed (:func:`load_roadmap`); every problem raises one :class:`gapmatch.InputError`
naming the key path (``candidates[2].materials[1]``, ``projections[4].ere.low``; arrays
counted from 1) with the allowed range and, for names, a "did you mean" suggestion.

Tables
------
``[roadmap]``
    ``name`` (file-name slug), ``title``, ``organisation``, ``description``,
    ``milestones`` (years, increasing, 1 to 12), ``draws`` (Monte Carlo draws, 1 to
    100,000; default 2000), ``seed`` (default 0).
``[conditions]``
    ``spectrum`` (``AM1.5G``, ``AM1.5D``, ``AM0``, ``blackbody``), ``spectrum_file``,
    ``concentration`` [suns], ``irradiance_W_m2``, ``temperature_K`` (cell temperature
    [K]; library gaps are shifted to it with their temperature models).
``[site]``
    Optional: rank candidates by their modelled annual energy at a site instead of
    their efficiency under one spectrum. The keys of a report study's ``[site]`` table
    (``weather`` file relative to the study file or ``pvlib:NAME``, ``tilt_deg``,
    ``azimuth_deg``, ``tracking``, ``albedo``, ``temperature_model``, ``mounting``,
    ``transposition``, ...), plus ``representatives`` (weighted representative spectra
    of the year used for every evaluation, 4 to 96, default 24). Excludes
    ``[conditions]``: the site brings its own hourly spectra and cell temperatures.
``[search]``
    ``samples`` (Sobol points of the gap search, 16 to 65536, default 256), ``starts``
    (polished basins, 1 to 16, default 3), ``min_spacing_eV`` (default 0.05).
``[sources.<key>]``
    The study's own sources (``citation``, ``status``, ``where``, ``note``), usable by
    ``[materials]`` overrides.
``[materials.<key>]``
    Override fields of a library material (``base = "<library key>"``, or a library key
    as the table name) or add a material (every field, format of ``library.toml``).
    Plain numbers are allowed here and carry the status ``"study assumption"``.
``[[candidates]]``
    ``name``, ``materials`` (library or study keys, top first, 1 to 6), ``connection``
    (``series``, ``independent``, ``voltage-matched``), ``cells_per_string``
    (voltage-matched), ``note``.
``[[projections]]``
    ``material``, ``year`` (or ``years``, a list of milestones) and the projected
    parameters of that material at those milestones, each a number or an uncertainty:

    * ``ere`` -- external radiative efficiency, 1e-12 to 1; sampled in log10 space;
    * ``thickness_nm`` -- absorber thickness [nm] (sets the library's finite absorber;
      without it the junction is an ideal step absorber);
    * ``collection_efficiency`` -- (0, 1], a number only;
    * ``series_resistance_ohm_cm2`` -- this sub-cell's share [ohm cm^2], a number only
      (a series stack adds its sub-cells' shares);
    * ``gap_window_eV`` -- ``[low, high]`` for a material whose gap is tunable;
    * ``source`` -- where the projection comes from (text).

    An uncertainty is ``{low, likely, high}`` (triangular distribution) or ``{low,
    high}`` (uniform). A material without an ``ere`` projection at a milestone uses the
    library's typical value (with its source mark); one without any is an error.

Collection efficiency and series resistance are numbers only because
:func:`gapmatch.evaluate` takes one value per junction for a whole batch.
"""

from __future__ import annotations

import re
import tomllib
from dataclasses import dataclass, field
from functools import cache
from pathlib import Path
from typing import Any

import numpy as np

from ..errors import InputError
from ..materials import STUDY_STATUS, MaterialLibrary, Source, load_library
from ..materials import checks as ck
from ..materials.library import STATUSES
from ..schema import Choice, Field, Int, List, Num, Records, Str, Table

__all__ = [
    "Uncertain",
    "Projection",
    "Candidate",
    "RoadmapStudy",
    "load_roadmap",
    "parse_roadmap",
    "UNCERTAIN_PARAMETERS",
    "roadmap_schema",
]

CONNECTIONS = ("series", "independent", "voltage-matched")
SPECTRA = ("AM1.5G", "AM1.5D", "AM0", "blackbody", "file")
#: projected parameters that may be uncertain
UNCERTAIN_PARAMETERS = ("ere", "thickness_nm")
_RANGES = {
    "ere": (1e-12, 1.0, "", False),
    "thickness_nm": (1.0, 1e8, "nm", False),
    "collection_efficiency": (0.0, 1.0, "", True),
    "series_resistance_ohm_cm2": (0.0, 100.0, "ohm cm^2", False),
}


def _uncertain_doc(name: str, doc: str, example) -> Field:
    lo, hi, unit, low_open = _RANGES[name]
    return Num(lo, hi, unit, low_open=low_open, default=None, doc=doc, example=example)


def _keys(*path: str) -> tuple[str, ...]:
    """The allowed keys of a table of the roadmap schema (``_keys("roadmap")``)."""
    node: Any = _roadmap_schema()
    for name in path:
        node = node.fields[name]
    return tuple(node.fields)


@cache
def _roadmap_schema() -> Table:
    """The keys of a roadmap study in the schema language, for the key reference and
    the parser's lists of allowed keys (the parser checks the values itself, with the
    same ranges: ``tests/test_study_keys.py`` tries each documented bound)."""
    from ..study import SITE_TABLE

    site = dict(SITE_TABLE.fields)
    site["representatives"] = Int(
        4,
        96,
        default=24,
        doc="weighted representative spectra of the year used for every evaluation",
    )
    return Table(
        {
            "roadmap": Table(
                {
                    "name": Str(
                        min_len=1,
                        max_len=80,
                        pattern_doc="letters, digits, '.', '_' and '-'; it names the output files",
                        doc="short name of the roadmap study",
                        example="my-roadmap",
                    ),
                    "title": Str(max_len=500, default="", doc="title; default the name"),
                    "organisation": Str(max_len=500, default="", doc="who the study is for"),
                    "description": Str(max_len=5000, default="", doc="the question, in words"),
                    "milestones": List(
                        Int(1900, 2200),
                        min_len=1,
                        max_len=12,
                        doc="milestone years, increasing",
                        example=[2027, 2030, 2035],
                    ),
                    "draws": Int(1, 100_000, default=2000, doc="Monte Carlo draws per milestone"),
                    "seed": Int(
                        0, 2**32 - 1, default=0, doc="random seed (same seed, same answer)"
                    ),
                },
                doc="What the roadmap study is: its name and milestones",
            ),
            "conditions": Table(
                {
                    "spectrum": Choice(
                        SPECTRA,
                        default="AM1.5G",
                        doc="the incident light: an ASTM G173-03 table, a blackbody sun or "
                        "'file' (spectrum_file; implied when only the file is given)",
                    ),
                    "spectrum_file": Str(
                        min_len=1,
                        max_len=1000,
                        default=None,
                        doc="CSV spectrum, relative to the study file (spectrum = 'file')",
                        example="spectra/site.csv",
                    ),
                    "concentration": Num(
                        0.0, 46200.0, "suns", low_open=True, default=1.0, doc="concentration"
                    ),
                    "irradiance_W_m2": Num(
                        0.0,
                        1e7,
                        "W m^-2",
                        low_open=True,
                        default=None,
                        doc="rescale the spectrum to this total",
                        example=1000.0,
                    ),
                    "temperature_K": Num(
                        100.0,
                        1000.0,
                        "K",
                        default=300.0,
                        doc="cell temperature; library gaps are shifted to it",
                    ),
                },
                default=dict,
                doc="Spectrum and cell temperature (excludes [site])",
            ),
            "site": Table(
                site,
                default=None,
                doc="Rank candidates by modelled annual energy at a site (the keys of a "
                "study's [site], plus representatives; excludes [conditions])",
            ),
            "search": Table(
                {
                    "samples": Int(16, 65536, default=256, doc="Sobol points of the gap search"),
                    "starts": Int(1, 16, default=3, doc="polished basins"),
                    "min_spacing_eV": Num(
                        0.0, 1.0, "eV", default=0.05, doc="least difference of neighbouring gaps"
                    ),
                },
                default=dict,
                doc="The gap design of each candidate at each milestone",
            ),
            "sources": Table(
                {
                    "<key>": Table(
                        {
                            "citation": Str(doc="where the numbers come from, in full"),
                            "status": Choice(
                                (*STATUSES, STUDY_STATUS),
                                doc="how well the source is known",
                            ),
                            "where": Str(default="", doc="page, table or figure"),
                            "note": Str(default="", doc="free text"),
                        },
                        default=None,
                        doc="One source, named <key>",
                    )
                },
                default=None,
                doc="The study's own sources, usable by [materials.<key>] overrides",
            ),
            "materials": Table(
                {
                    "<key>": Table(
                        {
                            "base": Str(
                                default=None, doc="library material to start from", example="Si"
                            ),
                            "name": Str(default=None, doc="display name (required without base)"),
                            "family": Str(default=None, doc="material family"),
                            "absorber": Table(
                                {}, default=None, doc="absorber model table (library format)"
                            ),
                            "gap": Table({}, default=None, doc="gap model table (library format)"),
                            "temperature": Table(
                                {}, default=None, doc="gap temperature model (library format)"
                            ),
                            "thickness_nm": Num(
                                1.0, 1e8, "nm", default=None, doc="absorber thickness"
                            ),
                            "light_trapping": Choice(
                                ("single", "double", "lambertian"),
                                default=None,
                                doc="light trapping",
                            ),
                            "refractive_index": Num(
                                1.0, 10.0, default=None, doc="refractive index of the absorber"
                            ),
                            "ere": Num(1e-12, 1.0, default=None, doc="typical ERE (fraction)"),
                            "note": Str(default="", doc="free text"),
                            "source": Str(default=None, doc="a [sources] key for plain numbers"),
                        },
                        default=None,
                        doc="Override fields of a library material (base = '<library key>', "
                        "or a library key as the table name) or add a material; nested "
                        "tables in the format of gapmatch/materials/library.toml "
                        "(`gapmatch materials` lists it); plain numbers carry the status "
                        "'study assumption'",
                    )
                },
                default=None,
                doc="Materials added to or changed from the library",
            ),
            "candidates": Records(
                Table(
                    {
                        "name": Str(
                            min_len=1, max_len=120, doc="name (unique)", example="2T pk/Si"
                        ),
                        "materials": List(
                            Str(),
                            min_len=1,
                            max_len=6,
                            doc="library or study material keys, top first",
                            example=["perovskite-wide", "Si"],
                        ),
                        "connection": Choice(
                            CONNECTIONS, default="series", doc="how the sub-cells are connected"
                        ),
                        "cells_per_string": List(
                            Int(1, 100),
                            min_len=1,
                            max_len=6,
                            default=None,
                            doc="voltage-matched only: cells per string, one per junction "
                            "(required for 3+ junctions)",
                            example=[2, 3],
                        ),
                        "note": Str(max_len=2000, default="", doc="free text"),
                    }
                ),
                max_len=50,
                doc="Candidate stacks (1 to 50)",
            ),
            "projections": Records(
                Table(
                    {
                        "material": Str(doc="a library or study material key", example="Si"),
                        "year": Int(1900, 2200, default=None, doc="one milestone (or years)"),
                        "years": List(
                            Int(1900, 2200),
                            min_len=1,
                            max_len=12,
                            default=None,
                            doc="several milestones (or year)",
                            example=[2027, 2030],
                        ),
                        "ere": _uncertain_doc(
                            "ere",
                            "external radiative efficiency: a number or {low, likely, high} "
                            "(triangular) or {low, high} (uniform), sampled in log10",
                            1e-3,
                        ),
                        "thickness_nm": _uncertain_doc(
                            "thickness_nm",
                            "absorber thickness: a number or an uncertainty as ere (without "
                            "it the junction is an ideal step absorber)",
                            700.0,
                        ),
                        "collection_efficiency": _uncertain_doc(
                            "collection_efficiency", "collected fraction, a number only", 0.97
                        ),
                        "series_resistance_ohm_cm2": _uncertain_doc(
                            "series_resistance_ohm_cm2",
                            "this sub-cell's series resistance share, a number only",
                            0.5,
                        ),
                        "gap_window_eV": List(
                            Num(0.1, 5.0, "eV"),
                            min_len=2,
                            max_len=2,
                            default=None,
                            doc="[low, high] gap window of a tunable material",
                            example=[1.62, 1.85],
                        ),
                        "source": Str(
                            max_len=2000,
                            default="study assumption",
                            doc="where the projection comes from",
                        ),
                    }
                ),
                max_len=10000,
                doc="Projected parameters of a material at milestones",
            ),
        }
    )


@dataclass(frozen=True)
class Uncertain:
    """A projected parameter: a point, a triangular or a uniform distribution.

    Attributes
    ----------
    kind : {"point", "triangular", "uniform"}
        Distribution.
    low, likely, high : float
        Bounds and mode (``likely`` of a uniform distribution is its centre, in the
        sampling space).
    log : bool
        Sample in log10 space (ERE).

    Notes
    -----
    Draws come from uniform numbers ``u`` through the inverse distribution function, so
    one ``u`` gives one value for every candidate using the parameter (common random
    numbers). Triangular inverse CDF with ``F_c = (c - a) / (b - a)``:
    ``a + sqrt(u (b - a)(c - a))`` for ``u < F_c``, else ``b - sqrt((1 - u)(b - a)(b - c))``
    [1]_, applied to ``log10`` values when ``log``.

    References
    ----------
    .. [1] M. Evans, N. Hastings and B. Peacock, Statistical Distributions, 3rd ed.
       (Wiley, 2000), triangular distribution (from memory).
    """

    kind: str
    low: float
    likely: float
    high: float
    log: bool = False

    @property
    def is_point(self) -> bool:
        """Whether the parameter has no spread."""
        return self.kind == "point" or self.low == self.high

    def quantile(self, u) -> np.ndarray:
        """Values at cumulative probabilities ``u`` in [0, 1]."""
        u = np.asarray(u, dtype=float)
        f = np.log10 if self.log else (lambda x: x)
        a, c, b = f(self.low), f(self.likely), f(self.high)
        if self.is_point:
            x = np.full(u.shape, c)
        elif self.kind == "uniform":
            x = a + u * (b - a)
        else:
            fc = (c - a) / (b - a)
            x = np.where(
                u < fc,
                a + np.sqrt(u * (b - a) * (c - a)),
                b - np.sqrt((1.0 - u) * (b - a) * (b - c)),
            )
        return 10.0**x if self.log else x

    def to_dict(self) -> dict:
        """JSON-ready dictionary."""
        return {
            "distribution": self.kind,
            "low": self.low,
            "likely": self.likely,
            "high": self.high,
            "log10": self.log,
        }


@dataclass(frozen=True)
class Projection:
    """Projected parameters of one material at one milestone (validated)."""

    material: str
    year: int
    ere: Uncertain
    ere_source: Source
    thickness_nm: Uncertain | None = None
    collection_efficiency: float = 1.0
    series_resistance_ohm_cm2: float = 0.0
    gap_window_eV: tuple[float, float] | None = None
    source: Source | None = None

    def uncertain(self) -> dict[str, Uncertain]:
        """The parameters with a spread, by name."""
        out = {}
        if not self.ere.is_point:
            out["ere"] = self.ere
        if self.thickness_nm is not None and not self.thickness_nm.is_point:
            out["thickness_nm"] = self.thickness_nm
        return out


@dataclass(frozen=True)
class Candidate:
    """A candidate stack: materials top first and a connection."""

    name: str
    materials: tuple[str, ...]
    connection: str
    cells_per_string: tuple[int, ...] | None = None
    note: str = ""


@dataclass(frozen=True)
class RoadmapStudy:
    """A validated roadmap study (build it with :func:`load_roadmap`)."""

    name: str
    title: str
    milestones: tuple[int, ...]
    candidates: tuple[Candidate, ...]
    projections: dict  #: (material, year) -> Projection
    library: MaterialLibrary
    draws: int = 2000
    seed: int = 0
    conditions: dict = field(default_factory=dict)
    search: dict = field(default_factory=dict)
    organisation: str = ""
    description: str = ""
    origin: str = ""
    site: Any = None  #: gapmatch.study.Site or None
    representatives: int = 24

    def projection(self, material: str, year: int) -> Projection:
        """The projection of ``material`` at ``year``."""
        return self.projections[(material, year)]

    def materials_used(self) -> list[str]:
        """Material keys of all candidates, first use first."""
        seen: dict[str, None] = {}
        for c in self.candidates:
            for m in c.materials:
                seen.setdefault(m, None)
        return list(seen)


def _uncertain(value: Any, path: str, name: str) -> Uncertain:
    lo, hi, unit, low_open = _RANGES[name]
    log = name == "ere"
    if not isinstance(value, dict):
        x = ck.number(value, path, lo, hi, unit, low_open=low_open)
        return Uncertain("point", x, x, x, log)
    if name not in UNCERTAIN_PARAMETERS:
        raise InputError(
            path,
            "must be a number: gapmatch.evaluate takes one value per junction for the "
            f"whole batch, so only {', '.join(UNCERTAIN_PARAMETERS)} can be uncertain",
            value,
        )
    ck.check_keys(value, ("low", "likely", "high"), path)
    a = ck.number(ck.need(value, "low", path), f"{path}.low", lo, hi, unit, low_open=low_open)
    b = ck.number(ck.need(value, "high", path), f"{path}.high", lo, hi, unit, low_open=low_open)
    if not a <= b:
        raise InputError(f"{path}.high", "must not be below low", b)
    if "likely" in value:
        c = ck.number(value["likely"], f"{path}.likely", lo, hi, unit, low_open=low_open)
        if not a <= c <= b:
            raise InputError(f"{path}.likely", f"must lie in [low, high] = [{a:g}, {b:g}]", c)
        return Uncertain("triangular", a, c, b, log)
    mid = float(10.0 ** ((np.log10(a) + np.log10(b)) / 2)) if log else (a + b) / 2
    # The geometric mean can round one ulp outside [low, high] when low == high.
    mid = min(max(mid, a), b)
    return Uncertain("uniform", a, mid, b, log)


def _conditions(tbl: dict, path: str, base_dir=None) -> dict:
    ck.check_keys(tbl, _keys("conditions"), path)
    out: dict[str, Any] = {}
    if "spectrum" in tbl:
        out["spectrum"] = ck.choice(tbl["spectrum"], f"{path}.spectrum", SPECTRA)
    if "spectrum_file" in tbl:
        f = Path(ck.string(tbl["spectrum_file"], f"{path}.spectrum_file", 1000))
        if not f.is_absolute() and base_dir is not None:
            f = Path(base_dir) / f
        if not f.is_file():
            raise InputError(
                f"{path}.spectrum_file",
                "file not found (paths are relative to the study file)",
                tbl["spectrum_file"],
            )
        out["spectrum_file"] = str(f)
        if out.setdefault("spectrum", "file") != "file":
            raise InputError(
                f"{path}.spectrum_file",
                f"applies to spectrum = 'file' only, but spectrum is '{out['spectrum']}' "
                "(remove one of the two)",
                tbl["spectrum_file"],
            )
    elif out.get("spectrum") == "file":
        raise InputError(
            f"{path}.spectrum_file",
            "is required with spectrum = 'file': the path of a CSV spectrum",
        )
    if "concentration" in tbl:
        out["concentration"] = ck.number(
            tbl["concentration"], f"{path}.concentration", 0.0, 46200.0, "suns", low_open=True
        )
    if "irradiance_W_m2" in tbl:
        out["irradiance_W_m2"] = ck.number(
            tbl["irradiance_W_m2"], f"{path}.irradiance_W_m2", 0.0, 1e7, "W m^-2", low_open=True
        )
    out["temperature_K"] = ck.number(
        tbl.get("temperature_K", 300.0), f"{path}.temperature_K", 100.0, 1000.0, "K"
    )
    return out


def _search(tbl: dict, path: str) -> dict:
    ck.check_keys(tbl, _keys("search"), path)
    return {
        "samples": ck.integer(tbl.get("samples", 256), f"{path}.samples", 16, 65536),
        "starts": ck.integer(tbl.get("starts", 3), f"{path}.starts", 1, 16),
        "min_spacing_eV": ck.number(
            tbl.get("min_spacing_eV", 0.05), f"{path}.min_spacing_eV", 0.0, 1.0, "eV"
        ),
    }


def _candidates(items: list, lib: MaterialLibrary) -> tuple[Candidate, ...]:
    out, names = [], set()
    for i, c in enumerate(ck.array(items, "candidates", 1, 50)):
        p = f"candidates[{i + 1}]"
        ck.table(c, p)
        ck.check_keys(c, _keys("candidates"), p)
        name = ck.string(ck.need(c, "name", p), f"{p}.name", 120)
        if name in names:
            raise InputError(f"{p}.name", "repeats the name of an earlier candidate", name)
        names.add(name)
        mats = ck.array(ck.need(c, "materials", p), f"{p}.materials", 1, 6)
        for j, m in enumerate(mats):
            if not isinstance(m, str) or m not in lib:
                raise InputError(
                    f"{p}.materials[{j + 1}]",
                    "is not a library or study material"
                    f"{ck.suggest(str(m), lib.keys())} (see `gapmatch materials`)",
                    m,
                )
        conn = ck.choice(c.get("connection", "series"), f"{p}.connection", CONNECTIONS)
        cps = None
        if "cells_per_string" in c:
            if conn != "voltage-matched":
                raise InputError(f"{p}.cells_per_string", "applies to 'voltage-matched' only")
            arr = ck.array(c["cells_per_string"], f"{p}.cells_per_string", len(mats), len(mats))
            cps = tuple(
                ck.integer(v, f"{p}.cells_per_string[{k + 1}]", 1, 100) for k, v in enumerate(arr)
            )
        elif conn == "voltage-matched" and len(mats) > 2:
            raise InputError(
                f"{p}.cells_per_string",
                "is required for voltage-matched stacks of more than 2 junctions",
            )
        note = ck.string(c["note"], f"{p}.note", 2000) if "note" in c else ""
        out.append(Candidate(name, tuple(mats), conn, cps, note))
    return tuple(out)


def _projections(items: list, lib: MaterialLibrary, years: tuple[int, ...], used: list) -> dict:
    given: dict[tuple[str, int], dict] = {}
    for i, pr in enumerate(ck.array(items, "projections", 0, 10000)):
        p = f"projections[{i + 1}]"
        ck.table(pr, p)
        ck.check_keys(pr, _keys("projections"), p)
        mat = ck.need(pr, "material", p)
        if not isinstance(mat, str) or mat not in lib:
            raise InputError(
                f"{p}.material",
                f"is not a library or study material{ck.suggest(str(mat), lib.keys())}",
                mat,
            )
        if ("year" in pr) == ("years" in pr):
            raise InputError(p, "needs exactly one of year (a milestone) or years (a list)")
        ys = [pr["year"]] if "year" in pr else ck.array(pr["years"], f"{p}.years", 1, 12)
        key = "year" if "year" in pr else "years"
        for k, y in enumerate(ys):
            yp = f"{p}.{key}" if key == "year" else f"{p}.years[{k + 1}]"
            if isinstance(y, bool) or not isinstance(y, int) or y not in years:
                raise InputError(yp, f"must be a milestone ({', '.join(map(str, years))})", y)
        src_text = ck.string(pr.get("source", f"{STUDY_STATUS} ({p})"), f"{p}.source", 2000)
        src = Source(f"study:{p}", src_text, STUDY_STATUS)
        vals: dict[str, Any] = {"source": src}
        for name in _RANGES:
            if name in pr:
                vals[name] = _uncertain(pr[name], f"{p}.{name}", name)
        if "gap_window_eV" in pr:
            gp = f"{p}.gap_window_eV"
            if not lib[mat].gap.tunable:
                raise InputError(gp, f"applies to a tunable material; {mat!r} has a fixed gap")
            w = ck.array(pr["gap_window_eV"], gp, 2, 2)
            lo, hi = (ck.number(v, f"{gp}[{k + 1}]", 0.1, 5.0, "eV") for k, v in enumerate(w))
            if not lo < hi:
                raise InputError(gp, "low must be below high [eV]", w)
            vals["gap_window_eV"] = (lo, hi)
        for y in ys:
            if (mat, y) in given:
                raise InputError(p, f"repeats the projection of {mat!r} for {y}")
            given[(mat, y)] = vals
    out = {}
    for mat in used:
        m = lib[mat]
        for y in years:
            v = given.get((mat, y), {})
            if "ere" in v:
                ere, esrc = v["ere"], v["source"]
            elif m.ere is not None:
                x = float(m.ere.value)
                ere, esrc = Uncertain("point", x, x, x, True), m.ere.source
            else:
                raise InputError(
                    "projections",
                    f"material {mat!r} has no ere projection for {y} and the library has no "
                    "typical value; add a [[projections]] entry with ere",
                )
            out[(mat, y)] = Projection(
                mat,
                y,
                ere,
                esrc,
                v.get("thickness_nm"),
                v["collection_efficiency"].likely if "collection_efficiency" in v else 1.0,
                v["series_resistance_ohm_cm2"].likely if "series_resistance_ohm_cm2" in v else 0.0,
                v.get("gap_window_eV"),
                v.get("source"),
            )
    return out


_SLUG = re.compile(r"[A-Za-z0-9][A-Za-z0-9._-]{0,79}")


def parse_roadmap(
    text: str,
    origin: str = "<text>",
    library: MaterialLibrary | None = None,
    base_dir: str | Path | None = None,
) -> RoadmapStudy:
    """Parse and validate roadmap study TOML text (format: module docstring).

    Parameters
    ----------
    text : str
        The TOML document.
    origin : str
        Name of the document (file path) for messages.
    library : MaterialLibrary, optional
        Base library (default the packaged one).
    base_dir : str or pathlib.Path, optional
        Folder that a relative ``conditions.spectrum_file`` is resolved against (the
        study file's folder; default the working folder).

    Returns
    -------
    RoadmapStudy

    Raises
    ------
    InputError
        Naming the key path of the first problem.
    """
    try:
        doc = tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        raise InputError(origin, f"is not valid TOML: {exc}") from None
    if "roadmap" not in doc and "study" in doc:
        raise InputError(
            "roadmap",
            "is missing: this looks like a report study (gapmatch report); a roadmap study "
            "has a [roadmap] table with milestones",
        )
    ck.check_keys(doc, _keys(), "")
    site, representatives = None, 24
    if "site" in doc:
        from ..study import parse_site

        if "conditions" in doc:
            raise InputError(
                "site",
                "excludes [conditions]: a site brings its own hourly spectra and cell "
                "temperatures (remove one of the two tables)",
            )
        raw = dict(ck.table(doc["site"], "site"))
        representatives = ck.integer(raw.pop("representatives", 24), "site.representatives", 4, 96)
        site = parse_site(raw, base_dir)
    rm = ck.table(ck.need(doc, "roadmap", ""), "roadmap")
    ck.check_keys(rm, _keys("roadmap"), "roadmap")
    name = ck.need(rm, "name", "roadmap")
    if not isinstance(name, str) or not _SLUG.fullmatch(name):
        raise InputError(
            "roadmap.name",
            "must be 1-80 letters, digits, '.', '_' or '-' (it names the output files)",
            name,
        )
    ms = ck.array(ck.need(rm, "milestones", "roadmap"), "roadmap.milestones", 1, 12)
    years = tuple(
        ck.integer(y, f"roadmap.milestones[{i + 1}]", 1900, 2200) for i, y in enumerate(ms)
    )
    if any(b <= a for a, b in zip(years, years[1:], strict=False)):
        raise InputError("roadmap.milestones", "years must increase", list(years))
    lib = library or load_library()
    if "materials" in doc or "sources" in doc:
        lib = lib.extend(
            ck.table(doc.get("materials", {}), "materials"),
            ck.table(doc.get("sources", {}), "sources"),
        )
    cands = _candidates(ck.need(doc, "candidates", ""), lib)
    used: dict[str, None] = {}
    for c in cands:
        for m in c.materials:
            used.setdefault(m, None)
    projs = _projections(doc.get("projections", []), lib, years, list(used))
    for c in cands:
        for y in years:
            rs = [projs[(m, y)].series_resistance_ohm_cm2 for m in c.materials]
            if c.connection == "voltage-matched" and any(r > 0 for r in rs):
                raise InputError(
                    "projections",
                    f"candidate {c.name!r}: series resistance needs connection 'series' or "
                    "'independent'",
                )
    return RoadmapStudy(
        name=name,
        title=ck.string(rm.get("title", name), "roadmap.title"),
        milestones=years,
        candidates=cands,
        projections=projs,
        library=lib,
        draws=ck.integer(rm.get("draws", 2000), "roadmap.draws", 1, 100_000),
        seed=ck.integer(rm.get("seed", 0), "roadmap.seed", 0, 2**32 - 1),
        conditions=_conditions(
            ck.table(doc.get("conditions", {}), "conditions"), "conditions", base_dir
        ),
        search=_search(ck.table(doc.get("search", {}), "search"), "search"),
        organisation=ck.string(rm["organisation"], "roadmap.organisation")
        if "organisation" in rm
        else "",
        description=ck.string(rm["description"], "roadmap.description", 5000)
        if "description" in rm
        else "",
        origin=origin,
        site=site,
        representatives=representatives,
    )


def load_roadmap(path: str | Path, library: MaterialLibrary | None = None) -> RoadmapStudy:
    """Read and validate a roadmap study file.

    Parameters
    ----------
    path : str or pathlib.Path
        The TOML file.
    library : MaterialLibrary, optional
        Base library (default the packaged one).

    Returns
    -------
    RoadmapStudy

    Raises
    ------
    InputError
        When the file cannot be read or is invalid (the key path is prefixed by the file
        name).
    """
    p = Path(path)
    try:
        text = p.read_text(encoding="utf-8")
    except OSError as exc:
        raise InputError(str(p), f"cannot be read ({exc.strerror})") from None
    try:
        return parse_roadmap(text, str(p), library, base_dir=p.parent)
    except InputError as exc:
        if exc.field.startswith(str(p)):
            raise
        raise InputError(f"{p}: {exc.field}", exc.problem, exc.value) from None


def roadmap_schema() -> Table:
    """The keys of a roadmap study (schema-language nodes with docs, units, defaults
    and ranges), for the key reference (``gapmatch study-keys``)."""
    return _roadmap_schema()

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

An optional ``[site]`` table (:class:`Site`) gives the weather file and collector plane
for energy yield at a site::

    [site]
    weather = "weather/my-site.epw"   # relative to the study file; "pvlib:NAME" = pvlib sample
    tilt_deg = 30.0
    azimuth_deg = 180.0               # 180 = south
    tracking = "fixed"                # or "single-axis"
    temperature_model = "sapm"        # sapm, faiman or fixed
    mounting = "open_rack_glass_glass"

Other features add their own tables with :func:`register_table` (schema objects of
:mod:`gapmatch.schema`: :class:`Table`, :class:`Num`, :class:`Int`, :class:`Str`,
:class:`Choice`, :class:`List`, :class:`Records`); their validated content is in
``Study.extra``. Report section names are checked as names here and against the
section registry by the report (before it computes anything).
"""

from __future__ import annotations

import hashlib
import logging
import re
import tomllib
import warnings
from dataclasses import dataclass, field
from functools import cached_property
from pathlib import Path

from .core.absorption import ABSORBER_MODELS, LIGHT_TRAPPING
from .core.diodes import DARK_MODELS
from .core.registry import CONNECTIONS
from .core.spectra import MAX_CONCENTRATION
from .energy.celltemp import CellTemperature
from .energy.choices import (
    CELL_TEMPERATURE_MODELS,
    SAPM_MOUNTINGS,
    TRACKING,
    TRANSPOSITION_MODELS,
    WEATHER_FORMATS,
)
from .errors import InputError
from .io.spectra import SPECTRUM_CHOICES
from .limits import (
    ERE_RANGE,
    GAP_RANGE_EV,
    MAX_JUNCTIONS,
    MAX_MAP_POINTS,
    TEMPERATURE_RANGE_K,
    check_gaps,
)
from .model import CellConditions, Illumination
from .schema import (
    Bool,
    Choice,
    Either,
    Field,
    Int,
    List,
    Num,
    PerJunction,
    Records,
    RenamedKeyWarning,
    Str,
    Table,
)

__all__ = [
    "Study",
    "Material",
    "StackOfInterest",
    "Site",
    "SITE_TABLE",
    "PVLIB_DATA_PREFIX",
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
    "Field",
]

# ---- the study schema ---------------------------------------------------------------------
_GAP = Num(*GAP_RANGE_EV, "eV")

#: ``weather = "pvlib:NAME"`` names a file of pvlib's data folder (its sample weather files)
PVLIB_DATA_PREFIX = "pvlib:"

#: ``conditions.spectrum``: a standard table, a blackbody sun, or a file
STUDY_SPECTRA = (*SPECTRUM_CHOICES, "file")

#: ``[site]``: where the stack works, for energy yield (optional; see :class:`Site`)
SITE_TABLE = Table(
    {
        "weather": Str(
            min_len=1,
            max_len=1000,
            doc="weather file (TMY3, TMY2, EPW or plain CSV), relative to the study file; "
            "'pvlib:723170TYA.CSV' names a sample file pvlib ships",
            example="pvlib:723170TYA.CSV",
        ),
        "weather_format": Choice(
            WEATHER_FORMATS, default=None, doc="reader of the weather file; default: from the file"
        ),
        "tilt_deg": Num(0.0, 90.0, "deg", default=30.0, doc="fixed plane tilt from horizontal"),
        "azimuth_deg": Num(
            0.0, 360.0, "deg", default=180.0, doc="plane (or tracker axis) azimuth, 180 = south"
        ),
        "tracking": Choice(
            TRACKING, default="fixed", doc="fixed plane or single-axis tracker (sets its own tilt)"
        ),
        "albedo": Num(
            0.0, 1.0, default=None, doc="ground albedo (fraction); default the file's, else 0.2"
        ),
        "temperature_model": Choice(
            CELL_TEMPERATURE_MODELS,
            default="sapm",
            doc="cell temperature model (pvlib's SAPM or Faiman, or a fixed temperature)",
        ),
        "mounting": Choice(
            SAPM_MOUNTINGS,
            default="open_rack_glass_glass",
            doc="SAPM mounting preset (temperature_model 'sapm' only)",
        ),
        "fixed_temperature_K": Num(
            200.0, 400.0, "K", default=298.15, doc="cell temperature of temperature_model 'fixed'"
        ),
        "transposition": Choice(
            TRANSPOSITION_MODELS, default="haydavies", doc="sky-diffuse transposition model"
        ),
        "latitude_deg": Num(
            -90.0, 90.0, "deg", default=None, doc="site latitude; overrides the file's"
        ),
        "longitude_deg": Num(
            -180.0,
            180.0,
            "deg",
            default=None,
            doc="site longitude, east positive; overrides the file's",
        ),
        "altitude_m": Num(-500.0, 9000.0, "m", default=None, doc="altitude; overrides the file's"),
        "map_top_eV": List(
            _GAP,
            min_len=2,
            max_len=2,
            default=lambda: [1.4, 2.2],
            doc="top-gap range [low, high] of the annual-energy map",
        ),
        "map_bottom_eV": List(
            _GAP,
            min_len=2,
            max_len=2,
            default=lambda: [0.7, 1.4],
            doc="bottom-gap range [low, high] of the annual-energy map",
        ),
        "map_step_eV": Num(0.01, 0.2, "eV", default=0.05, doc="annual-energy map grid step"),
    },
    default=None,
    doc="Energy yield at a site: weather file, collector plane and cell temperature model",
)

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
                    doc="short name of the study; the report is <name>.html",
                    example="my-study",
                ),
                "title": Str(
                    min_len=1,
                    max_len=200,
                    doc="title of the report",
                    example="Wide-gap top cells on silicon",
                ),
                "author": Str(max_len=200, default="", doc="person who wrote the study"),
                "organisation": Str(max_len=200, default="", doc="organisation the study is for"),
                "description": Str(
                    max_len=5000, default="", doc="the question the study answers, in words"
                ),
                "connections": List(
                    Choice(CONNECTIONS),
                    min_len=1,
                    max_len=len(CONNECTIONS),
                    unique=True,
                    default=lambda: ["series", "independent"],
                    doc="how the sub-cells are connected: the connections to compare",
                ),
                # names only: the report checks them against its registry before it
                # computes anything (gapmatch.report.registry.check_section_names)
                "sections": List(
                    Str(
                        min_len=1,
                        max_len=80,
                        pattern=r"[a-z0-9][a-z0-9_-]*",
                        pattern_doc="a report section name, e.g. 'map'",
                    ),
                    min_len=1,
                    max_len=100,
                    unique=True,
                    default=list,
                    doc="report sections in order; [] = the report's default sections",
                    example=["map", "stacks", "assumptions"],
                ),
            },
            doc="What the study is and which report sections it has",
        ),
        "conditions": Table(
            {
                "spectrum": Choice(
                    STUDY_SPECTRA,
                    default="AM1.5G",
                    doc="the incident light: an ASTM G173-03 table (AM1.5G global tilt, "
                    "AM1.5D direct, AM0 extraterrestrial), a blackbody sun "
                    "(sun_temperature_K), or 'file' (spectrum_file); 'file' is implied "
                    "when only spectrum_file is given",
                ),
                "spectrum_file": Str(
                    min_len=1,
                    max_len=1000,
                    default=None,
                    doc="CSV spectrum (spectrum = 'file'), relative to the study file; units "
                    "from its header (wavelength nm/um/eV; W m^-2 nm^-1, W m^-2 um^-1, "
                    "mW cm^-2 nm^-1), else nm and W m^-2 nm^-1 are assumed and said",
                    example="spectra/site.csv",
                ),
                "spectrum_column": Either(
                    Int(2, 10_000),
                    Str(min_len=1, max_len=200),
                    default=None,
                    doc="the irradiance column of spectrum_file: its 1-based number "
                    "(1 = wavelength) or its header name; required when the file has more "
                    "than two columns",
                    example="global",
                ),
                "sun_temperature_K": Num(
                    1000.0,
                    20000.0,
                    "K",
                    default=6000.0,
                    doc="blackbody sun temperature (spectrum = 'blackbody' only)",
                ),
                "irradiance_W_m2": Num(
                    0.0,
                    1e5,
                    "W m^-2",
                    low_open=True,
                    default=None,
                    doc="rescale the one-sun spectrum to this total before concentration",
                    example=1000.0,
                ),
                "concentration": Num(
                    0.0,
                    MAX_CONCENTRATION,
                    "suns",
                    low_open=True,
                    default=1.0,
                    doc="optical concentration",
                ),
                "temperature_K": PerJunction(
                    Num(*TEMPERATURE_RANGE_K, "K"),
                    max_len=MAX_JUNCTIONS,
                    default=300.0,
                    doc="cell temperature: one value, or one per junction (top first; the "
                    "length must equal the junction count of every stack of the study)",
                    example=[300.0, 320.0],
                ),
                "ere": PerJunction(
                    Num(*ERE_RANGE),
                    max_len=MAX_JUNCTIONS,
                    default=1.0,
                    doc="external radiative efficiency (fraction; 1 = radiative limit): one "
                    "value, or one per junction (top first, length as temperature_K)",
                    example=[0.01, 0.001],
                ),
                "dark_current": Choice(
                    DARK_MODELS,
                    default="boltzmann",
                    doc="form of the radiative dark current (bose-einstein: exact when qV "
                    "nears the gap, e.g. at high concentration)",
                ),
            },
            default=dict,
            doc="Spectrum and cell conditions of every calculation",
        ),
        "map": Table(
            {
                "x_gap_range_eV": List(
                    _GAP,
                    min_len=2,
                    max_len=2,
                    default=lambda: [0.5, 2.5],
                    doc="gap range [low, high] of the map's first axis (the upper junction "
                    "of map.axes)",
                ),
                "y_gap_range_eV": List(
                    _GAP,
                    min_len=2,
                    max_len=2,
                    default=None,
                    doc="gap range [low, high] of the second axis; default x_gap_range_eV",
                    example=[0.7, 1.6],
                ),
                "step_eV": Num(0.0005, 1.0, "eV", default=0.01, doc="grid step of both axes"),
                "stack_eV": List(
                    _GAP,
                    min_len=2,
                    max_len=MAX_JUNCTIONS,
                    default=None,
                    doc="a stack of 3+ junctions (top first) of which the map varies two "
                    "(map.axes); default: a two-junction map",
                    example=[1.85, 1.3, 0.9],
                ),
                "axes": List(
                    Int(1, MAX_JUNCTIONS),
                    min_len=2,
                    max_len=2,
                    default=None,
                    doc="the two junctions the map varies (1 = top); default [1, last]",
                    example=[2, 3],
                ),
                "other_gaps": Choice(
                    ("fixed", "optimised"),
                    default="fixed",
                    doc="the gaps of map.stack_eV not on an axis: held fixed, or optimised "
                    "at every map point (within free_range_eV)",
                ),
                "free_range_eV": List(
                    _GAP,
                    min_len=2,
                    max_len=2,
                    default=lambda: [0.3, 3.0],
                    doc="range [low, high] of the optimised other gaps",
                ),
                "tolerance_pct": Num(
                    0.0,
                    100.0,
                    "%",
                    low_open=True,
                    default=1.0,
                    doc="tolerance window: gaps within this many absolute % of the optimum",
                ),
                "connections": List(
                    Choice(CONNECTIONS),
                    min_len=1,
                    max_len=len(CONNECTIONS),
                    unique=True,
                    default=None,
                    doc="connections mapped; default the study's, without voltage-matched "
                    "(slow to map)",
                    example=["series", "independent"],
                ),
            },
            default=dict,
            doc="The efficiency map over two junctions' gaps",
            renamed={
                "x_range_eV": "x_gap_range_eV",
                "y_range_eV": "y_gap_range_eV",
                "others": "other_gaps",
            },
        ),
        "cut": Table(
            {
                "bottom_gap_eV": Num(
                    *GAP_RANGE_EV, "eV", default=1.12, doc="fixed bottom gap of the cut"
                ),
                "step_eV": Num(
                    0.0005, 1.0, "eV", default=0.005, doc="step of the top gap along the cut"
                ),
            },
            default=dict,
            doc="Efficiency versus the top gap at a fixed bottom gap",
        ),
        "materials": Records(
            Table(
                {
                    "name": Str(
                        min_len=1,
                        max_len=120,
                        doc="name (unique), used by search.materials",
                        example="Our silicon bottom cell",
                    ),
                    "gap_eV": Num(
                        *GAP_RANGE_EV,
                        "eV",
                        default=None,
                        doc="a fixed gap (give this or gap_range_eV)",
                        example=1.12,
                    ),
                    "gap_range_eV": List(
                        _GAP,
                        min_len=2,
                        max_len=2,
                        default=None,
                        doc="a tunable window [low, high] (give this or gap_eV)",
                        example=[1.62, 1.82],
                    ),
                    "role": Choice(
                        ("top", "bottom", "any"),
                        default="any",
                        doc="where in a stack the material may go",
                    ),
                    "note": Str(max_len=1000, default="", doc="free text shown in the report"),
                }
            ),
            doc="Candidate absorbers: a fixed gap or a tunable window each",
        ),
        "stacks": Records(
            Table(
                {
                    "name": Str(
                        min_len=1,
                        max_len=120,
                        doc="name (unique), shown on maps and in tables",
                        example="candidate A",
                    ),
                    "gaps_eV": List(
                        _GAP,
                        min_len=1,
                        max_len=MAX_JUNCTIONS,
                        doc="band gaps, top first, strictly decreasing",
                        example=[1.72, 1.12],
                    ),
                    "note": Str(max_len=1000, default="", doc="free text shown in the report"),
                }
            ),
            max_len=50,
            doc="Stacks of interest: marked on maps and evaluated in full",
        ),
        "site": SITE_TABLE,
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
        Its schema; give it ``default=dict`` (or another default) to make it optional,
        and a ``doc`` on it and on every key (the study-file reference is written from
        them).
    """
    if name in STUDY_SCHEMA.fields:
        raise ValueError(f"study table {name!r} already exists")
    STUDY_SCHEMA.fields[name] = table
    EXTRA_TABLES[name] = table


#: ``[search]``: the band-gap search a study runs (see :mod:`gapmatch.search.study_table`)
SEARCH_TABLE = Table(
    {
        "junctions": Int(2, MAX_JUNCTIONS, default=2, doc="junctions per stack"),
        "connection": Choice(
            CONNECTIONS, default="series", doc="how the searched stack is connected"
        ),
        "materials": List(
            Str(min_len=1, max_len=200),
            max_len=MAX_JUNCTIONS,
            default=list,
            doc="per junction, top first: a [[materials]] name or 'any'",
            example=["any", "Our silicon bottom cell"],
        ),
        "bounds_eV": List(
            Num(*GAP_RANGE_EV, "eV"),
            min_len=2,
            max_len=2,
            default=lambda: [0.5, 3.0],
            doc="gap window [low, high] of every 'any' junction",
        ),
        "min_spacing_eV": Num(
            0.0, 1.0, "eV", default=0.05, doc="least difference between neighbouring gaps"
        ),
        "min_photocurrent_ratio": Num(
            0.0,
            1.0,
            default=0.0,
            doc="least ratio of the smallest to the largest sub-cell photocurrent "
            "(fraction); 0: no constraint",
        ),
        "trials": Int(0, 100_000, default=0, doc="optuna trials; 0: the default trial count"),
        "seed": Int(0, 2**31 - 1, default=0, doc="random seed (same seed, same answer)"),
        # finite absorbers and searched thicknesses (gapmatch.search.study_table)
        "thickness_windows_nm": Table(
            {
                key: List(
                    Num(1.0, 1e8, "nm"),
                    min_len=2,
                    max_len=2,
                    default=None,
                    doc=f"thickness window [low, high] of the {name} [nm], low < high",
                )
                for key, name in [
                    ("top", "top junction"),
                    ("bottom", "bottom junction"),
                    *[(str(j), f"junction {j} (1 = top)") for j in range(1, MAX_JUNCTIONS + 1)],
                ]
            },
            default=dict,
            doc="search absorber thicknesses with the gaps, on a log scale: one window "
            "[nm] per thinned junction, keyed 'top', 'bottom' or the junction number "
            "(1 = top), e.g. {top = [100, 2000]}; every such junction needs a finite "
            "search.absorber. Thinning the top cell of a two-terminal stack shares "
            "current with the cells below (Bremner et al., Solar Energy 135, 750 "
            "(2016)); the report compares the thinned optimum with the thick-absorber "
            "one (each window's upper end)",
        ),
        "absorber": List(
            Choice((*ABSORBER_MODELS, "alpha-file")),
            max_len=MAX_JUNCTIONS,
            default=list,
            doc="absorptance model, one for every junction or one per junction, top "
            "first: 'step' (ideal, thickness ignored), 'direct', 'indirect' or 'alpha-file' "
            "(search.alpha_file; 'table' is accepted too); empty: step everywhere",
        ),
        "thickness_nm": List(
            Num(1.0, 1e8, "nm"),
            max_len=MAX_JUNCTIONS,
            default=list,
            doc="fixed absorber thickness [nm] of the finite junctions without a "
            "thickness window, one for all or one per junction (ignored for step "
            "junctions and windowed ones)",
        ),
        "alpha0_per_cm": List(
            Num(1.0, 1e7, "cm^-1"),
            max_len=MAX_JUNCTIONS,
            default=list,
            doc="absorption coefficient 1 eV above the gap [cm^-1], one for all or one "
            "per junction; empty: 5e4 direct, 4.5e3 indirect",
        ),
        "urbach_energy_meV": List(
            Num(0.0, 100.0, "meV"),
            max_len=MAX_JUNCTIONS,
            default=list,
            doc="Urbach energy of the sub-gap tail [meV], one for all or one per "
            "junction; empty: no tail",
        ),
        "light_trapping": List(
            Choice(LIGHT_TRAPPING),
            max_len=MAX_JUNCTIONS,
            default=list,
            doc="'single' pass, 'double' pass (ideal rear mirror) or 'lambertian' "
            "(4 n^2 path), one for all or one per junction; empty: single",
        ),
        "refractive_index": List(
            Num(1.0, 6.0),
            max_len=MAX_JUNCTIONS,
            default=list,
            doc="absorber refractive index (Lambertian trapping), one for all or one "
            "per junction; empty: 3.5",
        ),
        "alpha_file": Str(
            max_len=1000,
            default="",
            doc="CSV of wavelength [nm] and absorption coefficient [cm^-1] for the "
            "'alpha-file' junctions, relative to the study file",
        ),
    },
    default=dict,
    doc="The band-gap search of the report's search section (gapmatch optimise --study)",
    renamed={"min_mismatch_ratio": "min_photocurrent_ratio"},
)

#: ``[thickness]``: efficiency versus one absorber's thickness (report section)
THICKNESS_TABLE = Table(
    {
        "stack": Str(default="", doc="a stack of interest by name (default: the first)"),
        "junction": Int(
            1, MAX_JUNCTIONS, default=1, doc="the junction whose thickness varies (1 = top)"
        ),
        "connection": Choice(CONNECTIONS, default="series", doc="connection of the stack"),
        "absorber": Choice(
            ("direct", "indirect"),
            default="direct",
            doc="absorption model of the finite absorber (Urbach-tailed edge)",
        ),
        "light_trapping": Choice(
            ("single", "double", "lambertian"),
            default="single",
            doc="optical path: single pass, double pass (back mirror) or Lambertian",
        ),
        "range_nm": List(
            Num(1.0, 1e8, "nm"),
            min_len=2,
            max_len=2,
            default=lambda: [30.0, 3000.0],
            doc="thickness range [low, high]",
        ),
        "points": Int(5, 200, default=40, doc="thicknesses computed (log-spaced)"),
    },
    default=dict,
    doc="Efficiency versus one absorber's thickness (the report's thickness section)",
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


@dataclass(frozen=True)
class Site:
    """The study's ``[site]``: weather file, collector plane and cell temperature model.

    Attributes
    ----------
    weather : str
        Weather file path (resolved: relative paths against the study file's folder,
        ``pvlib:NAME`` against pvlib's data folder).
    weather_format : str or None
        Reader (``tmy3``, ``tmy2``, ``epw``, ``csv``); None: from the file.
    tilt_deg, azimuth_deg : float
        Plane tilt [deg, 0-90] and azimuth [deg, 0-360, 180 = south] (for
        ``single-axis`` tracking the azimuth is the axis's).
    tracking : str
        ``fixed`` or ``single-axis``.
    albedo : float or None
        Ground albedo (None: the file's, else the stated default).
    temperature_model, mounting : str
        pvlib cell temperature model and SAPM mounting preset.
    fixed_temperature_K : float
        Cell temperature [K] of the ``fixed`` model.
    transposition : str
        Sky-diffuse transposition model.
    latitude_deg, longitude_deg, altitude_m : float or None
        Location overrides [deg, deg, m].
    map_top_eV, map_bottom_eV : (float, float)
        Ranges of the annual-energy map [eV].
    map_step_eV : float
        Its grid step [eV].
    given : str
        The ``weather`` value as the study file wrote it.
    """

    weather: str
    weather_format: str | None = None
    tilt_deg: float = 30.0
    azimuth_deg: float = 180.0
    tracking: str = "fixed"
    albedo: float | None = None
    temperature_model: str = "sapm"
    mounting: str = "open_rack_glass_glass"
    fixed_temperature_K: float = 298.15  # noqa: N815
    transposition: str = "haydavies"
    latitude_deg: float | None = None
    longitude_deg: float | None = None
    altitude_m: float | None = None
    map_top_eV: tuple[float, float] = (1.4, 2.2)  # noqa: N815
    map_bottom_eV: tuple[float, float] = (0.7, 1.4)  # noqa: N815
    map_step_eV: float = 0.05  # noqa: N815
    given: str = ""

    def spectra_options(self) -> dict:
        """Keyword arguments of :func:`gapmatch.energy.site_spectra` (after the weather)."""
        return dict(
            tilt_deg=self.tilt_deg,
            azimuth_deg=self.azimuth_deg,
            tracking=self.tracking,
            albedo=self.albedo,
            transposition=self.transposition,
            latitude=self.latitude_deg,
            longitude=self.longitude_deg,
            altitude_m=self.altitude_m,
            weather_format=self.weather_format,
        )

    def yield_options(self) -> dict:
        """Keyword arguments of :func:`gapmatch.energy.annual_yield` (after weather,
        gaps and connection): the plane and the cell temperature model."""
        return dict(
            self.spectra_options(),
            temperature_model=self.temperature_model,
            mounting=self.mounting,
            fixed_temperature_K=self.fixed_temperature_K,
        )

    def cell_temperature(self) -> CellTemperature:
        """The cell temperature model (for :func:`gapmatch.energy.yield_from_spectra`)."""
        return CellTemperature(
            self.temperature_model, self.mounting, fixed_K=self.fixed_temperature_K
        )


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
        Report section names, in order (empty: the report's default sections).
    conditions : dict
        Keyword arguments for :func:`gapmatch.evaluate` (spectrum and conditions;
        ``spectrum_file`` resolved relative to the study file).
    map : dict
        Map settings (the keys of ``[map]``); ``y_gap_range_eV`` and ``axes`` filled in.
    cut : dict
        One-dimensional cut settings.
    materials : list of Material
    stacks : list of StackOfInterest
    extra : dict
        Validated tables added with :func:`register_table`.
    site : Site or None
        The ``[site]`` table (energy yield), if the study has one.
    path : pathlib.Path or None
        The study file.
    sha256 : str
        SHA-256 of the file's bytes (hex).
    notices : list of str
        Warnings about the file that did not stop it (old key names, each naming the
        new key); also logged on the ``gapmatch.study`` logger.
    spectrum_column : int, str or None
        ``conditions.spectrum_column``: the irradiance column of the spectrum file (kept
        out of ``conditions``; :attr:`illumination` reads the file with it).
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
    site: Site | None = None
    path: Path | None = None
    sha256: str = ""
    notices: list[str] = field(default_factory=list)
    spectrum_column: int | str | None = None

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

    def map_settings(self) -> dict:
        """Keyword arguments of :func:`gapmatch.maps.compute_map` that describe the map
        itself (connections, ranges, step, stack and axes), without the conditions."""
        m = self.map
        kw = dict(
            connections=self.map_connections,
            x_range_eV=tuple(m["x_gap_range_eV"]),
            y_range_eV=tuple(m["y_gap_range_eV"]),
            step_eV=m["step_eV"],
        )
        if m["stack_eV"] is not None:
            kw.update(
                stack_eV=m["stack_eV"],
                axes=tuple(m["axes"]),
                others=m["other_gaps"],
                free_range_eV=tuple(m["free_range_eV"]),
            )
        return kw

    @property
    def cell(self) -> CellConditions:
        """The study's cell conditions."""
        c = self.conditions
        return CellConditions(c["temperature_K"], c["ere"], c["dark_current"])

    @cached_property
    def illumination(self) -> Illumination:
        """The study's illumination, built (and a spectrum file read) once."""
        c = self.conditions
        if self.spectrum_column is not None:
            # a chosen column of a file: the one-sun spectrum object carries the choice,
            # so a re-evaluation rebuilds the illumination from it
            from types import MappingProxyType

            from .io.spectra import get_spectrum, read_spectrum_csv

            one_sun = read_spectrum_csv(c["spectrum_file"], column=self.spectrum_column)
            spec = get_spectrum(
                spectrum_file=c["spectrum_file"],
                spectrum_column=self.spectrum_column,
                irradiance_W_m2=c["irradiance_W_m2"],
                concentration=c["concentration"],
            )
            opts = {
                "spectrum": one_sun,
                "spectrum_file": None,
                "sun_temperature_K": c["sun_temperature_K"],
                "irradiance_W_m2": c["irradiance_W_m2"],
                "concentration": c["concentration"],
            }
            return Illumination(spec, MappingProxyType(opts))
        return Illumination.from_options(
            c["spectrum"],
            spectrum_file=c["spectrum_file"],
            sun_temperature_K=c["sun_temperature_K"],
            irradiance_W_m2=c["irradiance_W_m2"],
            concentration=c["concentration"],
        )


_LOG = logging.getLogger("gapmatch.study")

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
        data = tomllib.loads(text.removeprefix("\ufeff"))
    except tomllib.TOMLDecodeError as exc:
        msg = str(exc)
        m = _POS_RE.search(msg)
        where = f"line {m.group(1)}, column {m.group(2)}" if m else "end of file"
        reason = _POS_RE.sub("", msg).strip()
        raise InputError(source, f"TOML syntax error at {where}: {reason}") from None
    if "study" not in data:
        raise InputError("study", "is required: a [study] table with at least name and title")
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always", RenamedKeyWarning)
        v = STUDY_SCHEMA.check(data, "")
    notices = [str(w.message) for w in caught if issubclass(w.category, RenamedKeyWarning)]
    for n in notices:
        _LOG.warning("gapmatch: warning: %s: %s", source, n)
    st = _build(v, base_dir, raw_bytes if raw_bytes is not None else text.encode("utf-8"), data)
    st.notices = notices
    return st


def load_study(path: str | Path) -> Study:
    """Read and validate a study file (see :func:`parse_study`).

    Parameters
    ----------
    path : str or pathlib.Path
        A TOML study file.

    Returns
    -------
    Study

    Raises
    ------
    InputError
        As :func:`parse_study`, the key path prefixed with the file name
        (``demo.toml: map.step_eV``); a file that is not UTF-8 text (a byte-order mark
        is allowed) gives one line naming the file and the first bad byte.
    """
    p = Path(path)
    if not p.is_file():
        raise InputError(str(p), "study file not found (give the path of a .toml file)")
    raw = p.read_bytes()
    try:
        text = raw.decode("utf-8-sig")
    except UnicodeDecodeError as exc:
        raise InputError(
            str(p),
            f"is not UTF-8 text (byte {exc.start + 1} is 0x{raw[exc.start]:02x}); save it as UTF-8",
        ) from None
    try:
        st = parse_study(text, source=str(p), base_dir=p.parent, raw_bytes=raw)
    except InputError as exc:
        if exc.field.startswith(str(p)):
            raise
        raise InputError(f"{p}: {exc.field}", exc.problem, exc.value) from None
    st.path = p
    return st


def _build(v: dict, base_dir: Path | None, raw: bytes, data: dict | None = None) -> Study:
    s = v["study"]
    cond = _conditions(v["conditions"], base_dir, data or {})
    column = cond.pop("spectrum_column")

    m = dict(v["map"])
    if m["y_gap_range_eV"] is None:
        m["y_gap_range_eV"] = list(m["x_gap_range_eV"])
    for key in ("x_gap_range_eV", "y_gap_range_eV", "free_range_eV"):
        lo, hi = m[key]
        if hi <= lo:
            raise InputError(f"map.{key}", "needs the first gap below the last one [eV]", m[key])
    for key in ("x_gap_range_eV", "y_gap_range_eV"):
        lo, hi = m[key]
        if (hi - lo) / m["step_eV"] < 1 - 1e-9:
            raise InputError(
                "map.step_eV",
                f"must be at most the width of map.{key} ({hi - lo:g} eV)",
                m["step_eV"],
            )
    npts = ((m["x_gap_range_eV"][1] - m["x_gap_range_eV"][0]) / m["step_eV"] + 1) * (
        (m["y_gap_range_eV"][1] - m["y_gap_range_eV"][0]) / m["step_eV"] + 1
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

    site = _site(v["site"], base_dir) if v["site"] is not None else None
    extra = {k: v[k] for k in EXTRA_TABLES if k in v}
    given = set(data or {})
    search = v.get("search")
    if search is not None:
        _check_search(search, mats)
    if v.get("thickness") is not None:
        _check_thickness(v["thickness"], stacks, "thickness" in given)
    _check_per_junction(cond, m, stacks, search if "search" in given else None)
    study = Study(
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
        site=site,
        sha256=hashlib.sha256(raw).hexdigest(),
        spectrum_column=column,
    )
    if cond["spectrum_file"] is not None:
        # read (and validate) the spectrum file now, before anything is computed
        try:
            study.illumination  # noqa: B018 - cached: read once
        except InputError as exc:
            given_file = (data or {}).get("conditions", {}).get("spectrum_file")
            raise InputError(
                f"conditions.spectrum_file ({given_file})",
                exc.problem if exc.field.startswith("spectrum file") else str(exc),
                exc.value,
            ) from None
    if search is not None and search["min_photocurrent_ratio"] > 0:
        _check_ratio_feasible(study, search, mats)
    return study


def _conditions(c: dict, base_dir: Path | None, data: dict) -> dict:
    """``[conditions]`` checked as a whole: ``spectrum`` names the light, and
    ``spectrum_file`` belongs to ``spectrum = "file"`` (implied when only the file is
    given)."""
    cond = dict(c)
    raw = data.get("conditions") if isinstance(data.get("conditions"), dict) else {}
    if cond["spectrum_file"] is not None:
        if "spectrum" not in raw:
            cond["spectrum"] = "file"
        elif cond["spectrum"] != "file":
            raise InputError(
                "conditions.spectrum_file",
                f"applies to spectrum = 'file' only, but spectrum is '{cond['spectrum']}' "
                "(remove one of the two)",
                cond["spectrum_file"],
            )
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
    elif cond["spectrum"] == "file":
        raise InputError(
            "conditions.spectrum_file",
            "is required with spectrum = 'file': the path of a CSV spectrum",
        )
    if cond["spectrum_file"] is None and cond["spectrum_column"] is not None:
        raise InputError(
            "conditions.spectrum_column",
            "applies to a spectrum_file only",
            cond["spectrum_column"],
        )
    if cond["spectrum"] != "blackbody" and cond["sun_temperature_K"] != 6000.0:
        raise InputError(
            "conditions.sun_temperature_K",
            "applies to spectrum 'blackbody' only",
            cond["sun_temperature_K"],
        )
    return cond


def _check_per_junction(cond: dict, m: dict, stacks: list, search: dict | None) -> None:
    """Per-junction ``ere`` and ``temperature_K`` must fit every stack they apply to."""
    uses = [("the map (map.stack_eV, or 2 junctions without it)", len(m["stack_eV"] or (0, 0)))]
    uses += [(f"stacks[{i}].gaps_eV", len(st.gaps_eV)) for i, st in enumerate(stacks, start=1)]
    if search is not None:
        uses.append(("search.junctions", search["junctions"]))
    for key in ("ere", "temperature_K"):
        val = cond[key]
        if not isinstance(val, list):
            continue
        for what, n in uses:
            if n != len(val):
                raise InputError(
                    f"conditions.{key}",
                    f"has {len(val)} entries (one per junction), but {what} has {n} "
                    "junctions; give one value for all junctions, or use stacks of one "
                    "junction count",
                    val,
                )


def _did_you_mean(word: str, options) -> str:
    import difflib

    close = difflib.get_close_matches(word, list(options), n=1, cutoff=0.6)
    return f"; did you mean '{close[0]}'?" if close else ""


def _check_search(cfg: dict, mats: list) -> None:
    """``[search]`` checked completely, before anything runs."""
    n = cfg["junctions"]
    lo, hi = cfg["bounds_eV"]
    if not lo < hi:
        raise InputError("search.bounds_eV", "must be [low, high] with low < high [eV]", [lo, hi])
    names = cfg["materials"]
    if names and len(names) != n:
        raise InputError(
            "search.materials",
            f"needs one entry per junction ({n}; search.junctions), top first; has {len(names)}",
            names,
        )
    known = {mt.name: mt for mt in mats}
    for k, name in enumerate(names, start=1):
        if name != "any" and name not in known:
            listed = ", ".join(["'any'", *(f"'{x}'" for x in known)])
            raise InputError(
                f"search.materials[{k}]",
                f"must be 'any' or a [[materials]] name"
                f"{_did_you_mean(name, ['any', *known])} (allowed: {listed})",
                name,
            )
    if names:
        spacing = cfg["min_spacing_eV"]
        windows = [
            (lo, hi) if x == "any" else (known[x].gap_range_eV or (known[x].gap_eV,) * 2)
            for x in names
        ]
        # top first: each gap must lie min_spacing_eV above the next one down
        for k in range(n - 1):
            if windows[k][1] < windows[k + 1][0] + spacing - 1e-12:
                raise InputError(
                    f"search.materials[{k + 1}]",
                    f"gap window {windows[k][0]:g}-{windows[k][1]:g} eV cannot lie "
                    f"{spacing:g} eV (search.min_spacing_eV) above junction {k + 2}'s "
                    f"{windows[k + 1][0]:g}-{windows[k + 1][1]:g} eV (junctions top first)",
                    names[k],
                )


def _check_thickness(cfg: dict, stacks: list, given: bool) -> None:
    """``[thickness]`` checked completely, before anything runs."""
    lo, hi = cfg["range_nm"]
    if not lo < hi:
        raise InputError("thickness.range_nm", "must be [low, high] with low < high [nm]", [lo, hi])
    if not given:
        return
    names = [st.name for st in stacks]
    if cfg["stack"]:
        if cfg["stack"] not in names:
            listed = ", ".join(f"'{x}'" for x in names) or "none: add [[stacks]]"
            raise InputError(
                "thickness.stack",
                f"names no [[stacks]] entry{_did_you_mean(cfg['stack'], names)} (stacks: {listed})",
                cfg["stack"],
            )
        stack = stacks[names.index(cfg["stack"])]
    elif stacks:
        stack = stacks[0]
    else:
        raise InputError("thickness", "needs a [[stacks]] entry to vary (none given)")
    n = len(stack.gaps_eV)
    if cfg["junction"] > n:
        raise InputError(
            "thickness.junction",
            f"must be a junction of stack '{stack.name}' (1 to {n}, 1 = top)",
            cfg["junction"],
        )


def _check_ratio_feasible(study: Study, cfg: dict, mats: list) -> None:
    """Refuse a photocurrent-ratio limit no stack of the search windows reaches.

    The ratio ``min(J_ph) / max(J_ph)`` of ideal step absorbers (each junction absorbs
    the photons between its gap and the gap above) is sampled on a grid of the windows
    (4096 points at most); the limit is infeasible when it exceeds the best sampled
    ratio by more than 0.02 (the grid's resolution margin: neighbouring grid points of
    the coarsest grid, 4 per axis for 6 junctions, differ by less than that in ratio
    near current matching, a property of the grid spacing, not a physical constant).
    """
    import numpy as np

    from .units import EV

    n = cfg["junctions"]
    lo, hi = cfg["bounds_eV"]
    known = {mt.name: mt for mt in mats}
    names = cfg["materials"] or ["any"] * n
    axes = []
    per_axis = max(4, int(round(4096 ** (1.0 / n))))
    for x in names:
        mt = known.get(x)
        if mt is not None and not mt.is_tunable:
            axes.append(np.array([mt.gap_eV]))
        else:
            a, b = mt.gap_range_eV if mt is not None else (lo, hi)
            axes.append(np.linspace(a, b, per_axis))
    grid = np.stack(np.meshgrid(*axes, indexing="ij"), axis=-1).reshape(-1, n)
    spacing = cfg["min_spacing_eV"]
    ok = np.all(grid[:, :-1] - grid[:, 1:] >= spacing - 1e-9, axis=1)
    grid = grid[ok]
    if grid.size == 0:
        return  # the spacing check above names that problem
    spec = study.illumination.spectrum
    above = spec.photon_flux_above(grid * EV)  # (M, N), top first
    jph = above - np.concatenate([np.zeros((len(grid), 1)), above[:, :-1]], axis=1)
    best = float(np.max(jph.min(axis=1) / np.maximum(jph.max(axis=1), 1e-300)))
    limit = cfg["min_photocurrent_ratio"]
    if limit > best + 0.02:
        raise InputError(
            "search.min_photocurrent_ratio",
            f"is infeasible: no stack within the search windows reaches a photocurrent "
            f"ratio of {limit:g} (the best of {len(grid)} sampled stacks reaches "
            f"{best:.3f}); lower the limit or widen the windows",
            limit,
        )


def _site(sd: dict, base_dir: Path | None) -> Site:
    given = sd["weather"]
    if given.startswith(PVLIB_DATA_PREFIX):
        import pvlib

        name = given[len(PVLIB_DATA_PREFIX) :]
        f = Path(pvlib.__file__).parent / "data" / name
        where = "pvlib's data folder"
    else:
        f = Path(given)
        if not f.is_absolute() and base_dir is not None:
            f = base_dir / f
        where = "paths are relative to the study file"
    if not f.is_file():
        raise InputError("site.weather", f"file not found ({where})", given)
    for key in ("map_top_eV", "map_bottom_eV"):
        lo, hi = sd[key]
        if hi <= lo:
            raise InputError(f"site.{key}", "needs the first gap below the last one [eV]", sd[key])
    if sd["map_top_eV"][1] <= sd["map_bottom_eV"][0]:
        raise InputError(
            "site.map_top_eV",
            "must reach above the lowest bottom gap (site.map_bottom_eV) [eV]",
            sd["map_top_eV"],
        )
    if sd["tracking"] == "single-axis" and sd["tilt_deg"] != 30.0:
        raise InputError(
            "site.tilt_deg",
            "applies to tracking 'fixed' only (a single-axis tracker sets its own tilt)",
            sd["tilt_deg"],
        )
    if sd["temperature_model"] != "fixed" and sd["fixed_temperature_K"] != 298.15:
        raise InputError(
            "site.fixed_temperature_K",
            "applies to temperature_model 'fixed' only",
            sd["fixed_temperature_K"],
        )
    if sd["temperature_model"] != "sapm" and sd["mounting"] != "open_rack_glass_glass":
        raise InputError(
            "site.mounting", "applies to temperature_model 'sapm' only", sd["mounting"]
        )
    return Site(
        weather=str(f),
        weather_format=sd["weather_format"],
        tilt_deg=sd["tilt_deg"],
        azimuth_deg=sd["azimuth_deg"],
        tracking=sd["tracking"],
        albedo=sd["albedo"],
        temperature_model=sd["temperature_model"],
        mounting=sd["mounting"],
        fixed_temperature_K=sd["fixed_temperature_K"],
        transposition=sd["transposition"],
        latitude_deg=sd["latitude_deg"],
        longitude_deg=sd["longitude_deg"],
        altitude_m=sd["altitude_m"],
        map_top_eV=tuple(sd["map_top_eV"]),
        map_bottom_eV=tuple(sd["map_bottom_eV"]),
        map_step_eV=sd["map_step_eV"],
        given=given,
    )


def parse_site(table: dict, base_dir: str | Path | None = None) -> Site:
    """Validate a ``[site]`` table (schema :data:`SITE_TABLE`) on its own, for other
    study kinds that take a site (roadmap studies).

    Parameters
    ----------
    table : dict
        The TOML table.
    base_dir : str or pathlib.Path, optional
        Folder a relative ``weather`` path is resolved against (the study file's).

    Returns
    -------
    Site

    Raises
    ------
    InputError
        Naming the key path (``site.<key>``) of the first problem.
    """
    return _site(SITE_TABLE.check(table, "site"), None if base_dir is None else Path(base_dir))

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
import re
import tomllib
from dataclasses import dataclass, field
from functools import cached_property
from pathlib import Path

from .core.absorption import ABSORBER_MODELS, LIGHT_TRAPPING
from .core.diodes import DARK_MODELS
from .core.registry import CONNECTIONS
from .core.spectra import MAX_CONCENTRATION
from .energy.celltemp import CELL_TEMPERATURE_MODELS, SAPM_MOUNTINGS, CellTemperature
from .energy.geometry import TRACKING
from .energy.readers import WEATHER_FORMATS
from .energy.spectra import TRANSPOSITION_MODELS
from .errors import InputError
from .io.spectra import SPECTRUM_CHOICES
from .limits import GAP_RANGE_EV, MAX_JUNCTIONS, MAX_MAP_POINTS, TEMPERATURE_RANGE_K, check_gaps
from .model import CellConditions, Illumination
from .schema import Bool, Choice, Field, Int, List, Num, Records, Str, Table

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
_NAME = Str(min_len=1, max_len=120)

#: ``weather = "pvlib:NAME"`` names a file of pvlib's data folder (its sample weather files)
PVLIB_DATA_PREFIX = "pvlib:"

#: ``[site]``: where the stack works, for energy yield (optional; see :class:`Site`)
SITE_TABLE = Table(
    {
        "weather": Str(
            min_len=1,
            max_len=1000,
            doc="weather file (TMY3, TMY2, EPW or plain CSV), relative to the study file; "
            "'pvlib:723170TYA.CSV' names a sample file pvlib ships",
        ),
        "weather_format": Choice(WEATHER_FORMATS, default=None, doc="default: from the file"),
        "tilt_deg": Num(0.0, 90.0, "deg", default=30.0, doc="fixed plane tilt"),
        "azimuth_deg": Num(
            0.0, 360.0, "deg", default=180.0, doc="plane (or tracker axis) azimuth, 180 = south"
        ),
        "tracking": Choice(TRACKING, default="fixed"),
        "albedo": Num(0.0, 1.0, default=None, doc="ground albedo; default the file's, else 0.2"),
        "temperature_model": Choice(CELL_TEMPERATURE_MODELS, default="sapm"),
        "mounting": Choice(SAPM_MOUNTINGS, default="open_rack_glass_glass", doc="SAPM preset"),
        "fixed_temperature_K": Num(200.0, 400.0, "K", default=298.15, doc="model 'fixed' only"),
        "transposition": Choice(TRANSPOSITION_MODELS, default="haydavies"),
        "latitude_deg": Num(-90.0, 90.0, "deg", default=None, doc="overrides the file's"),
        "longitude_deg": Num(-180.0, 180.0, "deg", default=None, doc="east positive"),
        "altitude_m": Num(-500.0, 9000.0, "m", default=None, doc="overrides the file's"),
        "map_top_eV": List(_GAP, min_len=2, max_len=2, default=lambda: [1.4, 2.2]),
        "map_bottom_eV": List(_GAP, min_len=2, max_len=2, default=lambda: [0.7, 1.4]),
        "map_step_eV": Num(0.01, 0.2, "eV", default=0.05, doc="annual-energy map grid step"),
    },
    default=None,
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
            Choice(ABSORBER_MODELS),
            max_len=MAX_JUNCTIONS,
            default=list,
            doc="absorptance model, one for every junction or one per junction, top "
            "first: 'step' (ideal, thickness ignored), 'direct', 'indirect' or 'table' "
            "(search.alpha_file); empty: step everywhere",
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
            "'table' junctions, relative to the study file",
        ),
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
        Map settings (see ``[map]``); ``y_range_eV`` filled in.
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
            x_range_eV=tuple(m["x_range_eV"]),
            y_range_eV=tuple(m["y_range_eV"]),
            step_eV=m["step_eV"],
        )
        if m["stack_eV"] is not None:
            kw.update(
                stack_eV=m["stack_eV"],
                axes=tuple(m["axes"]),
                others=m["others"],
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
        return Illumination.from_options(
            c["spectrum"],
            spectrum_file=c["spectrum_file"],
            sun_temperature_K=c["sun_temperature_K"],
            irradiance_W_m2=c["irradiance_W_m2"],
            concentration=c["concentration"],
        )


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

    site = _site(v["site"], base_dir) if v["site"] is not None else None
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
        site=site,
        sha256=hashlib.sha256(raw).hexdigest(),
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

"""The materials library: cited absorber parameters, read and validated once.

The library is a TOML data file shipped with the package (``library.toml`` beside this
module). Every number in it is an inline table with a ``source`` key naming an entry of
``[sources]``, and every source has a status -- ``"cited"``, ``"from memory"`` or
``"common practice, no source"`` -- that travels with the number into every output
(:meth:`Material.sourced`, :meth:`MaterialLibrary.sources_used`). Studies may override
any field of a material and add materials (:meth:`MaterialLibrary.extend`); their numbers
carry the status ``"study assumption"``.

Gap models (gaps [eV] at the reference temperature, 300 K):

* ``varshni`` -- a fixed gap with ``E_g(T) = E_g(0) - alpha T^2 / (T + beta)`` [1]_;
* ``fixed`` -- a fixed gap with a linear or no temperature coefficient;
* ``window`` -- a family whose gap is tuned by composition within ``[low, high]``;
* ``alloy`` -- ``A(1-x) B(x)`` with ``E_g(x) = (1-x) E_A + x E_B - x (1-x) (c0 + c1 x)``
  (the bowing form of [2]_), endpoints with their own temperature models, composition in
  a range; the gap window is the image of that range.

References
----------
.. [1] Y. P. Varshni, Physica 34, 149 (1967).
.. [2] I. Vurgaftman, J. R. Meyer and L. R. Ram-Mohan, J. Appl. Phys. 89, 5815 (2001).
"""

from __future__ import annotations

import tomllib
from dataclasses import dataclass, field, replace
from importlib import resources
from pathlib import Path
from typing import TYPE_CHECKING, Any

import numpy as np

from ..errors import InputError
from . import checks as ck

if TYPE_CHECKING:  # pandas loads only when a table is asked for
    import pandas as pd

__all__ = [
    "STATUSES",
    "STUDY_STATUS",
    "REFERENCE_K",
    "Source",
    "Sourced",
    "GapModel",
    "Material",
    "MaterialLibrary",
    "load_library",
    "parse_library",
]

#: statuses a library source may have
STATUSES = ("cited", "from memory", "common practice, no source")
#: status of numbers given by a study file (projections, overrides)
STUDY_STATUS = "study assumption"
#: temperature at which library gaps hold [K]
REFERENCE_K = 300.0
#: absorber models of the library (the engine's finite-absorber models)
ABSORBERS = ("direct", "indirect")
#: light-trapping schemes (as in gapmatch.evaluate)
TRAPPING = ("single", "double", "lambertian")
#: largest usable gap range of the engine [eV]
_GAP_EV = (0.1, 5.0)


@dataclass(frozen=True)
class Source:
    """Where a number comes from.

    Attributes
    ----------
    key : str
        Name of the source in the file (``"vurgaftman2001"``).
    citation : str
        Publication (authors, journal, volume, first page, year) or ``"no publication"``.
    status : str
        ``"cited"``, ``"from memory"``, ``"common practice, no source"`` or
        ``"study assumption"``.
    where : str
        Which part of the publication (table, section) or what the number is.
    note : str
        Anything a reader should know.
    """

    key: str
    citation: str
    status: str
    where: str = ""
    note: str = ""

    @property
    def flagged(self) -> bool:
        """True for numbers a reader must treat with care (not ``"cited"``)."""
        return self.status != "cited"

    def to_dict(self) -> dict:
        """JSON-ready dictionary."""
        return {
            "key": self.key,
            "citation": self.citation,
            "status": self.status,
            "where": self.where,
            "note": self.note,
        }


@dataclass(frozen=True)
class Sourced:
    """One number (or pair) and its source.

    Attributes
    ----------
    field : str
        Key path of the number (``"Si.gap.beta_K"``).
    value : float or tuple
        The value in the unit its name states.
    source : Source
        Its source.
    """

    field: str
    value: Any
    source: Source


@dataclass(frozen=True)
class GapModel:
    """Gap of a material and its temperature dependence (see the module docstring).

    Attributes
    ----------
    kind : {"varshni", "fixed", "window", "alloy"}
        Model.
    params : dict
        ``name -> Sourced``: ``eg0_eV``, ``alpha_eV_K``, ``beta_K`` (varshni);
        ``gap_eV`` (fixed); ``low_eV``, ``high_eV`` (window); ``c0_eV``, ``c1_eV``,
        ``x_range``, ``x_default`` (alloy); ``dEg_dT_eV_K`` (linear temperature model).
    endpoints : tuple
        Alloy only: the two endpoint models ``(A, B)`` (each a ``GapModel``).
    x_name : str
        Alloy only: what the composition ``x`` measures.
    x_default : float or None
        Alloy only: the usual composition.
    """

    kind: str
    params: dict
    endpoints: tuple = ()
    x_name: str = ""
    x_default: float | None = None

    def _p(self, name: str) -> float:
        return float(self.params[name].value)

    # ---- temperature ---------------------------------------------------------------------
    def gap_at_T(self, temperature_K, x=None) -> np.ndarray:  # noqa: N803
        """Gap [eV] at ``temperature_K`` [K] (alloys: at composition ``x``; windows and
        linear models: the shift from the reference temperature added to ``low_eV``).

        References
        ----------
        .. [1] Y. P. Varshni, Physica 34, 149 (1967).
        """
        t = np.asarray(temperature_K, dtype=float)
        if self.kind == "varshni":
            return self._p("eg0_eV") - self._p("alpha_eV_K") * t * t / (t + self._p("beta_K"))
        if self.kind == "alloy":
            a, b = self.endpoints
            xx = np.asarray(self.x_default if x is None else x, dtype=float)
            bow = self._p("c0_eV") + self._p("c1_eV") * xx
            return (1 - xx) * a.gap_at_T(t) + xx * b.gap_at_T(t) - xx * (1 - xx) * bow
        base = self._p("gap_eV") if self.kind == "fixed" else self._p("low_eV")
        return base + self.slope_eV_K() * (t - REFERENCE_K)

    def slope_eV_K(self) -> float:
        """Linear temperature coefficient [eV K^-1] (0 without one; not for varshni)."""
        s = self.params.get("dEg_dT_eV_K")
        return 0.0 if s is None else float(s.value)

    # ---- windows -------------------------------------------------------------------------
    @property
    def tunable(self) -> bool:
        """Whether the gap is free within a window."""
        return self.kind in ("window", "alloy")

    def window_eV(self) -> tuple[float, float]:
        """Gap window [eV] at the reference temperature (``low == high`` when fixed)."""
        if self.kind == "window":
            return self._p("low_eV"), self._p("high_eV")
        if self.kind == "alloy":
            lo, hi = self.params["x_range"].value
            g = self.gap_at_T(REFERENCE_K, np.array([lo, hi]))
            return float(g.min()), float(g.max())
        g = float(self.gap_at_T(REFERENCE_K))
        return g, g

    def composition(self, gap_eV) -> np.ndarray:  # noqa: N803
        """Alloy composition ``x`` of a gap [eV] at the reference temperature."""
        lo, hi = self.params["x_range"].value
        xs = np.linspace(lo, hi, 2001)
        gs = self.gap_at_T(REFERENCE_K, xs)
        if gs[-1] < gs[0]:
            xs, gs = xs[::-1], gs[::-1]
        return np.interp(np.asarray(gap_eV, dtype=float), gs, xs)

    def shift_eV(self, gap_ref_eV, temperature_K) -> np.ndarray:  # noqa: N803
        """Gap [eV] at ``temperature_K`` of a material whose gap at the reference
        temperature is ``gap_ref_eV`` (a point of the window for tunable materials)."""
        g = np.asarray(gap_ref_eV, dtype=float)
        t = float(temperature_K)
        if self.kind == "varshni":
            return g + (self.gap_at_T(t) - self.gap_at_T(REFERENCE_K))
        if self.kind == "alloy":
            x = self.composition(g)
            return g + (self.gap_at_T(t, x) - self.gap_at_T(REFERENCE_K, x))
        return g + self.slope_eV_K() * (t - REFERENCE_K)

    def sourced(self) -> list[Sourced]:
        """Every number of the model, endpoints included."""
        out = list(self.params.values())
        for e in self.endpoints:
            out += e.sourced()
        return out


@dataclass(frozen=True)
class Material:
    """One absorber of the library (or of a study).

    Attributes
    ----------
    key : str
        Identifier used by studies (``"Si"``, ``"perovskite-wide"``).
    name : str
        Plain name.
    family : str
        Technology family.
    absorber : str
        ``"direct"`` or ``"indirect"`` absorption edge (used when a thickness is set).
    alpha0_per_cm : Sourced
        Absorption coefficient 1 eV above the gap [cm^-1].
    gap : GapModel
        Gap and its temperature dependence.
    thickness_nm : Sourced
        Typical absorber thickness [nm].
    light_trapping : str
        ``"single"``, ``"double"`` or ``"lambertian"``.
    refractive_index : Sourced
        Refractive index near the gap.
    ere : Sourced or None
        Typical external radiative efficiency today (fraction), where known.
    note : str
        Remarks.
    """

    key: str
    name: str
    family: str
    absorber: str
    alpha0_per_cm: Sourced
    gap: GapModel
    thickness_nm: Sourced
    light_trapping: str
    refractive_index: Sourced
    ere: Sourced | None = None
    note: str = ""

    @property
    def window_eV(self) -> tuple[float, float]:
        """Gap window at 300 K [eV] (``low == high`` for a fixed gap)."""
        return self.gap.window_eV()

    def sourced(self) -> list[Sourced]:
        """Every number of the material with its source."""
        out = [self.alpha0_per_cm, *self.gap.sourced(), self.thickness_nm, self.refractive_index]
        return out + ([self.ere] if self.ere is not None else [])

    def marks(self) -> list[str]:
        """Distinct statuses other than ``"cited"`` among the material's numbers."""
        return sorted({s.source.status for s in self.sourced() if s.source.flagged})

    def row(self) -> dict:
        """One flat row for tables and JSON (units in the names)."""
        lo, hi = self.window_eV
        return {
            "material": self.key,
            "name": self.name,
            "family": self.family,
            "gap_model": self.gap.kind,
            "gap_low_eV": lo,
            "gap_high_eV": hi,
            "gap_source": self.gap.sourced()[0].source.key,
            "temperature_model": (
                "varshni"
                if self.gap.kind == "varshni"
                else "alloy endpoints"
                if self.gap.kind == "alloy"
                else "linear"
                if "dEg_dT_eV_K" in self.gap.params
                else "none"
            ),
            "absorber": self.absorber,
            "alpha0_per_cm": self.alpha0_per_cm.value,
            "thickness_nm": self.thickness_nm.value,
            "light_trapping": self.light_trapping,
            "refractive_index": self.refractive_index.value,
            "ere": None if self.ere is None else self.ere.value,
            "ere_source": None if self.ere is None else self.ere.source.key,
            "marks": "; ".join(self.marks()),
            "note": self.note,
        }


@dataclass(frozen=True)
class MaterialLibrary:
    """Materials and sources, validated; look materials up with ``library[key]``.

    Attributes
    ----------
    materials : dict
        ``key -> Material``.
    sources : dict
        ``key -> Source``.
    origin : str
        Where the data came from (file path).
    """

    materials: dict
    sources: dict
    origin: str = ""
    endpoints: dict = field(default_factory=dict)

    def __getitem__(self, key: str) -> Material:
        try:
            return self.materials[key]
        except KeyError:
            raise InputError(
                "material",
                f"is not in the library; known: {', '.join(self.materials)}"
                f"{ck.suggest(key, self.materials)}",
                key,
            ) from None

    def __contains__(self, key: str) -> bool:
        return key in self.materials

    def __iter__(self):
        return iter(self.materials.values())

    def __len__(self) -> int:
        return len(self.materials)

    def keys(self) -> list[str]:
        """Material keys in file order."""
        return list(self.materials)

    def to_frame(self) -> pd.DataFrame:
        """One row per material (see :meth:`Material.row`)."""
        import pandas as pd

        return pd.DataFrame([m.row() for m in self])

    def sources_frame(self) -> pd.DataFrame:
        """One row per number: ``material``, ``field``, ``value``, ``source``,
        ``status``, ``citation``."""
        import pandas as pd

        return pd.DataFrame(
            [
                {
                    "material": m.key,
                    "field": s.field,
                    "value": s.value if np.ndim(s.value) == 0 else list(s.value),
                    "source": s.source.key,
                    "status": s.source.status,
                    "citation": s.source.citation,
                }
                for m in self
                for s in m.sourced()
            ]
        )

    def to_dict(self) -> dict:
        """JSON-ready: ``materials`` (rows), ``values`` (every number with its source)
        and ``sources``."""
        return {
            "materials": [m.row() for m in self],
            "values": [
                {
                    "material": m.key,
                    "field": s.field,
                    "value": s.value if np.ndim(s.value) == 0 else list(s.value),
                    "source": s.source.key,
                    "status": s.source.status,
                }
                for m in self
                for s in m.sourced()
            ],
            "sources": [s.to_dict() for s in self.sources.values()],
        }

    def extend(
        self, tables: dict, sources: dict | None = None, path: str = "materials"
    ) -> MaterialLibrary:
        """A new library with the study's materials added or overridden.

        Parameters
        ----------
        tables : dict
            ``key -> table``. A table with ``base = "<library key>"`` (or whose key is a
            library key) overrides fields of that material; others define a new one with
            every field. Numbers may be plain (status ``"study assumption"``, source the
            table's ``source`` string) or ``{value = ..., source = "<key>"}``.
        sources : dict, optional
            The study's own ``[sources]`` entries (any status of :data:`STATUSES` or
            ``"study assumption"``).
        path : str
            Key path prefix for error messages.

        Returns
        -------
        MaterialLibrary
        """
        srcs = dict(self.sources)
        for k, v in (sources or {}).items():
            srcs[k] = _source(k, v, "sources", extra_status=(STUDY_STATUS,))
        mats = dict(self.materials)
        for key, tbl in ck.table(tables, path).items():
            p = f"{path}.{key}"
            ck.table(tbl, p)
            base = tbl.get("base", key if key in self.materials else None)
            if base is not None and base not in self.materials:
                raise InputError(
                    f"{p}.base",
                    f"is not a library material{ck.suggest(str(base), self.materials)}",
                    base,
                )
            note = tbl.get("source", f"{STUDY_STATUS} ({p})")
            study_src = Source(f"study:{key}", ck.string(note, f"{p}.source"), STUDY_STATUS)
            mats[key] = _material(
                key,
                tbl,
                p,
                srcs,
                self.endpoints,
                base=self.materials.get(base) if base else None,
                study_source=study_src,
            )
        return replace(self, materials=mats, sources=srcs)

    def sources_used(self, keys) -> list[dict]:
        """The sources behind the numbers of the materials ``keys``, each with the fields
        that use it (``used_by``)."""
        used: dict[str, dict] = {}
        for k in keys:
            for s in self[k].sourced():
                d = used.setdefault(s.source.key, s.source.to_dict() | {"used_by": []})
                d["used_by"].append(s.field)
        return list(used.values())


# ---- parsing ----------------------------------------------------------------------------
_SOURCE_KEYS = ("citation", "status", "where", "note")
_MATERIAL_KEYS = (
    "base",
    "name",
    "family",
    "absorber",
    "gap",
    "temperature",
    "thickness_nm",
    "light_trapping",
    "refractive_index",
    "ere",
    "note",
    "source",
)
_GAP_KEYS = {
    "varshni": ("eg0_eV", "alpha_eV_K", "beta_K"),
    "fixed": ("gap_eV",),
    "window": ("low_eV", "high_eV"),
    "alloy": ("a", "b", "x_name", "c0_eV", "c1_eV", "x_range", "x_default", "x_range_source"),
}
_RANGES = {
    "eg0_eV": (0.1, 6.0, "eV"),
    "alpha_eV_K": (0.0, 0.01, "eV K^-1"),
    "beta_K": (1e-9, 5000.0, "K"),
    "gap_eV": (*_GAP_EV, "eV"),
    "low_eV": (*_GAP_EV, "eV"),
    "high_eV": (*_GAP_EV, "eV"),
    "c0_eV": (-5.0, 5.0, "eV"),
    "c1_eV": (-5.0, 5.0, "eV"),
    "dEg_dT_eV_K": (-0.01, 0.01, "eV K^-1"),
    "alpha0_per_cm": (1.0, 1e7, "cm^-1"),
    "thickness_nm": (1.0, 1e8, "nm"),
    "refractive_index": (1.0, 6.0, ""),
    "ere": (0.0, 1.0, ""),
}


def _source(key: str, tbl: Any, path: str, extra_status: tuple = ()) -> Source:
    p = f"{path}.{key}"
    ck.table(tbl, p)
    ck.check_keys(tbl, _SOURCE_KEYS, p)
    status = ck.choice(ck.need(tbl, "status", p), f"{p}.status", STATUSES + extra_status)
    return Source(
        key,
        ck.string(ck.need(tbl, "citation", p), f"{p}.citation"),
        status,
        ck.string(tbl["where"], f"{p}.where") if "where" in tbl else "",
        ck.string(tbl["note"], f"{p}.note", 2000) if "note" in tbl else "",
    )


def _src(value: Any, path: str, sources: dict, study_source: Source | None) -> Source:
    if value is None:
        if study_source is not None:
            return study_source
        raise InputError(f"{path}.source", "is required: every number names its source")
    ck.string(value, f"{path}.source")
    if value not in sources:
        raise InputError(
            f"{path}.source",
            f"names no entry of [sources]{ck.suggest(value, sources)}",
            value,
        )
    return sources[value]


def _num(name, value, path, src, field_name) -> Sourced:
    lo, hi, unit = _RANGES[name]
    open_low = name == "ere"
    return Sourced(field_name, ck.number(value, path, lo, hi, unit, low_open=open_low), src)


def _value(tbl, name, path, sources, study_source, field_name) -> Sourced:
    """A sourced number: ``{value, source}`` or (study files only) a plain number."""
    v = tbl[name]
    p = f"{path}.{name}"
    if isinstance(v, dict):
        ck.check_keys(v, ("value", "source"), p)
        src = _src(v.get("source"), p, sources, study_source)
        return _num(name, ck.need(v, "value", p), f"{p}.value", src, field_name)
    if study_source is None:
        raise InputError(p, 'must be a table {value = ..., source = "<key>"}', v)
    return _num(name, v, p, study_source, field_name)


def _gap(tbl, path, sources, endpoints, fid, study_source) -> GapModel:
    ck.table(tbl, path)
    kind = ck.choice(ck.need(tbl, "model", path), f"{path}.model", tuple(_GAP_KEYS))
    ck.check_keys(tbl, ("model", "source", *_GAP_KEYS[kind]), path)
    src = _src(tbl.get("source"), path, sources, study_source)
    params: dict[str, Sourced] = {}
    if kind != "alloy":
        for name in _GAP_KEYS[kind]:
            v = ck.need(tbl, name, path)
            params[name] = _num(name, v, f"{path}.{name}", src, f"{fid}.{name}")
        if kind == "window" and not params["low_eV"].value < params["high_eV"].value:
            raise InputError(f"{path}.high_eV", "must be above low_eV", params["high_eV"].value)
        return GapModel(kind, params)
    ends = []
    for e in ("a", "b"):
        name = ck.need(tbl, e, path)
        if not isinstance(name, str) or name not in endpoints:
            raise InputError(
                f"{path}.{e}",
                f"names no entry of [endpoints]{ck.suggest(str(name), endpoints)}",
                name,
            )
        ends.append(endpoints[name])
    for name in ("c0_eV", "c1_eV"):
        params[name] = _num(name, tbl.get(name, 0.0), f"{path}.{name}", src, f"{fid}.{name}")
    xr = ck.array(ck.need(tbl, "x_range", path), f"{path}.x_range", 2, 2)
    lo, hi = (ck.number(x, f"{path}.x_range[{i + 1}]", 0.0, 1.0) for i, x in enumerate(xr))
    if not lo < hi:
        raise InputError(f"{path}.x_range", "low must be below high", xr)
    xsrc = src
    if "x_range_source" in tbl:
        xsrc = _src(tbl["x_range_source"], f"{path}.x_range", sources, study_source)
    params["x_range"] = Sourced(f"{fid}.x_range", (lo, hi), xsrc)
    xd = tbl.get("x_default")
    xd = (lo + hi) / 2 if xd is None else ck.number(xd, f"{path}.x_default", lo, hi)
    params["x_default"] = Sourced(f"{fid}.x_default", xd, xsrc)
    model = GapModel(
        kind,
        params,
        tuple(ends),
        ck.string(tbl.get("x_name", "x"), f"{path}.x_name"),
        xd,
    )
    gs = model.gap_at_T(REFERENCE_K, np.linspace(lo, hi, 201))
    d = np.diff(gs)
    if not (np.all(d > 0) or np.all(d < 0)):
        raise InputError(path, "the alloy gap must rise or fall monotonically over x_range")
    if gs.min() < _GAP_EV[0] or gs.max() > _GAP_EV[1]:
        raise InputError(path, "the alloy gap leaves 0.1-5.0 eV over x_range")
    return model


def _temperature(gap: GapModel, tbl, path, sources, fid, study_source) -> GapModel:
    if gap.kind in ("varshni", "alloy"):
        if tbl is not None:
            raise InputError(path, f"a {gap.kind!r} gap carries its own temperature model")
        return gap
    if tbl is None:
        raise InputError(path, "is required for a 'fixed' or 'window' gap ('linear' or 'none')")
    ck.table(tbl, path)
    kind = ck.choice(ck.need(tbl, "model", path), f"{path}.model", ("linear", "none"))
    ck.check_keys(tbl, ("model", "source", "dEg_dT_eV_K"), path)
    src = _src(tbl.get("source"), path, sources, study_source)
    params = dict(gap.params)
    params.pop("dEg_dT_eV_K", None)
    if kind == "linear":
        v = ck.need(tbl, "dEg_dT_eV_K", path)
        params["dEg_dT_eV_K"] = _num(
            "dEg_dT_eV_K", v, f"{path}.dEg_dT_eV_K", src, f"{fid}.dEg_dT_eV_K"
        )
    elif "dEg_dT_eV_K" in tbl:
        raise InputError(f"{path}.dEg_dT_eV_K", "applies to model 'linear' only")
    return replace(gap, params=params)


def _endpoint(key, tbl, path, sources) -> GapModel:
    ck.table(tbl, path)
    ck.check_keys(tbl, ("gap", "temperature"), path)
    g = _gap(ck.need(tbl, "gap", path), f"{path}.gap", sources, {}, key, None)
    if g.tunable:
        raise InputError(f"{path}.gap.model", "an endpoint needs a 'varshni' or 'fixed' gap")
    return _temperature(g, tbl.get("temperature"), f"{path}.temperature", sources, key, None)


def _material(key, tbl, path, sources, endpoints, *, base=None, study_source=None) -> Material:
    ck.check_keys(tbl, _MATERIAL_KEYS, path)
    if base is None:
        for k in ("name", "absorber", "gap", "thickness_nm", "refractive_index"):
            ck.need(tbl, k, path)
    if study_source is None and "base" in tbl:
        raise InputError(f"{path}.base", "is for study files only")
    kw: dict[str, Any] = {}
    if "name" in tbl:
        kw["name"] = ck.string(tbl["name"], f"{path}.name")
    kw["family"] = ck.string(tbl["family"], f"{path}.family") if "family" in tbl else None
    if "absorber" in tbl:
        a = ck.table(tbl["absorber"], f"{path}.absorber")
        p = f"{path}.absorber"
        ck.check_keys(a, ("model", "alpha0_per_cm", "source"), p)
        kw["absorber"] = ck.choice(ck.need(a, "model", p), f"{p}.model", ABSORBERS)
        src = _src(a.get("source"), p, sources, study_source)
        kw["alpha0_per_cm"] = _num(
            "alpha0_per_cm",
            ck.need(a, "alpha0_per_cm", p),
            f"{p}.alpha0_per_cm",
            src,
            f"{key}.alpha0_per_cm",
        )
    gap = base.gap if base is not None else None
    tpath = f"{path}.temperature"
    if "gap" in tbl:
        gap = _gap(tbl["gap"], f"{path}.gap", sources, endpoints, f"{key}.gap", study_source)
        inherited = None if base is None else base.gap.params.get("dEg_dT_eV_K")
        if "temperature" not in tbl and inherited is not None and gap.kind in ("fixed", "window"):
            # a new gap for a library material keeps the library's temperature coefficient
            gap = replace(gap, params=gap.params | {"dEg_dT_eV_K": inherited})
        elif "temperature" in tbl or gap.kind in ("fixed", "window"):
            gap = _temperature(
                gap, tbl.get("temperature"), tpath, sources, f"{key}.gap", study_source
            )
    elif "temperature" in tbl:
        gap = _temperature(gap, tbl["temperature"], tpath, sources, f"{key}.gap", study_source)
    kw["gap"] = gap
    for name in ("thickness_nm", "refractive_index", "ere"):
        if name in tbl:
            kw[name] = _value(tbl, name, path, sources, study_source, f"{key}.{name}")
    if "light_trapping" in tbl:
        kw["light_trapping"] = ck.choice(tbl["light_trapping"], f"{path}.light_trapping", TRAPPING)
    if "note" in tbl:
        kw["note"] = ck.string(tbl["note"], f"{path}.note", 2000)
    if base is not None:
        kw = {k: v for k, v in kw.items() if v is not None}
        return replace(base, key=key, **kw)
    kw["family"] = kw["family"] or ""
    kw.setdefault("light_trapping", "single")
    return Material(key=key, **kw)


def parse_library(text: str, origin: str = "<text>") -> MaterialLibrary:
    """Parse and validate library TOML text.

    Parameters
    ----------
    text : str
        The TOML document (format: see ``library.toml``).
    origin : str
        Name used as the prefix of error messages.

    Returns
    -------
    MaterialLibrary

    Raises
    ------
    InputError
        Naming the key path, e.g. ``library.toml: materials.Si.gap.beta_K``.
    """
    try:
        doc = tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        raise InputError(origin, f"is not valid TOML: {exc}") from None
    try:
        ck.check_keys(
            doc,
            ("schema_version", "reference_temperature_K", "sources", "endpoints", "materials"),
            "",
        )
        if doc.get("schema_version", 1) != 1:
            raise InputError("schema_version", "must be 1", doc.get("schema_version"))
        if float(doc.get("reference_temperature_K", REFERENCE_K)) != REFERENCE_K:
            raise InputError("reference_temperature_K", f"must be {REFERENCE_K:g} K")
        srcs = {
            k: _source(k, v, "sources")
            for k, v in ck.table(doc.get("sources", {}), "sources").items()
        }
        ends = {
            k: _endpoint(k, v, f"endpoints.{k}", srcs)
            for k, v in ck.table(doc.get("endpoints", {}), "endpoints").items()
        }
        mats = {}
        for k, v in ck.table(ck.need(doc, "materials", ""), "materials").items():
            mats[k] = _material(k, ck.table(v, f"materials.{k}"), f"materials.{k}", srcs, ends)
    except InputError as exc:
        raise InputError(f"{origin}: {exc.field}", exc.problem, exc.value) from None
    return MaterialLibrary(mats, srcs, origin, ends)


_CACHE: dict[str, MaterialLibrary] = {}


def load_library(path: str | Path | None = None) -> MaterialLibrary:
    """The materials library shipped with gapmatch (or another library file).

    Parameters
    ----------
    path : str or pathlib.Path, optional
        A library TOML file; default the packaged ``library.toml`` (read once and
        cached).

    Returns
    -------
    MaterialLibrary
    """
    if path is None:
        if "packaged" not in _CACHE:
            text = resources.files(__package__).joinpath("library.toml").read_text("utf-8")
            _CACHE["packaged"] = parse_library(text, "library.toml")
        return _CACHE["packaged"]
    p = Path(path)
    try:
        text = p.read_text(encoding="utf-8")
    except OSError as exc:
        raise InputError("library", f"cannot be read ({exc.strerror})", str(p)) from None
    return parse_library(text, str(p))

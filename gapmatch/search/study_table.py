"""The ``[search]`` table of a study file, and the search problem it describes.

::

    [search]
    junctions = 2
    connection = "series"
    # one entry per junction, top first: a [[materials]] name (its fixed gap or tunable
    # window) or "any" (the window bounds_eV)
    materials = ["any", "Our silicon bottom cell"]
    bounds_eV = [1.3, 2.3]
    min_spacing_eV = 0.05
    min_photocurrent_ratio = 0.0  # least min/max sub-cell photocurrent; 0: no constraint
    trials = 0                    # 0: the default trial count
    seed = 0
    # finite absorbers, and the top cell's thickness searched with the gaps
    absorber = ["direct", "step"]
    thickness_windows_nm = {top = [100, 2000]}

Every key is optional; an omitted table searches a two-junction series stack over
0.5-3.0 eV. Absorber keys (``absorber``, ``thickness_nm``, ``alpha0_per_cm``,
``urbach_energy_meV``, ``light_trapping``, ``refractive_index``) take one value for every
junction or one per junction, top first; ``alpha_file`` is relative to the study file.
"""

from __future__ import annotations

from pathlib import Path

from ..errors import InputError
from ..study import SEARCH_TABLE, Study
from .problem import SearchProblem, make_problem

__all__ = ["problem_from_study", "search_settings"]


def search_settings(study: Study) -> dict:
    """The validated ``[search]`` table (defaults filled in)."""
    return study.extra.get("search") or SEARCH_TABLE.check({}, "search")


def problem_from_study(study: Study) -> SearchProblem:
    """Build the search problem a study file describes.

    Parameters
    ----------
    study : Study
        A validated study (see :func:`gapmatch.study.load_study`).

    Returns
    -------
    SearchProblem
        Under the study's spectrum and cell conditions.

    Raises
    ------
    InputError
        For a ``search.materials`` entry that names no material, a list whose length is
        not ``search.junctions``, ``search.bounds_eV`` with low >= high, or a thickness
        window (``search.thickness_windows_nm``) that is reversed, names a junction
        beyond ``search.junctions`` or one with a step absorber.
    """
    cfg = search_settings(study)
    n = cfg["junctions"]
    lo, hi = cfg["bounds_eV"]
    if not lo < hi:
        raise InputError("search.bounds_eV", "must be [low, high] with low < high [eV]", [lo, hi])
    names = cfg["materials"] or ["any"] * n
    if len(names) != n:
        raise InputError(
            "search.materials", f"needs one entry per junction ({n}), top first", names
        )
    known = {m.name: m for m in study.materials}
    bounds, fixed = [], {}
    for k, name in enumerate(names, start=1):
        if name == "any":
            bounds.append((lo, hi))
            continue
        if name not in known:
            choices = ", ".join(["any", *known]) or "any"
            raise InputError(
                f"search.materials[{k}]", f"must be 'any' or a material name ({choices})", name
            )
        m = known[name]
        if m.is_tunable:
            bounds.append(tuple(m.gap_range_eV))
        else:
            bounds.append((lo, hi))
            fixed[k] = m.gap_eV
    conditions = dict(study.conditions)
    if study.spectrum_column is not None:
        # a chosen column of a spectrum file: search under the study's spectrum itself
        for k in ("spectrum_file", "sun_temperature_K", "irradiance_W_m2", "concentration"):
            conditions.pop(k, None)
        conditions["spectrum"] = study.illumination.spectrum
    conditions.update(absorber_conditions(study, cfg))
    windows = thickness_windows(cfg, n)
    try:
        return make_problem(
            n,
            cfg["connection"],
            bounds_eV=bounds,
            fixed_eV=fixed or None,
            min_spacing_eV=cfg["min_spacing_eV"],
            min_mismatch_ratio=cfg["min_photocurrent_ratio"] or None,
            thickness_windows_nm=windows or None,
            **conditions,
        )
    except InputError as exc:  # name the study key
        key = exc.field
        if key.startswith("thickness_windows_nm[") or key in _ABSORBER_KEYS:
            j = key.partition("[")[2].rstrip("]")
            names = {str(v): k for k, v in _window_keys(cfg, n).items()}
            key = (
                f"search.thickness_windows_nm.{names.get(j, j)}"
                if key.startswith("thickness_windows_nm[")
                else f"search.{key}"
            )
            raise InputError(key, exc.problem, exc.value) from None
        raise


#: ``[search]`` keys passed on to :func:`gapmatch.evaluate` as finite-absorber conditions
_ABSORBER_KEYS = (
    "absorber",
    "thickness_nm",
    "alpha0_per_cm",
    "urbach_energy_meV",
    "light_trapping",
    "refractive_index",
    "alpha_file",
)


def absorber_conditions(study: Study, cfg: dict) -> dict:
    """The finite-absorber keywords of :func:`gapmatch.evaluate` a ``[search]`` table
    gives (empty entries left out; one entry means every junction)."""
    out: dict = {}
    for key in _ABSORBER_KEYS[:-1]:
        v = cfg.get(key) or []
        if key == "absorber":  # the command line's name of the tabulated model
            v = ["table" if a == "alpha-file" else a for a in v]
        if v:
            out[key] = v[0] if len(v) == 1 else list(v)
    f = cfg.get("alpha_file") or ""
    if f:
        path = Path(f)
        if not path.is_absolute() and study.path is not None:
            path = Path(study.path).parent / path
        if not path.is_file():
            raise InputError(
                "search.alpha_file", "file not found (paths are relative to the study file)", f
            )
        out["alpha_file"] = str(path)
    return out


def _window_keys(cfg: dict, n: int) -> dict[str, int]:
    """Study key -> junction number of the given thickness windows."""
    out = {}
    for key, w in (cfg.get("thickness_windows_nm") or {}).items():
        if w is None:
            continue
        j = 1 if key == "top" else n if key == "bottom" else int(key)
        out[key] = j
    return out


def thickness_windows(cfg: dict, n: int) -> dict[int, tuple[float, float]]:
    """``{junction (1 = top): (low, high)}`` [nm] from ``search.thickness_windows_nm``.

    Raises
    ------
    InputError
        For a junction number beyond ``search.junctions``, a junction given twice
        (e.g. ``top`` and ``1``) or a reversed window.
    """
    tw = cfg.get("thickness_windows_nm") or {}
    out: dict[int, tuple[float, float]] = {}
    for key, j in _window_keys(cfg, n).items():
        kp = f"search.thickness_windows_nm.{key}"
        if j > n:
            raise InputError(
                kp,
                f"names junction {j}, but the stack has {n} (search.junctions); junctions "
                f"run from 1 (top) to {n}",
            )
        if j in out:
            raise InputError(kp, f"gives junction {j} a second window ('top' = 1)", tw[key])
        lo, hi = tw[key]
        if not lo < hi:
            raise InputError(kp, "must be [low, high] with low < high [nm]", [lo, hi])
        out[j] = (lo, hi)
    return out

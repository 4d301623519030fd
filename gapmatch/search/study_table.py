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

Every key is optional; an omitted table searches a two-junction series stack over
0.5-3.0 eV.
"""

from __future__ import annotations

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
        not ``search.junctions``, or ``search.bounds_eV`` with low >= high.
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
    return make_problem(
        n,
        cfg["connection"],
        bounds_eV=bounds,
        fixed_eV=fixed or None,
        min_spacing_eV=cfg["min_spacing_eV"],
        min_mismatch_ratio=cfg["min_photocurrent_ratio"] or None,
        **conditions,
    )

"""Run a roadmap: best gaps per candidate and milestone, then Monte Carlo over projections.

For every milestone and candidate:

1. **Design.** The candidate's gaps are chosen at the *likely* values of the projected
   parameters: fixed gaps are the library's (at 300 K); tunable materials leave their gap
   free within their window (the projection's ``gap_window_eV`` or the library's), and
   the band-gap search of :mod:`gapmatch.search` finds the best ordered stack (a scrambled
   Sobol sample of ``search.samples`` stacks, then the pattern-search polish of the best
   ``search.starts`` distinct basins; fixed seed). A candidate with every gap fixed needs
   no search; a single tunable junction is searched on a grid.
2. **Draws.** Each uncertain input -- a (material, parameter, milestone) key -- gets
   ``draws`` uniform numbers from its own seeded generator (:func:`crn_uniforms`), turned
   into values by the inverse distribution function (ERE in log10 space). Candidates
   that share a material share its draws exactly (common random numbers), so the
   comparison between them is not blurred by independent sampling noise. All draws of a
   candidate go through the evaluator in **one batched call** (``(draws, N)`` arrays).
   The design gaps are held fixed over the draws.
3. **Statistics.** P10 / P50 / P90 (``numpy.percentile``, linear interpolation), the
   probability of being best (per draw, the candidates with the highest value share
   that draw equally, so the probabilities of a milestone sum to 1), the headroom to the
   radiative limit at the likely values split by cause (see :data:`HEADROOM_ORDER`), and
   the sensitivity: Spearman's rank correlation between each uncertain input and the
   result over the draws, and one-at-a-time swings (each input at its low and high
   value with the others at their likely values, all in one batched call).

References
----------
.. [1] C. Spearman, Am. J. Psychol. 15, 72 (1904) (rank correlation).
.. [2] W. Shockley and H. J. Queisser, J. Appl. Phys. 32, 510 (1961).
"""

from __future__ import annotations

import hashlib
import time
from typing import Any

import numpy as np

from ..errors import InputError
from .evaluator import AnnualEnergyEvaluator, EfficiencyEvaluator, Evaluator
from .result import HEADROOM_ORDER, CandidateOutcome, RoadmapResult
from .schema import Candidate, RoadmapStudy

__all__ = ["HEADROOM_ORDER", "DRAW_CHUNK", "crn_uniforms", "run_roadmap", "design_gaps"]

#: draws per chunk when the Monte Carlo draws go to a Dask cluster
DRAW_CHUNK = 250


def crn_uniforms(seed: int, material: str, parameter: str, year: int, n: int) -> np.ndarray:
    """Uniform numbers in [0, 1) of one uncertain input (common random numbers).

    The generator is seeded from ``seed`` and a SHA-256 hash of ``(material, parameter,
    year)``, so the same input gets the same numbers in every candidate, in any order,
    in any run with the same seed.

    Parameters
    ----------
    seed : int
        Study seed.
    material, parameter : str
        Material key and parameter name (``"ere"``, ``"thickness_nm"``).
    year : int
        Milestone.
    n : int
        Number of draws.

    Returns
    -------
    numpy.ndarray
        ``(n,)`` floats.
    """
    h = hashlib.sha256(f"{material}\x1f{parameter}\x1f{year}".encode()).digest()
    words = np.frombuffer(h[:16], dtype=np.uint32).tolist()
    return np.random.default_rng(np.random.SeedSequence([int(seed), *words])).random(n)


# ---- physics of a candidate -------------------------------------------------------------
def _physics(study, cand: Candidate, year: int, m: int, values: dict, off=()) -> tuple:
    """``(connection, physics)`` keyword set of ``m`` stacks.

    ``values`` maps ``(material, parameter)`` to ``(m,)`` arrays; missing entries take
    the likely value. ``off`` lists headroom causes switched off.
    """
    lib = study.library
    n = len(cand.materials)
    projs = [study.projection(mat, year) for mat in cand.materials]
    mats = [lib[mat] for mat in cand.materials]

    def col(k, name, likely):
        v = values.get((cand.materials[k], name))
        return np.full(m, likely) if v is None else np.broadcast_to(v, (m,))

    ere = np.empty((m, n))
    for k, p in enumerate(projs):
        ere[:, k] = 1.0 if "non_radiative" in off else col(k, "ere", p.ere.likely)
    phys: dict[str, Any] = {"ere": ere}
    finite = [k for k, p in enumerate(projs) if p.thickness_nm is not None]
    if finite and "thickness" not in off:
        th = np.full((m, n), np.nan)
        for k in finite:
            th[:, k] = col(k, "thickness_nm", projs[k].thickness_nm.likely)
        phys["absorber"] = [mats[k].absorber if k in finite else "step" for k in range(n)]
        phys["thickness_nm"] = th
        phys["alpha0_per_cm"] = [float(mt.alpha0_per_cm.value) for mt in mats]
        phys["light_trapping"] = [mt.light_trapping for mt in mats]
        phys["refractive_index"] = [float(mt.refractive_index.value) for mt in mats]
    coll = [p.collection_efficiency for p in projs]
    if any(c != 1.0 for c in coll) and "collection" not in off:
        phys["collection_efficiency"] = coll
    connection = cand.connection
    if "current_mismatch" in off:
        connection = "independent"
    rs = [p.series_resistance_ohm_cm2 for p in projs]
    if any(r > 0 for r in rs) and "resistance" not in off:
        phys["series_resistance_ohm_cm2"] = float(sum(rs)) if connection == "series" else rs
    if cand.cells_per_string is not None and connection == "voltage-matched":
        phys["cells_per_string"] = list(cand.cells_per_string)
    if study.site is not None:
        # the site's cell temperature changes by the hour: gaps stay at 300 K here and
        # the evaluator shifts them with the materials' temperature models
        phys["gap_at"] = _gap_at(mats)
    return connection, phys


def _gap_at(mats):
    """Function: gaps at 300 K ``(M, N)`` and a cell temperature [K] -> gaps [eV]."""

    def gap_at(g, t):
        g = np.atleast_2d(np.asarray(g, dtype=float))
        if t == 300.0:
            return g
        return np.column_stack([m.gap.shift_eV(g[:, k], t) for k, m in enumerate(mats)])

    return gap_at


def _row(phys: dict) -> dict:
    """The first stack of a physics set, as per-junction values (for a search batch)."""
    out = dict(phys)
    for k in ("ere", "thickness_nm"):
        if k in out:
            out[k] = np.asarray(out[k])[0]
    return out


def _shift(study, cand: Candidate):
    """Function: gaps at 300 K ``(M, N)`` -> gaps at the cell temperature [eV] (with a
    site: unchanged, the evaluator shifts them hour by hour)."""
    t = 300.0 if study.site is not None else study.conditions.get("temperature_K", 300.0)
    gap_at = _gap_at([study.library[mat] for mat in cand.materials])
    return lambda g: gap_at(g, t)


def _windows(study, cand: Candidate, year: int) -> list[tuple[float, float]]:
    out = []
    for mat in cand.materials:
        p = study.projection(mat, year)
        w = p.gap_window_eV or study.library[mat].window_eV
        out.append((float(w[0]), float(w[1])))
    return out


def design_gaps(
    study: RoadmapStudy,
    cand: Candidate,
    year: int,
    evaluator: Evaluator,
    where: str = "candidate",
) -> tuple[np.ndarray, dict]:
    """Best gaps [eV] at 300 K of a candidate at a milestone, at the likely values.

    Parameters
    ----------
    study : RoadmapStudy
        The study.
    cand : Candidate
        The candidate.
    year : int
        Milestone.
    evaluator : Evaluator
        What is maximised.
    where : str
        Key path of the candidate, for messages.

    Returns
    -------
    (numpy.ndarray, dict)
        Gaps top first [eV] and a description of the search (``method``,
        ``samples``, ``starts``, ``local_max_check_passed``, ``windows_eV``).

    Raises
    ------
    InputError
        When no ordered stack fits the windows.

    References
    ----------
    .. [1] I. M. Sobol', USSR Comput. Math. Math. Phys. 7, 86 (1967).
    """
    from ..search import Objective, ObjectiveBatch, distinct, make_problem, polish, sobol_candidates

    win = _windows(study, cand, year)
    n = len(win)
    tunable = [k for k, (lo, hi) in enumerate(win) if hi > lo]
    spacing = study.search["min_spacing_eV"]
    info: dict[str, Any] = {"windows_eV": [list(w) for w in win]}
    shift = _shift(study, cand)
    conn, phys1 = _physics(study, cand, year, 1, {})
    row = _row(phys1)

    def value(g):
        return evaluator(shift(g), conn, row)

    if not tunable:
        g = np.array([w[0] for w in win])
        if n > 1 and np.any(np.diff(g) >= 0):
            raise InputError(
                f"{where}.materials",
                "the fixed gaps must decrease from the top material to the bottom",
                [round(float(x), 4) for x in g],
            )
        return g, info | {"method": "all gaps fixed"}
    samples = study.search["samples"]
    if n == 1:
        lo, hi = win[0]
        grid = np.linspace(lo, hi, samples)
        v = value(grid[:, None]).value
        b = int(np.argmax(v))
        step = (hi - lo) / (samples - 1)
        fine = np.linspace(max(lo, grid[b] - step), min(hi, grid[b] + step), samples)
        v2 = value(fine[:, None]).value
        return np.array([fine[int(np.argmax(v2))]]), info | {
            "method": f"grid of {samples} points, refined on {samples} points",
        }

    class _Design(Objective):
        name = evaluator.name
        label = evaluator.label
        scale = evaluator.scale

        def evaluate(self, gaps_eV, extra=None):  # noqa: N803
            b = value(gaps_eV)
            return ObjectiveBatch(b.value, b.jph_A_m2)

    fixed = {k + 1: win[k][0] for k in range(n) if k not in tunable}
    bounds = [w if w[1] > w[0] else (max(0.1, w[0] - 0.01), min(5.0, w[0] + 0.01)) for w in win]
    cond = {"cells_per_string": list(cand.cells_per_string)} if cand.cells_per_string else {}
    try:
        problem = make_problem(
            n,
            cand.connection,
            bounds_eV=bounds,
            fixed_eV=fixed or None,
            min_spacing_eV=spacing,
            objective=_Design(),
            **cond,
        )
    except InputError as exc:
        raise InputError(
            f"{where} in {year}",
            f"no stack fits the materials' gap windows ({exc.problem})",
            [list(map(lambda x: round(x, 4), w)) for w in win],
        ) from None
    seed = study.seed
    x, v = sobol_candidates(problem, samples, seed)
    if len(x) == 0:
        raise InputError(
            f"{where} in {year}",
            f"no stack with gaps decreasing by at least {spacing:g} eV fits the windows",
            [list(w) for w in win],
        )
    starts = distinct(x, v, study.search["starts"])
    res = polish(problem, x[starts], seed=seed, nelder_mead=0)
    best = max(res, key=lambda r: r.value)
    return np.asarray(best.gaps_eV, float), info | {
        "method": "Sobol sample and pattern-search polish (gapmatch.search)",
        "samples": samples,
        "starts": int(len(starts)),
        "local_max_check_passed": bool(best.local_max_check_passed),
    }


def _headroom(study, cand, year, gaps_cell, evaluator) -> dict:
    """Value at the likely inputs and after switching off each cause in turn."""
    steps = {}
    off: list[str] = []
    conn, phys = _physics(study, cand, year, 1, {}, off)
    steps["likely"] = float(evaluator(gaps_cell[None], conn, _row(phys)).value[0])
    prev = steps["likely"]
    out = {}
    for cause, _ in HEADROOM_ORDER:
        off.append(cause)
        conn, phys = _physics(study, cand, year, 1, {}, off)
        v = float(evaluator(gaps_cell[None], conn, _row(phys)).value[0])
        out[cause] = v - prev
        prev = v
    return {"likely": steps["likely"], "radiative_limit": prev, "causes": out}


def run_roadmap(
    study: RoadmapStudy,
    evaluator: Evaluator | None = None,
    *,
    draws: int | None = None,
    seed: int | None = None,
    progress: bool = False,
    client: Any = None,
    draw_chunk: int = DRAW_CHUNK,
) -> RoadmapResult:
    """Rank the study's candidates at every milestone under the projected uncertainties.

    Parameters
    ----------
    study : RoadmapStudy
        From :func:`gapmatch.roadmap.load_roadmap`.
    evaluator : Evaluator, optional
        What candidates are ranked by (default :class:`EfficiencyEvaluator` under the
        study's conditions); an annual-energy evaluator for a site plugs in here.
    draws : int, optional
        Monte Carlo draws (default the study's, 2000 unless set).
    seed : int, optional
        Seed of the draws and of the search (default the study's).
    progress : bool
        Show a progress bar on stderr.
    client : distributed.Client, optional
        Evaluate the Monte Carlo draws of every candidate on a Dask cluster, in chunks
        of ``draw_chunk`` draws (:func:`gapmatch.cluster.map_chunks`); each draw is
        evaluated by the same operations as in one process, so the values are
        bit-identical to ``client=None``. Design searches, headroom and sensitivity
        stay in this process.
    draw_chunk : int
        Draws per chunk on a cluster, in [1, 100000].

    Returns
    -------
    RoadmapResult

    Raises
    ------
    InputError
        For a candidate whose gaps cannot be ordered, or invalid physics.

    References
    ----------
    .. [1] C. Spearman, Am. J. Psychol. 15, 72 (1904).
    """
    t0 = time.perf_counter()
    if draws is not None:
        if isinstance(draws, bool) or not isinstance(draws, int) or not 1 <= draws <= 100_000:
            raise InputError("draws", "must be a whole number in [1, 100000]", draws)
        study = _replace(study, draws=draws)
    if seed is not None:
        if isinstance(seed, bool) or not isinstance(seed, int) or not 0 <= seed < 2**32:
            raise InputError("seed", "must be a whole number in [0, 2^32 - 1]", seed)
        study = _replace(study, seed=seed)
    if evaluator is None and study.site is not None:
        evaluator = AnnualEnergyEvaluator.from_site(
            study.site, representatives=study.representatives, seed=study.seed
        )
    if evaluator is None:
        c = study.conditions
        evaluator = EfficiencyEvaluator(
            c.get("spectrum", "AM1.5G"),
            spectrum_file=c.get("spectrum_file"),
            concentration=c.get("concentration", 1.0),
            irradiance_W_m2=c.get("irradiance_W_m2"),
            temperature_K=c.get("temperature_K", 300.0),
        )
    m = study.draws
    bar = None
    if progress:
        import sys

        from tqdm import tqdm

        bar = tqdm(
            total=len(study.milestones) * len(study.candidates),
            desc="roadmap",
            unit="stack",
            file=sys.stderr,
        )
    outcomes: list[CandidateOutcome] = []
    cache: dict[tuple, np.ndarray] = {}

    def inputs_of(cand, year):
        out = {}
        for mat in cand.materials:
            p = study.projection(mat, year)
            for name, dist in p.uncertain().items():
                key = (mat, name, year)
                if key not in cache:
                    u = crn_uniforms(study.seed, mat, name, year, m)
                    cache[key] = dist.quantile(u)
                out[(mat, name)] = cache[key]
        return out

    try:
        for year in study.milestones:
            for ci, cand in enumerate(study.candidates):
                where = f"candidates[{ci + 1}] ({cand.name})"
                gaps, search = design_gaps(study, cand, year, evaluator, where)
                gc = _shift(study, cand)(gaps[None])[0]
                inputs = inputs_of(cand, year)
                try:
                    conn, phys = _physics(study, cand, year, m, inputs)
                    vals = _draw_values(evaluator, gc, conn, phys, m, client, draw_chunk)
                    head = _headroom(study, cand, year, gc, evaluator)
                    sens = _sensitivity(study, cand, year, gc, evaluator, inputs, vals, head)
                except InputError as exc:
                    raise InputError(
                        f"{where} in {year}: {exc.field}", exc.problem, exc.value
                    ) from None
                outcomes.append(
                    CandidateOutcome(
                        candidate=cand,
                        year=year,
                        gaps_eV=gaps,
                        gaps_cell_eV=gc,
                        compositions=_compositions(study, cand, gaps),
                        values=np.asarray(vals, float),
                        likely=head["likely"],
                        headroom=head,
                        sensitivity=sens,
                        inputs={f"{a}.{b}": v for (a, b), v in inputs.items()},
                        search=search,
                    )
                )
                if bar is not None:
                    bar.update()
    finally:
        if bar is not None:
            bar.close()
    _probabilities(outcomes, study)
    check = getattr(evaluator, "check_representatives", None)
    if check is not None:
        # the representative spectra against every daylight hour, for each candidate's
        # likely stack at the last milestone
        last = study.milestones[-1]
        for o in (o for o in outcomes if o.year == last):
            conn, phys = _physics(study, o.candidate, last, 1, {})
            check(f"{o.candidate.name} ({last})", o.gaps_cell_eV[None], conn, _row(phys), o.likely)
    return RoadmapResult(
        study=study,
        outcomes=outcomes,
        evaluator=evaluator,
        elapsed_s=time.perf_counter() - t0,
    )


def _slice_physics(phys: dict, sl: slice, m: int) -> dict:
    """The physics of draws ``sl``: per-draw arrays (leading axis ``m``) sliced, the rest
    shared."""
    return {
        k: (v[sl] if isinstance(v, np.ndarray) and v.ndim >= 1 and v.shape[0] == m else v)
        for k, v in phys.items()
    }


def _draw_chunk(sl, *, evaluator, gaps_cell, connection, physics, m):
    """Values of the draws ``sl`` of one candidate (runs on a cluster worker)."""
    n = sl.stop - sl.start
    part = _slice_physics(physics, sl, m)
    return np.asarray(
        evaluator(np.broadcast_to(gaps_cell, (n, gaps_cell.size)), connection, part).value,
        float,
    )


def _draw_values(evaluator, gc, conn, phys, m, client, draw_chunk):
    """All ``m`` draws of a candidate: one batched call here, or chunks on a cluster."""
    if client is None:
        return evaluator(np.broadcast_to(gc, (m, gc.size)), conn, phys).value
    from ..cluster import map_chunks

    if isinstance(draw_chunk, bool) or not 1 <= int(draw_chunk) <= 100_000:
        raise InputError("draw_chunk", "must be a whole number in [1, 100000]", draw_chunk)
    k = int(draw_chunk)
    chunks = [slice(i, min(i + k, m)) for i in range(0, m, k)]
    parts = map_chunks(
        _draw_chunk,
        chunks,
        client=client,
        shared={
            "evaluator": evaluator,
            "gaps_cell": np.asarray(gc, float),
            "connection": conn,
            "physics": phys,
            "m": m,
        },
    )
    return np.concatenate(parts)


def _replace(study, **kw):
    from dataclasses import replace

    return replace(study, **kw)


def _compositions(study, cand, gaps) -> dict:
    out = {}
    for mat, g in zip(cand.materials, gaps, strict=True):
        gm = study.library[mat].gap
        if gm.kind == "alloy":
            out[mat] = {"x": float(gm.composition(g)), "x_name": gm.x_name}
    return out


def _probabilities(outcomes: list[CandidateOutcome], study) -> None:
    """Probability of being best per milestone (ties share a draw equally)."""
    for year in study.milestones:
        group = [o for o in outcomes if o.year == year]
        v = np.vstack([o.values for o in group])  # (C, M)
        best = v.max(axis=0)
        # equal within a relative 1e-12: the same stack evaluated in two candidates
        win = v >= best - 1e-12 * np.maximum(np.abs(best), 1e-300)
        share = win / win.sum(axis=0)
        for o, p in zip(group, share.mean(axis=1), strict=True):
            o.probability_best = float(p)


def _sensitivity(study, cand, year, gc, evaluator, inputs, vals, head) -> list[dict]:
    """Rank correlation and one-at-a-time swings of each uncertain input."""
    if not inputs:
        return []
    keys = list(inputs)
    rows = 2 * len(keys)
    over = {}
    for i, (mat, name) in enumerate(keys):
        dist = study.projection(mat, year).uncertain()[name]
        col = np.full(rows, np.nan)
        col[2 * i], col[2 * i + 1] = dist.low, dist.high
        over[(mat, name)] = (col, dist)
    values = {}
    for key, (col, dist) in over.items():
        values[key] = np.where(np.isnan(col), dist.likely, col)
    conn, phys = _physics(study, cand, year, rows, values)
    sw = evaluator(np.broadcast_to(gc, (rows, gc.size)), conn, phys).value
    out = []
    spread = float(np.ptp(vals)) > 0
    for i, (mat, name) in enumerate(keys):
        dist = over[(mat, name)][1]
        x = inputs[(mat, name)]
        if spread and float(np.ptp(x)) > 0:
            from scipy.stats import spearmanr

            rho = float(spearmanr(x, vals).statistic)
        else:
            rho = 0.0
        out.append(
            {
                "input": f"{mat}.{name}",
                "material": mat,
                "parameter": name,
                "low": dist.low,
                "likely": dist.likely,
                "high": dist.high,
                "distribution": dist.kind + (" (log10)" if dist.log else ""),
                "rank_correlation": rho,
                "swing_low": float(sw[2 * i] - head["likely"]),
                "swing_high": float(sw[2 * i + 1] - head["likely"]),
            }
        )
    out.sort(key=lambda d: -abs(d["swing_high"] - d["swing_low"]))
    return out

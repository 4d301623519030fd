"""The box at the top of the report that answers the study's own question.

The question comes from the study: a fixed bottom gap (the one-dimensional cut is
listed, or a candidate material with a fixed gap sits at the bottom) asks for the best
top gap, with its own tolerance window along the cut; stacks of interest ask how each
performs; with neither, the unconstrained map optimum is the answer. Series and
independent connection are compared where the study has both, and the candidate
materials and stacks are tabulated. Only results the sections already computed (or
cheap single evaluations) are used.
"""

from __future__ import annotations

from typing import Any

import numpy as np

from ..api import evaluate
from ..maps import CutResult
from .context import ReportContext
from .html import esc, table

__all__ = ["cut_window", "question_kind", "build_summary_box", "result_warnings"]

_MAP_SECTIONS = {"map", "tolerance", "difference", "mismatch"}


def cut_window(cut: CutResult, connection: str, within_pct: float) -> tuple[float, float]:
    """Top-gap range of the cut within ``within_pct`` absolute percent of its best point.

    The window is the run of consecutive cut points around the best one whose
    efficiency is at least the best minus ``within_pct`` (grid values, one step
    accuracy).

    Returns
    -------
    (float, float)
        Lowest and highest gap in the window [eV].
    """
    e = 100 * np.asarray(cut.efficiency[connection], float)
    k = int(np.argmax(e))
    ok = e >= e[k] - within_pct
    lo = k
    while lo > 0 and ok[lo - 1]:
        lo -= 1
    hi = k
    while hi < e.size - 1 and ok[hi + 1]:
        hi += 1
    return float(cut.values_eV[lo]), float(cut.values_eV[hi])


def question_kind(ctx: ReportContext) -> str:
    """``"fixed-bottom"``, ``"stacks"`` or ``"unconstrained"`` (see the module text)."""
    st = ctx.study
    fixed_bottom = any(m.role == "bottom" and m.gap_range_eV is None for m in st.materials)
    if "cut" in st.sections or fixed_bottom:
        return "fixed-bottom"
    if st.stacks:
        return "stacks"
    return "unconstrained"


def result_warnings(ctx: ReportContext) -> list[str]:
    """Warnings carried by the results computed for this report (``result.warnings``
    where a result has them), without repeats."""
    out: list[str] = []
    objs: list[Any] = list(ctx.cache.values())
    for v in ctx.cache.values():
        if isinstance(v, dict):
            objs.extend(v.values())
    for obj in objs:
        for w in getattr(obj, "warnings", ()) or ():
            w = str(w)
            if w not in out:
                out.append(w)
    return out


def _conn_list(ctx: ReportContext) -> list[str]:
    return list(ctx.study.connections)


def _pct(x: float) -> str:
    return f"{x:.2f}"


def build_summary_box(ctx: ReportContext, caution: str) -> tuple[str, dict]:
    """The summary box (safe HTML) and its JSON summary.

    Parameters
    ----------
    ctx : ReportContext
        The report's context, after the sections ran.
    caution : str
        Caution sentence shown in the box.
    """
    st = ctx.study
    kind = question_kind(ctx)
    conns = _conn_list(ctx)
    tol = ctx.tolerance_pct
    summ: dict[str, Any] = {"kind": kind, "tolerance_pct": tol}
    sentences: list[str] = []
    header: list[str] = []
    rows: list[list[str]] = []
    numeric: list[bool] = []

    if kind == "fixed-bottom":
        cut = ctx.cut
        bg = st.cut["bottom_gap_eV"]
        n = st.n_junctions
        fixed = (
            f"the bottom cell fixed at {bg:.2f} eV"
            if n == 2
            else f"the bottom cell fixed at {bg:.2f} eV and the middle gaps at map.stack_eV"
        )
        cut_conns = [c for c in conns if c in cut.efficiency]
        parts, best = [], {}
        for c in cut_conns:
            g, e = cut.optimum(c)
            lo, hi = cut_window(cut, c, tol)
            best[c] = {"best_top_gap_eV": g, "efficiency_pct": e, "window_eV": [lo, hi]}
            parts.append(
                f"{g:.2f} eV with {c} connection ({e:.2f} %; top gaps {lo:.2f}–{hi:.2f} eV "
                f"stay within {tol:g} % absolute of it)"
            )
        summ.update(bottom_gap_eV=bg, best_top_gap=best)
        sentences.append(f"With {fixed}, the best top gap is " + " and ".join(parts) + ".")
        if {"series", "independent"} <= set(best):
            gs = best["series"]["best_top_gap_eV"]
            k = int(np.argmin(np.abs(cut.values_eV - gs)))
            gain = 100 * (cut.efficiency["independent"][k] - cut.efficiency["series"][k])
            summ["independent_gain_at_series_best_pct"] = float(gain)
            sentences.append(
                f"At the series optimum, independent (four-terminal) wiring adds {gain:.2f} % "
                "absolute; away from current matching the difference grows (see the cut)."
            )
        header = ["candidate", "gaps, top first [eV]"] + [f"{c} [%]" for c in cut_conns]
        numeric = [False, True] + [True] * len(cut_conns)
        rows.append(
            ["best top gap (the cut)", "best top / " + f"{bg:.2f}"]
            + [
                f"{best[c]['efficiency_pct']:.2f} at {best[c]['best_top_gap_eV']:.2f} eV"
                for c in cut_conns
            ]
        )
        mats = []
        for m in st.materials:
            if m.role not in ("top", "any"):
                continue
            if m.gap_range_eV is None:
                gaps = list(cut.base_gaps_eV)
                gaps[cut.junction - 1] = m.gap_eV
                effs = [
                    100
                    * float(evaluate(gaps, c, ctx.illumination, **ctx.cell_options()).efficiency[0])
                    for c in cut_conns
                ]
                rows.append(
                    [m.name, " / ".join(f"{g:.2f}" for g in gaps)] + [_pct(e) for e in effs]
                )
                mats.append(
                    {
                        "material": m.name,
                        "gaps_eV": gaps,
                        "efficiency_pct": dict(zip(cut_conns, effs, strict=True)),
                    }
                )
            else:
                a, b = m.gap_range_eV
                sel = (cut.values_eV >= a - 1e-9) & (cut.values_eV <= b + 1e-9)
                cells, best_m = [], {}
                for c in cut_conns:
                    if not sel.any():
                        cells.append("–")
                        continue
                    e = 100 * cut.efficiency[c][sel]
                    k = int(np.argmax(e))
                    g = float(cut.values_eV[sel][k])
                    cells.append(f"{e[k]:.2f} at {g:.2f} eV")
                    best_m[c] = {"top_gap_eV": g, "efficiency_pct": float(e[k])}
                rows.append([f"{m.name} (best in {a:.2f}–{b:.2f} eV)", "tunable top"] + cells)
                mats.append({"material": m.name, "gap_range_eV": [a, b], "best": best_m})
        summ["materials"] = mats

    if st.stacks:
        sres = ctx.stack_results
        if not header:
            header = ["candidate", "gaps, top first [eV]"] + [f"{c} [%]" for c in conns]
            numeric = [False, True] + [True] * len(conns)
        cols = header[2:]
        stack_summ = []
        for s in st.stacks:
            cells, effs, ratios = [], {}, {}
            for col in cols:
                c = col.removesuffix(" [%]")
                r = sres.get((s.name, c))
                if r is None:
                    cells.append("–")
                    continue
                d = r.stack(0)
                e = d["efficiency_pct"]
                effs[c] = e
                txt = _pct(e)
                if d.get("cells_per_string"):
                    ratios[c] = d["cells_per_string"]
                    txt += (
                        " ("
                        + " : ".join(str(n) for n in d["cells_per_string"])
                        + " cells per string)"
                    )
                cells.append(txt)
            rows.append([s.name, " / ".join(f"{g:.2f}" for g in s.gaps_eV)] + cells)
            item = {"stack": s.name, "gaps_eV": list(s.gaps_eV), "efficiency_pct": effs}
            if ratios:
                item["cells_per_string"] = ratios
            stack_summ.append(item)
        summ["stacks"] = stack_summ
        c0 = conns[0]
        ranked = sorted(
            (x for x in stack_summ if c0 in x["efficiency_pct"]),
            key=lambda x: -x["efficiency_pct"][c0],
        )
        if len(stack_summ) == 1:
            one = stack_summ[0]
            parts = []
            for c, e in one["efficiency_pct"].items():
                r = one.get("cells_per_string", {}).get(c)
                parts.append(
                    f"{e:.2f} % with {c} connection"
                    + (f" ({' : '.join(map(str, r))} cells per string)" if r else "")
                )
            sentences.append(f"The stack {one['stack']} reaches " + " and ".join(parts) + ".")
        elif ranked:
            b = ranked[0]
            sentences.append(
                f"Of the stacks of interest, {b['stack']} is best with {c0} connection "
                f"({b['efficiency_pct'][c0]:.2f} %)"
                + (
                    f"; {ranked[-1]['stack']} is lowest ({ranked[-1]['efficiency_pct'][c0]:.2f} %)."
                    if len(ranked) > 1
                    else "."
                )
            )

    if kind == "unconstrained" or "map" in ctx.cache:
        if kind != "unconstrained" and "map" in ctx.cache:
            m = ctx.map
            ref = "; ".join(
                f"{c} {m.optimum(c)['efficiency_pct']:.2f} % at "
                + " / ".join(f"{g:.2f}" for g in m.optimum(c)["gaps_eV"])
                + " eV"
                for c in m.connections
            )
            where = (
                "with no gap fixed the map's optimum"
                if m.others == "none"
                else f"the map's optimum (other junctions {m.others}, see the maps)"
            )
            sentences.append(f"For reference, {where} is {ref}.")
            summ["unconstrained_optimum"] = {c: m.optimum(c)["gaps_eV"] for c in m.connections}
        elif set(st.sections) & _MAP_SECTIONS or not st.sections:
            m = ctx.map
            parts = []
            opt_summ = {}
            for c in m.connections:
                o = m.optimum(c)
                w = m.tolerance_window(c, tol)
                parts.append(
                    f"{' / '.join(f'{g:.2f}' for g in o['gaps_eV'])} eV with {c} connection "
                    f"({o['efficiency_pct']:.2f} %; within {tol:g} % absolute for "
                    f"{m.axis_label(0)} {w.x_range_eV[0]:.2f}–{w.x_range_eV[1]:.2f} eV and "
                    f"{m.axis_label(1)} {w.y_range_eV[0]:.2f}–{w.y_range_eV[1]:.2f} eV)"
                )
                opt_summ[c] = {"gaps_eV": o["gaps_eV"], "efficiency_pct": o["efficiency_pct"]}
            sentences.insert(
                0,
                "The study fixes no gap; the best stack on the map is " + " and ".join(parts) + ".",
            )
            summ["optimum"] = opt_summ

    warnings = result_warnings(ctx)
    summ["warnings"] = warnings
    summ["sentences"] = sentences
    html = ['<aside class="gm-answer" id="gm-answer" aria-label="answer"><h2>In short</h2>']
    html.extend(f"<p>{esc(s)}</p>" for s in sentences)
    if rows:
        html.append(
            table(header, rows, caption="Candidates at the study's conditions", numeric=numeric)
        )
    if warnings:
        html.append(
            '<div class="gm-warn" role="alert"><strong>Warnings</strong><ul>'
            + "".join(f"<li>{esc(w)}</li>" for w in warnings)
            + "</ul></div>"
        )
    html.append(f'<p class="gm-small"><strong>Caution:</strong> {esc(caution)}</p></aside>')
    return "".join(html), summ

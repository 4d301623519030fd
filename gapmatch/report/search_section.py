"""Report section for the band-gap search a study file describes (``[search]``).

The search runs in memory (no storage file) with the study's seed, so a report is
reproducible; ``gapmatch optimise --study FILE`` runs the same search with persistent,
resumable storage and parallel workers.
"""

from __future__ import annotations

import numpy as np

from . import colours as nc
from .html import para, table
from .registry import SectionOutput, register_section
from .sections import _vm_ratio

__all__ = ["search_section", "drop_constant_dimensions"]


#: trace name -> report colour (the search package draws in colours of its own)
_SEARCH_COLOURS = {
    "feasible trial": nc.BLUE,
    "polished optimum": nc.VERMILION,
    "best so far": nc.VERMILION,
    "with the constraint": nc.BLUE,
    "without it (re-optimised)": nc.ORANGE,
}


def _recolour(fig) -> None:
    """Draw the search figures in the report's named colours."""
    for tr in fig.data:
        c = _SEARCH_COLOURS.get(tr.name)
        if c is None:
            continue
        if tr.type == "bar" or tr.mode == "markers":
            tr.marker.color = c.hex
        else:
            tr.line.color = c.hex


def drop_constant_dimensions(fig):
    """Leave out parallel-coordinates axes whose values never vary (they carry no
    information and crowd the others); returns the labels left out."""
    dropped = []
    for tr in fig.data:
        if tr.type != "parcoords":
            continue
        keep = []
        for d in tr.dimensions:
            v = np.asarray(d.values, dtype=float)
            if v.size and np.nanmax(v) - np.nanmin(v) <= 1e-12 * max(1.0, abs(np.nanmax(v))):
                dropped.append(d.label)
            else:
                keep.append(d)
        tr.dimensions = keep
    return dropped


@register_section("search", "Band-gap search", default=False)
def search_section(ctx) -> SectionOutput:
    """Best stack, distinct alternatives, history, trials and constraint costs."""
    # the search (optuna) is imported only by reports that have this section
    from ..search import constraint_costs, optimise
    from ..search.figures import (
        constraint_cost_figure,
        constraint_cost_table,
        history_figure,
        optima_table,
        parallel_coordinates_figure,
    )
    from ..search.study_table import problem_from_study, search_settings

    cfg = search_settings(ctx.study)
    problem = problem_from_study(ctx.study)

    def run():
        return optimise(
            problem,
            trials=cfg["trials"] or None,
            seed=cfg["seed"],
            storage=":memory:",
            progress=False,
        )

    res = ctx.get("search", run)
    best_th = None if res.best_thickness_nm is None else _searched_m(problem, res)
    costs = constraint_costs(
        problem, res.best_gaps_eV, res.best_value, seed=cfg["seed"], best_thickness_m=best_th
    )
    best = res.best
    n = problem.n_junctions
    # a voltage-matched result states its cells-per-string ratio
    ratio = _vm_ratio(ctx, best["gaps_eV"]) if problem.connection == "voltage-matched" else None
    opt = optima_table(res)
    gap_cols = [c for c in opt.columns if c.startswith("gap_")]
    value_col = next(c for c in opt.columns if c.endswith("_pct") and c != "delta_pct")
    rows = [
        [
            int(r["rank"]),
            " / ".join(f"{r[c]:.4f}" for c in gap_cols),
            f"{r[value_col]:.3f}",
            f"{r['delta_pct']:.3f}",
            "yes" if r["local_max_check_passed"] else "no",
        ]
        for _, r in opt.iterrows()
    ]
    blocks = [
        para(
            f"Search over the gaps of a {n}-junction stack, {problem.connection} connection, "
            f"under the study's spectrum and cell conditions: a quasi-random (Sobol) batch "
            f"through the batch evaluator, {res.n_trials} optuna trials ({res.sampler}, seed "
            f"{res.seed}), then an exact local polish of the best distinct basins (gaps to "
            f"1e-4 eV). Constraints: minimum spacing {problem.min_spacing_eV:g} eV"
            + (
                f", photocurrent ratio >= {problem.min_mismatch_ratio:g}"
                if problem.min_mismatch_ratio
                else ""
            )
            + "; infeasible trials are kept in the trial table."
        ),
        para(
            f"Best stack: {' / '.join(f'{g:.4f}' for g in best['gaps_eV'])} eV, efficiency "
            f"{best['efficiency_pct']:.3f} %"
            + (f", {' : '.join(map(str, ratio))} cells per string (top first)." if ratio else ".")
        ),
        table(
            [
                "rank",
                "gaps, top first [eV]",
                "efficiency [%]",
                "below best [% abs.]",
                "verified local maximum",
            ],
            rows,
            caption="Best stack and distinct local optima (at least 0.05 eV apart in some gap)",
            numeric=[True, False, True, True, False],
        ),
    ]
    if res.thick_reference is not None:
        blocks += thickness_blocks(res)
    hist = history_figure(res)
    _recolour(hist)
    # legend below the plot, clear of the axis titles
    hist.update_layout(legend=dict(orientation="h", x=0, y=-0.22, yanchor="top"), height=480)
    hist.update_xaxes(automargin=True)
    blocks.append(hist)
    par = parallel_coordinates_figure(res)
    dropped = drop_constant_dimensions(par)
    for tr in par.data:
        for d in tr.dimensions:
            d.tickformat = ".3g"  # no six-digit range labels at the ends
    par.update_layout(margin=dict(l=60, r=60, t=110, b=40), height=480)
    blocks.append(par)
    if dropped:
        blocks.append(
            para(
                "Left out of the parallel coordinates because they never vary: "
                + ", ".join(dropped)
                + "."
            )
        )
    cost_df = constraint_cost_table(costs)
    if len(cost_df):
        blocks.append(
            table(
                [
                    "constraint",
                    "active",
                    "with [%]",
                    "without [%]",
                    "cost [% abs.]",
                    "gaps without it [eV]",
                ],
                [
                    [
                        r["constraint"],
                        "yes" if r["active"] else "no",
                        f"{r['with_pct']:.3f}",
                        f"{r['without_pct']:.3f}",
                        f"{r['cost_pct']:.3f}",
                        r["gaps_without_eV"],
                    ]
                    for _, r in cost_df.iterrows()
                ],
                caption="What each constraint costs: the optimum with and without it",
                numeric=[False, False, True, True, True, False],
            )
        )
        cost_fig = constraint_cost_figure(costs)
        _recolour(cost_fig)
        # bars start at zero: their lengths compare the efficiencies honestly
        top = float(max(cost_df["with_pct"].max(), cost_df["without_pct"].max()))
        cost_fig.update_yaxes(range=[0, 1.15 * top], rangemode="tozero")
        cost_fig.update_layout(legend=dict(orientation="h", x=0, y=-0.18, yanchor="top"))
        blocks.append(cost_fig)
    data = {"search_trials.csv": res.to_frame(), "search_optima.csv": opt}
    extra = {}
    if res.thick_reference is not None:
        data["search_thickness.csv"] = thickness_comparison(res)
        extra = {
            "best_thickness_nm": res.best_thickness_nm,
            "thick_absorber_optimum": res.thick_reference,
        }
    return SectionOutput(
        blocks=blocks,
        data=data,
        summary={
            "best_gaps_eV": best["gaps_eV"],
            "best_efficiency": best["efficiency"],
            "alternatives": res.alternatives,
            "trials": res.n_trials,
            **({"cells_per_string": ratio} if ratio else {}),
            **extra,
        },
    )


def _searched_m(problem, res) -> np.ndarray:
    """The best stack's searched thicknesses [m], ``(K,)``."""
    return 1e-9 * np.array([res.best_thickness_nm[k] for k in problem.thickness_junctions])


def thickness_comparison(res):
    """The thinned optimum beside the thick-absorber one (table data): ``optimum``,
    ``gap_k_eV``, ``thickness_k_nm`` (NaN for step junctions), ``efficiency_pct``,
    ``jsc_k_mA_cm2``."""
    import pandas as pd

    ref = res.thick_reference
    name = res.problem.objective.name
    rows = []
    for label, gaps, th, eff, jsc in (
        (
            "thinned",
            res.best["gaps_eV"],
            res.best_thickness_nm,
            res.best["efficiency"],
            [j["jsc_mA_cm2"] for j in res.best["junctions"]],
        ),
        ("thick absorber", ref["gaps_eV"], ref["thickness_nm"], ref[name], ref["jsc_mA_cm2"]),
    ):
        row = {"optimum": label}
        for k, g in enumerate(gaps):
            row[f"gap_{k + 1}_eV"] = float(g)
        for k, t in enumerate(th):
            row[f"thickness_{k + 1}_nm"] = np.nan if t is None else float(t)
        row["efficiency_pct"] = 100.0 * float(eff)
        for k, j in enumerate(jsc):
            row[f"jsc_{k + 1}_mA_cm2"] = float(j)
        rows.append(row)
    return pd.DataFrame(rows)


def thickness_blocks(res) -> list:
    """Report blocks of a thickness search: what was searched, the comparison table and
    the caution that it is a model projection."""
    df = thickness_comparison(res)
    n = res.problem.n_junctions
    wins = ", ".join(
        f"junction {j} {lo:g}-{hi:g} nm"
        for j, (lo, hi) in res.problem.thickness_windows_nm().items()
    )
    models = res.best.get("conditions", {}).get("physics", {}).get("absorber")
    rows = []
    for _, r in df.iterrows():
        rows.append(
            [
                r["optimum"],
                " / ".join(f"{r[f'gap_{k + 1}_eV']:.4f}" for k in range(n)),
                " / ".join(
                    "-"
                    if np.isnan(r[f"thickness_{k + 1}_nm"])
                    else f"{r[f'thickness_{k + 1}_nm']:.4g}"
                    for k in range(n)
                ),
                f"{r['efficiency_pct']:.3f}",
                " / ".join(f"{r[f'jsc_{k + 1}_mA_cm2']:.2f}" for k in range(n)),
            ]
        )
    gain = df["efficiency_pct"].iloc[0] - df["efficiency_pct"].iloc[1]
    return [
        para(
            f"Absorber thicknesses were searched with the gaps ({wins}, on a log scale), "
            "under the same constraints"
            + (f", with absorbers {' / '.join(models)} (top first)" if models else "")
            + ". Thinning a cell passes part of its light to the cells below; in a "
            "two-terminal stack whose top gap is too low for current matching this shares "
            "current (Bremner et al., Solar Energy 135, 750 (2016)). The thick-absorber "
            "optimum holds every searched thickness at its window's upper end and "
            f"re-optimises the gaps; thinning gains {gain:.3f} % (absolute) here."
        ),
        table(
            [
                "optimum",
                "gaps, top first [eV]",
                "thickness, top first [nm]",
                "efficiency [%]",
                "Jsc per junction, top first [mA cm^-2]",
            ],
            rows,
            caption="Thinned optimum beside the thick-absorber optimum ('-': step "
            "absorber, thickness not modelled)",
            numeric=[False, False, False, True, False],
        ),
        para(
            "Caution: both rows are model projections with finite absorbers (the "
            "absorption models and their parameters: absorption coefficient, Urbach tail, "
            "light trapping), not ideal detailed-balance ceilings; a real cell's optimum "
            "thickness also depends on its optics and collection. Theoretical limits, not "
            "ratings: defer to accredited measurement (IEC 60904 family) for anything "
            "built or sold."
        ),
    ]

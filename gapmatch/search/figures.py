"""Plotly figures and table data of a band-gap search, for reports.

Every function takes a :class:`~gapmatch.search.result.SearchResult` (or the output of
:func:`~gapmatch.search.costs.constraint_costs`) and returns a ``plotly.graph_objects.Figure``
or a pandas DataFrame; none writes files. Axis labels carry units.
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import plotly.graph_objects as go

from .result import SearchResult

__all__ = [
    "history_figure",
    "parallel_coordinates_figure",
    "optima_table",
    "optima_table_figure",
    "constraint_cost_table",
    "constraint_cost_figure",
    "pareto_figure",
]

_NOTE = "Detailed-balance limits: theoretical ceilings, not ratings."


def _value_col(result: SearchResult) -> str:
    name = result.problem.objective.name
    return f"{name}_pct" if result.problem.objective.scale == 100.0 else name


def _label(result: SearchResult) -> str:
    return result.problem.objective.label


def history_figure(result: SearchResult) -> go.Figure:
    """Optimisation history: every trial's objective by trial number (feasible, infeasible,
    polished), and the best feasible value so far."""
    df = result.trials[result.trials["state"] == "COMPLETE"].sort_values("trial")
    col = _value_col(result)
    fig = go.Figure()
    for label, sel, marker in (
        (
            "feasible trial",
            df["feasible"] & (df["stage"] != "polish"),
            dict(size=6, color="#1f6f8b"),
        ),
        ("infeasible trial (kept)", ~df["feasible"], dict(size=6, color="#b0b0b0", symbol="x")),
        (
            "polished optimum",
            df["feasible"] & (df["stage"] == "polish"),
            dict(size=10, color="#d1495b", symbol="star"),
        ),
    ):
        d = df[sel]
        if len(d):
            fig.add_trace(
                go.Scatter(x=d["trial"], y=d[col], mode="markers", name=label, marker=marker)
            )
    feas = df[df["feasible"]]
    if len(feas):
        best = np.maximum.accumulate(feas[col].to_numpy())
        fig.add_trace(
            go.Scatter(
                x=feas["trial"],
                y=best,
                mode="lines",
                name="best so far",
                line=dict(color="#d1495b", shape="hv"),
            )
        )
        lo = float(np.nanpercentile(feas[col], 5))
        hi = float(feas[col].max())
        fig.update_yaxes(range=[lo - 0.05 * (hi - lo + 1e-9), hi + 0.1 * (hi - lo + 1e-9)])
    fig.update_layout(
        title=f"Search history ({result.n_trials} trials). {_NOTE}",
        xaxis_title="trial number",
        yaxis_title=_label(result),
        template="plotly_white",
        legend=dict(orientation="h"),
    )
    return fig


def parallel_coordinates_figure(result: SearchResult, feasible_only: bool = False) -> go.Figure:
    """Parallel coordinates of the trials: each gap [eV] (top first), the mismatch ratio
    and the objective; lines coloured by the objective."""
    df = result.trials[result.trials["state"] == "COMPLETE"]
    if feasible_only:
        df = df[df["feasible"]]
    col = _value_col(result)
    n = result.problem.n_junctions
    dims = [dict(label=f"E_g,{k + 1} [eV]", values=df[f"gap_{k + 1}_eV"]) for k in range(n)]
    dims.append(dict(label="photocurrent ratio min/max [-]", values=df["mismatch_ratio"]))
    for nm in result.problem.objective_names[1:]:
        c = f"{nm}_pct" if result.problem.objective.scale == 100.0 else nm
        dims.append(dict(label=f"worst-case {_label(result)}", values=df[c]))
    dims.append(
        dict(label="feasible (1 = yes)", values=df["feasible"].astype(int), tickvals=[0, 1])
    )
    dims.append(dict(label=_label(result), values=df[col]))
    fig = go.Figure(
        go.Parcoords(
            line=dict(
                color=df[col],
                colorscale="Viridis",
                showscale=True,
                colorbar=dict(title=_label(result)),
            ),
            dimensions=dims,
        )
    )
    fig.update_layout(
        title=f"Trials in parallel coordinates (junction 1 = top). {_NOTE}", template="plotly_white"
    )
    return fig


def optima_table(result: SearchResult) -> pd.DataFrame:
    """Best stack and distinct alternatives (table data): ``rank``, ``gap_k_eV``,
    objective in %, ``delta_pct`` below the best, ``local_max_check_passed``."""
    return result.optima_frame()


def optima_table_figure(result: SearchResult) -> go.Figure:
    """:func:`optima_table` as a plotly table."""
    df = optima_table(result)
    cells = []
    for c in df.columns:
        v = df[c]
        if c.startswith("gap_"):
            cells.append([f"{x:.4f}" for x in v])
        elif v.dtype.kind == "f":
            cells.append([f"{x:.3f}" for x in v])
        else:
            cells.append([str(x) for x in v])
    head = [c.replace("_eV", " [eV]").replace("_pct", " [%]").replace("_", " ") for c in df.columns]
    fig = go.Figure(go.Table(header=dict(values=head), cells=dict(values=cells)))
    fig.update_layout(title="Best stack and distinct local optima (>= 0.05 eV apart)")
    return fig


def constraint_cost_table(costs: list[dict]) -> pd.DataFrame:
    """Table data of :func:`gapmatch.search.constraint_costs`: ``constraint``,
    ``active``, ``with_pct``, ``without_pct``, ``cost_pct``, gaps without it [eV]."""
    df = pd.DataFrame(costs)
    if len(df):
        df["gaps_without_eV"] = [" / ".join(f"{g:.3f}" for g in r) for r in df["gaps_without_eV"]]
    return df


def constraint_cost_figure(costs: list[dict]) -> go.Figure:
    """Efficiency with and without each constraint (grouped bars, absolute %)."""
    df = pd.DataFrame(costs)
    fig = go.Figure()
    if len(df):
        fig.add_trace(
            go.Bar(
                x=df["constraint"],
                y=df["with_pct"],
                name="with the constraint",
                marker_color="#1f6f8b",
            )
        )
        fig.add_trace(
            go.Bar(
                x=df["constraint"],
                y=df["without_pct"],
                name="without it (re-optimised)",
                marker_color="#edae49",
                text=[
                    f"cost {c:.2f} %" if a else "inactive"
                    for c, a in zip(df["cost_pct"], df["active"], strict=True)
                ],
                textposition="outside",
            )
        )
        lo = float(min(df["with_pct"].min(), df["without_pct"].min()))
        hi = float(max(df["with_pct"].max(), df["without_pct"].max()))
        fig.update_yaxes(range=[lo - 0.2 * (hi - lo + 0.5), hi + 0.2 * (hi - lo + 0.5)])
    fig.update_layout(
        barmode="group",
        title=f"Cost of each constraint. {_NOTE}",
        yaxis_title="efficiency [%]",
        template="plotly_white",
    )
    return fig


def pareto_figure(result: SearchResult) -> go.Figure:
    """Robustness trade-off: objective vs worst case within +/- delta, Pareto front
    highlighted (needs the robustness objective)."""
    names = result.problem.objective_names
    if len(names) < 2:
        raise ValueError("the search had no robustness objective")
    s = "_pct" if result.problem.objective.scale == 100.0 else ""
    a, b = f"{names[0]}{s}", f"{names[1]}{s}"
    df = result.trials[(result.trials["state"] == "COMPLETE") & result.trials["feasible"]]
    front = result.pareto_front()
    gap_cols = [f"gap_{k + 1}_eV" for k in range(result.problem.n_junctions)]

    def hover(d):
        return [" / ".join(f"{r[c]:.3f}" for c in gap_cols) + " eV" for _, r in d.iterrows()]

    fig = go.Figure()
    fig.add_trace(
        go.Scatter(
            x=df[a],
            y=df[b],
            mode="markers",
            name="feasible trials",
            marker=dict(color="#b0b0b0", size=6),
            text=hover(df),
        )
    )
    fig.add_trace(
        go.Scatter(
            x=front[a],
            y=front[b],
            mode="markers+lines",
            name="Pareto front",
            marker=dict(color="#d1495b", size=9),
            text=hover(front),
        )
    )
    d = result.problem.robustness_eV
    fig.update_layout(
        title=f"Efficiency vs worst case for gaps within +/- {d:g} eV. {_NOTE}",
        xaxis_title=_label(result),
        yaxis_title=f"worst-case {_label(result)} (+/- {d:g} eV)",
        template="plotly_white",
    )
    return fig

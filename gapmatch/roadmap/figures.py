"""Plotly figures of a roadmap result (they only render).

Every function takes a :class:`~gapmatch.roadmap.result.RoadmapResult` and draws the
tables the result computes (:meth:`~RoadmapResult.ranking_frame`,
:meth:`~RoadmapResult.headroom_frame`, :meth:`~RoadmapResult.sensitivity_frame`); no
analysis happens here and nothing is written. Axis labels carry units; candidates whose
numbers include values marked "from memory" or "common practice, no source" are flagged
with a dagger in the legend and in the hover text.
"""

from __future__ import annotations

import html

import plotly.graph_objects as go

from .result import RoadmapResult

__all__ = [
    "trajectory_figure",
    "probability_figure",
    "sensitivity_figure",
    "headroom_figure",
    "CAUSE_LABELS",
]

#: display names of the headroom causes
CAUSE_LABELS = {
    "resistance": "series resistance",
    "collection": "incomplete collection",
    "thickness": "finite thickness",
    "non_radiative": "non-radiative recombination",
    "current_mismatch": "current mismatch",
}
_PALETTE = ("#2b6f8e", "#d1495b", "#edae49", "#00798c", "#6c4f77", "#7a9e3d", "#8d6a3f")
_CAUSE_COLOURS = ("#9e9e9e", "#c59f6b", "#7fa7c9", "#d98080", "#9fc58f")
_NOTE = "Scenario assumptions, not forecasts; detailed-balance ceilings, not ratings."
_FLAGGED = ("from memory", "common practice, no source")


def _esc(s) -> str:
    return html.escape(str(s), quote=True)


def _flag(marks: str) -> str:
    return " \u2020" if any(m in marks for m in _FLAGGED) else ""


def _layout(fig: go.Figure, title: str, height: int = 480) -> go.Figure:
    fig.update_layout(
        title=dict(text=_esc(title), x=0.01),
        height=height,
        template="plotly_white",
        margin=dict(l=70, r=30, t=70, b=80),
        legend=dict(orientation="h", y=-0.18),
        annotations=[
            dict(
                text=_esc(_NOTE) + " \u2020 uses unchecked library values.",
                xref="paper",
                yref="paper",
                x=0,
                y=1.07,
                showarrow=False,
                font=dict(size=11, color="#555"),
                xanchor="left",
            )
        ],
    )
    return fig


def _colour(i: int) -> str:
    return _PALETTE[i % len(_PALETTE)]


def trajectory_figure(result: RoadmapResult) -> go.Figure:
    """P50 against milestone year per candidate, with its P10-P90 band."""
    f = result.ranking_frame().sort_values("year")
    u = result.unit
    fig = go.Figure()
    for i, c in enumerate(x.name for x in result.study.candidates):
        d = f[f["candidate"] == c]
        col = _colour(i)
        name = _esc(c) + _flag(";".join(d["marks"]))
        fig.add_trace(
            go.Scatter(
                x=list(d["year"]) + list(d["year"])[::-1],
                y=list(d[f"p90_{u}"]) + list(d[f"p10_{u}"])[::-1],
                fill="toself",
                fillcolor=col,
                opacity=0.18,
                line=dict(width=0),
                hoverinfo="skip",
                showlegend=False,
                legendgroup=name,
            )
        )
        fig.add_trace(
            go.Scatter(
                x=d["year"],
                y=d[f"p50_{u}"],
                mode="lines+markers",
                name=name,
                legendgroup=name,
                line=dict(color=col, width=2),
                customdata=d[[f"p10_{u}", f"p90_{u}", "probability_best", "marks"]].values,
                hovertemplate="%{x}: P50 %{y:.2f}<br>P10 %{customdata[0]:.2f}, "
                "P90 %{customdata[1]:.2f}<br>P(best) %{customdata[2]:.3f}"
                "<br>%{customdata[3]}<extra>" + name + "</extra>",
            )
        )
    fig.update_xaxes(title="milestone [year]", tickvals=list(result.study.milestones))
    fig.update_yaxes(title=_esc(result.evaluator.label) + " (P50, band P10-P90)")
    return _layout(fig, "Candidates over the milestones")


def probability_figure(result: RoadmapResult) -> go.Figure:
    """Probability of being best per milestone (stacked: the bars sum to 1)."""
    f = result.ranking_frame()
    fig = go.Figure()
    years = [str(y) for y in result.study.milestones]
    for i, c in enumerate(x.name for x in result.study.candidates):
        d = f[f["candidate"] == c].set_index("year").loc[list(result.study.milestones)]
        fig.add_trace(
            go.Bar(
                x=years,
                y=d["probability_best"],
                name=_esc(c) + _flag(";".join(d["marks"])),
                marker_color=_colour(i),
                hovertemplate="%{x}: %{y:.3f}<extra>" + _esc(c) + "</extra>",
            )
        )
    fig.update_layout(barmode="stack")
    fig.update_xaxes(title="milestone [year]", type="category")
    fig.update_yaxes(title="probability of being best [-]", range=[0, 1])
    return _layout(fig, "Probability of being the best candidate")


def sensitivity_figure(result: RoadmapResult, candidate: str, year: int | None = None) -> go.Figure:
    """One-at-a-time swings of each uncertain input (tornado), largest on top, with the
    Spearman rank correlation in the labels; default the last milestone."""
    year = result.study.milestones[-1] if year is None else year
    f = result.sensitivity_frame()
    d = f[(f["candidate"] == candidate) & (f["year"] == year)].iloc[::-1]
    u = result.unit
    labels = [
        f"{_esc(r['input'])} ({r['low']:.3g} / {r['likely']:.3g} / {r['high']:.3g}), "
        f"rho {r['rank_correlation']:+.2f}"
        for _, r in d.iterrows()
    ]
    fig = go.Figure()
    for col, name, colour in (
        (f"swing_low_{u}", "input at its low value", "#7fa7c9"),
        (f"swing_high_{u}", "input at its high value", "#d98080"),
    ):
        fig.add_trace(
            go.Bar(
                y=labels,
                x=d[col],
                orientation="h",
                name=name,
                marker_color=colour,
                hovertemplate="%{x:+.3f}<extra>" + name + "</extra>",
            )
        )
    fig.update_layout(barmode="overlay")
    fig.update_xaxes(title=f"change from the likely value [{u.replace('pct', '% abs.')}]")
    h = 200 + 40 * max(1, len(d))
    return _layout(fig, f"What moves {candidate} in {year}", height=h)


def headroom_figure(result: RoadmapResult, year: int | None = None) -> go.Figure:
    """Likely value and the headroom to the radiative limit by cause, per candidate
    (stacked in the order the causes are switched off); default the last milestone."""
    year = result.study.milestones[-1] if year is None else year
    f = result.headroom_frame()
    d = f[f["year"] == year].iloc[::-1]
    u = result.unit
    names = [_esc(c) + _flag(m) for c, m in zip(d["candidate"], d["marks"], strict=True)]
    fig = go.Figure()
    fig.add_trace(
        go.Bar(
            y=names,
            x=d[f"likely_{u}"],
            orientation="h",
            name="likely value",
            marker_color="#2b6f8e",
        )
    )
    for (cause, label), colour in zip(CAUSE_LABELS.items(), _CAUSE_COLOURS, strict=True):
        fig.add_trace(
            go.Bar(
                y=names,
                x=d[f"{cause}_{u}"],
                orientation="h",
                name=label,
                marker_color=colour,
                hovertemplate="%{x:.3f}<extra>" + label + "</extra>",
            )
        )
    fig.update_layout(barmode="stack")
    fig.update_xaxes(title=_esc(result.evaluator.label) + ", stacked to the radiative limit")
    return _layout(fig, f"Headroom to the radiative limit in {year}", height=260 + 45 * len(d))

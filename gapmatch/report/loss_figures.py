"""Plotly figures for the loss breakdown and for thickness studies (for the HTML report).

* :func:`loss_breakdown_figure` -- stacked bars, one per stack of interest, showing where
  the incident power goes (share of the incident power [%] or power density [W m^-2]).
* :func:`junction_loss_figure` -- the same for the junctions of one stack.
* :func:`thickness_figure` -- efficiency [%] (and each junction's photocurrent
  [mA cm^-2]) versus the thickness of one junction [nm], from
  :func:`gapmatch.api.thickness_sweep`.

Every figure states in its title that the numbers are theoretical limits or model
projections, not ratings.
"""

from __future__ import annotations

from collections.abc import Sequence

import numpy as np
import plotly.graph_objects as go
from plotly.subplots import make_subplots

from ..results import LOSS_LABELS, BatchResult, ThicknessSweep
from ..units import a_m2_to_ma_cm2

__all__ = [
    "LOSS_COLOURS",
    "loss_breakdown_figure",
    "junction_loss_figure",
    "thickness_figure",
]

#: colours of the loss terms (our own choice: warm for photon losses, cool for voltage
#: losses, grey for connection losses, green for the output)
LOSS_COLOURS = {
    "below_gap": "#8c2d04",
    "incomplete_absorption": "#cc4c02",
    "thermalisation": "#ec7014",
    "incomplete_collection": "#fe9929",
    "emission": "#fdd49e",
    "nonradiative": "#b3a2c7",
    "carnot": "#08519c",
    "boltzmann": "#3182bd",
    "voltage_radiative": "#6baed6",
    "voltage_nonradiative": "#9ecae1",
    "voltage_mpp": "#c6dbef",
    "mismatch": "#737373",
    "series_resistance": "#bdbdbd",
    "luminescent_transfer": "#e7e1ef",
    "output": "#238b45",
}


def length_label(nm: float) -> str:
    """A thickness in readable units: ``"300 nm"``, ``"1.5 µm"``."""
    return f"{nm:.3g} nm" if nm < 1000 else f"{nm / 1000:.3g} µm"


def _round_log_ticks(lo: float, hi: float) -> list[float]:
    """1-2-5 ticks [nm] covering ``lo`` to ``hi`` on a log axis."""
    out = []
    for e in range(int(np.floor(np.log10(lo))), int(np.ceil(np.log10(hi))) + 1):
        for m in (1, 2, 5):
            v = m * 10.0**e
            if lo * 0.999 <= v <= hi * 1.001:
                out.append(v)
    return out


def _stack_label(gaps: np.ndarray) -> str:
    return " / ".join(f"{g:.2f}" for g in gaps) + " eV"


def loss_breakdown_figure(
    result: BatchResult,
    stacks: Sequence[int] | None = None,
    *,
    percent: bool = True,
    title: str | None = None,
) -> go.Figure:
    """Stacked bars of the loss breakdown, one bar per stack.

    Parameters
    ----------
    result : BatchResult
        An evaluation with ``losses=True``.
    stacks : sequence of int, optional
        Stack indices to show (default: all, at most 20).
    percent : bool
        Show shares of the incident power [%] (default) or power densities [W m^-2].
    title : str, optional
        Figure title.

    Returns
    -------
    plotly.graph_objects.Figure
        Bars in ``barmode="relative"`` so that negative terms (a net luminescent transfer
        or the photon-number gain inside ``voltage_radiative`` under a blackbody sun) are
        drawn below zero.

    Raises
    ------
    ValueError
        If the result carries no loss breakdown.
    """
    table = result.losses
    if table is None:
        raise ValueError("the result has no loss breakdown: evaluate with losses=True")
    idx = list(range(min(len(result), 20))) if stacks is None else list(stacks)
    tot = table.totals()
    inc = table.breakdown.incident_W_m2
    labels = [_stack_label(result.gaps_eV[i]) for i in idx]
    fig = go.Figure()
    unit = "% of incident" if percent else "W m^-2"
    for key in table.terms:
        if key == "luminescent_transfer":
            continue  # zero per stack
        vals = np.asarray(tot[key])[idx]
        y = 100.0 * vals / inc if percent else vals
        fig.add_trace(
            go.Bar(
                name=LOSS_LABELS.get(key, key),
                x=labels,
                y=y,
                marker_color=LOSS_COLOURS.get(key),
                hovertemplate="%{x}<br>"
                + LOSS_LABELS.get(key, key)
                + ": %{y:.2f} "
                + unit
                + "<extra></extra>",
            )
        )
    fig.update_layout(
        barmode="relative",
        title=title or "Where the incident power goes (theoretical model, not a rating)",
        xaxis_title="stack (band gaps, top first)",
        yaxis_title="share of incident power [%]" if percent else "power density [W m^-2]",
        legend_title="term",
    )
    return fig


def junction_loss_figure(result: BatchResult, i: int = 0, *, percent: bool = True) -> go.Figure:
    """Stacked bars of the per-junction loss terms of stack ``i`` (top junction first).

    Stack-level terms (below-gap transmission, incomplete absorption, the stack's own
    series resistance) are shown as a separate "stack" bar.

    Parameters
    ----------
    result : BatchResult
        An evaluation with ``losses=True``.
    i : int
        Stack index.
    percent : bool
        Shares of the incident power [%] (default) or power densities [W m^-2].

    Returns
    -------
    plotly.graph_objects.Figure
    """
    table = result.losses
    if table is None:
        raise ValueError("the result has no loss breakdown: evaluate with losses=True")
    b = table.breakdown
    inc = b.incident_W_m2
    n = result.n_junctions
    x = [f"junction {k + 1} ({result.gaps_eV[i, k]:.2f} eV)" for k in range(n)] + ["stack"]
    scale = 100.0 / inc if percent else 1.0
    fig = go.Figure()
    for key in table.terms:
        y = [np.nan] * (n + 1)
        if key in b.junction:
            y[:n] = list(b.junction[key][i] * scale)
        if key == "output":
            y[:n] = list(b.junction_output_W_m2[i] * scale)
        if key in b.stack:
            y[n] = float(b.stack[key][i] * scale)
        if key == "output":
            y[n] = np.nan
        fig.add_trace(
            go.Bar(name=LOSS_LABELS.get(key, key), x=x, y=y, marker_color=LOSS_COLOURS.get(key))
        )
    fig.update_layout(
        barmode="relative",
        title=f"Loss breakdown by junction, stack {_stack_label(result.gaps_eV[i])} "
        "(theoretical model, not a rating)",
        yaxis_title="share of incident power [%]" if percent else "power density [W m^-2]",
        legend_title="term",
    )
    return fig


def thickness_figure(sweep: ThicknessSweep, connection: str = "series") -> go.Figure:
    """Draw a thickness sweep (see :func:`gapmatch.api.thickness_sweep`).

    Parameters
    ----------
    sweep : ThicknessSweep
        The computed sweep.
    connection : str
        Its connection (for the title).

    Returns
    -------
    plotly.graph_objects.Figure
        Efficiency [%] (left axis) and each junction's photocurrent [mA cm^-2] (right
        axis) against thickness [nm] on a logarithmic axis; the most efficient thickness
        is marked.
    """
    th = sweep.thickness_nm
    res = sweep.result
    eff = sweep.efficiency_pct
    jph = a_m2_to_ma_cm2(res.solution.jph)
    fig = make_subplots(specs=[[{"secondary_y": True}]])
    fig.add_trace(
        go.Scatter(
            x=th,
            y=eff,
            mode="lines+markers",
            name="efficiency [%] (left axis)",
            line={"color": "#238b45", "width": 3},
            hovertemplate="%{y:.2f} %<extra>efficiency</extra>",
        ),
        secondary_y=False,
    )
    for k in range(res.n_junctions):
        fig.add_trace(
            go.Scatter(
                x=th,
                y=jph[:, k],
                mode="lines",
                name=f"J<sub>ph</sub> junction {k + 1} [mA cm<sup>-2</sup>] (right axis)",
                line={"dash": "dot"},
                hovertemplate=f"junction {k + 1}: %{{y:.2f}} mA cm<sup>-2</sup><extra></extra>",
            ),
            secondary_y=True,
        )
    best = sweep.best()
    fig.add_trace(
        go.Scatter(
            x=[th[best]],
            y=[eff[best]],
            mode="markers+text",
            text=[f"{eff[best]:.2f} % at {length_label(th[best])}"],
            textposition="top center",
            marker={"size": 12, "symbol": "star", "color": "#08519c"},
            name="most efficient",
        ),
        secondary_y=False,
    )
    ticks = _round_log_ticks(float(np.min(th)), float(np.max(th)))
    fig.update_xaxes(
        type="log",
        title_text=f"thickness of junction {sweep.junction}",
        tickvals=ticks,
        ticktext=[length_label(t) for t in ticks],
        automargin=True,
    )
    fig.update_yaxes(
        title_text="efficiency [%]", secondary_y=False, rangemode="tozero", automargin=True
    )
    jmax = float(np.nanmax(jph)) if jph.size else 1.0
    step = next(s for s in (1, 2, 5, 10, 20, 50, 100, 200, 500, 1e3, 1e4, 1e5) if jmax / s <= 8)
    fig.update_yaxes(
        title_text="photocurrent [mA cm<sup>-2</sup>]",
        secondary_y=True,
        range=[0, 1.1 * jmax],
        tick0=0,
        dtick=step,
        showgrid=False,
        automargin=True,
    )
    fig.update_layout(
        title=f"Efficiency versus thickness, stack {_stack_label(res.gaps_eV[0])}"
        f", {connection} (model projection with finite absorbers, not a rating)",
        height=520,
        margin=dict(l=80, r=90, t=90, b=110),
        legend=dict(orientation="h", y=-0.25, x=0),
    )
    return fig

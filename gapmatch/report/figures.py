"""Plotly figures of maps, cuts, spectra and J-V curves (no file I/O).

Every function returns a :class:`plotly.graph_objects.Figure`. Colour scales are
perceptually uniform and readable with the common colour-vision deficiencies (cividis
[1]_, viridis [2]_); categorical lines use the Okabe-Ito palette [3]_. Hover texts carry
units. Strings that come from a study file (material and stack names) are HTML-escaped
before they reach plotly, which renders a small HTML subset in its labels.

References
----------
.. [1] J. R. Nunez, C. R. Anderton and R. S. Renslow, PLoS ONE 13, e0199239 (2018).
.. [2] S. van der Walt and N. Smith, "A better default colormap for Matplotlib", SciPy
   2015 (viridis).
.. [3] M. Okabe and K. Ito, "Color Universal Design" (2008), the eight-colour palette.
"""

from __future__ import annotations

from collections.abc import Sequence

import numpy as np
import plotly.graph_objects as go
from plotly.subplots import make_subplots

from ..maps import CutResult, MapResult, ToleranceWindow
from ..units import HC_EV_NM, C, H
from . import colours as nc
from .html import esc
from .style import FONT, apply_style

__all__ = [
    "PALETTE",
    "INK",
    "map_figure",
    "difference_figure",
    "mismatch_figure",
    "cut_figure",
    "spectrum_figure",
    "jv_figure",
]

#: Okabe-Ito categorical colours (colour-blind safe), without black
PALETTE = [
    c.hex
    for c in (
        nc.ORANGE,
        nc.SKY_BLUE,
        nc.BLUISH_GREEN,
        nc.YELLOW,
        nc.BLUE,
        nc.VERMILION,
        nc.REDDISH_PURPLE,
    )
]
#: text and line colour of the report
INK = nc.INK.hex
#: colour of the best-partner ridge (reads on both ends of cividis)
RIDGE = nc.RIDGE.hex
#: colours of materials on maps (Okabe-Ito without yellow, vermilion and reddish purple,
#: which the ridge, the optimum and the matched line use)
MATERIAL_COLOURS = [c.hex for c in (nc.SKY_BLUE, nc.BLUISH_GREEN, nc.ORANGE, nc.BLUE)]
_FONT = FONT
_CONN_COLOUR = {k: c.hex for k, c in nc.CONNECTION.items()}
_JUNCTION_FILL = [
    "rgba(0,114,178,0.30)",
    "rgba(230,159,0,0.35)",
    "rgba(0,158,115,0.30)",
    "rgba(204,121,167,0.35)",
    "rgba(86,180,233,0.35)",
    "rgba(213,94,0,0.30)",
]


def _base_layout(fig: go.Figure, title: str, height: int = 560) -> None:
    """The report's style (:func:`gapmatch.report.style.apply_style`) with a title and
    a height."""
    apply_style(fig, title, height)
    fig.update_layout(margin=dict(l=70, r=30, t=90, b=60))


def _grid_z(values: np.ndarray, keep: np.ndarray, decimals: int) -> np.ndarray:
    """Rounded float32 grid (compact typed array in the page) with NaN (shown blank)
    where not ``keep``."""
    return np.round(np.where(keep, values, np.nan), decimals).astype(np.float32)


def _axis_titles(m: MapResult) -> tuple[str, str]:
    i, j = m.axes
    return (
        f"{m.axis_label(0)} E<sub>g,{i}</sub> [eV]",
        f"{m.axis_label(1)} E<sub>g,{j}</sub> [eV]",
    )


def _levels(zmin: float, zmax: float) -> tuple[float, float, float]:
    span = zmax - zmin
    size = 1.0 if span <= 12 else 2.0 if span <= 30 else 5.0
    start = size * np.ceil(zmin / size)
    return float(start), float(zmax), size


def _map_contour(
    m: MapResult,
    z: np.ndarray,
    *,
    levels: tuple[float, float, float],
    label_format: str,
    line_colour: str,
    hover_value: str,
    extra_name: str = "",
    **trace,
) -> go.Contour:
    """A filled map with labelled contour lines over the map's axes (hover with units)."""
    start, end, size = levels
    return go.Contour(
        x=m.x_eV,
        y=m.y_eV,
        z=z,
        contours=dict(
            coloring="heatmap",
            showlabels=True,
            start=start,
            end=end,
            size=size,
            labelfont=dict(size=11, color="white"),
            labelformat=label_format,
        ),
        line=dict(width=0.8, color=line_colour),
        hovertemplate=(
            f"{m.axis_label(0)} %{{x:.3f}} eV<br>{m.axis_label(1)} %{{y:.3f}} eV"
            f"<br>{hover_value}<extra>{extra_name}</extra>"
        ),
        **trace,
    )


def _square_map_axes(fig: go.Figure, m: MapResult, x_range, y_range, **y_extra) -> None:
    """Both gap axes titled, over the given ranges [eV], with equal scales."""
    xt, yt = _axis_titles(m)
    fig.update_layout(plot_bgcolor="#f4f1ea")  # sand where a map is blank
    fig.update_xaxes(title=xt, range=x_range, showgrid=False, constrain="domain")
    fig.update_yaxes(
        title=yt, range=y_range, showgrid=False, scaleanchor="x", constrain="domain", **y_extra
    )


def map_figure(
    m: MapResult,
    connection: str,
    *,
    window: ToleranceWindow | None = None,
    materials: Sequence = (),
    stacks: Sequence = (),
    stack_efficiency: dict | None = None,
    show_ridge: bool = True,
    title: str | None = None,
) -> go.Figure:
    """Efficiency map with labelled iso-efficiency contours.

    Parameters
    ----------
    m : MapResult
        The map.
    connection : str
        Which connection's map to draw.
    window : ToleranceWindow, optional
        Drawn as an outline.
    materials : sequence of gapmatch.study.Material
        Fixed gaps drawn as lines, tunable windows as bands (``role`` top -> on the axis
        of junction 1, bottom -> on the axis of the bottom junction, any -> both).
    stacks : sequence of gapmatch.study.StackOfInterest
        Stacks with as many junctions as the map, marked at their axis gaps.
    stack_efficiency : dict, optional
        Stack name -> efficiency [%] for the hover text.
    show_ridge : bool
        Draw the best-partner ridge.
    title : str, optional
        Figure title (already safe HTML).
    """
    eff = 100 * m.efficiency[connection]
    keep = m.descending
    zmax = float(np.nanmax(np.where(keep, eff, np.nan)))
    zmin = max(0.0, float(np.nanmin(np.where(keep, eff, np.nan))))
    fig = go.Figure()
    fig.add_trace(
        _map_contour(
            m,
            _grid_z(eff, keep, 2),
            levels=_levels(zmin, zmax),
            label_format=".0f",
            line_colour="rgba(255,255,255,0.75)",
            hover_value="efficiency %{z:.2f} %",
            extra_name=connection,
            name=f"{connection} efficiency",
            colorscale="Cividis",
            zmin=zmin,
            zmax=zmax,
            connectgaps=False,
            colorbar=dict(title=dict(text="efficiency [%]", side="right"), ticksuffix=" %"),
        )
    )
    if window is not None and window.points:
        rows = np.flatnonzero(window.mask.any(axis=1))
        cols = np.flatnonzero(window.mask.any(axis=0))
        r0, r1 = max(rows.min() - 2, 0), min(rows.max() + 3, eff.shape[0])
        c0, c1 = max(cols.min() - 2, 0), min(cols.max() + 3, eff.shape[1])
        fig.add_trace(
            go.Contour(
                x=m.x_eV[c0:c1],
                y=m.y_eV[r0:r1],
                z=_grid_z(eff[r0:r1, c0:c1], keep[r0:r1, c0:c1], 2),
                contours=dict(type="constraint", operation=">=", value=window.level_pct),
                line=dict(color=nc.WINDOW_OUTLINE.hex, width=2.2, dash="dash"),
                fillcolor="rgba(0,0,0,0)",
                name=f"within {window.within_pct:g} % of optimum",
                showlegend=True,
                showscale=False,
                hoverinfo="skip",
            )
        )
    if show_ridge:
        r = m.ridge(connection)
        fig.add_trace(
            go.Scatter(
                x=r["x_eV"],
                y=r["best_y_eV"],
                mode="lines",
                name="best-partner ridge",
                line=dict(color=RIDGE, width=2.2),
                customdata=np.round(r["efficiency_pct"].to_numpy(), 2),
                hovertemplate=(
                    f"{m.axis_label(0)} %{{x:.3f}} eV<br>best {m.axis_label(1)} "
                    "%{y:.3f} eV<br>efficiency %{customdata:.2f} %<extra>ridge</extra>"
                ),
            )
        )
    x0, x1, y0, y1 = m.x_eV[0], m.x_eV[-1], m.y_eV[0], m.y_eV[-1]
    for k, mat in enumerate(materials):
        colour = MATERIAL_COLOURS[k % len(MATERIAL_COLOURS)]
        on_x = mat.role in ("top", "any") and m.axes[0] == 1 or mat.role == "any"
        on_y = mat.role in ("bottom", "any") and m.axes[1] == m.n_junctions or mat.role == "any"
        name = esc(mat.name)
        first = True
        for axis, use in (("x", on_x), ("y", on_y)):
            if not use:
                continue
            if mat.gap_range_eV is not None:
                a, b = mat.gap_range_eV
                xs, ys = (
                    ([a, b, b, a, a], [y0, y0, y1, y1, y0])
                    if axis == "x"
                    else ([x0, x1, x1, x0, x0], [a, a, b, b, a])
                )
                tr = go.Scatter(
                    x=xs,
                    y=ys,
                    mode="lines",
                    fill="toself",
                    name=name,
                    line=dict(color=colour, width=1),
                    opacity=0.35,
                    legendgroup=f"mat{k}",
                    showlegend=first,
                    hovertemplate=f"{name}: {a:.2f}-{b:.2f} eV (tunable)<extra>material</extra>",
                )
            else:
                g = mat.gap_eV
                xs, ys = ([g, g], [y0, y1]) if axis == "x" else ([x0, x1], [g, g])
                tr = go.Scatter(
                    x=xs,
                    y=ys,
                    mode="lines",
                    name=name,
                    line=dict(color=colour, width=2, dash="dot"),
                    legendgroup=f"mat{k}",
                    showlegend=first,
                    hovertemplate=f"{name}: {g:.3f} eV<extra>material</extra>",
                )
            fig.add_trace(tr)
            first = False
    pts = [(k, s) for k, s in enumerate(stacks) if len(s.gaps_eV) == m.n_junctions]
    if pts:
        eff_s = stack_efficiency or {}
        fig.add_trace(
            go.Scatter(
                x=[s.gaps_eV[m.axes[0] - 1] for _, s in pts],
                y=[s.gaps_eV[m.axes[1] - 1] for _, s in pts],
                mode="markers+text",
                name="stacks of interest (S1, S2, ...)",
                text=[f"S{k + 1}" for k, _ in pts],
                textposition="top center",
                textfont=dict(color="#ffffff", size=12),
                marker=dict(
                    symbol="diamond", size=11, color=nc.WHITE.hex, line=dict(color=INK, width=1.5)
                ),
                customdata=[[esc(s.name), eff_s.get(s.name, float("nan"))] for _, s in pts],
                hovertemplate=(
                    "%{text}: %{customdata[0]}<br>%{x:.3f} / %{y:.3f} eV<br>efficiency "
                    "%{customdata[1]:.2f} %<extra>stack</extra>"
                ),
            )
        )
    opt = m.optimum(connection)
    fig.add_trace(
        go.Scatter(
            x=[opt["x_eV"]],
            y=[opt["y_eV"]],
            mode="markers",
            name="optimum",
            marker=dict(
                symbol="star", size=16, color=nc.OPTIMUM.hex, line=dict(color="white", width=1.5)
            ),
            hovertemplate=(
                f"optimum<br>%{{x:.3f}} / %{{y:.3f}} eV<br>efficiency "
                f"{opt['efficiency_pct']:.2f} %<extra>{connection}</extra>"
            ),
        )
    )
    fig.add_annotation(
        x=opt["x_eV"],
        y=opt["y_eV"],
        # up and to the left: into the blank half of a two-junction map, away from
        # the axis labels below and the colour bar on the right
        ax=-75,
        ay=-65,
        text=f"<b>optimum {opt['efficiency_pct']:.2f} %</b><br>"
        f"{opt['x_eV']:.2f} / {opt['y_eV']:.2f} eV",
        bgcolor="rgba(255,255,255,0.9)",
        bordercolor=INK,
        font=dict(size=12),
        arrowcolor=INK,
        arrowwidth=1.5,
    )
    _base_layout(fig, title or f"{connection} connection", height=640)
    _square_map_axes(fig, m, [x0, x1], [y0, y1], scaleratio=1)
    fig.update_layout(legend=dict(orientation="h", y=-0.14, x=0))
    return fig


def difference_figure(m: MapResult, a: str = "independent", b: str = "series") -> go.Figure:
    """Map of efficiency of connection ``a`` minus ``b`` [absolute %]."""
    d = m.difference(a, b)
    keep = m.descending
    dk = np.where(keep, d, np.nan)
    lo, hi = float(np.nanmin(dk)), float(np.nanmax(dk))
    fig = go.Figure(
        _map_contour(
            m,
            _grid_z(d, keep, 2),
            levels=_levels(max(lo, 0.0), hi),
            label_format=".0f",
            line_colour="rgba(255,255,255,0.7)",
            hover_value=f"{a} − {b}: %{{z:.2f}} % (absolute)",
            colorscale="Viridis",
            zmin=lo,
            zmax=hi,
            colorbar=dict(title=dict(text=f"{a} − {b} [% abs.]", side="right")),
        )
    )
    _base_layout(fig, f"{a} minus {b} connection", height=600)
    _square_map_axes(fig, m, [m.x_eV[0], m.x_eV[-1]], [m.y_eV[0], m.y_eV[-1]])
    return fig


def mismatch_figure(
    m: MapResult, connection: str = "series", matched: tuple | None = None
) -> go.Figure:
    """Draw the photocurrent mismatch ``J_min / J_max`` of the stack, with the
    current-matched line ``matched = (x_eV, y_eV)`` of the two axis junctions (see
    :meth:`gapmatch.maps.MapResult.matched_current_line`; computed here when omitted)."""
    r = m.mismatch_ratio(connection)
    keep = m.descending
    fig = go.Figure(
        _map_contour(
            m,
            _grid_z(r, keep, 3),
            levels=(0.1, 0.9, 0.1),
            label_format=".1f",
            line_colour="rgba(255,255,255,0.7)",
            hover_value="J<sub>ph,min</sub>/J<sub>ph,max</sub> %{z:.3f}",
            colorscale="Cividis",
            zmin=0,
            zmax=1,
            colorbar=dict(
                title=dict(text="J<sub>ph,min</sub> / J<sub>ph,max</sub> [-]", side="right")
            ),
        )
    )
    x, y = m.matched_current_line(connection) if matched is None else matched
    fig.add_trace(
        go.Scatter(
            x=x,
            y=np.round(y, 4),
            mode="lines",
            name="photocurrents matched",
            line=dict(color=nc.MATCHED_LINE.hex, width=2.5),
            hovertemplate="matched at %{x:.3f} / %{y:.3f} eV<extra></extra>",
        )
    )
    _base_layout(fig, f"photocurrent mismatch, {connection} connection", height=600)
    _square_map_axes(fig, m, [m.x_eV[0], m.x_eV[-1]], [m.y_eV[0], m.y_eV[-1]])
    fig.update_layout(legend=dict(orientation="h", y=-0.14, x=0))
    return fig


def cut_figure(cut: CutResult, materials: Sequence = (), title: str = "") -> go.Figure:
    """Efficiency versus one junction's gap (the others fixed)."""
    fig = go.Figure()
    for k_c, (c, e) in enumerate(cut.efficiency.items()):
        g, best = cut.optimum(c)
        fig.add_trace(
            go.Scatter(
                x=cut.values_eV,
                y=np.round(100 * e, 3),
                mode="lines",
                name=c,
                line=dict(color=_CONN_COLOUR.get(c, INK), width=2.5),
                hovertemplate=f"E<sub>g,{cut.junction}</sub> %{{x:.3f}} eV<br>efficiency "
                f"%{{y:.2f}} %<extra>{c}</extra>",
            )
        )
        fig.add_trace(
            go.Scatter(
                x=[g],
                y=[best],
                mode="markers+text",
                showlegend=False,
                text=[f"{best:.2f} % at {g:.2f} eV"],
                textposition="bottom right" if k_c % 2 else "top left",
                marker=dict(symbol="star", size=13, color=_CONN_COLOUR.get(c, INK)),
                hovertemplate=f"best {c}: %{{y:.2f}} % at %{{x:.3f}} eV<extra></extra>",
            )
        )
    for k, mat in enumerate(materials):
        colour = MATERIAL_COLOURS[k % len(MATERIAL_COLOURS)]
        if mat.role not in ("top", "any"):
            continue
        name = esc(mat.name)
        if mat.gap_range_eV is not None:
            fig.add_vrect(
                x0=mat.gap_range_eV[0],
                x1=mat.gap_range_eV[1],
                fillcolor=colour,
                opacity=0.18,
                line_width=0,
            )
            xs = [np.mean(mat.gap_range_eV)]
        else:
            fig.add_vline(x=mat.gap_eV, line=dict(color=colour, dash="dot", width=2))
            xs = [mat.gap_eV]
        fig.add_trace(
            go.Scatter(
                x=xs,
                y=[0],
                mode="markers",
                name=name,
                marker=dict(color=colour, size=9, symbol="triangle-up"),
                hovertemplate=f"{name}: {esc(mat.describe_gap())}<extra>material</extra>",
            )
        )
    _base_layout(fig, title or "one-dimensional cut", height=460)
    fixed = ", ".join(
        f"E<sub>g,{k + 1}</sub> = {g:.2f} eV"
        for k, g in enumerate(cut.base_gaps_eV)
        if k + 1 != cut.junction
    )
    fig.update_xaxes(title=f"E<sub>g,{cut.junction}</sub> [eV] ({fixed})", gridcolor="#e2dccf")
    top = max(100 * float(np.max(e)) for e in cut.efficiency.values())
    fig.update_yaxes(
        title="efficiency [%]", range=[0, 1.15 * top], gridcolor="#e2dccf", ticksuffix=" %"
    )
    return fig


def add_cut_windows(fig: go.Figure, cut: CutResult, windows: dict, within_pct: float) -> None:
    """Draw each connection's tolerance window along the cut: a bar from the lowest to
    the highest top gap within ``within_pct`` of the best, at that efficiency level.

    Parameters
    ----------
    windows : dict
        Connection -> (low, high) gap [eV] (see
        :func:`gapmatch.report.summary_box.cut_window`).
    """
    for c, (lo, hi) in windows.items():
        level = cut.optimum(c)[1] - within_pct
        fig.add_trace(
            go.Scatter(
                x=[lo, hi],
                y=[level, level],
                mode="lines+markers",
                name=f"{c}: within {within_pct:g} % of its best",
                line=dict(color=_CONN_COLOUR.get(c, INK), width=6),
                marker=dict(symbol="line-ns", size=14, line=dict(width=2)),
                opacity=0.55,
                hovertemplate=f"{c}: top gaps {lo:.3f}–{hi:.3f} eV within {within_pct:g} % "
                "(absolute) of the best<extra></extra>",
            )
        )


_E_TICKS_EV = [4.0, 3.0, 2.5, 2.0, 1.75, 1.5, 1.25, 1.0, 0.9, 0.8, 0.7, 0.6, 0.5]


def spectrum_figure(spectrum, gaps_eV: Sequence[float], name: str = "") -> go.Figure:
    """Spectral photon flux versus wavelength with each junction's absorbed band shaded
    and the gaps marked; a second axis on top gives photon energy [eV].

    Parameters
    ----------
    spectrum : gapmatch.Spectrum
        Incident spectrum.
    gaps_eV : sequence of float
        The stack's gaps, top first [eV] (step absorptance assumed).
    name : str
        Stack name (escaped here).
    """
    gaps = np.asarray(gaps_eV, dtype=float)
    wl_edges = HC_EV_NM / gaps
    wl = spectrum.plot_grid_nm()
    hi_nm = float(min(max(wl_edges.max() * 1.12, 1300.0), wl.max()))
    wl = wl[(wl >= wl.min()) & (wl <= hi_nm)]
    # photon flux per nm: E_lambda / (h c / lambda), in 1e18 m^-2 s^-1 nm^-1
    flux = spectrum.spectral_irradiance_nm(wl) * (wl * 1e-9) / (H * C) / 1e18
    fig = go.Figure()
    fig.add_trace(
        go.Scatter(
            x=wl,
            y=np.round(flux, 5),
            mode="lines",
            name="incident",
            line=dict(color=INK, width=1.2),
            hovertemplate="%{x:.1f} nm<br>%{y:.3f} × 10<sup>18</sup> "
            "photons m<sup>-2</sup> s<sup>-1</sup> nm<sup>-1</sup>"
            "<extra></extra>",
        )
    )
    lo_edge = float(wl.min())
    for k in range(gaps.size):
        upper = wl_edges[k]
        lower = max([lo_edge] + [wl_edges[j] for j in range(k) if wl_edges[j] < upper])
        if upper <= lower:
            continue  # a junction below a smaller gap receives no light
        sel = (wl >= lower) & (wl <= upper)
        xs = np.concatenate([[lower], wl[sel], [upper]])
        ys = np.interp(xs, wl, flux)
        fig.add_trace(
            go.Scatter(
                x=xs,
                y=np.round(ys, 5),
                mode="lines",
                fill="tozeroy",
                line=dict(width=0),
                fillcolor=_JUNCTION_FILL[k % len(_JUNCTION_FILL)],
                name=f"junction {k + 1} ({gaps[k]:.2f} eV, {lower:.0f}-{upper:.0f} nm)",
                hovertemplate=f"junction {k + 1} absorbs<br>%{{x:.1f}} nm<extra></extra>",
            )
        )
        fig.add_vline(
            x=upper,
            line=dict(color=INK, width=1, dash="dash"),
            annotation=dict(
                text=f"E<sub>g,{k + 1}</sub> {gaps[k]:.2f} eV", textangle=-90, font=dict(size=11)
            ),
            annotation_position="top left",
        )
    ticks = [e for e in _E_TICKS_EV if lo_edge <= HC_EV_NM / e <= hi_nm]
    fig.add_trace(
        go.Scatter(
            x=[lo_edge, hi_nm], y=[None, None], xaxis="x2", showlegend=False, hoverinfo="skip"
        )
    )
    title = f"spectrum and absorbed bands: {esc(name)}" if name else "spectrum"
    _base_layout(fig, title, height=470)
    fig.update_layout(
        margin=dict(t=130),
        xaxis=dict(title="wavelength [nm]", range=[lo_edge, hi_nm], gridcolor="#e2dccf"),
        xaxis2=dict(
            title=dict(text="photon energy [eV]", standoff=4),
            overlaying="x",
            side="top",
            range=[lo_edge, hi_nm],
            tickmode="array",
            tickvals=[HC_EV_NM / e for e in ticks],
            ticktext=[f"{e:g}" for e in ticks],
            showgrid=False,
        ),
        yaxis=dict(
            title="photon flux [10<sup>18</sup> m<sup>-2</sup> s<sup>-1</sup> nm<sup>-1</sup>]",
            rangemode="tozero",
            gridcolor="#e2dccf",
        ),
        legend=dict(orientation="h", y=-0.2, x=0),
    )
    return fig


def jv_figure(panels: Sequence[dict], name: str = "") -> go.Figure:
    """J-V curves of one stack, one panel per connection.

    Parameters
    ----------
    panels : sequence of dict
        Each with ``connection``, ``curves`` (the output of :func:`gapmatch.jv_curve`)
        and ``stack`` (the :meth:`gapmatch.BatchResult.stack` dictionary).
    name : str
        Stack name (escaped here).
    """
    # concentrated light: currents in A cm^-2 once they pass 1 A cm^-2
    big = max(jn["jph_mA_cm2"] for p in panels for jn in p["stack"]["junctions"]) >= 1e3
    js, ju = (1e-3, "A cm<sup>-2</sup>") if big else (1.0, "mA cm<sup>-2</sup>")
    fig = make_subplots(
        rows=1,
        cols=len(panels),
        subplot_titles=[_panel_title(p) for p in panels],
        horizontal_spacing=0.09,
    )
    for col, p in enumerate(panels, start=1):
        d, curves, conn = p["stack"], p["curves"], p["connection"]
        ratio = d.get("cells_per_string")
        for k, (v, j) in enumerate(curves["junctions"]):
            colour = PALETTE[k % len(PALETTE)]
            jn = d["junctions"][k]
            # voltage matching: each junction's cells form a string of n cells whose
            # voltages add; the strings work in parallel at one voltage
            n = ratio[k] if ratio else 1
            label = (
                f"string of {n} × junction {k + 1} ({jn['gap_eV']:.2f} eV)"
                if ratio
                else f"junction {k + 1} ({jn['gap_eV']:.2f} eV)"
            )
            fig.add_trace(
                go.Scatter(
                    x=np.round(n * np.asarray(v), 5),
                    y=np.round(js * np.asarray(j), 4),
                    mode="lines",
                    name=label,
                    legendgroup=f"j{k}s" if ratio else f"j{k}",
                    showlegend=col == 1 or bool(ratio),
                    line=dict(color=colour, width=2, dash="dash" if ratio else "solid"),
                    hovertemplate=f"{label}<br>%{{x:.3f}} V<br>"
                    "%{y:.2f} " + ju + "<extra></extra>",
                ),
                row=1,
                col=col,
            )
            fig.add_trace(
                go.Scatter(
                    x=[n * jn["v_op_V"]],
                    y=[js * jn["j_op_mA_cm2"]],
                    mode="markers",
                    showlegend=False,
                    legendgroup=f"j{k}",
                    marker=dict(
                        color=colour, size=9, symbol="circle", line=dict(color=INK, width=1)
                    ),
                    hovertemplate=f"junction {k + 1} operating point<br>%{{x:.3f}} V, "
                    "%{y:.2f} " + ju + "<extra></extra>",
                ),
                row=1,
                col=col,
            )
        if curves.get("stack") is not None:
            v, j = curves["stack"]
            ok = np.isfinite(v)
            fig.add_trace(
                go.Scatter(
                    x=np.round(v[ok], 5),
                    y=np.round(js * j[ok], 4),
                    mode="lines",
                    name="whole stack",
                    legendgroup="stack",
                    showlegend=True,
                    line=dict(color=INK, width=2.5),
                    hovertemplate="stack<br>%{x:.3f} V<br>%{y:.2f} " + ju + "<extra></extra>",
                ),
                row=1,
                col=col,
            )
        if ratio and d.get("vmpp_V") is not None:
            # the strings share one voltage; each string's operating point is circled
            fig.add_vline(
                x=d["vmpp_V"],
                line=dict(color=INK, width=1.2, dash="dot"),
                annotation=dict(
                    text=f"common string voltage {d['vmpp_V']:.2f} V<br>"
                    f"{d['efficiency_pct']:.2f} %",
                    font=dict(size=11),
                ),
                annotation_position="bottom left",
                row=1,
                col=col,
            )
        elif d.get("vmpp_V") is not None:
            fig.add_trace(
                go.Scatter(
                    x=[d["vmpp_V"]],
                    y=[js * d["jmpp_mA_cm2"]],
                    mode="markers+text",
                    name="maximum power point",
                    legendgroup="mpp",
                    showlegend=True,
                    text=[f"{d['efficiency_pct']:.2f} %"],
                    textposition="top left",
                    marker=dict(
                        symbol="star", size=14, color="#D55E00", line=dict(color=INK, width=1)
                    ),
                    hovertemplate="maximum power point<br>%{x:.3f} V, %{y:.2f} " + ju + ""
                    f"<br>{d['pmpp_W_m2']:.1f} W m<sup>-2</sup><extra>{conn}</extra>",
                ),
                row=1,
                col=col,
            )
        fig.update_xaxes(
            title_text="voltage [V]", rangemode="tozero", gridcolor="#e2dccf", row=1, col=col
        )
        fig.update_yaxes(
            title_text=f"current density [{ju}]",
            rangemode="tozero",
            gridcolor="#e2dccf",
            row=1,
            col=col,
        )
    _base_layout(fig, f"J–V curves: {esc(name)}", height=480)
    fig.update_layout(legend=dict(orientation="h", y=-0.22, x=0), margin=dict(b=110))
    return fig


def ratio_words(cells_per_string) -> str:
    """``"3 : 5 cells per string (top first)"`` for a voltage-matched result."""
    return " : ".join(str(int(n)) for n in cells_per_string) + " cells per string (top first)"


def _panel_title(p: dict) -> str:
    d = p["stack"]
    t = f"{p['connection']}: {d['efficiency_pct']:.2f} %"
    if d.get("cells_per_string"):
        t += f", {ratio_words(d['cells_per_string'])}"
    return t

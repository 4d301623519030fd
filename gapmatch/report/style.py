"""One visual style for every figure of the report, and what every figure carries.

:func:`apply_style` is the one template function: fonts, colours, background, grid,
legend, margins. :func:`finish_figure` is applied by the page builder to every figure
of every section (also those drawn by other packages): it applies the style, adds the
caution to the title when the title has none (a downloaded image keeps its context),
drops duplicate legend entries, and gives the plotly download button a file name.
"""

from __future__ import annotations

import re

import plotly.graph_objects as go
import plotly.io as pio

from . import colours as nc

__all__ = [
    "FIGURE_CAUTION",
    "THICKNESS_CAUTION",
    "REPORT_CAUTION",
    "FONT",
    "TEMPLATE",
    "apply_style",
    "finish_figure",
    "title_text",
    "slug",
]

#: short caution every figure title of the report carries
FIGURE_CAUTION = "detailed-balance limit, not a rating"
#: caution of the thickness figure (a model with finite absorbers, not an ideal ceiling)
THICKNESS_CAUTION = "model projection with finite absorbers, not an ideal ceiling or a rating"
#: caution of the report as a whole (summary.json, report --help)
REPORT_CAUTION = (
    "Theoretical detailed-balance limits of idealised cells under the stated assumptions, "
    "not ratings, forecasts or guarantees of any device; performance claims need accredited "
    "measurement (IEC 60904 family; IEC 61853 for energy) and design decisions licensed "
    "engineering practice."
)

FONT = dict(
    family="Source Sans 3, Segoe UI, Helvetica, Arial, sans-serif", size=13, color=nc.INK.hex
)
_GRID = "#e2dccf"

#: the report's plotly template (built on plotly_white)
TEMPLATE = go.layout.Template(pio.templates["plotly_white"])
TEMPLATE.layout.update(
    font=FONT,
    colorway=[c.hex for c in (nc.BLUE, nc.VERMILION, nc.BLUISH_GREEN, nc.ORANGE, nc.SKY_BLUE)],
    paper_bgcolor="#ffffff",
    plot_bgcolor="#ffffff",
    xaxis=dict(gridcolor=_GRID, linecolor="#c9c2b4", zerolinecolor="#c9c2b4", automargin=True),
    yaxis=dict(gridcolor=_GRID, linecolor="#c9c2b4", zerolinecolor="#c9c2b4", automargin=True),
    legend=dict(bgcolor="rgba(255,255,255,0.85)", bordercolor="#c9c2b4", borderwidth=1),
    hoverlabel=dict(font=dict(family=FONT["family"])),
)

_CAUTION_WORDS = re.compile(r"\bnot\b[^<]*\bratings?\b", re.I)


def title_text(fig: go.Figure) -> str:
    """The figure's title text ('' if none)."""
    t = fig.layout.title
    return (t.text or "") if t is not None else ""


def apply_style(fig: go.Figure, title: str | None = None, height: int | None = None) -> go.Figure:
    """Apply the report's one style (idempotent).

    Parameters
    ----------
    fig : plotly.graph_objects.Figure
        Changed in place.
    title : str, optional
        New title text (safe HTML).
    height : int, optional
        Height [px].
    """
    fig.update_layout(
        template=TEMPLATE,
        font=FONT,
        paper_bgcolor="#ffffff",
        title=dict(x=0.0, xanchor="left", font=dict(size=16)),
        legend=dict(bgcolor="rgba(255,255,255,0.85)", bordercolor="#c9c2b4", borderwidth=1),
        hoverlabel=dict(font=dict(family=FONT["family"])),
    )
    if title is not None:
        fig.update_layout(title_text=title)
    if height is not None:
        fig.update_layout(height=height)
    if fig.layout.margin.l is None:
        fig.update_layout(margin=dict(l=70, r=30, t=90, b=60))
    return fig


def _with_caution(title: str, caution: str = FIGURE_CAUTION) -> str:
    if _CAUTION_WORDS.search(title):
        return title
    sub = f"<span style='font-size:12px;color:#5b6770'>{caution}</span>"
    return f"{title}<br>{sub}" if title else sub


def slug(text: str) -> str:
    """A file-name slug of a title (tags and entities dropped)."""
    t = re.sub(r"<br>.*", "", text, flags=re.S)
    t = re.sub(r"<[^>]+>|&[a-z#0-9]+;", "", t).lower()
    t = re.sub(r"[^a-z0-9]+", "-", t).strip("-")
    return t[:60].rstrip("-") or "figure"


def finish_figure(fig: go.Figure, *, filename: str) -> dict:
    """Make a figure ready for the page; returns its plotly ``config``.

    Applies :func:`apply_style`, adds :data:`FIGURE_CAUTION` to a title without a
    caution, keeps the title clear of the plot (top margin), hides repeated legend
    entries (same name and legend group) and names the downloaded image ``filename``.
    """
    apply_style(fig)
    fig.update_layout(title_text=_with_caution(title_text(fig)))
    if (fig.layout.margin.t or 0) < 90:
        fig.update_layout(margin=dict(t=90))
    seen: set[tuple[str, str]] = set()
    for tr in fig.data:
        if not hasattr(tr, "showlegend") or tr.showlegend is False or not tr.name:
            continue
        key = (tr.name, getattr(tr, "legendgroup", None) or "")
        if key in seen:
            tr.showlegend = False
        seen.add(key)
    return {
        "responsive": True,
        "displaylogo": False,
        "toImageButtonOptions": {"format": "svg", "filename": filename},
    }

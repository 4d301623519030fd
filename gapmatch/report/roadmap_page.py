"""A self-contained HTML page of a roadmap result (``gapmatch roadmap --report``).

The page holds the fragments of :func:`gapmatch.roadmap.sections.report_sections`
(ranking per milestone, candidates over the milestones with P10-P90 bands, probability
of being best, headroom, sensitivity, sources) in the report's visual style, with
plotly.js inlined once, so it opens offline. It is written atomically.
"""

from __future__ import annotations

from pathlib import Path

from plotly.offline import get_plotlyjs

from ..io.atomic import write_atomic
from .builder import _CSS
from .html import esc

__all__ = ["roadmap_page", "write_roadmap_page"]


def roadmap_page(result) -> str:
    """The HTML page of a roadmap result.

    Parameters
    ----------
    result : gapmatch.roadmap.RoadmapResult
        A finished roadmap run.

    Returns
    -------
    str
        The whole page (UTF-8 text).
    """
    from ..roadmap.result import CAUTION
    from ..roadmap.sections import report_sections

    st = result.study
    parts, toc = [], []
    for k, (title, body) in enumerate(report_sections(result), start=1):
        sid = f"sec-{k}"
        toc.append(f'<a href="#{sid}">{k}. {esc(title)}</a>')
        parts.append(
            f'<section class="gm-section" id="{sid}"><h2><span class="gm-num">{k}</span>'
            f"{esc(title)}</h2>{body}</section>"
        )
    q = result.evaluator.describe()
    what = esc(q.get("quantity", result.evaluator.label))
    meta = esc(st.organisation) if st.organisation else ""
    return (
        '<!DOCTYPE html>\n<html lang="en"><head><meta charset="utf-8">'
        '<meta name="viewport" content="width=device-width, initial-scale=1">'
        f"<title>{esc(st.title)}</title><style>{_CSS}</style>"
        f"<script>{get_plotlyjs()}</script></head><body>"
        '<header class="gm-head"><div class="gm-brand">gapmatch · material roadmap</div>'
        f'<h1>{esc(st.title)}</h1><div class="gm-meta">{meta}</div></header>'
        f'<nav class="gm-toc" aria-label="contents">{" ".join(toc)}</nav>'
        f'<main><p class="gm-lead"><strong>Scenario assumptions, not forecasts; '
        f"theoretical limits, not ratings.</strong> Ranked by {what} over "
        f"{st.draws} draws (seed {st.seed}).</p>{''.join(parts)}</main>"
        f'<footer class="gm-foot"><p>{esc(CAUTION)}</p>'
        f"<div>study file: <code>{esc(st.origin)}</code></div></footer></body></html>\n"
    )


def write_roadmap_page(result, path: str | Path) -> Path:
    """Write :func:`roadmap_page` to ``path`` atomically and return the path."""
    return write_atomic(Path(path), roadmap_page(result))

"""HTML fragments of a roadmap result, for a report page.

:func:`report_sections` returns ``(title, html)`` pairs -- ranking tables per milestone,
the efficiency-against-year figure, probabilities of being best, headroom, one
sensitivity chart per candidate, and the sources with their status -- each a
self-contained fragment (plotly figures without the plotly.js bundle, which the page
includes once). Every value taken from library entries marked "from memory" or "common
practice, no source" is flagged. The report package decides where they go.
"""

from __future__ import annotations

import html

from . import figures
from .result import CAUTION, RoadmapResult

__all__ = ["report_sections", "ranking_table_html", "sources_table_html"]

_FLAGGED = ("from memory", "common practice, no source")
#: column-name unit suffix -> unit as printed in a table header
_UNIT_SHOWN = {"pct": "%", "kWh_m2": "kWh m^-2 yr^-1"}


def _e(s) -> str:
    return html.escape(str(s), quote=True)


def _fig(fig) -> str:
    return fig.to_html(full_html=False, include_plotlyjs=False, config={"displaylogo": False})


def ranking_table_html(result: RoadmapResult, year: int) -> str:
    """The ranking of one milestone as an HTML table (values flagged with a dagger when
    they use unchecked library values)."""
    u = result.unit
    shown = _e(_UNIT_SHOWN.get(u, u))
    f = result.ranking_frame()
    f = f[f["year"] == year]
    head = (
        "<tr><th>#</th><th>candidate</th><th>connection</th><th>gaps at 300 K [eV]</th>"
        f"<th>P10 [{shown}]</th><th>P50 [{shown}]</th><th>P90 [{shown}]</th>"
        "<th>P(best)</th><th>moves it most</th><th>marks</th></tr>"
    )
    rows = []
    for _, r in f.iterrows():
        flag = " &dagger;" if any(m in r["marks"] for m in _FLAGGED) else ""
        rows.append(
            f"<tr><td>{r['rank']}</td><td>{_e(r['candidate'])}{flag}</td>"
            f"<td>{_e(r['connection'])}</td><td>{_e(r['gaps_eV'])}</td>"
            f"<td>{r[f'p10_{u}']:.2f}</td><td>{r[f'p50_{u}']:.2f}</td>"
            f"<td>{r[f'p90_{u}']:.2f}</td><td>{r['probability_best']:.3f}</td>"
            f"<td>{_e(r['top_input'])}</td><td>{_e(r['marks'])}</td></tr>"
        )
    return (
        f'<table class="gm-table"><caption>{_e(year)}: {result.study.draws} draws</caption>'
        f"<thead>{head}</thead><tbody>{''.join(rows)}</tbody></table>"
    )


def sources_table_html(result: RoadmapResult) -> str:
    """Every source behind the numbers used, with its status and the fields using it."""
    rows = []
    for s in result.sources():
        flag = " &dagger;" if s["status"] in _FLAGGED else ""
        used = ", ".join(s["used_by"][:12]) + (" ..." if len(s["used_by"]) > 12 else "")
        rows.append(
            f"<tr><td>{_e(s['key'])}</td><td>{_e(s['status'])}{flag}</td>"
            f"<td>{_e(s['citation'])}</td><td>{_e(s['where'])}</td><td>{_e(used)}</td></tr>"
        )
    return (
        '<table class="gm-table"><thead><tr><th>source</th><th>status</th><th>citation</th>'
        "<th>what</th><th>used by</th></tr></thead>"
        f"<tbody>{''.join(rows)}</tbody></table>"
    )


def report_sections(result: RoadmapResult) -> list[tuple[str, str]]:
    """``(title, html)`` fragments of a roadmap result, in reading order."""
    st = result.study
    intro = (
        f"<p>{_e(st.description)}</p>" if st.description else ""
    ) + f'<div class="gm-caution" role="note"><p>{_e(CAUTION)}</p></div>'
    out = [("Roadmap: " + st.title, intro)]
    tables = "".join(ranking_table_html(result, y) for y in st.milestones)
    out.append(
        (
            "Ranking per milestone",
            tables + "<p>&dagger; uses library values marked 'from memory' or 'common "
            "practice, no source'.</p>",
        )
    )
    out.append(("Candidates over the milestones", _fig(figures.trajectory_figure(result))))
    out.append(("Probability of being best", _fig(figures.probability_figure(result))))
    out.append(("Headroom to the radiative limit", _fig(figures.headroom_figure(result))))
    sens = "".join(
        _fig(figures.sensitivity_figure(result, c.name))
        for c in st.candidates
        if any(o.sensitivity for o in result.outcomes if o.candidate.name == c.name)
    )
    out.append(("Sensitivity", sens or "<p>No uncertain inputs.</p>"))
    out.append(("Sources of the numbers", sources_table_html(result)))
    return out

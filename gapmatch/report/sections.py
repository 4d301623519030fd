"""The built-in report sections (maps, tolerance, difference, mismatch, materials,
stacks, cut, spectrum, J-V curves, assumptions).

Each is a builder registered with :func:`gapmatch.report.registry.register_section`; it
reads shared results from the :class:`gapmatch.report.context.ReportContext`, returns
escaped HTML blocks and plotly figures, and the data files (CSV) it shows. See
``gapmatch/report/physics_sections.py`` (losses, thickness) and
``gapmatch/report/search_section.py`` for sections kept in their own modules.
"""

from __future__ import annotations

from collections.abc import Sequence

import numpy as np
import pandas as pd
import plotly.graph_objects as go

from ..jv import jv_curve
from ..maps import MapResult
from ..results import Conditions
from . import colours as nc
from . import figures as figs
from .context import ReportContext
from .html import esc, fmt, para, table
from .registry import (
    DEFAULT_SECTIONS,
    SECTIONS,
    Section,
    SectionOutput,
    default_sections,
    register_section,
)

__all__ = [
    "SECTIONS",
    "DEFAULT_SECTIONS",
    "Section",
    "SectionOutput",
    "ReportContext",
    "register_section",
    "default_sections",
    "esc",
    "para",
    "table",
    "figure_count",
]


def _stack_eff(ctx: ReportContext, conn: str) -> dict[str, float]:
    return {
        s.name: 100 * float(ctx.stack_results[(s.name, conn)].efficiency[0])
        for s in ctx.study.stacks
        if (s.name, conn) in ctx.stack_results
    }


VM = "voltage-matched"


def _vm_ratio(ctx: ReportContext, gaps_eV) -> list[int]:
    """Cells per string (top first) of a voltage-matched stack at the study's conditions."""
    from ..api import evaluate

    r = evaluate(list(gaps_eV), VM, ctx.illumination, **ctx.cell_options())
    return list(r.stack(0)["cells_per_string"])


def _drop_empty_columns(header, rows, numeric, optional) -> str:
    """A table without the ``optional`` columns that are empty ('' or –) in every row."""
    keep = [
        k
        for k, h in enumerate(header)
        if h not in optional or any(str(r[k]) not in ("", "–") for r in rows)
    ]
    return table(
        [header[k] for k in keep],
        [[r[k] for k in keep] for r in rows],
        numeric=[numeric[k] for k in keep],
    )


def power_unit(largest_W_m2: float) -> tuple[str, float]:
    """Display unit and factor from W m^-2 for power densities up to ``largest_W_m2``:
    kW m^-2 from 10 kW m^-2 (concentrated light), else W m^-2."""
    return ("kW m⁻²", 1e-3) if largest_W_m2 >= 1e4 else ("W m⁻²", 1.0)


def current_unit(largest_mA_cm2: float) -> tuple[str, float]:  # noqa: N803
    """Display unit and factor from mA cm^-2 for current densities up to
    ``largest_mA_cm2``: A cm^-2 from 1 A cm^-2, else mA cm^-2."""
    return ("A cm⁻²", 1e-3) if largest_mA_cm2 >= 1e3 else ("mA cm⁻²", 1.0)


def vm_map_note(ctx: ReportContext) -> str:
    """Why voltage-matched connection is not on the maps although the study lists it
    ('' when it is mapped or not asked for)."""
    if "voltage-matched" not in ctx.study.connections:
        return ""
    if "voltage-matched" in ctx.study.map_connections:
        return ""
    return (
        "Voltage-matched connection is in study.connections but not on these maps: it "
        "searches the cells-per-string ratio at every grid point (about a minute for "
        "201 x 201 points), so it is mapped only when map.connections lists it. The "
        "stacks of interest are evaluated voltage-matched (with their cells-per-string "
        "ratio) in the table of stacks."
    )


def _map_words(m: MapResult) -> str:
    if m.others == "none":
        return (
            "Two-junction stacks: every combination of top and bottom gap on the grid. "
            "Points whose top gap is not above the bottom gap are left blank."
        )
    others = [k + 1 for k in range(m.n_junctions) if k + 1 not in m.axes]
    which = ", ".join(f"junction {k}" for k in others)
    if m.others == "fixed":
        vals = ", ".join(f"{m.base_gaps_eV[k - 1]:.2f} eV" for k in others)
        return (
            f"{m.n_junctions}-junction stacks; the map varies junctions {m.axes[0]} and "
            f"{m.axes[1]} (1 = top). The other gaps are held FIXED: {which} at {vals}."
        )
    lo, hi = m.settings.get("free_range_eV", (0.3, 3.0))
    return (
        f"{m.n_junctions}-junction stacks; the map varies junctions {m.axes[0]} and "
        f"{m.axes[1]} (1 = top). The other gaps ({which}) are RE-OPTIMISED at every "
        f"point within {lo:.2f}-{hi:.2f} eV (coarse grid, then a batched pattern search)."
    )


# ---- built-in sections ----------------------------------------------------------------------
@register_section("map", "Efficiency maps")
def map_section(ctx: ReportContext) -> SectionOutput:
    """Map per connection: labelled contours, optimum, ridge, tolerance window,
    materials and stacks of interest."""
    m = ctx.map
    st = ctx.study
    blocks = [
        para(_map_words(m)),
        para(
            "Contours are iso-efficiency lines labelled in percent. The "
            f"{nc.OPTIMUM.word} star marks the grid optimum; the {nc.RIDGE.word} line is the "
            "best-partner ridge (for each gap on the horizontal axis, the partner gap that "
            f"maximises efficiency); the dashed {nc.WINDOW_OUTLINE.word} outline encloses every "
            f"point within {ctx.tolerance_pct:g} absolute percent of the optimum. Candidate "
            "materials appear as dotted lines (fixed gaps) or shaded bands (tunable windows); "
            f"{nc.WHITE.word} diamonds mark the stacks of interest (S1, S2, ... as in the table "
            "of stacks)."
        ),
    ]
    note = vm_map_note(ctx)
    if note:
        blocks.append(f'<p class="gm-note" role="note">{esc(note)}</p>')
    rows = []
    ratios = {c: _vm_ratio(ctx, m.optimum(c)["gaps_eV"]) for c in m.connections if c == VM}
    for c in m.connections:
        opt = m.optimum(c)
        rows.append(
            [
                c,
                " / ".join(f"{g:.3f}" for g in opt["gaps_eV"]),
                f"{opt['efficiency_pct']:.2f}",
            ]
            + ([" : ".join(map(str, ratios[c])) if c in ratios else "–"] if ratios else [])
        )
    blocks.append(
        table(
            ["connection", "optimum gaps, top first [eV]", "efficiency [%]"]
            + (["cells per string, top first"] if ratios else []),
            rows,
            caption="Grid optimum per connection",
            numeric=[False, True, True] + ([True] if ratios else []),
        )
    )
    if ratios:
        blocks.append(
            para(
                "Voltage-matched maps choose the cells-per-string ratio afresh at every "
                "point; at the optimum it is "
                + " : ".join(map(str, ratios[VM]))
                + " (strings of that many cells of each junction, top first, in parallel)."
            )
        )
    for c in m.connections:
        w = m.tolerance_window(c, ctx.tolerance_pct)
        blocks.append(
            figs.map_figure(
                m,
                c,
                window=w,
                materials=st.materials,
                stacks=st.stacks,
                stack_efficiency=_stack_eff(ctx, c),
                title=f"Efficiency map, {c} connection"
                + ("" if m.others == "none" else f" (other junctions {m.others})")
                + (f", {figs.ratio_words(ratios[c])} at the optimum" if c in ratios else ""),
            )
        )
    ridges = []
    for c in m.connections:
        r = m.ridge(c)
        r.insert(0, "connection", c)
        ridges.append(r)
    ridge = pd.concat(ridges, ignore_index=True).rename(
        columns={"x_eV": f"gap_{m.axes[0]}_eV", "best_y_eV": f"best_gap_{m.axes[1]}_eV"}
    )
    return SectionOutput(
        blocks,
        data={"map.csv": m.to_frame(), "ridge.csv": ridge},
        summary=m.summary(ctx.tolerance_pct),
    )


@register_section("tolerance", "Tolerance window")
def tolerance_section(ctx: ReportContext) -> SectionOutput:
    """The region within the tolerance of the optimum, as gap ranges."""
    m = ctx.map
    a0, a1 = m.axis_label(0), m.axis_label(1)
    rows = []
    for c in m.connections:
        w = m.tolerance_window(c, ctx.tolerance_pct)
        opt = m.optimum(c)
        rows.append(
            [
                c,
                f"{opt['efficiency_pct']:.2f}",
                f"{w.level_pct:.2f}",
                f"{w.x_range_eV[0]:.2f}–{w.x_range_eV[1]:.2f}",
                f"{w.y_range_eV[0]:.2f}–{w.y_range_eV[1]:.2f}",
                f"{w.y_range_at_opt_x_eV[0]:.2f}–{w.y_range_at_opt_x_eV[1]:.2f}",
                f"{w.x_range_at_opt_y_eV[0]:.2f}–{w.x_range_at_opt_y_eV[1]:.2f}",
                str(w.points),
            ]
        )
    blocks = [
        para(
            f"Every grid point whose efficiency is at least the optimum minus "
            f"{ctx.tolerance_pct:g} absolute percent. The overall ranges bound the whole window; "
            "the ranges at the optimum hold the other gap at its optimal value. The window is "
            "not a rectangle: not every combination inside the overall ranges qualifies."
        ),
        table(
            [
                "connection",
                "optimum [%]",
                "window edge [%]",
                f"{a0} range [eV]",
                f"{a1} range [eV]",
                f"{a1} at optimal {a0} [eV]",
                f"{a0} at optimal {a1} [eV]",
                "grid points",
            ],
            rows,
            caption=f"Within {ctx.tolerance_pct:g} % (absolute) of the optimum",
            numeric=[False] + [True] * 7,
        ),
    ]
    return SectionOutput(blocks)


@register_section("difference", "Independent minus series connection")
def difference_section(ctx: ReportContext) -> SectionOutput:
    """Independent-minus-series efficiency map."""
    m = ctx.map
    if not {"series", "independent"} <= set(m.connections):
        return SectionOutput(
            [
                para(
                    "This map needs both series and independent connection "
                    "in study.connections; it is left out."
                )
            ]
        )
    d = np.where(m.descending, m.difference(), np.nan)
    iy, ix = np.unravel_index(np.nanargmin(d), d.shape)
    return SectionOutput(
        [
            para(
                "How much efficiency independent (four-/multi-terminal) connection gains over a "
                "two-terminal series stack, in absolute percent. The gain is smallest along the "
                "current-matched band, where both connections nearly coincide; far from it the "
                "series stack is limited by its weakest photocurrent. Smallest difference on the "
                "grid "
                f"{d[iy, ix]:.2f} % at {m.x_eV[ix]:.2f} / {m.y_eV[iy]:.2f} eV."
            ),
            figs.difference_figure(m),
        ]
    )


@register_section("mismatch", "Current mismatch (series connection)")
def mismatch_section(ctx: ReportContext) -> SectionOutput:
    """Photocurrent mismatch map of the series stack."""
    m = ctx.map
    if "series" not in m.connections:
        return SectionOutput([para("Needs series connection in study.connections; left out.")])
    x, y = m.matched_current_line("series")
    return SectionOutput(
        [
            para(
                "Ratio of the smallest to the largest junction photocurrent of the series stack "
                "(1 = matched) under the study's spectrum. The "
                f"{nc.MATCHED_LINE.word} line is where the two mapped "
                "junctions generate equal photocurrent; a series stack loses the excess current of "
                "the stronger junction away from it."
            ),
            figs.mismatch_figure(m, "series", (x, y)),
        ],
        data={
            "matched_current.csv": pd.DataFrame(
                {f"gap_{m.axes[0]}_eV": x, f"matched_gap_{m.axes[1]}_eV": y}
            ).dropna()
        },
    )


@register_section("materials", "Candidate materials")
def materials_section(ctx: ReportContext) -> SectionOutput:
    """Table of candidate materials."""
    mats = ctx.study.materials
    if not mats:
        return SectionOutput([para("The study lists no materials.")])
    rows = [[mt.name, mt.describe_gap(), mt.role, mt.note] for mt in mats]
    return SectionOutput(
        [
            para(
                "Materials as given in the study file. They are drawn on the maps "
                "and the one-dimensional cut."
            ),
            table(["material", "band gap", "role", "note"], rows),
        ]
    )


@register_section("stacks", "Stacks of interest")
def stacks_section(ctx: ReportContext) -> SectionOutput:
    """Full evaluation of every stack of interest."""
    st = ctx.study
    if not st.stacks:
        return SectionOutput([para("The study lists no stacks of interest.")])
    rows, frames, summ = [], [], {}
    # concentrated light: powers in kW m^-2 and currents in A cm^-2 stay readable
    all_d = [ctx.stack_results[(s.name, c)].stack(0) for s in st.stacks for c in st.connections]
    p_unit, p_scale = power_unit(max(d["pmpp_W_m2"] for d in all_d))
    j_unit, j_scale = current_unit(max((d["jsc_mA_cm2"] or 0.0) for d in all_d))
    for k, s in enumerate(st.stacks, start=1):
        for c in st.connections:
            r = ctx.stack_results[(s.name, c)]
            d = r.stack(0)
            rows.append(
                [
                    f"S{k}",
                    s.name,
                    " / ".join(f"{g:.3f}" for g in s.gaps_eV),
                    c,
                    f"{d['efficiency_pct']:.2f}",
                    f"{d['pmpp_W_m2'] * p_scale:.1f}",
                    fmt(d["voc_V"], ".3f"),
                    fmt(None if d["jsc_mA_cm2"] is None else d["jsc_mA_cm2"] * j_scale, ".2f"),
                    f"{d['ff']:.3f}",
                    f"{d['mismatch_ratio']:.3f}",
                    " : ".join(str(n) for n in d["cells_per_string"])
                    if d.get("cells_per_string")
                    else "–",
                    s.note,
                ]
            )
            f = r.to_frame()
            f.insert(0, "stack", s.name)
            frames.append(f)
            entry = {"stack": s.name, "connection": c}
            entry.update(
                {
                    k: d[k]
                    for k in (
                        "efficiency_pct",
                        "gaps_eV",
                        "pmpp_W_m2",
                        "voc_V",
                        "jsc_mA_cm2",
                        "ff",
                        "mismatch_ratio",
                        "cells_per_string",
                    )
                    if k in d
                }
            )
            summ.setdefault("results", []).append(entry)
    blocks = [
        para(
            "Each stack of interest evaluated at its exact maximum power point. For "
            "independent connection the stack has no single pair of terminals, so "
            "V_oc and J_sc are not defined (–). Voltage-matched results state their "
            "cells-per-string ratio: strings of n cells of each junction, wired in parallel "
            "at one voltage."
        ),
        _drop_empty_columns(
            [
                "mark",
                "stack",
                "gaps, top first [eV]",
                "connection",
                "efficiency [%]",
                f"P_mpp [{p_unit}]",
                "V_oc [V]",
                f"J_sc [{j_unit}]",
                "FF [-]",
                "photocurrent ratio min/max [-]",
                "cells per string, top first",
                "note",
            ],
            rows,
            [False, False, True, False] + [True] * 7 + [False],
            optional=("cells per string, top first", "note"),
        ),
    ]
    return SectionOutput(
        blocks, data={"stacks.csv": pd.concat(frames, ignore_index=True)}, summary=summ
    )


@register_section("cut", "One-dimensional cut")
def cut_section(ctx: ReportContext) -> SectionOutput:
    """Efficiency versus top gap for the fixed bottom gap."""
    from .summary_box import cut_window

    cut = ctx.cut
    bg = ctx.study.cut["bottom_gap_eV"]
    tol = ctx.tolerance_pct
    windows = {c: cut_window(cut, c, tol) for c in cut.efficiency}
    rows = [
        [
            c,
            f"{cut.optimum(c)[0]:.3f}",
            f"{cut.optimum(c)[1]:.2f}",
            f"{windows[c][0]:.3f}–{windows[c][1]:.3f}",
        ]
        for c in cut.efficiency
    ]
    fig = figs.cut_figure(
        cut, ctx.study.materials, title=f"Efficiency versus top gap, bottom gap {bg:.2f} eV"
    )
    figs.add_cut_windows(fig, cut, windows, tol)
    return SectionOutput(
        [
            para(
                f"Efficiency versus the top gap with the bottom gap fixed at {bg:.2f} eV"
                + ("" if ctx.study.n_junctions == 2 else " and the middle gaps at map.stack_eV")
                + ". Top-cell candidates are marked. The cut has its own tolerance window: "
                f"the top gaps within {tol:g} absolute percent of the cut's best point "
                "(drawn as a bar of the connection's colour at that level)."
            ),
            fig,
            table(
                [
                    "connection",
                    "best top gap [eV]",
                    "efficiency [%]",
                    f"top gaps within {tol:g} % [eV]",
                ],
                rows,
                numeric=[False, True, True, True],
            ),
        ],
        data={"cut.csv": cut.to_frame()},
        summary={
            c: {
                "best_top_gap_eV": cut.optimum(c)[0],
                "efficiency_pct": cut.optimum(c)[1],
                "tolerance_window_eV": list(windows[c]),
            }
            for c in cut.efficiency
        },
    )


@register_section("spectrum", "Spectrum and absorbed bands")
def spectrum_section(ctx: ReportContext) -> SectionOutput:
    """Spectrum with each junction's absorbed band shaded, per stack of interest."""
    spec = ctx.spectrum
    blocks = [
        para(
            f"Incident spectrum: {spec.describe()}. With step absorptance each "
            "junction absorbs every photon above its gap that the junctions above it "
            "did not; the shaded bands show which wavelengths feed which junction."
        )
    ]
    stacks = ctx.study.stacks or []
    if not stacks:
        opt = ctx.map.optimum(ctx.map.connections[0])
        blocks.append(figs.spectrum_figure(spec, opt["gaps_eV"], "map optimum"))
    for s in stacks:
        blocks.append(figs.spectrum_figure(spec, s.gaps_eV, s.name))
    return SectionOutput(blocks)


@register_section("jv", "Current–voltage curves")
def jv_section(ctx: ReportContext) -> SectionOutput:
    """J-V curves of every stack of interest with operating points."""
    st = ctx.study
    if not st.stacks:
        return SectionOutput([para("The study lists no stacks of interest.")])
    blocks = [
        para(
            "Each junction's own J–V curve from short circuit to open circuit, with "
            "its operating point at the stack's maximum power (circles). For series "
            "connection the whole stack's curve is drawn too and its maximum power "
            "point starred. For voltage-matched connection each junction's cells form "
            "a string (dashed: the string's curve, n cells in series, n from the "
            "cells-per-string ratio in the panel title); the strings work in parallel at "
            "one common voltage (dotted line)."
        )
    ]
    for s in st.stacks:
        panels = []
        for conn in st.connections:
            r = ctx.stack_results[(s.name, conn)]
            # jv_curve evaluates every junction's diode at each junction's voltages and
            # keeps one column; with the Bose-Einstein form the unused columns can pass a
            # junction's gap and warn, so silence that and keep finite points only
            with np.errstate(invalid="ignore", divide="ignore", over="ignore"):
                curves = jv_curve(r, 0, points=120)
            curves["junctions"] = [
                (v[np.isfinite(j)], j[np.isfinite(j)]) for v, j in curves["junctions"]
            ]
            panels.append({"connection": conn, "curves": curves, "stack": r.stack(0)})
        blocks.append(figs.jv_figure(panels, s.name))
    return SectionOutput(blocks)


def _integration_words(spec) -> str:
    if spec.is_blackbody:
        return (
            "Blackbody sun: photon and power integrals are exact (polylogarithms); "
            "efficiencies are normalised to the diluted blackbody's own integral."
        )
    src = getattr(spec, "source", "")
    return (
        "Integration rule: photon flux and irradiance per nm are taken as linear "
        "between the tabulated wavelengths (the trapezoid rule on the table"
        + (f" of {src}" if src else "")
        + "); efficiencies are normalised to the "
        "spectrum's own integral (not a nominal 1000 W m⁻²) unless the study rescales it."
    )


@register_section("assumptions", "Assumptions and cautions")
def assumptions_section(ctx: ReportContext) -> SectionOutput:
    """Assumptions of the model and cautions on reading the results."""
    st = ctx.study
    c = st.conditions
    spec = ctx.spectrum
    emission = Conditions("", 0.0).emission
    items = [
        f"Spectrum: {spec.describe()} (integral {spec.total_irradiance_W_m2:.2f} W m⁻², the "
        "denominator of every efficiency).",
        f"Cell temperature {c['temperature_K']:g} K; external radiative efficiency (ERE) "
        f"{c['ere']:g} (1 = radiative limit; the dark current is divided by the ERE).",
        f"Dark current: {c['dark_current']} form of the radiative recombination current "
        "(detailed balance after Shockley and Queisser 1961 and De Vos 1980).",
        f"Emission geometry: {emission}; no photon recycling between junctions, no "
        "luminescent coupling.",
        "Absorptance is a step: every photon above a junction's gap that the junctions above "
        "did not take is absorbed and yields one electron-hole pair; nothing below the gap.",
        _integration_words(spec),
        "Series connection: one current through all junctions (current matching); "
        "independent connection: each junction at its own maximum power point; maximum "
        "power points are solved exactly, not read off a grid of voltages.",
        f"Maps are evaluated on a grid of {st.map['step_eV']:g} eV; optima and ranges are "
        "grid values (one step accuracy).",
    ]
    cautions = [
        "These numbers are theoretical limits of idealised cells, not ratings, forecasts or "
        "guarantees of any device. Real cells fall short of them through non-radiative "
        "recombination, parasitic absorption, reflection, resistance and incomplete "
        "collection.",
        "For performance claims rely on accredited measurement, such as the IEC 60904 family "
        "of standards, and for design decisions on licensed engineering practice.",
        "Materials and stacks come from the study file; gapmatch does not check that a "
        "material has the gap stated.",
    ]
    ul = "".join(f"<li>{esc(i)}</li>" for i in items)
    uc = "".join(f"<li>{esc(i)}</li>" for i in cautions)
    return SectionOutput(
        [
            f"<h3>Assumptions</h3><ul>{ul}</ul>",
            f'<div class="gm-caution" role="note"><h3>Cautions</h3><ul>{uc}</ul></div>',
        ]
    )


def figure_count(blocks: Sequence) -> int:
    """Number of figures among ``blocks``."""
    return sum(isinstance(b, go.Figure) for b in blocks)

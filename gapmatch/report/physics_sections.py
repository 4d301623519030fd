"""Report sections for the physics beyond the ideal limit: loss breakdown and
efficiency versus top-cell thickness.

Study-file table ``[thickness]`` (all keys optional)::

    [thickness]
    stack = "Vexaryn-B at 1.68 eV on Si"   # a stack of interest; default the first
    junction = 1                            # 1 = top cell
    connection = "series"
    absorber = "direct"                     # direct or indirect absorption edge
    light_trapping = "single"               # single, double or lambertian
    range_nm = [30.0, 3000.0]
    points = 40

References
----------
.. [1] L. C. Hirst and N. J. Ekins-Daukes, "Fundamental losses in solar cells",
   Prog. Photovolt. 19, 286 (2011) (loss terms).
.. [2] T. Tiedje, E. Yablonovitch, G. D. Cody and B. G. Brooks, IEEE Trans. Electron
   Devices 31, 711 (1984) (absorptance of a finite absorber).
"""

from __future__ import annotations

import numpy as np

from ..api import evaluate, thickness_sweep
from ..errors import InputError
from ..results import LOSS_LABELS
from .html import esc, para, table
from .loss_figures import loss_breakdown_figure, thickness_figure
from .registry import SectionOutput, register_section
from .sections import power_unit
from .style import FIGURE_CAUTION, THICKNESS_CAUTION


def _loss_results(ctx):
    def make():
        out = {}
        for c in ctx.study.connections:
            gaps = [list(s.gaps_eV) for s in ctx.study.stacks]
            if not gaps:
                continue
            out[c] = evaluate(gaps, c, ctx.illumination, losses=True, **ctx.cell_options())
        return out

    return ctx.get("losses", make)


@register_section("losses", "Where the power goes", default=False)
def losses_section(ctx) -> SectionOutput:
    """Stacked loss breakdown of every stack of interest, per connection."""
    results = _loss_results(ctx)
    blocks = [
        para(
            "Every watt of incident sunlight, accounted for: photons below the lowest gap, "
            "thermalisation of hot carriers, emission and non-radiative recombination at the "
            "operating point, the voltage drop from open circuit to maximum power, and (series "
            "connection) the power lost to current mismatch, i.e. what an independent "
            "connection of the same junctions would add. The terms add up to the incident "
            "power. Method: Hirst & Ekins-Daukes 2011 (Prog. Photovolt. 19, 286); under a "
            "measured spectrum the Carnot and Boltzmann terms are undefined and the voltage "
            "loss is split into radiative-limit, non-radiative and maximum-power parts."
        )
    ]
    data = {}
    summary = {}
    names = [s.name for s in ctx.study.stacks]
    for conn, res in results.items():
        fig = loss_breakdown_figure(
            res, title=f"Loss breakdown, {conn} connection ({FIGURE_CAUTION})"
        )
        # plotly renders a subset of HTML in tick labels: user names are escaped
        fig.update_xaxes(
            ticktext=[esc(n) for n in names], tickvals=list(range(len(names))), automargin=True
        )
        fig.update_layout(height=520)
        blocks.append(fig)
        frame = res.losses.to_frame()
        frame.insert(0, "stack", names)
        frame.insert(1, "connection", conn)
        data[f"losses_{conn}.csv"] = frame
        closure = float(np.max(np.abs(res.losses.closure_error())))
        summary[conn] = {"max_closure_error_relative": closure}
        # one row per loss term, one column per stack (stays narrow for any term count)
        cols = [c for c in frame.columns if c.endswith("_W_m2")]
        # concentrated light: kW m^-2 keeps the numbers readable
        unit, scale = power_unit(float(np.nanmax(np.abs(frame[cols].to_numpy()))))
        rows = [
            # the same label per term as the figure's legend
            [LOSS_LABELS.get(c.removesuffix("_W_m2"), c.removesuffix("_W_m2").replace("_", " "))]
            + [f"{frame.loc[i, c] * scale:.1f}" for i in range(len(names))]
            for c in cols
        ]
        blocks.append(
            table(
                [f"term [{unit}]", *names],
                rows,
                caption=f"{conn} connection: where the incident power goes [{unit}]",
                numeric=[False] + [True] * len(names),
            )
        )
    return SectionOutput(blocks=blocks, data=data, summary=summary)


@register_section("thickness", "Efficiency versus top-cell thickness", default=False)
def thickness_section(ctx) -> SectionOutput:
    """Efficiency of one stack of interest as one absorber is thinned."""
    cfg = ctx.study.extra.get("thickness", {})
    stacks = {s.name: s for s in ctx.study.stacks}
    if not stacks:
        raise InputError("thickness.stack", "the study has no stacks of interest to thin")
    name = cfg.get("stack") or next(iter(stacks))
    if name not in stacks:
        raise InputError(
            "thickness.stack", f"must name a stack of interest ({', '.join(stacks)})", name
        )
    gaps = list(stacks[name].gaps_eV)
    j = int(cfg.get("junction", 1))
    if j > len(gaps):
        raise InputError("thickness.junction", f"must be 1 to {len(gaps)} for stack {name!r}", j)
    lo, hi = cfg.get("range_nm", [30.0, 3000.0])
    if not lo < hi:
        raise InputError("thickness.range_nm", "must be [low, high] with low < high [nm]", [lo, hi])
    th = np.geomspace(lo, hi, int(cfg.get("points", 40)))
    conn = cfg.get("connection", "series")
    kw = ctx.cell_options()
    kw.pop("dark_current", None)  # finite absorbers use the Boltzmann form
    absorbers = ["step"] * len(gaps)
    absorbers[j - 1] = cfg.get("absorber", "direct")
    sweep = thickness_sweep(
        gaps,
        th,
        conn,
        junction=j,
        spectrum=ctx.illumination,
        absorber=absorbers,
        light_trapping=cfg.get("light_trapping", "single"),
        **kw,
    )
    fig = thickness_figure(sweep, conn)
    fig.update_layout(
        title=f"{esc(name)}: efficiency versus thickness of junction {j}<br>"
        f"<span style='font-size:12px;color:#5b6770'>{THICKNESS_CAUTION}</span>"
    )
    return SectionOutput(
        blocks=[
            para(
                "A model projection with finite absorbers, not an ideal ceiling: unlike the "
                "step-absorptance limits of the other sections, junction "
                f"{j} here absorbs only part of the light above its gap (an Urbach-tailed "
                f"{absorbers[j - 1]}-gap absorption edge, {cfg.get('light_trapping', 'single')} "
                "light path, Boltzmann dark current), so its numbers depend on that absorber "
                "model as well as on the gaps."
            ),
            para(
                f"Stack {name} ({' / '.join(f'{g:.2f}' for g in gaps)} eV), {conn} "
                f"connection: junction {j} is given a finite {absorbers[j - 1]}-gap "
                "absorber whose thickness varies; light it does not absorb passes to the "
                "junctions below, and its emission shrinks with its absorptance "
                "(reciprocity). Thinning a top cell whose gap is too low is how a series "
                "stack is current-matched."
            ),
            fig,
        ],
        data={"thickness.csv": sweep.to_frame()},
        summary={"stack": name, "junction": j, "range_nm": [float(lo), float(hi)]},
    )

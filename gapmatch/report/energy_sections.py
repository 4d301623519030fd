"""Report sections for energy yield at the study's site (``[site]``).

``site`` summarises the site and every assumption and fallback of the modelled year;
``site-energy`` gives the annual energy of the study's stacks (series and independent,
mismatch loss, energy efficiency against the AM1.5G efficiency) and their monthly
energy; ``site-map`` maps annual energy over top x bottom gap with the AM1.5G and yield
optima marked. The numbers come from :mod:`gapmatch.energy` (computed once per report
and cached on the context); the figures here only draw them.

References
----------
.. [1] D. Bird and C. Riordan, "Simple solar spectral model for direct and diffuse
   irradiance on horizontal and tilted planes at the earth's surface for cloudless
   atmospheres", J. Clim. Appl. Meteorol. 25, 87 (1986) (spectrl2, via pvlib).
.. [2] M. Ernst, H. Holst, M. Winter and P. P. Altermatt, Sol. Energy Mater. Sol. Cells
   157, 913 (2016) (scaling modelled spectra to measured irradiance).
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import plotly.graph_objects as go

from ..energy import YIELD_CAUTION, site_spectra, yield_from_spectra
from ..energy.maps import yield_map, yield_map_figure
from ..errors import InputError
from .figures import _CONN_COLOUR, PALETTE, _base_layout
from .html import esc, fmt, para, table
from .registry import SectionOutput, register_section

__all__ = ["SITE_FIGURE_CAUTION"]

#: short caution every figure title of these sections carries
SITE_FIGURE_CAUTION = "modelled limit of ideal cells, not an energy rating"
_MONTHS = ("Jan", "Feb", "Mar", "Apr", "May", "Jun", "Jul", "Aug", "Sep", "Oct", "Nov", "Dec")


# ---- shared, computed once per report ------------------------------------------------------
def _site(ctx):
    site = ctx.study.site
    if site is None:
        raise InputError(
            "site",
            "the site sections need a [site] table in the study file "
            "(at least weather = PATH of a TMY3, EPW or CSV weather file)",
        )
    return site


def _spectra(ctx):
    site = _site(ctx)
    return ctx.get("site_spectra", lambda: site_spectra(site.weather, **site.spectra_options()))


def _cell_options(ctx) -> dict:
    c = ctx.study.conditions
    return dict(ere=c["ere"], dark_current=c["dark_current"])


def _stack_yield(ctx):
    """Junction count -> :class:`gapmatch.energy.YieldResult` of the study's stacks of
    interest with that many junctions (one batch each), in study order."""
    site = _site(ctx)

    def make():
        counts = sorted({len(s.gaps_eV) for s in ctx.study.stacks})
        return {
            n: yield_from_spectra(
                _spectra(ctx),
                [list(s.gaps_eV) for s in ctx.study.stacks if len(s.gaps_eV) == n],
                ("series", "independent"),
                cell_temperature=site.cell_temperature(),
                **_cell_options(ctx),
            )
            for n in counts
        }

    return ctx.get("site_yield", make)


def _stack_rows(ctx):
    """(stack, YieldResult, row) for every stack of interest, in study order."""
    groups = _stack_yield(ctx)
    if not groups:
        return []
    seen = {k: 0 for k in groups}
    out = []
    for s in ctx.study.stacks:
        k = len(s.gaps_eV)
        out.append((s, groups[k], seen[k]))
        seen[k] += 1
    return out


def _flatten(d: dict, prefix: str = "") -> list[tuple[str, str]]:
    rows = []
    for k, v in d.items():
        key = f"{prefix}{k}"
        if isinstance(v, dict):
            rows.extend(_flatten(v, key + "."))
        elif isinstance(v, list | tuple):
            rows.append(
                (key, ", ".join(fmt(x, ".4g") if isinstance(x, float) else str(x) for x in v))
            )
        elif isinstance(v, float):
            rows.append((key, fmt(v, ".4g")))
        else:
            rows.append((key, str(v)))
    return rows


# ---- figures (draw only) ---------------------------------------------------------------------
def monthly_energy_figure(rows, poa_kWh_m2) -> go.Figure:  # noqa: N803
    """Monthly energy of each stack (series solid, independent dashed) and the in-plane
    irradiation (bars, right axis).

    Parameters
    ----------
    rows : list of (StackOfInterest, YieldResult, int)
        Stacks with their result and row.
    poa_kWh_m2 : array_like
        Monthly in-plane irradiation [kWh m^-2], ``(12,)``.
    """
    fig = go.Figure()
    fig.add_trace(
        go.Bar(
            x=list(_MONTHS),
            y=np.asarray(poa_kWh_m2, float),
            name="in-plane irradiation [kWh m^-2]",
            marker_color="rgba(201,194,180,0.55)",
            yaxis="y2",
            hovertemplate="%{x}: %{y:.1f} kWh m^-2 in-plane<extra></extra>",
        )
    )
    for i, (s, res, k) in enumerate(rows):
        colour = PALETTE[i % len(PALETTE)]
        for conn, dash in (("series", "solid"), ("independent", "dash")):
            fig.add_trace(
                go.Scatter(
                    x=list(_MONTHS),
                    y=res.monthly_energy_kWh_m2(conn)[:, k],
                    mode="lines+markers",
                    line=dict(color=colour, dash=dash, width=2),
                    name=f"{esc(s.name)}, {conn}",
                    hovertemplate=f"{esc(s.name)}, {conn}<br>%{{x}}: %{{y:.2f}} kWh m^-2"
                    "<extra></extra>",
                )
            )
    _base_layout(fig, f"Monthly energy of the stacks at the site ({SITE_FIGURE_CAUTION})", 480)
    fig.update_layout(
        xaxis_title="month",
        yaxis_title="electrical energy [kWh m^-2]",
        yaxis2=dict(
            title="in-plane irradiation [kWh m^-2]", overlaying="y", side="right", showgrid=False
        ),
        margin=dict(r=80),
    )
    return fig


#: caution of the mismatch figures: what the hourly spectra are
_SPECTRA_CAUTION = "clear-sky spectral shapes scaled to measured irradiance"
#: most stacks that get an hour x month photocurrent-ratio figure
MAX_RATIO_FIGURES = 4


def monthly_mismatch_figure(rows) -> go.Figure:
    """Energy a series (two-terminal) connection loses to current mismatch in each
    month, against the independent connection of the same gaps [%], one line per stack.

    Parameters
    ----------
    rows : list of (StackOfInterest, YieldResult, int)
        Stacks with their result and row.
    """
    fig = go.Figure()
    for i, (s, res, k) in enumerate(rows):
        if len(s.gaps_eV) < 2:
            continue
        fig.add_trace(
            go.Scatter(
                x=list(_MONTHS),
                y=100.0 * res.monthly_mismatch_loss()[:, k],
                mode="lines+markers",
                line=dict(color=PALETTE[i % len(PALETTE)], width=2),
                name=esc(s.name),
                hovertemplate=f"{esc(s.name)}<br>%{{x}}: %{{y:.2f}} % of the independent "
                "energy<extra></extra>",
            )
        )
    _base_layout(
        fig,
        f"Series current-mismatch loss by month [%] ({SITE_FIGURE_CAUTION}; {_SPECTRA_CAUTION})",
        460,
    )
    fig.update_layout(
        xaxis_title="month",
        yaxis_title="1 - E<sub>series</sub> / E<sub>independent</sub> [%]",
        yaxis=dict(rangemode="tozero"),
    )
    return fig


def current_ratio_figure(name: str, res, k: int) -> go.Figure:
    """Photocurrent of the top junction over the next one below, by hour of day and
    month (charge-weighted in each bin): above 1 the top cell has the surplus current,
    below 1 the lower one (a series stack then runs at the lower of the two).

    Parameters
    ----------
    name : str
        Stack name.
    res : YieldResult
        Result holding the stack.
    k : int
        Row of the stack in ``res``.
    """
    r = res.hour_month_current_ratio(k)
    fig = go.Figure(
        go.Heatmap(
            x=list(range(24)),
            y=list(_MONTHS),
            z=np.round(r, 4),
            zmid=1.0,
            colorscale="RdBu",
            colorbar=dict(title=dict(text="J<sub>top</sub> / J<sub>next</sub>")),
            hovertemplate="%{y}, %{x}:00-%{x}:59<br>J<sub>top</sub> / J<sub>next</sub> = "
            "%{z:.3f}<extra></extra>",
        )
    )
    _base_layout(
        fig,
        f"Photocurrent ratio of the top to the next junction, {esc(name)} "
        f"({SITE_FIGURE_CAUTION}; {_SPECTRA_CAUTION})",
        440,
    )
    fig.update_layout(
        xaxis_title="hour of day (the weather file's time zone, hour containing the "
        "interval centre)",
        yaxis_title="month",
        yaxis=dict(autorange="reversed"),
    )
    return fig


def _styled_map(m, kind: str, stacks) -> go.Figure:
    fig = yield_map_figure(m, kind)
    what = (
        "independent minus series annual energy [kWh m^-2 yr^-1]"
        if kind == "difference"
        else f"Annual energy, {kind} [kWh m^-2 yr^-1]"
    )
    _base_layout(fig, f"{what} ({SITE_FIGURE_CAUTION})", 600)
    fig.update_traces(colorscale="Cividis", selector=dict(type="heatmap"))
    fig.update_traces(
        hovertemplate="top %{x:.3f} eV, bottom %{y:.3f} eV<br>%{z:.1f} kWh m^-2 yr^-1"
        "<extra></extra>",
        selector=dict(type="heatmap"),
    )
    two = [s for s in stacks if len(s.gaps_eV) == 2]
    if two:
        fig.add_trace(
            go.Scatter(
                x=[s.gaps_eV[0] for s in two],
                y=[s.gaps_eV[1] for s in two],
                mode="markers",
                marker=dict(symbol="circle-open", size=11, color=_CONN_COLOUR["independent"]),
                text=[esc(s.name) for s in two],
                hovertemplate="%{text}: %{x:.2f} / %{y:.2f} eV<extra></extra>",
                name="stacks of interest",
            )
        )
    fig.update_layout(
        xaxis_title="top gap [eV]",
        yaxis_title="bottom gap [eV]",
        legend=dict(orientation="h", y=-0.18),
        margin=dict(b=150),
    )
    return fig


# ---- sections --------------------------------------------------------------------------------
@register_section("site", "Site and modelled year", default=False)
def site_section(ctx) -> SectionOutput:
    """Location, weather file, hours, irradiation and every assumption or fallback."""
    site = _site(ctx)
    hs = _spectra(ctx)
    # the assumptions of a yield result include the cell-temperature and reference ones
    rows = _stack_rows(ctx)
    res = rows[0][1] if rows else None
    assumptions = dict(res.assumptions if res is not None else hs.assumptions)
    loc = dict(hs.assumptions.get("site", {}))
    overridden = [
        k
        for k, v in (
            ("latitude", site.latitude_deg),
            ("longitude", site.longitude_deg),
            ("altitude", site.altitude_m),
        )
        if v is not None
    ]
    poa = float(hs.photon_table().irradiance_W_m2 @ (hs.weights * hs.interval_h)) / 1000.0
    if res is not None:
        poa = res.poa_irradiation_kWh_m2
    facts = [
        ["site", loc.get("name") or "(unnamed)"],
        [
            "location",
            f"{loc.get('latitude_deg', float('nan')):.3f} deg N, "
            f"{loc.get('longitude_deg', float('nan')):.3f} deg E, "
            f"{loc.get('altitude_m', float('nan')):.0f} m"
            + (f" ({', '.join(overridden)} set in [site])" if overridden else " (from the file)"),
        ],
        ["weather file", f"{site.given} ({Path(site.weather).name})"],
        ["format", str(assumptions.get("weather_format", site.weather_format or "from file"))],
        ["daylight intervals modelled", f"{hs.hours:,}"],
        ["in-plane irradiation [kWh m^-2 yr^-1]", f"{poa:.1f}"],
        ["collector", str(assumptions.get("mounting", ""))],
        ["transposition", site.transposition],
    ]
    skip = {"site", "mounting", "transposition", "weather_format"}
    assumed = [[k, v] for k, v in _flatten({k: v for k, v in assumptions.items() if k not in skip})]
    blocks = [
        para(YIELD_CAUTION),
        para(
            "A year of hourly in-plane spectra at this site: clear-sky spectral shapes from "
            "spectrl2 (Bird & Riordan 1986, via pvlib) scaled to the file's measured direct "
            "and diffuse irradiance after Ernst et al. 2016, cell temperatures from the "
            "weather (pvlib), and the exact maximum-power point of every stack in every hour. "
            "Where the file lacks a quantity a stated default is used; all are listed below."
        ),
        table(["quantity", "value"], facts, caption="The site and its modelled year"),
        table(
            ["assumption or fallback", "value"],
            assumed,
            caption="Every default and fallback used in the modelled year",
        ),
    ]
    summary = {
        "site": loc,
        "weather": site.given,
        "hours": int(hs.hours),
        "poa_irradiation_kWh_m2": poa,
        "assumptions": assumptions,
        "caution": YIELD_CAUTION,
    }
    return SectionOutput(blocks=blocks, summary=summary)


@register_section("site-energy", "Annual energy at the site", default=False)
def site_energy_section(ctx) -> SectionOutput:
    """Annual and monthly energy of the study's stacks, series and independent."""
    _site(ctx)
    rows = _stack_rows(ctx)
    if not rows:
        raise InputError("stacks", "the site-energy section needs at least one [[stacks]] entry")
    table_rows, records = [], []
    for s, res, k in rows:
        gaps = " / ".join(f"{g:.2f}" for g in s.gaps_eV)
        rec = {"stack": s.name, **{f"gap_{j + 1}_eV": g for j, g in enumerate(s.gaps_eV)}}
        rec["poa_irradiation_kWh_m2"] = res.poa_irradiation_kWh_m2
        for c in ("series", "independent"):
            e = float(res.annual_energy_kWh_m2(c)[k])
            ee = float(res.energy_efficiency(c)[k])
            ref = float(res.reference_efficiency[c][k])
            rec[f"annual_energy_{c}_kWh_m2"] = e
            rec[f"energy_efficiency_{c}_pct"] = 100 * ee
            rec[f"reference_efficiency_{c}_pct"] = 100 * ref
            table_rows.append(
                [s.name, gaps, c, f"{e:.1f}", f"{100 * ee:.2f}", f"{100 * ref:.2f}"]
                + [f"{100 * float(res.mismatch_loss[k]):.2f}" if c == "series" else "–"]
            )
        rec["mismatch_loss_pct"] = 100 * float(res.mismatch_loss[k])
        records.append(rec)
    import pandas as pd

    frame = pd.DataFrame(records)
    monthly = []
    for s, res, k in rows:
        mf = res.monthly_frame(k)
        mf.insert(0, "stack", s.name)
        monthly.append(mf)
    mframe = pd.concat(monthly, ignore_index=True)
    poa_monthly = rows[0][1].monthly_poa_kWh_m2
    multi = [(s, res, k) for s, res, k in rows if len(s.gaps_eV) >= 2]
    ratios = []
    for s, res, k in multi:
        hf = res.hour_month_frame(k, "series")
        hf.insert(0, "stack", s.name)
        ratios.append(hf)
    blocks = [
        para(
            "Annual electrical energy of each stack of interest at the site, with the two "
            "junctions wired in series (two-terminal, current-matched every hour or not) and "
            "independently (four-terminal). The mismatch loss is the energy a series stack "
            "loses against the independent connection of the same gaps. Energy efficiency is "
            "annual energy over in-plane irradiation; compare it with the same stack's "
            "AM1.5G efficiency at 25 deg C (ASTM G173-03). "
            + SITE_FIGURE_CAUTION.capitalize()
            + "."
        ),
        table(
            [
                "stack",
                "gaps [eV]",
                "connection",
                "annual energy [kWh m^-2 yr^-1]",
                "energy efficiency [%]",
                "AM1.5G efficiency, 25 deg C [%]",
                "mismatch loss [%]",
            ],
            table_rows,
            caption="Annual energy of the stacks of interest at the site",
            numeric=[False, False, False, True, True, True, True],
        ),
        monthly_energy_figure(rows, poa_monthly),
    ]
    data = {"site_energy.csv": frame, "site_monthly.csv": mframe}
    if multi:
        blocks += [
            para(
                "Current mismatch over the year. A series stack delivers the current of its "
                "weakest junction; as the spectrum reddens in the morning, evening and "
                "winter (more air mass) and blues under cloud and diffuse light, the balance "
                "between the junctions moves. The first figure gives the energy the series "
                "connection loses each month against the independent connection of the "
                "same gaps; the maps give the ratio of the top junction's photocurrent to "
                "the next one's by hour of day and month (1 = matched). The hourly spectra "
                "are modelled (spectrl2 clear-sky shapes scaled to the file's measured "
                "irradiance, Ernst et al. 2016), absorbers are ideal steps, so the swings "
                "are those of ideal cells: real absorbers with gradual absorption edges "
                "and luminescent coupling soften them. " + SITE_FIGURE_CAUTION.capitalize() + "."
            ),
            monthly_mismatch_figure(multi),
        ]
        blocks += [current_ratio_figure(s.name, res, k) for s, res, k in multi[:MAX_RATIO_FIGURES]]
        if len(multi) > MAX_RATIO_FIGURES:
            blocks.append(
                para(
                    f"Ratio maps are drawn for the first {MAX_RATIO_FIGURES} stacks; the "
                    "data file has all of them."
                )
            )
        data["site_current_ratio.csv"] = pd.concat(ratios, ignore_index=True)
    summary = {
        "stacks": records,
        # a list of records: stack names are values, never keys
        "monthly_mismatch_loss": [
            {
                "stack": s.name,
                "loss_pct": [float(x) for x in 100.0 * res.monthly_mismatch_loss()[:, k]],
            }
            for s, res, k in multi
        ],
        "caution": YIELD_CAUTION,
    }
    return SectionOutput(blocks=blocks, data=data, summary=summary)


@register_section("site-map", "Annual-energy map at the site", default=False)
def site_map_section(ctx) -> SectionOutput:
    """Annual energy over top x bottom gap, series, independent and their difference."""
    site = _site(ctx)

    def make():
        return yield_map(
            _spectra(ctx),
            site.map_top_eV,
            site.map_bottom_eV,
            site.map_step_eV,
            cell_temperature=site.cell_temperature(),
            **_cell_options(ctx),
        )

    m = ctx.get("site_map", make)
    rows = []
    for c in ("series", "independent"):
        for key, label in (("yield_optimum", "yield optimum"), ("am15g_optimum", "AM1.5G optimum")):
            o = m.optima[c][key]
            rows.append(
                [
                    c,
                    label,
                    " / ".join(f"{g:.2f}" for g in o["gaps_eV"]),
                    f"{o['annual_energy_kWh_m2']:.1f}",
                    f"{100 * o['reference_efficiency']:.2f}",
                ]
            )
    blocks = [
        para(
            f"Annual energy of every two-junction stack on a {site.map_step_eV:g} eV grid "
            f"(top {site.map_top_eV[0]:.2f}-{site.map_top_eV[1]:.2f} eV, bottom "
            f"{site.map_bottom_eV[0]:.2f}-{site.map_bottom_eV[1]:.2f} eV) at the site. The star "
            "marks the gaps with the most annual energy, the cross the gaps with the highest "
            "AM1.5G efficiency at 25 deg C; each is evaluated on both criteria below. The grid "
            "is coarse: the optima are good to about half a step. "
            + SITE_FIGURE_CAUTION.capitalize()
            + "."
        ),
        table(
            [
                "connection",
                "optimum",
                "gaps [eV]",
                "annual energy [kWh m^-2 yr^-1]",
                "AM1.5G efficiency, 25 deg C [%]",
            ],
            rows,
            caption="Yield optimum and AM1.5G optimum, each on both criteria",
            numeric=[False, False, False, True, True],
        ),
    ]
    for kind in ("series", "independent", "difference"):
        blocks.append(_styled_map(m, kind, ctx.study.stacks))
    return SectionOutput(
        blocks=blocks,
        data={"site_map.csv": m.to_frame()},
        summary={
            "step_eV": site.map_step_eV,
            "poa_irradiation_kWh_m2": m.poa_irradiation_kWh_m2,
            "optima": m.optima,
            "caution": YIELD_CAUTION,
        },
    )

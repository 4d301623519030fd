"""Annual-energy maps over top x bottom gap of a tandem at one site.

:func:`yield_map` computes (pure data, no plotting) the annual energy of every tandem of
a grid in series and independent connection, their difference, the mismatch loss, and
the AM1.5G (25 deg C) efficiency of the same stacks, and marks two optima per
connection: the yield optimum and the AM1.5G optimum, each evaluated on both criteria.
:func:`yield_map_figure` only draws a :class:`YieldMap` (plotly).
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np
import pandas as pd

from ..errors import InputError, check_range
from .api import yield_from_spectra
from .result import YIELD_CAUTION
from .spectra import HourlySpectra

__all__ = ["YieldMap", "yield_map", "yield_map_figure", "yield_batch", "DEFAULT_CHUNK_STACKS"]

#: stacks per chunk of a chunked yield sweep (one task per chunk on a cluster)
DEFAULT_CHUNK_STACKS = 4096

_KINDS = ("series", "independent", "difference")


@dataclass(frozen=True, eq=False)
class YieldMap:
    """Annual energies over a grid of tandems (NaN where the top gap is not above the
    bottom gap).

    Attributes
    ----------
    top_eV, bottom_eV : numpy.ndarray
        Axes [eV], ``(nx,)`` and ``(ny,)``.
    energy_kWh_m2 : dict of str to numpy.ndarray
        ``series`` and ``independent`` annual energy [kWh m^-2 yr^-1], ``(ny, nx)``.
    reference_efficiency : dict of str to numpy.ndarray
        AM1.5G efficiency at 25 deg C (fraction), ``(ny, nx)``.
    poa_irradiation_kWh_m2 : float
        In-plane irradiation [kWh m^-2 yr^-1].
    optima : dict
        Per connection: ``yield_optimum`` and ``am15g_optimum``, each with ``gaps_eV``,
        ``annual_energy_kWh_m2`` and ``reference_efficiency``.
    assumptions : dict
        Site and model assumptions.
    """

    top_eV: np.ndarray  # noqa: N815
    bottom_eV: np.ndarray  # noqa: N815
    energy_kWh_m2: dict
    reference_efficiency: dict
    poa_irradiation_kWh_m2: float
    optima: dict
    assumptions: dict = field(default_factory=dict)
    caution: str = YIELD_CAUTION

    @property
    def difference_kWh_m2(self) -> np.ndarray:
        """Independent minus series annual energy [kWh m^-2 yr^-1], ``(ny, nx)``."""
        return self.energy_kWh_m2["independent"] - self.energy_kWh_m2["series"]

    @property
    def mismatch_loss(self) -> np.ndarray:
        """``1 - E_series / E_independent`` (fraction), ``(ny, nx)``."""
        return 1.0 - self.energy_kWh_m2["series"] / self.energy_kWh_m2["independent"]

    def summary(self) -> dict:
        """JSON-ready summary: grid, irradiation, both optima per connection (each on
        both criteria), the largest mismatch loss, assumptions and the caution."""
        ml = self.mismatch_loss
        return {
            "grid": {
                "top_min_eV": float(self.top_eV[0]),
                "top_max_eV": float(self.top_eV[-1]),
                "bottom_min_eV": float(self.bottom_eV[0]),
                "bottom_max_eV": float(self.bottom_eV[-1]),
                "nx": int(self.top_eV.size),
                "ny": int(self.bottom_eV.size),
                "stacks": int(np.isfinite(self.energy_kWh_m2["series"]).sum()),
            },
            "poa_irradiation_kWh_m2": float(self.poa_irradiation_kWh_m2),
            "optima": self.optima,
            "mismatch_loss_range": [float(np.nanmin(ml)), float(np.nanmax(ml))],
            "assumptions": self.assumptions,
            "caution": self.caution,
        }

    def to_frame(self) -> pd.DataFrame:
        """One row per grid point with a valid tandem."""
        tx, by = np.meshgrid(self.top_eV, self.bottom_eV)
        ok = np.isfinite(self.energy_kWh_m2["series"])
        return pd.DataFrame(
            {
                "gap_1_eV": tx[ok],
                "gap_2_eV": by[ok],
                "annual_energy_series_kWh_m2": self.energy_kWh_m2["series"][ok],
                "annual_energy_independent_kWh_m2": self.energy_kWh_m2["independent"][ok],
                "difference_kWh_m2": self.difference_kWh_m2[ok],
                "mismatch_loss_pct": 100.0 * self.mismatch_loss[ok],
                "reference_efficiency_series": self.reference_efficiency["series"][ok],
                "reference_efficiency_independent": self.reference_efficiency["independent"][ok],
            }
        )


def _axis(name, rng, step):
    lo, hi = (check_range(f"{name}[{i}]", v, 0.1, 5.0, unit="eV") for i, v in enumerate(rng))
    if hi <= lo:
        raise InputError(name, "needs low < high [eV]", list(rng))
    n = int(round((hi - lo) / step)) + 1
    if n > 401:
        raise InputError("step_eV", f"gives {n} points per axis; at most 401", step)
    return lo + step * np.arange(n)


def yield_map(
    spectra: HourlySpectra,
    top_eV=(1.4, 2.2),  # noqa: N803
    bottom_eV=(0.7, 1.4),  # noqa: N803
    step_eV: float = 0.02,  # noqa: N803
    *,
    client=None,
    chunk_stacks: int = DEFAULT_CHUNK_STACKS,
    **kwargs,
) -> YieldMap:
    """Annual energy of a grid of tandems at a site, series and independent.

    Parameters
    ----------
    spectra : HourlySpectra
        The site's in-plane spectra (e.g. :func:`gapmatch.energy.site_spectra`).
    top_eV, bottom_eV : (float, float)
        Axis ranges [eV], within 0.1-5.0.
    step_eV : float
        Grid spacing [eV], in [0.001, 0.5]; at most 401 points per axis.
    client : distributed.Client, optional
        Compute the chunks of stacks on a Dask cluster (:mod:`gapmatch.cluster`); the
        numbers are bit-identical to ``client=None``.
    chunk_stacks : int
        Stacks per chunk (see :func:`yield_batch`).
    **kwargs
        Passed to :func:`yield_batch` (``cell_temperature``, ``ere``,
        ``dark_current``, gap temperature model, ``progress``).

    Returns
    -------
    YieldMap
    """
    step = check_range("step_eV", step_eV, 0.001, 0.5, unit="eV")
    tx = _axis("top_eV", top_eV, step)
    by = _axis("bottom_eV", bottom_eV, step)
    t2, b2 = np.meshgrid(tx, by)
    ok = t2 > b2 + 1e-9
    if not ok.any():
        raise InputError("top_eV", "no grid point has the top gap above the bottom gap")
    gaps = np.column_stack([t2[ok], b2[ok]])
    r = yield_batch(
        spectra,
        gaps,
        ("series", "independent"),
        client=client,
        chunk_stacks=chunk_stacks,
        **kwargs,
    )
    energy, ref = {}, {}
    for c in ("series", "independent"):
        e = np.full(t2.shape, np.nan)
        e[ok] = r["annual_energy_kWh_m2"][c]
        energy[c] = e
        f = np.full(t2.shape, np.nan)
        f[ok] = r["reference_efficiency"][c]
        ref[c] = f
    optima = {}
    for c in ("series", "independent"):
        iy = int(np.nanargmax(energy[c]))
        ia = int(np.nanargmax(ref[c]))

        def point(i, c=c):
            return {
                "gaps_eV": [float(t2.flat[i]), float(b2.flat[i])],
                "annual_energy_kWh_m2": float(energy[c].flat[i]),
                "reference_efficiency": float(ref[c].flat[i]),
            }

        optima[c] = {"yield_optimum": point(iy), "am15g_optimum": point(ia)}
    return YieldMap(
        tx, by, energy, ref, r["poa_irradiation_kWh_m2"], optima, dict(r["assumptions"])
    )


def _yield_chunk(gaps_eV, *, spectra, connections, kwargs):  # noqa: N803
    """One chunk of a sweep (runs on a worker): annual energy [kWh m^-2 yr^-1] per
    connection and the AM1.5G reference efficiency of the chunk's stacks."""
    r = yield_from_spectra(spectra, gaps_eV, connections, **kwargs)
    return (
        {c: r.annual_energy_kWh_m2(c) for c in connections},
        {c: r.reference_efficiency[c] for c in connections},
        r.poa_irradiation_kWh_m2,
        r.assumptions,
    )


def yield_batch(
    spectra: HourlySpectra,
    gaps_eV,  # noqa: N803
    connections: tuple[str, ...] = ("series", "independent"),
    *,
    client=None,
    chunk_stacks: int = DEFAULT_CHUNK_STACKS,
    progress: bool = False,
    **kwargs,
) -> dict:
    """Annual energy of many stacks, in chunks, here or on a Dask cluster.

    The stacks are split into consecutive chunks of ``chunk_stacks``; every chunk is
    computed by :func:`gapmatch.energy.yield_from_spectra` with the same inputs,
    either in this process one after another or on the workers of ``client``, with
    the site's spectra scattered to every worker once (:func:`gapmatch.cluster.map_chunks`).
    The chunking is the same in both cases, so the numbers are bit-identical.

    Parameters
    ----------
    spectra : HourlySpectra
        The site's in-plane spectra.
    gaps_eV : array_like
        ``(M, N)`` gaps [eV], top first.
    connections : tuple of str
        Connections solved (series and independent are always added).
    client : distributed.Client, optional
        Dask client; ``None`` computes here.
    chunk_stacks : int
        Stacks per chunk, in [1, 10^6].
    progress : bool
        Progress bar over chunks.
    **kwargs
        Passed to :func:`gapmatch.energy.yield_from_spectra` (``cell_temperature``,
        ``ere``, ``dark_current``, gap temperature model).

    Returns
    -------
    dict
        ``annual_energy_kWh_m2`` and ``reference_efficiency`` (AM1.5G at 25 deg C,
        fraction): per connection, ``(M,)`` arrays; ``poa_irradiation_kWh_m2``;
        ``assumptions``.
    """
    from ..api import check_gaps
    from ..cluster import map_chunks

    g = check_gaps(gaps_eV)
    if isinstance(chunk_stacks, bool) or not 1 <= int(chunk_stacks) <= 10**6:
        raise InputError("chunk_stacks", "must be a whole number in [1, 10^6]", chunk_stacks)
    cs = int(chunk_stacks)
    conns = tuple(dict.fromkeys([*connections, "series", "independent"]))
    chunks = [g[i : i + cs] for i in range(0, g.shape[0], cs)]
    parts = map_chunks(
        _yield_chunk,
        chunks,
        client=client,
        shared={"spectra": spectra, "connections": conns, "kwargs": kwargs},
        progress=progress,
        desc="yield chunks",
    )
    return {
        "annual_energy_kWh_m2": {c: np.concatenate([p[0][c] for p in parts]) for c in conns},
        "reference_efficiency": {c: np.concatenate([p[1][c] for p in parts]) for c in conns},
        "poa_irradiation_kWh_m2": float(parts[0][2]),
        "assumptions": dict(parts[0][3]),
    }


def yield_map_figure(m: YieldMap, kind: str = "series"):
    """Heat map of a :class:`YieldMap` with the yield and AM1.5G optima marked.

    Parameters
    ----------
    m : YieldMap
        Data from :func:`yield_map`.
    kind : {"series", "independent", "difference"}
        Annual energy of one connection, or independent minus series.

    Returns
    -------
    plotly.graph_objects.Figure
    """
    import plotly.graph_objects as go

    if kind not in _KINDS:
        raise InputError("kind", f"must be one of {', '.join(_KINDS)}", kind)
    z = m.difference_kWh_m2 if kind == "difference" else m.energy_kWh_m2[kind]
    title = (
        "independent minus series annual energy [kWh m^-2 yr^-1]"
        if kind == "difference"
        else f"{kind} annual energy [kWh m^-2 yr^-1]"
    )
    fig = go.Figure(
        go.Heatmap(
            x=m.top_eV, y=m.bottom_eV, z=z, colorbar={"title": {"text": "kWh m^-2"}}, name=kind
        )
    )
    conn = "series" if kind == "difference" else kind
    for key, label, symbol in (
        ("yield_optimum", "yield optimum", "star"),
        ("am15g_optimum", "AM1.5G optimum", "x"),
    ):
        o = m.optima[conn][key]
        fig.add_trace(
            go.Scatter(
                x=[o["gaps_eV"][0]],
                y=[o["gaps_eV"][1]],
                mode="markers",
                marker={"symbol": symbol, "size": 13, "color": "white", "line": {"width": 1.5}},
                name=f"{label} ({conn}): {o['annual_energy_kWh_m2']:.1f} kWh m^-2 yr^-1, "
                f"AM1.5G {100 * o['reference_efficiency']:.2f} %",
            )
        )
    fig.update_layout(
        title={"text": title + " (modelled limit, not a rating)"},
        xaxis_title="top gap [eV]",
        yaxis_title="bottom gap [eV]",
        legend={"orientation": "h", "y": -0.2},
    )
    return fig

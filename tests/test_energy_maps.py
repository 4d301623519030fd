"""Annual-energy maps: optima against direct evaluation, and the figure marks both.

External references: the core batch solver under ASTM G173-03 AM1.5G (pvlib's table) at
25 deg C for the AM1.5G optimum; the Greensboro TMY3 sample shipped with pvlib (NREL
open data) for the site.
"""

from __future__ import annotations

import numpy as np
import pytest

import gapmatch as gm
from gapmatch.core.engine import solve_stacks
from gapmatch.energy import Mounting, demo_weather_path, read_weather
from gapmatch.energy.maps import yield_map, yield_map_figure
from gapmatch.energy.spectra import hourly_spectra
from gapmatch.errors import InputError
from gapmatch.units import EV


@pytest.fixture(scope="module")
def ymap():
    hs = hourly_spectra(read_weather(demo_weather_path()), Mounting(36.0, 180.0))
    return yield_map(hs.take(slice(0, 4421, 3)), (1.5, 2.1), (0.8, 1.3), 0.05)


def test_optima_and_tables(ymap):
    e = ymap.energy_kWh_m2["series"]
    assert np.isnan(e[ymap.bottom_eV[:, None] >= ymap.top_eV[None, :] - 1e-9]).all()
    for c in ("series", "independent"):
        o = ymap.optima[c]
        assert o["yield_optimum"]["annual_energy_kWh_m2"] == pytest.approx(
            np.nanmax(ymap.energy_kWh_m2[c])
        )
        assert (
            o["yield_optimum"]["annual_energy_kWh_m2"] >= o["am15g_optimum"]["annual_energy_kWh_m2"]
        )
        # the AM1.5G optimum of the grid, from the core under AM1.5G at 25 deg C
        df = ymap.to_frame()
        sol = solve_stacks(
            df[["gap_1_eV", "gap_2_eV"]].to_numpy() * EV,
            gm.standard_spectrum("AM1.5G"),
            c,
            temperature_K=298.15,
        )
        best = df.iloc[int(np.argmax(sol.op.p_mpp))]
        assert o["am15g_optimum"]["gaps_eV"] == pytest.approx([best.gap_1_eV, best.gap_2_eV])
    assert (ymap.to_frame()["difference_kWh_m2"] >= -1e-9).all()


def test_figure_marks_both_optima(ymap):
    fig = yield_map_figure(ymap, "difference")
    names = [t.name for t in fig.data]
    assert any("yield optimum" in n for n in names if n)
    assert any("AM1.5G optimum" in n for n in names if n)
    with pytest.raises(InputError, match="kind"):
        yield_map_figure(ymap, "parallel")

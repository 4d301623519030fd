"""Benchmark of the energy-yield engine: a typical year x an 81 x 81 two-junction grid.

Times the whole computation: reading the Greensboro TMY3 sample shipped with pvlib (NREL
open data), the hourly spectrl2 spectra of every daylight hour scaled to the measured
irradiance on a fixed 36 deg south-facing plane, SAPM cell temperatures, and the exact
series maximum-power point of every (hour, stack) pair of an 81 x 81 grid (top
1.50-2.30 eV, bottom 0.70-1.50 eV, 0.01 eV steps: 6,561 stacks). The target is 15 s on
the project's 2-core machine; the machine is shared, so the load average is printed.

The last line is exactly ``stack_hours_per_s=<float> seconds=<float>``.

With ``--search`` it times instead the second target (20 s whole process): the
yield-optimal top gap of a series tandem on a fixed 1.12 eV bottom cell, searched by
:func:`gapmatch.search.optimise` with the annual-energy objective on 36 representative
spectra, the answer then evaluated on the full year; its last line is
``search_seconds=<float> top_gap_eV=<float> reduction_error=<float>``.

Usage::

    .venv/bin/python benchmarks/yield.py [--points 81] [--independent] [--search]
"""

from __future__ import annotations

import argparse
import os
import sys
import time
from pathlib import Path

import numpy as np

HERE = Path(__file__).resolve().parent
sys.path.insert(0, str(HERE.parent))

from gapmatch.energy import CellTemperature, Mounting, demo_weather_path, read_weather  # noqa: E402
from gapmatch.energy.engine import run_yield  # noqa: E402
from gapmatch.energy.spectra import hourly_spectra  # noqa: E402
from gapmatch.units import EV  # noqa: E402


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--points", type=int, default=81, help="grid points per axis (default 81)")
    ap.add_argument("--independent", action="store_true", help="also solve independent connection")
    ap.add_argument(
        "--search", action="store_true", help="time the yield-optimal 2J search instead"
    )
    args = ap.parse_args(argv)
    if args.search:
        return search_benchmark()
    k = args.points
    top = np.linspace(1.5, 2.3, k)
    bottom = np.linspace(0.7, 1.5, k)
    gaps = np.column_stack([np.repeat(top, k), np.tile(bottom, k)]) * EV
    conns = ("series", "independent") if args.independent else ("series",)
    c0 = time.process_time()
    t0 = time.perf_counter()
    weather = read_weather(demo_weather_path())
    hs = hourly_spectra(weather, Mounting(36.0, 180.0))
    table = hs.photon_table()
    tc = CellTemperature().cell_temperature_K(
        table.irradiance_W_m2, hs.temp_air_C, hs.wind_speed_m_s
    )
    bins = 24 * (hs.times.month.to_numpy() - 1) + hs.times.hour.to_numpy()
    t1 = time.perf_counter()
    res = run_yield(table, np.ones(hs.hours), tc, bins, gaps, conns)
    t2 = time.perf_counter()
    cpu = time.process_time() - c0
    e = res.energy_bins_Wh_m2["series"].sum(axis=0) / 1000.0
    best = int(np.argmax(e))
    pairs = hs.hours * gaps.shape[0] * len(conns)
    seconds = t2 - t0
    load = os.getloadavg()[0] if hasattr(os, "getloadavg") else float("nan")
    print(f"hours={hs.hours} stacks={gaps.shape[0]} connections={','.join(conns)}")
    print(f"weather+spectra+temperature_s={t1 - t0:.2f} engine_s={t2 - t1:.2f}")
    print(
        f"best series stack {gaps[best, 0] / EV:.2f}/{gaps[best, 1] / EV:.2f} eV: "
        f"{e[best]:.1f} kWh m^-2 yr^-1 "
        f"(POA {res.poa_bins_Wh_m2.sum() / 1000:.1f} kWh m^-2 yr^-1)"
    )
    print(
        f"load_average_1min={load:.2f} cpus={os.cpu_count()} process_cpu_s={cpu:.2f} "
        "(CPU time of all threads; on a shared machine wall time exceeds the idle figure)"
    )
    print(f"stack_hours_per_s={pairs / seconds:.4g} seconds={seconds:.3f}")
    return 0


def search_benchmark() -> int:
    """Yield-optimal top gap on a 1.12 eV bottom cell (series), whole computation."""
    t0 = time.perf_counter()
    from gapmatch.energy import site_spectra
    from gapmatch.energy.objective import AnnualEnergyObjective
    from gapmatch.search import make_problem, optimise

    hs = site_spectra(demo_weather_path(), tilt_deg=36.0)
    obj = AnnualEnergyObjective(hs, "series", representatives=36, seed=0)
    problem = make_problem(2, "series", fixed_eV={2: 1.12}, objective=obj)
    res = optimise(problem, storage=":memory:", trials=60, global_samples=1024, progress=False)
    top = float(res.best["gaps_eV"][0])
    full = obj.full_year().evaluate([[top, 1.12]]).value[0]
    err = float(obj.reduction_error([[top, 1.12]])[0])
    seconds = time.perf_counter() - t0
    print(f"yield-optimal top gap {top:.4f} eV on 1.12 eV: {full:.1f} kWh m^-2 yr^-1 (full year)")
    print(f"search_seconds={seconds:.3f} top_gap_eV={top:.4f} reduction_error={err:.2e}")
    return 0


if __name__ == "__main__":
    sys.exit(main())

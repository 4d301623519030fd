"""Benchmark: a 401 x 401 annual-energy map on a 2-worker Dask LocalCluster vs one process.

The map is what ``gapmatch map --weather demo --tilt 36`` computes (series and
independent annual energy of every tandem of the grid, the AM1.5G reference of each),
at the Greensboro TMY3 sample shipped with pvlib (NREL open data), every daylight hour
unless ``--hour-step`` thins them. The spectra are modelled once (not timed); then the
map is timed in this process (``client=None``) and on a LocalCluster of two
single-threaded worker processes (cluster start-up and a warm-up map that loads the
compiled kernels in the workers timed separately), and the two maps are checked to be
bit-identical.

On a 2-core machine the cluster is not expected to be faster: the single process
already uses both cores (the compiled series kernel runs in parallel), so the figure of
merit is the overhead, expected at most 1.2x. The point is that the same code runs on a
real cluster. The machine is shared, so the load average is printed before and after.

The last line is ``one_process_s=<float> cluster_s=<float> ratio=<float>``.

Usage::

    .venv/bin/python benchmarks/yield_cluster.py [--points 401] [--hour-step 1]
        [--workers 2] [--chunk-stacks 4096]
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

from gapmatch.cluster import connect  # noqa: E402
from gapmatch.energy import demo_weather_path, site_spectra  # noqa: E402
from gapmatch.energy.maps import yield_map  # noqa: E402


def _load() -> str:
    a, b, c = os.getloadavg()
    return f"{a:.2f} {b:.2f} {c:.2f}"


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--points", type=int, default=401, help="grid points per axis (default 401)")
    ap.add_argument("--hour-step", type=int, default=1, help="use every k-th hour (default 1)")
    ap.add_argument("--workers", type=int, default=2, help="LocalCluster workers (default 2)")
    ap.add_argument("--chunk-stacks", type=int, default=4096, help="stacks per chunk")
    args = ap.parse_args(argv)
    k = args.points
    top, bottom = (1.3, 2.1), (0.7, 1.5)
    step = (top[1] - top[0]) / (k - 1)
    hs = site_spectra(demo_weather_path(), tilt_deg=36.0)
    if args.hour_step > 1:
        hs = hs.take(slice(0, hs.hours, args.hour_step))
    hs.photon_table()  # built once, as both runs would
    print(f"hours={hs.hours} grid={k}x{k} step_eV={step:.4g} cpus={os.cpu_count()}")
    yield_map(hs, top, bottom, 0.4)  # warm-up (compiled kernels loaded), not timed
    print(f"load_before={_load()}")
    t0 = time.perf_counter()
    here = yield_map(hs, top, bottom, step, chunk_stacks=args.chunk_stacks)
    t1 = time.perf_counter()
    print(f"one process: {t1 - t0:.2f} s, load={_load()}")
    s0 = time.perf_counter()
    with connect(f"local:{args.workers}") as client:
        w0 = time.perf_counter()
        yield_map(hs, top, bottom, 0.4, client=client)  # warm-up of the workers, not timed
        s1 = time.perf_counter()
        print(f"worker warm-up: {s1 - w0:.2f} s")
        there = yield_map(hs, top, bottom, step, chunk_stacks=args.chunk_stacks, client=client)
        s2 = time.perf_counter()
    print(
        f"cluster start-up and warm-up: {s1 - s0:.2f} s; "
        f"map on {args.workers} workers: {s2 - s1:.2f} s"
    )
    print(f"load_after={_load()}")
    same = all(
        np.array_equal(here.energy_kWh_m2[c], there.energy_kWh_m2[c], equal_nan=True)
        for c in ("series", "independent")
    )
    stacks = int(np.isfinite(here.energy_kWh_m2["series"]).sum())
    print(f"stacks={stacks} stack_hours={stacks * hs.hours} bit_identical={same}")
    print(f"one_process_s={t1 - t0:.3f} cluster_s={s2 - s1:.3f} ratio={(s2 - s1) / (t1 - t0):.3f}")
    return 0 if same else 1


if __name__ == "__main__":
    sys.exit(main())

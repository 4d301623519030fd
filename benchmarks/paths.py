"""Per-stack cost of each physics path of the engine, relative to the ideal series path.

Random two-junction stacks (top 1.3-2.3 eV over bottom 0.7-1.3 eV) under AM1.5G at 300 K,
evaluated at the engine level on one thread:

* ``ideal-series``, ``ideal-independent`` -- ``solve_stacks`` with the Boltzmann dark
  current (the fast path; ``ideal-series`` is the unit of ``relative_to_ideal``);
* ``bose-einstein`` -- series connection with the exact Bose-Einstein dark current;
* ``voltage-matched-auto`` -- voltage matching, the best cells-per-string ratio chosen per
  stack among the small-integer candidates;
* ``finite-absorber`` -- ``solve_stacks_nonideal`` with direct-gap absorbers of 2 um
  (square-root edge, alpha 5e4 cm^-1 1 eV above the gap), series connection;
* ``coupling-independent`` -- ``solve_stacks_nonideal`` with luminescent coupling
  (fraction 0.5, refractive index 3.5), independent connection.

Every path is timed with the same policy: ``--repeats`` interleaved rounds, median kept,
on the wall clock or (``--clock cpu``) the process's CPU time.
Batch sizes differ per path (slow paths get fewer stacks so a round stays short); the
figures are per stack. The last lines are one per path:
``path=NAME stacks_per_s=X relative_to_ideal=R`` with ``R`` the path's time per stack
over the ideal series path's.

Usage::

    .venv/bin/python benchmarks/paths.py [--stacks 100000] [--repeats 5]
"""

from __future__ import annotations

import argparse
import os
import statistics
import sys
import time
from pathlib import Path

import numpy as np

HERE = Path(__file__).resolve().parent
sys.path.insert(0, str(HERE.parent))

import gapmatch as gm  # noqa: E402
from gapmatch.core import connections, kernels  # noqa: E402
from gapmatch.core.absorption import DirectGapAbsorption  # noqa: E402
from gapmatch.core.engine import DeviceModel, solve_stacks, solve_stacks_nonideal  # noqa: E402
from gapmatch.units import EV  # noqa: E402


def random_stacks(m: int, seed: int = 0) -> np.ndarray:
    """Random two-junction stacks [J], top 1.3-2.3 eV over bottom 0.7-1.3 eV."""
    rng = np.random.default_rng(seed)
    return np.column_stack([rng.uniform(1.3, 2.3, m), rng.uniform(0.7, 1.3, m)]) * EV


def paths(spectrum, stacks: int) -> dict:
    """``name -> (batch size, callable)`` for every path."""
    direct = DirectGapAbsorption(alpha0_per_m=5e4 * 100.0)
    finite = DeviceModel(absorbers=(direct, direct), thickness_m=2e-6)
    coupled = DeviceModel(coupling_fraction=0.5, refractive_index=3.5)

    def engine(g, **kw):
        return lambda: solve_stacks(g, spectrum, threads=1, **kw)

    def nonideal(g, conn, device):
        return lambda: solve_stacks_nonideal(g, spectrum, conn, device, threads=1)

    g_big = random_stacks(stacks)
    g_mid = random_stacks(max(stacks // 10, 1000), seed=1)
    g_small = random_stacks(max(stacks // 100, 200), seed=2)
    return {
        "ideal-series": (g_big.shape[0], engine(g_big, connection="series")),
        "ideal-independent": (g_big.shape[0], engine(g_big, connection="independent")),
        "bose-einstein": (
            g_mid.shape[0],
            engine(g_mid, connection="series", dark_model="bose-einstein"),
        ),
        "voltage-matched-auto": (g_mid.shape[0], engine(g_mid, connection="voltage-matched")),
        "finite-absorber": (g_small.shape[0], nonideal(g_small, "series", finite)),
        "coupling-independent": (g_mid.shape[0], nonideal(g_mid, "independent", coupled)),
    }


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--stacks", type=int, default=100_000, help="stacks of the fast paths")
    ap.add_argument("--repeats", type=int, default=5, help="interleaved rounds (median kept)")
    ap.add_argument(
        "--clock",
        choices=("wall", "cpu"),
        default="wall",
        help="wall clock, or the process's CPU time (steadier on a shared machine; every "
        "path runs on one thread)",
    )
    args = ap.parse_args(argv)
    clock = time.perf_counter if args.clock == "wall" else time.process_time
    load = os.getloadavg()
    print(f"load: {load[0]:.2f} {load[1]:.2f} (1 and 5 min), {os.cpu_count()} CPUs")
    print(f"compiled kernels: {'in use' if kernels.available() else 'unavailable (numpy path)'}")
    print(f"clock: {args.clock}")
    spectrum = gm.standard_spectrum("AM1.5G")
    todo = paths(spectrum, args.stacks)
    # warm-up: imports, caches, compiled kernels (loaded first: the ideal series kernel
    # runs only in a process that has numba loaded, see kernels.for_light)
    connections.warm_up_kernels()
    for _, fn in todo.values():
        fn()
    times = {k: [] for k in todo}
    for _ in range(args.repeats):
        for name, (_, fn) in todo.items():
            t0 = clock()
            fn()
            times[name].append(clock() - t0)
    per_stack = {k: statistics.median(times[k]) / todo[k][0] for k in todo}
    for k in todo:
        print(
            f"{k}: {todo[k][0]} stacks, median {statistics.median(times[k]):.4f} s, "
            f"best {min(times[k]):.4f} s of {args.repeats} interleaved rounds"
        )
    unit = per_stack["ideal-series"]
    # the ideal series path on numpy alone (kernels off): the unit before the ideal path
    # had a compiled kernel, for comparison with figures measured against that unit
    g_np, fn_np = todo["ideal-series"]
    t_np = []
    with kernels.disabled():
        fn_np()
        for _ in range(args.repeats):
            t0 = clock()
            fn_np()
            t_np.append(clock() - t0)
    unit_np = statistics.median(t_np) / g_np
    print(
        f"unit: ideal-series {unit * 1e9:.0f} ns/stack; on numpy alone {unit_np * 1e9:.0f} "
        "ns/stack, against which: "
        + ", ".join(f"{k} {per_stack[k] / unit_np:.2f}" for k in todo if k != "ideal-series")
    )
    for k in todo:
        rel = per_stack[k] / unit
        print(f"path={k} stacks_per_s={1.0 / per_stack[k]:.1f} relative_to_ideal={rel:.2f}")
    return 0


if __name__ == "__main__":
    sys.exit(main())

"""Benchmark of the batch detailed-balance engine against a per-stack reference.

(a) times the vectorised evaluation of random two-junction series stacks under AM1.5G
    (``gapmatch.core.engine.solve_stacks``, best of several repeats);
(b) times a straightforward reference that evaluates each stack on its own: photocurrents
    from the spectrum, then ``scipy.optimize.minimize_scalar`` on the string power;
and checks that both agree (maximum power to 1e-9 relative). Further measured figures
(maps, search) are printed by the benchmark modules beside this file when present.

The last line is exactly ``stacks_per_s=<float> reference_per_s=<float> ratio=<float>``.

Usage::

    .venv/bin/python benchmarks/engine.py [--stacks 200000] [--reference 2000] [--quick]
"""

from __future__ import annotations

import argparse
import importlib.util
import sys
import time
from pathlib import Path

import numpy as np
from scipy import optimize

HERE = Path(__file__).resolve().parent
sys.path.insert(0, str(HERE.parent))

import gapmatch as gm  # noqa: E402
from gapmatch.core.diodes import ln_j0_radiative  # noqa: E402
from gapmatch.core.engine import solve_stacks  # noqa: E402
from gapmatch.units import EV, K_B, Q  # noqa: E402


def random_stacks(m: int, seed: int = 0) -> np.ndarray:
    """Random two-junction stacks [eV], top 1.3-2.3 eV over bottom 0.7-1.3 eV."""
    rng = np.random.default_rng(seed)
    return np.column_stack([rng.uniform(1.3, 2.3, m), rng.uniform(0.7, 1.3, m)])


def reference_power(gaps_ev: np.ndarray, spectrum, t_k: float = 300.0) -> float:
    """One stack, straightforwardly: photocurrents, J0, bounded scalar maximisation."""
    e = gaps_ev * EV
    f_top, f_bot = spectrum.photon_flux_above(e)
    jph = np.array([Q * f_top, Q * (f_bot - f_top)])
    j0 = np.exp(ln_j0_radiative(e, t_k))
    vt = K_B * t_k / Q

    def neg_power(j):
        return -j * np.sum(vt * np.log1p((jph - j) / j0))

    r = optimize.minimize_scalar(
        neg_power, bounds=(0.0, jph.min()), method="bounded", options={"xatol": 1e-10 * jph.min()}
    )
    return -r.fun


def _load(name: str):
    """Import a benchmark module beside this file by path (their names are generic)."""
    spec = importlib.util.spec_from_file_location(f"gapmatch_bench_{name}", HERE / f"{name}.py")
    mod = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(mod)
    return mod


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--stacks", type=int, default=200_000, help="stacks in the batch (>=100000)")
    ap.add_argument("--reference", type=int, default=2_000, help="stacks in the reference run")
    ap.add_argument("--repeats", type=int, default=5, help="batch repeats (best is kept)")
    ap.add_argument("--quick", action="store_true", help="skip the slow search benchmark")
    args = ap.parse_args(argv)
    if args.stacks < 100_000:
        ap.error("--stacks must be at least 100000")

    spectrum = gm.standard_spectrum("AM1.5G")
    gaps = random_stacks(args.stacks)
    gaps_j = gaps * EV
    solve_stacks(gaps_j[:1000], spectrum, "series")  # warm-up (imports, caches)
    best = np.inf
    for _ in range(args.repeats):
        t0 = time.perf_counter()
        sol = solve_stacks(gaps_j, spectrum, "series")
        best = min(best, time.perf_counter() - t0)
    stacks_per_s = args.stacks / best

    n_ref = min(args.reference, args.stacks)
    t0 = time.perf_counter()
    ref = np.array([reference_power(g, spectrum) for g in gaps[:n_ref]])
    t_ref = time.perf_counter() - t0
    reference_per_s = n_ref / t_ref
    rel = np.abs(sol.op.p_mpp[:n_ref] - ref) / ref
    print(f"batch: {args.stacks} stacks in {best:.4f} s (best of {args.repeats})")
    print(
        f"reference: {n_ref} stacks in {t_ref:.3f} s; max relative difference in P_mpp "
        f"{rel.max():.2e}"
    )
    if rel.max() > 1e-9:
        print("FAIL: batch and reference disagree beyond 1e-9", file=sys.stderr)
        return 1

    # second measured figure: a 201 x 201 two-junction map, series + independent
    t_map = _load("maps").measure()
    print(f"map: 201 x 201 two-junction map, series + independent, in {t_map:.3f} s (target < 1 s)")
    search_ok = True
    if not args.quick:
        print("search: N = 2..6 under AM1.5G against a differential-evolution reference")
        rows = _load("search").measure(verbose=True)
        search_ok = all(r["ok"] for r in rows)
        if not search_ok:
            print("FAIL: a search case missed its accuracy or time target", file=sys.stderr)

    print(
        f"stacks_per_s={stacks_per_s:.1f} reference_per_s={reference_per_s:.1f} "
        f"ratio={stacks_per_s / reference_per_s:.1f}"
    )
    return 0


if __name__ == "__main__":
    sys.exit(main())

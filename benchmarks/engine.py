"""Benchmark of the batch detailed-balance engine against two per-stack references.

Contenders, all on random two-junction series stacks under AM1.5G at 300 K:

* ``engine-1-thread`` -- ``gapmatch.core.engine.solve_stacks(..., threads=1)`` on the batch;
* ``engine-all-threads`` -- the same with one worker thread per CPU;
* ``reference-math`` -- a researcher's per-stack loop in plain ``math``: photocurrents from
  the spectrum's own trapezoid tables by bisection, ``J0`` in closed form, and
  ``scipy.optimize.brentq`` on ``dP/dJ`` (one thread);
* ``reference-numpy`` -- a per-stack loop that calls numpy on two-element arrays inside
  ``scipy.optimize.minimize_scalar`` on the string power (one thread).

Every contender is timed with the same policy: ``--repeats`` rounds, interleaved (each
round runs every contender once, in the same order), and the median of each contender's
rounds is reported (the best round beside it). Both references must agree with the engine
on the maximum power to 1e-9 relative, or the script fails.

The compiled kernels' first-compile time (empty cache, fresh process) and the cached load
time (second fresh process) are measured in subprocesses and printed.

Then the engine again after ``gapmatch.retain_freed_memory()`` (glibc keeps freed memory
for reuse, as the command line runs; a process-wide setting, so measured last).

The last line is exactly ``stacks_per_s=<float> reference_per_s=<float> ratio=<float>``:
``stacks_per_s`` is the 1-thread engine, ``reference_per_s`` the *faster* reference.

Usage::

    .venv/bin/python benchmarks/engine.py [--stacks 200000] [--reference 2000] [--quick]
"""

from __future__ import annotations

import argparse
import bisect
import importlib.util
import math
import os
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import numpy as np
from scipy import optimize

HERE = Path(__file__).resolve().parent
ROOT = HERE.parent
sys.path.insert(0, str(ROOT))

import gapmatch as gm  # noqa: E402
from gapmatch.core import connections, kernels  # noqa: E402
from gapmatch.core.diodes import ln_j0_radiative  # noqa: E402
from gapmatch.core.engine import solve_stacks  # noqa: E402
from gapmatch.core.planck import PLANCK_PREFACTOR  # noqa: E402
from gapmatch.units import EV, K_B, C, H, Q  # noqa: E402


def random_stacks(m: int, seed: int = 0) -> np.ndarray:
    """Random two-junction stacks [eV], top 1.3-2.3 eV over bottom 0.7-1.3 eV."""
    rng = np.random.default_rng(seed)
    return np.column_stack([rng.uniform(1.3, 2.3, m), rng.uniform(0.7, 1.3, m)])


# ---------------------------------------------------------------------------------------
# reference (b): numpy on two-element arrays inside a bounded scalar maximisation
# ---------------------------------------------------------------------------------------
def reference_numpy(gaps_ev: np.ndarray, spectrum, t_k: float = 300.0) -> float:
    """One stack with numpy: photocurrents, J0, bounded scalar maximisation of P(J)."""
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


# ---------------------------------------------------------------------------------------
# reference (a): plain math and brentq on dP/dJ
# ---------------------------------------------------------------------------------------
class MathReference:
    """A per-stack solver in plain Python ``math`` (no numpy inside the loop).

    The photon flux above an energy is the exact integral of the piecewise-linear photon
    flux per nm between the tabulated wavelengths (the spectrum's trapezoid rule), found
    by bisection in Python lists built once from the spectrum's public table.
    """

    def __init__(self, spectrum, t_k: float = 300.0) -> None:
        wl = np.asarray(spectrum.wavelength_nm, float)
        irr = np.asarray(spectrum.irradiance_W_m2_nm, float)
        phi = irr * wl * 1e-9 / (H * C)
        cum = np.concatenate(([0.0], np.cumsum(0.5 * np.diff(wl) * (phi[1:] + phi[:-1]))))
        self.wl, self.phi, self.cum = wl.tolist(), phi.tolist(), cum.tolist()
        self.vt = K_B * t_k / Q
        self.kt = K_B * t_k
        self.ln_pref = math.log(Q * PLANCK_PREFACTOR * self.kt**3)

    def flux_above(self, e_j: float) -> float:
        wl, phi, cum = self.wl, self.phi, self.cum
        lam = min(max(H * C / e_j * 1e9, wl[0]), wl[-1])
        k = min(bisect.bisect_right(wl, lam) - 1, len(wl) - 2)
        x = lam - wl[k]
        slope = (phi[k + 1] - phi[k]) / (wl[k + 1] - wl[k])
        return cum[k] + x * (phi[k] + 0.5 * x * slope)

    def power(self, e_top_ev: float, e_bot_ev: float) -> float:
        e1, e2 = e_top_ev * EV, e_bot_ev * EV
        f1 = self.flux_above(e1)
        f2 = max(self.flux_above(e2), f1)
        jph = (Q * f1, Q * (f2 - f1))
        j0 = []
        for e in (e1, e2):
            x = e / self.kt
            j0.append(math.exp(self.ln_pref + math.log(x * x + 2.0 * x + 2.0) - x))
        vt = self.vt

        def dpdj(j):
            s = 0.0
            s1 = 0.0
            for a, b in zip(jph, j0, strict=True):
                s += vt * math.log1p((a - j) / b)
                s1 += vt / (a - j + b)
            return s - j * s1

        jmin = min(jph)
        j = optimize.brentq(dpdj, 0.0, jmin, xtol=1e-12 * jmin)
        return j * sum(vt * math.log1p((a - j) / b) for a, b in zip(jph, j0, strict=True))


def _load(name: str):
    """Import a benchmark module beside this file by path (their names are generic)."""
    spec = importlib.util.spec_from_file_location(f"gapmatch_bench_{name}", HERE / f"{name}.py")
    mod = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(mod)
    return mod


_COMPILE_SNIPPET = """
import time
import numpy as np
import gapmatch
from gapmatch.core import connections, kernels
from gapmatch.core.absorption import DirectGapAbsorption
from gapmatch.core.engine import DeviceModel, solve_stacks_nonideal
g = np.array([[1.8, 1.1], [1.6, 0.9]]) * 1.602176634e-19
sun = gapmatch.standard_spectrum("AM1.5G")
t = time.perf_counter()
ok = connections.warm_up_kernels()
with kernels.everywhere():  # the coupled independent solve and the finite-absorber optics
    solve_stacks_nonideal(g, sun, "independent", DeviceModel(coupling_fraction=0.5))
    a = DirectGapAbsorption(5e6)
    solve_stacks_nonideal(g, sun, "series", DeviceModel(absorbers=(a, a), thickness_m=2e-6))
print(ok, time.perf_counter() - t)
"""


def compile_times() -> tuple[float, float] | None:
    """First-compile and cached-load seconds of the compiled kernels (fresh processes,
    after ``import gapmatch``; numba's own import is included).

    Returns ``None`` when the compiled kernels are unavailable (numba missing or disabled).
    """
    if not kernels.available():
        return None
    out = []
    with tempfile.TemporaryDirectory() as cache:
        env = dict(os.environ, NUMBA_CACHE_DIR=cache, PYTHONPATH=str(ROOT))
        for _ in range(2):
            r = subprocess.run(
                [sys.executable, "-c", _COMPILE_SNIPPET],
                env=env,
                cwd=ROOT,
                capture_output=True,
                text=True,
                check=True,
            )
            ok, sec = r.stdout.split()
            if ok != "True":
                return None
            out.append(float(sec))
    return out[0], out[1]


def profile_engine(gaps_j: np.ndarray, spectrum, repeats: int) -> None:
    """Where the 1-thread engine's time goes, per stack (median of interleaved rounds)."""
    from gapmatch.core.connections import solve_series
    from gapmatch.core.diodes import make_diodes
    from gapmatch.core.engine import step_photocurrents

    chunk = gaps_j[:32768]  # the engine's work unit
    g = np.asfortranarray(chunk)
    jph = step_photocurrents(g, spectrum)
    parts = {
        "photocurrents (engine.step_photocurrents)": lambda: step_photocurrents(g, spectrum),
        "diodes (diodes.make_diodes)": lambda: make_diodes("boltzmann", jph, g, 300.0, 1.0),
        "series solve (connections.solve_series)": lambda: solve_series(
            make_diodes("boltzmann", jph, g, 300.0, 1.0)
        ),
        "absorbed power (spectrum.power_above)": lambda: spectrum.power_above(g.min(axis=1)),
        "whole engine call": lambda: solve_stacks(chunk, spectrum, "series", threads=1),
    }
    times = timed_rounds(parts, max(repeats, 5))
    for name, ts in times.items():
        print(f"profile: {name}: {statistics.median(ts) / chunk.shape[0] * 1e9:.0f} ns/stack")


def timed_rounds(contenders: dict, repeats: int) -> dict[str, list[float]]:
    """Seconds per round for every contender, rounds interleaved."""
    times = {k: [] for k in contenders}
    for _ in range(repeats):
        for name, fn in contenders.items():
            t0 = time.perf_counter()
            fn()
            times[name].append(time.perf_counter() - t0)
    return times


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--stacks", type=int, default=200_000, help="stacks in the batch (>=100000)")
    ap.add_argument("--reference", type=int, default=2_000, help="stacks in each reference run")
    ap.add_argument("--repeats", type=int, default=5, help="interleaved rounds (median kept)")
    ap.add_argument("--quick", action="store_true", help="skip the slow search benchmark")
    args = ap.parse_args(argv)
    if args.stacks < 100_000:
        ap.error("--stacks must be at least 100000")

    print(
        f"load: {os.getloadavg()[0]:.2f} {os.getloadavg()[1]:.2f} (1 and 5 min), "
        f"{os.cpu_count()} CPUs"
    )
    ct = compile_times()
    if ct is None:
        print("compiled kernels: unavailable (numba missing or GAPMATCH_NO_JIT set); numpy path")
    else:
        print(
            f"compiled kernels: first compile {ct[0]:.2f} s (empty cache, fresh process), "
            f"cached load {ct[1]:.2f} s (second fresh process)"
        )

    spectrum = gm.standard_spectrum("AM1.5G")
    gaps = random_stacks(args.stacks)
    gaps_j = gaps * EV
    n_ref = min(args.reference, args.stacks)
    ref_gaps = gaps[:n_ref]
    math_ref = MathReference(spectrum)
    # warm-up: imports, caches, and the compiled kernels loaded (their load time is the
    # "cached load" above; the series kernel only runs once numba is in the process)
    connections.warm_up_kernels()
    solve_stacks(gaps_j[:1000], spectrum, "series")
    out = {}

    def engine(threads):
        def run():
            out[threads] = solve_stacks(gaps_j, spectrum, "series", threads=threads)

        return run

    def ref_math():
        out["math"] = np.array([math_ref.power(a, b) for a, b in ref_gaps])

    def ref_numpy():
        out["numpy"] = np.array([reference_numpy(g, spectrum) for g in ref_gaps])

    contenders = {
        "engine-1-thread": engine(1),
        "engine-all-threads": engine(None),
        "reference-math": ref_math,
        "reference-numpy": ref_numpy,
    }
    sizes = {
        "engine-1-thread": args.stacks,
        "engine-all-threads": args.stacks,
        "reference-math": n_ref,
        "reference-numpy": n_ref,
    }
    times = timed_rounds(contenders, args.repeats)
    rate = {}
    for name, ts in times.items():
        med = statistics.median(ts)
        rate[name] = sizes[name] / med
        print(
            f"{name}: {sizes[name]} stacks, median {med:.4f} s, best {min(ts):.4f} s "
            f"of {args.repeats} interleaved rounds -> {rate[name]:.4g} stacks/s"
        )
    p = out[1].op.p_mpp
    if not np.array_equal(p, out[None].op.p_mpp):
        print("FAIL: 1-thread and all-thread results differ", file=sys.stderr)
        return 1
    worst = 0.0
    for name in ("math", "numpy"):
        rel = np.abs(p[:n_ref] - out[name]) / out[name]
        worst = max(worst, rel.max())
        print(f"reference-{name}: max relative difference in P_mpp {rel.max():.2e}")
    if worst > 1e-9:
        print("FAIL: engine and a reference disagree beyond 1e-9", file=sys.stderr)
        return 1
    print(
        "engine-all-threads / engine-1-thread: "
        f"{rate['engine-all-threads'] / rate['engine-1-thread']:.2f}x; "
        f"reference-math / reference-numpy: {rate['reference-math'] / rate['reference-numpy']:.2f}x"
    )

    profile_engine(gaps_j, spectrum, args.repeats)

    # second measured figure: a 201 x 201 two-junction map, series + independent
    t_map = _load("maps").measure()
    print(f"map: 201 x 201 two-junction map, series + independent, in {t_map:.3f} s (target < 1 s)")
    if not args.quick:
        print("search: N = 2..6 under AM1.5G against a differential-evolution reference")
        rows = _load("search").measure(verbose=True)
        if not all(r["ok"] for r in rows):
            print("FAIL: a search case missed its accuracy or time target", file=sys.stderr)

    x = rate["engine-1-thread"]
    y = max(rate["reference-math"], rate["reference-numpy"])
    # last: the same engine with freed memory kept for reuse, as the command line runs
    # it (a process-wide setting that cannot be undone, hence after everything else)
    if gm.retain_freed_memory():
        kept = timed_rounds(
            {"engine-1-thread": engine(1), "engine-all-threads": engine(None)}, args.repeats
        )
        for name, ts in kept.items():
            r = args.stacks / statistics.median(ts)
            print(
                f"{name}, freed memory retained (gapmatch.retain_freed_memory, as the "
                f"command line): median {statistics.median(ts):.4f} s -> {r:.4g} stacks/s, "
                f"{r / y:.1f}x the faster reference"
            )
    else:
        print("freed memory retained: not available here (no glibc mallopt)")
    print(f"stacks_per_s={x:.1f} reference_per_s={y:.1f} ratio={x / y:.1f}")
    return 0


if __name__ == "__main__":
    sys.exit(main())

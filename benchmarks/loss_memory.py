"""Peak memory of batch evaluations with the loss breakdown, per stack and junction.

Measures the traced peak (``tracemalloc``: numpy's allocations included) of
``gapmatch.evaluate(..., losses=True)`` for batches of random 2- and 3-junction stacks on
the ideal path and on the finite-absorber path, and compares it with the estimate that
``gapmatch.api`` uses to refuse batches above the memory limit
(``LOSS_BYTES_PER_STACK_JUNCTION``). Last line: ``max_bytes_per_stack_junction=<float>``
(ideal path; the finite-absorber path adds a fixed share per work unit, shown beside
the estimate).

    python benchmarks/loss_memory.py [--stacks 20000]
"""

from __future__ import annotations

import argparse
import tracemalloc

import numpy as np

import gapmatch as gm
from gapmatch.api import LOSS_BYTES_PER_STACK_JUNCTION, loss_memory_estimate_bytes


def peak_per_stack_junction(m: int, n: int, **physics) -> float:
    rng = np.random.default_rng(1)
    gaps = -np.sort(-rng.uniform(0.6, 2.4, (m, n)), axis=1)
    tracemalloc.start()
    gm.evaluate(gaps, "series", losses=True, **physics)
    _, peak = tracemalloc.get_traced_memory()
    tracemalloc.stop()
    return peak / (m * n)


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--stacks", type=int, default=20000)
    m = ap.parse_args().stacks
    gm.evaluate([1.7, 1.1], losses=True)  # warm the caches (G173 table, kernels)
    worst = 0.0
    print(f"estimate used by gapmatch.api: {LOSS_BYTES_PER_STACK_JUNCTION} B per stack-junction")
    for n in (2, 3):
        for label, kw in (
            ("ideal", {}),
            ("finite absorber", {"absorber": "direct", "thickness_nm": 1000.0}),
        ):
            b = peak_per_stack_junction(m, n, **kw)
            est = loss_memory_estimate_bytes(m, n, finite=bool(kw)) / (m * n)
            if not kw:
                worst = max(worst, b)
            print(
                f"{n}J {label:16s} {m:>8,} stacks: {b:9.1f} B per stack-junction "
                f"(estimate {est:9.1f})"
            )
    print(f"max_bytes_per_stack_junction={worst:.1f}")


if __name__ == "__main__":
    main()

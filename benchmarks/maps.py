"""Benchmark: a 201 x 201 two-junction map (0.5-2.5 eV, 0.01 eV) for series and
independent connection at once, AM1.5G (target: under 1 s on the 2-core machine), and
the same map with voltage matching and the automatic cells-per-string ratio (target
0.5 s).

    python benchmarks/maps.py          # prints timings, last line map_201x201_s=<float>

:func:`measure` returns the best wall time [s] of a few repeats, for use from
``benchmarks/engine.py``.
"""

from __future__ import annotations

import sys
import time
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))

from gapmatch.io.spectra import standard_spectrum  # noqa: E402
from gapmatch.maps import compute_map  # noqa: E402


def measure(repeats: int = 3, connections=("series", "independent")) -> float:
    """Best wall time [s] of ``repeats`` 201 x 201 maps of ``connections`` (default
    series + independent; ``("voltage-matched",)`` chooses the ratio per point).

    The spectrum is loaded (and the code warmed up) once beforehand; each timed run
    includes input validation, the grid and every connection's engine calls.
    """
    spec = standard_spectrum("AM1.5G")
    compute_map(connections, spectrum=spec, x_range_eV=(1.0, 1.2), step_eV=0.1)  # warm-up
    best = float("inf")
    for _ in range(repeats):
        t0 = time.perf_counter()
        m = compute_map(connections, x_range_eV=(0.5, 2.5), step_eV=0.01, spectrum=spec)
        best = min(best, time.perf_counter() - t0)
        assert m.shape == (201, 201)
    return best


if __name__ == "__main__":
    tv = measure(connections=("voltage-matched",))
    print(f"201 x 201 voltage-matched map, automatic ratio: {tv:.3f} s (target 0.5 s)")
    print(f"map_201x201_voltage_matched_s={tv:.4f}")
    t = measure()
    print(f"201 x 201 two-junction map, series + independent: {t:.3f} s (target < 1 s)")
    print(f"map_201x201_s={t:.4f}")

"""Whole-process time of the 801 x 801 map command, and where it goes.

    python benchmarks/map_command.py [--repeats 5] [--step 0.0025]

Times ``gapmatch map --step STEP --out TMP/m`` (series + independent, two-junction,
AM1.5G; 801 x 801 points at the default step) as a whole process, ``--repeats`` times,
median kept (target 2 s). Then, in this process, the phases of the same work: imports,
the two maps, the columns, the CSV text (gapmatch's formatter and, as the honest
baseline, ``pandas.DataFrame.to_csv(float_format="%.6g")`` of the same table, which
gives the same bytes), and the write. The machine may be shared: the load average is
printed first. Last line: ``map_801x801_command_s=<median>``.
"""

from __future__ import annotations

import argparse
import os
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]


def _command(step: float, out: Path) -> float:
    t0 = time.perf_counter()
    subprocess.run(
        [sys.executable, "-m", "gapmatch", "map", "--step", str(step), "--out", str(out)],
        cwd=ROOT,
        check=True,
        capture_output=True,
    )
    return time.perf_counter() - t0


def _phases(step: float, out: Path) -> list[tuple[str, float]]:
    code = f"""
import time
t0 = time.perf_counter()
import numpy as np
from gapmatch.maps import compute_map
from gapmatch.io.csv_fast import columns_csv
t1 = time.perf_counter()
m = compute_map(step_eV={step!r})
t2 = time.perf_counter()
cols = m.columns()
t3 = time.perf_counter()
text = columns_csv(cols)
t4 = time.perf_counter()
with open({str(out)!r}, "w") as fh:
    fh.write(text)
t5 = time.perf_counter()
import pandas as pd
frame = pd.DataFrame(cols)
t6 = time.perf_counter()
assert frame.to_csv(index=False, float_format="%.6g") == text
t7 = time.perf_counter()
print(t1 - t0, t2 - t1, t3 - t2, t4 - t3, t5 - t4, t7 - t6)
"""
    res = subprocess.run(
        [sys.executable, "-c", code], cwd=ROOT, check=True, capture_output=True, text=True
    )
    v = [float(x) for x in res.stdout.split()]
    names = [
        "imports (numpy, scipy.special, gapmatch core)",
        "series + independent maps",
        "columns (mismatch ratios, difference)",
        "CSV text, gapmatch (incl. numba start-up)",
        "write",
        "CSV text, pandas to_csv (baseline, same bytes)",
    ]
    return list(zip(names, v, strict=True))


def main() -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--repeats", type=int, default=5)
    ap.add_argument("--step", type=float, default=0.0025)
    a = ap.parse_args()
    load = os.getloadavg()
    print(f"load: {load[0]:.2f} {load[1]:.2f} (1 and 5 min), {os.cpu_count()} CPUs")
    with tempfile.TemporaryDirectory() as tmp:
        out = Path(tmp) / "m"
        _command(a.step, out)  # warm-up: compiled-code cache, page cache
        times = [_command(a.step, out) for _ in range(a.repeats)]
        for name, t in _phases(a.step, Path(tmp) / "phases.csv"):
            print(f"{name}: {t:.3f} s")
    med = statistics.median(times)
    print(f"whole command: median {med:.3f} s, best {min(times):.3f} s of {a.repeats}")
    print(f"map_801x801_command_s={med:.3f}")
    return 0


if __name__ == "__main__":
    sys.exit(main())

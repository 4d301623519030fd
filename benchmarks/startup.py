"""Start-up time of the command line, whole process (interpreter start included).

    python benchmarks/startup.py [--repeats 7] [--no-write]

Runs each command ``--repeats`` times with the interpreter running this script (use the
project's virtual environment), from the source tree, and reports the median wall time
against its target:

* ``gapmatch --help``                            target 0.3 s
* ``gapmatch evaluate --gaps 1.63 0.96 --json``  target 0.8 s

For context it also times ``python -c pass`` and ``python -c "import numpy,
scipy.special"`` (the floor any evaluation pays) and notes the load average, since the
machine may be shared. The table is written into ``benchmarks/README.md`` between the
``startup`` markers (``--no-write`` only prints it).
"""

from __future__ import annotations

import argparse
import os
import statistics
import subprocess
import sys
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
README = ROOT / "benchmarks" / "README.md"
BEGIN, END = "<!-- startup:begin -->", "<!-- startup:end -->"

CASES = [
    ("python -c pass (interpreter only)", ["-c", "pass"], None),
    ("python -c 'import numpy, scipy.special'", ["-c", "import numpy, scipy.special"], None),
    ("gapmatch --help", ["-m", "gapmatch", "--help"], 0.3),
    (
        "gapmatch evaluate --gaps 1.63 0.96 --json",
        ["-m", "gapmatch", "evaluate", "--gaps", "1.63", "0.96", "--json"],
        0.8,
    ),
]


def _time(args: list[str], repeats: int) -> list[float]:
    out = []
    for _ in range(repeats):
        t0 = time.perf_counter()
        subprocess.run([sys.executable, *args], cwd=ROOT, check=True, capture_output=True)
        out.append(time.perf_counter() - t0)
    return out


def main() -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--repeats", type=int, default=7)
    ap.add_argument("--no-write", action="store_true")
    a = ap.parse_args()
    load = os.getloadavg()[0] if hasattr(os, "getloadavg") else float("nan")
    rows = []
    ok = True
    for label, args, target in CASES:
        t = _time(args, a.repeats)
        med = statistics.median(t)
        verdict = "" if target is None else ("met" if med <= target else "MISSED")
        ok &= verdict != "MISSED"
        rows.append((label, med, min(t), max(t), target, verdict))
        print(
            f"{label:45s} median {med:.3f} s (min {min(t):.3f}, max {max(t):.3f})"
            + ("" if target is None else f"  target {target} s: {verdict}")
        )
    lines = [
        BEGIN,
        "### Start-up (whole process)",
        "",
        f"`python benchmarks/startup.py`, {a.repeats} runs each, {os.cpu_count()} CPUs, "
        f"load average {load:.2f} at the start ({time.strftime('%Y-%m-%d', time.gmtime())}).",
        "",
        "| command | median [s] | min [s] | max [s] | target [s] |",
        "|---|---:|---:|---:|---:|",
    ]
    for label, med, lo, hi, target, verdict in rows:
        tgt = "" if target is None else f"{target} ({verdict})"
        lines.append(f"| `{label}` | {med:.3f} | {lo:.3f} | {hi:.3f} | {tgt} |")
    lines.append(END)
    block = "\n".join(lines)
    if not a.no_write:
        text = README.read_text(encoding="utf-8") if README.exists() else "# Benchmarks\n"
        if BEGIN in text:
            head, rest = text.split(BEGIN, 1)
            text = head + block + rest.split(END, 1)[1]
        else:
            text = text.rstrip() + "\n\n" + block + "\n"
        tmp = README.with_suffix(".md.tmp")
        tmp.write_text(text, encoding="utf-8")
        tmp.replace(README)
        print(f"wrote {README}")
    return 0 if ok else 1


if __name__ == "__main__":
    sys.exit(main())

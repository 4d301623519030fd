"""Benchmark of a whole roadmap run: 6 candidates x 3 milestones x 2,000 draws, AM1.5G.

Each case runs in a fresh Python process (imports, study validation, 18 gap searches,
18 batched Monte Carlo evaluations of 2,000 stacks, headroom and sensitivity, ranking
table printed), timed from the outside: wall time and the child's CPU time (user +
system), with the load average before the run (the machine may be shared).

Cases
-----
demo
    ``configs/roadmap-demo.toml`` as shipped: one candidate (all-perovskite) has a finite
    tin-lead absorber with an uncertain thickness, which takes the engine's slower
    absorption path for its design search and its draws.
step absorbers
    The same study without the thickness projections (every junction a step absorber;
    ERE, collection and resistance as in the demo).

site
    The demo study ranked by annual energy at pvlib's Greensboro TMY3 sample site
    (``[site]`` instead of ``[conditions]``; 24 representative spectra, and every
    candidate's likely stack checked on all 4,421 daylight hours at the last milestone).

Targets: at most 10 s whole process under AM1.5G, 60 s with a site.

    python benchmarks/roadmap.py          # one line per case; exit 1 on a missed target
"""

from __future__ import annotations

import os
import re
import resource
import subprocess
import sys
import tempfile
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
DEMO = ROOT / "configs" / "roadmap-demo.toml"
TARGET_S = {"demo": 10.0, "step absorbers": 10.0, "site": 60.0}
SITE = '[site]\nweather = "pvlib:723170TYA.CSV"\ntilt_deg = 30.0\n'

RUN = (
    "import argparse, sys\n"
    "from gapmatch.cli import roadmap\n"
    "p = argparse.ArgumentParser(); s = p.add_subparsers()\n"
    "roadmap.add_parser(s)\n"
    "a = p.parse_args(['roadmap', sys.argv[1], '--quiet'])\n"
    "sys.exit(a.func(a))\n"
)


def _without_thickness(text: str) -> str:
    return re.sub(r"^thickness_nm = .*\n", "", text, flags=re.M)


def _with_site(text: str) -> str:
    text = re.sub(r"^\[conditions\]\n(?:[^\[\n].*\n|\n)*", "", text, flags=re.M)
    return text + "\n" + SITE


def measure(path: Path) -> dict:
    """Wall and CPU seconds of one whole-process run of ``path``."""
    env = dict(os.environ, PYTHONPATH=str(ROOT))
    load = os.getloadavg()[0]
    before = resource.getrusage(resource.RUSAGE_CHILDREN)
    t = time.perf_counter()
    out = subprocess.run(
        [sys.executable, "-c", RUN, str(path)], env=env, capture_output=True, text=True
    )
    wall = time.perf_counter() - t
    after = resource.getrusage(resource.RUSAGE_CHILDREN)
    if out.returncode != 0:
        raise RuntimeError(out.stderr)
    cpu = (after.ru_utime - before.ru_utime) + (after.ru_stime - before.ru_stime)
    return {"wall_s": wall, "cpu_s": cpu, "load": load, "output": out.stdout}


def main() -> int:
    text = DEMO.read_text()
    cases = [("demo", DEMO)]
    with tempfile.TemporaryDirectory() as tmp:
        step = Path(tmp) / "step.toml"
        step.write_text(_without_thickness(text))
        cases.append(("step absorbers", step))
        site = Path(tmp) / "site.toml"
        site.write_text(_with_site(text))
        cases.append(("site", site))
        ok = True
        for name, path in cases:
            r = measure(path)
            hit = r["wall_s"] <= TARGET_S[name]
            ok &= hit
            print(
                f"{name:<15} 6 candidates x 3 milestones x 2000 draws: "
                f"{r['wall_s']:6.2f} s wall, {r['cpu_s']:6.2f} s CPU "
                f"(load {r['load']:.1f} on {os.cpu_count()} cores) "
                f"target {TARGET_S[name]:g} s: {'ok' if hit else 'MISSED'}"
            )
    return 0 if ok else 1


if __name__ == "__main__":
    sys.exit(main())

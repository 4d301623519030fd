"""Record every numeric output of the demo report and of a set of CLI cases, or compare
two such records.

    python tools/compare_outputs.py record DIR      # run the cases, keep their outputs in DIR
    python tools/compare_outputs.py compare A B     # largest relative difference, A vs B

``record`` runs ``python -m gapmatch report configs/demo.toml`` and the ``evaluate``,
``map`` and ``optimise --json`` cases below from the current source tree and stores
stdout and every data file (CSV, JSON) the report writes; the numbers of the report's
figures are read from the page. ``compare`` flattens each JSON
document and CSV table into ``path -> number`` and prints the largest relative
difference over the paths the two records share, with the paths found in only one of
them (renamed keys show up there; a rename table maps old names to new ones).
"""

from __future__ import annotations

import csv
import json
import math
import re
import subprocess
import sys
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]

CASES = {
    "evaluate_2j_series": ["evaluate", "--gaps", "1.63", "0.96", "--json"],
    "evaluate_2j_indep_am0": [
        "evaluate",
        "--gaps",
        "1.8",
        "1.1",
        "--connection",
        "independent",
        "--spectrum",
        "AM0",
        "--json",
    ],
    "evaluate_3j_vm_350K": [
        "evaluate",
        "--gaps",
        "1.9",
        "1.4",
        "0.9",
        "--connection",
        "voltage-matched",
        "--temperature",
        "350",
        "--ere",
        "0.01",
        "--json",
    ],
    "evaluate_bose_conc": [
        "evaluate",
        "--gaps",
        "1.4",
        "--dark-current",
        "bose-einstein",
        "--concentration",
        "500",
        "--spectrum",
        "AM1.5D",
        "--json",
    ],
    "evaluate_blackbody": [
        "evaluate",
        "--gaps",
        "1.7",
        "1.1",
        "--spectrum",
        "blackbody",
        "--sun-temperature",
        "5800",
        "--json",
    ],
    "evaluate_nonideal_losses": [
        "evaluate",
        "--gaps",
        "1.7",
        "1.12",
        "--absorber",
        "direct",
        "step",
        "--thickness",
        "500",
        "--series-resistance",
        "0.5",
        "--json",
    ],
    "evaluate_coupling": [
        "evaluate",
        "--gaps",
        "1.8",
        "1.2",
        "--coupling-fraction",
        "0.5",
        "--json",
    ],
    "map_2j": [
        "map",
        "--x-gap-range",
        "0.8",
        "2.0",
        "--step",
        "0.05",
        "--connections",
        "series",
        "independent",
        "voltage-matched",
        "--json",
    ],
    "map_3j_opt": [
        "map",
        "--x-gap-range",
        "1.0",
        "2.2",
        "--y-gap-range",
        "0.7",
        "1.3",
        "--step",
        "0.1",
        "--stack",
        "2.0",
        "1.4",
        "1.0",
        "--other-gaps",
        "optimised",
        "--connections",
        "series",
        "--json",
    ],
    "evaluate_spectrum_file": [
        "evaluate",
        "--gaps",
        "1.6",
        "1.0",
        "--spectrum-file",
        "{spectrum_file}",
        "--temperature",
        "320",
        "--json",
    ],
    "optimise_2j": [
        "optimise",
        "--junctions",
        "2",
        "--trials",
        "30",
        "--seed",
        "3",
        "--storage",
        ":memory:",
        "--no-progress",
        "--json",
    ],
}


def record(out: Path) -> None:
    out.mkdir(parents=True, exist_ok=True)
    py = sys.executable
    spec = out / "input_spectrum.txt"  # a smooth invented spectrum (not .csv: not compared)
    lines = ["wavelength_nm,irradiance_W_m2_nm"]
    for i in range(300, 2501, 5):
        x = i / 1000.0
        lines.append(f"{i},{1.6 * math.exp(-(((x - 0.65) / 0.45) ** 2)) + 0.05:.6f}")
    spec.write_text("\n".join(lines) + "\n")
    for name, args in CASES.items():
        args = [a.replace("{spectrum_file}", str(spec.resolve())) for a in args]
        r = subprocess.run([py, "-m", "gapmatch", *args], cwd=ROOT, capture_output=True, text=True)
        if r.returncode:
            (out / f"{name}.err").write_text(r.stderr)
            print(f"{name}: exit {r.returncode}: {r.stderr.strip().splitlines()[-1]}")
            continue
        (out / f"{name}.json").write_text(r.stdout)
        print(f"{name}: ok")
    rep = out / "report"
    r = subprocess.run(
        [py, "-m", "gapmatch", "report", "configs/demo.toml", "--out-dir", str(rep), "--quiet"],
        cwd=ROOT,
        capture_output=True,
        text=True,
    )
    print(f"report: exit {r.returncode} {r.stderr.strip()[-300:]}")


def _flatten(obj, prefix: str, out: dict) -> None:
    if isinstance(obj, dict):
        for k, v in obj.items():
            _flatten(v, f"{prefix}.{k}", out)
    elif isinstance(obj, list):
        for i, v in enumerate(obj):
            _flatten(v, f"{prefix}[{i}]", out)
    elif isinstance(obj, bool) or obj is None:
        out[prefix] = obj
    elif isinstance(obj, int | float):
        out[prefix] = float(obj)
    elif isinstance(obj, str) and prefix.endswith(".bdata"):
        out[prefix] = obj  # plotly's base64 arrays: equal strings, equal numbers


def _load(root: Path) -> dict:
    vals: dict = {}
    for p in sorted(root.rglob("*")):
        rel = str(p.relative_to(root))
        if p.suffix == ".json":
            _flatten(json.loads(p.read_text()), rel, vals)
        elif p.suffix == ".html":  # the figures' data embedded in the report page
            blocks = re.findall(
                r'<script type="application/json" class="gm-figure-data" '
                r'data-target="(gm-fig-\d+)">(.*?)</script>',
                p.read_text(encoding="utf-8"),
                re.S,
            )
            for fid, text in blocks:
                _flatten(json.loads(text), f"{rel}#{fid}", vals)
        elif p.suffix == ".csv":
            with p.open() as fh:
                for i, row in enumerate(csv.DictReader(fh)):
                    for k, v in row.items():
                        try:
                            vals[f"{rel}[{i}].{k}"] = float(v)
                        except (TypeError, ValueError):
                            pass
    return vals


#: values that are not results (process ids, clocks) and are skipped
IGNORE = ("worker_pid", "duration", "elapsed", "datetime", "created", "seconds")


def compare(a: Path, b: Path, renames: dict | None = None) -> float:
    va, vb = _load(a), _load(b)
    va = {k: v for k, v in va.items() if not any(w in k for w in IGNORE)}
    vb = {k: v for k, v in vb.items() if not any(w in k for w in IGNORE)}
    if renames:
        for old, new in renames.items():
            va = {k.replace(old, new): v for k, v in va.items()}
    shared = sorted(set(va) & set(vb))
    worst, where, n, n_other = 0.0, None, 0, 0
    for k in shared:
        x, y = va[k], vb[k]
        if not isinstance(x, float) or not isinstance(y, float):
            n_other += 1
            if x != y:
                print(f"differs: {k}: {str(x)[:60]!r} vs {str(y)[:60]!r}")
            continue
        n += 1
        if math.isnan(x) and math.isnan(y) or x == y:
            continue
        d = abs(x - y) / max(abs(x), abs(y))
        if d > 1e-12:
            print(f"{k}: {x!r} vs {y!r} (relative {d:.3g})")
        if d > worst:
            worst, where = d, k
    only_a = sorted(set(va) - set(vb))
    only_b = sorted(set(vb) - set(va))
    print(
        f"{n} numbers and {n_other} flags / encoded arrays compared; largest relative "
        f"difference {worst:.3g} at {where}"
    )
    for name, only in (("first", only_a), ("second", only_b)):
        if only:
            print(f"{len(only)} values only in the {name} record, e.g. {only[:8]}")
    return worst


if __name__ == "__main__":
    if sys.argv[1] == "record":
        record(Path(sys.argv[2]))
    else:
        ren = json.loads(Path(sys.argv[4]).read_text()) if len(sys.argv) > 4 else None
        compare(Path(sys.argv[2]), Path(sys.argv[3]), ren)

"""``gapmatch map``: efficiency map over two junctions' gaps (grid CSV + JSON summary)."""

from __future__ import annotations

import argparse
import sys
from pathlib import Path

from ..core.registry import CONNECTIONS
from ..io.finite import check_columns, dumps
from ..maps import OTHERS_MODES, compute_map
from .commands import COMMANDS
from .energy import add_site_arguments
from .options import add_condition_options, condition_kwargs, output_notes
from .parsing import names, old_spelling

CONNECTION_TYPE, CONNECTION_NAMES = names(CONNECTIONS)
OTHERS_TYPE, OTHERS_NAMES = names(OTHERS_MODES)


def register(sub) -> None:
    p = sub.add_parser(
        "map",
        help=COMMANDS["map"],
        description="Detailed-balance efficiency over a grid of top x bottom gaps (or any "
        "two junctions of a longer stack) for several connections at once. Writes the grid "
        "as a CSV (one row per point) and a JSON summary (optimum and tolerance window per "
        "connection). Theoretical limits, not ratings.",
    )
    x_range = p.add_argument(
        "--x-gap-range",
        dest="x_range",
        type=float,
        nargs=2,
        default=[0.5, 2.5],
        metavar=("LO", "HI"),
        help="gaps of the first axis (default top) [eV], within 0.1-5.0 (default 0.5 2.5)",
    )
    old_spelling(p, "--range", x_range)
    y_range = p.add_argument(
        "--y-gap-range",
        dest="y_range",
        type=float,
        nargs=2,
        metavar=("LO", "HI"),
        help="gaps of the second axis (default bottom) [eV] (default: as --x-gap-range)",
    )
    old_spelling(p, "--y-range", y_range)
    p.add_argument(
        "--step",
        type=float,
        default=0.01,
        metavar="EV",
        help="grid spacing [eV], 0.0005-1 (default 0.01)",
    )
    p.add_argument(
        "--connections",
        nargs="+",
        default=["series", "independent"],
        type=CONNECTION_TYPE,
        choices=CONNECTION_NAMES,
        help="connections to map, any case (default series independent)",
    )
    p.add_argument(
        "--stack",
        type=float,
        nargs="+",
        metavar="EV",
        help="3 or more junctions: a whole stack, top first [eV], whose other gaps "
        "are held fixed or start the re-optimisation",
    )
    p.add_argument(
        "--axes",
        type=int,
        nargs=2,
        metavar=("I", "J"),
        help="junction numbers on the x and y axes (1 = top; default top and bottom)",
    )
    others = p.add_argument(
        "--other-gaps",
        dest="others",
        type=OTHERS_TYPE,
        choices=OTHERS_NAMES,
        default="fixed",
        help="gaps of the junctions not on the axes: held fixed at --stack or "
        "re-optimised at every point (default fixed)",
    )
    old_spelling(p, "--others", others)
    p.add_argument(
        "--tolerance",
        type=float,
        default=1.0,
        metavar="PCT",
        help="tolerance window: absolute percent below the optimum (default 1)",
    )
    add_condition_options(p)
    add_site_arguments(p)  # --weather etc.: annual-energy maps (gapmatch.cli.energy)
    p.add_argument(
        "--out", metavar="PREFIX", help="write PREFIX_map.csv and PREFIX_summary.json (atomically)"
    )
    p.add_argument("--json", action="store_true", help="print the JSON summary")
    p.add_argument(
        "--cluster",
        metavar="ADDRESS",
        help="compute on a Dask cluster: local:N (N worker processes here) or a scheduler "
        "address tcp://HOST:PORT (needs the cluster extra); numbers identical to one process",
    )
    p.set_defaults(func=run)


def run(args: argparse.Namespace) -> int:
    if args.out:  # before anything is computed
        from ..io.atomic import check_writable

        for suffix in ("_map.csv", "_summary.json"):
            check_writable(f"{args.out}{suffix}", "--out")
    if getattr(args, "weather", None):  # annual energy at a site (gapmatch.cli.energy)
        from .energy import run_site_map

        return run_site_map(args)
    n = len(args.stack) if args.stack else 2
    kw = condition_kwargs(args, n)
    loading = _prefetch_formatter(args) if args.out else None
    if args.cluster:
        from ..cluster import connect

        with connect(args.cluster) as client:
            m = _compute(args, kw, client)
    else:
        m = _compute(args, kw, None)
    summary = m.summary(args.tolerance)
    summary["notes"] = output_notes(args)
    if args.out:
        from ..io.atomic import write_atomic

        prefix = Path(args.out)
        columns = check_columns(m.columns(), what=f"{prefix}_map.csv")
        text = dumps(summary, what=f"{prefix}_summary.json", indent=2)
        from ..io.csv_fast import columns_csv

        if loading is not None:
            loading.join()
        write_atomic(f"{prefix}_map.csv", columns_csv(columns))
        write_atomic(f"{prefix}_summary.json", text)
        print(f"wrote {prefix}_map.csv and {prefix}_summary.json", file=sys.stderr)
    if args.json:
        print(dumps(summary, what="map --json", indent=2))
        return 0
    print(format_summary(summary))
    return 0


def _prefetch_formatter(args: argparse.Namespace):
    """Start loading the compiled CSV formatter when the map is large enough to use it
    (an estimate from the ranges and the step: points times about ten columns)."""
    from ..io.csv_fast import prefetch_compiled

    try:
        x0, x1 = args.x_range
        y0, y1 = args.y_range if args.y_range else args.x_range
        points = (int((x1 - x0) / args.step) + 1) * (int((y1 - y0) / args.step) + 1)
    except (TypeError, ValueError, ZeroDivisionError):
        return None
    return prefetch_compiled(10 * points)


def _compute(args: argparse.Namespace, kw: dict, client):
    return compute_map(
        args.connections,
        x_range_eV=tuple(args.x_range),
        y_range_eV=tuple(args.y_range) if args.y_range else None,
        step_eV=args.step,
        stack_eV=args.stack,
        axes=args.axes,
        others=args.others,
        progress=lambda s: print(s, file=sys.stderr),
        client=client,
        **kw,
    )


def format_summary(s: dict) -> str:
    """Readable text of a map summary."""
    g = s["grid"]
    lines = [
        f"Map of {s['axis_labels'][0]} {g['x_min_eV']:.3f}-{g['x_max_eV']:.3f} eV x "
        f"{s['axis_labels'][1]} {g['y_min_eV']:.3f}-{g['y_max_eV']:.3f} eV "
        f"({g['nx']} x {g['ny']} points), {s['n_junctions']} junctions"
        + ("" if s["others"] == "none" else f", others {s['others']}"),
        f"Spectrum: {s['conditions']['spectrum']}",
        *(f"Note: {x}" for x in s.get("notes", [])),
        "",
        f"{'connection':>16} {'efficiency [%]':>15} {'gaps, top first [eV]':>26} "
        f"{'window x [eV]':>14} {'window y [eV]':>14}",
    ]
    for c, d in s["connections"].items():
        o, w = d["optimum"], d["tolerance_window"]
        gaps = " / ".join(f"{x:.3f}" for x in o["gaps_eV"])
        wx = f"{w['x_range_eV'][0]:.2f}-{w['x_range_eV'][1]:.2f}"
        wy = f"{w['y_range_eV'][0]:.2f}-{w['y_range_eV'][1]:.2f}"
        lines.append(f"{c:>16} {o['efficiency_pct']:15.2f} {gaps:>26} {wx:>14} {wy:>14}")
    within = next(iter(s["connections"].values()))["tolerance_window"]["within_pct"]
    lines.append(f"Window: every grid point within {within:g} % (absolute) of the optimum.")
    lines.append(
        "Detailed-balance limits under ideal assumptions: theoretical ceilings, not ratings."
    )
    return "\n".join(lines)

"""``gapmatch roadmap``: rank candidate stacks at each milestone of a roadmap study.

Registered by the CLI package with :func:`add_parser` (``register`` is the same function,
for the ``COMMANDS`` convention); :func:`run` returns the exit status.
"""

from __future__ import annotations

import argparse
import sys

from ..errors import InputError
from ..io.finite import dumps

__all__ = ["add_parser", "register", "run"]


def add_parser(subparsers) -> argparse.ArgumentParser:
    """Add the ``roadmap`` sub-command to ``subparsers`` (sets ``func`` to :func:`run`)."""
    p = subparsers.add_parser(
        "roadmap",
        help="rank candidate stacks at each milestone of a material roadmap study",
        description="Read a roadmap study (TOML), choose each candidate's best gaps at "
        "each milestone, propagate the projected uncertainties by Monte Carlo and print "
        "the ranking: P10/P50/P90 efficiency (annual energy for a study with a [site]), "
        "probability of being best, the input that "
        "moves the result most. Projections are scenario assumptions, not forecasts; "
        "results are detailed-balance ceilings, not ratings.",
    )
    p.add_argument("study", metavar="STUDY.toml", help="roadmap study file")
    p.add_argument("--json", action="store_true", help="print one JSON object")
    p.add_argument(
        "--draws", type=int, metavar="N", help="Monte Carlo draws, 1-100000 (default: study)"
    )
    p.add_argument("--seed", type=int, metavar="S", help="seed of the draws (default: study)")
    p.add_argument(
        "--csv",
        metavar="DIR",
        help="also write every table and the draws as CSV files into DIR",
    )
    p.add_argument(
        "--report",
        metavar="PAGE.html",
        help="also write a self-contained HTML page of the result (atomically)",
    )
    p.add_argument("--quiet", action="store_true", help="no progress bar on stderr")
    p.add_argument(
        "--cluster",
        metavar="ADDRESS",
        help="evaluate the Monte Carlo draws on a Dask cluster: local:N (N worker "
        "processes here) or a scheduler address tcp://HOST:PORT (needs the cluster "
        "extra); numbers identical to one process",
    )
    p.set_defaults(func=run)
    return p


register = add_parser


def _table(result) -> str:
    frame = result.ranking_frame()
    u = result.unit
    lines = []
    st = result.study
    lines.append(f"{st.title}" + (f"  ({st.organisation})" if st.organisation else ""))
    lines.append(
        f"{st.draws} draws, seed {st.seed}; {result.evaluator.label}; "
        "P10 / P50 / P90 over the projected uncertainties"
    )
    q = result.evaluator.describe()
    if "site" in q:
        site = q["site"]
        lines.append(
            f"site: {site.get('name') or site.get('weather')}, {q['poa_irradiation_kWh_m2']:.0f} "
            f"kWh m^-2 yr^-1 in-plane; {q['representative_spectra']} representative spectra "
            f"of {q['daylight_intervals']} daylight hours"
        )
        for c in q.get("representative_set_checked_on_full_year", []):
            lines.append(
                f"  check on every hour, {c['stack']}: {c['full_year_kWh_m2']:.2f} kWh m^-2 "
                f"(representative set {100 * c['relative_error']:+.2f} %)"
            )
    legend = {}
    for year, grp in frame.groupby("year", sort=False):
        lines.append("")
        lines.append(f"== {year} ==")
        lines.append(
            f"{'#':>2}  {'candidate':<38} {'gaps_eV (300 K)':<22} {'P10':>6} {'P50':>6} "
            f"{'P90':>6} {'P(best)':>7}  {'moves it most':<30} marks"
        )
        for _, r in grp.iterrows():
            marks = r["marks"].split("; ") if r["marks"] else []
            tags = []
            for m in marks:
                legend.setdefault(m, "*" * (len(legend) + 1))
                tags.append(legend[m])
            lines.append(
                f"{r['rank']:>2}  {r['candidate'][:38]:<38} {r['gaps_eV']:<22} "
                f"{r[f'p10_{u}']:6.2f} {r[f'p50_{u}']:6.2f} {r[f'p90_{u}']:6.2f} "
                f"{r['probability_best']:7.3f}  {r['top_input'][:30]:<30} {' '.join(tags)}"
            )
    lines.append("")
    for m, tag in legend.items():
        lines.append(f"{tag:>3} uses values marked '{m}'")
    from ..roadmap import CAUTION

    lines.append("")
    lines.append(CAUTION)
    return "\n".join(lines)


def run(args: argparse.Namespace) -> int:
    """Run the sub-command; returns the exit status (0)."""
    from ..roadmap import load_roadmap, run_roadmap

    study = load_roadmap(args.study)
    if args.report:
        from ..io.atomic import check_writable

        check_writable(args.report, "--report")
    if args.draws is not None and not 1 <= args.draws <= 100_000:
        raise InputError("--draws", "must be a whole number in [1, 100000]", args.draws)
    if args.seed is not None and not 0 <= args.seed < 2**32:
        raise InputError("--seed", "must be a whole number in [0, 2^32 - 1]", args.seed)
    from ..cluster import connect

    with connect(args.cluster) as client:
        result = run_roadmap(
            study, draws=args.draws, seed=args.seed, progress=not args.quiet, client=client
        )
    if args.csv:
        paths = result.write_csv(args.csv)
        print(f"wrote {len(paths)} CSV files to {args.csv}", file=sys.stderr)
    if args.report:
        from ..report.roadmap_page import write_roadmap_page

        path = write_roadmap_page(result, args.report)
        print(f"wrote {path}", file=sys.stderr)
    if args.json:
        print(dumps(result.to_dict(), what="roadmap --json", indent=1))
    else:
        print(_table(result))
    return 0

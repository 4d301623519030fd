"""``gapmatch evaluate``: efficiency and operating point of one stack."""

from __future__ import annotations

import argparse
import json

from ..api import evaluate
from ..core.connections import CONNECTIONS
from .options import add_condition_options, condition_kwargs

DEMO_STACKS = {
    # the fictional Lindqvist Photonics demo: candidate top cells on a 1.12 eV bottom cell
    "demo": [[1.72, 1.12], [1.55, 1.12], [1.85, 1.12]],
}


def register(sub) -> None:
    p = sub.add_parser(
        "evaluate",
        help="efficiency of one stack (detailed-balance limit)",
        description="Detailed-balance efficiency, maximum power point and per-junction "
        "operating point of one stack of junctions. Theoretical limits, not ratings.",
    )
    p.add_argument("--gaps", type=float, nargs="+", required=True, metavar="EV",
                   help="band gaps [eV], top junction first, 1 to 6 values in 0.1-5.0, "
                   "strictly decreasing")
    p.add_argument("--connection", default="series", choices=CONNECTIONS,
                   help="series (two-terminal, current matched), independent (four-/multi-"
                   "terminal) or voltage-matched strings (default series)")
    p.add_argument("--cells-per-string", type=int, nargs="+", metavar="N",
                   help="voltage-matched only: cells per string for each junction, top first "
                   "(default: the best ratio with strings of up to 6 cells for 2-3 junctions, 5/4/3 for 4/5/6)")
    add_condition_options(p)
    p.add_argument("--json", action="store_true",
                   help="print one JSON object (efficiency as a fraction 0-1, unit-suffixed "
                   "keys) instead of a table")
    p.set_defaults(func=run)


def run(args: argparse.Namespace) -> int:
    res = evaluate(args.gaps, args.connection, cells_per_string=args.cells_per_string,
                   **condition_kwargs(args))
    d = res.stack(0)
    if args.json:
        print(json.dumps(d, indent=2))
        return 0
    print(format_table(d))
    return 0


def _f(x, spec):
    return "-" if x is None else format(x, spec)


def format_table(d: dict) -> str:
    """Readable text table of one stack's evaluation (units in every header)."""
    lines = [
        f"Stack {' / '.join(f'{g:.3f}' for g in d['gaps_eV'])} eV, {d['connection']} connection",
        f"Spectrum: {d['conditions']['spectrum']}",
        "",
        f"{'efficiency [%]':>16} {'P_mpp [W m^-2]':>15} {'V_oc [V]':>9} {'J_sc [mA cm^-2]':>16} "
        f"{'FF [-]':>7} {'V_mpp [V]':>10} {'J_mpp [mA cm^-2]':>17} {'J_min/J_max [-]':>16}",
        f"{d['efficiency_pct']:16.3f} {d['pmpp_W_m2']:15.2f} {_f(d['voc_V'], '9.4f'):>9} "
        f"{_f(d['jsc_mA_cm2'], '16.3f'):>16} {d['ff']:7.4f} {_f(d['vmpp_V'], '10.4f'):>10} "
        f"{_f(d['jmpp_mA_cm2'], '17.3f'):>17} {d['mismatch_ratio']:16.4f}",
        "",
        f"{'junction':>8} {'E_g [eV]':>9} {'J_ph [mA cm^-2]':>16} {'V_oc [V]':>9} "
        f"{'V [V]':>8} {'J [mA cm^-2]':>13} {'P [W m^-2]':>11} {'share [%]':>10}",
    ]
    for j in d["junctions"]:
        lines.append(
            f"{j['junction']:>8} {j['gap_eV']:9.3f} {j['jph_mA_cm2']:16.3f} {j['voc_V']:9.4f} "
            f"{j['v_op_V']:8.4f} {j['j_op_mA_cm2']:13.3f} {j['p_op_W_m2']:11.2f} "
            f"{100 * j['power_share']:10.2f}"
        )
    if "cells_per_string" in d:
        lines.append(f"cells per string (top first): {':'.join(map(str, d['cells_per_string']))}")
    if d["connection"] == "independent":
        lines.append("independent connection: no common terminals, so stack V_oc, J_sc, "
                     "V_mpp, J_mpp are not defined (-); FF = P_mpp / sum(V_oc J_sc).")
    lines.append("Detailed-balance limit under ideal assumptions: a theoretical ceiling, "
                 "not a rating.")
    return "\n".join(lines)

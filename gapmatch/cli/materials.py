"""``gapmatch materials``: the materials library with the source of every number.

Registered by the CLI package with :func:`add_parser` (``register`` is the same
function); :func:`run` returns the exit status.
"""

from __future__ import annotations

import argparse

from ..io.finite import dumps

__all__ = ["add_parser", "register", "run"]


def add_parser(subparsers) -> argparse.ArgumentParser:
    """Add the ``materials`` sub-command to ``subparsers`` (sets ``func`` to :func:`run`)."""
    p = subparsers.add_parser(
        "materials",
        help="list the materials library with the source of every number",
        description="List the absorbers of the materials library: gap (or gap window) at "
        "300 K, temperature model, absorber defaults, typical thickness, refractive index "
        "and typical external radiative efficiency, each with its source and status "
        "('cited', 'from memory', 'common practice, no source').",
    )
    p.add_argument("--json", action="store_true", help="print one JSON object")
    p.add_argument(
        "--values", action="store_true", help="list every number with its source (table)"
    )
    p.add_argument("--library", metavar="PATH", help="another library file (same format)")
    p.set_defaults(func=run)
    return p


register = add_parser


def run(args: argparse.Namespace) -> int:
    """Run the sub-command; returns the exit status (0)."""
    from ..materials import load_library

    lib = load_library(args.library)
    if args.json:
        d = lib.to_dict() | {
            "caution": "Library values are typical parameters for detailed-balance studies, "
            "not specifications of any material or product; values marked 'from memory' or "
            "'common practice, no source' are unchecked."
        }
        print(dumps(d, what="materials --json", indent=1))
        return 0
    if args.values:
        f = lib.sources_frame()
        print(f.to_string(index=False, columns=["material", "field", "value", "source", "status"]))
    else:
        print(
            f"{'material':<24} {'gap at 300 K [eV]':<18} {'T model':<16} {'absorber':<9} "
            f"{'ERE':>8}  marks"
        )
        for r in lib.to_frame().to_dict("records"):
            gap = (
                f"{r['gap_low_eV']:.3f}"
                if r["gap_low_eV"] == r["gap_high_eV"]
                else f"{r['gap_low_eV']:.3f}-{r['gap_high_eV']:.3f}"
            )
            ere = "" if r["ere"] is None or r["ere"] != r["ere"] else f"{r['ere']:.2g}"
            print(
                f"{r['material']:<24} {gap:<18} {r['temperature_model']:<16} "
                f"{r['absorber']:<9} {ere:>8}  {r['marks']}"
            )
    print()
    print("sources:")
    for s in lib.sources.values():
        print(f"  {s.key:<15} [{s.status}] {s.citation}" + (f" -- {s.where}" if s.where else ""))
    return 0

"""Command-line interface: a thin layer over the Python API.

Each sub-command lives in its own module of this package, exposing ``register(subparsers)``
(adds its parser and sets ``func``) ; :data:`COMMANDS` lists the modules in the order
``--help`` shows them. Input errors (:class:`gapmatch.InputError`) print one line to
stderr and exit with status 2; no traceback.
"""

from __future__ import annotations

import argparse
import importlib
import sys

from .. import __version__
from ..errors import InputError

#: sub-command modules, in help order
COMMANDS = ["evaluate", "map", "optimise", "report", "roadmap", "materials", "init"]


def build_parser() -> argparse.ArgumentParser:
    """The top-level argument parser with every sub-command registered."""
    parser = argparse.ArgumentParser(
        prog="gapmatch",
        description="Detailed-balance limits of multi-junction solar cells: choose band "
        "gaps and connections, see the efficiency a stack can ultimately reach. Results "
        "are theoretical limits, not ratings.",
    )
    parser.add_argument("--version", action="version", version=f"gapmatch {__version__}")
    sub = parser.add_subparsers(dest="command", metavar="COMMAND")
    for name in COMMANDS:
        importlib.import_module(f"{__name__}.{name}").register(sub)
    return parser


def main(argv: list[str] | None = None) -> int:
    """Run the CLI; returns the process exit status."""
    parser = build_parser()
    args = parser.parse_args(argv)
    if not getattr(args, "func", None):
        parser.print_help()
        return 2
    try:
        return int(args.func(args) or 0)
    except InputError as exc:
        print(f"gapmatch {args.command}: error: {exc}", file=sys.stderr)
        return 2
    except KeyboardInterrupt:
        print(f"gapmatch {args.command}: interrupted", file=sys.stderr)
        return 130


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())

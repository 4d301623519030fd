"""Command-line interface: a thin layer over the Python API.

Each sub-command lives in its own module of this package, exposing ``register(subparsers)``
(adds its parser and sets ``func``); :data:`gapmatch.cli.commands.COMMANDS` lists them,
with their one-line help, in the order ``--help`` shows them. Only the module of the
sub-command being run is imported, so ``gapmatch --help`` starts fast. Input errors
(:class:`gapmatch.InputError`) print one line to stderr and exit with status 2; no
traceback.
"""

from __future__ import annotations

import argparse
import importlib
import sys
from collections.abc import Sequence

from ..errors import InputError
from .commands import COMMANDS, MODULES

__all__ = ["COMMANDS", "build_parser", "main"]


class _VersionAction(argparse.Action):
    """``--version``: looks the version up only when asked."""

    def __init__(self, option_strings, dest=argparse.SUPPRESS, **kwargs):
        super().__init__(option_strings, dest, nargs=0, default=argparse.SUPPRESS, **kwargs)

    def __call__(self, parser, namespace, values, option_string=None):
        from .. import __version__

        parser.exit(message=f"gapmatch {__version__}\n")


def _command_of(argv: Sequence[str]) -> str | None:
    """The sub-command named in ``argv`` (the first word that is not an option)."""
    for a in argv:
        if not a.startswith("-"):
            return a
    return None


def build_parser(argv: Sequence[str] | None = None) -> argparse.ArgumentParser:
    """The top-level argument parser.

    Parameters
    ----------
    argv : sequence of str, optional
        The arguments to be parsed: only the sub-command they name is imported and
        registered in full, the others are listed with their one-line help. ``None``
        registers every sub-command in full.
    """
    parser = argparse.ArgumentParser(
        prog="gapmatch",
        description="Detailed-balance limits of multi-junction solar cells: choose band "
        "gaps and connections, see the efficiency a stack can ultimately reach. Results "
        "are theoretical limits, not ratings: for anything built or sold rely on "
        "accredited measurement (IEC 60904 family; IEC 61853 for energy rating).",
    )
    parser.add_argument("--version", action=_VersionAction, help="show the version and exit")
    sub = parser.add_subparsers(dest="command", metavar="COMMAND")
    wanted = None if argv is None else _command_of(argv)
    for name, help_ in COMMANDS.items():
        if argv is None or name == wanted:
            importlib.import_module(f"{__name__}.{MODULES.get(name, name)}").register(sub)
        else:
            sub.add_parser(name, help=help_, add_help=False)
    return parser


def main(argv: list[str] | None = None) -> int:
    """Run the CLI; returns the process exit status."""
    argv = sys.argv[1:] if argv is None else list(argv)
    parser = build_parser(argv)
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

"""Command-line interface: a thin layer over the Python API.

Each sub-command lives in its own module of this package, exposing ``register(subparsers)``
(adds its parser and sets ``func``); :data:`gapmatch.cli.commands.COMMANDS` lists them,
with their one-line help, in the order ``--help`` shows them. Only the module of the
sub-command being run is imported, so ``gapmatch --help`` starts fast. Input errors
(:class:`gapmatch.InputError`, argparse's own, files that cannot be read or written)
print one line to stderr naming the option as typed and exit with status 2; no
traceback. A closed pipe (``gapmatch evaluate ... | head -1``) ends a command quietly.
"""

from __future__ import annotations

import argparse
import difflib
import importlib
import os
import re
import sys
from collections.abc import Sequence
from typing import Any

from ..errors import InputError
from .commands import COMMANDS, MODULES

__all__ = ["COMMANDS", "Parser", "build_parser", "entry", "main", "plain"]

#: commands whose outputs are all written and flushed when they return, holding no
#: server, cluster or database connection: :func:`entry` may end their process without
#: the interpreter's teardown
FAST_EXIT_COMMANDS = frozenset({"map", "evaluate"})
_last = {"fast_exit": False}


def plain(value: Any) -> str:
    """A value as text for a one-line message: numbers and lists as typed, no numpy reprs."""
    if hasattr(value, "tolist"):  # numpy scalars and arrays
        value = value.tolist()
    if isinstance(value, tuple):
        value = list(value)
    if isinstance(value, list):
        return "[" + ", ".join(plain(v) for v in value) + "]"
    if isinstance(value, float):
        return format(value, "g") if abs(value) < 1e16 else repr(value)
    if isinstance(value, str):
        return repr(value)
    return str(value)


def _long_options(parser: argparse.ArgumentParser) -> list[str]:
    """The long options ``--help`` shows (hidden old spellings left out)."""
    out = []
    for action in parser._actions:
        if action.help == argparse.SUPPRESS:
            continue
        out.extend(s for s in action.option_strings if s.startswith("--"))
    return out


def suggest_option(parser: argparse.ArgumentParser, word: str) -> str | None:
    """The option of ``parser`` nearest to a misspelled ``word`` (``None`` if none is)."""
    flag = word.split("=", 1)[0]
    options = _long_options(parser)
    near = difflib.get_close_matches(flag, options, n=1, cutoff=0.7)
    if not near:
        low = {o.lower(): o for o in options}
        near = [low[flag.lower()]] if flag.lower() in low else []
    return near[0] if near else None


class Parser(argparse.ArgumentParser):
    """An argument parser whose errors are one line on stderr (exit status 2).

    After parsing, ``namespace.given`` lists the options given on the command line (by
    their current names), so that a command can refuse options it would not honour.
    """

    def __init__(self, *args, **kwargs):
        super().__init__(*args, **kwargs)
        # negative numbers in any notation are values, not options (--ere ... -3e-4)
        self._negative_number_matcher = re.compile(r"^-(\d+\.?\d*|\.\d+)([eE][-+]?\d+)?$")

    def parse_known_args(self, args=None, namespace=None):  # noqa: D102 - argparse's API
        self._given: list[str] = []
        ns, extra = super().parse_known_args(args, namespace)
        if not hasattr(ns, "given"):  # a sub-command's parser sets it first
            ns.given = tuple(dict.fromkeys(self._given))
        return ns, extra

    def _get_values(self, action, arg_strings):  # called once per option given
        if action.option_strings and hasattr(self, "_given"):
            target = getattr(action, "target", action)  # an old spelling: the new name
            self._given.append(target.option_strings[0])
        return super()._get_values(action, arg_strings)

    def error(self, message: str):  # noqa: D102 - argparse's hook
        m = re.match(r"unrecognized arguments: (.*)", message)
        if m:
            words = m.group(1).split()
            flags = [w for w in words if w.startswith("-")]
            if flags:
                near = suggest_option(self, flags[0])
                message = f"unknown option {flags[0]}" + (
                    f"; did you mean {near}?" if near else f" (see {self.prog} --help)"
                )
            else:
                message = f"unexpected argument {words[0]!r} (see {self.prog} --help)"
        self.exit(2, f"{self.prog}: error: {' '.join(message.split())}\n")


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
    parser = Parser(
        prog="gapmatch",
        description="Detailed-balance limits of multi-junction solar cells: choose band "
        "gaps and connections, see the efficiency a stack can ultimately reach. Results "
        "are theoretical limits, not ratings: for anything built or sold rely on "
        "accredited measurement (IEC 60904 family; IEC 61853 for energy rating).",
    )
    parser.add_argument("--version", action=_VersionAction, help="show the version and exit")
    sub = parser.add_subparsers(dest="command", metavar="COMMAND", parser_class=Parser)
    wanted = None if argv is None else _command_of(argv)
    for name, help_ in COMMANDS.items():
        if argv is None or name == wanted:
            importlib.import_module(f"{__name__}.{MODULES.get(name, name)}").register(sub)
        else:
            sub.add_parser(name, help=help_, add_help=False)
    return parser


#: unit suffixes of API parameter names, dropped in option names (``tilt_deg`` -> ``--tilt``)
_UNIT_SUFFIXES = (
    "_eV",
    "_meV",
    "_K",
    "_W_m2",
    "_deg",
    "_nm",
    "_m",
    "_pct",
    "_per_cm",
    "_ohm_cm2",
    "_s",
    "_eV_K",
)


def _flag_for(name: str, sub: argparse.ArgumentParser | None) -> str | None:
    """The option of ``sub`` that an API parameter name stands for, if any."""
    from .options import FLAGS

    options = set(_long_options(sub)) if sub is not None else set()
    if name in FLAGS and (not options or FLAGS[name].split("/")[0] in options):
        return FLAGS[name]
    base = name
    for suffix in sorted(_UNIT_SUFFIXES, key=len, reverse=True):
        if base.endswith(suffix):
            base = base[: -len(suffix)]
            break
    flag = "--" + base.replace("_", "-")
    return flag if flag in options else None


def _field_shown(field: str, sub: argparse.ArgumentParser | None) -> str:
    """The option a user typed for an API field (``temperature_K`` -> ``--temperature``);
    other fields (files, key paths) unchanged."""
    if field.startswith("-"):
        return field
    m = re.match(r"([A-Za-z][A-Za-z0-9_]*(?: alpha| beta)?)(.*)$", field, re.S)
    if not m:
        return field
    flag = _flag_for(m.group(1), sub)
    return field if flag is None else flag + m.group(2)


def error_line(command: str, exc: InputError, sub: argparse.ArgumentParser | None = None) -> str:
    """The one-line message of an input error, with the option names of the command.

    Parameters
    ----------
    command : str
        The sub-command.
    exc : InputError
        The error.
    sub : argparse.ArgumentParser, optional
        The sub-command's parser, whose options the message names.
    """
    shown = "" if exc.value is None else f" (got {plain(exc.value)})"
    problem = " ".join(str(exc.problem).split())
    return f"gapmatch {command}: error: {_field_shown(exc.field, sub)}: {problem}{shown}"


def _unknown_command(argv: Sequence[str]) -> str | None:
    word = _command_of(argv)
    if word is None or word in COMMANDS:
        return None
    near = difflib.get_close_matches(word, list(COMMANDS), n=1)
    hint = f"; did you mean {near[0]}?" if near else f"; one of {', '.join(COMMANDS)}"
    return f"gapmatch: error: unknown command {word!r}{hint}"


def _quiet_broken_pipe() -> None:
    """Stdout was closed by the reader (``| head``): drop what is left, quietly."""
    try:
        devnull = os.open(os.devnull, os.O_WRONLY)
        os.dup2(devnull, sys.stdout.fileno())
    except (OSError, ValueError, AttributeError):  # stdout without a file descriptor
        pass


def entry() -> None:
    """The ``gapmatch`` console command: :func:`main`, then the process exit.

    When the compiled kernels were loaded (numba), the interpreter's teardown of the
    LLVM runtime takes about 0.25 s (measured on the 801 x 801 map command). After a
    command of :data:`FAST_EXIT_COMMANDS` has returned (its files written atomically and
    closed, stdout and stderr flushed here), the process therefore ends with
    :func:`os._exit`; every other command exits normally.
    """
    status = main()  # sets _last["fast_exit"]
    if _last["fast_exit"] and "numba" in sys.modules:
        try:
            sys.stdout.flush()
            sys.stderr.flush()
        except (OSError, ValueError):  # a closed pipe: exit normally, quietly
            sys.exit(status)
        os._exit(status)
    sys.exit(status)


def main(argv: list[str] | None = None) -> int:
    """Run the CLI; returns the process exit status."""
    _last["fast_exit"] = False
    argv = sys.argv[1:] if argv is None else list(argv)
    unknown = _unknown_command(argv)
    if unknown:
        print(unknown, file=sys.stderr)
        return 2
    parser = build_parser(argv)
    # argparse exits (SystemExit) for --help, --version and its own one-line errors
    args, extra = parser.parse_known_args(argv)
    if extra:
        sub = _subparser(parser, getattr(args, "command", None)) or parser
        sub.error(f"unrecognized arguments: {' '.join(extra)}")
    if not getattr(args, "func", None):
        parser.print_help()
        return 2
    if os.environ.get("GAPMATCH_RETAIN_MEMORY", "1") not in ("", "0"):
        from ..runtime import retain_freed_memory

        retain_freed_memory()  # large batches: no page faults on reused temporaries
    try:
        status = int(args.func(args) or 0)
        sys.stdout.flush()
        _last["fast_exit"] = args.command in FAST_EXIT_COMMANDS and not getattr(
            args, "cluster", None
        )
        return status
    except InputError as exc:
        print(error_line(args.command, exc, _subparser(parser, args.command)), file=sys.stderr)
        return 2
    except BrokenPipeError:
        _quiet_broken_pipe()
        return 0
    except OSError as exc:  # a file that cannot be read or written, named by the system
        where = exc.filename or ""
        print(
            f"gapmatch {args.command}: error: {where}{': ' if where else ''}{exc.strerror or exc}",
            file=sys.stderr,
        )
        return 2
    except KeyboardInterrupt:
        print(f"gapmatch {args.command}: interrupted", file=sys.stderr)
        return 130


def _subparser(parser: argparse.ArgumentParser, command: str | None):
    for action in parser._actions:
        if isinstance(action, argparse._SubParsersAction) and command in action.choices:
            return action.choices[command]
    return None


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())

"""How the sub-commands read their words: names in any case, old spellings kept.

(The one-line errors and did-you-mean of unknown options live in the package
``__init__``, with the top-level parser.)

* :func:`names` is the ``type=`` and ``choices=`` of an option taking a name: it accepts
  any case (``am1.5g``, ``Series``) and trade aliases, and returns the spelling the
  Python API expects.
* :func:`old_spelling` keeps a renamed option working under its former name, hidden
  from ``--help``, with one line ``note: --old is now --new`` on stderr.
"""

from __future__ import annotations

import argparse
import difflib
import sys
from collections.abc import Iterable, Mapping
from typing import Any

__all__ = ["Names", "names", "name_choice", "old_spelling"]


class Names(tuple):
    """The allowed names of an option: iterates over the names ``--help`` shows, and
    contains those and the spellings the API takes (so argparse's check passes)."""

    def __new__(cls, shown: Iterable[str], accepted: Iterable[str] = ()):
        self = super().__new__(cls, tuple(shown))
        self.accepted = frozenset(self) | frozenset(accepted)
        return self

    def __contains__(self, item: object) -> bool:
        return item in self.accepted


def names(
    allowed: Iterable[str],
    *,
    aliases: Mapping[str, str] | None = None,
    shown: Mapping[str, str] | None = None,
):
    """``(type, choices)`` of an option taking one of ``allowed`` names, in any case.

    Parameters
    ----------
    allowed : iterable of str
        The names the Python API takes, e.g. ``("AM1.5G", "AM1.5D", "AM0", "blackbody")``.
    aliases : mapping, optional
        Other accepted spellings -> an allowed name (e.g. ``{"table": "table"}``).
    shown : mapping, optional
        Allowed name -> the name ``--help`` shows (e.g. ``{"table": "alpha-file"}``),
        itself accepted.

    Returns
    -------
    (callable, Names)
        Pass as ``type=`` and ``choices=`` of ``add_argument``.
    """
    allowed = tuple(allowed)
    shown = dict(shown or {})
    table = {a.lower(): a for a in allowed}
    table.update({s.lower(): a for a, s in shown.items()})
    table.update({k.lower(): v for k, v in (aliases or {}).items()})
    display = tuple(shown.get(a, a) for a in allowed)

    def convert(text: str) -> str:
        key = str(text).strip().lower()
        if key in table:
            return table[key]
        near = difflib.get_close_matches(key, list(table), n=1, cutoff=0.6)
        hint = ""
        if near:
            canon = table[near[0]]
            hint = f"; did you mean {shown.get(canon, canon)}?"
        raise argparse.ArgumentTypeError(
            f"{text!r} is not one of {', '.join(display)} (any case){hint}"
        )

    convert.__name__ = "name"
    return convert, Names(display, allowed)


class _OldSpelling(argparse.Action):
    """A former option name: notes the new one on stderr, then acts as the new one."""

    def __init__(self, option_strings, dest, *, target: argparse.Action, **kwargs):
        self.target = target
        super().__init__(option_strings, dest, **kwargs)

    def __call__(self, parser, namespace, values, option_string=None):
        print(
            f"note: {self.option_strings[0]} is now {self.target.option_strings[0]}",
            file=sys.stderr,
        )
        self.target(parser, namespace, values, self.target.option_strings[0])


def old_spelling(group, old: str, target: argparse.Action) -> argparse.Action:
    """Keep ``old`` working as a hidden spelling of the option ``target``.

    Parameters
    ----------
    group : argparse.ArgumentParser or argument group
        Where ``target`` was added.
    old : str
        The former option string, e.g. ``"--range"``.
    target : argparse.Action
        What ``add_argument`` returned for the new name.
    """
    kw: dict[str, Any] = dict(
        dest=target.dest,
        nargs=target.nargs,
        help=argparse.SUPPRESS,
        default=argparse.SUPPRESS,
        action=_OldSpelling,
        target=target,
    )
    if target.nargs != 0:
        kw.update(type=target.type, choices=target.choices, metavar=target.metavar)
    return group.add_argument(old, **kw)


def name_choice(allowed: Iterable[str], **kwargs) -> dict[str, Any]:
    """``type=`` and ``choices=`` keywords of ``add_argument`` for :func:`names`."""
    convert, shown = names(allowed, **kwargs)
    return {"type": convert, "choices": shown}

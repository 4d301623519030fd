"""``gapmatch study-keys``: print every table and key of study files."""

from __future__ import annotations

import argparse

from .commands import COMMANDS


def register(sub) -> None:
    p = sub.add_parser(
        "study-keys",
        help=COMMANDS["study-keys"],
        description="Print every table and key of report studies (with [site], [search] "
        "and [thickness]) and roadmap studies: type, unit, default, allowed range, "
        "description and an example. The same text is docs/study-file.md "
        "(--markdown).",
    )
    p.add_argument("--markdown", action="store_true", help="Markdown (docs/study-file.md)")
    p.set_defaults(func=run)


def run(args: argparse.Namespace) -> int:
    from ..study_reference import study_reference

    print(study_reference(markdown=args.markdown), end="")
    return 0

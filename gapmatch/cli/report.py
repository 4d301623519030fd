"""``gapmatch report``: run a study file and write a self-contained HTML report."""

from __future__ import annotations

import argparse
import shlex
import sys

from ..errors import InputError
from ..report import build_report, write_report
from ..report.builder import check_output_dir
from ..report.style import REPORT_CAUTION
from ..study import load_study
from .commands import COMMANDS


def register(sub) -> None:
    p = sub.add_parser(
        "report",
        help=COMMANDS["report"],
        description="Validate a study file, compute every section it lists and write "
        "<out-dir>/<study-name>.html (self-contained, works offline) with CSV and JSON "
        "data files beside it. Nothing is written if the study is invalid. Every key of "
        "a study file is described in docs/study-file.md. Caution: " + REPORT_CAUTION,
    )
    p.add_argument("study", metavar="STUDY.toml", help="study file, e.g. configs/demo.toml")
    p.add_argument(
        "--out-dir",
        default="reports",
        metavar="DIR",
        help="folder for the report and data files (default reports)",
    )
    p.add_argument("--quiet", action="store_true", help="no progress on stderr")
    p.set_defaults(func=run)


def run(args: argparse.Namespace) -> int:
    try:
        study = load_study(args.study)
    except InputError as exc:
        if exc.field == args.study or exc.field.startswith(f"{args.study}"):
            raise
        raise InputError(f"{args.study}: {exc.field}", exc.problem, exc.value) from None
    command = (
        "gapmatch " + " ".join(shlex.quote(a) for a in sys.argv[1:])
        if sys.argv and sys.argv[0].endswith(("gapmatch", "__main__.py"))
        else f"gapmatch report {shlex.quote(args.study)}"
    )
    check_output_dir(args.out_dir)  # before anything is computed
    rep = build_report(study, command=command, progress=not args.quiet)
    path = write_report(rep, args.out_dir)
    print(
        f"wrote {path} ({rep.size_bytes / 1e6:.1f} MB) and {len(rep.files)} data files",
        file=sys.stderr,
    )
    print(path)
    return 0

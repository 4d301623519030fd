"""``gapmatch init``: write a commented starting study file from a template."""

from __future__ import annotations

import argparse
import re
from importlib import resources
from pathlib import Path

from ..errors import InputError
from ..io.atomic import write_atomic

#: template name -> what it is for (files in gapmatch/templates/NAME.toml)
TEMPLATES = {
    "si-tandem": "a top cell on a silicon bottom cell, series vs independent (AM1.5G)",
    "concentrator-triple": "a three-junction stack at 500 suns of AM1.5D, Bose-Einstein",
    "space-triple": "a three-junction stack for space (AM0 at 1361 W m^-2, 330 K, ERE 0.01)",
}


def template_text(name: str) -> str:
    """The text of one built-in study template.

    Parameters
    ----------
    name : str
        One of :data:`TEMPLATES` (case-insensitive).

    Returns
    -------
    str
        A commented TOML study file that runs as written.
    """
    key = str(name).strip().lower()
    if key not in TEMPLATES:
        import difflib

        near = difflib.get_close_matches(key, TEMPLATES, n=1)
        hint = f" (did you mean {near[0]!r}?)" if near else ""
        raise InputError("--template", f"must be one of {', '.join(TEMPLATES)}{hint}", name)
    return resources.files("gapmatch.templates").joinpath(f"{key}.toml").read_text("utf-8")


def write_template(path: str | Path, name: str = "si-tandem", *, force: bool = False) -> Path:
    """Write a starting study file, named after the file.

    Parameters
    ----------
    path : str or pathlib.Path
        Where to write it (``.toml`` is appended when missing). An existing file is kept
        unless ``force``.
    name : str
        Template (see :data:`TEMPLATES`).
    force : bool
        Overwrite an existing file.

    Returns
    -------
    pathlib.Path
        The file written; its ``study.name`` is the file's stem made safe for a file name.
    """
    p = Path(path)
    if p.suffix.lower() != ".toml":
        p = p.with_name(p.name + ".toml")
    if p.exists() and not force:
        raise InputError(str(p), "exists already; choose another path or pass --force")
    if not p.parent.is_dir():
        raise InputError(str(p), f"folder {p.parent} does not exist")
    text = template_text(name)
    stem = re.sub(r"[^A-Za-z0-9_.-]+", "-", p.stem).strip("-.") or "study"
    if not stem[0].isalnum():
        stem = "s" + stem
    text = re.sub(r'(?m)^name = "[^"]*"', f'name = "{stem[:80]}"', text, count=1)
    try:
        return write_atomic(p, text)
    except OSError as exc:
        raise InputError(str(p), f"cannot be written ({exc.strerror})") from None


def register(sub) -> None:
    lines = "\n".join(f"  {k:<20} {v}" for k, v in TEMPLATES.items())
    p = sub.add_parser(
        "init",
        help="write a commented starting study file from a template",
        description="Write a commented study file that runs as written with "
        "`gapmatch report PATH`; edit it for your own question.\n\ntemplates:\n" + lines,
        formatter_class=argparse.RawDescriptionHelpFormatter,
    )
    p.add_argument("path", metavar="PATH", help="study file to write, e.g. my-study.toml")
    p.add_argument(
        "--template",
        default="si-tandem",
        metavar="NAME",
        help=f"one of {', '.join(TEMPLATES)} (default si-tandem)",
    )
    p.add_argument("--force", action="store_true", help="overwrite an existing file")
    p.set_defaults(func=run)


def run(args: argparse.Namespace) -> int:
    path = write_template(args.path, args.template, force=args.force)
    print(f"wrote {path}; run: gapmatch report {path}")
    return 0

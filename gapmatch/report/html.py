"""Small HTML helpers of the report page: escaping, paragraphs, tables, number formats.

Every user string goes through :func:`esc` (page text and plotly labels alike).
"""

from __future__ import annotations

import html
from collections.abc import Sequence
from typing import Any

__all__ = ["esc", "para", "table", "fmt"]


def esc(s: Any) -> str:
    """HTML-escape any user value (page text and plotly labels)."""
    return html.escape(str(s), quote=True)


def para(text: str) -> str:
    """A paragraph of escaped text."""
    return f"<p>{esc(text)}</p>"


def table(
    header: Sequence[str],
    rows: Sequence[Sequence[Any]],
    *,
    caption: str = "",
    numeric: Sequence[bool] | None = None,
) -> str:
    """An HTML table; every cell and header is escaped.

    Parameters
    ----------
    header : sequence of str
        Column headings (units in brackets).
    rows : sequence of sequences
        Cell values (already formatted strings or numbers).
    caption : str
        Caption (escaped).
    numeric : sequence of bool, optional
        Right-align these columns.
    """
    num = list(numeric) if numeric is not None else [False] * len(header)
    th = "".join(
        f'<th scope="col"{" class=num" if n else ""}>{esc(h)}</th>'
        for h, n in zip(header, num, strict=False)
    )
    body = "".join(
        "<tr>"
        + "".join(
            f"<td{' class=num' if n else ''}>{esc(c)}</td>" for c, n in zip(r, num, strict=False)
        )
        + "</tr>"
        for r in rows
    )
    cap = f"<caption>{esc(caption)}</caption>" if caption else ""
    return f'<table class="gm-table">{cap}<thead><tr>{th}</tr></thead><tbody>{body}</tbody></table>'


def fmt(x, spec: str = ".2f") -> str:
    """Format a number, or an en dash for a missing one (None, NaN)."""
    return "–" if x is None or (isinstance(x, float) and x != x) else format(x, spec)

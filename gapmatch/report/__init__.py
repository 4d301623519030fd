"""Self-contained HTML reports of a study (see :mod:`gapmatch.report.sections` for the
section registry and :mod:`gapmatch.report.figures` for the figures).

>>> from gapmatch.study import load_study                      # doctest: +SKIP
>>> from gapmatch.report import build_report, write_report     # doctest: +SKIP
>>> write_report(build_report(load_study("configs/demo.toml")), "reports")  # doctest: +SKIP
"""

from __future__ import annotations

from . import physics_sections, search_section  # noqa: F401  (register their sections)
from .builder import Report, build_report, render_page, write_report
from .sections import (
    SECTIONS,
    ReportContext,
    Section,
    SectionOutput,
    default_sections,
    esc,
    para,
    register_section,
    table,
)

__all__ = [
    "SECTIONS",
    "Report",
    "ReportContext",
    "Section",
    "SectionOutput",
    "build_report",
    "default_sections",
    "esc",
    "para",
    "register_section",
    "render_page",
    "table",
    "write_report",
]

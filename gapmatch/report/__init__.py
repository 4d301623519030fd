"""Self-contained HTML reports of a study.

The pieces: :mod:`.registry` (section names, titles, builders), :mod:`.context` (what a
builder gets), :mod:`.html` (escaping and tables), :mod:`.sections` and the section
modules beside it (the built-in sections), :mod:`.figures` and :mod:`.loss_figures`
(plotly figures that only draw), :mod:`.colours` (named colours and the words captions
use for them), :mod:`.style` (the one figure style and the cautions),
:mod:`.summary_box` (the answer to the study's question at the top of the page),
:mod:`.builder` (the page, written as one set of files).

>>> from gapmatch.study import load_study                      # doctest: +SKIP
>>> from gapmatch.report import build_report, write_report     # doctest: +SKIP
>>> write_report(build_report(load_study("configs/demo.toml")), "reports")  # doctest: +SKIP
"""

from __future__ import annotations

from . import energy_sections, physics_sections, search_section, sections  # noqa: F401
from .builder import Report, build_report, render_page, write_report
from .context import ReportContext
from .html import esc, para, table
from .registry import (
    SECTIONS,
    Section,
    SectionOutput,
    check_section_names,
    default_sections,
    register_section,
)

__all__ = [
    "SECTIONS",
    "Report",
    "ReportContext",
    "Section",
    "SectionOutput",
    "build_report",
    "check_section_names",
    "default_sections",
    "esc",
    "para",
    "register_section",
    "render_page",
    "table",
    "write_report",
]

"""The registry of report sections: names, titles and builders.

A section is a function ``build(ctx: ReportContext) -> SectionOutput`` registered under a
name with :func:`register_section`. A study file selects sections by name, in order, in
``study.sections`` (checked here, against the registry, before anything is computed:
:func:`check_section_names`); sections registered with ``default=True`` are used when it
gives none.
"""

from __future__ import annotations

import difflib
from collections.abc import Callable, Sequence
from dataclasses import dataclass, field
from typing import TYPE_CHECKING

from ..errors import InputError

if TYPE_CHECKING:  # pragma: no cover
    from .context import ReportContext

__all__ = [
    "SECTIONS",
    "DEFAULT_SECTIONS",
    "Section",
    "SectionOutput",
    "register_section",
    "default_sections",
    "check_section_names",
]


@dataclass
class SectionOutput:
    """What a section contributes.

    Attributes
    ----------
    blocks : list
        In display order: ``str`` (safe HTML) or :class:`plotly.graph_objects.Figure`.
    data : dict
        File suffix (e.g. ``"map.csv"``) -> DataFrame (written as CSV) or dict (JSON),
        written beside the report as ``<study-name>_<suffix>``.
    summary : dict
        JSON-ready entries merged into ``<study-name>_summary.json`` under the section's
        name.
    """

    blocks: list = field(default_factory=list)
    data: dict = field(default_factory=dict)
    summary: dict = field(default_factory=dict)


@dataclass(frozen=True)
class Section:
    """A registered report section."""

    name: str
    title: str
    build: Callable[[ReportContext], SectionOutput]
    default: bool = True


#: name -> Section, in registration order
SECTIONS: dict[str, Section] = {}


def register_section(name: str, title: str, *, default: bool = True):
    """Decorator registering ``build(ctx) -> SectionOutput`` as report section ``name``.

    Parameters
    ----------
    name : str
        Name used in a study file's ``study.sections`` list.
    title : str
        Heading shown in the report.
    default : bool
        Include the section when a study lists no sections.
    """

    def deco(fn: Callable[[ReportContext], SectionOutput]):
        if name in SECTIONS:
            raise ValueError(f"report section {name!r} is already registered")
        SECTIONS[name] = Section(name, title, fn, default)
        return fn

    return deco


def default_sections() -> list[str]:
    """Names of the sections used when a study gives none."""
    return [s.name for s in SECTIONS.values() if s.default]


class _Defaults(Sequence):
    """Live view of :func:`default_sections` (so later registrations are included)."""

    def __getitem__(self, i):
        return default_sections()[i]

    def __len__(self):
        return len(default_sections())


DEFAULT_SECTIONS = _Defaults()


def check_section_names(names: Sequence[str], field_name: str = "study.sections") -> list[str]:
    """Check section names against the registry.

    Parameters
    ----------
    names : sequence of str
        Names as a study file gives them; empty means the default sections.
    field_name : str
        Key path for the error message.

    Returns
    -------
    list of str
        The names to build, in order.

    Raises
    ------
    InputError
        For an unknown name, naming its position (1-based) with a did-you-mean hint.
    """
    if not names:
        return default_sections()
    for i, name in enumerate(names, start=1):
        if name not in SECTIONS:
            close = difflib.get_close_matches(name, list(SECTIONS), n=1, cutoff=0.6)
            hint = f"; did you mean '{close[0]}'?" if close else ""
            allowed = ", ".join(f"'{s}'" for s in SECTIONS)
            raise InputError(f"{field_name}[{i}]", f"must be one of {allowed}{hint}", name)
    return list(names)

"""The sub-commands of the CLI: name -> one-line help, in the order ``--help`` shows them.

Kept apart from the sub-command modules so that ``gapmatch --help`` lists every command
without importing any of them (each module imports the part of the package it drives).
"""

from __future__ import annotations

__all__ = ["COMMANDS", "MODULES"]

#: sub-command (also its module under gapmatch.cli) -> one-line help
COMMANDS: dict[str, str] = {
    "evaluate": "efficiency of one stack (detailed-balance limit)",
    "map": "efficiency map over a grid of two junctions' gaps",
    "optimise": "search the best band gaps of a 2-6 junction stack (detailed-balance limit)",
    "report": "run a TOML study file and write an HTML report with its data files",
    "yield": "annual energy of a stack at a site (hourly spectra, cell temperatures)",
    "roadmap": "rank candidate stacks at each milestone of a material roadmap study",
    "materials": "list the materials library with the source of every number",
    "init": "write a commented starting study file from a template",
    "study-keys": "print every table and key of study files (type, unit, default, range)",
}

#: sub-commands whose module has another name (``yield`` is a Python keyword)
MODULES: dict[str, str] = {"yield": "energy", "study-keys": "study_keys"}

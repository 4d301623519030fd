"""Materials library: absorbers of tandem work with cited parameters.

>>> from gapmatch.materials import load_library
>>> lib = load_library()
>>> round(float(lib["GaAs"].gap.gap_at_T(298.0)), 3)
1.423
>>> lib["Si"].gap.params["beta_K"].source.citation
'C. D. Thurmond, J. Electrochem. Soc. 122, 1133 (1975)'

Every number carries its :class:`Source`; a source's ``status`` (``"cited"``, ``"from
memory"``, ``"common practice, no source"``) reaches every output that uses it.
"""

from __future__ import annotations

from .library import (
    REFERENCE_K,
    STATUSES,
    STUDY_STATUS,
    GapModel,
    Material,
    MaterialLibrary,
    Source,
    Sourced,
    load_library,
    parse_library,
)

__all__ = [
    "REFERENCE_K",
    "STATUSES",
    "STUDY_STATUS",
    "GapModel",
    "Material",
    "MaterialLibrary",
    "Source",
    "Sourced",
    "load_library",
    "parse_library",
]

"""Named colours of the report: every trace colour and the English word a caption uses
for it come from here, so a caption cannot name a colour the figure does not draw.

The categorical colours are the Okabe-Ito palette [1]_ (readable with the common
colour-vision deficiencies), under the names its authors give them.

References
----------
.. [1] M. Okabe and K. Ito, "Color Universal Design" (2008), the eight-colour palette.
"""

from __future__ import annotations

from dataclasses import dataclass

__all__ = [
    "NamedColour",
    "ORANGE",
    "SKY_BLUE",
    "BLUISH_GREEN",
    "YELLOW",
    "BLUE",
    "VERMILION",
    "REDDISH_PURPLE",
    "INK",
    "WHITE",
    "ALL",
    "RIDGE",
    "OPTIMUM",
    "MATCHED_LINE",
    "WINDOW_OUTLINE",
    "CONNECTION",
    "word_of",
]


@dataclass(frozen=True)
class NamedColour:
    """A colour with the word a caption uses for it.

    Attributes
    ----------
    hex : str
        ``#rrggbb``.
    word : str
        English name shown in captions (lower case).
    """

    hex: str
    word: str

    def rgba(self, alpha: float) -> str:
        """The colour as a CSS ``rgba()`` string with opacity ``alpha`` (0 to 1)."""
        r, g, b = (int(self.hex[i : i + 2], 16) for i in (1, 3, 5))
        return f"rgba({r},{g},{b},{alpha:g})"

    def __str__(self) -> str:
        return self.hex


ORANGE = NamedColour("#E69F00", "orange")
SKY_BLUE = NamedColour("#56B4E9", "sky blue")
BLUISH_GREEN = NamedColour("#009E73", "bluish green")
YELLOW = NamedColour("#F0E442", "yellow")
BLUE = NamedColour("#0072B2", "blue")
VERMILION = NamedColour("#D55E00", "vermilion")
REDDISH_PURPLE = NamedColour("#CC79A7", "reddish purple")
#: text and line colour of the report
INK = NamedColour("#1f2a30", "black")
WHITE = NamedColour("#ffffff", "white")

#: every named colour
ALL: tuple[NamedColour, ...] = (
    ORANGE,
    SKY_BLUE,
    BLUISH_GREEN,
    YELLOW,
    BLUE,
    VERMILION,
    REDDISH_PURPLE,
    INK,
    WHITE,
)

# ---- roles ---------------------------------------------------------------------------
#: best-partner ridge on the maps (reads on both ends of cividis)
RIDGE = REDDISH_PURPLE
#: optimum star on maps and J-V panels
OPTIMUM = VERMILION
#: current-matched line on the mismatch map
MATCHED_LINE = VERMILION
#: dashed outline of the tolerance window
WINDOW_OUTLINE = INK
#: line colour per connection
CONNECTION = {"series": BLUE, "independent": VERMILION, "voltage-matched": BLUISH_GREEN}


def word_of(colour: str) -> str | None:
    """The caption word of a ``#rrggbb`` colour, or None if it is not a named one."""
    c = colour.strip().lower()
    for nc in ALL:
        if nc.hex.lower() == c:
            return nc.word
    return None

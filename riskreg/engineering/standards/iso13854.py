"""ISO 13854 (minimum gaps to avoid crushing of parts of the human body).

Values recalled from memory [std, from memory]: check them against the edition
the site works to. The same gaps are recalled for the 1996 and 2017 editions.
"""

from __future__ import annotations

from ..derivation import Constant, ConstantTable
from . import reedition

SOURCE = "ISO 13854"
DEFAULT_EDITION = "2017"

# body part → (minimum gap in mm, what the part covers)
GAPS: dict[str, tuple[int, str]] = {
    "body": (500, "the whole body"),
    "head": (300, "the head, in the least favourable position"),
    "leg": (180, "the leg"),
    "foot": (120, "the foot"),
    "toes": (50, "the toes"),
    "arm": (120, "the arm"),
    "hand": (100, "the hand, wrist or fist"),
    "finger": (25, "a finger"),
}

_ROWS = tuple(
    Constant(
        f"gap.{part}",
        gap,
        "mm",
        SOURCE,
        DEFAULT_EDITION,
        "Table 1",
        note=f"minimum gap for {covers}",
    )
    for part, (gap, covers) in GAPS.items()
)

EDITIONS: dict[str, ConstantTable] = {"2017": ConstantTable(SOURCE, "2017", _ROWS)}
EDITIONS["1996"] = reedition(EDITIONS["2017"], "1996")

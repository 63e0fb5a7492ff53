"""IEC 62061 (functional safety of safety-related control systems of machinery).

Annex A risk matrix, recalled from memory [std, from memory]. The cells match
the 2005 edition as recalled; the Se 4 low-CI cells are to be checked against
the 2021 edition.
"""

from __future__ import annotations

from ..derivation import Constant, ConstantTable
from . import reedition

SOURCE = "IEC 62061"
DEFAULT_EDITION = "2021"

_BANDS = ("3-4", "5-7", "8-10", "11-13", "14-15")
_MATRIX = {
    4: ("SIL 2", "SIL 2", "SIL 2", "SIL 3", "SIL 3"),
    3: ("none", "other measures", "SIL 1", "SIL 2", "SIL 3"),
    2: ("none", "none", "other measures", "SIL 1", "SIL 2"),
    1: ("none", "none", "none", "other measures", "SIL 1"),
}

_ROWS = tuple(
    Constant(
        f"matrix.se{se}.ci{band}",
        cell,
        "",
        SOURCE,
        DEFAULT_EDITION,
        "Annex A, Table A.6",
        note="Se 4 low-CI cells to be checked against the 2021 edition" if se == 4 else "",
    )
    for se, cells in _MATRIX.items()
    for band, cell in zip(_BANDS, cells, strict=True)
)

EDITIONS: dict[str, ConstantTable] = {"2021": ConstantTable(SOURCE, "2021", _ROWS)}
EDITIONS["2005"] = reedition(EDITIONS["2021"], "2005")

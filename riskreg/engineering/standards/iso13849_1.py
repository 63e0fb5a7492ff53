"""ISO 13849-1 (safety of machinery, safety-related parts of control systems).

Values recalled from memory [std, from memory]: check against the edition the
site works to before relying on them.
"""

from __future__ import annotations

from ..derivation import Constant, ConstantTable
from . import reedition

SOURCE = "ISO 13849-1"
DEFAULT_EDITION = "2015"


def _c(key: str, value: object, unit: str, clause: str, note: str = "") -> Constant:
    return Constant(key, value, unit, SOURCE, DEFAULT_EDITION, clause, note=note)


_RISK_GRAPH = {
    ("S1", "F1", "P1"): "a",
    ("S1", "F1", "P2"): "b",
    ("S1", "F2", "P1"): "b",
    ("S1", "F2", "P2"): "c",
    ("S2", "F1", "P1"): "c",
    ("S2", "F1", "P2"): "d",
    ("S2", "F2", "P1"): "d",
    ("S2", "F2", "P2"): "e",
}

_ROWS: list[Constant] = [
    _c(f"risk_graph.{s}.{f}.{p}", plr, "PL", "Annex A, Figure A.1")
    for (s, f, p), plr in _RISK_GRAPH.items()
]
_ROWS += [
    _c(
        "f1_max_exposure_fraction",
        1 / 20,
        "of operating time",
        "Annex A.2.2",
        "F1 only if accumulated exposure is at most 1/20 of the operating time",
    ),
    _c(
        "f1_min_interval_min",
        15,
        "min",
        "Annex A.2.2",
        "F1 only if the frequency is not higher than once per 15 minutes",
    ),
]

EDITIONS: dict[str, ConstantTable] = {}
EDITIONS["2015"] = ConstantTable(SOURCE, "2015", tuple(_ROWS))
EDITIONS["2023"] = reedition(EDITIONS["2015"], "2023")

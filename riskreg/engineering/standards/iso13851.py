"""ISO 13851 (two-hand control devices: principles for design and selection).

Recalled from memory [std, from memory]; check against the edition the site
works to. Clause numbers are those recalled from the EN 574 / ISO 13851 layout
and are marked "as recalled" where not certain.

- Table 1: the types and the functional characteristics each requires; the
  minimum Category (ISO 13849-1) of each type and, since the 2019 edition, the
  PL it corresponds to: I → Cat 1 / PL c, II → Cat 3 / PL d, IIIA → Cat 1 /
  PL c, IIIB → Cat 3 / PL d, IIIC → Cat 4 / PL e.
- Synchronous actuation: both actuators actuated within at most 0.5 s.
- Prevention of defeat: actuators at least 260 mm apart against one hand,
  550 mm against hand and elbow of the same arm, or shrouded.

Only the 2019 edition is kept: the earlier edition named Categories only (no
PL), so its ``type.*.pl`` rows would differ and are not recalled with
confidence.
"""

from __future__ import annotations

from ..derivation import Constant, ConstantTable

SOURCE = "ISO 13851"
DEFAULT_EDITION = "2019"

TYPES = ("I", "II", "IIIA", "IIIB", "IIIC")

_BASE = ("simultaneous actuation", "cessation", "prevention of accidental actuation", "defeat")
_REQUIRES = {
    "I": _BASE,
    "II": (*_BASE, "re-initiation"),
    "IIIA": (*_BASE, "re-initiation", "synchronous actuation"),
    "IIIB": (*_BASE, "re-initiation", "synchronous actuation"),
    "IIIC": (*_BASE, "re-initiation", "synchronous actuation"),
}
_MIN_CATEGORY = {"I": "1", "II": "3", "IIIA": "1", "IIIB": "3", "IIIC": "4"}
_PL = {"I": "c", "II": "d", "IIIA": "c", "IIIB": "d", "IIIC": "e"}


def _c(key: str, value: object, unit: str, clause: str, note: str = "") -> Constant:
    return Constant(key, value, unit, SOURCE, DEFAULT_EDITION, clause, note=note)


_ROWS: list[Constant] = []
for _t in TYPES:
    _ROWS += [
        _c(f"type.{_t}.requires", _REQUIRES[_t], "", "Table 1", "functional characteristics"),
        _c(
            f"type.{_t}.min_category",
            _MIN_CATEGORY[_t],
            "Category",
            "Table 1",
            "minimum Category of ISO 13849-1",
        ),
        _c(f"type.{_t}.pl", _PL[_t], "PL", "Table 1", "PL the type corresponds to"),
    ]
_ROWS += [
    _c(
        "synchronous.max_window_s",
        0.5,
        "s",
        "clause on synchronous actuation (5.7 as recalled)",
        "both actuators actuated within this time, else no output",
    ),
    _c(
        "defeat.one_hand_mm",
        260.0,
        "mm",
        "clause on prevention of defeat (8 as recalled)",
        "least spacing between actuators against actuation with one hand",
    ),
    _c(
        "defeat.hand_elbow_mm",
        550.0,
        "mm",
        "clause on prevention of defeat (8 as recalled)",
        "least spacing between actuators against hand and elbow of the same arm",
    ),
]

EDITIONS: dict[str, ConstantTable] = {
    DEFAULT_EDITION: ConstantTable(SOURCE, DEFAULT_EDITION, tuple(_ROWS)),
}

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

# --- PFH of the basic subsystem architectures [std, from memory] ---------------
# Clause numbers: 6.7.8.2 is the 2005 numbering as recalled; the 2021 edition
# renumbered its clauses (to be checked).
_ARCH = "basic subsystem architectures (2005: 6.7.8.2; 2021 numbering to be checked)"
_SIL_TABLE = "SIL and PFH limits, high demand (2005: Table 3)"


def _p(key: str, value: object, unit: str, clause: str, note: str = "") -> Constant:
    return Constant(key, value, unit, SOURCE, DEFAULT_EDITION, clause, note=note)


_ROWS = _ROWS + (
    _p("pfh.sil_band.1", (1e-6, 1e-5), "1/h", _SIL_TABLE, "SIL 1: 1e-6 <= PFH < 1e-5"),
    _p("pfh.sil_band.2", (1e-7, 1e-6), "1/h", _SIL_TABLE, "SIL 2: 1e-7 <= PFH < 1e-6"),
    _p("pfh.sil_band.3", (1e-8, 1e-7), "1/h", _SIL_TABLE, "SIL 3: 1e-8 <= PFH < 1e-7"),
    _p("pfh.beta.min", 0.01, "", _ARCH, "common-cause factor beta from the CCF assessment"),
    _p("pfh.beta.max", 0.1, "", _ARCH, "common-cause factor beta from the CCF assessment"),
    _p("pfh.dc.max_percent", 99, "%", _ARCH, "DC claimed for a subsystem element at most 99 %"),
    _p(
        "pfh.lambda_from_b10d.factor",
        0.1,
        "",
        "lambda_D of electromechanical elements from B10D",
        "lambda_D = 0.1 * C / B10D (C operations per hour)",
    ),
    _p("pfh.architecture.A", "PFH = Σ λD,i", "", _ARCH, "single channel, no diagnostics"),
    _p(
        "pfh.architecture.B",
        "PFH = (1−β)² · λD1 · λD2 · T1 + β · (λD1 + λD2) / 2",
        "",
        _ARCH,
        "two channels, no diagnostics",
    ),
    _p(
        "pfh.architecture.C",
        "PFH ≈ Σ λD,i · (1 − DCi)",
        "",
        _ARCH,
        "single channel with diagnostics",
    ),
    _p(
        "pfh.architecture.D",
        "PFH = (1−β)² · [λD1 λD2 (DC1 + DC2) T2/2 + λD1 λD2 (2 − DC1 − DC2) T1/2] "
        "+ β (λD1 + λD2) / 2",
        "",
        _ARCH,
        "two channels with diagnostics",
    ),
)

EDITIONS: dict[str, ConstantTable] = {"2021": ConstantTable(SOURCE, "2021", _ROWS)}
EDITIONS["2005"] = reedition(EDITIONS["2021"], "2005")

"""ANSI B11.0 (safety of machinery, general requirements and risk assessment).

The example risk-estimation matrix, recalled from memory [std, from memory].
"""

from __future__ import annotations

from ..derivation import Constant, ConstantTable

SOURCE = "ANSI B11.0"
DEFAULT_EDITION = "2020"

_SEVERITIES = ("catastrophic", "serious", "moderate", "minor")
_MATRIX = {
    "very likely": ("high", "high", "high", "medium"),
    "likely": ("high", "high", "medium", "low"),
    "unlikely": ("medium", "medium", "low", "negligible"),
    "remote": ("low", "low", "negligible", "negligible"),
}

_ROWS = tuple(
    Constant(
        f"matrix.{prob}.{sev}", level, "", SOURCE, DEFAULT_EDITION, "Annex, example risk matrix"
    )
    for prob, levels in _MATRIX.items()
    for sev, level in zip(_SEVERITIES, levels, strict=True)
)

EDITIONS: dict[str, ConstantTable] = {"2020": ConstantTable(SOURCE, "2020", _ROWS)}

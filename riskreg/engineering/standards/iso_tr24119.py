"""ISO/TR 24119 (evaluation of fault masking in series connections of interlocking
devices with potential-free contacts).

Recalled from memory of the 2015 edition [std, from memory]. When the switches
of several guards are wired in series to one logic unit, opening one guard can
hide a fault of another guard's switch from the diagnostics ("fault masking"),
so the diagnostic coverage (DC) that may be claimed is capped.

The report's table gives the maximum DC by the number of frequently operated
guards and of the other guards in the series. Its cells are NOT recalled with
enough confidence to be kept here. What is recalled: where fault masking is
possible, DC "high" (>= 99 %) cannot be claimed, and with many guards, or with
more than one guard opened often, even "low" may not be allowed. The register
therefore applies one conservative cap, DC below 90 % (at most the "low" band
of ISO 13849-1, 60 % <= DC < 90 %), and says so: check the cap against the
report's table [from memory: check ISO/TR 24119 Table]. A site that has checked
the table can mark the row checked or change it.
"""

from __future__ import annotations

from ..derivation import Constant, ConstantTable

SOURCE = "ISO/TR 24119"
DEFAULT_EDITION = "2015"

TABLE_NOTE = "[from memory: check ISO/TR 24119 Table]"


def _c(key: str, value: object, unit: str, clause: str, note: str = "") -> Constant:
    return Constant(key, value, unit, SOURCE, DEFAULT_EDITION, clause, note=note)


_ROWS: tuple[Constant, ...] = (
    _c(
        "masking.dc_cap_below",
        90.0,
        "%",
        "table of maximum DC (as recalled)",
        "where fault masking is possible the DC claimed must be below 90 %, i.e. at most "
        f"the 'low' band (60 % <= DC < 90 %) {TABLE_NOTE}",
    ),
    _c(
        "masking.min_guards",
        2,
        "guards",
        "scope and principle of fault masking (as recalled)",
        "fault masking needs the switches of at least two guards in one series connection",
    ),
    _c(
        "masking.table_depends_on",
        ("frequently operated guards", "other guards in the series"),
        "",
        "table of maximum DC (as recalled)",
        f"the maximum DC falls as these numbers rise; cells not held here {TABLE_NOTE}",
    ),
)

EDITIONS: dict[str, ConstantTable] = {
    DEFAULT_EDITION: ConstantTable(SOURCE, DEFAULT_EDITION, _ROWS),
}

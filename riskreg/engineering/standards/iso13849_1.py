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


# --- Achieved PL: bands, simplified procedure, component data -----------------
# All recalled from memory [std, from memory]. Table and clause numbers are given
# as recalled for the 2015 edition, with the 2006 numbering where it differs.

_MTTFD = "4.5.2, Table 4 (2006: Table 5)"
_DC = "4.5.3, Table 5 (2006: Table 6)"
_PFHD = "4.5.1, Table 2 (2006: Table 3)"
_SIMPLIFIED = "4.5.4, Figure 5 (2006: Table 7)"
_CATEGORIES = "6.2, Table 10 (summary of requirements for categories)"

_ROWS += [
    # MTTFd of each channel (years): band edges and caps
    _c("mttfd.band.low_min", 3, "years", _MTTFD, "low 3 <= MTTFd < 10; below 3 years not allowed"),
    _c("mttfd.band.medium_min", 10, "years", _MTTFD, "medium 10 <= MTTFd < 30"),
    _c("mttfd.band.high_min", 30, "years", _MTTFD, "high 30 <= MTTFd <= cap"),
    _c("mttfd.cap", 100, "years", _MTTFD, "a channel's MTTFd is counted as at most 100 years"),
    _c(
        "mttfd.cap_cat4",
        2500,
        "years",
        _MTTFD,
        "Category 4: a channel's MTTFd is counted as at most 2,500 years (since the 2015 "
        "edition; 100 years in 2006) [from memory]",
    ),
    # DCavg (percent): band edges
    _c("dc.band.low_min", 60, "%", _DC, "none < 60 %"),
    _c("dc.band.medium_min", 90, "%", _DC, "low 60 <= DC < 90 %"),
    _c("dc.band.high_min", 99, "%", _DC, "medium 90 <= DC < 99 %; high >= 99 %"),
    # CCF
    _c("ccf.min_points", 65, "points", "Annex F, Table F.1", "required for Categories 2, 3 and 4"),
    _c("ccf.required_categories", ("2", "3", "4"), "", "Annex F; 6.2.5-6.2.7"),
    _c(
        "beta_ccf",
        0.02,
        "",
        "Annex K (Markov models), Annex F",
        "common-cause factor beta = 2 % assumed in the models behind the simplified procedure",
    ),
    # PFHd bands per PL (1/h), lower edge inclusive, upper edge exclusive
    _c("pfhd_band.a", (1e-5, 1e-4), "1/h", _PFHD),
    _c("pfhd_band.b", (3e-6, 1e-5), "1/h", _PFHD),
    _c("pfhd_band.c", (1e-6, 3e-6), "1/h", _PFHD),
    _c("pfhd_band.d", (1e-7, 1e-6), "1/h", _PFHD),
    _c("pfhd_band.e", (1e-8, 1e-7), "1/h", _PFHD),
    # PL and SIL (high demand) correspondence
    _c("pl_sil.a", None, "SIL", "4.5.1, PL/SIL correspondence (2006: Table 4)", "PL a: no SIL"),
    _c("pl_sil.b", 1, "SIL", "4.5.1, PL/SIL correspondence (2006: Table 4)"),
    _c("pl_sil.c", 1, "SIL", "4.5.1, PL/SIL correspondence (2006: Table 4)"),
    _c("pl_sil.d", 2, "SIL", "4.5.1, PL/SIL correspondence (2006: Table 4)"),
    _c("pl_sil.e", 3, "SIL", "4.5.1, PL/SIL correspondence (2006: Table 4)"),
    # Category rules used by the simplified procedure
    _c("category.B.channels", 1, "channels", "6.2.3"),
    _c("category.1.channels", 1, "channels", "6.2.4"),
    _c("category.2.channels", 1, "channels", "6.2.5", "one functional channel plus test equipment"),
    _c("category.3.channels", 2, "channels", "6.2.6"),
    _c("category.4.channels", 2, "channels", "6.2.7"),
    _c("category.B.dc_columns", ("none",), "DCavg", _SIMPLIFIED, "no credit for diagnostics"),
    _c("category.1.dc_columns", ("none",), "DCavg", _SIMPLIFIED, "no credit for diagnostics"),
    _c("category.2.dc_columns", ("low", "medium"), "DCavg", _SIMPLIFIED, "needs at least low"),
    _c("category.3.dc_columns", ("low", "medium"), "DCavg", _SIMPLIFIED, "needs at least low"),
    _c("category.4.dc_columns", ("high",), "DCavg", _SIMPLIFIED, "needs high"),
    _c(
        "category.B.mttfd_max_y",
        30,
        "years",
        "6.2.3",
        "Category B: MTTFd of the channel low to medium; counted as at most 30 years",
    ),
    _c("category.1.mttfd_min_band", "high", "MTTFd", "6.2.4", "Category 1 needs high MTTFd"),
    _c("category.4.mttfd_min_band", "high", "MTTFd", "6.2.7", "Category 4 needs high MTTFd"),
    _c(
        "category.1.well_tried",
        True,
        "",
        "6.2.4",
        "Category 1 needs well-tried components and well-tried safety principles",
    ),
    _c(
        "category.2.test_rate_ratio_min",
        100,
        "test rate / demand rate",
        "6.2.5",
        "Category 2: the test rate at least 100 times the demand rate",
    ),
    _c("mission_time_y", 20, "years", "4.5.2, Annex K", "mission time of the calculations"),
]

# The simplified procedure: (Category, DCavg column, MTTFd band) -> PL.
# Cells not listed are not covered by the table (Category 1 and 4 need high
# MTTFd; Category B counts MTTFd as at most medium, so its "high" row is not used).
_SIMPLIFIED_CELLS = {
    ("B", "none", "low"): "a",
    ("B", "none", "medium"): "b",
    ("1", "none", "high"): "c",
    ("2", "low", "low"): "a",
    ("2", "low", "medium"): "b",
    ("2", "low", "high"): "c",
    ("2", "medium", "low"): "b",
    ("2", "medium", "medium"): "c",
    ("2", "medium", "high"): "d",
    ("3", "low", "low"): "b",
    ("3", "low", "medium"): "c",
    ("3", "low", "high"): "d",
    ("3", "medium", "low"): "c",
    ("3", "medium", "medium"): "d",
    ("3", "medium", "high"): "d",
    ("4", "high", "high"): "e",
}
_ROWS += [
    _c(f"simplified.{cat}.{dc}.{mttfd}", pl, "PL", _SIMPLIFIED)
    for (cat, dc, mttfd), pl in _SIMPLIFIED_CELLS.items()
]

# Typical values of Annex C, Table C.1 [std, from memory: verify against the edition]
_TABLE_C1 = "Annex C, Table C.1"
_ROWS += [
    _c("b10d.pneumatic_valve", 20_000_000, "cycles", _TABLE_C1),
    _c("b10d.relay_small_load", 20_000_000, "cycles", _TABLE_C1, "relays and contactor relays"),
    _c("b10d.relay_maximum_load", 400_000, "cycles", _TABLE_C1, "relays and contactor relays"),
    _c("b10d.contactor_small_load", 20_000_000, "cycles", _TABLE_C1),
    _c(
        "b10d.contactor_nominal_load",
        1_300_000,
        "cycles",
        _TABLE_C1,
        "recalled with least confidence: verify against the edition",
    ),
    _c("b10d.position_switch", 20_000_000, "cycles", _TABLE_C1),
    _c(
        "b10d.position_switch_separate_actuator",
        2_000_000,
        "cycles",
        _TABLE_C1,
        "position switch with a separate actuator or with guard locking",
    ),
    _c("b10d.emergency_stop", 100_000, "cycles", _TABLE_C1, "emergency stop devices"),
    _c("b10d.enabling_switch", 100_000, "cycles", _TABLE_C1),
    _c("mttfd.mechanical_parts", 150, "years", _TABLE_C1),
    _c(
        "mttfd.hydraulic_parts",
        150,
        "years",
        _TABLE_C1,
        "only at nop >= 1,000,000 cycles/year (2015 edition); the table gives other "
        "values for fewer cycles, not recalled here",
    ),
    _c("t10d.replace_before", True, "", "Annex C, C.4", "replace the part before T10d"),
]

# Subsystems in series without PFHd values (Table 11): lowest PL and the count
# Nlow of subsystems at that PL -> (largest Nlow that keeps the lowest PL, PL when
# Nlow is larger; None = not allowed).
_SERIES = "6.3, Table 11"
_ROWS += [
    _c("series.count.a", (3, None), "", _SERIES, "a: Nlow > 3 not allowed"),
    _c("series.count.b", (2, "a"), "", _SERIES, "b: Nlow > 2 -> a"),
    _c("series.count.c", (2, "b"), "", _SERIES, "c: Nlow > 2 -> b"),
    _c("series.count.d", (3, "c"), "", _SERIES, "d: Nlow > 3 -> c"),
    _c("series.count.e", (3, "d"), "", _SERIES, "e: Nlow > 3 -> d"),
    _c("series.count_rule.status", "present", "", _SERIES),
]

EDITIONS: dict[str, ConstantTable] = {}
EDITIONS["2015"] = ConstantTable(SOURCE, "2015", tuple(_ROWS))
EDITIONS["2023"] = reedition(EDITIONS["2015"], "2023")
EDITIONS["2023"] = reedition(
    EDITIONS["2023"],
    "2023",
    **{"series.count_rule.status": "possibly dropped in 2023 [from memory]"},
)

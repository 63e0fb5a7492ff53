"""ISO 13855 (positioning of safeguards with respect to the approach speeds of
parts of the human body).

Every value here is recalled from memory of the 2010 edition [std, from memory],
and so are the clause numbers: check both against the edition the site works to.

Editions
--------
"2010"  the values as recalled.
"2024"  the later edition revises the intrusion allowances (the C values). Its
        numbers are NOT known here and are not invented: the "2024" table carries
        the 2010 rows unchanged, each with the note "to be checked: later edition
        revises the intrusion allowances", and every calculation made with it
        warns the user. A site that works to the later edition can select it and
        sees at once which values it must check; it cannot mistake them for
        values read from that edition.

The reach-over table (Table 1 of the 2010 edition, additional distance C_RO by
the height of the hazard and of the top edge of the detection zone) is not held
here, because its cells are not recalled with enough confidence. The caller
reads C_RO from the table and passes it in; the derivation says so.
"""

from __future__ import annotations

import dataclasses

from ..derivation import Constant, ConstantTable

SOURCE = "ISO 13855"
DEFAULT_EDITION = "2010"

LATER_EDITION_NOTE = "to be checked: later edition revises the intrusion allowances"
RECALLED_CLAUSE = "clause number recalled"


def _c(key: str, value: object, unit: str, clause: str, note: str = "") -> Constant:
    text = f"{note}; {RECALLED_CLAUSE}" if note else RECALLED_CLAUSE
    return Constant(key, value, unit, SOURCE, DEFAULT_EDITION, clause, note=text)


_ROWS: tuple[Constant, ...] = (
    # Approach speeds
    _c("k.hand_arm", 2000, "mm/s", "6.2.3", "approach speed of hand and arm"),
    _c("k.body", 1600, "mm/s", "6.2.3", "approach speed of the body (walking)"),
    # Light curtain, normal approach, detection capability d <= 40 mm
    _c("curtain.c_factor", 8, "mm/mm", "6.2.3", "C = 8(d - 14), never below 0"),
    _c("curtain.c_d_offset", 14, "mm", "6.2.3", "C = 8(d - 14), never below 0"),
    _c("curtain.d_max_hand", 40, "mm", "6.2.3", "largest d of the hand-detection formula"),
    _c("curtain.s_min_k2000", 100, "mm", "6.2.3", "S with K = 2000 mm/s is at least 100 mm"),
    _c(
        "curtain.s_switch_k1600",
        500,
        "mm",
        "6.2.3",
        "if S > 500 mm recompute with K = 1600 mm/s, result at least 500 mm",
    ),
    # 40 < d <= 70 mm: body or arm detection
    _c("curtain.d_max_body", 70, "mm", "6.2.3", "largest d of the 850 mm formula"),
    _c("curtain.c_body", 850, "mm", "6.2.3", "C for 40 < d <= 70 mm"),
    # Multi-beam devices
    _c("multibeam.k", 1600, "mm/s", "6.2.5", "approach speed towards a multi-beam device"),
    _c("multibeam.c", 850, "mm", "6.2.5", "C for multi-beam devices"),
    _c("single_beam.c", 1200, "mm", "6.2.5", "C for a single beam"),
    _c("single_beam.height", 750, "mm", "6.2.5", "height of a single beam above the floor"),
    _c("beams.2", (400, 900), "mm", "6.2.5, table of beam heights"),
    _c("beams.3", (300, 700, 1100), "mm", "6.2.5, table of beam heights"),
    _c("beams.4", (300, 600, 900, 1200), "mm", "6.2.5, table of beam heights"),
    # Parallel approach (horizontal detection zone at height H)
    _c("parallel.k", 1600, "mm/s", "6.3", "approach speed for a parallel approach"),
    _c("parallel.c_base", 1200, "mm", "6.3", "C = 1200 - 0.4 H"),
    _c("parallel.h_factor", 0.4, "mm/mm", "6.3", "C = 1200 - 0.4 H"),
    _c("parallel.c_min", 850, "mm", "6.3", "1200 - 0.4 H is at least 850 mm"),
    _c("parallel.h_max", 1000, "mm", "6.3", "largest height of the detection zone"),
    _c("parallel.h_crawl", 300, "mm", "6.3", "above this, crawling under must be assessed"),
    _c("parallel.d_factor", 15, "mm/mm", "6.3", "H >= 15 (d - 50)"),
    _c("parallel.d_offset", 50, "mm", "6.3", "H >= 15 (d - 50)"),
    # Pressure-sensitive mats and floors
    _c("mat.k", 1600, "mm/s", "7", "approach speed towards a mat"),
    _c("mat.c", 1200, "mm", "7", "C for pressure-sensitive mats"),
    # Two-hand control devices
    _c("two_hand.k", 1600, "mm/s", "8", "approach speed towards a two-hand control"),
    _c("two_hand.c", 250, "mm", "8", "C where hands can encroach before release"),
    _c("two_hand.c_shielded", 0, "mm", "8", "C where shielding removes encroachment"),
    _c("two_hand.s_min", 100, "mm", "8", "S is at least 100 mm"),
    # Interlocking guards without guard locking
    _c("guard.k", 1600, "mm/s", "9", "approach speed towards an interlocking guard"),
)

EDITIONS: dict[str, ConstantTable] = {
    "2010": ConstantTable(SOURCE, "2010", _ROWS),
    "2024": ConstantTable(
        SOURCE,
        "2024",
        tuple(
            dataclasses.replace(c, edition="2024", note=f"{LATER_EDITION_NOTE}; {c.note}")
            for c in _ROWS
        ),
    ),
}

# Editions whose rows are carried over from another edition, not recalled from
# their own text: each calculation made with them warns.
CARRIED_OVER: dict[str, str] = {
    "2024": (
        "Edition 2024 selected: its constants here are the 2010 values carried over, not "
        f"values read from the 2024 text ({LATER_EDITION_NOTE}). Check every C value "
        "against that edition before relying on this distance."
    ),
}

"""IEC 61496 (electro-sensitive protective equipment, ESPE), parts 1 and 2, with
the application rules of IEC 62046 and ISO 13849-1 used with them.

Recalled from memory [std, from memory]; check against the edition the site
works to. One table is kept: the rows used here are not known to differ
between the editions in use.

- ESPE types: Type 2 suits up to PL c (SIL 1), Type 4 up to PL e (SIL 3).
  Light curtains (active opto-electronic protective devices, part 2) come in
  Types 2 and 4 only; Type 3 exists for other ESPE (e.g. laser scanners,
  part 3), not for light curtains.
- Restart interlock: where a person can stand inside the protected zone
  without being detected, the machine must not restart when the field clears;
  a manual reset from outside the zone, with a full view of it, is needed
  (ISO 13849-1 5.2.2 on manual reset, IEC 62046 as recalled).
- Muting: the protective function may be suspended only while there is no
  hazard to the person, e.g. while material passes (IEC 62046 as recalled).

Blanking (a fact of the trade [practice], kept in the code, not here): fixed
blanking leaves a gap in the field around a fixed object, which must be filled
by other guarding; floating blanking lets an object move in the field and
makes the detection capability coarser by the blanked size.
"""

from __future__ import annotations

from ..derivation import Constant, ConstantTable

SOURCE = "IEC 61496"
DEFAULT_EDITION = "2020"


def _c(key: str, value: object, unit: str, clause: str, note: str = "") -> Constant:
    return Constant(key, value, unit, SOURCE, DEFAULT_EDITION, clause, note=note)


_ROWS: tuple[Constant, ...] = (
    _c(
        "type.2.max_pl", "c", "PL", "part 1, ESPE types (as recalled)", "Type 2: up to PL c / SIL 1"
    ),
    _c(
        "type.4.max_pl", "e", "PL", "part 1, ESPE types (as recalled)", "Type 4: up to PL e / SIL 3"
    ),
    _c(
        "light_curtain.types",
        (2, 4),
        "",
        "part 2, scope (as recalled)",
        "light curtains (AOPD) are Type 2 or Type 4; Type 3 is for other ESPE",
    ),
    _c(
        "restart_interlock.when",
        "a person can stand inside the protected zone undetected",
        "",
        "application rules (IEC 62046; ISO 13849-1 5.2.2, as recalled)",
        "then a restart interlock with a manual reset outside the zone is needed",
    ),
    _c(
        "muting.when",
        "only while there is no hazard to the person",
        "",
        "part 1 muting function; IEC 62046 (as recalled)",
        "muting suspends the protective function: only in the non-hazardous part of the cycle",
    ),
)

EDITIONS: dict[str, ConstantTable] = {
    DEFAULT_EDITION: ConstantTable(SOURCE, DEFAULT_EDITION, _ROWS),
}

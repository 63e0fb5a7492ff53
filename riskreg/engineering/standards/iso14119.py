"""ISO 14119 (interlocking devices associated with guards: principles for design
and selection).

Recalled from memory of the 2013 edition [std, from memory], clause numbers
included: check both against the edition the site works to. A later edition
exists; its changes are not recalled here, so only the 2013 table is kept.

- The four types of interlocking device (clause 3 and Annex A as recalled):
  type 1 uncoded mechanically actuated, type 2 coded mechanically actuated,
  type 3 uncoded non-contact actuated, type 4 coded non-contact actuated.
- Coding levels of coded actuators: low 1 to 9 variations, medium 10 to 1000,
  high more than 1000.
- Defeat (clause 7, Table 3, Annex H as recalled): assess the motivation to
  defeat; uncoded devices and devices of low coding are easy to defeat with a
  simple tool or a spare actuator and need further measures (mounting out of
  reach or concealed, shielding, non-detachable fixing, monitoring or periodic
  checks), the more so the higher the motivation.
- Guard locking (clause 5.7 as recalled): needed where the hazard can still be
  present when a person reaches it after opening the guard.
- Interlocking devices connected in series (clause 8.6 as recalled) refer to
  ISO/TR 24119 for fault masking.
"""

from __future__ import annotations

from ..derivation import Constant, ConstantTable

SOURCE = "ISO 14119"
DEFAULT_EDITION = "2013"


def _c(key: str, value: object, unit: str, clause: str, note: str = "") -> Constant:
    return Constant(key, value, unit, SOURCE, DEFAULT_EDITION, clause, note=note)


_TYPES = "3 (definitions) and Annex A (as recalled)"
_CODING = "3 (definitions of coding levels, as recalled)"
_DEFEAT = "7, Table 3 and Annex H (as recalled)"

_ROWS: tuple[Constant, ...] = (
    _c("type.1", "uncoded, mechanically actuated", "", _TYPES, "e.g. cam-operated position switch"),
    _c("type.2", "coded, mechanically actuated", "", _TYPES, "e.g. tongue-actuated switch"),
    _c("type.3", "uncoded, non-contact actuated", "", _TYPES, "e.g. inductive or magnetic sensor"),
    _c("type.4", "coded, non-contact actuated", "", _TYPES, "e.g. RFID-coded sensor"),
    _c("coded_types", (2, 4), "", _TYPES, "types with a coded actuator"),
    _c("coding.low", (1, 9), "variations", _CODING, "low level coded actuator: 1 to 9"),
    _c("coding.medium", (10, 1000), "variations", _CODING, "medium: 10 to 1000"),
    _c("coding.high", (1001, None), "variations", _CODING, "high: more than 1000"),
    _c(
        "defeat.uncoded_measures",
        True,
        "",
        _DEFEAT,
        "uncoded devices (types 1 and 3) and low coding are easily defeated: measures "
        "against defeat are needed, the more so with a high motivation to defeat",
    ),
    _c(
        "defeat.motivation",
        ("low", "medium", "high"),
        "",
        _DEFEAT,
        "the motivation to defeat is assessed from what the guard hinders (Annex H)",
    ),
    _c(
        "guard_locking.when",
        "stopping time longer than the time to reach the hazard",
        "",
        "5.7 (as recalled)",
        "guard locking keeps the guard closed until the hazard has ceased",
    ),
    _c(
        "series.refer_tr24119",
        True,
        "",
        "8.6 (as recalled)",
        "series connection of interlocking devices: fault masking per ISO/TR 24119",
    ),
)

EDITIONS: dict[str, ConstantTable] = {
    DEFAULT_EDITION: ConstantTable(SOURCE, DEFAULT_EDITION, _ROWS),
}

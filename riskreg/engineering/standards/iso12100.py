"""ISO 12100 (general principles for design: risk assessment and risk reduction).

The three-step method and the criteria for choosing between guards and
protective devices, recalled from memory of the 2010 edition [std, from memory].
The clause numbers are recalled too: check both against the edition the site
works to.

- 6.1 and Figure 1: risk reduction in three steps, in this order: inherently
  safe design measures (6.2), safeguarding and complementary protective
  measures (6.3), information for use (6.4).
- 6.3.2.2: access to the hazard zone not needed in normal operation: fixed
  guards first; interlocking guards and sensitive protective equipment also
  listed.
- 6.3.2.3: access needed in normal operation: interlocking guards (with or
  without guard locking), sensitive protective equipment, two-hand control
  devices and the like, rather than fixed guards.
- 6.3.2.4: access for setting, teaching, fault finding, cleaning or
  maintenance: the special modes with hold-to-run, enabling devices and
  reduced speed.
- Ejection of parts or broken tools: guards, which stop what is thrown out;
  protective devices that only detect a person do not (clause recalled as
  6.3.2.1, to be checked).
- 6.3.5.2: the emergency stop is a complementary protective measure, not a
  substitute for safeguarding.
- 6.4: information for use is not a substitute for safeguarding; it addresses
  the risk left after the first two steps.
"""

from __future__ import annotations

from ..derivation import Constant, ConstantTable

SOURCE = "ISO 12100"
DEFAULT_EDITION = "2010"


def _c(key: str, value: object, clause: str, note: str = "") -> Constant:
    return Constant(key, value, "", SOURCE, DEFAULT_EDITION, clause, note=note)


_ROWS: tuple[Constant, ...] = (
    _c(
        "three_step.order",
        (
            "inherently safe design measures",
            "safeguarding and complementary protective measures",
            "information for use",
        ),
        "6.1, Figure 1 (as recalled)",
        "each step is used as far as practicable before the next",
    ),
    _c(
        "selection.no_access",
        ("fixed_guard", "interlocking_guard", "sensitive protective equipment"),
        "6.3.2.2 (as recalled)",
        "access to the hazard zone not needed in normal operation: fixed guards first",
    ),
    _c(
        "selection.frequent_access",
        ("interlocking_guard", "sensitive protective equipment", "two_hand_control"),
        "6.3.2.3 (as recalled)",
        "access needed in normal operation: movable interlocking guards and protective "
        "devices rather than fixed guards",
    ),
    _c(
        "selection.special_modes",
        ("hold_to_run", "enabling_device", "reduced speed"),
        "6.3.2.4 (as recalled)",
        "access for setting, teaching, fault finding, cleaning or maintenance",
    ),
    _c(
        "selection.ejection",
        "guards",
        "6.3.2.1 (as recalled; to be checked)",
        "where parts, material or broken tools can be thrown out, guards are chosen: "
        "devices that only detect a person do not stop them",
    ),
    _c(
        "complementary.emergency_stop",
        "complementary protective measure",
        "6.3.5.2 (as recalled)",
        "an emergency stop complements safeguarding; it does not replace it (see also ISO 13850)",
    ),
    _c(
        "information.not_substitute",
        True,
        "6.4 (as recalled)",
        "information for use does not replace inherently safe design or safeguarding",
    ),
)

EDITIONS: dict[str, ConstantTable] = {
    DEFAULT_EDITION: ConstantTable(SOURCE, DEFAULT_EDITION, _ROWS),
}

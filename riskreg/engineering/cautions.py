"""The cautions shown wherever the register states a requirement."""

from __future__ import annotations

LOCAL_LAW = (
    "Local law and the machine's type-C standard take precedence over the generic "
    "methods used here."
)
QUALIFIED_PERSON = "A qualified person must check every calculation and its inputs."
MEASURED_STOP = (
    "Stopping times must come from real measurements on the machine, repeated after "
    "any brake, valve or control work."
)
NOT_SAFE = "This result is a calculation on the inputs given; it does not make a machine safe."
RECALLED_CONSTANTS = (
    "Some constants are recalled, not yet checked against the standard in hand: "
    "check them against the edition your site works to."
)

REQUIREMENT = (LOCAL_LAW, QUALIFIED_PERSON, NOT_SAFE)
DISTANCE = (LOCAL_LAW, QUALIFIED_PERSON, MEASURED_STOP, NOT_SAFE)

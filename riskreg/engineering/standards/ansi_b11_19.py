"""ANSI B11.19 (performance requirements for risk reduction measures: safeguarding).

The general safety-distance formula and the light-curtain depth penetration
factor, recalled from memory [std, from memory]:

    Ds = K × (Ts + Tc + Tr + Tbm) + Dpf,  K = 63 in/s
    Dpf = 3.4 × (S − 0.276) in, S the object sensitivity in inches

The Dpf formula holds for object sensitivities up to about 2.5 in. For larger
sensitivities (and for other devices, e.g. mats or single beams) the standard
gives fixed Dpf values in a table. Those fixed values are NOT recalled with
enough confidence to be put here: the register refuses a larger sensitivity
and asks the user to enter the Dpf read from the standard instead.

One edition is kept ("2019"); the clause is named by its subject because the
annex number is not recalled with confidence. Check against the edition the
site works to.
"""

from __future__ import annotations

from ..derivation import Constant, ConstantTable

SOURCE = "ANSI B11.19"
DEFAULT_EDITION = "2019"

_CLAUSE = "annex on safety distance (general formula; number to be checked)"


def _c(key: str, value: object, unit: str, note: str = "") -> Constant:
    return Constant(key, value, unit, SOURCE, DEFAULT_EDITION, _CLAUSE, note=note)


_ROWS = (
    _c("hand_speed", 63.0, "in/s", "K, the hand speed constant of the general formula"),
    _c("dpf.factor", 3.4, "", "Dpf = 3.4 × (S − 0.276) in for a light curtain"),
    _c("dpf.offset_in", 0.276, "in", "Dpf = 3.4 × (S − 0.276) in for a light curtain"),
    _c(
        "dpf.formula_max_sensitivity_in",
        2.5,
        "in",
        "the Dpf formula is valid up to about this object sensitivity; above it the "
        "standard gives fixed Dpf values (not recalled here)",
    ),
)

EDITIONS: dict[str, ConstantTable] = {
    DEFAULT_EDITION: ConstantTable(SOURCE, DEFAULT_EDITION, _ROWS),
}

"""29 CFR 1910.212, general requirements for all machines (US federal regulation).

Recalled from memory [reg, from memory]; the regulation is public, so a site can
check each row against the current eCFR text and mark it checked. Used for
machines outside 1910.217 (press brakes, hydraulic and pneumatic presses and
the other machines of 1910.217(a)(5), and machines that are not power presses).
Each value is the requirement in plain words.
"""

from __future__ import annotations

from ..derivation import Constant, ConstantTable

SOURCE = "29 CFR 1910.212"
DEFAULT_EDITION = "current"


def _c(key: str, value: object, clause: str, note: str = "") -> Constant:
    return Constant(key, value, "", SOURCE, DEFAULT_EDITION, clause, note=note)


_ROWS: tuple[Constant, ...] = (
    _c(
        "req.methods_of_guarding",
        "One or more methods of machine guarding must protect the operator and other "
        "employees in the machine area from hazards such as those of the point of "
        "operation, in-going nip points, rotating parts, flying chips and sparks.",
        "(a)(1)",
    ),
    _c(
        "req.point_of_operation",
        "The point of operation of a machine whose operation exposes an employee to injury "
        "must be guarded so that no part of the operator's body can be in the danger zone "
        "during the operating cycle.",
        "(a)(3)(ii)",
    ),
)

EDITIONS: dict[str, ConstantTable] = {
    DEFAULT_EDITION: ConstantTable(SOURCE, DEFAULT_EDITION, _ROWS),
}

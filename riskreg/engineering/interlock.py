"""Assessment of an interlocking device on a guard (ISO 14119, ISO/TR 24119).

Rules applied, as recalled [std, from memory]:

- ISO 14119:2013 types: 1 uncoded mechanical, 2 coded mechanical, 3 uncoded
  non-contact, 4 coded non-contact. Coded types (2, 4) have a coding level
  (low 1-9, medium 10-1000, high > 1000 variations); uncoded types have none.
- Defeat (ISO 14119 clause 7, Table 3, Annex H): uncoded devices are easy to
  defeat (a tool, a magnet, a spare cam); with a high motivation to defeat,
  measures against defeat are required: none listed is a problem. A low coding
  level with a high motivation to defeat is a problem whatever else is done:
  a spare actuator defeats it.
- Fault masking (ISO/TR 24119:2015): where the switches of more than one guard
  are wired in series to one logic unit, a fault can be masked, and the DC that
  may be claimed is capped. The report's table by number of guards is not
  recalled with confidence, so the register caps the DC below 90 % (at most
  "low") [from memory: check ISO/TR 24119 Table]; a claimed DC at or above
  the cap is a problem.
- Guard locking (ISO 14119 5.7 as recalled): with a stopping time and the
  distance from the guard to the hazard, :func:`distance.guard_locking_needed`
  (ISO 13855 approach speed, its default edition) decides; needed but not
  fitted is a problem.

``edition`` selects the ISO 14119 table.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass

from . import cautions
from . import distance as _distance
from .derivation import (
    Derivation,
    DerivationBuilder,
    InputError,
    Result,
    require_choice,
    require_finite,
)
from .standards import iso13849_1, iso14119, iso_tr24119, pick

DEVICE_TYPES = (1, 2, 3, 4)
CODED_TYPES = (2, 4)
CODING_LEVELS = ("low", "medium", "high")
MOTIVATION = ("low", "medium", "high")
# Measures the register knows by name; others are accepted as entered.
KNOWN_MEASURES = (
    "hidden mounting",
    "mounting out of reach",
    "shielding",
    "non-detachable fixing",
    "individual coding",
    "monitoring",
    "periodic check",
    "additional interlocking device",
)


@dataclass(frozen=True)
class InterlockResult(Result):
    device_type: int
    coding: str | None
    dc_cap_percent: float | None  # the DC claimed must be below this; None: no cap
    fault_masking: bool
    guard_locking_needed: bool | None  # None: not checked
    problems: tuple[str, ...]
    warnings: tuple[str, ...]
    derivation: Derivation


def _n(x: float) -> str:
    return f"{x:.6g}"


def _flag(name: str, value: object) -> bool:
    if not isinstance(value, bool):
        raise InputError(name, f"must be True or False, got {value!r}")
    return value


def _count(name: str, value: object, what: str) -> int:
    if isinstance(value, bool) or not isinstance(value, int):
        raise InputError(name, f"must be a whole number of {what} (1 or more), got {value!r}")
    if value < 1:
        raise InputError(name, f"must be at least 1 ({what}), got {value}")
    return value


def _measures(value: object) -> tuple[str, ...]:
    if isinstance(value, str) or not isinstance(value, Sequence):
        raise InputError(
            "measures_against_defeat",
            "must be a list of measures (it may be empty), e.g. "
            '["hidden mounting", "non-detachable fixing"]',
        )
    out: list[str] = []
    for i, m in enumerate(value):
        if not isinstance(m, str) or not m.strip():
            raise InputError(
                f"measures_against_defeat[{i}]",
                f"must be a measure named in words, got {m!r}",
            )
        text = " ".join(m.split()).lower()
        if text not in out:
            out.append(text)
    return tuple(out)


def _include(d: DerivationBuilder, sub: Derivation, label: str) -> None:
    """Carry a sub-calculation's working, constants and warnings into this one."""
    for c in sub.constants:
        d.const(c)
    for s in sub.steps:
        d.step(f"{label}: {s}")
    for w in sub.warnings:
        d.warn(w)
    for p in sub.problems:
        d.problem(p)


def evaluate_interlock(
    device_type: int,
    coding: str | None,
    motivation_to_defeat: str,
    measures_against_defeat: Sequence[str],
    switches_in_series: int = 1,
    guards_in_series: int = 1,
    claimed_dc_percent: float | None = None,
    stopping_time_s: float | None = None,
    response_time_s: float = 0,
    distance_mm: float | None = None,
    guard_locking: bool = False,
    edition: str | None = None,
) -> InterlockResult:
    """Check an interlocking device against defeat, fault masking and guard locking.

    ``switches_in_series``: switches wired in one series connection to the logic
    unit; ``guards_in_series``: how many guards those switches sit on.
    ``claimed_dc_percent``: the DC the design claims for the interlock.
    ``stopping_time_s``, ``response_time_s`` and ``distance_mm`` (from the guard
    opening to the hazard): for the guard-locking check, given together.
    """
    if isinstance(device_type, bool) or device_type not in DEVICE_TYPES:
        raise InputError(
            "device_type",
            f"must be 1, 2, 3 or 4 (ISO 14119: 1 uncoded mechanical, 2 coded mechanical, "
            f"3 uncoded non-contact, 4 coded non-contact), got {device_type!r}",
        )
    coded = device_type in CODED_TYPES
    if coded:
        if coding is None:
            raise InputError(
                "coding",
                f"is required for a type {device_type} device (coded actuator): give low, "
                "medium or high",
            )
        require_choice("coding", coding, CODING_LEVELS)
    elif coding is not None:
        raise InputError(
            "coding",
            f"must be None for a type {device_type} device: types 1 and 3 are uncoded, "
            f"got {coding!r}",
        )
    motivation = require_choice("motivation_to_defeat", motivation_to_defeat, MOTIVATION)
    measures = _measures(measures_against_defeat)
    switches = _count("switches_in_series", switches_in_series, "switches")
    guards = _count("guards_in_series", guards_in_series, "guards")
    if switches < guards:
        raise InputError(
            "switches_in_series",
            f"{switches} switch(es) cannot serve {guards} guards: each guard in the series "
            "has at least one switch",
        )
    dc = (
        None
        if claimed_dc_percent is None
        else require_finite(
            "claimed_dc_percent", claimed_dc_percent, minimum=0.0, maximum=100.0, unit="%"
        )
    )
    response = require_finite("response_time_s", response_time_s, minimum=0.0, unit="s")
    locking = _flag("guard_locking", guard_locking)
    if (stopping_time_s is None) != (distance_mm is None):
        missing = "distance_mm" if distance_mm is None else "stopping_time_s"
        raise InputError(
            missing,
            "is needed: the guard-locking check takes stopping_time_s and distance_mm "
            "together (the stopping time of the machine and the distance from the guard "
            "opening to the hazard)",
        )
    if stopping_time_s is None and response != 0:
        raise InputError(
            "response_time_s",
            "is used only by the guard-locking check: give stopping_time_s and distance_mm too",
        )
    table = pick(iso14119.EDITIONS, edition, iso14119.DEFAULT_EDITION)
    tr = pick(iso_tr24119.EDITIONS, None, iso_tr24119.DEFAULT_EDITION)
    pl_table = pick(iso13849_1.EDITIONS, None, iso13849_1.DEFAULT_EDITION)

    d = DerivationBuilder(
        "Interlocking device assessment, ISO 14119 and ISO/TR 24119",
        "defeat: type, coding level, motivation, measures; fault masking: guards in series → "
        "DC cap; guard locking: T > time to reach",
        cautions.DISTANCE if stopping_time_s is not None else cautions.REQUIREMENT,
    )
    kind = d.const(table[f"type.{device_type}"])
    d.input("type of interlocking device", device_type, note=kind)
    d.input("coding level", coding, note="None: uncoded")
    d.input("motivation to defeat", motivation)
    d.input("measures against defeat", ", ".join(measures) or "none")
    d.input("switches in the series connection", switches)
    d.input("guards in the series connection", guards)
    d.input("DC claimed", dc, "%", "None: not given")
    d.input("guard locking fitted", locking)

    # --- defeat --------------------------------------------------------------------
    d.const(table["coded_types"])
    d.const(table["defeat.motivation"])
    if measures:
        d.step("measures against defeat: " + ", ".join(measures))
    else:
        d.step("no measures against defeat listed")
    unknown = [m for m in measures if m not in KNOWN_MEASURES]
    if unknown:
        d.warn(
            "Measures taken as entered, not known to the register by name: "
            + ", ".join(unknown)
            + "; check that each makes defeat harder in the way ISO 14119 Table 3 means "
            "[std, from memory]."
        )
    if not coded:
        d.const(table["defeat.uncoded_measures"])
        d.step(f"type {device_type} is uncoded: a simple tool, a magnet or a spare cam defeats it")
        if "individual coding" in measures:
            d.warn(
                f"Individual coding does not apply to an uncoded type {device_type} device; "
                "it is not counted."
            )
        counted = [m for m in measures if m != "individual coding"]
        if motivation == "high" and not counted:
            d.problem(
                f"Uncoded type {device_type} device with a high motivation to defeat and no "
                "measures against defeat: add measures such as hidden mounting or mounting "
                "out of reach, shielding, non-detachable fixing, monitoring or periodic "
                "checks, or use a coded device (ISO 14119 clause 7, Table 3) "
                "[std, from memory]."
            )
        elif motivation == "high":
            d.warn(
                "High motivation to defeat an uncoded device: check that the measures listed "
                "are those ISO 14119 Table 3 asks for [std, from memory]."
            )
        elif not counted:
            d.warn(
                f"No measures against defeat listed for an uncoded type {device_type} device: "
                "ISO 14119 clause 7 expects them even with a low or medium motivation to "
                "defeat [std, from memory]."
            )
    else:
        assert coding is not None
        span = d.const(table[f"coding.{coding}"])
        shown = f"more than {span[0] - 1}" if span[1] is None else f"{span[0]} to {span[1]}"
        d.step(f"type {device_type} is coded, level {coding}: {shown} variations of actuator")
        if coding == "low" and motivation == "high":
            d.problem(
                "Low coding level with a high motivation to defeat: a spare actuator, easily "
                "obtained, defeats it; use medium or high coding (ISO 14119 clause 7, "
                "Table 3) [std, from memory]."
            )
        elif motivation == "high" and not measures:
            d.warn(
                f"High motivation to defeat: with {coding} coding, consider non-detachable "
                "fixing of the actuator and hidden mounting (ISO 14119 Table 3) "
                "[std, from memory]."
            )
        elif coding == "low" and not measures:
            d.warn(
                "Low coding level and no measures against defeat listed: ISO 14119 clause 7 "
                "treats low coding like an uncoded device [std, from memory]."
            )
    if motivation != "low":
        d.warn(
            "Lower the motivation to defeat too: a guard that hinders the work invites "
            "defeat; check the tasks that need access (ISO 14119 Annex H) [std, from memory]."
        )

    # --- fault masking -------------------------------------------------------------
    fault_masking = guards > 1
    cap: float | None = None
    d.const(table["series.refer_tr24119"])
    if fault_masking:
        d.const(tr["masking.min_guards"])
        d.const(tr["masking.table_depends_on"])
        cap = float(d.const(tr["masking.dc_cap_below"]))
        d.step(
            f"{switches} switches on {guards} guards in one series connection → fault masking "
            f"possible → DC claimed must be below {_n(cap)} % (at most 'low') "
            f"{iso_tr24119.TABLE_NOTE}"
        )
        cat4 = d.const(pl_table["category.4.dc_columns"])
        cat3_low = d.const(pl_table["simplified.3.low.high"])
        d.warn(
            f"With fault masking the DC stays below {_n(cap)} %: Category 4 (DC "
            f"{', '.join(cat4)}) and so PL e are out of reach for these guards; Category 3 "
            f"with DC low reaches at most PL {cat3_low} by the simplified procedure "
            "(ISO 13849-1) [std, from memory]."
        )
        d.warn(
            "The cap is the register's conservative reading: ISO/TR 24119 gives the maximum "
            "DC by the number of frequently opened guards and of the other guards in the "
            "series, and for many guards, or several opened often, allows less (DC none) "
            f"{iso_tr24119.TABLE_NOTE}. Where the report shows fault masking excluded for "
            "the arrangement (for example each guard on its own inputs of the logic unit), "
            "enter each guard on its own."
        )
        if dc is not None:
            if dc >= cap:
                d.problem(
                    f"DC claimed {_n(dc)} % is not below the {_n(cap)} % cap for switches of "
                    f"{guards} guards in series (fault masking, ISO/TR 24119) "
                    f"{iso_tr24119.TABLE_NOTE}: claim at most the 'low' band or wire the "
                    "guards so that fault masking is excluded."
                )
            else:
                d.step(f"DC claimed {_n(dc)} % < {_n(cap)} % → within the cap")
    else:
        if switches > 1:
            d.step(
                f"{switches} switches on one guard: no masking between guards "
                "(ISO/TR 24119 concerns several guards in series)"
            )
        else:
            d.step("one guard in the connection → no fault masking between guards")

    # --- guard locking ---------------------------------------------------------------
    needed: bool | None = None
    if stopping_time_s is not None:
        assert distance_mm is not None
        d.const(table["guard_locking.when"])
        gl = _distance.guard_locking_needed(stopping_time_s, distance_mm, response_time_s=response)
        _include(d, gl.derivation, "guard locking")
        needed = gl.guard_locking_needed
        if needed and not locking:
            d.problem(
                f"Guard locking needed: the hazard takes {_n(gl.stopping_time_s)} s to stop "
                f"but can be reached {_n(gl.time_to_reach_s)} s after the guard opens; fit "
                "guard locking that holds the guard closed until the hazard has ceased "
                "(ISO 14119 5.7), or place the guard further away [std, from memory]."
            )
        elif needed:
            d.step("guard locking needed and fitted")
            d.warn(
                "The guard locking must hold until the hazard has ceased and its locking "
                "function must itself reach the PLr (ISO 14119) [std, from memory]."
            )
        elif locking:
            d.step("guard locking fitted though the times do not require it")
        else:
            d.step("guard locking not needed by the times given")
    elif not locking:
        d.warn(
            "Guard locking need not checked: give the stopping time and the distance from the "
            "guard opening to the hazard."
        )
    der = d.build()
    return InterlockResult(
        device_type=device_type,
        coding=coding,
        dc_cap_percent=cap,
        fault_masking=fault_masking,
        guard_locking_needed=needed,
        problems=der.problems,
        warnings=der.warnings,
        derivation=der,
    )

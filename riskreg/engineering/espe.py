"""A light curtain (ESPE) record checked against IEC 61496 and ISO 13855.

Rules applied [std, from memory, unless marked [practice]]:

- Type 2 suits up to PL c, Type 4 up to PL e (IEC 61496-1); a Type 2 curtain
  where PLr is d or e is a problem. Type 3 is not a light-curtain type
  (IEC 61496-2 knows Types 2 and 4; Type 3 is for other ESPE) and is refused.
- Blanking [practice]: floating blanking adds the blanked size to the
  detection capability, d_eff = d + blanked size; fixed blanking leaves d as it
  is, but the blanked part of the field must be closed by other guarding.
- The safety distance is that of :func:`distance.light_curtain` with d_eff. If
  d_eff is above 70 mm the curtain no longer detects hands (nor arms): that is
  a problem, and it can only count as a multi-beam device for body detection,
  whose distance is computed by :func:`distance.multi_beam` when the beam
  heights are given.
- The installed distance must be at least the required distance.
- A restart interlock is needed where a person can stand inside the protected
  zone without being detected; missing is a problem.
- Muting may suspend the protective function only while there is no hazard.

``edition`` selects the ISO 13855 edition used for the distance; the IEC 61496
rows are kept in one table.
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
from .risk import PL_ORDER, pl_rank
from .standards import iec61496, iso13855, pick

BLANKING = {
    "none": "no blanking",
    "fixed": "fixed blanking: part of the field ignored around a fixed object",
    "floating": "floating blanking: an object may move within the field",
}
MAX_BEAMS = 4


@dataclass(frozen=True)
class LightCurtainResult(Result):
    max_pl: str
    meets_plr: bool | None  # None: no PLr given
    effective_resolution_mm: float
    distance: _distance.DistanceResult | None  # None: not computable (see problems)
    installed_distance_mm: float | None
    distance_ok: bool | None  # None: not checked
    shortfall_mm: float | None  # how much closer than required; 0 when it is far enough
    problems: tuple[str, ...]
    warnings: tuple[str, ...]
    derivation: Derivation


def _n(x: float) -> str:
    return f"{x:.6g}"


def _tidy(x: float) -> float:
    return round(x, 9) + 0.0


def _flag(name: str, value: object) -> bool:
    if not isinstance(value, bool):
        raise InputError(name, f"must be True or False, got {value!r}")
    return value


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


def _heights(value: Sequence[float] | None) -> tuple[float, ...] | None:
    if value is None:
        return None
    if isinstance(value, str) or not isinstance(value, Sequence):
        raise InputError("beam_heights_mm", "must be a list of beam heights in mm, or None")
    if not value:
        raise InputError("beam_heights_mm", "give at least one beam height, or None when not known")
    return tuple(
        require_finite(f"beam_heights_mm[{i}]", h, minimum=0.0, unit="mm")
        for i, h in enumerate(value)
    )


def evaluate_light_curtain(
    espe_type: int,
    resolution_mm: float,
    required_pl: str | None,
    blanking: str,
    blanked_size_mm: float = 0,
    muting: bool = False,
    *,
    restart_interlock: bool,
    person_can_stand_inside: bool,
    stopping_time_s: float,
    response_time_s: float,
    installed_distance_mm: float | None,
    beam_heights_mm: Sequence[float] | None = None,
    edition: str | None = None,
) -> LightCurtainResult:
    """Check a light curtain: type against PLr, effective resolution, distance, restart.

    ``resolution_mm``: the detection capability d from the curtain's data.
    ``blanked_size_mm``: the size blanked (floating: added to d).
    ``stopping_time_s``: measured stopping time of the machine;
    ``response_time_s``: of the curtain. ``installed_distance_mm``: from the
    field to the hazard as installed. ``beam_heights_mm``: heights of the beams
    above the reference plane, used only when the curtain counts as a
    multi-beam device (d_eff > 70 mm).
    """
    if isinstance(espe_type, bool) or not isinstance(espe_type, int):
        raise InputError("espe_type", f"must be 2 or 4 (IEC 61496 type), got {espe_type!r}")
    if espe_type == 3:
        raise InputError(
            "espe_type",
            "Type 3 is not a light-curtain type: IEC 61496-2 knows Types 2 and 4 for light "
            "curtains; Type 3 is for other ESPE such as laser scanners. Give 2 or 4",
        )
    if espe_type not in (2, 4):
        raise InputError("espe_type", f"must be 2 or 4 (IEC 61496 type), got {espe_type}")
    res = require_finite("resolution_mm", resolution_mm, unit="mm")
    if res <= 0:
        raise InputError(
            "resolution_mm",
            f"must be greater than 0 mm (the detection capability d), got {_n(res)} mm",
        )
    if required_pl is not None:
        require_choice("required_pl", required_pl, PL_ORDER)
    blank = require_choice("blanking", blanking, BLANKING)
    size = require_finite("blanked_size_mm", blanked_size_mm, minimum=0.0, unit="mm")
    if blank == "none" and size > 0:
        raise InputError(
            "blanked_size_mm",
            f"must be 0 without blanking, got {_n(size)} mm; set blanking to fixed or floating",
        )
    if blank == "floating" and size == 0:
        raise InputError(
            "blanked_size_mm",
            "is needed with floating blanking: give the blanked size in mm (it is added to d)",
        )
    mute = _flag("muting", muting)
    restart = _flag("restart_interlock", restart_interlock)
    inside = _flag("person_can_stand_inside", person_can_stand_inside)
    limit = _distance.MAX_TIME_S
    ts = require_finite("stopping_time_s", stopping_time_s, minimum=0.0, maximum=limit, unit="s")
    tr = require_finite("response_time_s", response_time_s, minimum=0.0, maximum=limit, unit="s")
    installed = (
        None
        if installed_distance_mm is None
        else require_finite("installed_distance_mm", installed_distance_mm, minimum=0.0, unit="mm")
    )
    heights = _heights(beam_heights_mm)
    lc_table = pick(iso13855.EDITIONS, edition, iso13855.DEFAULT_EDITION)
    table = pick(iec61496.EDITIONS, None, iec61496.DEFAULT_EDITION)

    d = DerivationBuilder(
        "Light curtain (ESPE) check, IEC 61496 and ISO 13855",
        "type → highest PL; d_eff = d (+ blanked size if floating); S from ISO 13855 "
        "with d_eff; installed distance ≥ S",
        cautions.DISTANCE,
    )
    d.input("ESPE type", espe_type)
    d.input("detection capability d", res, "mm", note="from the curtain's data")
    d.input("PLr", required_pl, note="None: not given")
    d.input("blanking", blank, note=BLANKING[blank])
    d.input("blanked size", size, "mm")
    d.input("muting", mute)
    d.input("restart interlock", restart)
    d.input("a person can stand inside the protected zone undetected", inside)
    d.input("installed distance", installed, "mm", note="None: not given")
    d.input("beam heights", heights, "mm", note="None: not given")

    # --- type and PLr ------------------------------------------------------------------
    d.const(table["light_curtain.types"])
    max_pl: str = d.const(table[f"type.{espe_type}.max_pl"])
    d.step(f"Type {espe_type} → suits up to PL {max_pl}")
    meets_plr: bool | None = None
    if required_pl is not None:
        meets_plr = pl_rank(max_pl) >= pl_rank(required_pl)
        if meets_plr:
            d.step(f"PL {max_pl} ≥ PLr {required_pl} → the type suits")
        else:
            d.step(f"PL {max_pl} < PLr {required_pl} → the type does not suit")
            d.problem(
                f"A Type {espe_type} light curtain suits only up to PL {max_pl}: PLr "
                f"{required_pl} needs a Type 4 curtain (IEC 61496-1) [std, from memory]."
            )
        d.warn(
            "The type caps the PL: the PL of the whole safety function (curtain, logic, "
            "outputs and the machine's stopping control) is to be assessed by ISO 13849-1."
        )

    # --- effective resolution ------------------------------------------------------------
    d_eff = res
    if blank == "floating":
        d_eff = _tidy(res + size)
        d.step(
            f"floating blanking: d_eff = {_n(res)} mm + {_n(size)} mm = {_n(d_eff)} mm [practice]"
        )
    elif blank == "fixed":
        d.step(f"fixed blanking: d_eff = d = {_n(res)} mm")
        d.warn(
            "Fixed blanking leaves a gap in the field around the fixed object: the blanked "
            "area must be fully closed by other guarding (fixed guard or the object itself), "
            "and the object must not be removable without the blanking being undone [practice]."
        )
    else:
        d.step(f"no blanking: d_eff = d = {_n(res)} mm")

    # --- safety distance ------------------------------------------------------------------
    hand = lc_table.value("curtain.d_max_hand")
    body = lc_table.value("curtain.d_max_body")
    dist: _distance.DistanceResult | None = None
    if d_eff <= body:
        if heights is not None:
            d.warn(
                f"Beam heights are used only when the curtain counts as a multi-beam device "
                f"(d_eff > {body} mm); not used here."
            )
        if d_eff > hand:
            d.warn(
                f"With d_eff = {_n(d_eff)} mm > {hand} mm the curtain detects an arm or a "
                "body, not a hand: it must not be relied on to detect a hand reaching in "
                "(ISO 13855:2010 6.2.3, C = 850 mm) [std, from memory]."
            )
        dist = _distance.light_curtain(ts, tr, d_eff, edition=edition)
        _include(d, dist.derivation, "distance")
    else:
        d.const(lc_table["curtain.d_max_body"])
        d.problem(
            f"With d_eff = {_n(d_eff)} mm > {body} mm the curtain no longer detects hands "
            "(nor arms): ISO 13855 counts it only as a multi-beam device for body detection "
            "[std, from memory]; reduce the blanked size or choose a finer curtain."
        )
        if heights is None:
            d.problem(
                "No safety distance: give the beam heights to assess it as a multi-beam "
                f"device (1 to {MAX_BEAMS} beams)."
            )
        elif len(heights) > MAX_BEAMS:
            d.problem(
                f"No safety distance: {len(heights)} beams given, but ISO 13855 gives the "
                f"multi-beam distance for 1 to {MAX_BEAMS} beams [std, from memory]."
            )
        else:
            beams = len(heights)
            dist = _distance.multi_beam(ts, tr, beams, edition=edition)
            _include(d, dist.derivation, "distance")
            key = "single_beam.height" if beams == 1 else f"beams.{beams}"
            rec = d.const(lc_table[key])
            recommended = (float(rec),) if beams == 1 else tuple(float(h) for h in rec)
            if tuple(sorted(heights)) != recommended:
                shown = ", ".join(_n(h) for h in recommended)
                d.warn(
                    f"The beam heights given ({', '.join(_n(h) for h in sorted(heights))} mm) "
                    f"differ from those recommended for {beams} beam(s) ({shown} mm, "
                    "ISO 13855:2010 6.2.5) [std, from memory]: a lowest beam set higher lets "
                    "a person crawl under, a top beam set lower lets one step over [practice]."
                )
            else:
                d.step(f"beam heights as recommended for {beams} beam(s)")

    # --- installed distance ------------------------------------------------------------------
    distance_ok: bool | None = None
    shortfall: float | None = None
    if dist is not None and installed is not None:
        s = dist.distance_mm
        distance_ok = installed >= s
        shortfall = _tidy(max(0.0, s - installed))
        if distance_ok:
            d.step(f"installed {_n(installed)} mm ≥ S = {_n(s)} mm → far enough")
        else:
            d.step(f"installed {_n(installed)} mm < S = {_n(s)} mm → short by {_n(shortfall)} mm")
            d.problem(
                f"Installed {_n(installed)} mm from the hazard, {_n(shortfall)} mm closer than "
                f"the {_n(s)} mm required: move the curtain out, or shorten the stopping "
                "time and measure it again."
            )
    elif installed is None:
        d.warn("Installed distance not given: it is not checked against the required distance.")

    # --- restart interlock and muting -------------------------------------------------------
    d.const(table["restart_interlock.when"])
    if inside and not restart:
        d.problem(
            "A person can stand inside the protected zone undetected, and there is no "
            "restart interlock: the machine could restart with the person inside. Fit a "
            "restart interlock with a manual reset (IEC 62046; ISO 13849-1 5.2.2) "
            "[std, from memory]."
        )
    elif inside:
        d.step("person can stand inside undetected → restart interlock needed, fitted")
        d.warn(
            "The reset must be outside the protected zone, out of reach from inside it, with "
            "a full view of the zone (ISO 13849-1 5.2.2) [std, from memory]."
        )
    else:
        d.step("no one can stand inside the protected zone undetected → no restart interlock rule")
        d.warn(
            "Check that the space between the field and the hazard cannot hold a person "
            "undetected, now and after any change to the machine; if it can, a restart "
            "interlock is needed [practice]."
        )
    if mute:
        d.const(table["muting.when"])
        d.warn(
            "Muting must happen only while there is no hazard to a person (e.g. while "
            "material passes), be started and ended automatically by independent signals, "
            "and be indicated (IEC 62046) [std, from memory]."
        )
    der = d.build()
    return LightCurtainResult(
        max_pl=max_pl,
        meets_plr=meets_plr,
        effective_resolution_mm=d_eff,
        distance=dist,
        installed_distance_mm=installed,
        distance_ok=distance_ok,
        shortfall_mm=shortfall,
        problems=der.problems,
        warnings=der.warnings,
        derivation=der,
    )

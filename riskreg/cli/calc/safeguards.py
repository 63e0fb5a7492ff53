"""calc compare, calc interlock, calc light-curtain: choosing and checking safeguards."""

from __future__ import annotations

import re
from collections.abc import Callable
from typing import Any

import click

from riskreg.engineering import espe, interlock, selection
from riskreg.engineering.derivation import InputError
from riskreg.engineering.units import parse_length_mm

from . import LENGTH, TIME, calc, emit, json_option, run

# parameter of the engineering function → the option that sets it
_OPTIONS = {
    "espe_type": "--type",
    "device_type": "--type",
    "resolution_mm": "--resolution",
    "required_pl": "--plr",
    "blanked_size_mm": "--blanked-size",
    "restart_interlock": "--restart-interlock",
    "person_can_stand_inside": "--person-inside",
    "stopping_time_s": "--stopping-time",
    "response_time_s": "--response-time",
    "installed_distance_mm": "--installed-distance",
    "beam_heights_mm": "--beam-height",
    "motivation_to_defeat": "--motivation",
    "measures_against_defeat": "--measure",
    "switches_in_series": "--switches",
    "guards_in_series": "--guards",
    "claimed_dc_percent": "--claimed-dc",
    "distance_mm": "--distance",
    "guard_locking": "--guard-locking",
    "other_people_exposed": "--others-exposed",
    "hand_feeding": "--hand-feeding",
}
# In messages only the parameter names above are replaced; the fields below are also
# plain words (coding, access, edition) and are replaced only as the field of an error.
_NAME = re.compile(r"\b(" + "|".join(sorted(_OPTIONS, key=len, reverse=True)) + r")\b")
_FIELDS = {
    **_OPTIONS,
    "coding": "--coding",
    "blanking": "--blanking",
    "plr": "--plr",
    "access": "--access",
    "edition": "--edition",
    "candidates": "--candidate",
}
_CANDIDATE_PARTS = {
    "kind": "kind",
    "reachable_pl": "pl=",
    "required_distance_mm": "distance=",
    "space_available_mm": "space=",
    "cost": "cost=",
}
_INDEXED = re.compile(r"(\w+)\[(\d+)\](?:\.(\w+))?")


def _field(name: str) -> str:
    m = _INDEXED.fullmatch(name)
    if m:
        option = _FIELDS.get(m.group(1), m.group(1))
        part = f" {_CANDIDATE_PARTS.get(m.group(3), m.group(3))}" if m.group(3) else ""
        return f"{option} (no. {int(m.group(2)) + 1}){part}"
    return _FIELDS.get(name, name)


def _as_options(fn: Callable[..., Any]) -> Callable[..., Any]:
    """The same function, its input errors speaking of options instead of parameters."""

    def call(*args: Any, **kwargs: Any) -> Any:
        try:
            return fn(*args, **kwargs)
        except InputError as exc:
            message = _NAME.sub(lambda m: _OPTIONS[m.group(1)], exc.message)
            raise InputError(_field(exc.field), message) from None

    return call


def _need_flag(value: bool | None, name: str) -> bool:
    if value is None:
        raise click.UsageError(f"missing option: give --{name} or --no-{name}")
    return value


# --- calc compare -------------------------------------------------------------------

_CANDIDATE_KEYS = ("pl", "distance", "space", "cost")
CANDIDATE_FORM = "KIND[,pl=a-e][,distance=LENGTH][,space=LENGTH][,cost=NUMBER]"


def _candidate(no: int, text: str) -> selection.Candidate:
    where = f"--candidate (no. {no})"
    kind, *parts = [p.strip() for p in text.split(",")]
    if kind not in selection.KINDS:
        raise click.UsageError(
            f"{where}: the kind must come first, one of {', '.join(selection.KINDS)}; "
            f"got {kind!r} (form: {CANDIDATE_FORM})"
        )
    values: dict[str, str] = {}
    for part in parts:
        key, sep, value = part.partition("=")
        key = key.strip()
        if not sep or key not in _CANDIDATE_KEYS:
            raise click.UsageError(
                f"{where}: {part!r} is not one of {', '.join(k + '=' for k in _CANDIDATE_KEYS)} "
                f"(form: {CANDIDATE_FORM})"
            )
        if key in values:
            raise click.UsageError(f"{where}: {key}= is given twice")
        values[key] = value.strip()
    try:
        distance = (
            None if "distance" not in values else parse_length_mm("distance", values["distance"])
        )
        space = None if "space" not in values else parse_length_mm("space", values["space"])
    except InputError as exc:
        raise click.UsageError(f"{where}: {exc}") from None
    cost: float | None = None
    if "cost" in values:
        try:
            cost = float(values["cost"])
        except ValueError:
            raise click.UsageError(
                f"{where}: cost must be a number, got {values['cost']!r}"
            ) from None
    return selection.Candidate(
        kind=kind,
        reachable_pl=values.get("pl") or None,
        required_distance_mm=distance,
        space_available_mm=space,
        cost=cost,
    )


@calc.command("compare")
@click.option(
    "--candidate",
    "candidates",
    required=True,
    multiple=True,
    help=f"One candidate safeguard: {CANDIDATE_FORM}. Repeat for each.",
)
@click.option("--plr", default=None, type=click.Choice(list("abcde")), help="PLr of the hazard.")
@click.option(
    "--access",
    required=True,
    type=click.Choice(list(selection.ACCESS)),
    help="Access to the hazard zone in normal operation.",
)
@click.option("--ejection", is_flag=True, help="Parts or broken tools can be thrown out.")
@click.option("--others-exposed", is_flag=True, help="People other than the operator exposed.")
@click.option("--hand-feeding", is_flag=True, help="Parts fed or removed by hand.")
@click.option("--edition", default=None, help="Edition of ISO 12100.")
@json_option
def compare_cmd(
    candidates: tuple[str, ...],
    plr: str | None,
    access: str,
    ejection: bool,
    others_exposed: bool,
    hand_feeding: bool,
    edition: str | None,
    as_json: bool,
) -> None:
    """Rank candidate safeguards for one hazard (ISO 12100 three-step method)."""
    cands = [_candidate(i + 1, text) for i, text in enumerate(candidates)]
    r = run(
        _as_options(selection.compare_options),
        cands,
        plr=plr,
        access=access,
        ejection=ejection,
        other_people_exposed=others_exposed,
        hand_feeding=hand_feeding,
        edition=edition,
    )
    order = "; ".join(
        f"{o.rank}. {o.kind}" + (f" ({len(o.problems)} problem(s))" if o.problems else "")
        for o in r.options
    )
    emit(r, as_json, [("Recommended", r.recommended or "none"), ("Order", order)])


# --- calc interlock -----------------------------------------------------------------


@calc.command("interlock")
@click.option("--type", "device_type", required=True, type=click.IntRange(1, 4), help="1-4.")
@click.option("--coding", default=None, type=click.Choice(list(interlock.CODING_LEVELS)))
@click.option(
    "--motivation", required=True, type=click.Choice(list(interlock.MOTIVATION)), help="To defeat."
)
@click.option("--measure", "measures", multiple=True, help="A measure against defeat; repeat.")
@click.option("--switches", type=int, default=1, show_default=True, help="Switches in series.")
@click.option("--guards", type=int, default=1, show_default=True, help="Guards in the series.")
@click.option("--claimed-dc", type=float, default=None, help="DC claimed, percent (0-100).")
@click.option("--stopping-time", type=TIME, default=None, help="Stopping time of the machine.")
@click.option("--response-time", type=TIME, default="0s", help="Response time of the interlock.")
@click.option("--distance", type=LENGTH, default=None, help="Guard opening to the hazard.")
@click.option("--guard-locking", is_flag=True, help="Guard locking is fitted.")
@click.option("--edition", default=None, help="Edition of ISO 14119.")
@json_option
def interlock_cmd(
    device_type: int,
    coding: str | None,
    motivation: str,
    measures: tuple[str, ...],
    switches: int,
    guards: int,
    claimed_dc: float | None,
    stopping_time: float | None,
    response_time: float,
    distance: float | None,
    guard_locking: bool,
    edition: str | None,
    as_json: bool,
) -> None:
    """Interlocking device: defeat (ISO 14119), fault masking (ISO/TR 24119), guard locking."""
    r = run(
        _as_options(interlock.evaluate_interlock),
        device_type,
        coding,
        motivation,
        list(measures),
        switches_in_series=switches,
        guards_in_series=guards,
        claimed_dc_percent=claimed_dc,
        stopping_time_s=stopping_time,
        response_time_s=response_time,
        distance_mm=distance,
        guard_locking=guard_locking,
        edition=edition,
    )
    cap = None if r.dc_cap_percent is None else f"below {r.dc_cap_percent:g} %"
    locking = {True: "needed", False: "not needed", None: "not checked"}[r.guard_locking_needed]
    emit(
        r,
        as_json,
        [
            ("Type", r.device_type),
            ("Fault masking", "possible" if r.fault_masking else "no"),
            ("DC cap", cap or "none"),
            ("Guard locking", locking),
            ("Problems", len(r.problems)),
        ],
    )


# --- calc light-curtain -------------------------------------------------------------


@calc.command("light-curtain")
@click.option("--type", "espe_type", required=True, type=int, help="IEC 61496 type: 2 or 4.")
@click.option("--resolution", required=True, type=LENGTH, help="Detection capability d.")
@click.option("--plr", default=None, type=click.Choice(list("abcde")), help="PLr.")
@click.option(
    "--blanking", default="none", show_default=True, type=click.Choice(list(espe.BLANKING))
)
@click.option("--blanked-size", type=LENGTH, default="0mm", help="Blanked size.")
@click.option("--muting", is_flag=True, help="The curtain is muted in part of the cycle.")
@click.option("--restart-interlock/--no-restart-interlock", default=None, help="Required.")
@click.option(
    "--person-inside/--no-person-inside",
    default=None,
    help="Required: a person can stand inside the zone undetected.",
)
@click.option("--stopping-time", required=True, type=TIME, help="Stopping time of the machine.")
@click.option("--response-time", required=True, type=TIME, help="Response time of the curtain.")
@click.option("--installed-distance", type=LENGTH, default=None, help="Field to hazard.")
@click.option("--beam-height", "beam_heights", multiple=True, type=LENGTH, help="Repeat.")
@click.option("--edition", default=None, help="Edition of ISO 13855.")
@json_option
def light_curtain_cmd(
    espe_type: int,
    resolution: float,
    plr: str | None,
    blanking: str,
    blanked_size: float,
    muting: bool,
    restart_interlock: bool | None,
    person_inside: bool | None,
    stopping_time: float,
    response_time: float,
    installed_distance: float | None,
    beam_heights: tuple[float, ...],
    edition: str | None,
    as_json: bool,
) -> None:
    """Light curtain record: type against PLr, effective d, safety distance, restart."""
    restart = _need_flag(restart_interlock, "restart-interlock")
    inside = _need_flag(person_inside, "person-inside")
    r = run(
        _as_options(espe.evaluate_light_curtain),
        espe_type,
        resolution,
        plr,
        blanking,
        blanked_size,
        muting,
        restart_interlock=restart,
        person_can_stand_inside=inside,
        stopping_time_s=stopping_time,
        response_time_s=response_time,
        installed_distance_mm=installed_distance,
        beam_heights_mm=list(beam_heights) or None,
        edition=edition,
    )
    s = None if r.distance is None else f"{r.distance.distance_mm:.6g} mm"
    ok = {True: "yes", False: "no", None: "not checked"}[r.distance_ok]
    emit(
        r,
        as_json,
        [
            ("Highest PL of the type", r.max_pl),
            ("Effective detection capability", f"{r.effective_resolution_mm:.6g} mm"),
            ("Safety distance S", s or "not computed"),
            ("Installed far enough", ok),
            ("Problems", len(r.problems)),
        ],
    )

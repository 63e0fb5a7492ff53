"""calc distance, calc stopping-time, calc guard-locking, calc gap."""

from __future__ import annotations

import re
from collections.abc import Callable
from typing import Any

import click

from riskreg.engineering import distance as dist
from riskreg.engineering import stopping
from riskreg.engineering.derivation import InputError
from riskreg.engineering.units import mm_to_in

from . import LENGTH, TIME, calc, emit, json_option, run

edition_option = click.option("--edition", default=None, help="Edition of the standard.")

# parameter of the engineering function → the option that sets it
_OPTIONS = {
    "stopping_time_s": "--stopping-time",
    "response_time_s": "--response-time",
    "resolution_mm": "--resolution",
    "height_mm": "--height",
    "shielded": "--shielded",
    "beams": "--beams",
    "opening_c_mm": "--opening-c",
    "hazard_height_mm": "--hazard-height",
    "top_beam_height_mm": "--top-beam-height",
    "reach_over_c_mm": "--reach-over-c",
    "edition": "--edition",
    "device": "--device",
    "distance_mm": "--distance",
    "time_to_reach_s": "--time-to-reach",
    "opening_time_s": "--opening-time",
    "trials_s": "--trial",
    "allowance_percent": "--allowance",
    "brake_monitor_limit_s": "--brake-monitor-limit",
    "body_part": "--body-part",
    "gap_mm": "--gap",
}
# In messages only the parameter names with an underscore are replaced: the others
# (device, beams, edition, shielded) are also plain words.
_NAME = re.compile(
    r"\b(" + "|".join(sorted((k for k in _OPTIONS if "_" in k), key=len, reverse=True)) + r")\b"
)


def _as_options(fn: Callable[..., Any]) -> Callable[..., Any]:
    """The same function, its input errors speaking of options instead of parameters."""

    def call(*args: Any, **kwargs: Any) -> Any:
        try:
            return fn(*args, **kwargs)
        except InputError as exc:
            trial = re.fullmatch(r"trials_s\[(\d+)\]", exc.field)
            if trial:
                field = f"--trial (no. {int(trial.group(1)) + 1})"
            else:
                field = _OPTIONS.get(exc.field, exc.field)
            message = _NAME.sub(lambda m: _OPTIONS[m.group(1)], exc.message)
            raise InputError(field, message) from None

    return call


def _length(mm: float) -> str:
    return f"{mm:.6g} mm ({mm_to_in(mm):.4g} in)"


@calc.command("distance")
@click.option(
    "--device", required=True, type=click.Choice(list(dist.DEVICES)), help="Kind of device."
)
@click.option("--stopping-time", required=True, type=TIME, help="Stopping time of the machine.")
@click.option("--response-time", required=True, type=TIME, help="Response time of the device.")
@click.option("--resolution", type=LENGTH, default=None, help="Detection capability d.")
@click.option("--height", type=LENGTH, default=None, help="Height H of a horizontal field.")
@click.option("--shielded", is_flag=True, help="Two-hand control: shielding stops encroachment.")
@click.option("--beams", type=int, default=None, help="Number of beams of a multi-beam device.")
@click.option("--opening-c", type=LENGTH, default=None, help="C for a guard opening (ISO 13857).")
@click.option("--hazard-height", type=LENGTH, default=None, help="Reach over: hazard height a.")
@click.option("--top-beam-height", type=LENGTH, default=None, help="Reach over: top beam height b.")
@click.option("--reach-over-c", type=LENGTH, default=None, help="Reach over: C_RO from the table.")
@edition_option
@json_option
def distance_cmd(
    device: str,
    stopping_time: float,
    response_time: float,
    resolution: float | None,
    height: float | None,
    shielded: bool,
    beams: int | None,
    opening_c: float | None,
    hazard_height: float | None,
    top_beam_height: float | None,
    reach_over_c: float | None,
    edition: str | None,
    as_json: bool,
) -> None:
    """Safety distance S = K·T + C (ISO 13855)."""
    r = run(
        _as_options(dist.safety_distance),
        device,
        stopping_time,
        response_time,
        resolution_mm=resolution,
        height_mm=height,
        shielded=shielded,
        beams=beams,
        opening_c_mm=opening_c,
        hazard_height_mm=hazard_height,
        top_beam_height_mm=top_beam_height,
        reach_over_c_mm=reach_over_c,
        edition=edition,
    )
    emit(
        r,
        as_json,
        [
            ("Safety distance S", _length(r.distance_mm)),
            ("K", f"{r.k_mm_per_s:g} mm/s"),
            ("C", f"{r.c_mm:.6g} mm"),
            ("T", f"{r.t_s:.6g} s"),
            ("Governed by", r.governed_by),
        ],
    )


@calc.command("stopping-time")
@click.option(
    "--trial", "trials", required=True, multiple=True, type=TIME, help="One measured stop."
)
@click.option("--allowance", type=float, default=0.0, help="Allowance added, percent (0-100).")
@click.option("--brake-monitor-limit", type=TIME, default=None, help="Brake-monitor limit.")
@json_option
def stopping_time_cmd(
    trials: tuple[float, ...],
    allowance: float,
    brake_monitor_limit: float | None,
    as_json: bool,
) -> None:
    """Stopping time to use, from measured trials."""
    r = run(
        _as_options(stopping.stopping_time_from_trials),
        list(trials),
        allowance,
        brake_monitor_limit,
    )
    emit(
        r,
        as_json,
        [
            ("Stopping time to use", f"{r.t_used_s:.6g} s"),
            ("Basis", r.basis),
            ("Worst trial", f"{r.worst_s:.6g} s"),
            ("Mean", f"{r.mean_s:.6g} s"),
            ("Spread", f"{r.spread_s:.6g} s"),
            ("Standard deviation", None if r.std_s is None else f"{r.std_s:.6g} s"),
            ("Trials", r.n_trials),
        ],
    )


@calc.command("guard-locking")
@click.option("--stopping-time", required=True, type=TIME, help="Stopping time of the machine.")
@click.option("--response-time", required=True, type=TIME, help="Response time of the interlock.")
@click.option("--distance", type=LENGTH, default=None, help="Guard opening to the hazard.")
@click.option("--time-to-reach", type=TIME, default=None, help="Your own time to reach.")
@click.option("--opening-c", type=LENGTH, default=None, help="C for the opening (ISO 13857).")
@click.option("--opening-time", type=TIME, default="0s", help="Credited guard opening time.")
@edition_option
@json_option
def guard_locking_cmd(
    stopping_time: float,
    response_time: float,
    distance: float | None,
    time_to_reach: float | None,
    opening_c: float | None,
    opening_time: float,
    edition: str | None,
    as_json: bool,
) -> None:
    """Is guard locking needed? Stopping time against the time to reach the hazard."""
    r = run(
        _as_options(dist.guard_locking_needed),
        stopping_time,
        distance,
        response_time_s=response_time,
        time_to_reach_s=time_to_reach,
        opening_c_mm=opening_c,
        opening_time_s=opening_time,
        edition=edition,
    )
    emit(
        r,
        as_json,
        [
            ("Guard locking needed", "yes" if r.guard_locking_needed else "no"),
            ("Overall stopping time T", f"{r.stopping_time_s:.6g} s"),
            ("Time to reach the hazard", f"{r.time_to_reach_s:.6g} s"),
        ],
    )


@calc.command("gap")
@click.option(
    "--body-part", required=True, type=click.Choice(list(dist.BODY_PARTS)), help="Body part."
)
@click.option("--gap", type=LENGTH, default=None, help="A gap on the machine to check.")
@edition_option
@json_option
def gap_cmd(body_part: str, gap: float | None, edition: str | None, as_json: bool) -> None:
    """Minimum gap to avoid crushing (ISO 13854), or a check of a gap against it."""
    if gap is None:
        r = run(_as_options(dist.minimum_gap), body_part, edition=edition)
        emit(r, as_json, [("Minimum gap", _length(r.gap_mm))])
        return
    c = run(_as_options(dist.check_gap), body_part, gap, edition=edition)
    emit(
        c,
        as_json,
        [
            ("Gap", _length(c.gap_mm)),
            ("Minimum gap", _length(c.minimum_gap_mm)),
            ("Result", "passes" if c.passed else "fails"),
        ],
    )

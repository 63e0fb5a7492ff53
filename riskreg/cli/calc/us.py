"""calc us-distance, calc opening: US safety distances and Table O-10 guard openings."""

from __future__ import annotations

import re
from typing import Any

import click

from riskreg.engineering import openings, us_distance
from riskreg.engineering.derivation import InputError
from riskreg.engineering.units import mm_to_in

from . import LENGTH, TIME, calc, emit, json_option, run

# Engine argument → the option a CLI user types, so messages name what to fix.
_OPTIONS = {
    "stopping_time_s": "--stopping-time",
    "engaging_points": "--engaging-points",
    "revolution_time_s": "--revolution-time",
    "control_time_s": "--control-time",
    "device_time_s": "--device-time",
    "brake_monitor_time_s": "--brake-monitor-time",
    "object_sensitivity_in": "--object-sensitivity",
    "dpf_in": "--dpf",
}
_NAMES = re.compile(r"\b(" + "|".join(_OPTIONS) + r")\b")


def _with_options(text: str) -> str:
    return _NAMES.sub(lambda m: _OPTIONS[m.group(1)], text)


def _run_us(fn: Any, **kwargs: Any) -> Any:
    try:
        return fn(**kwargs)
    except InputError as exc:
        raise click.UsageError(_with_options(str(exc))) from None


@calc.command("us-distance")
@click.option(
    "--device",
    default=None,
    type=click.Choice(list(us_distance.DEVICES)),
    help="(required) two-hand (1910.217(c)(3)(vii)), two-hand-trip ((c)(3)(viii)), "
    "presence-sensing ((c)(3)(iii)) or general (ANSI B11.19).",
)
@click.option("--stopping-time", type=TIME, default=None, help="Ts, e.g. 200ms.")
@click.option("--engaging-points", type=int, default=None, help="N, clutch engaging points.")
@click.option("--revolution-time", type=TIME, default=None, help="Tr, one crank revolution.")
@click.option("--control-time", type=TIME, default=None, help="Tc (general formula).")
@click.option("--device-time", type=TIME, default=None, help="Tr of the device (general).")
@click.option(
    "--brake-monitor-time",
    type=TIME,
    default=None,
    help="Tbm = brake monitor setting − Ts (general).",
)
@click.option("--object-sensitivity", type=LENGTH, default=None, help="Light curtain S (general).")
@click.option("--dpf", type=LENGTH, default=None, help="Dpf read from ANSI B11.19 (general).")
@click.option("--edition", default=None, help="Edition of the regulation or standard.")
@json_option
def us_distance_cmd(
    device: str | None,
    stopping_time: float | None,
    engaging_points: int | None,
    revolution_time: float | None,
    control_time: float | None,
    device_time: float | None,
    brake_monitor_time: float | None,
    object_sensitivity: float | None,
    dpf: float | None,
    edition: str | None,
    as_json: bool,
) -> None:
    """US safety distance (29 CFR 1910.217 or ANSI B11.19), in inches and mm."""
    if device is None:
        # click's own message for a missing choice spans several lines
        raise click.UsageError(
            f"missing option '--device': one of {', '.join(us_distance.DEVICES)}"
        )
    r = _run_us(
        us_distance.us_safety_distance,
        device=device,
        stopping_time_s=stopping_time,
        engaging_points=engaging_points,
        revolution_time_s=revolution_time,
        control_time_s=control_time,
        device_time_s=device_time,
        brake_monitor_time_s=brake_monitor_time,
        object_sensitivity_in=None if object_sensitivity is None else mm_to_in(object_sensitivity),
        dpf_in=None if dpf is None else mm_to_in(dpf),
        edition=edition,
    )
    emit(
        r,
        as_json,
        [
            ("Minimum safety distance (in)", r.distance_in),
            ("Minimum safety distance (mm)", r.distance_mm),
        ],
    )


@calc.command("opening")
@click.option("--distance", required=True, type=LENGTH, help="From the point of operation.")
@click.option("--opening", required=True, type=LENGTH, help="Width of the guard opening.")
@click.option("--edition", default=None, help="Edition of the regulation.")
@json_option
def opening_cmd(distance: float, opening: float, edition: str | None, as_json: bool) -> None:
    """Check a guard opening against 29 CFR 1910.217 Table O-10."""
    r = run(openings.guard_opening_us_mm, distance, opening, edition)
    verdict = {True: "pass", False: "fail", None: "outside Table O-10, not judged"}[r.ok]
    emit(
        r,
        as_json,
        [
            ("Largest opening allowed (in)", r.max_opening_in),
            ("Table O-10 row", r.band),
            ("Result", verdict),
        ],
    )

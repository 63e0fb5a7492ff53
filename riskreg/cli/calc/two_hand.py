"""calc two-hand: the ISO 13851 type of a two-hand control device."""

from __future__ import annotations

import click

from riskreg.engineering import two_hand

from . import LENGTH, TIME, calc, emit, json_option, run


@calc.command("two-hand")
@click.option("--simultaneous", is_flag=True, help="Both hands needed together.")
@click.option("--cessation", is_flag=True, help="Output stops when either is released.")
@click.option("--reinitiation", is_flag=True, help="New output only after both released.")
@click.option("--synchronous-window", type=TIME, default=None, help="e.g. 500ms.")
@click.option(
    "--category",
    default=None,
    type=click.Choice(list(two_hand.CATEGORIES), case_sensitive=False),
    help="ISO 13849-1 Category (required).",
)
@click.option("--spacing", type=LENGTH, default=None, help="Between unshrouded actuators.")
@click.option("--shrouded", is_flag=True, help="Actuators shrouded against defeat.")
@click.option("--operators", type=int, default=1, show_default=True)
@click.option("--stations", type=int, default=1, show_default=True)
@click.option(
    "--actuators-per-station", type=click.Choice(["1", "2"]), default="2", show_default=True
)
@click.option("--anti-repeat/--no-anti-repeat", default=None, help="Presses: anti-repeat fitted.")
@click.option("--press", is_flag=True, help="The machine is a press.")
@click.option("--edition", default=None, help="Edition of ISO 13851.")
@json_option
def two_hand_cmd(
    simultaneous: bool,
    cessation: bool,
    reinitiation: bool,
    synchronous_window: float | None,
    category: str | None,
    spacing: float | None,
    shrouded: bool,
    operators: int,
    stations: int,
    actuators_per_station: str,
    anti_repeat: bool | None,
    press: bool,
    edition: str | None,
    as_json: bool,
) -> None:
    """Type of a two-hand control device (ISO 13851) and the problems found."""
    if category is None:
        # click's own message for a missing choice spans several lines
        raise click.UsageError(
            f"missing option '--category': one of {', '.join(two_hand.CATEGORIES)}"
        )
    if spacing is not None and shrouded:
        raise click.UsageError("give --spacing for unshrouded actuators or --shrouded, not both")
    r = run(
        two_hand.evaluate_two_hand,
        simultaneous,
        cessation,
        reinitiation,
        synchronous_window,
        category=category,
        spacing_mm=spacing,
        shrouded=shrouded,
        operators=operators,
        stations=stations,
        actuators_per_station=int(actuators_per_station),
        anti_repeat=anti_repeat,
        is_press=press,
        edition=edition,
    )
    emit(
        r,
        as_json,
        [
            ("Type", r.type if r.type else "none"),
            ("PL of that type", r.type_pl),
            ("Category", r.category),
        ],
    )

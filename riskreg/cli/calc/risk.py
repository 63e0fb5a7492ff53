"""calc plr, calc sil, calc b11-risk."""

from __future__ import annotations

import click

from riskreg.engineering import risk

from . import calc, emit, json_option, run

edition_option = click.option("--edition", default=None, help="Edition of the standard.")


@calc.command("plr")
@click.option("--severity", required=True, type=click.Choice(list(risk.SEVERITY)))
@click.option("--frequency", required=True, type=click.Choice(list(risk.FREQUENCY)))
@click.option("--avoidance", required=True, type=click.Choice(list(risk.AVOIDANCE)))
@edition_option
@json_option
def plr(severity: str, frequency: str, avoidance: str, edition: str | None, as_json: bool) -> None:
    """Required performance level from the ISO 13849-1 risk graph."""
    r = run(risk.required_pl, severity, frequency, avoidance, edition)
    emit(r, as_json, [("PLr", r.plr)])


@calc.command("sil")
@click.option("--severity", required=True, type=click.IntRange(1, 4), help="Se 1-4")
@click.option("--frequency", required=True, type=click.IntRange(1, 5), help="Fr 1-5")
@click.option("--probability", required=True, type=click.IntRange(1, 5), help="Pr 1-5")
@click.option("--avoidance", required=True, type=click.Choice(["1", "3", "5"]), help="Av 1, 3 or 5")
@edition_option
@json_option
def sil(
    severity: int,
    frequency: int,
    probability: int,
    avoidance: str,
    edition: str | None,
    as_json: bool,
) -> None:
    """Required SIL from the IEC 62061 matrix."""
    r = run(risk.required_sil, severity, frequency, probability, int(avoidance), edition)
    shown = f"SIL {r.sil}" if r.sil else r.outcome
    emit(r, as_json, [("Class CI", r.class_sum), ("Required", shown)])


@calc.command("b11-risk")
@click.option("--severity", required=True, type=click.Choice(list(risk.B11_SEVERITY)))
@click.option("--probability", required=True, type=click.Choice(list(risk.B11_PROBABILITY)))
@edition_option
@json_option
def b11_risk(severity: str, probability: str, edition: str | None, as_json: bool) -> None:
    """Risk level from the ANSI B11.0 example matrix."""
    r = run(risk.b11_risk_level, severity, probability, edition)
    emit(r, as_json, [("Risk level", r.risk_level)])

"""`riskreg calc`: the engineering calculations, for quick answers and scripts."""

from __future__ import annotations

import json
from typing import Any

import click

from riskreg.engineering import cautions
from riskreg.engineering.derivation import Derivation, InputError, Result
from riskreg.engineering.units import parse_length_mm, parse_time_s


class LengthType(click.ParamType):
    """A length with its unit (14mm, 0.55in), converted to millimetres."""

    name = "LENGTH"

    def convert(
        self, value: Any, param: click.Parameter | None, ctx: click.Context | None
    ) -> float:
        if isinstance(value, float):
            return value
        try:
            return parse_length_mm(param.name if param and param.name else "length", value)
        except InputError as exc:
            self.fail(exc.message, param, ctx)


class TimeType(click.ParamType):
    """A time with its unit (180ms, 0.18s), converted to seconds."""

    name = "TIME"

    def convert(
        self, value: Any, param: click.Parameter | None, ctx: click.Context | None
    ) -> float:
        if isinstance(value, float):
            return value
        try:
            return parse_time_s(param.name if param and param.name else "time", value)
        except InputError as exc:
            self.fail(exc.message, param, ctx)


LENGTH = LengthType()
TIME = TimeType()

json_option = click.option("--json", "as_json", is_flag=True, help="Print one JSON object.")


def _fmt(value: Any) -> str:
    if isinstance(value, float):
        return f"{value:.6g}"
    if value is None:
        return "—"
    return str(value)


def render_text(result: Result, headline: list[tuple[str, Any]]) -> str:
    """A readable derivation: the answer, the working, the sources and the cautions."""
    d: Derivation = result.derivation  # type: ignore[attr-defined]
    lines = [d.title, "=" * len(d.title)]
    for label, value in headline:
        lines.append(f"{label}: {_fmt(value)}")
    lines.append("")
    lines.append(f"Formula: {d.formula}")
    if d.inputs:
        lines.append("Inputs:")
        for q in d.inputs:
            unit = f" {q.unit}" if q.unit else ""
            note = f"  ({q.note})" if q.note else ""
            lines.append(f"  {q.name} = {_fmt(q.value)}{unit}{note}")
    if d.steps:
        lines.append("Working:")
        lines.extend(f"  {s}" for s in d.steps)
    if d.constants:
        lines.append("Constants:")
        for c in d.constants:
            unit = f" {c.unit}" if c.unit else ""
            lines.append(f"  {c.key} = {_fmt(c.value)}{unit}  [{c.citation}; {c.status}]")
    for title, items in (("Problems", d.problems), ("Warnings", d.warnings)):
        if items:
            lines.append(f"{title}:")
            lines.extend(f"  ! {p}" for p in items)
    notes = list(d.cautions)
    if d.rests_on_recalled:
        notes.append(cautions.RECALLED_CONSTANTS)
    if notes:
        lines.append("Cautions:")
        lines.extend(f"  - {c}" for c in notes)
    return "\n".join(lines)


def emit(result: Result, as_json: bool, headline: list[tuple[str, Any]]) -> None:
    if as_json:
        click.echo(json.dumps(result.to_dict(), ensure_ascii=False, sort_keys=False))
    else:
        click.echo(render_text(result, headline))


def run(fn: Any, *args: Any, **kwargs: Any) -> Any:
    """Call an engineering function; its InputError becomes a one-line CLI error."""
    try:
        return fn(*args, **kwargs)
    except InputError as exc:
        raise click.UsageError(str(exc)) from None


@click.group()
def calc() -> None:
    """Engineering calculations with their derivation and sources."""


# Each module registers its commands on `calc`.
from . import distance as _distance  # noqa: E402,F401
from . import pl as _pl  # noqa: E402,F401
from . import risk as _risk  # noqa: E402,F401
from . import safeguards as _safeguards  # noqa: E402,F401
from . import two_hand as _two_hand  # noqa: E402,F401
from . import us as _us  # noqa: E402,F401

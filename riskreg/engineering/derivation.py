"""The shape every engineering result shares: the answer plus how it was reached.

A result is a frozen dataclass whose last field is a :class:`Derivation`. The
derivation names the formula, the inputs with their units, the constants with
source, edition, clause and verification status, the steps taken, and any
warnings or problems. Pages, PDFs and the CLI render this same object, so the
three can never disagree.
"""

from __future__ import annotations

import dataclasses
import enum
import math
from collections.abc import Iterable
from dataclasses import dataclass
from typing import Any

RECALLED = "recalled"
CHECKED = "checked"


class InputError(ValueError):
    """A value the calculation cannot accept; the message says what to fix."""

    def __init__(self, field_name: str, message: str) -> None:
        super().__init__(f"{field_name}: {message}")
        self.field = field_name
        self.message = message


@dataclass(frozen=True)
class Constant:
    """One value taken from a standard, a regulation or common practice.

    ``status`` is "recalled" until someone with the standard in hand marks it
    checked against an edition (``checked_by``, ``checked_on``).
    """

    key: str
    value: Any
    unit: str
    source: str
    edition: str
    clause: str
    status: str = RECALLED
    checked_by: str | None = None
    checked_on: str | None = None
    note: str = ""

    @property
    def recalled(self) -> bool:
        return self.status != CHECKED

    def checked(self, by: str, on: str, edition: str | None = None) -> Constant:
        """The same constant, marked as checked against the standard in hand."""
        return dataclasses.replace(
            self,
            status=CHECKED,
            checked_by=by,
            checked_on=on,
            edition=edition or self.edition,
        )

    @property
    def citation(self) -> str:
        return f"{self.source}:{self.edition} {self.clause}".strip()


@dataclass(frozen=True)
class ConstantTable:
    """The constants of one standard in one edition, looked up by key."""

    source: str
    edition: str
    rows: tuple[Constant, ...]

    def __post_init__(self) -> None:
        keys = [c.key for c in self.rows]
        if len(keys) != len(set(keys)):
            raise ValueError(f"duplicate constant keys in {self.source}:{self.edition}")

    def __getitem__(self, key: str) -> Constant:
        for c in self.rows:
            if c.key == key:
                return c
        raise KeyError(f"{self.source}:{self.edition} has no constant {key!r}")

    def __contains__(self, key: object) -> bool:
        return any(c.key == key for c in self.rows)

    def value(self, key: str) -> Any:
        return self[key].value

    def with_checked(self, key: str, by: str, on: str) -> ConstantTable:
        """A copy where one constant is marked as checked against this edition."""
        self[key]  # raises KeyError for an unknown key
        rows = tuple(c.checked(by, on, self.edition) if c.key == key else c for c in self.rows)
        return dataclasses.replace(self, rows=rows)


@dataclass(frozen=True)
class Quantity:
    """An input or intermediate value with its unit."""

    name: str
    value: Any
    unit: str = ""
    note: str = ""


@dataclass(frozen=True)
class Derivation:
    title: str
    formula: str
    inputs: tuple[Quantity, ...] = ()
    constants: tuple[Constant, ...] = ()
    steps: tuple[str, ...] = ()
    warnings: tuple[str, ...] = ()
    problems: tuple[str, ...] = ()
    cautions: tuple[str, ...] = ()

    @property
    def rests_on_recalled(self) -> bool:
        """True when any constant used is still only recalled, not checked."""
        return any(c.recalled for c in self.constants)


def _plain(value: Any) -> Any:
    if isinstance(value, enum.Enum):
        return value.value
    if isinstance(value, float):
        if math.isinf(value) or math.isnan(value):
            return None
        return float(f"{value:.12g}")  # drop binary-rounding noise such as 12.600000000000001
    if dataclasses.is_dataclass(value) and not isinstance(value, type):
        out = {f.name: _plain(getattr(value, f.name)) for f in dataclasses.fields(value)}
        if isinstance(value, Derivation):
            out["rests_on_recalled"] = value.rests_on_recalled
        if isinstance(value, Constant):
            out["citation"] = value.citation
        return out
    if isinstance(value, (list, tuple)):
        return [_plain(v) for v in value]
    if isinstance(value, dict):
        return {str(k): _plain(v) for k, v in value.items()}
    return value


@dataclass(frozen=True)
class Result:
    """Base of all results. Subclasses add their own fields and a ``derivation``."""

    def to_dict(self) -> dict[str, Any]:
        out = _plain(self)
        assert isinstance(out, dict)
        return out


class DerivationBuilder:
    """Collects inputs, constants, steps and messages while a calculation runs."""

    def __init__(self, title: str, formula: str, cautions: Iterable[str] = ()) -> None:
        self.title = title
        self.formula = formula
        self.inputs: list[Quantity] = []
        self.constants: list[Constant] = []
        self.steps: list[str] = []
        self.warnings: list[str] = []
        self.problems: list[str] = []
        self.cautions = tuple(cautions)

    def input(self, name: str, value: Any, unit: str = "", note: str = "") -> None:
        self.inputs.append(Quantity(name, value, unit, note))

    def const(self, constant: Constant) -> Any:
        if constant not in self.constants:
            self.constants.append(constant)
        return constant.value

    def step(self, text: str) -> None:
        self.steps.append(text)

    def warn(self, text: str) -> None:
        if text not in self.warnings:
            self.warnings.append(text)

    def problem(self, text: str) -> None:
        if text not in self.problems:
            self.problems.append(text)

    def build(self) -> Derivation:
        return Derivation(
            title=self.title,
            formula=self.formula,
            inputs=tuple(self.inputs),
            constants=tuple(self.constants),
            steps=tuple(self.steps),
            warnings=tuple(self.warnings),
            problems=tuple(self.problems),
            cautions=self.cautions,
        )


def require_finite(
    name: str,
    value: float,
    *,
    minimum: float | None = None,
    maximum: float | None = None,
    unit: str = "",
    exclusive_min: bool = False,
) -> float:
    """Check a number's range and say what is allowed when it is outside."""
    if isinstance(value, bool) or not isinstance(value, (int, float)):
        raise InputError(name, f"must be a number, got {value!r}")
    v = float(value)
    if math.isnan(v) or math.isinf(v):
        raise InputError(name, "must be a finite number")
    u = f" {unit}" if unit else ""
    if minimum is not None:
        if exclusive_min and v <= minimum:
            raise InputError(name, f"must be greater than {minimum:g}{u}, got {v:g}{u}")
        if not exclusive_min and v < minimum:
            raise InputError(name, f"must be at least {minimum:g}{u}, got {v:g}{u}")
    if maximum is not None and v > maximum:
        raise InputError(name, f"must be at most {maximum:g}{u}, got {v:g}{u}")
    return v


def require_choice(name: str, value: Any, allowed: Iterable[Any]) -> Any:
    options = list(allowed)
    if value not in options:
        shown = ", ".join(str(o) for o in options)
        raise InputError(name, f"must be one of {shown}; got {value!r}")
    return value

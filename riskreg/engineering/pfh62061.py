"""PFH of the IEC 62061 basic subsystem architectures A, B, C and D.

Formulas and limits as recalled from the standard [std, from memory], kept as
rows of ``standards.iec62061``:

- A, single channel, no diagnostics: PFH = Σ λD,i
- B, two channels, no diagnostics: PFH = (1−β)² · λD1 · λD2 · T1 + β · (λD1 + λD2)/2
- C, single channel with diagnostics: PFH ≈ Σ λD,i · (1 − DCi)
- D, two channels with diagnostics:
  PFH = (1−β)² · [λD1 λD2 (DC1+DC2) T2/2 + λD1 λD2 (2−DC1−DC2) T1/2] + β (λD1+λD2)/2

λD dangerous failure rate per hour, T1 proof-test interval or lifetime (h),
T2 diagnostic test interval (h), β common-cause factor. A PFH found here says in
which SIL band the subsystem's random hardware failures fall; a SIL claim also
needs the architectural constraints and the systematic requirements, which this
calculation does not check.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass
from typing import cast

from . import cautions
from .derivation import (
    ConstantTable,
    Derivation,
    DerivationBuilder,
    InputError,
    Result,
    require_choice,
    require_finite,
)
from .pl import tidy
from .standards import iec62061, pick

LABEL = "IEC 62061 basic subsystem architecture"
ARCHITECTURES = ("A", "B", "C", "D")


def _table(edition: str | None) -> ConstantTable:
    return pick(iec62061.EDITIONS, edition, iec62061.DEFAULT_EDITION)


def _lambda(name: str, value: float) -> float:
    v = require_finite(name, value, minimum=0, exclusive_min=True, unit="1/h")
    if v >= 1:
        raise InputError(
            name,
            f"{v:g} 1/h is not a plausible rate of dangerous failure per hour; give a "
            "value greater than 0 and below 1, e.g. 2e-7",
        )
    return v


def _hours(name: str, value: float) -> float:
    return require_finite(name, value, minimum=0, exclusive_min=True, unit="h")


def _beta(value: float, table: ConstantTable, d: DerivationBuilder) -> float:
    lo = d.const(table["pfh.beta.min"])
    hi = d.const(table["pfh.beta.max"])
    v = require_finite("beta", value)
    if not lo <= v <= hi:
        raise InputError(
            "beta",
            f"must be a fraction from {lo:g} to {hi:g} (1 % to 10 %) as the CCF assessment "
            f"gives it, got {v:g}",
        )
    return v


def _dc(name: str, value: float, table: ConstantTable, d: DerivationBuilder) -> float:
    top = d.const(table["pfh.dc.max_percent"])
    return require_finite(name, value, minimum=0, maximum=top, unit="%")


def _sil_band(pfh: float, table: ConstantTable, d: DerivationBuilder | None) -> int | None:
    for sil in (1, 2, 3):
        row = table[f"pfh.sil_band.{sil}"]
        lo, hi = row.value
        if d is not None:
            d.const(row)
        if lo <= pfh < hi:
            return sil
    sil3_lo = table.value("pfh.sil_band.3")[0]
    if pfh < sil3_lo:
        if d is not None:
            d.warn(
                f"PFH {pfh:.3g} 1/h is below the SIL 3 band's lower edge {sil3_lo:g} 1/h; "
                "SIL 3 is the highest level for machinery."
            )
        return 3
    return None


def sil_for_pfh(pfh: float, edition: str | None = None) -> int | None:
    """The SIL band (1-3) a PFH (1/h) falls in; None at 1e-5 1/h or more."""
    v = _lambda("pfh", pfh)
    return _sil_band(v, _table(edition), None)


@dataclass(frozen=True)
class LambdaResult(Result):
    lambda_d_per_h: float
    t10d_hours: float
    derivation: Derivation


def lambda_from_b10d(
    b10d: float,
    ops_per_hour: float,
    lifetime_hours: float | None = None,
    edition: str | None = None,
) -> LambdaResult:
    """λD = 0.1 · C / B10d, C operations per hour (electromechanical elements).

    With ``lifetime_hours`` (T1), a warning says when the element reaches T10d =
    B10d / C before that: it must then be replaced at T10d.
    """
    b = require_finite("b10d", b10d, minimum=0, exclusive_min=True, unit="cycles")
    c = require_finite("ops_per_hour", ops_per_hour, minimum=0, exclusive_min=True, unit="1/h")
    life = None if lifetime_hours is None else _hours("lifetime_hours", lifetime_hours)
    table = _table(edition)
    d = DerivationBuilder(
        f"λD from B10d, {LABEL}",
        "λD = 0.1 · C / B10d; T10d = B10d / C",
        cautions.REQUIREMENT,
    )
    d.input("B10d", b, "cycles")
    d.input("C operations per hour", c, "1/h")
    factor = d.const(table["pfh.lambda_from_b10d.factor"])
    lam = tidy(factor * c / b)
    t10 = tidy(b / c)
    d.step(f"λD = {factor:g} · {c:g} / {b:,.6g} = {lam:.4g} 1/h")
    d.step(f"T10d = {b:,.6g} / {c:g} = {t10:,.6g} h")
    if life is not None:
        d.input("T1 lifetime", life, "h")
        if t10 < life:
            d.warn(
                f"T10d = {t10:,.0f} h is shorter than the lifetime T1 = {life:,.0f} h: the "
                "element must be replaced at T10d, or the λD does not hold."
            )
    return LambdaResult(lambda_d_per_h=lam, t10d_hours=t10, derivation=d.build())


@dataclass(frozen=True)
class PfhResult(Result):
    pfh: float
    architecture: str
    sil_band: int | None
    problems: tuple[str, ...]
    derivation: Derivation


def _builder(arch: str, table: ConstantTable) -> DerivationBuilder:
    row = table[f"pfh.architecture.{arch}"]
    d = DerivationBuilder(
        f"PFH, {LABEL} {arch} ({row.note})",
        row.value,
        cautions.REQUIREMENT,
    )
    d.const(row)
    return d


def _finish(arch: str, pfh: float, table: ConstantTable, d: DerivationBuilder) -> PfhResult:
    pfh = tidy(pfh)
    sil = _sil_band(pfh, table, d)
    if sil is None:
        d.problem(f"PFH {pfh:.3g} 1/h is at or above 1e-5 1/h: outside the SIL 1 band, no SIL.")
    else:
        d.step(f"PFH {pfh:.4g} 1/h → SIL {sil} band")
    d.warn(
        "The SIL band of the PFH is not a SIL claim: the architectural constraints "
        "(hardware fault tolerance, safe failure fraction) and the systematic requirements "
        "must also be met."
    )
    return PfhResult(
        pfh=pfh, architecture=arch, sil_band=sil, problems=tuple(d.problems), derivation=d.build()
    )


def _check_small(lams: Sequence[float], t1: float, d: DerivationBuilder) -> None:
    worst = max(lams) * t1
    if worst > 0.1:
        d.warn(
            f"λD · T1 = {worst:.3g} is not small: the simplified formula assumes λD · T1 ≪ 1 "
            "[practice]; use a fuller model."
        )


def architecture_a(lambda_d: Sequence[float], edition: str | None = None) -> PfhResult:
    """Architecture A: PFH = Σ λD,i of the elements of the single channel."""
    if isinstance(lambda_d, (str, bytes)) or not isinstance(lambda_d, Sequence) or not lambda_d:
        raise InputError("lambda_d", "give the λD (1/h) of at least one element")
    lams = [_lambda(f"lambda_d[{i}]", v) for i, v in enumerate(lambda_d)]
    table = _table(edition)
    d = _builder("A", table)
    for i, v in enumerate(lams, 1):
        d.input(f"λD,{i}", v, "1/h")
    pfh = sum(lams)
    d.step("PFH = " + " + ".join(f"{v:.3g}" for v in lams) + f" = {tidy(pfh):.4g} 1/h")
    return _finish("A", pfh, table, d)


def architecture_b(
    lambda_d1: float,
    lambda_d2: float,
    beta: float,
    t1_hours: float,
    edition: str | None = None,
) -> PfhResult:
    """Architecture B: PFH = (1−β)² · λD1 · λD2 · T1 + β · (λD1 + λD2)/2."""
    l1 = _lambda("lambda_d1", lambda_d1)
    l2 = _lambda("lambda_d2", lambda_d2)
    t1 = _hours("t1_hours", t1_hours)
    table = _table(edition)
    d = _builder("B", table)
    b = _beta(beta, table, d)
    d.input("λD1", l1, "1/h")
    d.input("λD2", l2, "1/h")
    d.input("β common-cause factor", b)
    d.input("T1 proof-test interval or lifetime", t1, "h")
    independent = (1 - b) ** 2 * l1 * l2 * t1
    common = b * (l1 + l2) / 2
    d.step(f"(1−{b:g})² · {l1:.3g} · {l2:.3g} · {t1:g} = {independent:.4g} 1/h")
    d.step(f"{b:g} · ({l1:.3g} + {l2:.3g}) / 2 = {common:.4g} 1/h")
    d.step(f"PFH = {independent:.4g} + {common:.4g} = {tidy(independent + common):.4g} 1/h")
    _check_small((l1, l2), t1, d)
    return _finish("B", independent + common, table, d)


def architecture_c(
    lambda_d: Sequence[float], dc_percent: Sequence[float], edition: str | None = None
) -> PfhResult:
    """Architecture C: PFH ≈ Σ λD,i · (1 − DCi), one DC (%) per element."""
    if isinstance(lambda_d, (str, bytes)) or not isinstance(lambda_d, Sequence) or not lambda_d:
        raise InputError("lambda_d", "give the λD (1/h) of at least one element")
    if isinstance(dc_percent, (str, bytes)) or not isinstance(dc_percent, Sequence):
        raise InputError("dc_percent", "give one DC (%) per element")
    if len(dc_percent) != len(lambda_d):
        raise InputError(
            "dc_percent",
            f"give one DC (%) per element: {len(lambda_d)} λD values but {len(dc_percent)} DC",
        )
    lams = [_lambda(f"lambda_d[{i}]", v) for i, v in enumerate(lambda_d)]
    table = _table(edition)
    d = _builder("C", table)
    dcs = [_dc(f"dc_percent[{i}]", v, table, d) for i, v in enumerate(dc_percent)]
    terms = []
    for i, (lam, dc) in enumerate(zip(lams, dcs, strict=True), 1):
        d.input(f"λD,{i}", lam, "1/h")
        d.input(f"DC{i}", dc, "%")
        term = lam * (1 - dc / 100)
        terms.append(term)
        d.step(f"{lam:.3g} · (1 − {dc / 100:g}) = {term:.4g} 1/h")
    pfh = sum(terms)
    d.step(f"PFH ≈ {tidy(pfh):.4g} 1/h")
    d.warn(
        "The formula holds only where a detected fault leads to the safe state in time: "
        "the fault reaction is faster than the hazard can arise, or the diagnostic test "
        "rate is much higher than the demand rate [from memory: check the conditions "
        "the edition sets]."
    )
    return _finish("C", pfh, table, d)


def architecture_d(
    lambda_d1: float,
    lambda_d2: float,
    dc1_percent: float,
    dc2_percent: float,
    beta: float,
    t1_hours: float,
    t2_hours: float,
    edition: str | None = None,
) -> PfhResult:
    """Architecture D: two channels with diagnostics (see the module docstring)."""
    l1 = _lambda("lambda_d1", lambda_d1)
    l2 = _lambda("lambda_d2", lambda_d2)
    t1 = _hours("t1_hours", t1_hours)
    t2 = _hours("t2_hours", t2_hours)
    table = _table(edition)
    d = _builder("D", table)
    b = _beta(beta, table, d)
    dc1 = _dc("dc1_percent", dc1_percent, table, d) / 100
    dc2 = _dc("dc2_percent", dc2_percent, table, d) / 100
    d.input("λD1", l1, "1/h")
    d.input("λD2", l2, "1/h")
    d.input("DC1", dc1 * 100, "%")
    d.input("DC2", dc2 * 100, "%")
    d.input("β common-cause factor", b)
    d.input("T1 proof-test interval or lifetime", t1, "h")
    d.input("T2 diagnostic test interval", t2, "h")
    if t2 > t1:
        d.warn(
            f"T2 = {t2:g} h is longer than T1 = {t1:g} h: the diagnostic test interval is "
            "normally far shorter than the proof-test interval; check the inputs."
        )
    detected = l1 * l2 * (dc1 + dc2) * t2 / 2
    undetected = l1 * l2 * (2 - dc1 - dc2) * t1 / 2
    independent = (1 - b) ** 2 * (detected + undetected)
    common = b * (l1 + l2) / 2
    d.step(f"λD1 λD2 (DC1 + DC2) T2/2 = {detected:.4g} 1/h")
    d.step(f"λD1 λD2 (2 − DC1 − DC2) T1/2 = {undetected:.4g} 1/h")
    d.step(f"(1−{b:g})² · [{detected:.4g} + {undetected:.4g}] = {independent:.4g} 1/h")
    d.step(f"β (λD1 + λD2)/2 = {common:.4g} 1/h")
    d.step(f"PFH = {independent:.4g} + {common:.4g} = {tidy(independent + common):.4g} 1/h")
    _check_small((l1, l2), t1, d)
    return _finish("D", independent + common, table, d)


_OPTION = {
    "dc_percent": "DC (%)",
    "beta": "β (common-cause factor, 0.01 to 0.1)",
    "t1_hours": "T1 (proof-test interval or lifetime, h)",
    "t2_hours": "T2 (diagnostic test interval, h)",
}


def subsystem_pfh(
    architecture: str,
    lambda_d: Sequence[float],
    dc_percent: Sequence[float] = (),
    beta: float | None = None,
    t1_hours: float | None = None,
    t2_hours: float | None = None,
    edition: str | None = None,
) -> PfhResult:
    """Dispatch to the architecture's formula; each needs its own parameters.

    A: one or more λD (elements in the channel). B: λD of the two channels (one
    value: both alike), β, T1. C: one λD and one DC per element. D: λD and DC of
    the two channels (one value: both alike), β, T1, T2. A parameter the
    architecture does not use is refused, so nothing is silently ignored.
    """
    arch = cast(str, require_choice("architecture", str(architecture).upper(), ARCHITECTURES))
    if isinstance(lambda_d, (str, bytes)) or not isinstance(lambda_d, Sequence) or not lambda_d:
        raise InputError("lambda_d", f"architecture {arch} needs the λD (1/h) of its elements")
    lams = list(lambda_d)
    dcs = list(dc_percent)
    given = {"dc_percent": bool(dcs), "beta": beta is not None, "t1_hours": t1_hours is not None}
    given["t2_hours"] = t2_hours is not None
    needs = {
        "A": (),
        "B": ("beta", "t1_hours"),
        "C": ("dc_percent",),
        "D": ("dc_percent", "beta", "t1_hours", "t2_hours"),
    }[arch]
    for name, present in given.items():
        if present and name not in needs:
            raise InputError(name, f"{_OPTION[name]} is not used by architecture {arch}")
        if not present and name in needs:
            raise InputError(name, f"architecture {arch} needs {_OPTION[name]}")
    if arch == "A":
        return architecture_a(lams, edition)
    if arch == "C":
        return architecture_c(lams, dcs, edition)
    pair = _pair("lambda_d", lams, arch)
    assert beta is not None and t1_hours is not None
    if arch == "B":
        return architecture_b(pair[0], pair[1], beta, t1_hours, edition)
    dc_pair = _pair("dc_percent", dcs, arch)
    assert t2_hours is not None
    return architecture_d(
        pair[0], pair[1], dc_pair[0], dc_pair[1], beta, t1_hours, t2_hours, edition
    )


def _pair(name: str, values: list[float], arch: str) -> tuple[float, float]:
    if len(values) == 1:
        return values[0], values[0]
    if len(values) == 2:
        return values[0], values[1]
    raise InputError(
        name,
        f"architecture {arch} has two channels: give one value per channel (or one value "
        f"for both), got {len(values)}",
    )

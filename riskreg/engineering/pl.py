"""Achieved performance level (PL) of a safety function, ISO 13849-1.

- Component formulas of Annex C: operations per year, MTTFd and T10d from B10d.
- One channel's MTTFd from its blocks, the symmetrised MTTFd of two different
  channels, and DCavg.
- The achieved PL by the simplified procedure (Category, DCavg, MTTFd of each
  channel), with the exact PFHd = 1 / MTTFd for Categories B and 1.
- Subsystems in series: by the sum of their PFHd values, or without numbers by
  the lowest-PL count rule.

Every value of the standard comes from ``standards.iso13849_1`` (recalled from
memory, to be checked against the edition the site works to).
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass
from typing import Any, cast

from . import cautions
from .derivation import (
    Constant,
    ConstantTable,
    Derivation,
    DerivationBuilder,
    InputError,
    Result,
    require_choice,
    require_finite,
)
from .risk import PL_ORDER, pl_rank
from .standards import iso13849_1, pick

HOURS_PER_YEAR = 8760  # 365 d × 24 h: MTTFd in years → hours
SECONDS_PER_HOUR = 3600

CATEGORIES = ("B", "1", "2", "3", "4")
MTTFD_BANDS = ("low", "medium", "high")
DC_BANDS = ("none", "low", "medium", "high")

TYPICAL_B10D = {
    "pneumatic-valve": "b10d.pneumatic_valve",
    "relay-small-load": "b10d.relay_small_load",
    "relay-maximum-load": "b10d.relay_maximum_load",
    "contactor-small-load": "b10d.contactor_small_load",
    "contactor-nominal-load": "b10d.contactor_nominal_load",
    "position-switch": "b10d.position_switch",
    "position-switch-separate-actuator": "b10d.position_switch_separate_actuator",
    "emergency-stop": "b10d.emergency_stop",
    "enabling-switch": "b10d.enabling_switch",
}


def _table(edition: str | None) -> ConstantTable:
    return pick(iso13849_1.EDITIONS, edition, iso13849_1.DEFAULT_EDITION)


def tidy(x: float) -> float:
    """Round a derived value to 12 significant digits.

    Sums of reciprocals leave noise in the last bits (two channels of 30 years
    would give 29.999999999999996): inputs are never known that well, and a band
    edge must not move by rounding noise.
    """
    return float(f"{x:.12g}")


def _years(name: str, value: float) -> float:
    return require_finite(name, value, minimum=0, exclusive_min=True, unit="years")


def _pfhd_value(name: str, value: float) -> float:
    """A PFHd must be a rate of dangerous failure per hour: 0 < PFHd < 1."""
    v = require_finite(name, value, minimum=0, exclusive_min=True, unit="1/h")
    if v >= 1:
        raise InputError(
            name,
            f"{v:g} is not a probability of dangerous failure per hour; give a value "
            "between 0 and 1, e.g. 2.5e-7 (the PL bands run from 1e-8 to below 1e-4 1/h)",
        )
    return v


def lowest_pl(pls: Sequence[str]) -> str:
    """The lowest of some PLs (a is lowest)."""
    if not pls:
        raise InputError("pls", "give at least one PL (a to e)")
    return min(pls, key=pl_rank)


def _band_pl(pfhd: float, table: ConstantTable, d: DerivationBuilder | None) -> str | None:
    """PL whose PFHd band holds ``pfhd``; None at 1e-4 1/h or more."""
    for pl in PL_ORDER:
        row = table[f"pfhd_band.{pl}"]
        lo, hi = row.value
        if d is not None:
            d.const(row)
        if lo <= pfhd < hi:
            return pl
    e_lo = table.value("pfhd_band.e")[0]
    if pfhd < e_lo:
        if d is not None:
            d.warn(
                f"PFHd {pfhd:.3g} 1/h is below the PL e band's lower edge {e_lo:g} 1/h; "
                "PL e is the highest level there is."
            )
        return "e"
    return None


def pl_for_pfhd(pfhd: float, edition: str | None = None) -> str | None:
    """The PL band a PFHd (1/h) falls in; None at 1e-4 1/h or more (no PL)."""
    v = _pfhd_value("pfhd", pfhd)
    return _band_pl(v, _table(edition), None)


def sil_for_pl(pl: str, edition: str | None = None) -> int | None:
    """SIL (high demand) corresponding to a PL; None for PL a."""
    pl_rank(pl)  # refuses anything but a-e
    return cast("int | None", _table(edition).value(f"pl_sil.{pl}"))


def _dc_band(dc: float, table: ConstantTable, d: DerivationBuilder) -> str:
    if dc >= d.const(table["dc.band.high_min"]):
        return "high"
    if dc >= d.const(table["dc.band.medium_min"]):
        return "medium"
    if dc >= d.const(table["dc.band.low_min"]):
        return "low"
    return "none"


def _mttfd_band(years: float, table: ConstantTable, d: DerivationBuilder) -> str | None:
    if years >= d.const(table["mttfd.band.high_min"]):
        return "high"
    if years >= d.const(table["mttfd.band.medium_min"]):
        return "medium"
    if years >= d.const(table["mttfd.band.low_min"]):
        return "low"
    return None


# --- Component formulas (Annex C) ---------------------------------------------


@dataclass(frozen=True)
class ComponentMttfdResult(Result):
    nop: float
    mttfd_years: float
    t10d_years: float
    b10d: float
    derivation: Derivation


def typical_b10d(kind: str, edition: str | None = None) -> Constant:
    """A typical B10d value of Table C.1 (recalled), as a constant with its source."""
    require_choice("typical", kind, TYPICAL_B10D)
    return _table(edition)[TYPICAL_B10D[kind]]


def component_mttfd(
    b10d: float | None,
    days_per_year: float,
    hours_per_day: float,
    cycle_time_s: float,
    *,
    typical: str | None = None,
    edition: str | None = None,
) -> ComponentMttfdResult:
    """MTTFd and T10d of a wearing component from its B10d and its duty.

    nop = dop · hop · 3600 / tcycle; MTTFd = B10d / (0.1 · nop); T10d = B10d / nop.
    Give ``b10d`` (cycles) or the name of a ``typical`` value of Table C.1.
    """
    table = _table(edition)
    d = DerivationBuilder(
        "MTTFd of a component from B10d, ISO 13849-1 Annex C",
        "nop = dop · hop · 3600 / tcycle; MTTFd = B10d / (0.1 · nop); T10d = B10d / nop",
        cautions.REQUIREMENT,
    )
    if typical is not None and b10d is not None:
        raise InputError("b10d", "give either a B10d value or a typical value, not both")
    if typical is not None:
        row = typical_b10d(typical, edition)
        b = float(d.const(row))
        d.step(f"B10d = {b:,.0f} cycles, typical value for {typical} ({row.citation})")
        d.warn(
            "A typical value of Table C.1 is used; the maker's B10d for the actual part "
            "takes precedence where it is known."
        )
    elif b10d is None:
        raise InputError("b10d", "give the B10d in cycles or the name of a typical value")
    else:
        b = require_finite("b10d", b10d, minimum=0, exclusive_min=True, unit="cycles")
    dop = require_finite(
        "days_per_year", days_per_year, minimum=0, exclusive_min=True, maximum=366, unit="days"
    )
    hop = require_finite(
        "hours_per_day", hours_per_day, minimum=0, exclusive_min=True, maximum=24, unit="h"
    )
    tc = require_finite("cycle_time_s", cycle_time_s, minimum=0, exclusive_min=True, unit="s")
    d.input("B10d", b, "cycles")
    d.input("dop operating days per year", dop, "days/year")
    d.input("hop operating hours per day", hop, "h/day")
    d.input("tcycle mean time between operations", tc, "s")
    nop = tidy(dop * hop * SECONDS_PER_HOUR / tc)
    d.step(f"nop = {dop:g} · {hop:g} · 3600 / {tc:g} = {nop:,.6g} operations per year")
    mttfd = tidy(b / (0.1 * nop))
    d.step(f"MTTFd = {b:,.6g} / (0.1 · {nop:,.6g}) = {mttfd:.6g} years")
    t10d = tidy(b / nop)
    d.step(f"T10d = {b:,.6g} / {nop:,.6g} = {t10d:.6g} years")
    mission = d.const(table["mission_time_y"])
    d.const(table["t10d.replace_before"])
    if t10d < mission:
        d.warn(
            f"T10d = {t10d:.3g} years is shorter than the {mission}-year mission time: "
            f"the part must be replaced before {t10d:.3g} years of operation, or the MTTFd "
            "does not hold."
        )
    cap = table.value("mttfd.cap")
    if mttfd > cap:
        d.step(
            f"MTTFd above {cap} years: a channel is counted as at most {cap} years "
            "(2,500 years for Category 4) when the PL is found."
        )
    return ComponentMttfdResult(
        nop=nop, mttfd_years=mttfd, t10d_years=t10d, b10d=b, derivation=d.build()
    )


@dataclass(frozen=True)
class MttfdResult(Result):
    mttfd_years: float
    derivation: Derivation


def _year_list(name: str, values: Sequence[float]) -> list[float]:
    if isinstance(values, (str, bytes)) or not isinstance(values, Sequence) or not values:
        raise InputError(name, "give at least one MTTFd value in years")
    return [_years(f"{name}[{i}]", v) for i, v in enumerate(values)]


def channel_mttfd(mttfd_years_list: Sequence[float], edition: str | None = None) -> MttfdResult:
    """MTTFd of one channel from its blocks in series: 1/MTTFd = Σ 1/MTTFd,i."""
    values = _year_list("mttfd_years", mttfd_years_list)
    table = _table(edition)
    d = DerivationBuilder(
        "MTTFd of one channel, ISO 13849-1 Annex D (parts count)",
        "1 / MTTFd = Σ 1 / MTTFd,i",
        cautions.REQUIREMENT,
    )
    for i, v in enumerate(values, 1):
        d.input(f"MTTFd,{i}", v, "years")
    total = sum(1 / v for v in values)
    result = tidy(1 / total)
    shown = " + ".join(f"1/{v:g}" for v in values)
    d.step(f"1 / MTTFd = {shown} = {total:.6g} 1/year → MTTFd = {result:.6g} years")
    cap = table.value("mttfd.cap")
    if result > cap:
        d.step(f"counted as at most {cap} years (2,500 years for Category 4) when the PL is found")
    return MttfdResult(mttfd_years=result, derivation=d.build())


def _symmetrise(c1: float, c2: float) -> float:
    if c1 == c2:
        return c1
    return tidy(2 * (c1 + c2 - 1 / (1 / c1 + 1 / c2)) / 3)


def symmetrised_mttfd(c1: float, c2: float, edition: str | None = None) -> MttfdResult:
    """MTTFd of two different channels: 2/3 · [C1 + C2 − 1 / (1/C1 + 1/C2)]."""
    a = _years("c1", c1)
    b = _years("c2", c2)
    _table(edition)
    d = DerivationBuilder(
        "Symmetrised MTTFd of two channels, ISO 13849-1 Annex D",
        "MTTFd = 2/3 · [C1 + C2 − 1 / (1/C1 + 1/C2)]",
        cautions.REQUIREMENT,
    )
    d.input("C1 MTTFd of channel 1", a, "years")
    d.input("C2 MTTFd of channel 2", b, "years")
    result = _symmetrise(a, b)
    d.step(f"MTTFd = 2/3 · [{a:g} + {b:g} − 1 / (1/{a:g} + 1/{b:g})] = {result:.6g} years")
    d.warn(
        "Cap each channel (100 years; 2,500 years for Category 4) before symmetrising; "
        "achieved_pl does so."
    )
    return MttfdResult(mttfd_years=result, derivation=d.build())


@dataclass(frozen=True)
class DcavgResult(Result):
    dcavg_percent: float
    dcavg_band: str
    derivation: Derivation


def dcavg(pairs: Sequence[tuple[float, float]], edition: str | None = None) -> DcavgResult:
    """DCavg = (Σ DCi / MTTFd,i) / (Σ 1 / MTTFd,i); pairs are (DC %, MTTFd years)."""
    if isinstance(pairs, (str, bytes)) or not isinstance(pairs, Sequence) or not pairs:
        raise InputError("pairs", "give at least one (DC %, MTTFd years) pair")
    blocks: list[tuple[float, float]] = []
    for i, pair in enumerate(pairs):
        if not isinstance(pair, (tuple, list)) or len(pair) != 2:
            raise InputError(f"pairs[{i}]", f"must be a (DC %, MTTFd years) pair, got {pair!r}")
        dc = require_finite(f"pairs[{i}] DC", pair[0], minimum=0, maximum=100, unit="%")
        m = _years(f"pairs[{i}] MTTFd", pair[1])
        blocks.append((dc, m))
    table = _table(edition)
    d = DerivationBuilder(
        "Average diagnostic coverage DCavg, ISO 13849-1 Annex E",
        "DCavg = (Σ DCi / MTTFd,i) / (Σ 1 / MTTFd,i)",
        cautions.REQUIREMENT,
    )
    for i, (dc, m) in enumerate(blocks, 1):
        d.input(f"block {i}", f"DC {dc:g} %, MTTFd {m:g}", "%, years")
    num = sum(dc / m for dc, m in blocks)
    den = sum(1 / m for _, m in blocks)
    value = tidy(num / den)
    d.step(f"Σ DCi / MTTFd,i = {num:.6g}; Σ 1 / MTTFd,i = {den:.6g}; DCavg = {value:.6g} %")
    band = _dc_band(value, table, d)
    d.step(f"DCavg {value:.6g} % → {band}")
    return DcavgResult(dcavg_percent=value, dcavg_band=band, derivation=d.build())


# --- Achieved PL (simplified procedure) ----------------------------------------


@dataclass(frozen=True)
class AchievedPlResult(Result):
    pl: str | None
    category: str
    mttfd_years: float | None
    mttfd_band: str | None
    dcavg_percent: float
    dcavg_band: str
    pfhd: float | None
    table_pl: str | None
    iec62061_estimate: float | None
    problems: tuple[str, ...]
    derivation: Derivation


def _category(category: Any) -> str:
    if isinstance(category, int) and not isinstance(category, bool):
        category = str(category)
    if isinstance(category, str):
        category = category.strip().upper()
    return cast(str, require_choice("category", category, CATEGORIES))


def achieved_pl(
    category: str,
    mttfd_years: Sequence[float],
    dcavg_percent: float,
    ccf_points: float | None = None,
    well_tried: bool = False,
    test_rate_ratio: float | None = None,
    edition: str | None = None,
    iec62061_estimate: float | None = None,
) -> AchievedPlResult:
    """Achieved PL by the simplified procedure of ISO 13849-1.

    ``mttfd_years`` holds one value (the channel, or both channels alike) or two
    (one per channel, Categories 3 and 4). Every Category requirement that fails
    is a problem and leaves ``pl`` None. ``iec62061_estimate`` (a PFH by IEC
    62061 formulas) is shown as information only and never changes the PL.
    """
    cat = _category(category)
    values = _year_list("mttfd_years", mttfd_years)
    if len(values) > 2:
        raise InputError(
            "mttfd_years",
            f"give one MTTFd per channel (one or two values), got {len(values)}; "
            "combine the blocks of a channel first (1/MTTFd = Σ 1/MTTFd,i)",
        )
    dc = require_finite("dcavg_percent", dcavg_percent, minimum=0, maximum=100, unit="%")
    ccf = (
        None
        if ccf_points is None
        else require_finite("ccf_points", ccf_points, minimum=0, maximum=100, unit="points")
    )
    ratio = (
        None
        if test_rate_ratio is None
        else require_finite("test_rate_ratio", test_rate_ratio, minimum=0, exclusive_min=True)
    )
    estimate = (
        None if iec62061_estimate is None else _pfhd_value("iec62061_estimate", iec62061_estimate)
    )
    table = _table(edition)

    d = DerivationBuilder(
        f"Achieved performance level (PL), ISO 13849-1, Category {cat}",
        "PL = simplified procedure (Category, DCavg, MTTFd of each channel); "
        "Categories B and 1: PFHd = 1 / (MTTFd · 8760 h)",
        cautions.REQUIREMENT,
    )
    d.input("Category", cat)
    for i, v in enumerate(values, 1):
        d.input(f"MTTFd of channel {i}" if len(values) == 2 else "MTTFd of the channel", v, "years")
    d.input("DCavg", dc, "%")
    d.input("CCF score", ccf, "points", note="" if ccf is not None else "not given")
    if cat == "1":
        d.input("well-tried components and principles attested", well_tried)
    if cat == "2":
        d.input("test rate / demand rate", ratio, note="" if ratio is not None else "not given")

    # MTTFd of the channel: cap, symmetrise, floor
    channels = d.const(table[f"category.{cat}.channels"])
    mttfd_used: float | None = None
    band: str | None = None
    low_min = d.const(table["mttfd.band.low_min"])
    if channels == 1 and len(values) == 2:
        d.problem(
            f"Category {cat} has a single channel, but two channel MTTFd values were given. "
            "If they are blocks of the one channel, combine them first "
            "(1/MTTFd = Σ 1/MTTFd,i) and give one value; if there really are two "
            "channels, the architecture is Category 3 or 4."
        )
    else:
        cap_row = table["mttfd.cap_cat4"] if cat == "4" else table["mttfd.cap"]
        cap = d.const(cap_row)
        for i, v in enumerate(values, 1):
            if v < low_min:
                which = f"channel {i}" if len(values) == 2 else "the channel"
                d.problem(
                    f"MTTFd of {which} is {v:g} years: below {low_min} years is not allowed "
                    "(choose parts with a higher MTTFd or replace them more often)."
                )
        capped = [min(v, cap) for v in values]
        for v, c in zip(values, capped, strict=True):
            if c < v:
                d.step(f"MTTFd {v:g} years counted as {c:g} years (cap for Category {cat})")
        if len(capped) == 2:
            mttfd_used = _symmetrise(capped[0], capped[1])
            d.step(
                f"symmetrised: 2/3 · [{capped[0]:g} + {capped[1]:g} − 1 / (1/{capped[0]:g} + "
                f"1/{capped[1]:g})] = {mttfd_used:.6g} years"
            )
        else:
            mttfd_used = capped[0]
            if channels == 2:
                d.step(f"one value given: both channels taken as {mttfd_used:g} years")
        band = _mttfd_band(mttfd_used, table, d)
        if cat == "B":
            b_max = d.const(table["category.B.mttfd_max_y"])
            if mttfd_used >= b_max:
                d.step(
                    f"Category B counts MTTFd as at most medium: {mttfd_used:g} years "
                    f"counted as {b_max} years"
                )
                mttfd_used = float(b_max)
                band = "medium"
        d.step(f"MTTFd of each channel {mttfd_used:g} years → {band or 'below low'}")

    # DCavg band and the table column it selects
    dcb = _dc_band(dc, table, d)
    columns: tuple[str, ...] = tuple(d.const(table[f"category.{cat}.dc_columns"]))
    column: str | None = None
    if dcb in columns:
        column = dcb
    elif DC_BANDS.index(dcb) > DC_BANDS.index(columns[-1]):
        column = columns[-1]
        if cat in ("B", "1"):
            d.step(f"Category {cat} takes no credit for diagnostics: DCavg {dc:g} % not used")
        else:
            d.step(f"DCavg {dcb} counts as {column} in the table for Category {cat}")
    else:
        d.problem(
            f"Category {cat} needs DCavg at least {columns[0]} "
            f"(≥ {table.value(f'dc.band.{columns[0]}_min')} %); DCavg is {dc:g} % ({dcb})."
        )
    d.step(f"DCavg {dc:g} % → {dcb}")

    # Requirements of the Category
    if f"category.{cat}.mttfd_min_band" in table and band is not None:
        need = d.const(table[f"category.{cat}.mttfd_min_band"])
        if MTTFD_BANDS.index(band) < MTTFD_BANDS.index(need):
            d.problem(
                f"Category {cat} needs {need} MTTFd (≥ {table.value('mttfd.band.high_min')} "
                f"years) in each channel; the channel has {mttfd_used:g} years ({band})."
            )
    if cat in d.const(table["ccf.required_categories"]):
        ccf_min = d.const(table["ccf.min_points"])
        if ccf is None:
            d.problem(
                f"CCF score not given: Category {cat} needs at least {ccf_min} points of the "
                "measures against common-cause failure (Annex F)."
            )
        elif ccf < ccf_min:
            d.problem(
                f"CCF score {ccf:g} points is below the {ccf_min} points Category {cat} needs "
                "(Annex F): add measures against common-cause failure."
            )
        else:
            d.step(f"CCF {ccf:g} points ≥ {ccf_min}")
    if cat == "1":
        d.const(table["category.1.well_tried"])
        if not well_tried:
            d.problem(
                "Category 1 needs well-tried components and well-tried safety principles: "
                "not attested. The engineer must record that attestation."
            )
    if cat == "2":
        ratio_min = d.const(table["category.2.test_rate_ratio_min"])
        if ratio is None:
            d.problem(
                f"Test rate not given: Category 2 needs the test rate at least {ratio_min} times "
                "the demand rate; without it the result is not valid as Category 2."
            )
        elif ratio < ratio_min:
            d.problem(
                f"Test rate is {ratio:g} times the demand rate; Category 2 needs at least "
                f"{ratio_min} times. The result is not valid as Category 2."
            )
        else:
            d.step(f"test rate {ratio:g} × demand rate ≥ {ratio_min} ×")

    # The simplified table
    table_pl: str | None = None
    if column is not None and band is not None:
        key = f"simplified.{cat}.{column}.{band}"
        if key in table:
            table_pl = d.const(table[key])
            d.step(
                f"simplified table: Category {cat}, DCavg {column}, MTTFd {band} → PL {table_pl}"
            )
        else:
            d.step(f"simplified table: no cell for Category {cat}, DCavg {column}, MTTFd {band}")

    # Exact PFHd for Categories B and 1
    pfhd: float | None = None
    pfhd_pl: str | None = None
    if cat in ("B", "1") and mttfd_used is not None and mttfd_used >= low_min:
        pfhd = 1 / (mttfd_used * HOURS_PER_YEAR)
        pfhd_pl = _band_pl(pfhd, table, d)
        d.step(
            f"PFHd = 1 / ({mttfd_used:g} · 8760 h) = {pfhd:.4g} 1/h → PL {pfhd_pl} by the PFHd bands"
        )
        if table_pl is not None and pfhd_pl != table_pl:
            d.warn(
                f"The exact PFHd {pfhd:.3g} 1/h gives PL {pfhd_pl}, the simplified table PL "
                f"{table_pl}: for Category {cat} the computed PFHd decides."
            )
    elif cat not in ("B", "1"):
        d.step(
            f"Category {cat}: the simplified table's PL stands (its PFHd comes from the Markov "
            "models of Annex K, not computed here)."
        )

    if estimate is not None:
        est_pl = _band_pl(estimate, table, None)
        d.step(
            f"For information only — estimate by another method (IEC 62061 basic subsystem "
            f"architecture): PFH {estimate:.3g} 1/h, in the PL {est_pl or '(none)'} band; it does "
            "not change the PL."
        )
        if cat in ("B", "1"):
            d.warn(
                f"For Category {cat} the exact PFHd decides; the IEC 62061 estimate is shown only "
                "for information."
            )
        elif table_pl is not None and (est_pl is None or pl_rank(est_pl) < pl_rank(table_pl)):
            d.warn(
                f"The IEC 62061 estimate ({estimate:.3g} 1/h) falls below the table's PL "
                f"{table_pl}: look into the difference before relying on either."
            )

    pl: str | None
    if d.problems:
        pl = None
        d.step("PL not determined: the problems above must be resolved first.")
    elif cat in ("B", "1"):
        pl = pfhd_pl
    else:
        pl = table_pl
    if pl is not None:
        d.step(f"achieved PL {pl} (Category {cat})")
    d.warn(
        "Only MTTFd, DCavg, CCF and the Category rules above are checked here; the "
        "Category's other requirements (basic and well-tried safety principles, behaviour "
        "at a fault, systematic failures, software, validation to ISO 13849-2) must be "
        "checked by the engineer."
    )
    return AchievedPlResult(
        pl=pl,
        category=cat,
        mttfd_years=mttfd_used,
        mttfd_band=band,
        dcavg_percent=dc,
        dcavg_band=dcb,
        pfhd=pfhd,
        table_pl=table_pl,
        iec62061_estimate=estimate,
        problems=tuple(d.problems),
        derivation=d.build(),
    )


# --- Subsystems in series -------------------------------------------------------


@dataclass(frozen=True)
class SeriesPfhdResult(Result):
    pfhd_total: float
    pl: str | None
    band_pl: str | None
    lowest_pl: str | None
    problems: tuple[str, ...]
    derivation: Derivation


def series_pfhd(
    pfhds: Sequence[float], pls: Sequence[str] | None = None, edition: str | None = None
) -> SeriesPfhdResult:
    """Subsystems in series: PFHd,total = Σ PFHd,i; PL from its band, capped by
    the lowest subsystem PL when the subsystems' PLs are given (one per PFHd)."""
    if isinstance(pfhds, (str, bytes)) or not isinstance(pfhds, Sequence) or not pfhds:
        raise InputError("pfhds", "give at least one subsystem PFHd (1/h)")
    values = [_pfhd_value(f"pfhds[{i}]", v) for i, v in enumerate(pfhds)]
    given: list[str] | None = None
    if pls is not None:
        given = list(pls)
        if len(given) != len(values):
            raise InputError(
                "pls",
                f"give one PL per subsystem PFHd, in the same order: {len(values)} PFHd "
                f"values but {len(given)} PLs",
            )
        for i, p in enumerate(given):
            require_choice(f"pls[{i}]", p, PL_ORDER)
    table = _table(edition)
    d = DerivationBuilder(
        "Subsystems in series by PFHd, ISO 13849-1",
        "PFHd,total = Σ PFHd,i; PL = band of PFHd,total, never above the lowest subsystem PL",
        cautions.REQUIREMENT,
    )
    for i, v in enumerate(values, 1):
        d.input(f"PFHd of subsystem {i}", v, "1/h", note=f"PL {given[i - 1]}" if given else "")
    total = tidy(sum(values))
    d.step(" + ".join(f"{v:.3g}" for v in values) + f" = {total:.4g} 1/h")
    band_pl = _band_pl(total, table, d)
    if band_pl is None:
        d.problem(
            f"PFHd,total {total:.3g} 1/h is at or above 1e-4 1/h: outside every PL band, no PL."
        )
    else:
        d.step(f"PFHd,total {total:.4g} 1/h → PL {band_pl} band")
    low: str | None = None
    if given:
        for i, (v, p) in enumerate(zip(values, given, strict=True), 1):
            own = _band_pl(v, table, None)
            if own is None or pl_rank(p) > pl_rank(own):
                d.problem(
                    f"Subsystem {i} is given PL {p}, but its PFHd {v:.3g} 1/h lies in the "
                    f"{'PL ' + own if own else 'no-PL'} band: check its data."
                )
        low = lowest_pl(given)
        d.step(f"lowest subsystem PL: {low}")
    pl: str | None = None
    if not d.problems and band_pl is not None:
        pl = band_pl if low is None or pl_rank(band_pl) <= pl_rank(low) else low
        if pl != band_pl:
            d.step(f"PL {band_pl} by the band is capped at the lowest subsystem PL {low}")
        d.step(f"PL of the series: {pl}")
    return SeriesPfhdResult(
        pfhd_total=total,
        pl=pl,
        band_pl=band_pl,
        lowest_pl=low,
        problems=tuple(d.problems),
        derivation=d.build(),
    )


@dataclass(frozen=True)
class SeriesCountResult(Result):
    pl: str | None
    lowest: str
    n_low: int
    problems: tuple[str, ...]
    derivation: Derivation


def series_pl_count(pls: Sequence[str], edition: str | None = None) -> SeriesCountResult:
    """Subsystems in series without PFHd values: the lowest-PL count rule (Table 11)."""
    if isinstance(pls, (str, bytes)) or not isinstance(pls, Sequence) or not pls:
        raise InputError("pls", "give at least one subsystem PL (a to e)")
    given = [require_choice(f"pls[{i}]", p, PL_ORDER) for i, p in enumerate(pls)]
    table = _table(edition)
    d = DerivationBuilder(
        "Subsystems in series by the lowest-PL count, ISO 13849-1 Table 11",
        "PL = f(lowest subsystem PL, Nlow = number of subsystems at that PL)",
        cautions.REQUIREMENT,
    )
    d.input("subsystem PLs", ", ".join(given))
    status = d.const(table["series.count_rule.status"])
    if status != "present":
        d.warn(
            f"This count rule (Table 11 of the 2006 and 2015 editions) is {status}; "
            "check whether the edition in use still has it, or sum the PFHd values instead."
        )
    low = lowest_pl(given)
    n_low = sum(1 for p in given if p == low)
    max_n, over = d.const(table[f"series.count.{low}"])
    d.step(f"lowest PL {low}, Nlow = {n_low}")
    pl: str | None
    if n_low <= max_n:
        pl = low
        d.step(f"Nlow {n_low} ≤ {max_n} → PL {pl}")
    elif over is None:
        pl = None
        d.problem(
            f"{n_low} subsystems at PL {low} in series: more than {max_n} is not allowed; "
            "raise the PL of some subsystems."
        )
    else:
        pl = over
        d.step(f"Nlow {n_low} > {max_n} → PL {pl}")
    d.warn(
        "The count rule assumes each subsystem's PFHd in the middle of its band; "
        "where the PFHd values are known, their sum is the better basis."
    )
    return SeriesCountResult(
        pl=pl, lowest=low, n_low=n_low, problems=tuple(d.problems), derivation=d.build()
    )

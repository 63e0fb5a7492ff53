"""Required safety level from published methods.

- PLr from the ISO 13849-1 Annex A risk graph (S, F, P).
- Required SIL from the IEC 62061 Annex A matrix (Se, Fr, Pr, Av).
- Risk level from the ANSI B11.0 example matrix (severity × probability).
"""

from __future__ import annotations

from dataclasses import dataclass

from . import cautions
from .derivation import Derivation, DerivationBuilder, Result, require_choice
from .standards import ansi_b11_0, iec62061, iso13849_1, pick

PL_ORDER = ("a", "b", "c", "d", "e")

SEVERITY = {
    "S1": "slight (normally reversible) injury",
    "S2": "serious (normally irreversible) injury or death",
}
FREQUENCY = {
    "F1": "seldom to less often and/or exposure time is short",
    "F2": "frequent to continuous and/or exposure time is long",
}
AVOIDANCE = {
    "P1": "possible under specific conditions",
    "P2": "scarcely possible",
}


def pl_rank(pl: str) -> int:
    """0 for PL a … 4 for PL e."""
    return PL_ORDER.index(require_choice("pl", pl, PL_ORDER))


@dataclass(frozen=True)
class PlrResult(Result):
    plr: str
    severity: str
    frequency: str
    avoidance: str
    derivation: Derivation


def required_pl(
    severity: str, frequency: str, avoidance: str, edition: str | None = None
) -> PlrResult:
    """PLr from the ISO 13849-1 risk graph."""
    s = require_choice("severity", severity, SEVERITY)
    f = require_choice("frequency", frequency, FREQUENCY)
    p = require_choice("avoidance", avoidance, AVOIDANCE)
    table = pick(iso13849_1.EDITIONS, edition, iso13849_1.DEFAULT_EDITION)
    d = DerivationBuilder(
        "Required performance level (PLr), ISO 13849-1 risk graph",
        "PLr = risk graph (S, F, P)",
        cautions.REQUIREMENT,
    )
    d.input("S severity of injury", s, note=SEVERITY[s])
    d.input("F frequency and/or exposure", f, note=FREQUENCY[f])
    d.input("P possibility of avoidance", p, note=AVOIDANCE[p])
    plr = d.const(table[f"risk_graph.{s}.{f}.{p}"])
    d.step(f"{s} → {f} → {p} → PLr {plr}")
    if f == "F1":
        d.const(table["f1_max_exposure_fraction"])
        d.const(table["f1_min_interval_min"])
        d.warn(
            "F1 holds only if the accumulated exposure is at most 1/20 of the operating "
            "time and the frequency is at most once per 15 minutes; otherwise choose F2."
        )
    d.warn(
        "A reduction by one level for a low probability of occurrence is not applied here; "
        "record it as an override with its justification and approver."
    )
    return PlrResult(plr=plr, severity=s, frequency=f, avoidance=p, derivation=d.build())


# --- IEC 62061 ----------------------------------------------------------------

SE = {
    4: "irreversible: death, losing an eye or arm",
    3: "irreversible: broken limb, losing a finger",
    2: "reversible: requires attention from a medical practitioner",
    1: "reversible: requires first aid",
}
FR = {
    5: "exposure at least daily (interval up to one day)",
    4: "interval more than a day, up to 2 weeks",
    3: "interval more than 2 weeks, up to a year",
    2: "interval more than a year",
    1: "rare and short exposure (per the 2021 edition's reduction for ≤ 10 min)",
}
PR = {5: "very high", 4: "likely", 3: "possible", 2: "rarely", 1: "negligible"}
AV = {5: "impossible", 3: "rarely", 1: "probable"}


@dataclass(frozen=True)
class SilResult(Result):
    class_sum: int
    sil: int | None
    outcome: str  # "sil", "other measures" or "none"
    severity: int
    frequency: int
    probability: int
    avoidance: int
    derivation: Derivation


def _class_band(ci: int) -> str:
    if ci <= 4:
        return "3-4"
    if ci <= 7:
        return "5-7"
    if ci <= 10:
        return "8-10"
    if ci <= 13:
        return "11-13"
    return "14-15"


def required_sil(
    severity: int, frequency: int, probability: int, avoidance: int, edition: str | None = None
) -> SilResult:
    """Required SIL from the IEC 62061 Annex A matrix."""
    se = require_choice("severity", severity, SE)
    fr = require_choice("frequency", frequency, FR)
    pr = require_choice("probability", probability, PR)
    av = require_choice("avoidance", avoidance, AV)
    table = pick(iec62061.EDITIONS, edition, iec62061.DEFAULT_EDITION)
    d = DerivationBuilder(
        "Required SIL, IEC 62061 risk matrix",
        "CI = Fr + Pr + Av; SIL = matrix (Se, CI)",
        cautions.REQUIREMENT,
    )
    d.input("Se severity", se, note=SE[se])
    d.input("Fr frequency and duration", fr, note=FR[fr])
    d.input("Pr probability of the hazardous event", pr, note=PR[pr])
    d.input("Av avoidance", av, note=AV[av])
    ci = fr + pr + av
    d.step(f"CI = {fr} + {pr} + {av} = {ci}")
    band = _class_band(ci)
    cell = d.const(table[f"matrix.se{se}.ci{band}"])
    if cell in ("SIL 1", "SIL 2", "SIL 3"):
        sil: int | None = int(cell[-1])
        outcome = "sil"
    elif cell == "other measures":
        sil, outcome = None, "other measures"
    else:
        sil, outcome = None, "none"
    d.step(f"Se {se}, CI band {band} → {cell}")
    if fr == 1:
        d.warn(
            "Fr = 1 exists only under the 2021 edition's reduction for exposures of 10 min or less."
        )
    return SilResult(
        class_sum=ci,
        sil=sil,
        outcome=outcome,
        severity=se,
        frequency=fr,
        probability=pr,
        avoidance=av,
        derivation=d.build(),
    )


# --- ANSI B11.0 ---------------------------------------------------------------

B11_SEVERITY = {
    "catastrophic": "death or permanent disabling injury or illness",
    "serious": "severe debilitating injury or illness, needs more than first aid",
    "moderate": "significant injury or illness, first aid or medical treatment",
    "minor": "no injury or slight injury needing no more than first aid",
}
B11_PROBABILITY = {
    "very likely": "near certain to occur",
    "likely": "may occur",
    "unlikely": "not likely to occur",
    "remote": "so unlikely as to be near zero",
}
B11_LEVELS = ("negligible", "low", "medium", "high")


@dataclass(frozen=True)
class B11RiskResult(Result):
    risk_level: str
    severity: str
    probability: str
    derivation: Derivation


def b11_risk_level(severity: str, probability: str, edition: str | None = None) -> B11RiskResult:
    """Risk level from the ANSI B11.0 example matrix."""
    sev = require_choice("severity", severity, B11_SEVERITY)
    prob = require_choice("probability", probability, B11_PROBABILITY)
    table = pick(ansi_b11_0.EDITIONS, edition, ansi_b11_0.DEFAULT_EDITION)
    d = DerivationBuilder(
        "Risk level, ANSI B11.0 example risk matrix",
        "risk level = matrix (severity, probability of occurrence of harm)",
        cautions.REQUIREMENT,
    )
    d.input("severity", sev, note=B11_SEVERITY[sev])
    d.input("probability of occurrence of harm", prob, note=B11_PROBABILITY[prob])
    level = d.const(table[f"matrix.{prob}.{sev}"])
    d.step(f"{prob} × {sev} → {level}")
    return B11RiskResult(risk_level=level, severity=sev, probability=prob, derivation=d.build())

"""The stopping time to use in a safety distance, from measured trials.

The value used is the worst trial, increased by an allowance for brake wear and
scatter if the site adds one. Where a brake monitor lets the press run until a
set stopping-time limit before it trips, the machine may stop that late in
service, so that limit is used when it is larger than the worst trial with
allowance.
"""

from __future__ import annotations

import statistics
from collections.abc import Sequence
from dataclasses import dataclass

from . import cautions
from .derivation import Derivation, DerivationBuilder, InputError, Result, require_finite

MAX_TIME_S = 10.0
MIN_TRIALS = 3  # [practice]: several trials; fewer than this is warned about
MAX_SPREAD_FRACTION = 0.10  # [practice]: spread above 10 % of the mean is warned about

WORST_PLUS_ALLOWANCE = "worst trial plus allowance"
BRAKE_MONITOR = "brake-monitor limit"


@dataclass(frozen=True)
class StoppingTimeResult(Result):
    worst_s: float
    mean_s: float
    spread_s: float
    std_s: float | None
    t_used_s: float
    n_trials: int
    basis: str
    allowance_percent: float
    brake_monitor_limit_s: float | None
    derivation: Derivation


def _n(x: float) -> str:
    return f"{x:.6g}"


def _tidy(x: float) -> float:
    return round(x, 12) + 0.0


def _time(name: str, value: float) -> float:
    if isinstance(value, bool) or not isinstance(value, (int, float)):
        raise InputError(name, f"must be a time in seconds, got {value!r}")
    v = require_finite(name, value, unit="s")
    if v <= 0:
        raise InputError(name, f"must be greater than 0 s, got {v:g} s (a measured stopping time)")
    if v > MAX_TIME_S:
        raise InputError(
            name,
            f"must be at most {MAX_TIME_S:g} s, got {v:g} s; check the unit (180 ms is 0.18 s)",
        )
    return v


def stopping_time_from_trials(
    trials_s: Sequence[float],
    allowance_percent: float = 0,
    brake_monitor_limit_s: float | None = None,
) -> StoppingTimeResult:
    """Worst, mean, spread and standard deviation of the trials, and the time to use."""
    if isinstance(trials_s, (str, bytes)) or not isinstance(trials_s, Sequence):
        raise InputError("trials_s", "must be a list of measured stopping times in seconds")
    if len(trials_s) == 0:
        raise InputError(
            "trials_s", "give at least one measured stopping time (several are better)"
        )
    trials = [_time(f"trials_s[{i}]", v) for i, v in enumerate(trials_s)]
    allowance = require_finite(
        "allowance_percent", allowance_percent, minimum=0.0, maximum=100.0, unit="%"
    )
    limit = None
    if brake_monitor_limit_s is not None:
        limit = _time("brake_monitor_limit_s", brake_monitor_limit_s)

    d = DerivationBuilder(
        "Stopping time from measured trials",
        "t_used = max(worst trial × (1 + allowance / 100), brake-monitor limit)",
        cautions.DISTANCE,
    )
    for i, v in enumerate(trials, start=1):
        d.input(f"trial {i}", v, "s")
    d.input("allowance", allowance, "%")
    if limit is not None:
        d.input("brake-monitor stopping-time limit", limit, "s")

    n = len(trials)
    worst = max(trials)
    best = min(trials)
    mean = statistics.fmean(trials)
    spread = worst - best
    std = statistics.stdev(trials) if n > 1 else None
    d.step(f"n = {n}; worst = {_n(worst)} s; mean = {_n(mean)} s")
    d.step(f"spread = {_n(worst)} s − {_n(best)} s = {_n(spread)} s")
    if std is None:
        d.step("sample standard deviation: not defined for one trial")
    else:
        d.step(f"sample standard deviation = {_n(std)} s")

    with_allowance = worst * (1 + allowance / 100)
    d.step(f"worst × (1 + {_n(allowance)} / 100) = {_n(with_allowance)} s")
    if limit is not None and limit > with_allowance:
        t_used, basis = limit, BRAKE_MONITOR
        d.step(
            f"brake-monitor limit {_n(limit)} s > {_n(with_allowance)} s → use the limit: the "
            "monitor lets the press run until it is reached"
        )
    else:
        t_used, basis = with_allowance, WORST_PLUS_ALLOWANCE
        if limit is not None:
            d.step(f"brake-monitor limit {_n(limit)} s ≤ {_n(with_allowance)} s → use the trials")
    d.step(f"t_used = {_n(t_used)} s ({basis})")

    if limit is not None and limit < worst:
        d.problem(
            f"The brake-monitor limit ({_n(limit)} s) is below the worst trial ({_n(worst)} s): "
            "the monitor should have tripped; check its setting and the measurements."
        )
    if n < MIN_TRIALS:
        d.warn(
            f"Only {n} trial{'s' if n > 1 else ''}: measure several stops, at least "
            f"{MIN_TRIALS} [practice], at the worst conditions (speed, load, tooling)."
        )
    if spread > MAX_SPREAD_FRACTION * mean:
        d.warn(
            f"The spread of the trials ({_n(spread)} s) exceeds {MAX_SPREAD_FRACTION:.0%} of "
            f"the mean ({_n(mean)} s), a threshold of practice [practice]: look for the cause "
            "(brake wear, valve, air supply) before relying on the worst trial."
        )
    return StoppingTimeResult(
        worst_s=worst,
        mean_s=_tidy(mean),
        spread_s=_tidy(spread),
        std_s=None if std is None else _tidy(std),
        t_used_s=_tidy(t_used),
        n_trials=n,
        basis=basis,
        allowance_percent=allowance,
        brake_monitor_limit_s=limit,
        derivation=d.build(),
    )

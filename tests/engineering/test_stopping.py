"""Stopping time to use from measured trials.

The method is a practice of the trade [practice]: several trials, the worst one
used, an allowance added where the site adds one, and the brake-monitor limit
used where the monitor lets the press run longer. Expected values are worked out
by hand in the comments.
"""

from __future__ import annotations

import pytest
from hypothesis import given
from hypothesis import strategies as st

from riskreg.engineering import cautions, stopping
from riskreg.engineering.derivation import InputError


def test_three_trials_statistics() -> None:
    # worst 0.22; mean (0.20 + 0.22 + 0.21)/3 = 0.21; spread 0.22 − 0.20 = 0.02;
    # sample std: deviations −0.01, +0.01, 0 → (0.0001 + 0.0001)/(3 − 1) = 0.0001 → 0.01.
    r = stopping.stopping_time_from_trials([0.20, 0.22, 0.21])
    assert r.worst_s == 0.22
    assert r.mean_s == pytest.approx(0.21)
    assert r.spread_s == pytest.approx(0.02)
    assert r.std_s == pytest.approx(0.01)
    assert r.n_trials == 3
    assert r.t_used_s == pytest.approx(0.22)
    assert r.basis == "worst trial plus allowance"
    assert r.derivation.warnings == ()  # 3 trials, spread 0.02 ≤ 10 % of 0.21 = 0.021


def test_allowance_is_added_to_the_worst_trial() -> None:
    # 0.22 × (1 + 10/100) = 0.242 s
    r = stopping.stopping_time_from_trials([0.20, 0.22, 0.21], allowance_percent=10)
    assert r.t_used_s == pytest.approx(0.242)
    assert r.basis == "worst trial plus allowance"


def test_brake_monitor_limit_used_when_larger() -> None:
    # 0.242 s < limit 0.25 s → the press may run until 0.25 s: use 0.25 s.
    r = stopping.stopping_time_from_trials(
        [0.20, 0.22, 0.21], allowance_percent=10, brake_monitor_limit_s=0.25
    )
    assert r.t_used_s == pytest.approx(0.25)
    assert r.basis == "brake-monitor limit"
    assert r.derivation.problems == ()


def test_brake_monitor_limit_not_used_when_smaller() -> None:
    # limit 0.23 s < 0.242 s → trials govern; limit is above the worst trial 0.22 → no problem.
    r = stopping.stopping_time_from_trials(
        [0.20, 0.22, 0.21], allowance_percent=10, brake_monitor_limit_s=0.23
    )
    assert r.t_used_s == pytest.approx(0.242)
    assert r.basis == "worst trial plus allowance"
    assert r.derivation.problems == ()


def test_brake_monitor_limit_below_worst_trial_is_a_problem() -> None:
    r = stopping.stopping_time_from_trials([0.20, 0.22, 0.21], brake_monitor_limit_s=0.21)
    assert r.t_used_s == pytest.approx(0.22)
    assert any("should have tripped" in p for p in r.derivation.problems)


def test_one_trial_has_no_std_and_warns() -> None:
    r = stopping.stopping_time_from_trials([0.3])
    assert r.std_s is None
    assert r.spread_s == 0
    assert r.mean_s == pytest.approx(0.3)
    assert any("Only 1 trial" in w and "[practice]" in w for w in r.derivation.warnings)


def test_two_trials_warn() -> None:
    r = stopping.stopping_time_from_trials([0.3, 0.31])
    assert any("Only 2 trials" in w for w in r.derivation.warnings)


def test_large_spread_warns_as_practice_threshold() -> None:
    # mean (0.20 + 0.25 + 0.22)/3 = 0.22333; spread 0.05 > 10 % × 0.22333 = 0.02233 → warn.
    r = stopping.stopping_time_from_trials([0.20, 0.25, 0.22])
    assert r.spread_s == pytest.approx(0.05)
    assert any("spread" in w and "[practice]" in w for w in r.derivation.warnings)


def test_small_spread_does_not_warn() -> None:
    # mean 0.205; spread 0.01 ≤ 0.0205 → no warning.
    r = stopping.stopping_time_from_trials([0.20, 0.21, 0.205])
    assert not any("spread" in w for w in r.derivation.warnings)


def test_carries_the_distance_cautions() -> None:
    r = stopping.stopping_time_from_trials([0.2, 0.2, 0.2])
    assert r.derivation.cautions == cautions.DISTANCE
    assert "t_used_s" in r.to_dict()


@pytest.mark.parametrize(
    ("trials", "field"),
    [
        ([0.2, 0.0], "trials_s[1]"),
        ([-0.1], "trials_s[0]"),
        ([0.2, 11.0], "trials_s[1]"),
        ([0.2, "0.3"], "trials_s[1]"),
        ([0.2, float("nan")], "trials_s[1]"),
    ],
)
def test_bad_trials_refused(trials: list[float], field: str) -> None:
    with pytest.raises(InputError) as exc:
        stopping.stopping_time_from_trials(trials)
    assert exc.value.field == field


def test_zero_trial_message_says_what_is_allowed() -> None:
    with pytest.raises(InputError) as exc:
        stopping.stopping_time_from_trials([0.0])
    assert "greater than 0 s" in exc.value.message


@pytest.mark.parametrize("trials", [[], "0.2", 0.2])
def test_trials_must_be_a_nonempty_list(trials: object) -> None:
    with pytest.raises(InputError, match="trials_s"):
        stopping.stopping_time_from_trials(trials)  # type: ignore[arg-type]


@pytest.mark.parametrize("allowance", [-1, 100.5])
def test_allowance_range(allowance: float) -> None:
    with pytest.raises(InputError) as exc:
        stopping.stopping_time_from_trials([0.2], allowance_percent=allowance)
    assert exc.value.field == "allowance_percent"


def test_allowance_of_100_percent_allowed() -> None:
    # 0.2 × (1 + 100/100) = 0.4 s
    assert stopping.stopping_time_from_trials(
        [0.2], allowance_percent=100
    ).t_used_s == pytest.approx(0.4)


@pytest.mark.parametrize("limit", [0.0, -0.2])
def test_brake_monitor_limit_must_be_positive(limit: float) -> None:
    with pytest.raises(InputError, match="brake_monitor_limit_s"):
        stopping.stopping_time_from_trials([0.2], brake_monitor_limit_s=limit)


trial = st.floats(min_value=0.001, max_value=5.0, allow_nan=False)


@given(
    st.lists(trial, min_size=1, max_size=8),
    st.floats(min_value=0, max_value=100),
    st.one_of(st.none(), trial),
)
def test_time_used_is_never_below_the_worst_trial(
    trials: list[float], allowance: float, limit: float | None
) -> None:
    r = stopping.stopping_time_from_trials(trials, allowance, limit)
    assert r.t_used_s >= max(trials) - 1e-12
    if limit is not None:
        assert r.t_used_s >= limit - 1e-12

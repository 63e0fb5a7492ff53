"""US safety distances: 29 CFR 1910.217 formulas and the ANSI B11.19 general formula.

Expected values are worked by hand from the published formulas (arithmetic in
the comments), recalled from memory:
29 CFR 1910.217(c)(3)(iii), (vii), (viii) [reg, from memory];
ANSI B11.19 general formula and Dpf = 3.4 (S − 0.276) in [std, from memory].
1 in = 25.4 mm exactly (international inch).
"""

from __future__ import annotations

import pytest
from hypothesis import given
from hypothesis import strategies as st

from riskreg.engineering import cautions, us_distance
from riskreg.engineering.derivation import InputError

# --- 1910.217(c)(3)(vii), two-hand control ---------------------------------------


def test_two_hand_control_worked_example() -> None:
    r = us_distance.two_hand_control(0.2)
    # Ds = 63 × 0.2 = 12.6 in = 12.6 × 25.4 = 320.04 mm  # 29 CFR 1910.217(c)(3)(vii) [reg, from memory]
    assert r.distance_in == pytest.approx(12.6)
    assert r.distance_mm == pytest.approx(320.04)
    assert r.device == "two-hand"
    assert r.formula == "Ds = 63 in/s × Ts"


def test_two_hand_control_second_example() -> None:
    # Ds = 63 × 0.25 = 15.75 in = 15.75 × 25.4 = 400.05 mm  # 29 CFR 1910.217(c)(3)(vii) [reg, from memory]
    r = us_distance.two_hand_control(0.25)
    assert r.distance_in == pytest.approx(15.75)
    assert r.distance_mm == pytest.approx(400.05)


def test_two_hand_control_cites_its_clause_and_says_ts_at_90_degrees() -> None:
    r = us_distance.two_hand_control(0.2)
    cited = [c.citation for c in r.derivation.constants]
    assert "29 CFR 1910.217:current (c)(3)(vii)" in cited
    assert any("90°" in w for w in r.derivation.warnings)
    assert any("90°" in q.note for q in r.derivation.inputs)


# --- 1910.217(c)(3)(viii), two-hand trip -----------------------------------------


@pytest.mark.parametrize(
    ("n", "tr", "tm", "dm_in"),
    [
        # Tm = (1/2 + 1/2) × 0.5 = 0.5 s; Dm = 63 × 0.5 = 31.5 in  # 1910.217(c)(3)(viii) [reg, from memory]
        (2, 0.5, 0.5, 31.5),
        # one engaging point: Tm = 1.5 × 0.4 = 0.6 s; Dm = 63 × 0.6 = 37.8 in  # (c)(3)(viii) [reg, from memory]
        (1, 0.4, 0.6, 37.8),
        # Tm = (1/2 + 1/4) × 0.3 = 0.225 s; Dm = 63 × 0.225 = 14.175 in  # (c)(3)(viii) [reg, from memory]
        (4, 0.3, 0.225, 14.175),
    ],
)
def test_two_hand_trip_worked_examples(n: int, tr: float, tm: float, dm_in: float) -> None:
    r = us_distance.two_hand_trip(n, tr)
    assert r.time_s == pytest.approx(tm)
    assert r.distance_in == pytest.approx(dm_in)
    assert r.distance_mm == pytest.approx(dm_in * 25.4)


def test_two_hand_trip_mm() -> None:
    # 31.5 in × 25.4 = 800.1 mm
    assert us_distance.two_hand_trip(2, 0.5).distance_mm == pytest.approx(800.1)


@pytest.mark.parametrize("bad", [0, -1, 1.5, True, "2"])
def test_two_hand_trip_refuses_bad_engaging_points(bad: object) -> None:
    with pytest.raises(InputError) as exc:
        us_distance.two_hand_trip(bad, 0.5)  # type: ignore[arg-type]
    assert exc.value.field == "engaging_points"


# --- 1910.217(c)(3)(iii), presence-sensing device --------------------------------


def test_presence_sensing_worked_example() -> None:
    # Ds = 63 × 0.15 = 9.45 in = 9.45 × 25.4 = 240.03 mm  # 29 CFR 1910.217(c)(3)(iii) [reg, from memory]
    r = us_distance.presence_sensing(0.15)
    assert r.distance_in == pytest.approx(9.45)
    assert r.distance_mm == pytest.approx(240.03)
    assert "29 CFR 1910.217:current (c)(3)(iii)" in [c.citation for c in r.derivation.constants]


@pytest.mark.parametrize(
    "result",
    [
        us_distance.two_hand_control(0.2),
        us_distance.two_hand_trip(2, 0.5),
        us_distance.presence_sensing(0.2),
    ],
)
def test_1910_217_results_carry_the_scope_warning_and_distance_cautions(
    result: us_distance.UsDistanceResult,
) -> None:
    # 1910.217(a)(5) excludes press brakes, hydraulic and pneumatic presses [reg, from memory]
    assert any("(a)(5)" in w and "press brakes" in w for w in result.derivation.warnings)
    assert any(c.clause == "(a)(5)" for c in result.derivation.constants)
    assert result.derivation.cautions == cautions.DISTANCE
    assert result.derivation.rests_on_recalled


# --- ANSI B11.19 general formula --------------------------------------------------


def test_general_light_curtain_worked_example() -> None:
    # Dpf = 3.4 × (0.55 − 0.276) = 3.4 × 0.274 = 0.9316 in
    # T = 0.2 + 0.02 + 0.015 + 0.03 = 0.265 s; 63 × 0.265 = 16.695 in
    # Ds = 16.695 + 0.9316 = 17.6266 in  # ANSI B11.19 general formula [std, from memory]
    r = us_distance.general(
        0.2,
        control_time_s=0.02,
        device_time_s=0.015,
        brake_monitor_time_s=0.03,
        object_sensitivity_in=0.55,
    )
    assert r.time_s == pytest.approx(0.265)
    assert r.distance_in == pytest.approx(17.6266)
    assert r.distance_mm == pytest.approx(17.6266 * 25.4)
    assert r.derivation.cautions == cautions.DISTANCE
    assert not any("(a)(5)" in w for w in r.derivation.warnings)


def test_general_at_the_formula_limit() -> None:
    # S = 2.5 in: Dpf = 3.4 × (2.5 − 0.276) = 3.4 × 2.224 = 7.5616 in
    # Ds = 63 × 0.1 + 7.5616 = 6.3 + 7.5616 = 13.8616 in  # ANSI B11.19 [std, from memory]
    r = us_distance.general(0.1, object_sensitivity_in=2.5)
    assert r.distance_in == pytest.approx(13.8616)


def test_general_one_inch_sensitivity() -> None:
    # Dpf = 3.4 × (1.18 − 0.276) = 3.4 × 0.904 = 3.0736 in; Ds = 6.3 + 3.0736 = 9.3736 in
    # ANSI B11.19 [std, from memory]
    assert us_distance.general(0.1, object_sensitivity_in=1.18).distance_in == pytest.approx(9.3736)


def test_general_refuses_sensitivity_above_the_formula_limit() -> None:
    with pytest.raises(InputError) as exc:
        us_distance.general(0.1, object_sensitivity_in=2.6)
    assert exc.value.field == "object_sensitivity_in"
    assert "dpf_in" in exc.value.message and "table" in exc.value.message


def test_general_never_subtracts_a_negative_dpf() -> None:
    # 3.4 × (0.2 − 0.276) < 0 → Dpf = 0; Ds = 63 × 0.1 = 6.3 in
    r = us_distance.general(0.1, object_sensitivity_in=0.2)
    assert r.distance_in == pytest.approx(6.3)
    assert any("negative" in w for w in r.derivation.warnings)


def test_general_with_dpf_entered() -> None:
    # Dpf 4 in is a test value as entered, not from the standard; Ds = 63 × 0.1 + 4 = 10.3 in
    r = us_distance.general(0.1, dpf_in=4.0)
    assert r.distance_in == pytest.approx(10.3)
    assert any("as entered" in w for w in r.derivation.warnings)


def test_general_documents_tbm_as_given() -> None:
    r = us_distance.general(0.1, brake_monitor_time_s=0.02, object_sensitivity_in=0.55)
    assert any("Tbm is accepted as given" in w for w in r.derivation.warnings)
    zero = us_distance.general(0.1, object_sensitivity_in=0.55)
    assert any(w.startswith("Tbm = 0") for w in zero.derivation.warnings)


def test_general_needs_a_penetration_factor() -> None:
    with pytest.raises(InputError) as exc:
        us_distance.general(0.1)
    assert exc.value.field == "object_sensitivity_in"
    with pytest.raises(InputError) as exc:
        us_distance.general(0.1, object_sensitivity_in=0.55, dpf_in=1.0)
    assert exc.value.field == "dpf_in"


@pytest.mark.parametrize(
    ("kwargs", "field"),
    [
        ({"stopping_time_s": 0.0}, "stopping_time_s"),
        ({"stopping_time_s": -0.1}, "stopping_time_s"),
        ({"stopping_time_s": float("nan")}, "stopping_time_s"),
        ({"stopping_time_s": 0.1, "control_time_s": -0.01}, "control_time_s"),
        ({"stopping_time_s": 0.1, "device_time_s": -0.01}, "device_time_s"),
        ({"stopping_time_s": 0.1, "brake_monitor_time_s": -0.01}, "brake_monitor_time_s"),
        ({"stopping_time_s": 0.1, "object_sensitivity_in": 0.0}, "object_sensitivity_in"),
        ({"stopping_time_s": 0.1, "dpf_in": -1.0}, "dpf_in"),
    ],
)
def test_general_refuses_bad_inputs(kwargs: dict[str, float], field: str) -> None:
    with pytest.raises(InputError) as exc:
        us_distance.general(**kwargs)
    assert exc.value.field == field
    assert exc.value.message


@pytest.mark.parametrize("fn", [us_distance.two_hand_control, us_distance.presence_sensing])
@pytest.mark.parametrize("bad", [0.0, -0.2, float("inf"), "0.2"])
def test_cfr_formulas_refuse_bad_stopping_time(fn: object, bad: object) -> None:
    with pytest.raises(InputError) as exc:
        fn(bad)  # type: ignore[operator]
    assert exc.value.field == "stopping_time_s"


def test_unknown_edition_is_refused() -> None:
    with pytest.raises(InputError, match="edition"):
        us_distance.two_hand_control(0.2, edition="1971")
    with pytest.raises(InputError, match="edition"):
        us_distance.general(0.2, object_sensitivity_in=0.55, edition="1990")


# --- the dispatcher -------------------------------------------------------------------


def test_dispatcher_picks_each_formula() -> None:
    # same hand-worked values as above
    assert us_distance.us_safety_distance("two-hand", stopping_time_s=0.2).distance_in == (
        pytest.approx(12.6)
    )
    assert us_distance.us_safety_distance(
        "two-hand-trip", engaging_points=2, revolution_time_s=0.5
    ).distance_in == pytest.approx(31.5)
    assert us_distance.us_safety_distance(
        "presence-sensing", stopping_time_s=0.15
    ).distance_in == pytest.approx(9.45)
    assert us_distance.us_safety_distance(
        "general",
        stopping_time_s=0.2,
        control_time_s=0.02,
        device_time_s=0.015,
        brake_monitor_time_s=0.03,
        object_sensitivity_in=0.55,
    ).distance_in == pytest.approx(17.6266)
    assert us_distance.us_safety_distance(
        "general", stopping_time_s=0.1, dpf_in=4.0
    ).distance_in == pytest.approx(10.3)


@pytest.mark.parametrize(
    ("device", "kwargs", "missing"),
    [
        ("two-hand", {}, "stopping_time_s"),
        ("presence-sensing", {}, "stopping_time_s"),
        ("general", {"object_sensitivity_in": 0.55}, "stopping_time_s"),
        ("two-hand-trip", {"revolution_time_s": 0.5}, "engaging_points"),
        ("two-hand-trip", {"engaging_points": 2}, "revolution_time_s"),
    ],
)
def test_dispatcher_names_the_missing_parameter(
    device: str, kwargs: dict[str, float], missing: str
) -> None:
    with pytest.raises(InputError) as exc:
        us_distance.us_safety_distance(device, **kwargs)  # type: ignore[arg-type]
    assert exc.value.field == missing
    assert "required" in exc.value.message and device in exc.value.message


def test_dispatcher_refuses_parameters_the_formula_does_not_use() -> None:
    with pytest.raises(InputError) as exc:
        us_distance.us_safety_distance("two-hand", stopping_time_s=0.2, control_time_s=0.02)
    assert exc.value.field == "control_time_s"
    assert "general" in exc.value.message
    with pytest.raises(InputError) as exc:
        us_distance.us_safety_distance("presence-sensing", stopping_time_s=0.2, engaging_points=2)
    assert exc.value.field == "engaging_points"


def test_dispatcher_sets_aside_a_stopping_time_for_the_trip() -> None:
    r = us_distance.us_safety_distance(
        "two-hand-trip", stopping_time_s=0.2, engaging_points=2, revolution_time_s=0.5
    )
    assert r.distance_in == pytest.approx(31.5)  # 63 × (0.5 + 0.5) × 0.5, Ts not used
    assert any("not used" in w for w in r.derivation.warnings)
    with pytest.raises(InputError):
        us_distance.us_safety_distance(
            "two-hand-trip", stopping_time_s=-1.0, engaging_points=2, revolution_time_s=0.5
        )


def test_dispatcher_refuses_unknown_device() -> None:
    with pytest.raises(InputError) as exc:
        us_distance.us_safety_distance("light-curtain", stopping_time_s=0.2)
    assert exc.value.field == "device"
    assert "two-hand-trip" in exc.value.message


def test_result_renders_with_the_cli_keys() -> None:
    d = us_distance.two_hand_control(0.2).to_dict()
    assert {"distance_in", "distance_mm", "formula", "derivation"} <= set(d)
    assert d["derivation"]["cautions"] == list(cautions.DISTANCE)


# --- monotonicity -------------------------------------------------------------------

times = st.floats(min_value=0.001, max_value=5.0, allow_nan=False)


@given(times, times)
def test_distance_never_falls_when_stopping_time_rises(a: float, b: float) -> None:
    lo, hi = sorted((a, b))
    for fn in (us_distance.two_hand_control, us_distance.presence_sensing):
        assert fn(hi).distance_in >= fn(lo).distance_in
    g_lo = us_distance.general(lo, 0.01, 0.01, 0.01, object_sensitivity_in=0.55)
    g_hi = us_distance.general(hi, 0.01, 0.01, 0.01, object_sensitivity_in=0.55)
    assert g_hi.distance_in >= g_lo.distance_in


@given(times, times, st.integers(min_value=1, max_value=8))
def test_trip_distance_never_falls_when_revolution_time_rises(a: float, b: float, n: int) -> None:
    lo, hi = sorted((a, b))
    assert (
        us_distance.two_hand_trip(n, hi).distance_in >= us_distance.two_hand_trip(n, lo).distance_in
    )

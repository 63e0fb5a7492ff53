"""Safety distances (ISO 13855), guard locking need and crushing gaps (ISO 13854).

Each expected value is worked out by hand from the standard's formula, the
arithmetic in the comment beside it. The formulas and constants are those of
ISO 13855:2010 and ISO 13854:2017 as recalled [std, from memory].
"""

from __future__ import annotations

import math

import pytest
from hypothesis import given
from hypothesis import strategies as st

from riskreg.engineering import cautions
from riskreg.engineering import distance as dist
from riskreg.engineering.derivation import InputError

APPROX = {"rel": 1e-9, "abs": 1e-9}


# --- light curtain, normal approach -------------------------------------------------


def test_light_curtain_d14_stays_with_k2000() -> None:
    # ISO 13855:2010 6.2.3 [std, from memory]: S = 2000·0.2 + 8(14 − 14) = 400 + 0
    # = 400 mm, ≤ 500 mm so K = 2000 mm/s stands.
    r = dist.light_curtain(0.2, 0.0, 14)
    assert r.distance_mm == pytest.approx(400.0, **APPROX)
    assert r.k_mm_per_s == 2000
    assert r.c_mm == 0
    assert r.t_s == pytest.approx(0.2)
    assert r.device == "light-curtain"
    assert r.governed_by.startswith("reach-through")


def test_light_curtain_d30_recomputed_with_k1600() -> None:
    # ISO 13855:2010 6.2.3 [std, from memory]: T = 0.28 + 0.02 = 0.3 s;
    # C = 8(30 − 14) = 128 mm; 2000·0.3 + 128 = 728 mm > 500 → 1600·0.3 + 128 = 608 mm.
    r = dist.light_curtain(0.28, 0.02, 30)
    assert r.distance_mm == pytest.approx(608.0, **APPROX)
    assert r.k_mm_per_s == 1600
    assert r.c_mm == pytest.approx(128.0)
    assert r.t_s == pytest.approx(0.3)
    steps = " | ".join(r.derivation.steps)
    assert "728 mm > 500 mm" in steps  # both steps are shown
    assert "608 mm" in steps


def test_light_curtain_floor_of_100_mm() -> None:
    # ISO 13855:2010 6.2.3 [std, from memory]: 2000·0.03 + 0 = 60 mm < 100 mm → S = 100 mm.
    r = dist.light_curtain(0.03, 0.0, 14)
    assert r.distance_mm == pytest.approx(100.0, **APPROX)
    assert r.k_mm_per_s == 2000
    assert "100 mm minimum" in r.governed_by


def test_light_curtain_k1600_below_500_gives_500() -> None:
    # ISO 13855:2010 6.2.3 [std, from memory]: 2000·0.27 + 0 = 540 mm > 500 →
    # 1600·0.27 + 0 = 432 mm < 500 → S = 500 mm.
    r = dist.light_curtain(0.27, 0.0, 14)
    assert r.distance_mm == pytest.approx(500.0, **APPROX)
    assert r.k_mm_per_s == 1600
    assert "500 mm minimum" in r.governed_by


def test_light_curtain_exactly_500_keeps_k2000() -> None:
    # ISO 13855:2010 6.2.3 [std, from memory]: 2000·0.25 + 0 = 500 mm, not > 500 → stays.
    r = dist.light_curtain(0.25, 0.0, 14)
    assert r.distance_mm == pytest.approx(500.0, **APPROX)
    assert r.k_mm_per_s == 2000


def test_light_curtain_c_never_below_zero() -> None:
    # ISO 13855:2010 6.2.3 [std, from memory]: C = 8(10 − 14) = −32 → 0;
    # S = 2000·0.1 + 0 = 200 mm.
    r = dist.light_curtain(0.1, 0.0, 10)
    assert r.c_mm == 0
    assert r.distance_mm == pytest.approx(200.0, **APPROX)
    assert any("never below 0" in s for s in r.derivation.steps)


def test_light_curtain_d40_top_of_hand_range() -> None:
    # ISO 13855:2010 6.2.3 [std, from memory]: C = 8(40 − 14) = 208; 2000·0.1 + 208 = 408 mm.
    r = dist.light_curtain(0.1, 0.0, 40)
    assert r.distance_mm == pytest.approx(408.0, **APPROX)
    assert r.c_mm == pytest.approx(208.0)


@pytest.mark.parametrize("d", [41, 50, 70])
def test_light_curtain_body_range_850(d: float) -> None:
    # ISO 13855:2010 6.2.3 [std, from memory]: 40 < d ≤ 70 → S = 1600·0.1 + 850 = 1010 mm.
    r = dist.light_curtain(0.08, 0.02, d)
    assert r.distance_mm == pytest.approx(1010.0, **APPROX)
    assert (r.k_mm_per_s, r.c_mm) == (1600, 850)


def test_distance_in_inches_is_exact() -> None:
    # 2000·0.127 + 0 = 254 mm = 10 in exactly (1 in = 25.4 mm, by definition).
    r = dist.light_curtain(0.127, 0.0, 14)
    assert r.distance_mm == pytest.approx(254.0, **APPROX)
    assert r.distance_in == pytest.approx(10.0, **APPROX)
    # 608 mm / 25.4 = 23.937007874… in (hand division)
    assert dist.light_curtain(0.3, 0.0, 30).distance_in == pytest.approx(23.937008, rel=1e-7)


@pytest.mark.parametrize("d", [0, -5])
def test_resolution_zero_or_negative_refused(d: float) -> None:
    with pytest.raises(InputError) as exc:
        dist.light_curtain(0.2, 0.0, d)
    assert exc.value.field == "resolution_mm"
    assert "0 < d ≤ 70 mm" in exc.value.message


def test_resolution_above_70_points_to_multi_beam() -> None:
    with pytest.raises(InputError) as exc:
        dist.light_curtain(0.2, 0.0, 70.5)
    assert exc.value.field == "resolution_mm"
    assert "0 < d ≤ 70 mm" in exc.value.message
    assert "multi-beam" in exc.value.message


def test_reach_over_governs_when_larger() -> None:
    # ISO 13855:2010 6.2.4 [std, from memory]: S = max(S_RT, S_RO), S_RO = K·T + C_RO.
    # C_RO = 900 mm here is an input chosen for the test, not a table value.
    # S_RT = 608 mm (as above); S_RO: 2000·0.3 + 900 = 1500 > 500 → 1600·0.3 + 900 = 1380 mm.
    r = dist.light_curtain(
        0.3, 0.0, 30, hazard_height_mm=1400, top_beam_height_mm=1200, reach_over_c_mm=900
    )
    assert r.distance_mm == pytest.approx(1380.0, **APPROX)
    assert r.c_mm == 900
    assert r.k_mm_per_s == 1600
    assert r.governed_by.startswith("reach-over")
    notes = [q.note for q in r.derivation.inputs if q.name.startswith("C_RO")]
    assert notes and "given by the user" in notes[0]
    assert not any("not checked" in w for w in r.derivation.warnings)


def test_reach_through_governs_when_reach_over_smaller() -> None:
    # S_RT = 608 mm; S_RO with C_RO = 0: 2000·0.3 = 600 > 500 → 1600·0.3 = 480 < 500 → 500.
    # max(608, 500) = 608 mm, reach-through.
    r = dist.light_curtain(
        0.3, 0.0, 30, hazard_height_mm=1000, top_beam_height_mm=1400, reach_over_c_mm=0
    )
    assert r.distance_mm == pytest.approx(608.0, **APPROX)
    assert r.governed_by.startswith("reach-through")
    assert any("reach through governs" in s for s in r.derivation.steps)


def test_reach_over_with_body_range_curtain() -> None:
    # d = 50: S_RT = 1600·0.2 + 850 = 1170; S_RO = 1600·0.2 + 1000 = 1320 → 1320 mm.
    r = dist.light_curtain(
        0.2, 0.0, 50, hazard_height_mm=1400, top_beam_height_mm=1000, reach_over_c_mm=1000
    )
    assert r.distance_mm == pytest.approx(1320.0, **APPROX)


def test_reach_over_not_checked_is_warned() -> None:
    r = dist.light_curtain(0.2, 0.0, 14)
    assert any("Reaching over the top" in w for w in r.derivation.warnings)


@pytest.mark.parametrize(
    ("kwargs", "missing"),
    [
        ({"hazard_height_mm": 1400, "top_beam_height_mm": 1200}, "reach_over_c_mm"),
        ({"reach_over_c_mm": 300, "top_beam_height_mm": 1200}, "hazard_height_mm"),
        ({"reach_over_c_mm": 300, "hazard_height_mm": 1200}, "top_beam_height_mm"),
    ],
)
def test_reach_over_needs_all_three(kwargs: dict[str, float], missing: str) -> None:
    with pytest.raises(InputError) as exc:
        dist.light_curtain(0.2, 0.0, 14, **kwargs)
    assert exc.value.field == missing
    assert "together" in exc.value.message


def test_reach_over_c_negative_refused() -> None:
    with pytest.raises(InputError, match="reach_over_c_mm"):
        dist.light_curtain(
            0.2, 0.0, 14, hazard_height_mm=1400, top_beam_height_mm=1200, reach_over_c_mm=-1
        )


# --- times --------------------------------------------------------------------------


@pytest.mark.parametrize(
    ("stop", "resp", "field"),
    [(-0.1, 0.0, "stopping_time_s"), (0.1, -0.01, "response_time_s")],
)
def test_negative_times_refused(stop: float, resp: float, field: str) -> None:
    with pytest.raises(InputError) as exc:
        dist.pressure_mat(stop, resp)
    assert exc.value.field == field
    assert "at least 0 s" in exc.value.message


@pytest.mark.parametrize(("stop", "resp"), [(10.5, 0.0), (0.1, 12.0)])
def test_times_above_10_s_refused(stop: float, resp: float) -> None:
    with pytest.raises(InputError) as exc:
        dist.two_hand(stop, resp)
    assert "at most 10 s" in exc.value.message


@pytest.mark.parametrize("bad", [math.nan, math.inf, "0.2", None])
def test_non_numeric_time_refused(bad: object) -> None:
    with pytest.raises(InputError, match="stopping_time_s"):
        dist.pressure_mat(bad, 0.0)  # type: ignore[arg-type]


def test_zero_stopping_time_warns() -> None:
    r = dist.pressure_mat(0.0, 0.02)
    assert any("0 s is not a real measurement" in w for w in r.derivation.warnings)


# --- other devices ------------------------------------------------------------------


def test_multi_beam_three_beams() -> None:
    # ISO 13855:2010 6.2 multi-beam [std, from memory]: S = 1600·0.25 + 850 = 400 + 850 = 1250 mm;
    # heights for 3 beams 300/700/1100 mm.
    r = dist.multi_beam(0.2, 0.05, 3)
    assert r.distance_mm == pytest.approx(1250.0, **APPROX)
    assert (r.k_mm_per_s, r.c_mm) == (1600, 850)
    assert any("300, 700, 1100 mm" in w for w in r.derivation.warnings)


@pytest.mark.parametrize(("beams", "heights"), [(2, "400, 900 mm"), (4, "300, 600, 900, 1200 mm")])
def test_multi_beam_heights(beams: int, heights: str) -> None:
    # ISO 13855:2010 beam heights [std, from memory]; S = 1600·0.1 + 850 = 1010 mm.
    r = dist.multi_beam(0.1, 0.0, beams)
    assert r.distance_mm == pytest.approx(1010.0, **APPROX)
    assert any(heights in w for w in r.derivation.warnings)


def test_single_beam_1200() -> None:
    # ISO 13855:2010 [std, from memory]: one beam at 750 mm, C = 1200: 1600·0.25 + 1200 = 1600 mm.
    r = dist.multi_beam(0.25, 0.0, 1)
    assert r.distance_mm == pytest.approx(1600.0, **APPROX)
    assert r.c_mm == 1200
    assert any("750 mm" in w for w in r.derivation.warnings)
    assert any("crawl under" in w for w in r.derivation.warnings)


@pytest.mark.parametrize("beams", [0, 5, True, 2.0])
def test_multi_beam_refuses_other_counts(beams: object) -> None:
    with pytest.raises(InputError) as exc:
        dist.multi_beam(0.1, 0.0, beams)  # type: ignore[arg-type]
    assert exc.value.field == "beams"
    assert "1, 2, 3 or 4" in exc.value.message


def test_parallel_approach() -> None:
    # ISO 13855:2010 6.3 [std, from memory]: C = 1200 − 0.4·500 = 1000 mm ≥ 850;
    # S = 1600·0.2 + 1000 = 320 + 1000 = 1320 mm. 15(60 − 50) = 150 ≤ 500 → met.
    r = dist.parallel_approach(0.2, 0.0, 500, 60)
    assert r.distance_mm == pytest.approx(1320.0, **APPROX)
    assert r.c_mm == pytest.approx(1000.0)
    assert r.derivation.problems == ()
    assert any("crawl under" in w for w in r.derivation.warnings)  # 500 > 300 mm


def test_parallel_approach_c_floor_850() -> None:
    # ISO 13855:2010 6.3 [std, from memory]: 1200 − 0.4·1000 = 800 < 850 → C = 850;
    # S = 1600·0.2 + 850 = 1170 mm.
    r = dist.parallel_approach(0.2, 0.0, 1000, 14)
    assert r.c_mm == 850
    assert r.distance_mm == pytest.approx(1170.0, **APPROX)


def test_parallel_approach_on_floor() -> None:
    # H = 0: C = 1200; S = 1600·0.5 + 1200 = 2000 mm; no crawl-under warning.
    r = dist.parallel_approach(0.5, 0.0, 0, 50)
    assert r.distance_mm == pytest.approx(2000.0, **APPROX)
    assert not any("crawl under" in w for w in r.derivation.warnings)


def test_parallel_approach_detection_too_coarse() -> None:
    # ISO 13855:2010 6.3 [std, from memory]: H ≥ 15(d − 50): 15(70 − 50) = 300 > 200 → not met;
    # largest d at H = 200: 200/15 + 50 = 63.3333 mm.
    r = dist.parallel_approach(0.2, 0.0, 200, 70)
    assert len(r.derivation.problems) == 1
    assert "63.3333 mm" in r.derivation.problems[0]
    assert "at least 300 mm" in r.derivation.problems[0]


def test_parallel_approach_no_height_fits() -> None:
    # 15(120 − 50) = 1050 mm > 1000 mm, the largest H: no height allows d = 120 mm.
    r = dist.parallel_approach(0.2, 0.0, 900, 120)
    assert "no height up to 1000 mm" in r.derivation.problems[0]


@pytest.mark.parametrize("h", [-1, 1000.5])
def test_parallel_height_range(h: float) -> None:
    with pytest.raises(InputError) as exc:
        dist.parallel_approach(0.2, 0.0, h, 14)
    assert exc.value.field == "height_mm"
    assert "from 0 to 1000 mm" in exc.value.message


def test_parallel_resolution_must_be_positive() -> None:
    with pytest.raises(InputError, match="resolution_mm"):
        dist.parallel_approach(0.2, 0.0, 300, 0)


def test_pressure_mat() -> None:
    # ISO 13855:2010 clause 7 [std, from memory]: S = 1600·0.5 + 1200 = 800 + 1200 = 2000 mm.
    r = dist.pressure_mat(0.45, 0.05)
    assert r.distance_mm == pytest.approx(2000.0, **APPROX)
    assert (r.k_mm_per_s, r.c_mm) == (1600, 1200)


def test_two_hand_unshielded() -> None:
    # ISO 13855:2010 clause 8 [std, from memory]: S = 1600·0.1 + 250 = 160 + 250 = 410 mm.
    r = dist.two_hand(0.1, 0.0)
    assert r.distance_mm == pytest.approx(410.0, **APPROX)
    assert r.c_mm == 250


def test_two_hand_shielded() -> None:
    # ISO 13855:2010 clause 8 [std, from memory]: shielded C = 0: S = 1600·0.1 + 0 = 160 mm.
    r = dist.two_hand(0.1, 0.0, shielded=True)
    assert r.distance_mm == pytest.approx(160.0, **APPROX)
    assert r.c_mm == 0


def test_two_hand_floor_100() -> None:
    # ISO 13855:2010 clause 8 [std, from memory]: 1600·0.05 + 0 = 80 mm < 100 → 100 mm.
    r = dist.two_hand(0.05, 0.0, shielded=True)
    assert r.distance_mm == pytest.approx(100.0, **APPROX)
    assert "100 mm minimum" in r.governed_by


def test_two_hand_shielded_must_be_bool() -> None:
    with pytest.raises(InputError, match="shielded"):
        dist.two_hand(0.1, 0.0, shielded="yes")  # type: ignore[arg-type]


def test_interlocked_guard() -> None:
    # ISO 13855:2010 clause 9 [std, from memory]: S = 1600·0.4 + C; C = 120 mm given as
    # the ISO 13857 value for the opening (an input, not checked here): 640 + 120 = 760 mm.
    r = dist.interlocked_guard(0.38, 0.02, 120)
    assert r.distance_mm == pytest.approx(760.0, **APPROX)
    assert any("from ISO 13857" in q.note for q in r.derivation.inputs)


def test_interlocked_guard_needs_c() -> None:
    with pytest.raises(InputError) as exc:
        dist.interlocked_guard(0.38, 0.02)
    assert exc.value.field == "opening_c_mm"
    assert "ISO 13857" in exc.value.message


# --- editions, constants and cautions -----------------------------------------------


def test_constants_cite_edition_and_are_recalled() -> None:
    r = dist.light_curtain(0.3, 0.0, 30)
    assert r.derivation.rests_on_recalled
    assert {c.edition for c in r.derivation.constants} == {"2010"}
    assert all(c.citation.startswith("ISO 13855:2010") for c in r.derivation.constants)


def test_later_edition_is_flagged_to_be_checked() -> None:
    r = dist.light_curtain(0.3, 0.0, 30, edition="2024")
    assert any("to be checked" in w for w in r.derivation.warnings)
    assert all(c.edition == "2024" for c in r.derivation.constants)
    assert all(
        "to be checked: later edition revises the intrusion allowances" in c.note
        for c in r.derivation.constants
    )


def test_unknown_edition_refused() -> None:
    with pytest.raises(InputError, match="edition"):
        dist.pressure_mat(0.2, 0.0, edition="1999")


ALL_RESULTS = [
    lambda: dist.light_curtain(0.2, 0.0, 14),
    lambda: dist.multi_beam(0.2, 0.0, 2),
    lambda: dist.parallel_approach(0.2, 0.0, 300, 14),
    lambda: dist.pressure_mat(0.2, 0.0),
    lambda: dist.two_hand(0.2, 0.0),
    lambda: dist.interlocked_guard(0.2, 0.0, 0),
    lambda: dist.guard_locking_needed(0.2, 500, response_time_s=0.01),
    lambda: dist.minimum_gap("hand"),
    lambda: dist.check_gap("hand", 120),
]


@pytest.mark.parametrize("make", ALL_RESULTS)
def test_every_result_carries_the_distance_cautions(make: object) -> None:
    r = make()  # type: ignore[operator]
    assert r.derivation.cautions == cautions.DISTANCE


def test_to_dict_has_the_cli_keys() -> None:
    d = dist.light_curtain(0.2, 0.0, 14).to_dict()
    for key in ("distance_mm", "distance_in", "k_mm_per_s", "c_mm", "t_s", "device"):
        assert key in d
    assert d["distance_mm"] == pytest.approx(400.0)


# --- dispatcher ---------------------------------------------------------------------


@pytest.mark.parametrize(
    ("device", "kwargs", "expected"),
    [
        # hand arithmetic as in the tests above, T = 0.2 s
        ("light-curtain", {"resolution_mm": 14}, 400.0),  # 2000·0.2 + 0
        ("multi-beam", {"beams": 4}, 1170.0),  # 1600·0.2 + 850
        ("parallel", {"resolution_mm": 14, "height_mm": 500}, 1320.0),  # 320 + (1200 − 200)
        ("mat", {}, 1520.0),  # 1600·0.2 + 1200
        ("two-hand", {}, 570.0),  # 1600·0.2 + 250
        ("two-hand", {"shielded": True}, 320.0),  # 1600·0.2 + 0
        ("interlocked-guard", {"opening_c_mm": 200}, 520.0),  # 1600·0.2 + 200
    ],
)
def test_dispatcher(device: str, kwargs: dict[str, object], expected: float) -> None:
    r = dist.safety_distance(device, 0.2, 0.0, **kwargs)  # type: ignore[arg-type]
    assert r.device == device
    assert r.distance_mm == pytest.approx(expected, **APPROX)


def test_dispatcher_passes_reach_over_and_edition() -> None:
    r = dist.safety_distance(
        "light-curtain",
        0.3,
        0.0,
        resolution_mm=30,
        hazard_height_mm=1400,
        top_beam_height_mm=1200,
        reach_over_c_mm=900,
        edition="2024",
    )
    assert r.distance_mm == pytest.approx(1380.0, **APPROX)  # as in the reach-over test
    assert r.derivation.constants[0].edition == "2024"


@pytest.mark.parametrize(
    ("device", "kwargs", "missing"),
    [
        ("light-curtain", {}, "resolution_mm"),
        ("parallel", {"resolution_mm": 14}, "height_mm"),
        ("parallel", {"height_mm": 300}, "resolution_mm"),
        ("multi-beam", {}, "beams"),
        ("interlocked-guard", {}, "opening_c_mm"),
    ],
)
def test_dispatcher_names_missing_parameter(
    device: str, kwargs: dict[str, object], missing: str
) -> None:
    with pytest.raises(InputError) as exc:
        dist.safety_distance(device, 0.2, 0.0, **kwargs)  # type: ignore[arg-type]
    assert exc.value.field == missing
    assert "is required" in exc.value.message


@pytest.mark.parametrize(
    ("device", "kwargs", "extra"),
    [
        ("mat", {"resolution_mm": 14}, "resolution_mm"),
        ("light-curtain", {"resolution_mm": 14, "shielded": True}, "shielded"),
        ("two-hand", {"beams": 2}, "beams"),
    ],
)
def test_dispatcher_refuses_parameters_it_would_ignore(
    device: str, kwargs: dict[str, object], extra: str
) -> None:
    with pytest.raises(InputError) as exc:
        dist.safety_distance(device, 0.2, 0.0, **kwargs)  # type: ignore[arg-type]
    assert exc.value.field == extra
    assert "does not apply" in exc.value.message


def test_dispatcher_unknown_device() -> None:
    with pytest.raises(InputError, match="device"):
        dist.safety_distance("laser-scanner", 0.2, 0.0)


# --- monotonicity -------------------------------------------------------------------

DEVICE_CASES = [
    ("light-curtain", {"resolution_mm": 14}),
    ("light-curtain", {"resolution_mm": 30}),
    ("light-curtain", {"resolution_mm": 60}),
    (
        "light-curtain",
        {
            "resolution_mm": 20,
            "hazard_height_mm": 1400,
            "top_beam_height_mm": 1200,
            "reach_over_c_mm": 300,
        },
    ),
    ("multi-beam", {"beams": 1}),
    ("multi-beam", {"beams": 3}),
    ("parallel", {"resolution_mm": 14, "height_mm": 400}),
    ("mat", {}),
    ("two-hand", {}),
    ("two-hand", {"shielded": True}),
    ("interlocked-guard", {"opening_c_mm": 120}),
]

times = st.floats(min_value=0.0, max_value=5.0, allow_nan=False)


@given(
    st.sampled_from(DEVICE_CASES),
    times,
    times,
    st.floats(min_value=0.0, max_value=5.0, allow_nan=False),
)
def test_distance_never_falls_when_t_rises(
    case: tuple[str, dict[str, object]], stop: float, resp: float, extra: float
) -> None:
    """For every device, a longer stopping time never gives a shorter distance."""
    device, kwargs = case
    lower = dist.safety_distance(device, stop, resp, **kwargs)  # type: ignore[arg-type]
    higher = dist.safety_distance(device, stop + extra, resp, **kwargs)  # type: ignore[arg-type]
    assert higher.distance_mm >= lower.distance_mm


@given(st.floats(min_value=0.0, max_value=10.0, allow_nan=False))
def test_light_curtain_never_below_floor(t: float) -> None:
    # ISO 13855:2010 6.2.3 [std, from memory]: never below 100 mm (K = 2000) and, once the
    # K = 2000 result is over 500 mm, never below 500 mm.
    r = dist.light_curtain(t, 0.0, 14)
    assert r.distance_mm >= 100
    if 2000 * t > 500:
        assert r.distance_mm >= 500


# --- guard locking ------------------------------------------------------------------


def test_guard_locking_needed() -> None:
    # ISO 14119 [std, from memory] with K = 1600 mm/s (ISO 13855:2010 clause 9):
    # T = 0.3 + 0.02 = 0.32 s; time to reach 400 mm / 1600 mm/s = 0.25 s < 0.32 → needed.
    r = dist.guard_locking_needed(0.3, 400, response_time_s=0.02)
    assert r.guard_locking_needed is True
    assert r.time_to_reach_s == pytest.approx(0.25)
    assert r.stopping_time_s == pytest.approx(0.32)
    assert r.margin_s == pytest.approx(-0.07)
    assert r.distance_mm == 400


def test_guard_locking_not_needed() -> None:
    # 600 mm / 1600 mm/s = 0.375 s ≥ T = 0.32 s → not needed.
    r = dist.guard_locking_needed(0.3, 600, response_time_s=0.02)
    assert r.guard_locking_needed is False
    assert r.time_to_reach_s == pytest.approx(0.375)


def test_guard_locking_equality_is_the_limit() -> None:
    # 800 mm / 1600 mm/s = 0.5 s = T → the hazard has stopped when reached: not needed,
    # matching S = 1600·0.5 + 0 = 800 mm.
    r = dist.guard_locking_needed(0.48, 800, response_time_s=0.02)
    assert r.guard_locking_needed is False
    assert r.margin_s == pytest.approx(0.0, abs=1e-9)


def test_guard_locking_with_reach_through_allowance() -> None:
    # (700 − 200) mm / 1600 mm/s = 0.3125 s < 0.32 s → needed.
    r = dist.guard_locking_needed(0.3, 700, response_time_s=0.02, opening_c_mm=200)
    assert r.time_to_reach_s == pytest.approx(0.3125)
    assert r.guard_locking_needed is True


def test_guard_locking_hazard_within_reach() -> None:
    # C ≥ distance: time to reach 0 → needed for any T > 0.
    r = dist.guard_locking_needed(0.1, 100, response_time_s=0.01, opening_c_mm=150)
    assert r.time_to_reach_s == 0
    assert r.guard_locking_needed is True
    assert any("within reach" in s for s in r.derivation.steps)


def test_guard_locking_with_opening_time_credit_is_warned() -> None:
    # 0.1 s + 400 mm / 1600 mm/s = 0.35 s ≥ 0.32 s → not needed, with a warning.
    r = dist.guard_locking_needed(0.3, 400, response_time_s=0.02, opening_time_s=0.1)
    assert r.time_to_reach_s == pytest.approx(0.35)
    assert r.guard_locking_needed is False
    assert any("Credit is taken" in w for w in r.derivation.warnings)


def test_guard_locking_callers_time_to_reach() -> None:
    r = dist.guard_locking_needed(0.3, time_to_reach_s=1.0, response_time_s=0.02)
    assert r.guard_locking_needed is False
    assert r.distance_mm is None
    assert r.time_to_reach_s == 1.0


def test_guard_locking_zero_response_time_warned() -> None:
    r = dist.guard_locking_needed(0.3, 700)
    assert any("Response time" in w for w in r.derivation.warnings)
    assert any("No reach-through allowance" in w for w in r.derivation.warnings)


@pytest.mark.parametrize(
    "kwargs",
    [
        {},
        {"distance_mm": 400, "time_to_reach_s": 0.3},
    ],
)
def test_guard_locking_needs_exactly_one_of_distance_and_time(kwargs: dict[str, float]) -> None:
    with pytest.raises(InputError, match="exactly one"):
        dist.guard_locking_needed(0.3, **kwargs)  # type: ignore[arg-type]


def test_guard_locking_time_to_reach_excludes_distance_options() -> None:
    with pytest.raises(InputError) as exc:
        dist.guard_locking_needed(0.3, time_to_reach_s=0.5, opening_c_mm=100)
    assert exc.value.field == "time_to_reach_s"


def test_guard_locking_negative_distance_refused() -> None:
    with pytest.raises(InputError, match="distance_mm"):
        dist.guard_locking_needed(0.3, -10)


# --- ISO 13854 gaps -----------------------------------------------------------------


@pytest.mark.parametrize(
    ("part", "gap"),
    [
        # ISO 13854 Table 1 [std, from memory]
        ("body", 500),
        ("head", 300),
        ("leg", 180),
        ("foot", 120),
        ("toes", 50),
        ("arm", 120),
        ("hand", 100),
        ("finger", 25),
    ],
)
def test_minimum_gaps(part: str, gap: float) -> None:
    r = dist.minimum_gap(part)
    assert r.gap_mm == gap
    assert r.gap_in == pytest.approx(gap / 25.4)
    assert r.derivation.constants[0].citation == "ISO 13854:2017 Table 1"


def test_gap_in_inches() -> None:
    # 100 mm / 25.4 = 3.93700787… in (hand division)
    assert dist.minimum_gap("hand").gap_in == pytest.approx(3.937008, rel=1e-7)


def test_check_gap_pass_at_minimum_and_fail_below() -> None:
    # ISO 13854 Table 1 [std, from memory]: finger 25 mm.
    ok = dist.check_gap("finger", 25)
    assert ok.passed is True
    assert ok.derivation.problems == ()
    bad = dist.check_gap("finger", 24.9)
    assert bad.passed is False
    assert bad.minimum_gap_mm == 25
    assert "at least 25 mm" in bad.derivation.problems[0]


def test_unknown_body_part_refused() -> None:
    with pytest.raises(InputError) as exc:
        dist.minimum_gap("elbow")
    assert exc.value.field == "body_part"
    assert "finger" in exc.value.message


def test_negative_gap_refused() -> None:
    with pytest.raises(InputError, match="gap_mm"):
        dist.check_gap("hand", -1)


def test_gap_earlier_edition() -> None:
    r = dist.minimum_gap("body", edition="1996")
    assert r.gap_mm == 500  # ISO 13854:1996 [std, from memory], same as 2017
    assert r.derivation.constants[0].edition == "1996"

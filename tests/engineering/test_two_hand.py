"""Type of a two-hand control device.

Expected types: ISO 13851:2019 Table 1 [std, from memory] — I: both hands,
cessation, accidental actuation, defeat, Cat 1 / PL c; II: I + re-initiation,
Cat 3 / PL d; IIIA/IIIB/IIIC: II + synchronous actuation within 0.5 s, Cat 1 /
PL c, Cat 3 / PL d, Cat 4 / PL e. Defeat: 260 mm (one hand), 550 mm (hand and
elbow) or shrouded [std, from memory]. Problems from the facts of the trade
[practice] and 29 CFR 1910.217(b)(7) [reg, from memory].
"""

from __future__ import annotations

from typing import Any

import pytest

from riskreg.engineering import cautions, two_hand
from riskreg.engineering.derivation import InputError


def ev(
    sim: bool, ces: bool, rei: bool, window: float | None = None, **kw: Any
) -> two_hand.TwoHandResult:
    kw.setdefault("category", "4")
    if "shrouded" not in kw:
        kw.setdefault("spacing_mm", 600.0)
    return two_hand.evaluate_two_hand(sim, ces, rei, window, **kw)


def test_series_wired_push_button_pair_is_type_i_with_the_tie_down_problem() -> None:
    # both hands + cessation, no re-initiation, no synchronous → Type I, PL c
    # ISO 13851:2019 Table 1 [std, from memory]; tie-down of a series pair [practice]
    r = ev(True, True, False, category="1")
    assert r.type == "I" and r.type_pl == "c"
    assert any("tie or weigh" in p and "series" in p for p in r.problems)


def test_anti_tie_down_control_half_second_cat_4_is_iiic_pl_e() -> None:
    # re-initiation + synchronous ≤ 0.5 s, Category 4 → IIIC / PL e  # ISO 13851:2019 Table 1 [std, from memory]
    r = ev(True, True, True, 0.5, category="4")
    assert (r.type, r.type_pl) == ("IIIC", "e")
    assert r.problems == ()
    assert r.synchronous is True


def test_window_of_0_6_s_is_not_synchronous() -> None:
    # 0.6 s > 0.5 s → not synchronous → at most Type II (Cat 3 minimum, met by Cat 4) → PL d
    # ISO 13851:2019 synchronous actuation 0.5 s [std, from memory]
    r = ev(True, True, True, 0.6, category="4")
    assert r.type == "II" and r.type_pl == "d"
    assert r.synchronous is False
    assert any("0.6 s is longer than the 0.5 s" in p for p in r.problems)


def test_window_of_0_6_s_without_reinitiation_is_type_i() -> None:
    r = ev(True, True, False, 0.6, category="4")  # ISO 13851:2019 Table 1 [std, from memory]
    assert r.type == "I" and r.type_pl == "c"


@pytest.mark.parametrize(
    ("category", "expected", "pl"),
    [
        ("1", "IIIA", "c"),  # ISO 13851:2019 Table 1: IIIA Cat 1 / PL c [std, from memory]
        ("3", "IIIB", "d"),  # IIIB Cat 3 / PL d [std, from memory]
        ("4", "IIIC", "e"),  # IIIC Cat 4 / PL e [std, from memory]
    ],
)
def test_category_decides_the_type_iii_subtype(category: str, expected: str, pl: str) -> None:
    r = ev(True, True, True, 0.4, category=category)
    assert (r.type, r.type_pl) == (expected, pl)


@pytest.mark.parametrize(
    ("category", "expected", "pl"),
    [
        (
            "1",
            "I",
            "c",
        ),  # Type II needs Cat 3: Cat 1 gives Type I  # ISO 13851 Table 1 [std, from memory]
        ("3", "II", "d"),
        ("4", "II", "d"),
    ],
)
def test_reinitiation_without_synchronous(category: str, expected: str, pl: str) -> None:
    r = ev(True, True, True, None, category=category)
    assert (r.type, r.type_pl) == (expected, pl)
    assert r.characteristics_level == "II"
    if category == "1":
        assert any("Type II needs Category 3" in p for p in r.problems)


@pytest.mark.parametrize("window", [None, 0.3])
@pytest.mark.parametrize("category", ["B", "2"])
def test_category_b_and_2_reach_no_type(category: str, window: float | None) -> None:
    r = ev(True, True, True, window, category=category)
    assert r.type is None and r.type_pl is None
    assert any(f"Category {category}" in p and "No type" in p for p in r.problems)


def test_higher_category_does_not_lift_the_characteristics() -> None:
    # no re-initiation: Type I whatever the Category  # ISO 13851 Table 1 [std, from memory]
    assert ev(True, True, False, category="4").type == "I"
    assert ev(True, True, False, category="3").type == "I"


def test_synchronous_without_reinitiation_is_type_i() -> None:
    r = ev(True, True, False, 0.3, category="4")
    assert r.type == "I"
    assert any("re-initiation is not" in p for p in r.problems)


@pytest.mark.parametrize(
    ("sim", "ces", "word"), [(False, True, "Simultaneous"), (True, False, "cease")]
)
def test_without_simultaneous_use_or_cessation_no_type(sim: bool, ces: bool, word: str) -> None:
    r = ev(sim, ces, True, 0.3, category="4")
    assert r.type is None and r.characteristics_level is None
    assert any(word in p for p in r.problems)


def test_one_actuator_per_station_leaves_a_free_hand() -> None:
    r = ev(True, True, True, 0.3, category="4", actuators_per_station=1, operators=2, stations=2)
    assert r.type is None
    assert any("free hand" in p for p in r.problems)  # [practice]


def test_fewer_stations_than_operators() -> None:
    # 1910.217(b)(7): complete set of two hand controls per operator [reg, from memory]
    r = ev(True, True, True, 0.3, category="4", operators=3, stations=2)
    assert any("3 operators but only 2" in p and "(b)(7)" in p for p in r.problems)
    assert any(
        "each one must itself be a complete two-hand control" in w for w in r.derivation.warnings
    )


@pytest.mark.parametrize(
    ("spacing", "fragment"),
    [
        (200.0, "less than 260 mm"),  # one hand spans both  # ISO 13851 [std, from memory]
        (259.9, "less than 260 mm"),
        (260.0, "less than 550 mm"),  # hand and elbow of one arm  # ISO 13851 [std, from memory]
        (549.0, "less than 550 mm"),
    ],
)
def test_spacing_below_the_defeat_distances(spacing: float, fragment: str) -> None:
    r = ev(True, True, True, 0.3, category="4", spacing_mm=spacing)
    assert r.type is None
    assert any(fragment in p for p in r.problems)
    assert any("would give Type IIIC" in s for s in r.derivation.steps)


def test_spacing_of_550_mm_or_shrouding_prevents_defeat() -> None:
    assert ev(True, True, True, 0.3, category="4", spacing_mm=550.0).type == "IIIC"
    assert ev(True, True, True, 0.3, category="4", shrouded=True).type == "IIIC"
    assert ev(True, True, True, 0.3, category="4", shrouded=True, spacing_mm=None).type == "IIIC"


def test_defeat_prevention_not_shown_gives_no_type() -> None:
    r = two_hand.evaluate_two_hand(True, True, True, 0.3, category="4")
    assert r.type is None
    assert any("Prevention of defeat is not established" in p for p in r.problems)


def test_spacing_and_shrouded_together_are_refused() -> None:
    with pytest.raises(InputError) as exc:
        two_hand.evaluate_two_hand(
            True, True, True, 0.3, category="4", spacing_mm=600, shrouded=True
        )
    assert exc.value.field == "spacing_mm"


def test_anti_repeat_on_a_press() -> None:
    missing = ev(True, True, True, 0.3, category="4", is_press=True, anti_repeat=False)
    assert missing.type == "IIIC"  # anti-repeat is a separate press function, not a type criterion
    assert any("anti-repeat" in p.lower() for p in missing.problems)  # [practice]
    unstated = ev(True, True, True, 0.3, category="4", is_press=True)
    assert not any("anti-repeat" in p.lower() for p in unstated.problems)
    assert any("Anti-repeat is not stated" in w for w in unstated.derivation.warnings)
    fitted = ev(True, True, True, 0.3, category="4", is_press=True, anti_repeat=True)
    assert not any("anti-repeat" in w.lower() for w in fitted.derivation.warnings)
    not_press = ev(True, True, True, 0.3, category="4", anti_repeat=False)
    assert not any("anti-repeat" in p.lower() for p in not_press.problems)


def test_always_warns_it_protects_only_its_operator_and_carries_cautions() -> None:
    for r in (ev(True, True, True, 0.3), ev(False, False, False)):
        assert two_hand.ALWAYS_ONLY_ITS_OPERATOR in r.derivation.warnings
        assert r.derivation.cautions == cautions.REQUIREMENT


def test_category_given_as_number_or_lower_case() -> None:
    assert ev(True, True, True, 0.3, category=4).type == "IIIC"
    assert ev(True, True, False, category="b").type is None


@pytest.mark.parametrize(
    ("kwargs", "field"),
    [
        ({"category": "5"}, "category"),
        ({"category": True}, "category"),
        ({"synchronous_window_s": 0.0}, "synchronous_window_s"),
        ({"synchronous_window_s": -0.2}, "synchronous_window_s"),
        ({"spacing_mm": 0.0}, "spacing_mm"),
        ({"operators": 0}, "operators"),
        ({"operators": 1.5}, "operators"),
        ({"stations": 0}, "stations"),
        ({"actuators_per_station": 3}, "actuators_per_station"),
        ({"actuators_per_station": True}, "actuators_per_station"),
        ({"anti_repeat": "yes"}, "anti_repeat"),
        ({"is_press": 1}, "is_press"),
        ({"shrouded": "no"}, "shrouded"),
        ({"edition": "1996"}, "edition"),
    ],
)
def test_bad_inputs_are_refused(kwargs: dict[str, Any], field: str) -> None:
    base: dict[str, Any] = {"category": "4", "synchronous_window_s": 0.3}
    base.update(kwargs)
    with pytest.raises(InputError) as exc:
        two_hand.evaluate_two_hand(True, True, True, **base)
    assert exc.value.field == field
    assert exc.value.message


def test_bad_flag_is_refused() -> None:
    with pytest.raises(InputError) as exc:
        two_hand.evaluate_two_hand("yes", True, True, category="4")  # type: ignore[arg-type]
    assert exc.value.field == "simultaneous"


def test_result_renders_with_the_cli_keys() -> None:
    d = ev(True, True, True, 0.5, category="4").to_dict()
    assert d["type"] == "IIIC" and d["type_pl"] == "e" and d["problems"] == []
    assert d["category"] == "4"
    assert d["derivation"]["rests_on_recalled"] is True
    none = ev(True, True, True, category="B").to_dict()
    assert none["type"] is None and isinstance(none["problems"], list) and none["problems"]

"""US power-press requirements, 29 CFR 1910.217 [reg, from memory].

Clauses checked, as recalled: (a)(5) scope exclusions; (b)(3)(i) single-stroke
mechanism on full-revolution presses; (b)(6)(i)-(ii) two-hand trip controls and
anti-repeat; (b)(7)(v) two-hand controls for single stroke with anti-repeat;
(b)(13) control reliability; (b)(14) brake monitoring; (c)(1)(i) point-of-
operation safeguards; (c)(3)(iii) presence-sensing devices (not on full-revolution
clutches; distance Ds); (c)(3)(vii) two-hand control distance Ds; (c)(3)(viii)
two-hand trip distance Dm with Tm = (1/2 + 1/N) × Tr; (c)(5) additional safeguarding;
(e)(1)(i) periodic inspections; (e)(1)(ii) weekly inspection and test, exempt under
(b)(13) and (b)(14); (h) PSDI. 1910.212(a)(1) and (a)(3)(ii) for excluded machines.
"""

from __future__ import annotations

from typing import Any

import pytest

from riskreg.engineering import cautions, press
from riskreg.engineering.derivation import InputError
from riskreg.engineering.standards import cfr1910_217


def _rules(**kw: Any) -> press.PressRulesResult:
    args: dict[str, Any] = {
        "machine_kind": "mechanical_press",
        "clutch": "part",
        "engaging_points": None,
        "brake_monitor": True,
        "control_reliable": True,
        "devices": ["light_curtain"],
        "anti_repeat": True,
        "single_stroke": True,
    }
    args.update(kw)
    return press.us_press_requirements(**args)


def _clauses(r: press.PressRulesResult) -> list[str]:
    return [t[t.rindex("[") + 1 : -1] for t in r.requirements]


def _has(texts: tuple[str, ...], part: str) -> bool:
    return any(part.lower() in t.lower() for t in texts)


def test_every_requirement_ends_with_its_clause() -> None:
    r = _rules(devices=["light_curtain", "two_hand_control", "psdi"])
    assert r.requirements
    for text in r.requirements:
        assert text.endswith("]")
        assert "[29 CFR 1910.21" in text


def test_part_revolution_with_curtain_and_two_hand_fully_equipped() -> None:
    # 1910.217 (b)(7)(v), (c)(3)(vii), (c)(3)(iii), (c)(5), (b)(13), (b)(14): all met;
    # (e)(1)(ii): press meets (b)(13) and (b)(14) → exempt from the weekly test;
    # (e)(1)(i) periodic inspections still apply [reg, from memory].
    r = _rules(devices=["light_curtain", "two_hand_control"])
    assert r.applies is True
    assert r.problems == ()
    c = _clauses(r)
    for clause in (
        "29 CFR 1910.217(c)(1)(i)",
        "29 CFR 1910.217(b)(7)(v)",
        "29 CFR 1910.217(c)(3)(vii)",
        "29 CFR 1910.217(c)(3)(iii)",
        "29 CFR 1910.217(c)(5)",
        "29 CFR 1910.217(b)(13)",
        "29 CFR 1910.217(b)(14)",
        "29 CFR 1910.217(e)(1)(ii)",
        "29 CFR 1910.217(e)(1)(i)",
    ):
        assert clause in c
    assert _has(r.requirements, "exempt from the weekly inspection")
    assert not _has(r.requirements, "at least weekly")
    assert set(cautions.REQUIREMENT) <= set(r.derivation.cautions)


def test_part_revolution_without_monitor_or_reliability() -> None:
    # 1910.217(c)(5) → (b)(13) and (b)(14) [reg, from memory]; neither met → two problems,
    # and the weekly test of (e)(1)(ii) applies.
    r = _rules(brake_monitor=False, control_reliable=False)
    assert _has(r.problems, "without control reliability [29 CFR 1910.217(b)(13)]")
    assert _has(r.problems, "without a brake monitor [29 CFR 1910.217(b)(14)]")
    assert _has(r.requirements, "at least weekly")
    assert not _has(r.requirements, "exempt from the weekly")


def test_weekly_test_when_only_one_of_b13_b14_is_met() -> None:
    r = _rules(devices=["fixed_guard"], brake_monitor=True, control_reliable=False)
    assert r.problems == ()  # a fixed guard does not call for (c)(5)
    assert _has(r.requirements, "at least weekly")


@pytest.mark.parametrize(("anti_repeat", "problem"), [(False, True), (None, False), (True, False)])
def test_two_hand_controls_need_anti_repeat(anti_repeat: bool | None, problem: bool) -> None:
    # 1910.217(b)(7)(v) [reg, from memory]: two-hand controls for single stroke need anti-repeat.
    r = _rules(devices=["two_hand_control"], anti_repeat=anti_repeat)
    assert _has(r.problems, "No anti-repeat") is problem
    assert _has(r.warnings, "Anti-repeat not stated") is (anti_repeat is None)


def test_two_hand_trip_on_part_revolution_warns() -> None:
    r = _rules(devices=["two_hand_trip"])
    assert _has(r.warnings, "only starts the stroke")
    assert "29 CFR 1910.217(b)(7)(v)" in _clauses(r)


def test_engaging_points_unused_on_part_revolution() -> None:
    r = _rules(engaging_points=2)
    assert _has(r.warnings, "full-revolution clutches only")


def test_psdi_on_part_revolution() -> None:
    # 1910.217(h) [reg, from memory]: PSDI needs paragraph (h), with (b)(13) and (b)(14).
    r = _rules(devices=["psdi"], brake_monitor=False)
    assert "29 CFR 1910.217(h)" in _clauses(r)
    assert _has(r.problems, "brake monitor")


def test_full_revolution_forbids_presence_sensing() -> None:
    # 1910.217(c)(3)(iii) [reg, from memory]: not on machines with full-revolution clutches.
    r = _rules(clutch="full", engaging_points=1, devices=["light_curtain", "fixed_guard"])
    assert _has(r.problems, "may not be its point-of-operation safeguard")
    assert _has(r.problems, "[29 CFR 1910.217(c)(3)(iii)]")
    assert "29 CFR 1910.217(b)(3)(i)" in _clauses(r)


def test_full_revolution_psdi_is_a_problem() -> None:
    r = _rules(clutch="full", engaging_points=1, devices=["psdi"])
    assert _has(r.problems, "part-revolution clutch presses only [29 CFR 1910.217(h)]")


def test_full_revolution_two_hand_trip() -> None:
    # 1910.217(b)(6)(i)-(ii) and (c)(3)(viii) [reg, from memory]: N = 2 engaging points →
    # Tm = (1/2 + 1/2) × Tr = 1 × Tr; no anti-repeat → problem.
    r = _rules(clutch="full", engaging_points=2, devices=["two_hand_trip"], anti_repeat=False)
    c = _clauses(r)
    for clause in ("(b)(6)(i)", "(b)(6)(ii)", "(c)(3)(viii)"):
        assert f"29 CFR 1910.217{clause}" in c
    assert _has(r.derivation.steps, "Tm = (1/2 + 1/2) × Tr = 1 × Tr")
    assert _has(r.problems, "No anti-repeat on a press with a two-hand trip")
    # Weekly test stays on a full-revolution press (e)(1)(ii).
    assert _has(r.requirements, "at least weekly")


def test_full_revolution_four_engaging_points() -> None:
    # Tm = (1/2 + 1/4) × Tr = 0.75 × Tr [1910.217(c)(3)(viii), reg, from memory].
    r = _rules(clutch="full", engaging_points=4, devices=["two_hand_trip"])
    assert _has(r.derivation.steps, "= 0.75 × Tr")
    assert r.problems == ()


def test_full_revolution_two_hand_without_engaging_points_or_anti_repeat_statement() -> None:
    r = _rules(clutch="full", devices=["two_hand_control"], anti_repeat=None)
    assert _has(r.warnings, "act as a two-hand trip")
    assert _has(r.warnings, "needs N")
    assert _has(r.warnings, "Anti-repeat not stated")


@pytest.mark.parametrize(("stroke", "problem"), [(False, True), (None, False), (True, False)])
def test_full_revolution_needs_single_stroke(stroke: bool | None, problem: bool) -> None:
    # 1910.217(b)(3)(i) [reg, from memory; sub-paragraph to be checked].
    r = _rules(clutch="full", engaging_points=1, devices=["fixed_guard"], single_stroke=stroke)
    assert _has(r.problems, "No single-stroke mechanism") is problem
    assert _has(r.warnings, "Single-stroke mechanism not stated") is (stroke is None)


def test_full_revolution_keeps_weekly_test_even_with_b13_b14() -> None:
    r = _rules(clutch="full", engaging_points=1, devices=["fixed_guard"])
    assert _has(r.requirements, "at least weekly")
    assert _has(r.warnings, "keeps the weekly test")


def test_no_point_of_operation_safeguard_is_a_problem() -> None:
    # 1910.217(c)(1)(i) [reg, from memory].
    r = _rules(devices=["warning", "hold_to_run"])
    assert _has(r.problems, "No point-of-operation guard or device")
    assert _has(r.warnings, "warning, hold_to_run")
    assert _rules(devices=[]).problems != ()


@pytest.mark.parametrize("kind", ["press_brake", "hydraulic_press", "pneumatic_press"])
def test_excluded_machines_get_general_notes_only(kind: str) -> None:
    # 1910.217(a)(5) [reg, from memory]: excluded → 1910.212(a)(1) and (a)(3)(ii).
    r = _rules(machine_kind=kind, devices=["light_curtain"], clutch="full")
    assert r.applies is False
    assert _clauses(r) == ["29 CFR 1910.212(a)(1)", "29 CFR 1910.212(a)(3)(ii)"]
    assert r.problems == ()
    assert _has(r.warnings, "(a)(5)")
    assert _has(r.warnings, "general duty clause")


def test_machine_that_is_no_press() -> None:
    r = _rules(machine_kind="shear")
    assert r.applies is False
    assert _has(r.warnings, "Not a mechanical power press")


def test_result_keys_and_constants() -> None:
    d = _rules().to_dict()
    assert set(d) == {"applies", "requirements", "problems", "warnings", "derivation"}
    assert d["derivation"]["rests_on_recalled"] is True
    assert all(c["status"] == "recalled" for c in d["derivation"]["constants"])


def test_earlier_rows_of_the_table_are_unchanged() -> None:
    # The new requirement rows were appended; the existing ones keep their values
    # (Table O-10 first row: 1/2 to 1 1/2 in → 1/4 in [reg, from memory]).
    table = cfr1910_217.EDITIONS[cfr1910_217.DEFAULT_EDITION]
    assert table.value("table_o10.row1") == (0.5, 1.5, 0.25)
    assert table.value("two_hand_trip.hand_speed") == 63.0
    assert table["req.weekly_inspection"].clause == "(e)(1)(ii)"


@pytest.mark.parametrize(
    ("kw", "field"),
    [
        ({"machine_kind": "stamping_thing"}, "machine_kind"),
        ({"clutch": "half"}, "clutch"),
        ({"engaging_points": 0}, "engaging_points"),
        ({"engaging_points": True}, "engaging_points"),
        ({"engaging_points": 1.5}, "engaging_points"),
        ({"brake_monitor": None}, "brake_monitor"),
        ({"control_reliable": "yes"}, "control_reliable"),
        ({"devices": "light_curtain"}, "devices"),
        ({"devices": ["light_curtain", "laser"]}, "devices[1]"),
        ({"anti_repeat": "yes"}, "anti_repeat"),
        ({"single_stroke": 0}, "single_stroke"),
        ({"edition": "1970"}, "edition"),
    ],
)
def test_bad_input_is_refused(kw: dict[str, Any], field: str) -> None:
    with pytest.raises(InputError) as exc:
        _rules(**kw)
    assert exc.value.field == field
    assert exc.value.message

"""Comparing candidate safeguards (ISO 12100 three-step method and 6.3.2 selection).

The expected orders come from the rules of ISO 12100:2010 as recalled
[std, from memory]: 6.1 (three steps: inherently safe design, safeguarding,
information for use), 6.3.2.2 (no access in normal operation → fixed guards
first), 6.3.2.3 (access in normal operation → interlocking guards and protective
devices before fixed guards), 6.3.2.4 (hold-to-run, enabling devices for the
special modes), 6.4 (information for use is not a substitute), and from facts
of the trade [practice]: only guards stop ejected parts; a two-hand control,
hold-to-run or enabling device protects only the person using it.
"""

from __future__ import annotations

import pytest
from hypothesis import given
from hypothesis import strategies as st

from riskreg.engineering import cautions
from riskreg.engineering import selection as sel
from riskreg.engineering.derivation import InputError
from riskreg.engineering.selection import Candidate


def _order(r: sel.ComparisonResult) -> list[str]:
    return [o.kind for o in r.options]


def _opt(r: sel.ComparisonResult, kind: str) -> sel.OptionAssessment:
    return next(o for o in r.options if o.kind == kind)


def _compare(cands: list[Candidate], **kw: object) -> sel.ComparisonResult:
    args: dict[str, object] = {
        "plr": None,
        "access": "none",
        "ejection": False,
        "other_people_exposed": False,
    }
    args.update(kw)
    return sel.compare_options(cands, **args)  # type: ignore[arg-type]


# A light curtain / two-hand control / interlocking guard that passes the hard criteria.
LC = Candidate("light_curtain", "e", 500, 600, 3000)
TH = Candidate("two_hand_control", "e", 300, 400, 800)
IG = Candidate("interlocking_guard", "d", 480, 600, 1200)
FG = Candidate("fixed_guard", cost=400)


def test_three_steps_in_order() -> None:
    # ISO 12100:2010 6.1, Figure 1 [std, from memory]: inherently safe design, then
    # safeguarding, then information for use. Given in reverse order on purpose.
    r = _compare([Candidate("warning", cost=10), FG, Candidate("inherent_design", cost=5000)])
    assert _order(r) == ["inherent_design", "fixed_guard", "warning"]
    assert [o.step for o in r.options] == [1, 2, 3]
    assert [o.rank for o in r.options] == [1, 2, 3]
    assert r.recommended == "inherent_design"


def test_information_for_use_is_flagged_not_a_substitute() -> None:
    # ISO 12100:2010 6.4 [std, from memory]: information for use is not a substitute.
    r = _compare([Candidate("training", cost=0), Candidate("ppe", cost=0)])
    for o in r.options:
        assert o.step == 3
        assert any("not a substitute for safeguarding" in p for p in o.problems)
    # Ties on everything but the name: "ppe" < "training".
    assert _order(r) == ["ppe", "training"]
    assert r.recommended is None
    assert any("no candidate meets every criterion" in p for p in r.derivation.problems)


def test_information_ranks_behind_even_a_failing_safeguard() -> None:
    # ISO 12100:2010 6.4 [std, from memory]: information never ranks above a safeguard.
    weak = Candidate("light_curtain", "b", 500, 600, 3000)  # fails PLr d
    r = _compare([Candidate("warning", cost=1), weak], plr="d", access="frequent")
    assert _order(r) == ["light_curtain", "warning"]


def test_no_access_fixed_guard_first() -> None:
    # ISO 12100:2010 6.3.2.2 [std, from memory]: access not needed in normal operation →
    # fixed guards, then interlocking guards, then protective devices.
    r = _compare([LC, IG, FG], access="none")
    assert _order(r) == ["fixed_guard", "interlocking_guard", "light_curtain"]
    assert r.recommended == "fixed_guard"
    assert all(o.suits_access for o in r.options)


def test_frequent_access_fixed_guard_last() -> None:
    # ISO 12100:2010 6.3.2.3 [std, from memory]: access in normal operation →
    # interlocking guards and protective devices before fixed guards.
    r = _compare([FG, TH, LC, IG], access="frequent")
    assert _order(r) == ["interlocking_guard", "light_curtain", "two_hand_control", "fixed_guard"]
    fg = _opt(r, "fixed_guard")
    assert fg.suits_access is False
    assert fg.problems
    assert r.recommended == "interlocking_guard"


def test_occasional_access_interlocking_guard_before_fixed_guard() -> None:
    # [practice]: a fixed guard removed now and then is liable to be left off, so a movable
    # interlocking guard comes first; both suit the access.
    r = _compare([FG, IG], access="occasional")
    assert _order(r) == ["interlocking_guard", "fixed_guard"]
    assert all(o.suits_access for o in r.options)
    assert r.recommended == "interlocking_guard"


def test_ejection_puts_guards_before_protective_devices() -> None:
    # Only a guard stops ejected parts (ISO 12100:2010 6.3.2, as recalled) [std, from memory;
    # practice]. With frequent access the fixed guard then comes right after the
    # interlocking guard, ahead of the light curtain.
    r = _compare([LC, FG, IG], access="frequent", ejection=True)
    assert _order(r) == ["interlocking_guard", "fixed_guard", "light_curtain"]
    lc = _opt(r, "light_curtain")
    assert lc.handles_ejection is False
    assert any("ejected" in p for p in lc.problems)
    assert _opt(r, "interlocking_guard").handles_ejection is True
    assert _opt(r, "fixed_guard").handles_ejection is True


def test_ejection_without_a_guard_recommends_nothing() -> None:
    r = _compare([LC, TH], access="frequent", ejection=True)
    assert r.recommended is None
    assert all(not o.handles_ejection for o in r.options)


def test_failing_plr_drops_behind() -> None:
    # ISO 13849-1 [std, from memory]: PL c < PLr d. Without the failure the interlocking
    # guard would rank first for frequent access (see test_frequent_access_fixed_guard_last).
    weak_guard = Candidate("interlocking_guard", "c", 480, 600, 1200)
    r = _compare([weak_guard, LC], plr="d", access="frequent")
    assert _order(r) == ["light_curtain", "interlocking_guard"]
    ig = _opt(r, "interlocking_guard")
    assert ig.meets_plr is False
    assert any("below PLr d" in p for p in ig.problems)
    assert any("ranks behind" in s for s in ig.reasons)
    assert _opt(r, "light_curtain").meets_plr is True
    assert r.recommended == "light_curtain"


def test_pl_equal_to_plr_passes() -> None:
    # ISO 13849-1 [std, from memory]: PL d meets PLr d.
    r = _compare([IG], plr="d", access="frequent")
    assert _opt(r, "interlocking_guard").meets_plr is True
    assert r.recommended == "interlocking_guard"


def test_not_fitting_the_space_drops_behind() -> None:
    # 480 mm needed > 300 mm available → does not fit (short by 180 mm).
    tight = Candidate("interlocking_guard", "d", 480, 300, 1200)
    r = _compare([tight, LC], access="frequent")
    assert _order(r) == ["light_curtain", "interlocking_guard"]
    ig = _opt(r, "interlocking_guard")
    assert ig.fits_space is False
    assert any("short by 180 mm" in p for p in ig.problems)
    assert _opt(r, "light_curtain").fits_space is True


def test_distance_equal_to_space_fits() -> None:
    # 600 mm needed, 600 mm available: required ≤ available → fits.
    r = _compare([Candidate("light_curtain", "e", 600, 600, 1)], access="frequent")
    assert _opt(r, "light_curtain").fits_space is True


def test_other_people_exposed_drop_operator_only_devices() -> None:
    # [practice]: a two-hand control protects only the person using it.
    alone = _compare([FG, TH], access="frequent", other_people_exposed=False)
    assert _order(alone) == ["two_hand_control", "fixed_guard"]
    assert _opt(alone, "two_hand_control").protects_others is False
    assert not _opt(alone, "two_hand_control").problems
    crowd = _compare([FG, TH], access="frequent", other_people_exposed=True)
    assert _order(crowd) == ["fixed_guard", "two_hand_control"]
    assert any("protects only the person" in p for p in _opt(crowd, "two_hand_control").problems)
    # Both have problems now: the fixed guard does not suit frequent access.
    assert crowd.recommended is None


def test_inherent_design_failing_a_criterion_drops_behind_a_passing_safeguard() -> None:
    design = Candidate("inherent_design", required_distance_mm=900, space_available_mm=500)
    r = _compare([design, FG], access="none")
    assert _order(r) == ["fixed_guard", "inherent_design"]


def test_cost_breaks_ties_unknown_last_then_name() -> None:
    # Same group (interlocking guards), all passing: lower cost first, unknown cost last.
    a = Candidate("interlocking_guard", "d", 400, 600, 2000)
    b = Candidate("interlocking_guard_locking", "d", 400, 600, 1500)
    r = _compare([a, b], access="frequent")
    assert _order(r) == ["interlocking_guard_locking", "interlocking_guard"]
    unknown = Candidate("interlocking_guard_locking", "d", 400, 600, None)
    r = _compare([unknown, a], access="frequent")
    assert _order(r) == ["interlocking_guard", "interlocking_guard_locking"]
    assert any("cost is not given" in s for s in _opt(r, "interlocking_guard_locking").reasons)
    same = Candidate("interlocking_guard_locking", "d", 400, 600, 2000)
    r = _compare([same, a], access="frequent")
    assert _order(r) == ["interlocking_guard", "interlocking_guard_locking"]  # by name


def test_same_kind_twice_keeps_the_order_given() -> None:
    first = Candidate("fixed_guard", cost=100, effect_on_work="offer one")
    second = Candidate("fixed_guard", cost=100, effect_on_work="offer two")
    r = _compare([first, second])
    assert [o.reasons[-1] for o in r.options] == [
        "Effect on the work (as entered): offer one",
        "Effect on the work (as entered): offer two",
    ]
    assert [o.rank for o in r.options] == [1, 2]


def test_two_hand_control_does_not_suit_no_access() -> None:
    # ISO 12100:2010 6.3.2.2 [std, from memory]: with no access needed, a guard comes first.
    r = _compare([TH, LC], access="none")
    assert _order(r) == ["light_curtain", "two_hand_control"]
    assert _opt(r, "two_hand_control").suits_access is False


@pytest.mark.parametrize(("access", "suits"), [("none", False), ("occasional", True)])
def test_special_mode_devices_suit_occasional_access_only(access: str, suits: bool) -> None:
    # ISO 12100:2010 6.3.2.4 [std, from memory]: hold-to-run and enabling devices are the
    # measures of setting, teaching, fault finding and maintenance.
    r = _compare(
        [Candidate("hold_to_run", "d", cost=100), Candidate("enabling_device", "d", cost=100)],
        access=access,
        plr="d",
    )
    assert [o.suits_access for o in r.options] == [suits, suits]
    assert _order(r) == ["enabling_device", "hold_to_run"]  # tie → by name


def test_special_mode_devices_come_after_other_safeguards() -> None:
    r = _compare([Candidate("hold_to_run", "e", cost=1), IG], access="occasional")
    assert _order(r) == ["interlocking_guard", "hold_to_run"]


def test_emergency_stop_is_complementary_and_last_of_step_2() -> None:
    # ISO 12100:2010 6.3.5.2; ISO 13850 [std, from memory]: complementary, not a substitute.
    r = _compare([Candidate("emergency_stop", "d", cost=1), FG, Candidate("warning")], plr="d")
    assert _order(r) == ["fixed_guard", "emergency_stop", "warning"]
    es = _opt(r, "emergency_stop")
    assert es.step == 2
    assert es.meets_plr is None
    assert any("complementary" in p for p in es.problems)


def test_hand_feeding() -> None:
    # [practice]: a mat or a multi-beam device detects a body, not a hand reaching in;
    # hold-to-run leaves a hand free. ISO 13855:2010 6.2.3 [std, from memory]: a curtain
    # detects a hand only with d ≤ 40 mm.
    mat = Candidate("pressure_mat", "d", 1500, 2000, 100)
    beams = Candidate("multi_beam", "d", 1300, 2000, 100)
    hold = Candidate("hold_to_run", "d", cost=1)
    r = _compare([mat, beams, LC, TH, hold, FG], access="frequent", hand_feeding=True)
    # The body-detecting devices drop behind every other safeguard, hold-to-run included.
    assert _order(r) == [
        "light_curtain",
        "two_hand_control",
        "fixed_guard",
        "hold_to_run",
        "multi_beam",
        "pressure_mat",
    ]
    assert any("40 mm" in s for s in _opt(r, "light_curtain").reasons)
    for kind in ("pressure_mat", "multi_beam"):
        assert any("not a hand" in p for p in _opt(r, kind).problems)
    assert any("hand free" in p for p in _opt(r, "hold_to_run").problems)
    assert any("feed opening" in s for s in _opt(r, "fixed_guard").reasons)
    assert any("feed opening" in w for w in r.derivation.warnings)
    # Without hand feeding the body-detecting devices rank with the light curtain.
    r2 = _compare([mat, beams, LC, TH], access="frequent")
    assert _order(r2) == ["multi_beam", "pressure_mat", "light_curtain", "two_hand_control"]


def test_missing_pl_is_a_problem_when_plr_is_given() -> None:
    r = _compare([Candidate("light_curtain", None, 500, 600, 1)], plr="d", access="frequent")
    o = r.options[0]
    assert o.meets_plr is None
    assert any("cannot be checked against PLr d" in p for p in o.problems)
    assert r.recommended is None


def test_no_plr_means_not_checked() -> None:
    r = _compare([Candidate("light_curtain", "b", 500, 600, 1)], access="frequent")
    assert r.options[0].meets_plr is None
    assert not r.options[0].problems


def test_plr_does_not_apply_to_fixed_guards_and_design() -> None:
    r = _compare([Candidate("fixed_guard", "e"), Candidate("inherent_design")], plr="e")
    assert all(o.meets_plr is None for o in r.options)
    assert any("is not used" in s for s in _opt(r, "fixed_guard").reasons)
    assert any("PLr does not apply" in s for s in _opt(r, "inherent_design").reasons)


def test_fit_not_checked_is_a_problem() -> None:
    # A light curtain needs its ISO 13855 safety distance; without it the fit is unknown.
    r = _compare([Candidate("light_curtain", "e", None, 600, 1)], access="frequent")
    assert r.options[0].fits_space is None
    assert any("not checked" in p for p in r.options[0].problems)
    # A fixed guard needs no safety distance, but half an entry is a problem.
    r = _compare([Candidate("fixed_guard", required_distance_mm=120)])
    assert any("give both" in p for p in r.options[0].problems)


def test_derivation_carries_cautions_and_the_advice() -> None:
    r = _compare([FG, LC, Candidate("hold_to_run", "d"), Candidate("warning")], ejection=True)
    assert set(cautions.REQUIREMENT) <= set(r.derivation.cautions)
    assert any("advice" in w for w in r.derivation.warnings)
    assert r.derivation.rests_on_recalled
    keys = {c.key for c in r.derivation.constants}
    assert {"three_step.order", "selection.no_access", "selection.ejection"} <= keys
    assert "selection.special_modes" in keys
    d = r.to_dict()
    assert set(d) == {"options", "recommended", "derivation"}
    assert set(d["options"][0]) == {
        "kind",
        "step",
        "rank",
        "meets_plr",
        "fits_space",
        "protects_others",
        "suits_access",
        "handles_ejection",
        "reasons",
        "problems",
    }


@pytest.mark.parametrize(
    ("cands", "kw", "field"),
    [
        ([], {}, "candidates"),
        ("fixed_guard", {}, "candidates"),
        (["fixed_guard"], {}, "candidates[0]"),
        ([Candidate("guard")], {}, "candidates[0].kind"),
        ([Candidate("light_curtain", "f")], {}, "candidates[0].reachable_pl"),
        ([FG, Candidate("light_curtain", "e", -1, 600)], {}, "candidates[1].required_distance_mm"),
        (
            [Candidate("light_curtain", "e", 1, float("nan"))],
            {},
            "candidates[0].space_available_mm",
        ),
        ([Candidate("fixed_guard", cost=-5)], {}, "candidates[0].cost"),
        ([Candidate("fixed_guard", effect_on_work=None)], {}, "candidates[0].effect_on_work"),  # type: ignore[arg-type]
        ([FG], {"plr": "x"}, "plr"),
        ([FG], {"access": "sometimes"}, "access"),
        ([FG], {"ejection": "yes"}, "ejection"),
        ([FG], {"other_people_exposed": 1}, "other_people_exposed"),
        ([FG], {"hand_feeding": None}, "hand_feeding"),
        ([FG], {"edition": "1999"}, "edition"),
    ],
)
def test_bad_input_is_refused(cands: object, kw: dict[str, object], field: str) -> None:
    with pytest.raises(InputError) as exc:
        _compare(cands, **kw)  # type: ignore[arg-type]
    assert exc.value.field == field
    assert exc.value.message


_cand = st.builds(
    Candidate,
    kind=st.sampled_from(sel.KINDS),
    reachable_pl=st.one_of(st.none(), st.sampled_from("abcde")),
    required_distance_mm=st.one_of(st.none(), st.floats(0, 3000)),
    space_available_mm=st.one_of(st.none(), st.floats(0, 3000)),
    cost=st.one_of(st.none(), st.floats(0, 1e5)),
)


@given(
    st.lists(_cand, min_size=1, max_size=8),
    st.one_of(st.none(), st.sampled_from("abcde")),
    st.sampled_from(list(sel.ACCESS)),
    st.booleans(),
    st.booleans(),
    st.booleans(),
)
def test_ordering_invariants(
    cands: list[Candidate],
    plr: str | None,
    access: str,
    ejection: bool,
    others: bool,
    feeding: bool,
) -> None:
    """Information for use is always last; a failing safeguard never outranks a passing one;
    the recommendation is the first option without problems (ISO 12100:2010 6.1, 6.4)."""
    r = sel.compare_options(
        cands,
        plr=plr,
        access=access,
        ejection=ejection,
        other_people_exposed=others,
        hand_feeding=feeding,
    )
    assert [o.rank for o in r.options] == list(range(1, len(cands) + 1))
    steps = [o.step for o in r.options]
    assert steps == sorted(steps, key=lambda s: s == 3)

    def fails(o: sel.OptionAssessment) -> bool:
        return o.meets_plr is False or o.fits_space is False or (others and not o.protects_others)

    safeguards = [o for o in r.options if o.step != 3]
    flags = [fails(o) for o in safeguards]
    assert flags == sorted(flags)
    clean = [o.kind for o in r.options if not o.problems]
    assert r.recommended == (clean[0] if clean else None)

"""Light curtain (ESPE) records: IEC 61496 type, effective resolution, ISO 13855 distance.

Sources [std, from memory]: IEC 61496-1 (Type 2 up to PL c, Type 4 up to PL e),
IEC 61496-2 (light curtains are Type 2 or 4); ISO 13855:2010 6.2.3 (S = 2000·T +
8(d − 14), at least 100 mm; above 500 mm recompute with K = 1600, at least 500 mm;
40 < d ≤ 70 mm: S = 1600·T + 850) and 6.2.5 (multi-beam: 1600·T + 850, one beam
1600·T + 1200; heights 300/700/1100 for 3 beams); ISO 13849-1 5.2.2 (manual reset).
[practice]: floating blanking adds the blanked size to d.
Each distance is worked out by hand in the comment.
"""

from __future__ import annotations

from typing import Any

import pytest
from hypothesis import given
from hypothesis import strategies as st

from riskreg.engineering import cautions, espe
from riskreg.engineering.derivation import InputError

APPROX = {"rel": 1e-9, "abs": 1e-9}


def _lc(**kw: Any) -> espe.LightCurtainResult:
    args: dict[str, Any] = {
        "espe_type": 4,
        "resolution_mm": 14,
        "required_pl": None,
        "blanking": "none",
        "restart_interlock": True,
        "person_can_stand_inside": False,
        "stopping_time_s": 0.25,
        "response_time_s": 0.0,
        "installed_distance_mm": None,
    }
    args.update(kw)
    return espe.evaluate_light_curtain(**args)


def _has(texts: tuple[str, ...], part: str) -> bool:
    return any(part.lower() in t.lower() for t in texts)


def test_14mm_type4_t025_stays_at_500() -> None:
    # ISO 13855:2010 6.2.3 [std, from memory]: S = 2000 × 0.25 + 8(14 − 14) = 500 mm,
    # not > 500 → K = 2000 stands.
    r = _lc()
    assert r.max_pl == "e"
    assert r.effective_resolution_mm == 14
    assert r.distance is not None
    assert r.distance.distance_mm == pytest.approx(500.0, **APPROX)
    assert r.distance.k_mm_per_s == 2000
    assert set(cautions.DISTANCE) <= set(r.derivation.cautions)


def test_floating_blanking_10mm() -> None:
    # [practice] d = 14 + 10 = 24 mm. ISO 13855:2010 6.2.3 [std, from memory]:
    # C = 8(24 − 14) = 80; 2000 × 0.25 + 80 = 580 > 500 → 1600 × 0.25 + 80 = 480 < 500
    # → S = 500 mm.
    r = _lc(blanking="floating", blanked_size_mm=10)
    assert r.effective_resolution_mm == pytest.approx(24.0)
    assert r.distance is not None
    assert r.distance.distance_mm == pytest.approx(500.0, **APPROX)
    assert r.distance.k_mm_per_s == 1600
    assert r.distance.c_mm == pytest.approx(80.0)
    assert _has(r.derivation.steps, "d_eff = 14 mm + 10 mm = 24 mm")
    assert _has(r.derivation.steps, "distance: S_RT = 2000 mm/s × 0.25 s + 80 mm = 580 mm")


def test_floating_blanking_30mm_curtain_t03() -> None:
    # [practice] d = 30 + 10 = 40 mm. ISO 13855:2010 6.2.3 [std, from memory]:
    # T = 0.28 + 0.02 = 0.3 s; C = 8(40 − 14) = 208; 2000 × 0.3 + 208 = 808 > 500 →
    # 1600 × 0.3 + 208 = 688 mm.
    r = _lc(
        resolution_mm=30,
        blanking="floating",
        blanked_size_mm=10,
        stopping_time_s=0.28,
        response_time_s=0.02,
    )
    assert r.distance is not None
    assert r.distance.distance_mm == pytest.approx(688.0, **APPROX)
    assert not _has(r.warnings, "not a hand")  # d = 40 mm still detects a hand


def test_fixed_blanking_keeps_d_and_warns() -> None:
    # [practice]: fixed blanking leaves d as it is; the blanked area must be closed otherwise.
    r = _lc(blanking="fixed", blanked_size_mm=60)
    assert r.effective_resolution_mm == 14
    assert r.distance is not None
    assert r.distance.distance_mm == pytest.approx(500.0, **APPROX)
    assert _has(r.warnings, "blanked area must be fully closed")


def test_effective_d_above_40_detects_no_hand() -> None:
    # d = 30 + 20 = 50 mm [practice]. ISO 13855:2010 6.2.3 [std, from memory]:
    # 40 < d ≤ 70 → S = 1600 × 0.2 + 850 = 320 + 850 = 1170 mm.
    r = _lc(resolution_mm=30, blanking="floating", blanked_size_mm=20, stopping_time_s=0.2)
    assert r.distance is not None
    assert r.distance.distance_mm == pytest.approx(1170.0, **APPROX)
    assert _has(r.warnings, "not a hand")
    assert r.problems == ()


def test_effective_d_above_70_is_a_problem_and_needs_beam_heights() -> None:
    # d = 30 + 50 = 80 mm > 70 mm [practice; ISO 13855:2010 6.2.3, std, from memory].
    r = _lc(resolution_mm=30, blanking="floating", blanked_size_mm=50, stopping_time_s=0.2)
    assert r.effective_resolution_mm == pytest.approx(80.0)
    assert r.distance is None
    assert r.distance_ok is None
    assert _has(r.problems, "no longer detects hands")
    assert _has(r.problems, "give the beam heights")


def test_effective_d_above_70_as_three_beams() -> None:
    # ISO 13855:2010 6.2.5 [std, from memory]: S = 1600 × 0.2 + 850 = 1170 mm; recommended
    # heights for 3 beams 300, 700, 1100 mm.
    r = _lc(
        resolution_mm=30,
        blanking="floating",
        blanked_size_mm=50,
        stopping_time_s=0.2,
        beam_heights_mm=[1100, 300, 700],
        installed_distance_mm=1200,
    )
    assert r.distance is not None
    assert r.distance.device == "multi-beam"
    assert r.distance.distance_mm == pytest.approx(1170.0, **APPROX)
    assert r.distance_ok is True
    assert r.shortfall_mm == 0
    assert _has(r.problems, "no longer detects hands")
    assert not _has(r.warnings, "differ from those recommended")


def test_beam_heights_off_the_table_warn() -> None:
    r = _lc(
        resolution_mm=80,
        stopping_time_s=0.2,
        beam_heights_mm=[400, 800, 1100],
    )
    assert _has(r.warnings, "differ from those recommended for 3 beam(s) (300, 700, 1100 mm")


def test_single_beam() -> None:
    # ISO 13855:2010 6.2.5 [std, from memory]: one beam: S = 1600 × 0.2 + 1200 = 1520 mm,
    # at 750 mm height.
    r = _lc(resolution_mm=100, stopping_time_s=0.2, beam_heights_mm=[750])
    assert r.distance is not None
    assert r.distance.distance_mm == pytest.approx(1520.0, **APPROX)
    assert _has(r.derivation.steps, "beam heights as recommended for 1 beam")


def test_more_than_four_beams_give_no_distance() -> None:
    r = _lc(resolution_mm=100, beam_heights_mm=[100, 300, 500, 700, 900])
    assert r.distance is None
    assert _has(r.problems, "5 beams given")


def test_beam_heights_unused_for_a_fine_curtain() -> None:
    r = _lc(beam_heights_mm=[300, 600])
    assert _has(r.warnings, "not used here")


@pytest.mark.parametrize(
    ("installed", "ok", "short"),
    [(480.0, False, 20.0), (500.0, True, 0.0), (650.0, True, 0.0)],
)
def test_installed_distance(installed: float, ok: bool, short: float) -> None:
    # S = 500 mm (see the first test): 480 is 20 mm short; 500 is enough (installed ≥ S).
    r = _lc(installed_distance_mm=installed)
    assert r.installed_distance_mm == installed
    assert r.distance_ok is ok
    assert r.shortfall_mm == pytest.approx(short)
    assert _has(r.problems, "closer than") is (not ok)


def test_installed_distance_not_given_warns() -> None:
    r = _lc()
    assert r.distance_ok is None
    assert r.shortfall_mm is None
    assert _has(r.warnings, "Installed distance not given")


@pytest.mark.parametrize(
    ("espe_type", "plr", "meets"),
    [(2, "c", True), (2, "d", False), (2, "e", False), (2, "a", True), (4, "e", True)],
)
def test_type_against_plr(espe_type: int, plr: str, meets: bool) -> None:
    # IEC 61496-1 [std, from memory]: Type 2 up to PL c, Type 4 up to PL e.
    r = _lc(espe_type=espe_type, required_pl=plr)
    assert r.max_pl == ("c" if espe_type == 2 else "e")
    assert r.meets_plr is meets
    assert _has(r.problems, "needs a Type 4") is (not meets)
    assert _has(r.warnings, "whole safety function")


def test_no_plr_means_not_checked() -> None:
    r = _lc(espe_type=2)
    assert r.meets_plr is None
    assert r.max_pl == "c"


def test_restart_interlock_needed_when_a_person_can_stand_inside() -> None:
    # IEC 62046; ISO 13849-1 5.2.2 [std, from memory].
    missing = _lc(person_can_stand_inside=True, restart_interlock=False)
    assert _has(missing.problems, "no restart interlock")
    fitted = _lc(person_can_stand_inside=True, restart_interlock=True)
    assert fitted.problems == ()
    assert _has(fitted.warnings, "reset must be outside")
    nobody = _lc(person_can_stand_inside=False, restart_interlock=False)
    assert nobody.problems == ()
    assert _has(nobody.warnings, "cannot hold a person")


def test_muting_warns() -> None:
    # IEC 62046 [std, from memory]: muting only while there is no hazard.
    assert _has(_lc(muting=True).warnings, "only while there is no hazard")
    assert not _has(_lc().warnings, "Muting")


def test_result_keys() -> None:
    d = _lc(installed_distance_mm=520).to_dict()
    assert set(d) == {
        "max_pl",
        "meets_plr",
        "effective_resolution_mm",
        "distance",
        "installed_distance_mm",
        "distance_ok",
        "shortfall_mm",
        "problems",
        "warnings",
        "derivation",
    }
    assert d["distance"]["distance_mm"] == pytest.approx(500.0)
    assert d["derivation"]["rests_on_recalled"] is True


def test_type_3_is_refused_with_a_reason() -> None:
    with pytest.raises(InputError) as exc:
        _lc(espe_type=3)
    assert exc.value.field == "espe_type"
    assert "not a light-curtain type" in exc.value.message
    assert "2 or 4" in exc.value.message


@pytest.mark.parametrize(
    ("kw", "field"),
    [
        ({"espe_type": 1}, "espe_type"),
        ({"espe_type": "4"}, "espe_type"),
        ({"espe_type": True}, "espe_type"),
        ({"resolution_mm": 0}, "resolution_mm"),
        ({"resolution_mm": "14"}, "resolution_mm"),
        ({"required_pl": "f"}, "required_pl"),
        ({"blanking": "partial"}, "blanking"),
        ({"blanked_size_mm": 5}, "blanked_size_mm"),
        ({"blanking": "floating"}, "blanked_size_mm"),
        ({"blanking": "fixed", "blanked_size_mm": -1}, "blanked_size_mm"),
        ({"muting": 1}, "muting"),
        ({"restart_interlock": None}, "restart_interlock"),
        ({"person_can_stand_inside": "no"}, "person_can_stand_inside"),
        ({"stopping_time_s": -0.1}, "stopping_time_s"),
        ({"stopping_time_s": 180}, "stopping_time_s"),
        ({"response_time_s": float("inf")}, "response_time_s"),
        ({"installed_distance_mm": -5}, "installed_distance_mm"),
        ({"beam_heights_mm": []}, "beam_heights_mm"),
        ({"beam_heights_mm": "300,700"}, "beam_heights_mm"),
        ({"beam_heights_mm": [300, -1]}, "beam_heights_mm[1]"),
        ({"edition": "1999"}, "edition"),
    ],
)
def test_bad_input_is_refused(kw: dict[str, Any], field: str) -> None:
    with pytest.raises(InputError) as exc:
        _lc(**kw)
    assert exc.value.field == field
    assert exc.value.message


@given(st.floats(0, 0.6), st.floats(1, 56), st.floats(0, 20))
def test_distance_never_falls_as_blanking_or_stopping_time_grow(
    t: float, blanked: float, more: float
) -> None:
    """ISO 13855 [std, from memory]: S rises with d and with T; floating blanking raises d."""
    base = _lc(stopping_time_s=t, blanking="floating", blanked_size_mm=blanked)
    coarser = _lc(stopping_time_s=t, blanking="floating", blanked_size_mm=blanked + more)
    slower = _lc(stopping_time_s=t + 0.1, blanking="floating", blanked_size_mm=blanked)
    assert base.distance is not None
    assert slower.distance is not None
    if coarser.distance is not None:
        assert coarser.distance.distance_mm >= base.distance.distance_mm - 1e-9
    else:
        assert coarser.effective_resolution_mm > 70
    assert slower.distance.distance_mm >= base.distance.distance_mm - 1e-9


def test_sub_calculation_problems_are_carried_over() -> None:
    # The distance functions raise no problems today; a later one that does must not be lost.
    from riskreg.engineering.derivation import Derivation, DerivationBuilder

    d = DerivationBuilder("outer", "x")
    espe._include(d, Derivation("inner", "y", steps=("s",), problems=("p",)), "inner")
    built = d.build()
    assert built.problems == ("p",)
    assert built.steps == ("inner: s",)

"""Achieved PL, component formulas and subsystems in series (ISO 13849-1).

Expected values are the published tables and formulas, recalled from memory:
the simplified procedure of ISO 13849-1:2006 Table 7 / 2015 Figure 5, the
MTTFd and DCavg bands, the PFHd bands per PL, Annex C/D/E formulas and the
series rule of Table 11 [std, from memory]. Every number below is worked out by
hand from the standard's formula, with the arithmetic beside it.
"""

from __future__ import annotations

import pytest
from hypothesis import given
from hypothesis import strategies as st

from riskreg.engineering import cautions, pl
from riskreg.engineering.derivation import InputError
from riskreg.engineering.risk import PL_ORDER


def rank(p: str | None) -> int:
    """PL a..e → 0..4; no PL (not allowed / not determined) below a."""
    return -1 if p is None else PL_ORDER.index(p)


# --- The simplified procedure ---------------------------------------------------

# ISO 13849-1:2006 Table 7 = 2015 Figure 5, simplified procedure [std, from memory].
# Representative MTTFd: low 5 y, medium 20 y, high 50 y; DCavg: none 0 %, low 75 %,
# medium 95 %, high 99.5 %. Categories 2-4 with CCF 70 points (≥ 65, Annex F).
SIMPLIFIED = [
    ("2", 75, 5, "a"),
    ("2", 75, 20, "b"),
    ("2", 75, 50, "c"),
    ("2", 95, 5, "b"),
    ("2", 95, 20, "c"),
    ("2", 95, 50, "d"),
    ("3", 75, 5, "b"),
    ("3", 75, 20, "c"),
    ("3", 75, 50, "d"),
    ("3", 95, 5, "c"),
    ("3", 95, 20, "d"),
    ("3", 95, 50, "d"),
    ("4", 99.5, 50, "e"),
]


@pytest.mark.parametrize(("cat", "dc", "mttfd", "expected"), SIMPLIFIED)
def test_simplified_table_cells(cat: str, dc: float, mttfd: float, expected: str) -> None:
    ratio = 100 if cat == "2" else None
    r = pl.achieved_pl(cat, [mttfd], dc, ccf_points=70, test_rate_ratio=ratio)
    assert r.problems == ()
    assert r.pl == expected
    assert r.table_pl == expected
    assert r.pfhd is None  # Categories 2-4: no exact PFHd here
    assert cautions.NOT_SAFE in r.derivation.cautions
    assert r.derivation.rests_on_recalled


# Categories B and 1: PFHd = 1 / (MTTFd · 8760 h) decides, PL from the PFHd bands
# (ISO 13849-1:2015 Table 2 bands and Annex K, Cat B/1 column) [std, from memory].
CAT_B_1 = [
    # (category, MTTFd used, PFHd by hand, PL by PFHd band, table PL)
    ("B", 3, 1 / 26280, "a", "a"),  # 1/(3·8760) = 3.805e-5 → a (1e-5 ≤ x < 1e-4)
    ("B", 5, 1 / 43800, "a", "a"),  # 1/(5·8760) = 2.283e-5 → a
    ("B", 10.5, 1 / 91980, "a", "b"),  # 1/(10.5·8760) = 1.087e-5 → a; table says b
    ("B", 11.4, 1 / 99864, "a", "b"),  # 1/(11.4·8760) = 1.0014e-5 → a; table b
    ("B", 12, 1 / 105120, "b", "b"),  # 1/(12·8760) = 9.513e-6 → b
    ("B", 20, 1 / 175200, "b", "b"),  # 1/(20·8760) = 5.708e-6 → b
    ("1", 30, 1 / 262800, "b", "c"),  # 1/(30·8760) = 3.805e-6 → b; table says c
    ("1", 38, 1 / 332880, "b", "c"),  # 1/(38·8760) = 3.004e-6 → b; table c
    ("1", 40, 1 / 350400, "c", "c"),  # 1/(40·8760) = 2.854e-6 → c
    ("1", 100, 1 / 876000, "c", "c"),  # 1/(100·8760) = 1.142e-6 → c
]


@pytest.mark.parametrize(("cat", "mttfd", "pfhd", "expected", "table"), CAT_B_1)
def test_cat_b_and_1_exact_pfhd_decides(
    cat: str, mttfd: float, pfhd: float, expected: str, table: str
) -> None:
    r = pl.achieved_pl(cat, [mttfd], 0, well_tried=True)
    assert r.problems == ()
    assert r.pfhd == pytest.approx(pfhd, rel=1e-9)
    assert r.pl == expected
    assert r.table_pl == table
    mismatch = [w for w in r.derivation.warnings if "computed PFHd decides" in w]
    assert bool(mismatch) == (expected != table)


def test_cat_b_at_10_5_years_is_pl_a_with_pfhd_1_087e_5() -> None:
    # REFERENCE §5 band edge: Cat B, MTTFd 10.5 y → PFHd = 1/(10.5·8760) = 1/91980
    # = 1.0872e-5 1/h ≥ 1e-5 → PL a, while the table's medium row says b
    # ISO 13849-1:2015 Table 2 and Figure 5 [std, from memory]
    r = pl.achieved_pl("B", [10.5], 0)
    assert r.pl == "a"
    assert r.pfhd == pytest.approx(1.0872e-5, rel=1e-4)
    assert r.mttfd_band == "medium"
    assert any("PL a" in w and "PL b" in w for w in r.derivation.warnings)


def test_cat_b_counts_mttfd_as_at_most_medium() -> None:
    # Category B: MTTFd low to medium only, ISO 13849-1:2015 6.2.3 [std, from memory]
    # 50 y counted as 30 y → PFHd = 1/(30·8760) = 3.805e-6 → PL b (not c)
    r = pl.achieved_pl("B", [50], 0)
    assert r.mttfd_years == 30
    assert r.mttfd_band == "medium"
    assert r.pfhd == pytest.approx(3.805e-6, rel=1e-3)
    assert r.pl == "b"
    assert r.table_pl == "b"


def test_cat_b_ignores_diagnostics() -> None:
    # Categories B and 1 take no credit for DC (Table 7 columns "none") [std, from memory]
    r = pl.achieved_pl("B", [20], 95)
    assert r.dcavg_band == "medium"
    assert r.pl == "b"
    assert any("no credit for diagnostics" in s for s in r.derivation.steps)


def test_cap_100_years_and_2500_for_category_4() -> None:
    # ISO 13849-1:2015 Table 4 note: cap 100 y, 2,500 y for Category 4 [std, from memory]
    r1 = pl.achieved_pl("1", [150], 0, well_tried=True)
    assert r1.mttfd_years == 100
    assert r1.pfhd == pytest.approx(1.1416e-6, rel=1e-4)  # 1/(100·8760) = 1/876000
    assert r1.pl == "c"
    r3 = pl.achieved_pl("3", [3000], 95, ccf_points=65)
    assert r3.mttfd_years == 100
    r4 = pl.achieved_pl("4", [3000], 99, ccf_points=65)
    assert r4.mttfd_years == 2500
    assert r4.pl == "e"


def test_two_channels_are_capped_then_symmetrised() -> None:
    # ISO 13849-1 Annex D formula D.2 [std, from memory]: channels 100 and 20 y:
    # 2/3 · [100 + 20 − 1/(1/100 + 1/20)] = 2/3 · [120 − 16.667] = 68.889 y → high
    r = pl.achieved_pl("3", [100, 20], 95, ccf_points=70)
    assert r.mttfd_years == pytest.approx(68.889, abs=1e-3)
    assert r.mttfd_band == "high"
    assert r.pl == "d"  # Cat 3, DC medium, MTTFd high → d (Table 7)
    # capped first: 400 y → 100 y, so 2/3 · [100 + 20 − 16.667] again = 68.889
    assert pl.achieved_pl("3", [400, 20], 95, ccf_points=70).mttfd_years == pytest.approx(
        68.889, abs=1e-3
    )


def test_two_equal_channels_of_30_years_stay_high() -> None:
    # 2/3 · [30 + 30 − 15] = 30 y exactly → high (no rounding noise below the edge)
    r = pl.achieved_pl("4", [30, 30], 99, ccf_points=65)
    assert r.mttfd_years == 30
    assert r.mttfd_band == "high"
    assert r.pl == "e"


def test_one_value_for_a_two_channel_category_means_both_channels() -> None:
    r = pl.achieved_pl("3", [20], 75, ccf_points=65)
    assert r.pl == "c"  # Cat 3, DC low, MTTFd medium → c (Table 7) [std, from memory]
    assert any("both channels" in s for s in r.derivation.steps)


def test_high_dc_counts_as_medium_for_categories_2_and_3() -> None:
    # Table 7 has only low/medium columns for Cat 2 and 3 [std, from memory]
    r = pl.achieved_pl("3", [50], 99.5, ccf_points=65)
    assert r.dcavg_band == "high"
    assert r.pl == "d"


# --- Requirements that fail: problems, no PL -------------------------------------


def test_cat_1_needs_high_mttfd() -> None:
    # ISO 13849-1:2015 6.2.4: Category 1 needs high MTTFd [std, from memory]
    r = pl.achieved_pl("1", [20], 0, well_tried=True)
    assert r.pl is None
    assert r.table_pl is None
    assert any("needs high MTTFd" in p and "20 years" in p for p in r.problems)


def test_cat_1_needs_well_tried_attestation() -> None:
    r = pl.achieved_pl("1", [50], 0)
    assert r.pl is None
    assert any("well-tried" in p for p in r.problems)
    assert r.pfhd == pytest.approx(2.283e-6, rel=1e-3)  # 1/(50·8760) = 1/438000


def test_cat_2_needs_test_rate_and_ccf() -> None:
    # ISO 13849-1:2015 6.2.5 (test rate ≥ 100 × demand rate) and Annex F (CCF ≥ 65)
    # [std, from memory]
    r = pl.achieved_pl("2", [50], 95)
    assert r.pl is None
    assert r.table_pl == "d"  # the cell alone
    assert any("Test rate not given" in p for p in r.problems)
    assert any("CCF score not given" in p for p in r.problems)
    low = pl.achieved_pl("2", [50], 95, ccf_points=70, test_rate_ratio=50)
    assert low.pl is None
    assert any("50 times" in p and "not valid as Category 2" in p for p in low.problems)
    ok = pl.achieved_pl("2", [50], 95, ccf_points=65, test_rate_ratio=100)
    assert ok.pl == "d"


def test_ccf_below_65_is_a_problem() -> None:
    r = pl.achieved_pl("3", [50], 95, ccf_points=60)
    assert r.pl is None
    assert any("60 points" in p and "65" in p for p in r.problems)


def test_cat_2_and_3_need_at_least_low_dc() -> None:
    for cat in ("2", "3"):
        r = pl.achieved_pl(cat, [50], 50, ccf_points=70, test_rate_ratio=100)
        assert r.pl is None
        assert any("at least low" in p and "60" in p for p in r.problems)


def test_cat_4_needs_high_dc_and_high_mttfd() -> None:
    r = pl.achieved_pl("4", [50], 95, ccf_points=70)
    assert r.pl is None
    assert any("at least high" in p for p in r.problems)
    r2 = pl.achieved_pl("4", [20], 99, ccf_points=70)
    assert r2.pl is None
    assert any("needs high MTTFd" in p for p in r2.problems)


def test_mttfd_below_3_years_is_not_allowed() -> None:
    # ISO 13849-1:2015 Table 4: MTTFd below 3 years not allowed [std, from memory]
    r = pl.achieved_pl("B", [2.5], 0)
    assert r.pl is None
    assert r.mttfd_band is None
    assert r.pfhd is None
    assert any("below 3 years" in p for p in r.problems)
    r2 = pl.achieved_pl("3", [100, 2], 95, ccf_points=70)
    assert r2.pl is None
    assert any("channel 2" in p and "below 3 years" in p for p in r2.problems)


@pytest.mark.parametrize("cat", ["B", "1", "2"])
def test_two_channel_values_for_a_single_channel_category(cat: str) -> None:
    r = pl.achieved_pl(cat, [50, 60], 95, ccf_points=70, well_tried=True, test_rate_ratio=100)
    assert r.pl is None
    assert r.mttfd_years is None
    assert any("single channel" in p and "Category 3 or 4" in p for p in r.problems)


def test_iec62061_estimate_is_information_only() -> None:
    base = pl.achieved_pl("3", [50], 95, ccf_points=70)
    better = pl.achieved_pl("3", [50], 95, ccf_points=70, iec62061_estimate=2e-8)
    worse = pl.achieved_pl("3", [50], 95, ccf_points=70, iec62061_estimate=5e-6)
    assert base.pl == better.pl == worse.pl == "d"
    assert better.iec62061_estimate == 2e-8
    assert any("information only" in s and "IEC 62061" in s for s in better.derivation.steps)
    assert any("falls below the table's PL d" in w for w in worse.derivation.warnings)
    b = pl.achieved_pl("B", [20], 0, iec62061_estimate=1e-7)
    assert b.pl == "b"
    assert any("exact PFHd decides" in w for w in b.derivation.warnings)


@pytest.mark.parametrize(
    ("kwargs", "field"),
    [
        ({"category": "5"}, "category"),
        ({"mttfd_years": []}, "mttfd_years"),
        ({"mttfd_years": [10, 20, 30]}, "mttfd_years"),
        ({"mttfd_years": [0]}, "mttfd_years[0]"),
        ({"mttfd_years": [-5]}, "mttfd_years[0]"),
        ({"mttfd_years": [float("nan")]}, "mttfd_years[0]"),
        ({"dcavg_percent": 101}, "dcavg_percent"),
        ({"dcavg_percent": -1}, "dcavg_percent"),
        ({"ccf_points": 120}, "ccf_points"),
        ({"test_rate_ratio": 0}, "test_rate_ratio"),
        ({"iec62061_estimate": 2}, "iec62061_estimate"),
        ({"edition": "1999"}, "edition"),
    ],
)
def test_achieved_pl_refuses_bad_input(kwargs: dict[str, object], field: str) -> None:
    args: dict[str, object] = {"category": "3", "mttfd_years": [50], "dcavg_percent": 95}
    args.update(kwargs)
    with pytest.raises(InputError) as exc:
        pl.achieved_pl(**args)  # type: ignore[arg-type]
    assert exc.value.field == field


def test_category_accepts_int_and_lower_case() -> None:
    assert pl.achieved_pl(3, [50], 95, ccf_points=70).category == "3"  # type: ignore[arg-type]
    assert pl.achieved_pl("b", [20], 0).category == "B"


def test_edition_2023_gives_the_same_table() -> None:
    r = pl.achieved_pl("3", [50], 95, ccf_points=70, edition="2023")
    assert r.pl == "d"
    assert r.derivation.constants[0].edition == "2023"


# --- Component formulas ---------------------------------------------------------


def test_component_mttfd_from_b10d() -> None:
    # ISO 13849-1 Annex C.4 [std, from memory]: position switch with a separate
    # actuator, B10d = 2,000,000; 220 d/y, 16 h/d, one operation every 60 s:
    # nop = 220 · 16 · 3600 / 60 = 211,200 per year
    # MTTFd = 2,000,000 / (0.1 · 211,200) = 94.697 y; T10d = 2,000,000 / 211,200 = 9.470 y
    r = pl.component_mttfd(2_000_000, 220, 16, 60)
    assert r.nop == pytest.approx(211_200)
    assert r.mttfd_years == pytest.approx(94.697, abs=1e-3)
    assert r.t10d_years == pytest.approx(9.470, abs=1e-3)
    # T10d below the 20-year mission time → replace the part [std, from memory]
    assert any("replaced" in w and "20-year" in w for w in r.derivation.warnings)


def test_component_long_t10d_has_no_replacement_warning() -> None:
    # B10d = 20,000,000, 250 d/y, 8 h/d, 600 s cycle: nop = 250 · 8 · 3600 / 600 = 12,000
    # MTTFd = 2e7 / (0.1 · 12,000) = 16,666.7 y; T10d = 2e7 / 12,000 = 1,666.7 y
    r = pl.component_mttfd(20_000_000, 250, 8, 600)
    assert r.nop == pytest.approx(12_000)
    assert r.mttfd_years == pytest.approx(16_666.667, abs=1e-3)
    assert r.t10d_years == pytest.approx(1_666.667, abs=1e-3)
    assert not any("replaced" in w for w in r.derivation.warnings)
    assert any("at most 100 years" in s for s in r.derivation.steps)


def test_component_with_typical_value() -> None:
    # Table C.1 emergency stop device B10d = 100,000 [std, from memory];
    # 200 d/y, 8 h/d, one operation per hour (3600 s): nop = 200 · 8 = 1,600
    # MTTFd = 100,000 / 160 = 625 y; T10d = 100,000 / 1,600 = 62.5 y
    r = pl.component_mttfd(None, 200, 8, 3600, typical="emergency-stop")
    assert r.b10d == 100_000
    assert r.mttfd_years == pytest.approx(625)
    assert r.t10d_years == pytest.approx(62.5)
    assert any(c.key == "b10d.emergency_stop" for c in r.derivation.constants)


def test_typical_b10d_values() -> None:
    # ISO 13849-1 Table C.1 [std, from memory]
    assert pl.typical_b10d("pneumatic-valve").value == 20_000_000
    assert pl.typical_b10d("relay-maximum-load").value == 400_000
    assert pl.typical_b10d("position-switch-separate-actuator").value == 2_000_000
    assert pl.typical_b10d("enabling-switch").value == 100_000
    with pytest.raises(InputError, match="typical"):
        pl.typical_b10d("valve")


@pytest.mark.parametrize(
    ("args", "kwargs", "field"),
    [
        ((0, 220, 16, 60), {}, "b10d"),
        ((None, 220, 16, 60), {}, "b10d"),
        ((1e6, 220, 16, 60), {"typical": "emergency-stop"}, "b10d"),
        ((1e6, 0, 16, 60), {}, "days_per_year"),
        ((1e6, 400, 16, 60), {}, "days_per_year"),
        ((1e6, 220, 25, 60), {}, "hours_per_day"),
        ((1e6, 220, 16, 0), {}, "cycle_time_s"),
        ((1e6, 220, 16, -2), {}, "cycle_time_s"),
    ],
)
def test_component_mttfd_refuses_bad_input(
    args: tuple[object, ...], kwargs: dict[str, object], field: str
) -> None:
    with pytest.raises(InputError) as exc:
        pl.component_mttfd(*args, **kwargs)  # type: ignore[arg-type]
    assert exc.value.field == field


def test_channel_mttfd_parts_count() -> None:
    # ISO 13849-1 Annex D.1 [std, from memory]: 1/MTTFd = 1/50 + 1/100 + 1/150
    # = (6 + 3 + 2)/300 = 11/300 → MTTFd = 300/11 = 27.2727 y
    r = pl.channel_mttfd([50, 100, 150])
    assert r.mttfd_years == pytest.approx(27.2727, abs=1e-4)
    # two blocks of 200 y: 1/MTTFd = 2/200 → 100 y; 300 y alone shows the cap note
    assert pl.channel_mttfd([200, 200]).mttfd_years == pytest.approx(100)
    assert any("at most 100" in s for s in pl.channel_mttfd([300]).derivation.steps)
    with pytest.raises(InputError):
        pl.channel_mttfd([])
    with pytest.raises(InputError):
        pl.channel_mttfd([10, 0])


def test_symmetrised_mttfd() -> None:
    # ISO 13849-1 Annex D formula D.2 [std, from memory]:
    # C1 = 100, C2 = 20: 2/3 · [120 − 1/(0.01 + 0.05)] = 2/3 · 103.333 = 68.889 y
    assert pl.symmetrised_mttfd(100, 20).mttfd_years == pytest.approx(68.889, abs=1e-3)
    # C1 = 60, C2 = 30: 2/3 · [90 − 1/(1/60 + 1/30)] = 2/3 · [90 − 20] = 46.667 y
    assert pl.symmetrised_mttfd(60, 30).mttfd_years == pytest.approx(46.667, abs=1e-3)
    assert pl.symmetrised_mttfd(40, 40).mttfd_years == 40
    with pytest.raises(InputError):
        pl.symmetrised_mttfd(0, 20)


def test_dcavg() -> None:
    # ISO 13849-1 Annex E formula E.1 [std, from memory]:
    # blocks (99 %, 50 y), (90 %, 100 y), (60 %, 20 y):
    # Σ DC/M = 99/50 + 90/100 + 60/20 = 1.98 + 0.9 + 3 = 5.88
    # Σ 1/M = 0.02 + 0.01 + 0.05 = 0.08 → DCavg = 5.88 / 0.08 = 73.5 % → low
    r = pl.dcavg([(99, 50), (90, 100), (60, 20)])
    assert r.dcavg_percent == pytest.approx(73.5)
    assert r.dcavg_band == "low"
    # two blocks both at 99 %: exactly 99 % → high (band edge ≥ 99 %, Table 5/6)
    assert pl.dcavg([(99, 30), (99, 70)]).dcavg_band == "high"


@pytest.mark.parametrize("pairs", [[], [(99,)], [(101, 50)], [(90, 0)], "99,50", [(90, -1)]])
def test_dcavg_refuses_bad_input(pairs: object) -> None:
    with pytest.raises(InputError):
        pl.dcavg(pairs)  # type: ignore[arg-type]


# --- PFHd bands, SIL correspondence ----------------------------------------------


@pytest.mark.parametrize(
    ("pfhd", "expected"),
    [
        # ISO 13849-1:2015 Table 2 PFHd bands, lower edge inclusive [std, from memory]
        (9.9e-5, "a"),
        (1e-5, "a"),
        (9.99e-6, "b"),
        (3e-6, "b"),
        (2.99e-6, "c"),
        (1e-6, "c"),
        (9.9e-7, "d"),
        (1e-7, "d"),
        (9.9e-8, "e"),
        (1e-8, "e"),
        (5e-9, "e"),  # below the e band: still e, the highest PL
        (1e-4, None),  # outside every band
        (0.5, None),
    ],
)
def test_pl_for_pfhd(pfhd: float, expected: str | None) -> None:
    assert pl.pl_for_pfhd(pfhd) == expected


@pytest.mark.parametrize("bad", [0, -1e-7, 1, 2, float("inf")])
def test_pl_for_pfhd_refuses_non_rates(bad: float) -> None:
    with pytest.raises(InputError):
        pl.pl_for_pfhd(bad)


@pytest.mark.parametrize(
    ("p", "sil"),
    # PL/SIL correspondence, ISO 13849-1:2006 Table 4 [std, from memory]
    [("a", None), ("b", 1), ("c", 1), ("d", 2), ("e", 3)],
)
def test_sil_for_pl(p: str, sil: int | None) -> None:
    assert pl.sil_for_pl(p) == sil


def test_sil_for_pl_refuses_unknown() -> None:
    with pytest.raises(InputError):
        pl.sil_for_pl("f")


# --- Subsystems in series ---------------------------------------------------------


def test_series_pfhd_sum() -> None:
    # ISO 13849-1:2015 6.3 [std, from memory]: 2e-7 + 3e-7 + 4.5e-7 = 9.5e-7 → d
    r = pl.series_pfhd([2e-7, 3e-7, 4.5e-7])
    assert r.pfhd_total == pytest.approx(9.5e-7)
    assert r.pl == "d"
    # 5e-7 + 6e-7 = 1.1e-6 → c
    assert pl.series_pfhd([5e-7, 6e-7]).pl == "c"
    # 3e-7 + 7e-7 = 1.0e-6 exactly → c (the edge, not d by rounding noise)
    assert pl.series_pfhd([3e-7, 7e-7]).pl == "c"
    assert cautions.LOCAL_LAW in r.derivation.cautions


def test_series_pfhd_never_above_lowest_pl() -> None:
    # 2e-8 + 3e-8 = 5e-8 → PL e band, but one subsystem is only PL d → d
    r = pl.series_pfhd([2e-8, 3e-8], ["e", "d"])
    assert r.band_pl == "e"
    assert r.lowest_pl == "d"
    assert r.pl == "d"


def test_series_pfhd_pl_above_its_band_is_a_problem() -> None:
    # 2e-7 lies in the PL d band (1e-7 ≤ x < 1e-6): a claimed PL e is inconsistent
    r = pl.series_pfhd([2e-7, 1e-8], ["e", "e"])
    assert r.pl is None
    assert any("Subsystem 1" in p and "PL e" in p for p in r.problems)


def test_series_pfhd_outside_the_bands() -> None:
    # 5e-5 + 6e-5 = 1.1e-4 ≥ 1e-4 → no PL
    r = pl.series_pfhd([5e-5, 6e-5])
    assert r.pl is None
    assert r.band_pl is None
    assert r.problems


@pytest.mark.parametrize(
    ("pfhds", "pls"),
    [
        ([], None),
        ([2.0], None),
        ([0.0], None),
        ([-1e-7], None),
        ([1e-7, 1e-7], ["d"]),
        ([1e-7], ["f"]),
        ("1e-7", None),
    ],
)
def test_series_pfhd_refuses_bad_input(pfhds: object, pls: list[str] | None) -> None:
    with pytest.raises(InputError):
        pl.series_pfhd(pfhds, pls)  # type: ignore[arg-type]


@pytest.mark.parametrize(
    ("pls", "expected", "lowest", "n_low"),
    [
        # ISO 13849-1:2006/2015 Table 11 [std, from memory]
        (["e", "e", "e"], "e", "e", 3),
        (["e", "e", "e", "e"], "d", "e", 4),
        (["d", "d", "d"], "d", "d", 3),
        (["d", "d", "d", "d"], "c", "d", 4),
        (["c", "c"], "c", "c", 2),
        (["c", "c", "c"], "b", "c", 3),
        (["b", "b"], "b", "b", 2),
        (["b", "b", "b"], "a", "b", 3),
        (["a", "a", "a"], "a", "a", 3),
        (["a", "a", "a", "a"], None, "a", 4),
        (["e", "d", "c"], "c", "c", 1),
    ],
)
def test_series_count_rule(pls: list[str], expected: str | None, lowest: str, n_low: int) -> None:
    r = pl.series_pl_count(pls)
    assert (r.pl, r.lowest, r.n_low) == (expected, lowest, n_low)
    assert bool(r.problems) == (expected is None)


def test_series_count_rule_2023_warns() -> None:
    r = pl.series_pl_count(["d", "d"], edition="2023")
    assert r.pl == "d"
    assert any("possibly dropped in 2023" in w for w in r.derivation.warnings)
    assert not any("dropped" in w for w in pl.series_pl_count(["d"]).derivation.warnings)


@pytest.mark.parametrize("pls", [[], ["f"], "dd"])
def test_series_count_refuses_bad_input(pls: object) -> None:
    with pytest.raises(InputError):
        pl.series_pl_count(pls)  # type: ignore[arg-type]


def test_lowest_pl() -> None:
    assert pl.lowest_pl(["e", "c", "d"]) == "c"
    with pytest.raises(InputError):
        pl.lowest_pl([])


# --- Properties -------------------------------------------------------------------

pfhd_values = st.floats(min_value=1e-9, max_value=9e-5)
pl_values = st.sampled_from(PL_ORDER)


@given(st.lists(pfhd_values, min_size=1, max_size=6), pfhd_values)
def test_adding_a_subsystem_never_raises_the_pl_by_pfhd(pfhds: list[float], extra: float) -> None:
    before = pl.series_pfhd(pfhds).pl
    after = pl.series_pfhd([*pfhds, extra]).pl
    assert rank(after) <= rank(before)


@given(
    st.lists(st.tuples(pfhd_values, pl_values), min_size=1, max_size=6),
    st.tuples(pfhd_values, pl_values),
)
def test_adding_a_subsystem_never_raises_the_pl_with_pls(
    subs: list[tuple[float, str]], extra: tuple[float, str]
) -> None:
    before = pl.series_pfhd([s[0] for s in subs], [s[1] for s in subs]).pl
    more = [*subs, extra]
    after = pl.series_pfhd([s[0] for s in more], [s[1] for s in more]).pl
    assert rank(after) <= rank(before)


@given(st.lists(pl_values, min_size=1, max_size=8), pl_values)
def test_adding_a_subsystem_never_raises_the_pl_by_count(pls: list[str], extra: str) -> None:
    assert rank(pl.series_pl_count([*pls, extra]).pl) <= rank(pl.series_pl_count(pls).pl)


mttfd_values = st.floats(min_value=1, max_value=5000)


@given(
    st.sampled_from(pl.CATEGORIES),
    st.sampled_from([0, 50, 60, 75, 90, 95, 99, 100]),
    mttfd_values,
    mttfd_values,
    st.booleans(),
)
def test_higher_mttfd_never_lowers_the_pl(
    cat: str, dc: float, m1: float, m2: float, two: bool
) -> None:
    lo, hi = sorted((m1, m2))
    kw = {"ccf_points": 70, "well_tried": True, "test_rate_ratio": 100}
    if two and cat in ("3", "4"):
        # raise one channel, keep the other
        before = pl.achieved_pl(cat, [lo, 40], dc, **kw).pl  # type: ignore[arg-type]
        after = pl.achieved_pl(cat, [hi, 40], dc, **kw).pl  # type: ignore[arg-type]
    else:
        before = pl.achieved_pl(cat, [lo], dc, **kw).pl  # type: ignore[arg-type]
        after = pl.achieved_pl(cat, [hi], dc, **kw).pl  # type: ignore[arg-type]
    assert rank(after) >= rank(before)

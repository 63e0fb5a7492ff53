"""PFH of the IEC 62061 basic subsystem architectures A-D.

Formulas of IEC 62061 (basic subsystem architectures; SIL limits of PFH,
2005 Table 3) [std, from memory]. Each expected value is worked out by hand from
the formula, with the arithmetic beside it.
"""

from __future__ import annotations

import pytest

from riskreg.engineering import cautions, pfh62061
from riskreg.engineering.derivation import InputError


def test_lambda_from_b10d() -> None:
    # IEC 62061, λD = 0.1 · C / B10D [std, from memory]:
    # B10d = 2,000,000, C = 60 operations/h → λD = 0.1 · 60 / 2e6 = 3e-6 1/h
    # T10d = 2e6 / 60 = 33,333.3 h
    r = pfh62061.lambda_from_b10d(2_000_000, 60)
    assert r.lambda_d_per_h == pytest.approx(3e-6)
    assert r.t10d_hours == pytest.approx(33_333.333, abs=1e-3)
    assert not r.derivation.warnings
    # a 20-year lifetime (175,200 h) outlasts T10d → replace at T10d
    w = pfh62061.lambda_from_b10d(2_000_000, 60, lifetime_hours=175_200).derivation.warnings
    assert any("replaced at T10d" in x for x in w)
    assert not pfh62061.lambda_from_b10d(2e7, 60, lifetime_hours=175_200).derivation.warnings


def test_architecture_a() -> None:
    # A: PFH = Σ λD,i = 1e-7 + 2e-7 + 5e-8 = 3.5e-7 1/h → SIL 2 band (1e-7 ≤ x < 1e-6)
    r = pfh62061.architecture_a([1e-7, 2e-7, 5e-8])
    assert r.pfh == pytest.approx(3.5e-7)
    assert r.architecture == "A"
    assert r.sil_band == 2
    assert "IEC 62061 basic subsystem architecture" in r.derivation.title
    assert cautions.QUALIFIED_PERSON in r.derivation.cautions


def test_architecture_b() -> None:
    # B: (1−β)² λD1 λD2 T1 + β (λD1 + λD2)/2 with λD1 = λD2 = 1e-6, β = 0.05, T1 = 87,600 h:
    # 0.95² · 1e-12 · 87,600 = 0.9025 · 8.76e-8 = 7.9059e-8
    # 0.05 · 2e-6 / 2 = 5e-8 → PFH = 1.29059e-7 1/h → SIL 2
    r = pfh62061.architecture_b(1e-6, 1e-6, 0.05, 87_600)
    assert r.pfh == pytest.approx(1.29059e-7, rel=1e-6)
    assert r.sil_band == 2


def test_architecture_c() -> None:
    # C: λD (1 − DC) = 2e-6 · (1 − 0.99) = 2e-8 1/h → SIL 3 band (1e-8 ≤ x < 1e-7)
    r = pfh62061.architecture_c([2e-6], [99])
    assert r.pfh == pytest.approx(2e-8)
    assert r.sil_band == 3
    # two elements: 2e-6 · 0.1 + 1e-6 · 0.4 = 2e-7 + 4e-7 = 6e-7 → SIL 2
    assert pfh62061.architecture_c([2e-6, 1e-6], [90, 60]).pfh == pytest.approx(6e-7)


def test_architecture_d() -> None:
    # D with λD1 = λD2 = 1e-6, DC1 = DC2 = 90 %, β = 0.02, T1 = 175,200 h, T2 = 24 h:
    # λ1λ2 (DC1+DC2) T2/2 = 1e-12 · 1.8 · 12 = 2.16e-11
    # λ1λ2 (2−DC1−DC2) T1/2 = 1e-12 · 0.2 · 87,600 = 1.752e-8
    # (1−0.02)² · (2.16e-11 + 1.752e-8) = 0.9604 · 1.75416e-8 = 1.684695e-8
    # β (λ1+λ2)/2 = 0.02 · 1e-6 = 2e-8 → PFH = 3.684695e-8 1/h → SIL 3
    r = pfh62061.architecture_d(1e-6, 1e-6, 90, 90, 0.02, 175_200, 24)
    assert r.pfh == pytest.approx(3.684695e-8, rel=1e-6)
    assert r.sil_band == 3


def test_sil_bands() -> None:
    # IEC 62061:2005 Table 3 [std, from memory]: SIL 1 1e-6..<1e-5, SIL 2 1e-7..<1e-6,
    # SIL 3 1e-8..<1e-7
    assert pfh62061.sil_for_pfh(9.99e-6) == 1
    assert pfh62061.sil_for_pfh(1e-6) == 1
    assert pfh62061.sil_for_pfh(9.99e-7) == 2
    assert pfh62061.sil_for_pfh(1e-7) == 2
    assert pfh62061.sil_for_pfh(1e-8) == 3
    assert pfh62061.sil_for_pfh(5e-9) == 3
    assert pfh62061.sil_for_pfh(1e-5) is None
    with pytest.raises(InputError):
        pfh62061.sil_for_pfh(0)


def test_outside_the_sil_bands_is_a_problem() -> None:
    # A: 8e-6 + 5e-6 = 1.3e-5 ≥ 1e-5 → no SIL
    r = pfh62061.architecture_a([8e-6, 5e-6])
    assert r.sil_band is None
    assert any("no SIL" in p for p in r.problems)
    # below SIL 3's lower edge: C, 1e-7 · (1 − 0.95) = 5e-9 → SIL 3 with a warning
    low = pfh62061.architecture_c([1e-7], [95])
    assert low.sil_band == 3
    assert any("below the SIL 3 band" in w for w in low.derivation.warnings)


def test_warnings_for_long_intervals() -> None:
    # λD · T1 = 1e-5 · 175,200 = 1.75 is not ≪ 1
    r = pfh62061.architecture_b(1e-5, 1e-5, 0.1, 175_200)
    assert any("λD · T1" in w for w in r.derivation.warnings)
    d = pfh62061.architecture_d(1e-7, 1e-7, 90, 90, 0.02, 100, 200)
    assert any("T2 = 200 h is longer than T1" in w for w in d.derivation.warnings)


@pytest.mark.parametrize(
    ("call", "field"),
    [
        (lambda: pfh62061.architecture_b(1e-6, 1e-6, 0.005, 1000), "beta"),
        (lambda: pfh62061.architecture_b(1e-6, 1e-6, 0.2, 1000), "beta"),
        (lambda: pfh62061.architecture_b(1e-6, 1e-6, 0.02, 0), "t1_hours"),
        (lambda: pfh62061.architecture_b(0, 1e-6, 0.02, 1000), "lambda_d1"),
        (lambda: pfh62061.architecture_b(1e-6, 2, 0.02, 1000), "lambda_d2"),
        (lambda: pfh62061.architecture_d(1e-6, 1e-6, 99.5, 90, 0.02, 1000, 1), "dc1_percent"),
        (lambda: pfh62061.architecture_d(1e-6, 1e-6, 90, -1, 0.02, 1000, 1), "dc2_percent"),
        (lambda: pfh62061.architecture_d(1e-6, 1e-6, 90, 90, 0.02, 1000, 0), "t2_hours"),
        (lambda: pfh62061.architecture_a([]), "lambda_d"),
        (lambda: pfh62061.architecture_c([1e-6], []), "dc_percent"),
        (lambda: pfh62061.architecture_c([1e-6], "9"), "dc_percent"),
        (lambda: pfh62061.architecture_c("x", [90]), "lambda_d"),
        (lambda: pfh62061.lambda_from_b10d(0, 60), "b10d"),
        (lambda: pfh62061.lambda_from_b10d(1e6, 60, lifetime_hours=-1), "lifetime_hours"),
        (lambda: pfh62061.architecture_a([1e-7], edition="1999"), "edition"),
    ],
)
def test_bad_input_is_refused(call: object, field: str) -> None:
    with pytest.raises(InputError) as exc:
        call()  # type: ignore[operator]
    assert exc.value.field == field


def test_dispatcher() -> None:
    # same hand values as above
    assert pfh62061.subsystem_pfh("A", [1e-7, 2e-7, 5e-8]).pfh == pytest.approx(3.5e-7)
    b = pfh62061.subsystem_pfh("b", [1e-6], beta=0.05, t1_hours=87_600)  # one value: both alike
    assert b.pfh == pytest.approx(1.29059e-7, rel=1e-6)
    assert pfh62061.subsystem_pfh("C", [2e-6], [99]).pfh == pytest.approx(2e-8)
    d = pfh62061.subsystem_pfh("D", [1e-6, 1e-6], [90], beta=0.02, t1_hours=175_200, t2_hours=24)
    assert d.pfh == pytest.approx(3.684695e-8, rel=1e-6)


@pytest.mark.parametrize(
    ("kwargs", "field", "words"),
    [
        ({"architecture": "E", "lambda_d": [1e-7]}, "architecture", "must be one of"),
        ({"architecture": "A", "lambda_d": []}, "lambda_d", "needs the λD"),
        ({"architecture": "A", "lambda_d": [1e-7], "beta": 0.02}, "beta", "not used"),
        ({"architecture": "B", "lambda_d": [1e-7], "t1_hours": 10}, "beta", "needs"),
        ({"architecture": "B", "lambda_d": [1e-7], "beta": 0.02}, "t1_hours", "needs"),
        ({"architecture": "C", "lambda_d": [1e-7]}, "dc_percent", "needs"),
        (
            {"architecture": "B", "lambda_d": [1e-7] * 3, "beta": 0.02, "t1_hours": 10},
            "lambda_d",
            "two channels",
        ),
        (
            {
                "architecture": "D",
                "lambda_d": [1e-7],
                "dc_percent": [90],
                "beta": 0.02,
                "t1_hours": 10,
            },
            "t2_hours",
            "needs",
        ),
        (
            {"architecture": "B", "lambda_d": [1e-7], "beta": 0.02, "t1_hours": 10, "t2_hours": 1},
            "t2_hours",
            "not used",
        ),
    ],
)
def test_dispatcher_names_the_missing_or_extra_parameter(
    kwargs: dict[str, object], field: str, words: str
) -> None:
    with pytest.raises(InputError) as exc:
        pfh62061.subsystem_pfh(**kwargs)  # type: ignore[arg-type]
    assert exc.value.field == field
    assert words in exc.value.message


def test_result_to_dict() -> None:
    out = pfh62061.architecture_a([1e-7]).to_dict()
    assert out["pfh"] == pytest.approx(1e-7)
    assert out["sil_band"] == 2
    assert out["architecture"] == "A"
    assert out["derivation"]["constants"][0]["source"] == "IEC 62061"

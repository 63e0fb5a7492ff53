"""Required level from the published methods.

Expected values are the published tables, recalled from memory:
ISO 13849-1:2015 Annex A Figure A.1 [std, from memory]; IEC 62061:2005/2021
Annex A matrix [std, from memory]; ANSI B11.0 example risk matrix [std, from memory].
"""

from __future__ import annotations

import itertools

import pytest
from hypothesis import given
from hypothesis import strategies as st

from riskreg.engineering import risk
from riskreg.engineering.derivation import InputError

# ISO 13849-1:2015 Annex A, Figure A.1 [std, from memory]
RISK_GRAPH = [
    ("S1", "F1", "P1", "a"),
    ("S1", "F1", "P2", "b"),
    ("S1", "F2", "P1", "b"),
    ("S1", "F2", "P2", "c"),
    ("S2", "F1", "P1", "c"),
    ("S2", "F1", "P2", "d"),
    ("S2", "F2", "P1", "d"),
    ("S2", "F2", "P2", "e"),
]


@pytest.mark.parametrize(("s", "f", "p", "expected"), RISK_GRAPH)
def test_risk_graph_matches_published_figure(s: str, f: str, p: str, expected: str) -> None:
    r = risk.required_pl(s, f, p)
    assert r.plr == expected
    assert r.derivation.constants[0].citation == "ISO 13849-1:2015 Annex A, Figure A.1"
    assert r.derivation.rests_on_recalled


def test_f1_carries_the_exposure_condition() -> None:
    r = risk.required_pl("S2", "F1", "P1")
    assert any("1/20" in w for w in r.derivation.warnings)
    assert not any("1/20" in w for w in risk.required_pl("S2", "F2", "P1").derivation.warnings)


@pytest.mark.parametrize(
    ("args", "field"),
    [
        (("S3", "F1", "P1"), "severity"),
        (("S1", "F0", "P1"), "frequency"),
        (("S1", "F1", "p1"), "avoidance"),
    ],
)
def test_risk_graph_refuses_unknown_parameters(args: tuple[str, str, str], field: str) -> None:
    with pytest.raises(InputError) as exc:
        risk.required_pl(*args)
    assert exc.value.field == field
    assert "must be one of" in exc.value.message


def test_unknown_edition_is_refused() -> None:
    with pytest.raises(InputError, match="edition"):
        risk.required_pl("S1", "F1", "P1", edition="1999")


LEVEL = {"S1": 0, "S2": 1, "F1": 0, "F2": 1, "P1": 0, "P2": 1}


@given(
    st.sampled_from(list(itertools.product(["S1", "S2"], ["F1", "F2"], ["P1", "P2"]))),
    st.sampled_from(["S", "F", "P"]),
)
def test_plr_never_falls_when_a_parameter_rises(sfp: tuple[str, str, str], which: str) -> None:
    """Monotonicity of the risk graph: raising S, F or P never lowers PLr."""
    s, f, p = sfp
    base = risk.pl_rank(risk.required_pl(s, f, p).plr)
    raised = {"S": ("S2", f, p), "F": (s, "F2", p), "P": (s, f, "P2")}[which]
    assert risk.pl_rank(risk.required_pl(*raised).plr) >= base


# IEC 62061 Annex A matrix (cells as in REFERENCE.md §3) [std, from memory]
@pytest.mark.parametrize(
    ("se", "fr", "pr", "av", "ci", "sil", "outcome"),
    [
        (4, 5, 5, 5, 15, 3, "sil"),  # Se 4, CI 14-15 → SIL 3
        (4, 5, 4, 3, 12, 3, "sil"),  # Se 4, CI 11-13 → SIL 3
        (4, 2, 1, 1, 4, 2, "sil"),  # Se 4, CI 3-4 → SIL 2
        (3, 5, 4, 3, 12, 2, "sil"),  # Se 3, CI 11-13 → SIL 2
        (3, 3, 3, 3, 9, 1, "sil"),  # Se 3, CI 8-10 → SIL 1
        (3, 3, 2, 1, 6, None, "other measures"),
        (3, 2, 1, 1, 4, None, "none"),
        (2, 5, 5, 5, 15, 2, "sil"),
        (2, 5, 4, 3, 12, 1, "sil"),
        (2, 4, 3, 1, 8, None, "other measures"),
        (1, 5, 5, 5, 15, 1, "sil"),
        (1, 5, 5, 3, 13, None, "other measures"),
        (1, 4, 3, 3, 10, None, "none"),
    ],
)
def test_sil_matrix(
    se: int, fr: int, pr: int, av: int, ci: int, sil: int | None, outcome: str
) -> None:
    r = risk.required_sil(se, fr, pr, av)
    assert (r.class_sum, r.sil, r.outcome) == (ci, sil, outcome)


def test_sil_refuses_av_2() -> None:
    with pytest.raises(InputError, match="avoidance"):
        risk.required_sil(3, 3, 3, 2)


def test_fr_1_warns_about_edition() -> None:
    assert risk.required_sil(3, 1, 3, 3).derivation.warnings


# ANSI B11.0 example matrix [std, from memory]
@pytest.mark.parametrize(
    ("severity", "probability", "level"),
    [
        ("catastrophic", "very likely", "high"),
        ("minor", "very likely", "medium"),
        ("moderate", "likely", "medium"),
        ("minor", "likely", "low"),
        ("serious", "unlikely", "medium"),
        ("moderate", "unlikely", "low"),
        ("minor", "remote", "negligible"),
        ("catastrophic", "remote", "low"),
    ],
)
def test_b11_matrix(severity: str, probability: str, level: str) -> None:
    assert risk.b11_risk_level(severity, probability).risk_level == level


def test_results_render_as_plain_dicts() -> None:
    d = risk.required_pl("S2", "F2", "P2").to_dict()
    assert d["plr"] == "e"
    assert d["derivation"]["rests_on_recalled"] is True
    assert d["derivation"]["constants"][0]["status"] == "recalled"

"""`riskreg calc compare`, `calc interlock` and `calc light-curtain`.

Expected values are worked out by hand: ISO 13855:2010 6.2.3 and clause 9,
ISO 12100:2010 6.3.2, ISO 14119:2013, ISO/TR 24119:2015 [std, from memory];
floating blanking adds the blanked size to d [practice].
"""

from __future__ import annotations

import json
from typing import Any

import pytest

from riskreg import cli


def _run(args: list[str], capsys: pytest.CaptureFixture[str]) -> tuple[int, str, str]:
    with pytest.raises(SystemExit) as exc:
        cli.main(args)
    out, err = capsys.readouterr()
    code = exc.value.code
    return (code if isinstance(code, int) else 1), out, err


def _json(args: list[str], capsys: pytest.CaptureFixture[str]) -> dict[str, Any]:
    code, out, err = _run([*args, "--json"], capsys)
    assert code == 0, err
    data = json.loads(out)
    assert isinstance(data, dict)
    return data


def _one_line_error(args: list[str], capsys: pytest.CaptureFixture[str]) -> str:
    code, out, err = _run(args, capsys)
    assert code == 2
    assert out == ""
    lines = err.strip().splitlines()
    assert len(lines) == 1, err
    assert "Traceback" not in err
    assert lines[0].startswith("riskreg: error: ")
    return lines[0]


LC = [
    "calc", "light-curtain", "--type", "4", "--resolution", "14mm",
    "--restart-interlock", "--no-person-inside",
    "--stopping-time", "250ms", "--response-time", "0s",
]  # fmt: skip


def test_light_curtain_floating_blanking_json(capsys: pytest.CaptureFixture[str]) -> None:
    # [practice] d = 14 + 10 = 24 mm; ISO 13855:2010 6.2.3 [std, from memory]: C = 8(24 − 14)
    # = 80; 2000 × 0.25 + 80 = 580 > 500 → 1600 × 0.25 + 80 = 480 → at least 500 mm;
    # installed 480 mm → 20 mm short.
    d = _json(
        [*LC, "--blanking", "floating", "--blanked-size", "10mm", "--installed-distance", "480mm"],
        capsys,
    )
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
    assert d["max_pl"] == "e"
    assert d["effective_resolution_mm"] == pytest.approx(24.0)
    assert d["distance"]["distance_mm"] == pytest.approx(500.0)
    assert d["distance"]["k_mm_per_s"] == 1600
    assert d["distance_ok"] is False
    assert d["shortfall_mm"] == pytest.approx(20.0)
    assert d["problems"]
    assert d["derivation"]["cautions"]


def test_light_curtain_text(capsys: pytest.CaptureFixture[str]) -> None:
    # ISO 13855:2010 6.2.3 [std, from memory]: 2000 × 0.25 + 0 = 500 mm, not > 500.
    code, out, err = _run([*LC, "--plr", "d"], capsys)
    assert code == 0, err
    assert "Safety distance S: 500 mm" in out
    assert "Highest PL of the type: e" in out
    assert "Cautions:" in out


def test_light_curtain_beam_heights(capsys: pytest.CaptureFixture[str]) -> None:
    # ISO 13855:2010 6.2.5 [std, from memory]: d = 80 mm > 70 → 3 beams:
    # S = 1600 × 0.25 + 850 = 1250 mm.
    args = [*LC, "--beam-height", "300mm", "--beam-height", "700mm", "--beam-height", "1100mm"]
    args[args.index("14mm")] = "80mm"
    d = _json(args, capsys)
    assert d["distance"]["device"] == "multi-beam"
    assert d["distance"]["distance_mm"] == pytest.approx(1250.0)


@pytest.mark.parametrize(
    ("change", "needle"),
    [
        ({"4": "3"}, "not a light-curtain type"),
        ({"14mm": "14"}, "has no unit"),
        ({"--restart-interlock": "--muting"}, "--restart-interlock or --no-restart-interlock"),
        ({"--no-person-inside": "--muting"}, "--person-inside or --no-person-inside"),
        ({"250ms": "-1s"}, "--stopping-time"),
    ],
)
def test_light_curtain_bad_input(
    change: dict[str, str], needle: str, capsys: pytest.CaptureFixture[str]
) -> None:
    args = [change.get(a, a) for a in LC]
    assert needle in _one_line_error(args, capsys)


def test_light_curtain_bad_beam_height(capsys: pytest.CaptureFixture[str]) -> None:
    line = _one_line_error([*LC, "--beam-height", "300mm", "--beam-height", "-4mm"], capsys)
    assert "--beam-height (no. 2)" in line


def test_interlock_json(capsys: pytest.CaptureFixture[str]) -> None:
    # ISO/TR 24119 [std, from memory: check ISO/TR 24119 Table]: 2 guards in series → DC
    # below 90 %; 95 % claimed → problem. ISO 13855:2010 clause 9 [std, from memory]:
    # 300 mm / 1600 mm/s = 0.1875 s < T = 0.3 s → guard locking needed, not fitted → problem.
    d = _json(
        [
            "calc", "interlock", "--type", "2", "--coding", "high", "--motivation", "low",
            "--switches", "2", "--guards", "2", "--claimed-dc", "95",
            "--stopping-time", "300ms", "--distance", "300mm",
        ],
        capsys,
    )  # fmt: skip
    assert set(d) == {
        "device_type",
        "coding",
        "dc_cap_percent",
        "fault_masking",
        "guard_locking_needed",
        "problems",
        "warnings",
        "derivation",
    }
    assert d["fault_masking"] is True
    assert d["dc_cap_percent"] == 90.0
    assert d["guard_locking_needed"] is True
    assert len(d["problems"]) == 2


def test_interlock_text_with_measures(capsys: pytest.CaptureFixture[str]) -> None:
    code, out, err = _run(
        [
            "calc",
            "interlock",
            "--type",
            "1",
            "--motivation",
            "high",
            "--measure",
            "hidden mounting",
        ],
        capsys,
    )
    assert code == 0, err
    assert "Problems: 0" in out
    assert "Guard locking: not checked" in out


@pytest.mark.parametrize(
    ("args", "needle"),
    [
        (["--type", "2", "--motivation", "high"], "--coding"),
        (["--type", "1", "--motivation", "low", "--stopping-time", "0.3s"], "--distance"),
        (["--type", "1", "--motivation", "low", "--measure", " "], "--measure (no. 1)"),
        (["--type", "1", "--motivation", "low", "--claimed-dc", "120"], "--claimed-dc"),
        (["--type", "5", "--motivation", "low"], "--type"),
    ],
)
def test_interlock_bad_input(
    args: list[str], needle: str, capsys: pytest.CaptureFixture[str]
) -> None:
    assert needle in _one_line_error(["calc", "interlock", *args], capsys)


def test_compare_json(capsys: pytest.CaptureFixture[str]) -> None:
    # ISO 12100:2010 6.3.2.3 [std, from memory]: frequent access → the light curtain before
    # the fixed guard, which does not suit access in normal operation.
    d = _json(
        [
            "calc", "compare", "--access", "frequent", "--plr", "d",
            "--candidate", "fixed_guard,cost=400",
            "--candidate", "light_curtain, pl=e, distance=500mm, space=600mm, cost=3000",
        ],
        capsys,
    )  # fmt: skip
    assert set(d) == {"options", "recommended", "derivation"}
    assert [o["kind"] for o in d["options"]] == ["light_curtain", "fixed_guard"]
    assert d["options"][0]["fits_space"] is True
    assert d["options"][0]["meets_plr"] is True
    assert d["options"][1]["suits_access"] is False
    assert d["recommended"] == "light_curtain"


def test_compare_text_without_recommendation(capsys: pytest.CaptureFixture[str]) -> None:
    code, out, err = _run(
        ["calc", "compare", "--access", "none", "--candidate", "warning", "--ejection"], capsys
    )
    assert code == 0, err
    assert "Recommended: none" in out
    assert "no candidate meets every criterion" in out


@pytest.mark.parametrize(
    ("candidate", "needle"),
    [
        ("guard", "the kind must come first"),
        ("light_curtain,colour=red", "is not one of"),
        ("light_curtain,pl", "is not one of"),
        ("light_curtain,cost=1,cost=2", "given twice"),
        ("light_curtain,distance=500", "has no unit"),
        ("light_curtain,cost=cheap", "cost must be a number"),
        ("light_curtain,pl=z", "--candidate (no. 1) pl="),
        ("light_curtain,space=-5mm", "--candidate (no. 1) space="),
    ],
)
def test_compare_bad_candidate(
    candidate: str, needle: str, capsys: pytest.CaptureFixture[str]
) -> None:
    line = _one_line_error(
        ["calc", "compare", "--access", "frequent", "--candidate", candidate], capsys
    )
    assert needle in line


def test_compare_bad_edition(capsys: pytest.CaptureFixture[str]) -> None:
    line = _one_line_error(
        ["calc", "compare", "--access", "none", "--candidate", "fixed_guard", "--edition", "1999"],
        capsys,
    )
    assert "--edition" in line

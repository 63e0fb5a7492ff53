"""`riskreg calc pl | mttfd | channel-mttfd | dcavg | series | pfh | lambda-d`.

Values checked are the hand-worked examples of tests/engineering/test_pl.py and
test_pfh62061.py (ISO 13849-1 and IEC 62061 [std, from memory]).
"""

from __future__ import annotations

import json
from typing import Any

import pytest

from riskreg.cli import main


def call(capsys: pytest.CaptureFixture[str], *argv: str) -> tuple[int, str, str]:
    with pytest.raises(SystemExit) as exc:
        main(list(argv))
    out, err = capsys.readouterr()
    code = exc.value.code
    return (code if isinstance(code, int) else 1), out, err


def ok_json(capsys: pytest.CaptureFixture[str], *argv: str) -> dict[str, Any]:
    code, out, err = call(capsys, *argv, "--json")
    assert code == 0, err
    data: dict[str, Any] = json.loads(out)
    return data


def bad(capsys: pytest.CaptureFixture[str], *argv: str) -> str:
    code, out, err = call(capsys, *argv)
    assert code == 2
    assert out == ""
    lines = err.strip().splitlines()
    assert len(lines) == 1, err
    assert "Traceback" not in err
    assert lines[0].startswith("riskreg: error: ")
    return lines[0]


def test_pl_cat_b_band_edge(capsys: pytest.CaptureFixture[str]) -> None:
    # Cat B, MTTFd 10.5 y: PFHd = 1/(10.5 · 8760) = 1.0872e-5 → PL a
    # ISO 13849-1:2015 Table 2 bands [std, from memory]
    d = ok_json(capsys, "calc", "pl", "--category", "B", "--mttfd", "10.5", "--dcavg", "0")
    for key in ("pl", "mttfd_band", "dcavg_band", "pfhd", "problems"):
        assert key in d
    assert d["pl"] == "a"
    assert d["mttfd_band"] == "medium"
    assert d["dcavg_band"] == "none"
    assert d["pfhd"] == pytest.approx(1.0872e-5, rel=1e-4)
    assert d["problems"] == []
    assert d["table_pl"] == "b"


def test_pl_cat_3_two_channels(capsys: pytest.CaptureFixture[str]) -> None:
    # 2/3 · [100 + 20 − 1/(1/100 + 1/20)] = 68.889 y → high; DC 95 % medium → PL d
    # ISO 13849-1:2006 Table 7 [std, from memory]
    d = ok_json(
        capsys,
        "calc",
        "pl",
        "--category",
        "3",
        "--mttfd",
        "100",
        "--mttfd",
        "20",
        "--dcavg",
        "95",
        "--ccf",
        "70",
    )
    assert d["pl"] == "d"
    assert d["pfhd"] is None
    assert d["mttfd_years"] == pytest.approx(68.889, abs=1e-3)


def test_pl_problems_are_reported_not_hidden(capsys: pytest.CaptureFixture[str]) -> None:
    d = ok_json(capsys, "calc", "pl", "--category", "2", "--mttfd", "50", "--dcavg", "95")
    assert d["pl"] is None
    assert any("Test rate" in p for p in d["problems"])
    assert any("CCF" in p for p in d["problems"])
    d2 = ok_json(
        capsys,
        "calc",
        "pl",
        "--category",
        "2",
        "--mttfd",
        "50",
        "--dcavg",
        "95",
        "--ccf",
        "65",
        "--test-rate-ratio",
        "100",
    )
    assert d2["pl"] == "d"  # Cat 2, DC medium, MTTFd high → d (Table 7) [std, from memory]
    d1 = ok_json(
        capsys, "calc", "pl", "--category", "1", "--mttfd", "50", "--dcavg", "0", "--well-tried"
    )
    assert d1["pl"] == "c"  # 1/(50 · 8760) = 2.283e-6 → c


def test_pl_text_output(capsys: pytest.CaptureFixture[str]) -> None:
    code, out, _ = call(
        capsys, "calc", "pl", "--category", "4", "--mttfd", "20", "--dcavg", "99", "--ccf", "70"
    )
    assert code == 0
    assert "PL: not determined" in out
    assert "needs high MTTFd" in out
    assert "qualified person" in out


@pytest.mark.parametrize(
    "argv",
    [
        ["calc", "pl", "--category", "5", "--mttfd", "50", "--dcavg", "90"],
        ["calc", "pl", "--category", "3", "--mttfd", "-1", "--dcavg", "90"],
        ["calc", "pl", "--category", "3", "--mttfd", "50", "--dcavg", "120"],
        [
            "calc",
            "pl",
            "--category",
            "3",
            "--mttfd",
            "5",
            "--mttfd",
            "5",
            "--mttfd",
            "5",
            "--dcavg",
            "90",
        ],
        ["calc", "pl", "--category", "3", "--mttfd", "abc", "--dcavg", "90"],
        ["calc", "pl", "--category", "3", "--dcavg", "90"],
        ["calc", "pl", "--category", "3", "--mttfd", "50", "--dcavg", "90", "--edition", "1999"],
    ],
)
def test_pl_bad_input(capsys: pytest.CaptureFixture[str], argv: list[str]) -> None:
    bad(capsys, *argv)


def test_mttfd(capsys: pytest.CaptureFixture[str]) -> None:
    # nop = 220 · 16 · 3600 / 60 = 211,200; MTTFd = 2e6 / 21,120 = 94.697 y;
    # T10d = 2e6 / 211,200 = 9.470 y — ISO 13849-1 Annex C.4 [std, from memory]
    d = ok_json(
        capsys,
        "calc",
        "mttfd",
        "--b10d",
        "2000000",
        "--days-per-year",
        "220",
        "--hours-per-day",
        "16",
        "--cycle-time",
        "60s",
    )
    assert d["nop"] == pytest.approx(211_200)
    assert d["mttfd_years"] == pytest.approx(94.697, abs=1e-3)
    assert d["t10d_years"] == pytest.approx(9.470, abs=1e-3)
    # same duty with the cycle time in ms
    d2 = ok_json(
        capsys,
        "calc",
        "mttfd",
        "--b10d",
        "2000000",
        "--days-per-year",
        "220",
        "--hours-per-day",
        "16",
        "--cycle-time",
        "60000ms",
    )
    assert d2["nop"] == pytest.approx(211_200)
    # typical value: emergency stop B10d 100,000 (Table C.1) [std, from memory];
    # nop = 200 · 8 · 3600 / 3600 = 1,600 → MTTFd = 100,000 / 160 = 625 y
    d3 = ok_json(
        capsys,
        "calc",
        "mttfd",
        "--typical",
        "emergency-stop",
        "--days-per-year",
        "200",
        "--hours-per-day",
        "8",
        "--cycle-time",
        "3600s",
    )
    assert d3["mttfd_years"] == pytest.approx(625)


@pytest.mark.parametrize(
    "argv",
    [
        ["--b10d", "2e6", "--days-per-year", "220", "--hours-per-day", "16", "--cycle-time", "60"],
        ["--b10d", "2e6", "--days-per-year", "220", "--hours-per-day", "16", "--cycle-time", "-1s"],
        ["--b10d", "2e6", "--days-per-year", "220", "--hours-per-day", "30", "--cycle-time", "60s"],
        ["--days-per-year", "220", "--hours-per-day", "16", "--cycle-time", "60s"],
        [
            "--b10d",
            "2e6",
            "--typical",
            "emergency-stop",
            "--days-per-year",
            "220",
            "--hours-per-day",
            "16",
            "--cycle-time",
            "60s",
        ],
    ],
)
def test_mttfd_bad_input(capsys: pytest.CaptureFixture[str], argv: list[str]) -> None:
    bad(capsys, "calc", "mttfd", *argv)


def test_channel_mttfd_and_dcavg(capsys: pytest.CaptureFixture[str]) -> None:
    # 1/50 + 1/100 + 1/150 = 11/300 → 27.2727 y (Annex D) [std, from memory]
    d = ok_json(
        capsys, "calc", "channel-mttfd", "--mttfd", "50", "--mttfd", "100", "--mttfd", "150"
    )
    assert d["mttfd_years"] == pytest.approx(27.2727, abs=1e-4)
    # (99/50 + 90/100 + 60/20) / (1/50 + 1/100 + 1/20) = 5.88 / 0.08 = 73.5 % (Annex E)
    d2 = ok_json(
        capsys,
        "calc",
        "dcavg",
        "--dc",
        "99",
        "--mttfd",
        "50",
        "--dc",
        "90",
        "--mttfd",
        "100",
        "--dc",
        "60",
        "--mttfd",
        "20",
    )
    assert d2["dcavg_percent"] == pytest.approx(73.5)
    assert d2["dcavg_band"] == "low"
    bad(capsys, "calc", "dcavg", "--dc", "99", "--mttfd", "50", "--dc", "90")


def test_series_by_pfhd(capsys: pytest.CaptureFixture[str]) -> None:
    # 2e-7 + 3e-7 + 4.5e-7 = 9.5e-7 → PL d (Table 2 bands) [std, from memory]
    d = ok_json(capsys, "calc", "series", "--pfhd", "2e-7", "--pfhd", "3e-7", "--pfhd", "4.5e-7")
    assert d["pfhd_total"] == pytest.approx(9.5e-7)
    assert d["pl"] == "d"
    # paired with PLs: 2e-8 + 3e-8 = 5e-8 → e band, capped at the lowest PL d
    d2 = ok_json(
        capsys, "calc", "series", "--pfhd", "2e-8", "--pl", "e", "--pfhd", "3e-8", "--pl", "d"
    )
    assert d2["pl"] == "d"
    # 5e-5 + 6e-5 = 1.1e-4: outside the bands → no PL, a problem
    d3 = ok_json(capsys, "calc", "series", "--pfhd", "5e-5", "--pfhd", "6e-5")
    assert d3["pl"] is None
    assert d3["problems"]


def test_series_by_count(capsys: pytest.CaptureFixture[str]) -> None:
    # Table 11: four subsystems at PL e → d; four at PL a → not allowed [std, from memory]
    d = ok_json(capsys, "calc", "series", "--pl", "e", "--pl", "e", "--pl", "e", "--pl", "e")
    assert (d["pl"], d["lowest"], d["n_low"]) == ("d", "e", 4)
    d2 = ok_json(capsys, "calc", "series", "--pl", "a", "--pl", "a", "--pl", "a", "--pl", "a")
    assert d2["pl"] is None
    assert d2["problems"]
    code, out, _ = call(
        capsys, "calc", "series", "--pl", "a", "--pl", "a", "--pl", "a", "--pl", "a"
    )
    assert code == 0 and "not allowed" in out


@pytest.mark.parametrize(
    "argv",
    [
        [],
        ["--pfhd", "2"],
        ["--pfhd", "0"],
        ["--pfhd", "-1e-7"],
        ["--pfhd", "1e-7", "--pfhd", "1e-7", "--pl", "d"],
        ["--pl", "f"],
    ],
)
def test_series_bad_input(capsys: pytest.CaptureFixture[str], argv: list[str]) -> None:
    bad(capsys, "calc", "series", *argv)


def test_pfh(capsys: pytest.CaptureFixture[str]) -> None:
    # D: 0.9604 · (2.16e-11 + 1.752e-8) + 2e-8 = 3.684695e-8 → SIL 3 (IEC 62061) [std, from memory]
    d = ok_json(
        capsys,
        "calc",
        "pfh",
        "--architecture",
        "D",
        "--lambda-d",
        "1e-6",
        "--dc",
        "90",
        "--beta",
        "0.02",
        "--t1-hours",
        "175200",
        "--t2-hours",
        "24",
    )
    assert d["pfh"] == pytest.approx(3.684695e-8, rel=1e-6)
    assert d["sil_band"] == 3
    assert d["architecture"] == "D"
    # A: 1e-7 + 2e-7 + 5e-8 = 3.5e-7 → SIL 2
    d2 = ok_json(
        capsys,
        "calc",
        "pfh",
        "--architecture",
        "A",
        "--lambda-d",
        "1e-7",
        "--lambda-d",
        "2e-7",
        "--lambda-d",
        "5e-8",
    )
    assert d2["pfh"] == pytest.approx(3.5e-7)
    assert d2["sil_band"] == 2
    # B: 0.9025 · 1e-12 · 87,600 + 0.05 · 1e-6 = 1.29059e-7 → SIL 2
    d3 = ok_json(
        capsys,
        "calc",
        "pfh",
        "--architecture",
        "B",
        "--lambda-d",
        "1e-6",
        "--lambda-d",
        "1e-6",
        "--beta",
        "0.05",
        "--t1-hours",
        "87600",
    )
    assert d3["pfh"] == pytest.approx(1.29059e-7, rel=1e-6)
    code, out, _ = call(
        capsys, "calc", "pfh", "--architecture", "C", "--lambda-d", "2e-6", "--dc", "99"
    )
    assert code == 0 and "SIL band: SIL 3" in out  # 2e-6 · 0.01 = 2e-8


@pytest.mark.parametrize(
    "argv",
    [
        ["--architecture", "E", "--lambda-d", "1e-7"],
        ["--architecture", "B", "--lambda-d", "1e-7", "--t1-hours", "100"],
        ["--architecture", "B", "--lambda-d", "1e-7", "--beta", "0.5", "--t1-hours", "100"],
        ["--architecture", "A", "--lambda-d", "1e-7", "--dc", "90"],
        ["--architecture", "C", "--lambda-d", "1e-7", "--dc", "99.5"],
        [
            "--architecture",
            "D",
            "--lambda-d",
            "1e-7",
            "--dc",
            "90",
            "--beta",
            "0.02",
            "--t1-hours",
            "0",
            "--t2-hours",
            "1",
        ],
    ],
)
def test_pfh_bad_input(capsys: pytest.CaptureFixture[str], argv: list[str]) -> None:
    line = bad(capsys, "calc", "pfh", *argv)
    assert "must" in line or "needs" in line or "not used" in line or "Invalid" in line


def test_lambda_d(capsys: pytest.CaptureFixture[str]) -> None:
    # λD = 0.1 · 60 / 2e6 = 3e-6 1/h; T10d = 2e6 / 60 = 33,333 h (IEC 62061) [std, from memory]
    d = ok_json(
        capsys,
        "calc",
        "lambda-d",
        "--b10d",
        "2e6",
        "--ops-per-hour",
        "60",
        "--lifetime-hours",
        "175200",
    )
    assert d["lambda_d_per_h"] == pytest.approx(3e-6)
    assert any("T10d" in w for w in d["derivation"]["warnings"])
    bad(capsys, "calc", "lambda-d", "--b10d", "0", "--ops-per-hour", "60")

"""`riskreg calc distance`, `stopping-time`, `guard-locking` and `gap`.

Expected values are worked out by hand from ISO 13855:2010 and ISO 13854
[std, from memory]; the arithmetic is in the comments.
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


def _one_line_error(code: int, out: str, err: str) -> str:
    assert code == 2
    assert out == ""
    lines = err.strip().splitlines()
    assert len(lines) == 1, err
    assert "Traceback" not in err
    assert lines[0].startswith("riskreg: error: ")
    return lines[0]


def test_light_curtain_json(capsys: pytest.CaptureFixture[str]) -> None:
    # ISO 13855:2010 6.2.3 [std, from memory]: T = 280 ms + 20 ms = 0.3 s; C = 8(30 − 14) = 128;
    # 2000·0.3 + 128 = 728 > 500 → 1600·0.3 + 128 = 608 mm = 608/25.4 = 23.937 in.
    d = _json(
        [
            "calc", "distance", "--device", "light-curtain",
            "--stopping-time", "280ms", "--response-time", "20ms", "--resolution", "30mm",
        ],
        capsys,
    )  # fmt: skip
    assert d["distance_mm"] == pytest.approx(608.0)
    assert d["distance_in"] == pytest.approx(23.937008, rel=1e-7)
    assert d["k_mm_per_s"] == 1600
    assert d["c_mm"] == pytest.approx(128.0)
    assert d["t_s"] == pytest.approx(0.3)
    assert d["device"] == "light-curtain"
    assert d["derivation"]["rests_on_recalled"] is True
    assert d["derivation"]["cautions"]


def test_resolution_in_inches(capsys: pytest.CaptureFixture[str]) -> None:
    # 0.55 in = 13.97 mm → C = 8(13.97 − 14) < 0 → 0; 2000·0.2 = 400 mm.
    d = _json(
        [
            "calc", "distance", "--device", "light-curtain",
            "--stopping-time", "0.2s", "--response-time", "0s", "--resolution", "0.55in",
        ],
        capsys,
    )  # fmt: skip
    assert d["distance_mm"] == pytest.approx(400.0)
    assert d["c_mm"] == 0


@pytest.mark.parametrize(
    ("extra", "expected_mm", "c"),
    [
        # ISO 13855:2010 [std, from memory], T = 0.25 s
        (["--device", "multi-beam", "--beams", "3"], 1250.0, 850),  # 1600·0.25 + 850
        (["--device", "multi-beam", "--beams", "1"], 1600.0, 1200),  # 1600·0.25 + 1200
        # 1600·0.25 + (1200 − 0.4·500) = 400 + 1000
        (["--device", "parallel", "--height", "500mm", "--resolution", "60mm"], 1400.0, 1000),
        (["--device", "mat"], 1600.0, 1200),  # 1600·0.25 + 1200
        (["--device", "two-hand"], 650.0, 250),  # 1600·0.25 + 250
        (["--device", "two-hand", "--shielded"], 400.0, 0),  # 1600·0.25 + 0
        (["--device", "interlocked-guard", "--opening-c", "120mm"], 520.0, 120),  # 400 + 120
    ],
)
def test_other_devices_json(
    extra: list[str], expected_mm: float, c: float, capsys: pytest.CaptureFixture[str]
) -> None:
    d = _json(
        ["calc", "distance", *extra, "--stopping-time", "0.25s", "--response-time", "0s"],
        capsys,
    )
    assert d["distance_mm"] == pytest.approx(expected_mm)
    assert d["c_mm"] == pytest.approx(c)
    assert d["k_mm_per_s"] == 1600


def test_reach_over_options(capsys: pytest.CaptureFixture[str]) -> None:
    # C_RO = 900 mm given (a test input): S_RO = 1600·0.3 + 900 = 1380 > S_RT 608 → 1380 mm.
    d = _json(
        [
            "calc", "distance", "--device", "light-curtain",
            "--stopping-time", "0.3s", "--response-time", "0s", "--resolution", "30mm",
            "--hazard-height", "1400mm", "--top-beam-height", "1.2m", "--reach-over-c", "900mm",
        ],
        capsys,
    )  # fmt: skip
    assert d["distance_mm"] == pytest.approx(1380.0)
    assert d["governed_by"].startswith("reach-over")


def test_edition_option(capsys: pytest.CaptureFixture[str]) -> None:
    d = _json(
        [
            "calc", "distance", "--device", "mat", "--stopping-time", "0.2s",
            "--response-time", "0s", "--edition", "2024",
        ],
        capsys,
    )  # fmt: skip
    assert any("to be checked" in w for w in d["derivation"]["warnings"])


def test_text_output(capsys: pytest.CaptureFixture[str]) -> None:
    code, out, _ = _run(
        [
            "calc", "distance", "--device", "two-hand",
            "--stopping-time", "100ms", "--response-time", "0s",
        ],
        capsys,
    )  # fmt: skip
    assert code == 0
    # 1600·0.1 + 250 = 410 mm = 410/25.4 = 16.14 in
    assert "Safety distance S: 410 mm (16.14 in)" in out
    assert "qualified person" in out


@pytest.mark.parametrize(
    ("args", "needle"),
    [
        (["--device", "light-curtain", "--resolution", "0mm"], "--resolution"),
        (["--device", "light-curtain", "--resolution", "80mm"], "multi-beam"),
        (["--device", "light-curtain"], "--resolution: is required"),
        (["--device", "parallel", "--resolution", "14mm"], "--height: is required"),
        (["--device", "parallel", "--resolution", "14mm", "--height", "1.2m"], "0 to 1000 mm"),
        (["--device", "multi-beam", "--beams", "7"], "--beams"),
        (["--device", "interlocked-guard"], "--opening-c: is required"),
        (["--device", "mat", "--resolution", "14mm"], "does not apply"),
        (["--device", "mat", "--edition", "1999"], "edition"),
        (["--device", "mat", "--hazard-height", "1m"], "--hazard-height"),
    ],
)
def test_bad_distance_input_is_one_line_exit_2(
    args: list[str], needle: str, capsys: pytest.CaptureFixture[str]
) -> None:
    line = _one_line_error(
        *_run(
            ["calc", "distance", *args, "--stopping-time", "0.2s", "--response-time", "0s"], capsys
        )
    )
    assert needle in line


@pytest.mark.parametrize("form", [["--stopping-time", "-0.1s"], ["--stopping-time=-0.1s"]])
def test_negative_stopping_time_exit_2(form: list[str], capsys: pytest.CaptureFixture[str]) -> None:
    line = _one_line_error(
        *_run(
            [
                "calc",
                "distance",
                "--device",
                "mat",
                *form,
                "--response-time",
                "0s",
            ],
            capsys,
        )  # fmt: skip
    )
    assert "--stopping-time" in line
    assert "at least 0 s" in line


def test_time_without_unit_exit_2(capsys: pytest.CaptureFixture[str]) -> None:
    line = _one_line_error(
        *_run(
            [
                "calc",
                "distance",
                "--device",
                "mat",
                "--stopping-time",
                "0.2",
                "--response-time",
                "0s",
            ],
            capsys,
        )  # fmt: skip
    )
    assert "no unit" in line


def test_stopping_time_command(capsys: pytest.CaptureFixture[str]) -> None:
    # worst 0.22 s × 1.10 = 0.242 s < brake-monitor limit 0.25 s → 0.25 s, brake-monitor limit;
    # mean (0.20 + 0.22 + 0.21)/3 = 0.21; spread 0.02; sample std 0.01.
    d = _json(
        [
            "calc", "stopping-time", "--trial", "200ms", "--trial", "0.22s", "--trial", "210ms",
            "--allowance", "10", "--brake-monitor-limit", "250ms",
        ],
        capsys,
    )  # fmt: skip
    assert d["t_used_s"] == pytest.approx(0.25)
    assert d["basis"] == "brake-monitor limit"
    assert d["worst_s"] == pytest.approx(0.22)
    assert d["mean_s"] == pytest.approx(0.21)
    assert d["spread_s"] == pytest.approx(0.02)
    assert d["std_s"] == pytest.approx(0.01)
    assert d["n_trials"] == 3


def test_stopping_time_text(capsys: pytest.CaptureFixture[str]) -> None:
    code, out, _ = _run(["calc", "stopping-time", "--trial", "300ms"], capsys)
    assert code == 0
    assert "Stopping time to use: 0.3 s" in out
    assert "Standard deviation: —" in out


@pytest.mark.parametrize(
    ("args", "needle"),
    [
        (["--trial", "0.2s", "--trial", "0s"], "--trial (no. 2)"),
        (["--trial", "-0.2s"], "--trial (no. 1)"),
        (["--trial", "0.2s", "--allowance", "150"], "--allowance"),
        (["--trial", "0.2s", "--brake-monitor-limit", "0s"], "--brake-monitor-limit"),
        ([], "--trial"),
    ],
)
def test_bad_stopping_time_input(
    args: list[str], needle: str, capsys: pytest.CaptureFixture[str]
) -> None:
    line = _one_line_error(*_run(["calc", "stopping-time", *args], capsys))
    assert needle in line


def test_guard_locking_command(capsys: pytest.CaptureFixture[str]) -> None:
    # T = 0.3 + 0.02 = 0.32 s; (700 − 200) mm / 1600 mm/s = 0.3125 s < 0.32 → needed.
    d = _json(
        [
            "calc", "guard-locking", "--stopping-time", "300ms", "--response-time", "20ms",
            "--distance", "700mm", "--opening-c", "200mm",
        ],
        capsys,
    )  # fmt: skip
    assert d["guard_locking_needed"] is True
    assert d["time_to_reach_s"] == pytest.approx(0.3125)
    assert d["stopping_time_s"] == pytest.approx(0.32)


def test_guard_locking_with_own_time(capsys: pytest.CaptureFixture[str]) -> None:
    code, out, _ = _run(
        [
            "calc", "guard-locking", "--stopping-time", "300ms", "--response-time", "20ms",
            "--time-to-reach", "1s",
        ],
        capsys,
    )  # fmt: skip
    assert code == 0
    assert "Guard locking needed: no" in out


def test_guard_locking_needs_distance_or_time(capsys: pytest.CaptureFixture[str]) -> None:
    line = _one_line_error(
        *_run(["calc", "guard-locking", "--stopping-time", "0.3s", "--response-time", "0s"], capsys)
    )
    assert "--distance" in line
    assert "--time-to-reach" in line


def test_gap_minimum(capsys: pytest.CaptureFixture[str]) -> None:
    d = _json(["calc", "gap", "--body-part", "hand"], capsys)
    assert d["gap_mm"] == 100  # ISO 13854 Table 1 [std, from memory]
    assert d["gap_in"] == pytest.approx(3.937008, rel=1e-7)  # 100/25.4


def test_gap_check(capsys: pytest.CaptureFixture[str]) -> None:
    # ISO 13854 Table 1 [std, from memory]: finger 25 mm; 1 in = 25.4 mm ≥ 25 → passes.
    d = _json(["calc", "gap", "--body-part", "finger", "--gap", "1in"], capsys)
    assert d["passed"] is True
    assert d["gap_mm"] == pytest.approx(25.4)
    assert d["minimum_gap_mm"] == 25
    code, out, _ = _run(["calc", "gap", "--body-part", "finger", "--gap", "20mm"], capsys)
    assert code == 0
    assert "Result: fails" in out


def test_gap_bad_body_part(capsys: pytest.CaptureFixture[str]) -> None:
    line = _one_line_error(*_run(["calc", "gap", "--body-part", "elbow"], capsys))
    assert "--body-part" in line

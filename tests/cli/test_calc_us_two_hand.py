"""`riskreg calc us-distance`, `calc opening` and `calc two-hand`.

Expected values worked by hand: 29 CFR 1910.217(c)(3)(vii), (viii) and Table O-10
[reg, from memory]; ANSI B11.19 general formula [std, from memory]; ISO 13851:2019
Table 1 [std, from memory].
"""

from __future__ import annotations

import json
from typing import Any

import pytest

from riskreg.cli import main


def call(capsys: pytest.CaptureFixture[str], *args: str) -> tuple[int, str, str]:
    with pytest.raises(SystemExit) as exc:
        main(["calc", *args])
    out, err = capsys.readouterr()
    code = exc.value.code
    return (code if isinstance(code, int) else 1), out, err


def call_json(capsys: pytest.CaptureFixture[str], *args: str) -> dict[str, Any]:
    code, out, err = call(capsys, *args, "--json")
    assert code == 0, err
    data = json.loads(out)
    assert isinstance(data, dict)
    return data


def assert_one_line_error(code: int, out: str, err: str, fragment: str) -> None:
    assert code == 2
    assert out == ""
    lines = err.strip().splitlines()
    assert len(lines) == 1, err
    assert "Traceback" not in err
    assert fragment in lines[0]


# --- us-distance ---------------------------------------------------------------


def test_us_distance_two_hand(capsys: pytest.CaptureFixture[str]) -> None:
    # Ds = 63 × 0.2 = 12.6 in = 320.04 mm  # 29 CFR 1910.217(c)(3)(vii) [reg, from memory]
    d = call_json(capsys, "us-distance", "--device", "two-hand", "--stopping-time", "200ms")
    assert d["distance_in"] == pytest.approx(12.6)
    assert d["distance_mm"] == pytest.approx(320.04)
    assert d["formula"] == "Ds = 63 in/s × Ts"


def test_us_distance_two_hand_trip(capsys: pytest.CaptureFixture[str]) -> None:
    # Dm = 63 × (1/2 + 1/2) × 0.5 = 31.5 in = 800.1 mm  # 1910.217(c)(3)(viii) [reg, from memory]
    d = call_json(
        capsys,
        "us-distance",
        "--device",
        "two-hand-trip",
        "--stopping-time",
        "0.2s",
        "--engaging-points",
        "2",
        "--revolution-time",
        "500ms",
    )
    assert d["distance_in"] == pytest.approx(31.5)
    assert d["distance_mm"] == pytest.approx(800.1)


def test_us_distance_presence_sensing(capsys: pytest.CaptureFixture[str]) -> None:
    # Ds = 63 × 0.15 = 9.45 in = 240.03 mm  # 1910.217(c)(3)(iii) [reg, from memory]
    d = call_json(capsys, "us-distance", "--device", "presence-sensing", "--stopping-time", "150ms")
    assert d["distance_in"] == pytest.approx(9.45)
    assert d["distance_mm"] == pytest.approx(240.03)


def test_us_distance_general_light_curtain(capsys: pytest.CaptureFixture[str]) -> None:
    # S = 0.55 in; Dpf = 3.4 × (0.55 − 0.276) = 0.9316 in; T = 0.2 + 0.02 + 0.015 + 0.03 = 0.265 s
    # Ds = 63 × 0.265 + 0.9316 = 16.695 + 0.9316 = 17.6266 in  # ANSI B11.19 [std, from memory]
    d = call_json(
        capsys,
        "us-distance",
        "--device",
        "general",
        "--stopping-time",
        "200ms",
        "--control-time",
        "20ms",
        "--device-time",
        "15ms",
        "--brake-monitor-time",
        "30ms",
        "--object-sensitivity",
        "0.55in",
    )
    assert d["distance_in"] == pytest.approx(17.6266)
    assert d["distance_mm"] == pytest.approx(17.6266 * 25.4)


def test_us_distance_general_with_dpf(capsys: pytest.CaptureFixture[str]) -> None:
    # Dpf 4 in as entered (test value); Ds = 63 × 0.1 + 4 = 10.3 in
    d = call_json(
        capsys, "us-distance", "--device", "general", "--stopping-time", "0.1s", "--dpf", "4in"
    )
    assert d["distance_in"] == pytest.approx(10.3)


def test_us_distance_text_output(capsys: pytest.CaptureFixture[str]) -> None:
    code, out, _ = call(capsys, "us-distance", "--device", "two-hand", "--stopping-time", "0.2s")
    assert code == 0
    assert "12.6" in out and "320.04" in out and "(a)(5)" in out


@pytest.mark.parametrize(
    ("args", "fragment"),
    [
        (["--device", "two-hand"], "--stopping-time"),
        (["--device", "two-hand-trip", "--revolution-time", "0.5s"], "--engaging-points"),
        (["--device", "two-hand-trip", "--engaging-points", "2"], "--revolution-time"),
        (["--device", "general", "--stopping-time", "0.1s"], "--object-sensitivity"),
        (
            ["--device", "general", "--stopping-time", "0.1s", "--object-sensitivity", "70mm"],
            "--dpf",
        ),
        (["--device", "two-hand", "--stopping-time", "0.2s", "--control-time", "20ms"], "general"),
        (["--device", "two-hand", "--stopping-time", "-0.2s"], "--stopping-time"),
        (["--device", "two-hand", "--stopping-time", "0.2"], "no unit"),
        (["--device", "light-curtain", "--stopping-time", "0.2s"], "--device"),
        (["--stopping-time", "0.2s"], "--device"),
        (["--device", "two-hand", "--stopping-time", "0.2s", "--edition", "1971"], "edition"),
    ],
)
def test_us_distance_bad_input_is_one_line_exit_2(
    capsys: pytest.CaptureFixture[str], args: list[str], fragment: str
) -> None:
    code, out, err = call(capsys, "us-distance", *args)
    assert_one_line_error(code, out, err, fragment)


# --- opening --------------------------------------------------------------------


def test_opening_pass(capsys: pytest.CaptureFixture[str]) -> None:
    # 4 in → 3 1/2 to 5 1/2 in → 5/8 in; 0.5 in passes  # Table O-10 [reg, from memory]
    d = call_json(capsys, "opening", "--distance", "4in", "--opening", "0.5in")
    assert d["max_opening_in"] == pytest.approx(0.625)
    assert d["ok"] is True


def test_opening_fail_in_mm(capsys: pytest.CaptureFixture[str]) -> None:
    # 100 mm = 3.94 in → 5/8 in = 15.875 mm; 16 mm fails  # Table O-10 [reg, from memory]
    d = call_json(capsys, "opening", "--distance", "100mm", "--opening", "16mm")
    assert d["max_opening_in"] == pytest.approx(0.625)
    assert d["ok"] is False


def test_opening_outside_the_table(capsys: pytest.CaptureFixture[str]) -> None:
    d = call_json(capsys, "opening", "--distance", "40in", "--opening", "1in")
    assert d["max_opening_in"] is None and d["ok"] is None
    assert d["derivation"]["problems"]


def test_opening_text_output(capsys: pytest.CaptureFixture[str]) -> None:
    code, out, _ = call(capsys, "opening", "--distance", "1.5in", "--opening", "0.3in")
    assert code == 0
    assert "fail" in out and "1/2 to 1 1/2 in" in out


@pytest.mark.parametrize(
    ("args", "fragment"),
    [
        (["--distance", "-1in", "--opening", "0.25in"], "distance_mm"),
        (["--distance", "4in", "--opening", "0mm"], "opening_mm"),
        (["--distance", "4", "--opening", "0.25in"], "no unit"),
        (["--opening", "0.25in"], "--distance"),
    ],
)
def test_opening_bad_input(
    capsys: pytest.CaptureFixture[str], args: list[str], fragment: str
) -> None:
    code, out, err = call(capsys, "opening", *args)
    assert_one_line_error(code, out, err, fragment)


# --- two-hand --------------------------------------------------------------------


def test_two_hand_series_pair(capsys: pytest.CaptureFixture[str]) -> None:
    # series-wired pair: Type I, PL c, tie-down problem  # ISO 13851:2019 Table 1 [std, from memory]; [practice]
    d = call_json(
        capsys, "two-hand", "--simultaneous", "--cessation", "--category", "1", "--spacing", "600mm"
    )
    assert d["type"] == "I" and d["type_pl"] == "c"
    assert any("tie or weigh" in p for p in d["problems"])


def test_two_hand_anti_tie_down_cat_4(capsys: pytest.CaptureFixture[str]) -> None:
    # 0.5 s window, Cat 4 → IIIC / PL e  # ISO 13851:2019 Table 1 [std, from memory]
    d = call_json(
        capsys,
        "two-hand",
        "--simultaneous",
        "--cessation",
        "--reinitiation",
        "--synchronous-window",
        "500ms",
        "--category",
        "4",
        "--shrouded",
    )
    assert (d["type"], d["type_pl"], d["problems"]) == ("IIIC", "e", [])


def test_two_hand_window_too_long(capsys: pytest.CaptureFixture[str]) -> None:
    # 0.6 s > 0.5 s → not Type III; Type II / PL d  # ISO 13851:2019 [std, from memory]
    d = call_json(
        capsys,
        "two-hand",
        "--simultaneous",
        "--cessation",
        "--reinitiation",
        "--synchronous-window",
        "0.6s",
        "--category",
        "4",
        "--spacing",
        "600mm",
    )
    assert d["type"] == "II" and d["type_pl"] == "d"


def test_two_hand_no_type_is_null(capsys: pytest.CaptureFixture[str]) -> None:
    d = call_json(capsys, "two-hand", "--cessation", "--category", "4", "--shrouded")
    assert d["type"] is None and d["type_pl"] is None
    assert d["problems"]


def test_two_hand_press_stations_and_anti_repeat(capsys: pytest.CaptureFixture[str]) -> None:
    d = call_json(
        capsys,
        "two-hand",
        "--simultaneous",
        "--cessation",
        "--reinitiation",
        "--synchronous-window",
        "300ms",
        "--category",
        "3",
        "--shrouded",
        "--operators",
        "2",
        "--stations",
        "1",
        "--no-anti-repeat",
        "--press",
    )
    assert d["type"] == "IIIB" and d["type_pl"] == "d"  # ISO 13851:2019 Table 1 [std, from memory]
    assert any("(b)(7)" in p for p in d["problems"])  # 1910.217(b)(7) [reg, from memory]
    assert any("anti-repeat" in p.lower() for p in d["problems"])  # [practice]


def test_two_hand_one_actuator_per_station(capsys: pytest.CaptureFixture[str]) -> None:
    d = call_json(
        capsys,
        "two-hand",
        "--simultaneous",
        "--cessation",
        "--category",
        "4",
        "--shrouded",
        "--actuators-per-station",
        "1",
    )
    assert d["type"] is None
    assert any("free hand" in p for p in d["problems"])


def test_two_hand_text_output(capsys: pytest.CaptureFixture[str]) -> None:
    code, out, _ = call(capsys, "two-hand", "--category", "B", "--shrouded")
    assert code == 0
    assert "Type: none" in out and "protects only the person using it" in out


@pytest.mark.parametrize(
    ("args", "fragment"),
    [
        (["--category", "4", "--spacing", "600mm", "--shrouded"], "not both"),
        (["--category", "5"], "--category"),
        ([], "--category"),
        (["--category", "4", "--operators", "0"], "operators"),
        (["--category", "4", "--synchronous-window", "0s"], "synchronous_window_s"),
        (["--category", "4", "--synchronous-window", "0.5"], "no unit"),
        (["--category", "4", "--actuators-per-station", "3"], "--actuators-per-station"),
        (["--category", "4", "--spacing", "0mm"], "spacing_mm"),
    ],
)
def test_two_hand_bad_input(
    capsys: pytest.CaptureFixture[str], args: list[str], fragment: str
) -> None:
    code, out, err = call(capsys, "two-hand", *args)
    assert_one_line_error(code, out, err, fragment)

"""The README's `riskreg calc` examples run as written."""

from __future__ import annotations

import json
import re
import shlex
from pathlib import Path

import pytest

from riskreg.cli import main

README = Path(__file__).resolve().parents[2] / "README.md"


def _examples() -> list[str]:
    text = README.read_text()
    blocks = re.findall(r"```sh\n(.*?)```", text, re.S)
    lines = [ln.strip() for b in blocks for ln in b.splitlines()]
    return [ln for ln in lines if ln.startswith(".venv/bin/riskreg calc")]


def test_readme_has_a_tour() -> None:
    assert len(_examples()) >= 10


@pytest.mark.parametrize("line", _examples())
def test_readme_example_runs(line: str, capsys: pytest.CaptureFixture[str]) -> None:
    argv = shlex.split(line)[1:]
    with pytest.raises(SystemExit) as exc:
        main(argv + ["--json"] if "--json" not in argv else argv)
    assert exc.value.code == 0, capsys.readouterr().err
    out = json.loads(capsys.readouterr().out)
    assert "derivation" in out and out["derivation"]["cautions"]


def test_readme_bare_number_example_is_refused(capsys: pytest.CaptureFixture[str]) -> None:
    text = README.read_text()
    shown = re.search(r"\$ riskreg (calc distance .*)\n(riskreg: error: .*)\n", text)
    assert shown is not None
    with pytest.raises(SystemExit) as exc:
        main(shlex.split(shown.group(1)))
    assert exc.value.code == 2
    assert capsys.readouterr().err.strip() == shown.group(2)

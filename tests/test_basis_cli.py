"""``check --basis``: per-line figures from clamp-meter readings, and the basis in the report."""

from __future__ import annotations

import json
from pathlib import Path

import pytest

from balancer.cli.main import main

# Invented test panel (not a real building).
SCHEDULE = """\
Space,Description,Poles,Load (VA),Measured (A),Notes
1,Lights east,1,1200,9,
2,Receptacles east,1,1000,,
3,Lights west,1,300,2,
7,Copier,1,1500,12,
8,Heater,1,900,,
"""


@pytest.fixture
def schedule(tmp_path: Path) -> Path:
    path = tmp_path / "lp.csv"
    path.write_text(SCHEDULE, encoding="utf-8")
    return path


def test_check_on_readings(schedule: Path, capsys: pytest.CaptureFixture[str]) -> None:
    code = main(["check", str(schedule), "--json", "--basis", "measured", "--system", "208Y/120"])
    assert code == 0
    data = json.loads(capsys.readouterr().out)
    # Spaces 1, 2, 7, 8 are line A and 3 is line B (common-practice numbering). On readings:
    # A = 9 A × 120 V + 1000 + 12 A × 120 V + 900 = 4420 VA; B = 2 A × 120 V = 240 VA.
    assert data["loads"]["phase_va"] == pytest.approx({"A": 4420.0, "B": 240.0, "C": 0.0})
    used = [c["used"] for c in data["basis"]["circuits"]]
    assert used == ["measured", "nameplate", "measured", "measured", "nameplate"]


def test_check_text_names_the_basis(schedule: Path, capsys: pytest.CaptureFixture[str]) -> None:
    assert main(["check", str(schedule), "--basis", "larger", "--system", "208Y/120"]) == 0
    text = capsys.readouterr().out
    # Every reading here is below its schedule figure (1080 < 1200, 240 < 300, 1440 < 1500),
    # so the larger basis keeps the schedule VA for all five circuits.
    assert "Load basis: larger — 0 circuit(s) on readings, 5 on schedule VA" in text
    assert "reading 1,080 VA" in text

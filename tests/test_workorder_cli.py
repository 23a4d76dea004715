"""``balance`` on a panel in service: load basis, trade-off table, target and work order in the
terminal and JSON output, with the input file left as it was."""

from __future__ import annotations

import json
from pathlib import Path
from typing import Any

import pytest
from openpyxl import load_workbook

from balancer.cli.main import main
from balancer.domain.panel import Panel
from balancer.io.reader import read_schedule

# Invented test panel (not a real building): five 1-pole loads, three of them on line A.
SCHEDULE = """\
Space,Description,Poles,Load (VA),Measured (A),Locked,MWBC,Notes
1,Lights east,1,1200,9,,,
2,Receptacles east,1,1000,,,,bolt-on breaker
3,Lights west,1,300,2,,,
7,Copier,1,1500,12,yes,,dedicated
8,Heater,1,900,,,,
"""


@pytest.fixture
def schedule(tmp_path: Path) -> Path:
    path = tmp_path / "lp.csv"
    path.write_text(SCHEDULE, encoding="utf-8")
    return path


def _run_json(capsys: pytest.CaptureFixture[str], *args: str) -> dict[str, Any]:
    code = main(["balance", *args, "--json", "--system", "208Y/120", "--spaces", "12"])
    assert code == 0
    data: dict[str, Any] = json.loads(capsys.readouterr().out)
    return data


def test_json_has_basis_tradeoff_and_work_order(
    schedule: Path, tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    before_bytes = schedule.read_bytes()
    out = tmp_path / "lp-out.xlsx"
    data = _run_json(capsys, str(schedule), "-o", str(out), "--basis", "measured")
    assert schedule.read_bytes() == before_bytes
    used = {c["id"]: c["used"] for c in data["basis"]["circuits"]}
    assert data["basis"]["requested"] == "measured"
    assert list(used.values()).count("measured") == 3
    # 9 A × 120 V = 1080 VA replaces the 1200 VA on the schedule (VA = V × I).
    loads = {c["id"]: c["load_va"] for c in data["basis"]["circuits"]}
    assert 1080.0 in loads.values()
    rows = data["tradeoff"]
    assert [r["moves"] for r in rows] == list(range(len(rows)))
    spreads = [r["spread_va"] for r in rows]
    assert spreads == sorted(spreads, reverse=True)
    assert rows[-1]["spread_va"] == pytest.approx(data["after"]["spread_va"], abs=1.0)
    # The locked copier never appears in a step; the steps reach the reported layout.
    steps = data["work_order"]
    assert all(c["description"] != "Copier" for s in steps for c in s["circuits"])
    panel: Panel = read_schedule(schedule)
    ids = {c.description: c.id for c in panel.circuits}
    where = {c.id: tuple(c.spaces) for c in panel.circuits}
    for step in steps:
        for item in step["circuits"]:
            assert where[item["id"]] == tuple(item["from_spaces"])
            where[item["id"]] = tuple(item["to_spaces"])
    assert where == {c["id"]: tuple(c["spaces"]) for c in data["circuits"]}
    assert ids["Copier"] not in {c["id"] for s in steps for c in s["circuits"]}
    book = load_workbook(out)
    assert "Work order" in book.sheetnames


def test_work_order_printed_with_cautions(
    schedule: Path, tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    code = main(
        [
            "balance",
            str(schedule),
            "-o",
            str(tmp_path / "o.xlsx"),
            "--system",
            "208Y/120",
            "--spaces",
            "12",
            "--work-order",
        ]
    )
    assert code == 0
    text = capsys.readouterr().out
    assert "Load basis: nameplate" in text
    assert "Balance by number of moves:" in text
    assert "Step 1." in text
    assert "qualified persons" in text
    steps = text.split("Work order for panel")[1]
    if "'Receptacles east'" in steps:  # its notes travel with it when it moves
        assert "notes: bolt-on breaker" in steps


def test_target_that_no_move_count_reaches(
    schedule: Path, tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    # Five loads on three lines cannot be within 0.01 % of each other: the proven best spread
    # gives a floor above the target.
    data = _run_json(
        capsys, str(schedule), "-o", str(tmp_path / "t.xlsx"), "--target-imbalance", "0.01"
    )
    assert data["target"]["moves"] is None
    assert "no number of moves reaches 0.01 %" in data["target"]["message"]


def test_target_reached_with_fewest_moves(
    schedule: Path, tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    data = _run_json(
        capsys, str(schedule), "-o", str(tmp_path / "t.xlsx"), "--target-imbalance", "60"
    )
    target = data["target"]
    assert target["moves"] is not None
    reached = [r for r in data["tradeoff"] if r["imbalance_pct"] <= 60]
    assert target["moves"] <= reached[0]["moves"]
    assert data["after"]["imbalance_pct"] <= 60


def test_no_tradeoff_and_bad_target(
    schedule: Path, tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    data = _run_json(capsys, str(schedule), "-o", str(tmp_path / "n.xlsx"), "--no-tradeoff")
    assert data["tradeoff"] == []
    code = main(["balance", str(schedule), "--target-imbalance", "-5", "--system", "208Y/120"])
    assert code == 2
    assert "--target-imbalance" in capsys.readouterr().err


def test_sample_readings_reach_the_basis() -> None:
    """The bundled demo sample (invented clinic) read by the schedule reader."""
    from balancer.field.basis import apply_basis

    sample = Path(__file__).resolve().parents[1] / "sample_schedules"
    panel = read_schedule(sample / "clinic-after-additions-208y120.xlsx")
    assert sum(1 for c in panel.circuits if not c.placed) == 4
    assert sum(1 for c in panel.circuits if c.locked) == 2
    assert sum(1 for c in panel.circuits if c.group == "E1") == 3
    new, used = apply_basis(panel, "measured")
    rtu = next(c for c in new.circuits if c.description.startswith("RTU-1"))
    # Per-line readings 24.5 / 26.0 / 25.1 A average 25.2 A;
    # √3 × 208 V × 25.2 A = 1.7320508 × 5241.6 = 9078.72 VA (C).
    assert used[rtu.id] == "measured"
    assert rtu.basis_va == pytest.approx(9078.72, abs=0.01)
    assert rtu.load_va == 10800.0  # the schedule's design load stays

"""The demand options of ``balancer check`` on a bundled sample (demo data)."""

from __future__ import annotations

import json
from pathlib import Path

import pytest

from balancer.cli import main

OFFICE = Path(__file__).resolve().parents[1] / "sample_schedules" / "office-208y120.xlsx"


def test_check_json_carries_demand(capsys: pytest.CaptureFixture[str]) -> None:
    assert (
        main(["check", "--json", str(OFFICE), "--rules", "nec2020", "--feeder-length", "80"]) == 0
    )
    demand = json.loads(capsys.readouterr().out)["demand"]
    assert demand["rule_set"] == "nec2020"
    assert "Table 220.42" in demand["by_class"]["general_lighting"]["rule"]
    assert demand["feeder"]["min_ocpd_a"] >= demand["feeder"]["design_a"]
    assert demand["feeder"]["voltage_drop_pct"] > 0
    assert demand["total_demand_va"] <= demand["total_connected_va"] * 1.25


def test_check_text_has_loads_section(capsys: pytest.CaptureFixture[str]) -> None:
    assert main(["check", str(OFFICE), "--occupancy", "warehouse"]) == 0
    out = capsys.readouterr().out
    assert "Loads: NEC 2023, occupancy warehouse" in out
    assert "authority having jurisdiction" in out


@pytest.mark.parametrize(
    ("extra", "words"),
    [
        (["--rules", "nec1999"], "--rules"),
        (["--occupancy", "spaceport"], "--occupancy"),
        (["--feeder-length", "-5"], "--feeder-length"),
        (["--ambient", "90"], "above 70"),
    ],
)
def test_bad_demand_options_exit_2(
    extra: list[str], words: str, capsys: pytest.CaptureFixture[str]
) -> None:
    assert main(["check", str(OFFICE), *extra]) == 2
    assert words in capsys.readouterr().err


@pytest.mark.slow
def test_balance_reports_demand_after_balancing(
    tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    out = tmp_path / "office-balanced.xlsx"
    args = ["balance", str(OFFICE), "-o", str(out), "--json", "--time-limit", "20"]
    assert main(args) == 0
    data = json.loads(capsys.readouterr().out)
    demand = data["demand"]
    assert demand["rule_set"] == "nec2023"
    # Balancing moves circuits, never load: the demand total is the one check gives.
    assert main(["check", "--json", str(OFFICE)]) == 0
    before = json.loads(capsys.readouterr().out)["demand"]
    assert demand["total_demand_va"] == pytest.approx(before["total_demand_va"], abs=0.1)
    assert sum(demand["phase_demand_va"].values()) == pytest.approx(
        demand["total_demand_va"], abs=0.5
    )


def test_balance_rejects_bad_occupancy_before_solving(
    tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    out = tmp_path / "never.xlsx"
    assert main(["balance", str(OFFICE), "-o", str(out), "--occupancy", "spaceport"]) == 2
    assert "--occupancy" in capsys.readouterr().err
    assert not out.exists()

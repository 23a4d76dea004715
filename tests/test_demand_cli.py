"""The demand options of ``balancer check`` on a bundled sample (demo data)."""

from __future__ import annotations

import json
from pathlib import Path

import pytest
from conftest import SAMPLES, Cli

from balancer.cli.main import main

OFFICE = SAMPLES / "office-208y120.xlsx"


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


def test_balance_reports_demand_after_balancing(tmp_path: Path, cli: Cli) -> None:
    out = tmp_path / "office-balanced.xlsx"
    # demand, not the trade-off table, is checked here: one solve is enough
    demand = cli.json("balance", OFFICE, "-o", out, "--no-tradeoff", "--time-limit", "10")["demand"]
    assert demand["rule_set"] == "nec2023"
    # Balancing moves circuits, never load: the demand total is the one check gives.
    before = cli.json("check", OFFICE)["demand"]
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


def _write(path: Path, rows: list[str]) -> Path:
    path.write_text("\n".join(rows) + "\n", encoding="utf-8")
    return path


def test_dryer_neutral_column_from_the_documented_header(
    tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    # 5,600 VA 2-pole with 600 VA of it line-to-neutral on 120/240 V (C): 5,000 VA / 240 V =
    # 20.83 A on both lines, plus 600 VA / 120 V = 5 A on one line and on the neutral.
    csv = _write(
        tmp_path / "dryer.csv",
        ["Circuit,Description,Poles,VA,Neutral (VA)", "1,dryer,2,5600,600"],
    )
    assert main(["check", "--json", str(csv), "--system", "120/240"]) == 0
    data = json.loads(capsys.readouterr().out)
    # JSON gives currents to the 0.1 A the terminal shows
    lines = sorted(data["loads"]["line_fundamental_a"].values())
    assert lines == pytest.approx([20.833, 25.833], abs=0.05)
    assert data["loads"]["neutral_fundamental_a"] == pytest.approx(5.0, abs=0.05)
    # The feeder and the branch circuit take the heavier line current.
    demand = data["demand"]
    assert demand["feeder"]["design_a"] == pytest.approx(25.83, abs=0.05)
    assert demand["feeder"]["neutral_a"] == pytest.approx(5.0, abs=0.05)
    assert demand["branch_flags"][0]["required_a"] == pytest.approx(25.83, abs=0.05)


def _workstations(tmp_path: Path, profile: bool) -> Path:
    header = "Circuit,Description,Poles,VA,Type" + (",Harmonics" if profile else "")
    tail = ",switch-mode" if profile else ""
    rows = [f"{k},workstation {k},1,1500,other{tail}" for k in range(1, 61)]
    return _write(tmp_path / f"ws{int(profile)}.csv", [header, *rows])


@pytest.mark.parametrize(
    ("profile", "extra", "neutral_a"),
    [
        (True, [], 250.0),  # the Harmonics column names a non-linear profile
        (False, [], 235.0),  # linear: 200 + 0.7 × 50 (220.61(B))
        (False, ["--nonlinear-classes", "other"], 250.0),
    ],
)
def test_nonlinear_neutral_from_the_command_line_and_the_schedule(
    tmp_path: Path,
    capsys: pytest.CaptureFixture[str],
    profile: bool,
    extra: list[str],
    neutral_a: float,
) -> None:
    # NEC 2023 220.61(C)(2) (F; item number from memory; docs/references.md): 60 × 1,500 VA on
    # 208Y/120 = 30,000 VA per line = 250 A (C); no 220.61(B) reduction of the non-linear part.
    csv = _workstations(tmp_path, profile)
    assert main(["check", "--json", str(csv), "--system", "208Y/120", *extra]) == 0
    feeder = json.loads(capsys.readouterr().out)["demand"]["feeder"]
    assert feeder["design_a"] == pytest.approx(250.0, abs=0.05)
    assert feeder["neutral_a"] == pytest.approx(neutral_a, abs=0.05)


def test_terminations_and_feeder_conductor_options(
    tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    # 12,000 VA on one line = 100 A: NEC 2023 110.14(C)(1)(a) (from memory), Table 310.16 (F): 1 AWG
    # Cu at 60 °C; 3 AWG Cu with terminations listed for 75 °C. 2 AWG Cu (95 A at 60 °C) is too
    # small.
    csv = _write(tmp_path / "one.csv", ["Circuit,Description,Poles,VA", "1,heater,1,12000"])
    assert main(["check", str(csv), "--feeder-conductor", "2 Cu"]) == 0
    out = capsys.readouterr().out
    assert "conductor 1 AWG Cu" in out
    assert "Warning: feeder conductor 2 AWG Cu carries 95.0 A" in out
    assert main(["check", "--json", str(csv), "--terminations-75c"]) == 0
    feeder = json.loads(capsys.readouterr().out)["demand"]["feeder"]
    assert (feeder["conductor_cu"], feeder["conductor_cu_column_c"]) == ("3", 75)


def test_balance_takes_the_new_demand_options() -> None:
    from balancer.cli.main import build_parser

    args = build_parser().parse_args(
        ["balance", "x.xlsx", "--nonlinear-classes", "other", "--terminations-75c"]
    )
    assert (args.nonlinear_classes, args.terminations_75c) == ("other", True)


def test_unknown_nonlinear_class_exit_2(capsys: pytest.CaptureFixture[str]) -> None:
    assert main(["check", str(OFFICE), "--nonlinear-classes", "widget"]) == 2
    assert "--nonlinear-classes" in capsys.readouterr().err

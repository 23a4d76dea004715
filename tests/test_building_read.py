"""Reading buildings: the demo workbook (invented data), a folder of schedules with an index,
and the clear errors of a bad index; the ``building`` command."""

from __future__ import annotations

import json
import shutil
from pathlib import Path

import pytest
from openpyxl import Workbook, load_workbook

from balancer.building.files import read_building
from balancer.building.tree import roll_up
from balancer.cli.main import main
from balancer.errors import ScheduleError

DEMO = Path(__file__).resolve().parents[1] / "sample_schedules" / "building-demo"
DEMO_BOOK = DEMO / "building-demo.xlsx"
CSV_HEADER = "Ckt,Load Description,Poles,Load (VA)\n"


def test_demo_workbook_reads_as_a_tree_with_three_transformers() -> None:
    building = read_building(DEMO_BOOK)
    assert {p.name for p in building.panels} == {"MDP", "H1", "L1", "L2", "K1", "W1"}
    assert building.services() == ["MDP"]
    l1 = building.feed_of("L1")
    assert l1 is not None
    assert l1.transformer is not None
    assert (l1.transformer.kva, l1.transformer.connection) == (45.0, "delta-wye")
    k1 = building.feed_of("K1")
    assert k1 is not None
    assert k1.transformer is not None
    assert k1.transformer.connection == "single-phase"
    w1 = building.feed_of("W1")
    assert w1 is not None
    assert w1.transformer is not None
    assert w1.transformer.connection == "delta-delta"
    assert building.panel("W1").system.high_leg == "B"
    assert building.order()[-1] == "MDP"


def _write_csv(path: Path, system: str, rows: list[str]) -> None:
    path.write_text(f"System,{system}\nSpaces,24\n{CSV_HEADER}" + "\n".join(rows) + "\n", "utf-8")


def _folder_building(tmp_path: Path, index: str) -> Path:
    _write_csv(tmp_path / "mdp.csv", "208Y/120", ["1,Feeder to LP1,3,0", "2,Lights,1,1200"])
    _write_csv(tmp_path / "lp1.csv", "208Y/120", ["1,Receptacles,1,900", "3,Copier,1,1500"])
    (tmp_path / "building.csv").write_text(index, "utf-8")
    return tmp_path


def test_folder_with_an_index_file(tmp_path: Path) -> None:
    folder = _folder_building(
        tmp_path,
        "Panel,Schedule,Fed from,Feeder circuit\nMDP,mdp.csv,,\nLP1,lp1.csv,MDP,1\n",
    )
    building = read_building(folder)
    figures = roll_up(building)
    assert figures.panels["MDP"].phase_va == pytest.approx({"A": 2100.0, "B": 1500.0, "C": 0.0})


def test_index_naming_a_missing_panel(tmp_path: Path) -> None:
    folder = _folder_building(
        tmp_path,
        "Panel,Schedule,Fed from,Feeder circuit\nMDP,mdp.csv,,\nLP1,lp1.csv,MDP-2,1\n",
    )
    with pytest.raises(ScheduleError) as info:
        read_building(folder)
    assert "building.csv!C3: panel 'MDP-2' is named in the building" in str(info.value)


def test_index_with_a_missing_schedule_file(tmp_path: Path) -> None:
    folder = _folder_building(
        tmp_path,
        "Panel,Schedule,Fed from,Feeder circuit\nMDP,mdp.csv,,\nLP1,lp9.csv,MDP,1\n",
    )
    with pytest.raises(ScheduleError, match=r"lp9\.csv: no such file"):
        read_building(folder)


def test_index_with_an_unknown_column_suggests_the_near_one(tmp_path: Path) -> None:
    folder = _folder_building(
        tmp_path, "Panel,Schedule,Fed frm,Feeder circuit\nMDP,mdp.csv,,\nLP1,lp1.csv,MDP,1\n"
    )
    with pytest.raises(ScheduleError, match=r"building\.csv!C1: column 'Fed frm'.*did you mean"):
        read_building(folder)


def test_index_loop_is_reported(tmp_path: Path) -> None:
    _write_csv(tmp_path / "a.csv", "208Y/120", ["1,Feeder,3,0", "2,Lights,1,100"])
    _write_csv(tmp_path / "b.csv", "208Y/120", ["1,Feeder,3,0"])
    (tmp_path / "building.csv").write_text(
        "Panel,Schedule,Fed from,Feeder circuit\nA,a.csv,B,1\nB,b.csv,A,1\n", "utf-8"
    )
    with pytest.raises(ScheduleError, match="the feeds form a loop"):
        read_building(tmp_path)


def test_workbook_with_a_missing_sheet(tmp_path: Path) -> None:
    book = load_workbook(DEMO_BOOK)
    book["Building"]["B8"] = "K1 sheet"  # the K1 row's Schedule cell
    target = tmp_path / "b.xlsx"
    book.save(target)
    with pytest.raises(ScheduleError, match="no sheet named 'K1 sheet'"):
        read_building(target)


def test_transformer_with_bad_connection_names_the_cell(tmp_path: Path) -> None:
    book = load_workbook(DEMO_BOOK)
    book["Building"]["G6"] = "zig-zag"  # the L1 row's Connection cell
    target = tmp_path / "b.xlsx"
    book.save(target)
    with pytest.raises(ScheduleError, match=r"Building!G6: transformer T1: connection 'zig-zag'"):
        read_building(target)


def test_workbook_without_index_sheet(tmp_path: Path) -> None:
    book = Workbook()
    book.active.title = "LP1"
    target = tmp_path / "b.xlsx"
    book.save(target)
    with pytest.raises(ScheduleError, match="no sheet named 'Building'"):
        read_building(target)


def test_building_command_balances_and_writes_figures(
    tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    book = tmp_path / "demo.xlsx"
    shutil.copy(DEMO_BOOK, book)
    before = book.read_bytes()
    out = tmp_path / "figures.xlsx"
    status = main(["building", str(book), "--balance", "-o", str(out), "--time-limit", "20"])
    text = capsys.readouterr().out
    assert status == 0
    assert "Service MDP" in text
    assert "panels proven best on every goal" in text
    assert "qualified persons" in text
    assert "revised schedules written to" in text
    assert book.read_bytes() == before  # the input is never written
    sheets = load_workbook(out).sheetnames
    figures = ["Summary", "Panels", "Feeders", "Moves", "Work order", "Building"]
    assert sheets == [*figures, "MDP", "H1", "L1", "L2", "K1", "W1"]
    moves = list(load_workbook(out)["Moves"].iter_rows(values_only=True))
    assert moves[0][:3] == ("Panel", "Circuit", "Description")
    assert len(moves) > 1  # the demo panels start unbalanced, so some breakers move


def test_building_command_json_and_refusal_to_overwrite_input(
    capsys: pytest.CaptureFixture[str],
) -> None:
    assert main(["building", str(DEMO_BOOK), "--json"]) == 0
    data = json.loads(capsys.readouterr().out)
    assert data["panels"][0]["panel"] == "MDP"
    assert {row["panel"] for row in data["feeders"]} == {"H1", "L1", "L2", "K1", "W1"}
    assert main(["building", str(DEMO_BOOK), "-o", str(DEMO_BOOK)]) == 2
    assert "never writes its input" in capsys.readouterr().err


def test_building_command_with_demand(capsys: pytest.CaptureFixture[str]) -> None:
    assert main(["building", str(DEMO_BOOK), "--demand", "--json"]) == 0
    rows = json.loads(capsys.readouterr().out)["panels"]
    service = rows[0]
    assert service["panel"] == "MDP"
    assert service["demand"]["total_demand_va"] > 0
    assert main(["building", str(DEMO_BOOK), "--demand", "--rules", "no-such-rules"]) == 2

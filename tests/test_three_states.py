"""A panel in service with new circuits shows three states everywhere: as it stands (existing
circuits only), with its additions (the new circuits landed without moving a breaker: the
trade-off table's 0-move row) and after. The figures come from the report; every output says
the same numbers."""

from __future__ import annotations

import json
import math
from pathlib import Path
from typing import Any

import pypdf
import pytest
from openpyxl import load_workbook

from balancer import api
from balancer.cli.main import main
from balancer.domain.result import BalanceOptions
from balancer.report.json import balance_json

ATOL_VA = 0.5
REL = 1e-9

# Invented test panel (not a real building): line A heavy, two new circuits with no space yet.
# Unity power factor throughout, so each line's VA is the plain sum of its circuits (the
# schedule convention: a 1-pole load wholly on its line).
SCHEDULE = """\
Space,Description,Poles,Trip (A),Load (VA),Type
1,Lights east,1,20,1800,lighting
2,Receptacles east,1,20,1500,receptacle
3,Lights west,1,20,400,lighting
5,Copier,1,20,300,receptacle
7,Heater,1,20,1600,other
,Exam room receptacles (new),1,20,900,receptacle
,Exam room lights (new),1,20,700,lighting
"""
EXISTING_VA = 1800 + 1500 + 400 + 300 + 1600
NEW_VA = 900 + 700
NEW_IDS = ("R7", "R8")  # rows 7 and 8 of the CSV: circuits without a space are named by row


@pytest.fixture(scope="module")
def schedule(tmp_path_factory: pytest.TempPathFactory) -> Path:
    path = tmp_path_factory.mktemp("states") / "lp.csv"
    path.write_text(SCHEDULE, encoding="utf-8")
    return path


def _overrides() -> Any:
    from balancer.io.reader import PanelOverrides

    return PanelOverrides(system="208Y/120", spaces=12)


@pytest.fixture(scope="module")
def report(schedule: Path) -> api.BalanceReport:
    return api.run_balance(schedule, BalanceOptions(time_limit_s=10), _overrides())


def test_as_it_stands_leaves_the_new_circuits_out(report: api.BalanceReport) -> None:
    result = report.result
    assert result.new_circuits == NEW_IDS
    assert math.isclose(result.before.total_va, EXISTING_VA, rel_tol=REL)
    # lines A (spaces 1, 2, 7, 8), B (3, 4, 9, 10), C (5, 6, 11, 12): A 1800+1500+1600 = 4900
    assert result.before.phase_va == pytest.approx({"A": 4900.0, "B": 400.0, "C": 300.0})


def test_with_additions_is_the_zero_move_row(report: api.BalanceReport) -> None:
    result, table = report.result, report.field.table
    assert table is not None
    assert result.with_additions is not None
    zero = table.rows[0]
    assert zero.moves == 0
    assert result.with_additions.imbalance_pct == pytest.approx(zero.imbalance_pct, rel=REL)
    assert result.with_additions.spread_va == pytest.approx(zero.spread_va, abs=ATOL_VA)
    assert math.isclose(result.with_additions.total_va, EXISTING_VA + NEW_VA, rel_tol=REL)
    # nothing moved: every existing circuit in its spaces as found, the new ones placed
    landed = {c.id: c.spaces for c in result.with_additions_panel.circuits}  # type: ignore[union-attr]
    for circuit in result.before_panel.circuits:
        if circuit.placed:
            assert landed[circuit.id] == circuit.spaces
        else:
            assert landed[circuit.id]
    assert math.isclose(result.after.total_va, EXISTING_VA + NEW_VA, rel_tol=REL)


def test_without_a_table_the_middle_state_is_still_the_zero_move_arrangement(
    schedule: Path, report: api.BalanceReport
) -> None:
    plain = api.run_balance(
        schedule,
        BalanceOptions(time_limit_s=10),
        _overrides(),
        api.FieldChoices(tradeoff=False),
    )
    assert plain.field.table is None
    assert plain.result.with_additions is not None
    zero = report.field.table.rows[0]  # type: ignore[union-attr]
    assert plain.result.with_additions.spread_va == pytest.approx(zero.spread_va, abs=1.0)


def test_no_new_circuits_gives_two_states(tmp_path: Path) -> None:
    path = tmp_path / "plain.csv"
    path.write_text("\n".join(SCHEDULE.splitlines()[:6]) + "\n", encoding="utf-8")
    result = api.run_balance(path, BalanceOptions(time_limit_s=10), _overrides()).result
    assert result.new_circuits == ()
    assert result.with_additions is None
    from balancer.report.states import states

    assert [s.title for s in states(result)] == ["Before", "After"]


def test_every_output_says_the_same_three_states(
    schedule: Path, report: api.BalanceReport, tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    middle = report.result.with_additions
    assert middle is not None
    # JSON
    data = balance_json(report)
    assert [s["key"] for s in data["states"]] == ["as_it_stands", "with_additions", "after"]
    assert data["with_additions"]["imbalance_pct"] == pytest.approx(
        data["tradeoff"][0]["imbalance_pct"], abs=1e-3
    )
    assert [c["id"] for c in data["new_circuits"]] == list(NEW_IDS)
    assert all(c["to_spaces"] for c in data["new_circuits"])
    # terminal, workbook and PDF from one run of the command
    out, pdf = tmp_path / "lp-out.xlsx", tmp_path / "lp-out.pdf"
    args = ["balance", str(schedule), "-o", str(out), "--pdf", str(pdf), "--time-limit", "10"]
    assert main([*args, "--system", "208Y/120", "--spaces", "12"]) == 0
    text = capsys.readouterr().out
    for phrase in ("As it stands", "With additions", "0-move row", "New breakers to install"):
        assert phrase in text
    sheet = load_workbook(out)["Summary"]
    cells = [[c.value for c in row] for row in sheet.iter_rows()]
    header = next(r for r in cells if r[0] == "Line")
    assert header[1:4] == ["As it stands VA", "With additions VA", "After VA"]
    line_a = next(r for r in cells if r[0] == "A")
    assert line_a[1] == pytest.approx(4900.0)
    assert line_a[2] == pytest.approx(middle.phase_va["A"])
    imbalance = next(r for r in cells if r[0] and str(r[0]).startswith("Imbalance %"))
    assert imbalance[2] == pytest.approx(middle.imbalance_pct)
    page = " ".join(pypdf.PdfReader(pdf).pages[0].extract_text().split())
    assert "With additions" in page
    assert "0-move row" in page
    assert f"{middle.imbalance_pct:.1f} %" in page
    texts = [p.extract_text() for p in pypdf.PdfReader(pdf).pages]
    directory = next(t for t in texts if "Circuit directory" in t)
    assert "(new)" in directory


def test_json_output_of_the_command_has_the_middle_state(
    schedule: Path, tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    out = tmp_path / "j.xlsx"
    args = ["balance", str(schedule), "-o", str(out), "--json", "--time-limit", "10"]
    assert main([*args, "--system", "208Y/120", "--spaces", "12"]) == 0
    data = json.loads(capsys.readouterr().out)
    assert data["before"]["total_va"] == pytest.approx(EXISTING_VA)
    assert data["with_additions"]["total_va"] == pytest.approx(EXISTING_VA + NEW_VA)


def test_clinic_sample_with_additions_matches_its_zero_move_row() -> None:
    """The invented clinic (demo data): four new circuits; as it stands leaves them out, with
    the additions is the 0-move row of its table."""
    clinic = Path(__file__).resolve().parents[1] / "sample_schedules"
    report = api.run_balance(
        clinic / "clinic-after-additions-208y120.xlsx",
        BalanceOptions(time_limit_s=10),
        choices=api.FieldChoices(basis="measured"),
    )
    result, table = report.result, report.field.table
    assert len(result.new_circuits) == 4
    assert table is not None
    assert result.with_additions is not None
    assert result.with_additions.imbalance_pct == pytest.approx(table.rows[0].imbalance_pct)
    new_va = sum(result.after_panel.circuit(i).basis_va for i in result.new_circuits)
    assert result.with_additions.total_va == pytest.approx(result.before.total_va + new_va)
    assert result.before.imbalance_pct > result.with_additions.imbalance_pct

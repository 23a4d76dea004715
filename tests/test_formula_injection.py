"""Text from a schedule that looks like a formula is written as text in every workbook balancer
writes: the revised panel workbook, the batch summary and the building workbook."""

from __future__ import annotations

from pathlib import Path

import pytest
from openpyxl import load_workbook

from balancer.cli.main import main

HYPERLINK = '=HYPERLINK("http://example.invalid","click")'
COMMAND = "=cmd|' /C calc'!A0"
OTHERS = ("+SUM(1,2)", "-2+3", "@SUM(1)")


def _csv_cell(text: str) -> str:
    return '"' + text.replace('"', '""') + '"'


def _hostile_schedule(path: Path, name: str = COMMAND) -> Path:
    rows = [
        f"Panel,{_csv_cell(name)}",
        "System,208Y/120",
        "Circuit,Description,Poles,Load (VA),MWBC,Notes,Room",
        f"1,{_csv_cell(HYPERLINK)},1,1200,{_csv_cell(COMMAND)},{_csv_cell(HYPERLINK)},"
        f"{_csv_cell(COMMAND)}",
        *(
            f"{3 + 2 * i},{_csv_cell(t)},1,{900 - 100 * i},,,{_csv_cell(t)}"
            for i, t in enumerate(OTHERS)
        ),
    ]
    path.write_text("\n".join(rows) + "\n", encoding="utf-8")
    return path


def _cells(path: Path) -> list[tuple[str, str, object, str]]:
    book = load_workbook(path)
    out = [
        (sheet.title, cell.coordinate, cell.value, cell.data_type)
        for sheet in book.worksheets
        for row in sheet.iter_rows()
        for cell in row
        if cell.value is not None
    ]
    book.close()
    return out


def _assert_text_not_formula(path: Path, hostile: tuple[str, ...]) -> None:
    cells = _cells(path)
    formulas = [c for c in cells if c[3] == "f"]
    assert formulas == []
    # the hostile texts did reach the workbook, as text cells
    for text in hostile:
        found = [c for c in cells if c[2] == text]
        assert found, f"{text!r} not written"
        assert all(c[3] == "s" for c in found)


def test_revised_workbook_writes_formula_like_text_as_text(
    tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    schedule = _hostile_schedule(tmp_path / "panel.csv")
    output = tmp_path / "out.xlsx"
    argv = ["balance", str(schedule), "-o", str(output), "--no-tradeoff", "--time-limit", "2"]
    assert main(argv) == 0
    capsys.readouterr()
    _assert_text_not_formula(output, (HYPERLINK, COMMAND, *OTHERS))
    sheets = {c[0] for c in _cells(output) if c[2] == HYPERLINK}
    assert {"Layout", "Changes", "Circuits"} <= sheets


def test_batch_summary_writes_formula_like_text_as_text(
    tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    first = _hostile_schedule(tmp_path / "a.csv")
    second = _hostile_schedule(tmp_path / "b.csv", name=HYPERLINK)
    summary = tmp_path / "summary.xlsx"
    argv = ["check", str(first), str(second), "--summary", str(summary), "--jobs", "1"]
    assert main(argv) == 0
    capsys.readouterr()
    _assert_text_not_formula(summary, (COMMAND, HYPERLINK))


def test_building_workbook_writes_formula_like_text_as_text(
    tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    mdp = tmp_path / "mdp.csv"
    mdp.write_text(
        "System,208Y/120\nSpaces,24\nCircuit,Description,Poles,Load (VA)\n"
        f"1,Feeder,3,0\n2,{_csv_cell(HYPERLINK)},1,1200\n4,Lights,1,700\n",
        encoding="utf-8",
    )
    _hostile_schedule(tmp_path / "lp1.csv")
    (tmp_path / "building.csv").write_text(
        f"Panel,Schedule,Fed from,Feeder circuit\nMDP,mdp.csv,,\n{_csv_cell(COMMAND)},lp1.csv,"
        "MDP,1\n",
        encoding="utf-8",
    )
    output = tmp_path / "building-out.xlsx"
    argv = ["building", str(tmp_path), "--balance", "-o", str(output), "--time-limit", "2"]
    assert main(argv) == 0
    capsys.readouterr()
    _assert_text_not_formula(output, (HYPERLINK, COMMAND, *OTHERS))

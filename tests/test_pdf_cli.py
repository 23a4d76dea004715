"""``--pdf``, ``--paper`` and ``--no-color`` on the command line."""

from __future__ import annotations

import shutil
from pathlib import Path

import pypdf
import pytest
from conftest import SAMPLES

from balancer.cli.main import main


@pytest.fixture
def schedule(tmp_path: Path) -> Path:
    source = SAMPLES / "office-208y120.xlsx"  # demo data bundled with the project
    target = tmp_path / source.name
    shutil.copy(source, target)
    return target


def test_check_pdf_default_name_and_paper(
    schedule: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    before = schedule.read_bytes()
    assert main(["check", str(schedule), "--pdf", "--paper", "a4", "--no-color"]) == 0
    pdf = schedule.with_suffix(".pdf")
    assert pdf.exists()
    reader = pypdf.PdfReader(pdf)
    assert float(reader.pages[0].mediabox.height) == pytest.approx(841.9, abs=1)
    out = capsys.readouterr().out
    assert f"Wrote {pdf}" in out
    assert "\033[" not in out  # no colour codes with --no-color or a captured stream
    assert "heaviest" in out  # the bars are in the summary
    assert schedule.read_bytes() == before  # the input is never written


def test_check_pdf_refuses_the_input(schedule: Path, capsys: pytest.CaptureFixture[str]) -> None:
    before = schedule.read_bytes()
    assert main(["check", str(schedule), "--pdf", str(schedule)]) != 0
    assert "input" in capsys.readouterr().err
    assert schedule.read_bytes() == before


def test_balance_writes_workbook_with_demand_and_pdf(
    schedule: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    from openpyxl import load_workbook

    before = schedule.read_bytes()
    # the trade-off table is not what this checks: without it the run takes a second
    argv = ["balance", str(schedule), "--pdf", "--time-limit", "5", "--no-tradeoff"]
    code = main([*argv, "--no-color"])
    assert code == 0
    workbook = schedule.with_name(f"{schedule.stem}-balanced.xlsx")
    pdf = schedule.with_name(f"{schedule.stem}-balanced.pdf")
    assert "Demand" in load_workbook(workbook).sheetnames
    text = " ".join(page.extract_text() for page in pypdf.PdfReader(pdf).pages)
    assert "Circuit directory" in text
    assert "Demand load and feeder check" in text
    out = capsys.readouterr().out
    assert f"Wrote {pdf}" in out
    assert "After" in out
    assert schedule.read_bytes() == before

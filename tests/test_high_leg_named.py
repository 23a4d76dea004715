"""A high-leg delta panel reads as one, with its high leg and that leg's voltage to neutral
named (NEC 110.15 marking, 408.3(E) position on B; docs/references.md), in the terminal, the
revised workbook and the PDF."""

from __future__ import annotations

from pathlib import Path

import pytest
from conftest import SAMPLES
from openpyxl import load_workbook
from pypdf import PdfReader

from balancer.cli.main import main

SHOP = SAMPLES / "machine-shop-240-120-high-leg.xlsx"  # demo data
NAMED = "high leg B (208 V to neutral)"


def test_check_names_the_high_leg(capsys: pytest.CaptureFixture[str], tmp_path: Path) -> None:
    pdf = tmp_path / "shop.pdf"
    assert main(["check", str(SHOP), "--pdf", str(pdf)]) == 0
    out = capsys.readouterr().out
    assert "240/120 V high-leg delta" in out
    assert NAMED in out
    first_page = PdfReader(pdf).pages[0].extract_text()
    assert NAMED in " ".join(first_page.split())


def test_revised_workbook_names_the_high_leg(
    capsys: pytest.CaptureFixture[str], tmp_path: Path
) -> None:
    out = tmp_path / "shop-balanced.xlsx"
    assert main(["balance", str(SHOP), "-o", str(out), "--no-tradeoff", "--time-limit", "10"]) == 0
    capsys.readouterr()
    summary = load_workbook(out)["Summary"]
    texts = [c.value for row in summary.iter_rows() for c in row if isinstance(c.value, str)]
    assert any(NAMED in t for t in texts)


NOTE = "High leg: line B, 208 V to neutral; no line-to-neutral loads on it"


@pytest.fixture(scope="module")
def shop_outputs(tmp_path_factory: pytest.TempPathFactory) -> tuple[Path, Path, str]:
    """The shop balanced once (demo data): its workbook, its PDF and the terminal text with the
    work order."""
    import contextlib
    import io

    folder = tmp_path_factory.mktemp("shop")
    book, pdf = folder / "shop-balanced.xlsx", folder / "shop.pdf"
    argv = ["balance", str(SHOP), "-o", str(book), "--pdf", str(pdf), "--no-tradeoff"]
    out = io.StringIO()
    with contextlib.redirect_stdout(out):
        assert main([*argv, "--time-limit", "10", "--work-order", "--no-color"]) == 0
    return book, pdf, out.getvalue()


def _sheet_text(book: Path, sheet: str) -> list[str]:
    ws = load_workbook(book)[sheet]
    return [c.value for row in ws.iter_rows() for c in row if isinstance(c.value, str)]


def test_circuits_sheet_names_the_high_leg_and_still_reads_back(
    shop_outputs: tuple[Path, Path, str],
) -> None:
    from balancer.io.reader import read_schedule

    book, _, _ = shop_outputs
    ws = load_workbook(book)["Circuits"]
    assert str(ws["A1"].value).startswith(NOTE)
    assert ws["A2"].value == "Space"  # the header under the note
    assert ws.print_title_rows == "$2:$2"
    again = read_schedule(book)  # the note is not taken for a header or a panel attribute
    assert again.system.high_leg == "B"
    assert len(again.circuits) == len(read_schedule(SHOP).circuits)


def test_layout_names_and_marks_the_high_leg(shop_outputs: tuple[Path, Path, str]) -> None:
    book, _, _ = shop_outputs
    ws = load_workbook(book)["Layout"]
    assert NAMED in ws["A2"].value
    assert NOTE in ws["A2"].value
    line_col = next(c.column for c in ws[3] if c.value == "Line")
    fills = {
        ws.cell(r, line_col).value: ws.cell(r, line_col).fill.fgColor.rgb for r in range(4, 10)
    }
    assert fills["B"] != fills["A"] == fills["C"]  # the high leg's rows stand out


def test_pdf_directory_and_work_order_name_the_high_leg(
    shop_outputs: tuple[Path, Path, str],
) -> None:
    _, pdf, _ = shop_outputs
    pages = [" ".join(p.extract_text().split()) for p in PdfReader(pdf).pages]
    directory = next(p for p in pages if "Circuit directory" in p)
    assert NOTE in directory
    work = next(p for p in pages if "Work order, panel" in p)
    assert f"240/120 V high-leg delta, 3-phase 4-wire, {NAMED}. {NOTE}" in work


def test_work_order_sheet_and_terminal_name_the_high_leg(
    shop_outputs: tuple[Path, Path, str],
) -> None:
    book, _, text = shop_outputs
    assert any(NOTE in t for t in _sheet_text(book, "Work order"))
    work = text.split("Work order for panel")[1]
    assert NOTE in " ".join(work.split())
    assert text.splitlines()[0].startswith("Panel MS | 240/120 V high-leg delta")


def test_other_systems_have_no_high_leg_note() -> None:
    from balancer.domain.systems import get_system

    assert get_system("208Y/120").high_leg_note() == ""
    assert get_system("240/120").high_leg_note().startswith(NOTE)

"""What a designer signs: every page of each sample's PDF, read back as text with pypdf, cuts
nothing, carries the project, date and revision, names the high leg of a high-leg delta panel
(NEC 110.15 marking, 408.3(E)(1) position B: docs/references.md) and, under ``--basis
measured``, says the figures stand on clamp readings. The revised workbook's printed sheets
carry the same running header."""

from __future__ import annotations

import re
from pathlib import Path

import pytest
from conftest import SAMPLES
from openpyxl import load_workbook
from pypdf import PdfReader

from balancer.cli.main import main
from balancer.io.reader import read_schedule

HIGH_LEG = "240/120 V high-leg delta, 3-phase 4-wire, high leg B (208 V to neutral)"
BASIS = "Load basis: clamp-meter readings where given, design VA otherwise"
SAMPLE_FILES = sorted([*SAMPLES.glob("*.xlsx"), *SAMPLES.glob("*.csv")])  # demo data


def _flat(text: str) -> str:
    return " ".join(text.split())


def _balance(sample: Path, tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> tuple[Path, Path]:
    pdf, book = tmp_path / f"{sample.stem}.pdf", tmp_path / f"{sample.stem}-balanced.xlsx"
    extra = ["--basis", "measured"] if sample.stem.startswith("clinic") else []
    argv = [str(sample), "-o", str(book), "--pdf", str(pdf), "--no-tradeoff", "--time-limit", "10"]
    assert main(["balance", *argv, *extra]) == 0
    capsys.readouterr()
    return pdf, book


def test_every_sample_is_tested() -> None:
    assert {p.suffix for p in SAMPLE_FILES} == {".xlsx", ".csv"}
    assert len(SAMPLE_FILES) >= 6


@pytest.mark.parametrize("sample", SAMPLE_FILES, ids=lambda p: p.stem)
def test_pdf_pages_carry_the_title_block(
    sample: Path, tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    pdf, book = _balance(sample, tmp_path, capsys)
    header = read_schedule(sample).header
    pages = [_flat(page.extract_text()) for page in PdfReader(pdf).pages]
    assert len(pages) >= 3
    revision = f"Revision: {header.revision or 'not given'}, balanced "
    for number, text in enumerate(pages, start=1):
        assert "…" not in text, f"page {number} cuts text"
        assert f"Project: {header.project or 'not given'}" in text, f"page {number}"
        assert f"Date: {header.date or 'not given'}" in text, f"page {number}"
        assert revision in text, f"page {number}"
        if sample.stem.startswith("machine-shop"):
            assert HIGH_LEG in text, f"page {number} does not name the high leg"
        if sample.stem.startswith("clinic"):
            assert BASIS in text, f"page {number} does not state the load basis"
    _no_text_runs_over(book)
    _no_solver_words(pages, book)
    # the printed workbook: every sheet's page header carries the same
    for ws in load_workbook(book).worksheets:
        parts = (ws.oddHeader.left, ws.oddHeader.center, ws.oddHeader.right)
        printed = " ".join(part.text or "" for part in parts)
        assert f"Project: {header.project or 'not given'}" in printed, ws.title
        assert revision in printed, ws.title
        if sample.stem.startswith("machine-shop"):
            assert HIGH_LEG in printed, ws.title
        if sample.stem.startswith("clinic"):
            assert BASIS in (ws.oddFooter.center.text or ""), ws.title


def test_samples_carry_their_title_blocks() -> None:
    # the generators give each workbook sample a full title block (demo data); the CSV is bare
    for sample in SAMPLE_FILES:
        header = read_schedule(sample).header
        if sample.suffix == ".csv":
            assert header.project == ""
            continue
        assert all((header.project, header.date, header.revision)), sample.name
        assert header.sccr_ka is not None, sample.name
        assert header.enclosure.startswith("NEMA "), sample.name
        assert header.mounting in ("surface", "flush"), sample.name


SOLVER_WORDS = re.compile(r"\b(bounds?|gap|tolerance|polygon|relaxation|incumbent)\b", re.I)


def _no_solver_words(pages: list[str], book: Path) -> None:
    """What a designer signs speaks plainly: no solver terms on any page or sheet (the exact
    figures are in --verbose and the JSON)."""
    for number, text in enumerate(pages, start=1):
        assert not SOLVER_WORDS.search(text), f"page {number}: {SOLVER_WORDS.search(text)}"
    for ws in load_workbook(book).worksheets:
        for row in ws.iter_rows():
            for cell in row:
                if isinstance(cell.value, str) and SOLVER_WORDS.search(cell.value):
                    raise AssertionError(f"{ws.title}!{cell.coordinate}: {cell.value!r}")


def _no_text_runs_over(book: Path) -> None:
    """No cell's text is wider than its column unless it wraps, is merged across columns, or
    is a sheet's one-cell title or note row (text there runs over empty cells)."""
    for ws in load_workbook(book).worksheets:
        merged = {
            (r, c)
            for area in ws.merged_cells.ranges
            for r in range(area.min_row, area.max_row + 1)
            for c in range(area.min_col, area.max_col + 1)
        }
        for row in ws.iter_rows():
            filled = [cell for cell in row if cell.value is not None]
            if len(filled) == 1 and filled[0].column == 1:
                continue
            for cell in filled:
                if (cell.row, cell.column) in merged or cell.alignment.wrap_text:
                    continue
                value = cell.value
                shown = f"{value:,.1f}" if isinstance(value, float) else str(value)
                width = ws.column_dimensions[cell.column_letter].width or 8.43  # the default
                assert len(shown) <= width, f"{ws.title}!{cell.coordinate}: {shown!r}"

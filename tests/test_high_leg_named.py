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

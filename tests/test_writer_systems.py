"""Workbook and PDF for every kind of system: the bundled demo samples and a 3-wire delta.

Each is written unchanged (no moves) and read back: the per-line figures must survive."""

from __future__ import annotations

from pathlib import Path

import pypdf
import pytest
from openpyxl import load_workbook

from balancer.domain.panel import Circuit, Panel
from balancer.domain.result import BalanceResult, SolveStatus
from balancer.domain.systems import get_system
from balancer.io.pdf import write_pdf
from balancer.io.reader import read_schedule
from balancer.io.writer import write_workbook
from balancer.physics.analysis import Loads, analyze

SAMPLES = Path(__file__).resolve().parents[1] / "sample_schedules"
SAMPLE_FILES = [
    "office-208y120.xlsx",
    "bakery-120-240.xlsx",
    "workshop-480y277.xlsx",
    "salon-208y120.csv",
]  # demo data bundled with the project


def _unchanged(panel: Panel) -> BalanceResult:
    loads = analyze(panel)
    return BalanceResult(
        before_panel=panel,
        after_panel=panel,
        before=loads,
        after=loads,
        status=SolveStatus.UNCHANGED,
        engine="highs",
        tolerance_va=1.0,
        lower_bound_spread_va=loads.spread_va,
        moves=(),
    )


def _same_figures(first: Loads, second: Loads) -> None:
    assert first.phase_va == pytest.approx(second.phase_va)
    assert first.line_a == pytest.approx(second.line_a)
    assert first.neutral_a == pytest.approx(second.neutral_a)


def _delta_panel() -> Panel:
    """Invented demo panel on a 480 V 3-wire delta: 2- and 3-pole loads only, no neutral."""
    circuits = (
        Circuit(
            id="1", description="Demo pump", poles=3, load_va=15000.0, spaces=(1, 3, 5), trip_a=30.0
        ),
        Circuit(
            id="2", description="Demo heater", poles=2, load_va=9600.0, spaces=(2, 4), trip_a=30.0
        ),
        Circuit(
            id="6", description="Demo welder", poles=2, load_va=7200.0, spaces=(6, 8), trip_a=20.0
        ),
    )
    return Panel("DEMO-D1", get_system("480 delta"), 12, circuits, source="demo-d1.xlsx")


@pytest.mark.parametrize("name", SAMPLE_FILES)
def test_samples_round_trip(tmp_path: Path, name: str) -> None:
    panel = read_schedule(SAMPLES / name)
    result = _unchanged(panel)
    out = write_workbook(result, tmp_path / "out.xlsx")
    _same_figures(analyze(read_schedule(out)), result.after)
    pdf = write_pdf(tmp_path / "out.pdf", panel, result.after, result=result)
    text = " ".join(" ".join(p.extract_text().split()) for p in pypdf.PdfReader(pdf).pages)
    for circuit in panel.circuits:
        assert circuit.description in text


def test_delta_panel_has_no_neutral_anywhere(tmp_path: Path) -> None:
    panel = _delta_panel()
    result = _unchanged(panel)
    out = write_workbook(result, tmp_path / "d.xlsx")
    wb = load_workbook(out)
    summary = {r[0]: r for r in wb["Summary"].iter_rows(values_only=True) if r[0]}
    assert summary["Neutral current A RMS"][1:3] == ("no neutral", "no neutral")
    phasor_names = [r[0] for r in wb["Phasors"].iter_rows(min_row=3, max_row=6, values_only=True)]
    assert "Neutral" not in phasor_names
    _same_figures(analyze(read_schedule(out)), result.after)
    pdf = write_pdf(tmp_path / "d.pdf", panel, result.after)
    first = " ".join(pypdf.PdfReader(pdf).pages[0].extract_text().split())
    assert "Neutral" not in first.split("Total load")[0]  # no neutral row in the line table

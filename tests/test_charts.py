"""Native workbook charts point at the right cells; the phasor diagram's data is right."""

from __future__ import annotations

import cmath
import math
from pathlib import Path

import pytest
from openpyxl import load_workbook
from writer_demo import demo_panel, demo_result

from balancer.domain.panel import Circuit, Panel
from balancer.domain.systems import get_system
from balancer.io.charts import (
    draw_phasor_diagram,
    phasor_arrows,
    phasor_figure_bytes,
    save_phasor_diagram,
)
from balancer.io.writer import write_workbook
from balancer.physics.analysis import analyze

ATOL_A = 1e-9


def _refs(chart: object) -> list[str]:
    return [s.val.numRef.f for s in chart.series]  # type: ignore[attr-defined]


@pytest.fixture
def workbook(tmp_path: Path) -> object:
    return load_workbook(write_workbook(demo_result(), tmp_path / "c.xlsx"))


def test_phase_chart_references_the_per_line_table(workbook: object) -> None:
    ws = workbook["Summary"]  # type: ignore[index]
    (chart,) = ws._charts
    header = next(r for r in range(1, 40) if ws.cell(r, 2).value == "Before VA")
    first, last = header + 1, header + 3
    assert _refs(chart) == [f"'Summary'!$B${first}:$B${last}", f"'Summary'!$C${first}:$C${last}"]
    cat = chart.series[0].cat
    ref = cat.strRef.f if cat.strRef is not None else cat.numRef.f
    assert ref == f"'Summary'!$A${first}:$A${last}"
    # The average line is a second, combined line chart on column D.
    (average,) = chart._charts[1:]
    assert _refs(average) == [f"'Summary'!$D${first}:$D${last}"]
    assert ws.cell(first, 4).value == pytest.approx(demo_result().after.total_va / 3)


def test_tradeoff_chart_references_moves_and_imbalance(workbook: object) -> None:
    ws = workbook["Trade-off"]  # type: ignore[index]
    (chart,) = ws._charts
    rows = len(demo_result().tradeoff)
    assert _refs(chart) == [f"'Trade-off'!$C$3:$C${2 + rows}"]
    cat = chart.series[0].cat
    ref = cat.numRef.f if cat.numRef is not None else cat.strRef.f
    assert ref == f"'Trade-off'!$A$3:$A${2 + rows}"
    assert ws["C2"].value == "Imbalance %"


def test_arrows_match_analysis_magnitudes() -> None:
    panel = demo_panel()
    loads = analyze(panel)
    arrows = {a.label: a for a in phasor_arrows(panel)}
    for line in "ABC":
        assert arrows[line].magnitude_a == pytest.approx(loads.line_a[line], abs=ATOL_A)
        assert arrows[line].kind == "line"
    assert arrows["N"].kind == "neutral"
    assert arrows["N"].magnitude_a == pytest.approx(loads.neutral_a, abs=ATOL_A)


def test_single_unity_pf_load_arrow_lies_on_its_voltage() -> None:
    """1200 VA at 120 V on line B of a 208Y/120 wye: 10 A at −120°, and the same 10 A returns
    on the neutral (Ohm's law and Kirchhoff's current law; common practice A-B-C at 0/−120/120°)."""
    panel = Panel(
        "T",
        get_system("208Y/120"),
        12,
        (Circuit(id="3", description="heater", poles=1, load_va=1200.0, spaces=(3,)),),
    )
    arrows = {a.label: a for a in phasor_arrows(panel)}
    assert arrows["B"].current_a == pytest.approx(cmath.rect(10.0, math.radians(-120)))
    assert arrows["A"].magnitude_a == pytest.approx(0.0, abs=ATOL_A)
    assert arrows["N"].magnitude_a == pytest.approx(10.0)
    assert arrows["B"].angle_deg == pytest.approx(-120.0)


def test_balanced_panel_has_near_zero_neutral() -> None:
    """Equal unity-PF loads on A, B and C: the neutral sum vanishes (balanced three-phase,
    common practice; docs/references.md); the tolerance is scaled to the line currents."""
    circuits = tuple(
        Circuit(id=str(s), description=f"load {s}", poles=1, load_va=1800.0, spaces=(s,))
        for s in (1, 3, 5)
    )
    panel = Panel("T", get_system("208Y/120"), 12, circuits)
    arrows = {a.label: a for a in phasor_arrows(panel)}
    assert arrows["N"].magnitude_a < 1e-12 * 3 * 15.0


def test_no_neutral_arrow_on_a_three_wire_delta() -> None:
    circuits = (Circuit(id="1", description="motor", poles=3, load_va=9000.0, spaces=(1, 3, 5)),)
    panel = Panel("T", get_system("480 delta"), 12, circuits)
    labels = [a.label for a in phasor_arrows(panel)]
    assert labels == ["A", "B", "C"]


def test_diagram_renders_png_and_svg(tmp_path: Path) -> None:
    result = demo_result()
    fig = draw_phasor_diagram(
        phasor_arrows(result.before_panel),
        phasor_arrows(result.after_panel),
        harmonic_neutral_rms_a=(60.0, 20.0),
        title="demo",
    )
    assert len(fig.axes) == 3  # before, after, neutral bars
    png, svg = save_phasor_diagram(fig, tmp_path / "phasors")
    assert png.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"
    text = svg.read_text("utf-8")
    assert "<svg" in text
    assert sorted(p.name for p in tmp_path.iterdir()) == ["phasors.png", "phasors.svg"]
    assert phasor_figure_bytes(draw_phasor_diagram(phasor_arrows(result.after_panel)))[:4] == (
        b"\x89PNG"
    )

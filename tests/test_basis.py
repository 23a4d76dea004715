"""Measured loads against schedule loads: conversion to VA, precedence and the basis report."""

from __future__ import annotations

import math

import pytest

from balancer.domain.panel import Circuit, LineReadings, Panel
from balancer.domain.systems import get_system
from balancer.errors import ScheduleError
from balancer.field.basis import apply_basis, basis_details, basis_json, basis_lines, measured_va
from balancer.physics.analysis import analyze

ATOL_VA = 1e-9


def _panel(*circuits: Circuit, system: str = "208Y/120", spaces: int = 12) -> Panel:
    return Panel("T", get_system(system), spaces, tuple(circuits))


# VA = V × I for single-phase loads and √3 × V_LL × I for a balanced three-phase load
# (common practice; any circuits textbook).
@pytest.mark.parametrize(
    ("system", "poles", "spaces", "amps", "expected_va"),
    [
        ("208Y/120", 1, (1,), 10.0, 120.0 * 10.0),
        ("208Y/120", 2, (1, 3), 15.0, 208.0 * 15.0),
        ("208Y/120", 3, (1, 3, 5), 20.0, math.sqrt(3) * 208.0 * 20.0),
        ("480Y/277", 1, (2,), 8.0, 277.0 * 8.0),
        ("480Y/277", 3, (2, 4, 6), 30.0, math.sqrt(3) * 480.0 * 30.0),
        ("120/240", 2, (1, 3), 12.5, 240.0 * 12.5),
        ("400Y/230", 1, (3,), 4.0, 230.0 * 4.0),
    ],
)
def test_reading_becomes_va_with_the_circuit_voltage(
    system: str, poles: int, spaces: tuple[int, ...], amps: float, expected_va: float
) -> None:
    circuit = Circuit("c", "load", poles, 500.0, spaces, measured_a=amps)
    panel = _panel(circuit, system=system)
    assert measured_va(panel, circuit) == pytest.approx(expected_va, abs=ATOL_VA)


def test_three_pole_hand_figure() -> None:
    # √3 × 208 V × 20 A = 7205.3 VA (C: 1.7320508 × 4160 = 7205.33).
    circuit = Circuit("m", "RTU", 3, 9000.0, (1, 3, 5), measured_a=20.0)
    assert measured_va(_panel(circuit), circuit) == pytest.approx(7205.33, abs=0.01)


def test_explicit_circuit_voltage_wins() -> None:
    circuit = Circuit("w", "heater", 2, 4000.0, (1, 3), measured_a=10.0, voltage_v=240.0)
    assert measured_va(_panel(circuit, system="120/240"), circuit) == pytest.approx(2400.0)


def test_per_line_readings_are_averaged_for_a_multipole_circuit() -> None:
    readings = LineReadings.of({"A": 18.0, "B": 20.0, "C": 22.0})
    circuit = Circuit("m", "AHU", 3, 9000.0, (1, 3, 5), measured_a=99.0, measured_line_a=readings)
    # The per-line readings win over the single reading; their average is 20 A.
    assert measured_va(_panel(circuit), circuit) == pytest.approx(math.sqrt(3) * 208.0 * 20.0)


def test_per_line_reading_on_a_line_the_circuit_is_not_on_is_named() -> None:
    # Spaces 3 and 5 are lines B and C on a 208Y/120 panel (common-practice numbering).
    readings = LineReadings.of({"A": 10.0, "C": 11.0})
    circuit = Circuit("d", "dryer", 2, 5000.0, (3, 5), measured_line_a=readings, source_row=14)
    with pytest.raises(ScheduleError) as caught:
        measured_va(_panel(circuit), circuit)
    text = str(caught.value)
    assert "row 14" in text
    assert "not A" in text


def test_bad_readings_are_all_reported_with_their_rows() -> None:
    # The reader refuses these at their cells (test_typed_columns.py); a circuit made in code
    # can still hold them, and the basis names them too.
    nan = LineReadings.of({"A": math.nan})
    a = Circuit("1", "x", 2, 100.0, (1, 3), measured_line_a=nan, source_row=5)
    b = Circuit("2", "y", 1, 100.0, (2,), measured_a=-3.0, source_row=6)
    with pytest.raises(ScheduleError) as caught:
        apply_basis(_panel(a, b), "measured")
    assert len(caught.value.problems) == 2
    assert "row 5" in str(caught.value)
    assert "row 6" in str(caught.value)


def _mixed_panel() -> Panel:
    return _panel(
        Circuit("1", "Lights", 1, 1000.0, (1,), measured_a=5.0),  # reading 600 VA < schedule
        Circuit("2", "Heater", 1, 1000.0, (3,), measured_a=12.0),  # reading 1440 VA > schedule
        Circuit("3", "Spare", 1, 0.0, (5,), load_class="spare"),  # no reading
        Circuit("4", "New coffee bar", 1, 800.0, ()),  # no reading, not placed
    )


@pytest.mark.parametrize(
    ("basis", "expected_va", "expected_used"),
    [
        ("nameplate", [1000.0, 1000.0, 0.0, 800.0], ["nameplate"] * 4),
        ("measured", [600.0, 1440.0, 0.0, 800.0], ["measured"] * 2 + ["nameplate"] * 2),
        ("larger", [1000.0, 1440.0, 0.0, 800.0], ["nameplate", "measured"] + ["nameplate"] * 2),
    ],
)
def test_basis_precedence(basis: str, expected_va: list[float], expected_used: list[str]) -> None:
    panel = _mixed_panel()
    new, used = apply_basis(panel, basis)  # type: ignore[arg-type]
    assert [c.basis_va for c in new.circuits] == pytest.approx(expected_va)
    # the design load stays the schedule's, whatever the basis
    assert [c.load_va for c in new.circuits] == [c.load_va for c in panel.circuits]
    assert [c.balance_va is not None for c in new.circuits] == [
        u == "measured" for u in used.values()
    ]
    assert [used[c.id] for c in panel.circuits] == expected_used


def test_input_panel_is_not_changed() -> None:
    panel = _mixed_panel()
    before = [c.load_va for c in panel.circuits]
    new, _ = apply_basis(panel, "measured")
    assert [c.load_va for c in panel.circuits] == before
    assert new is not panel
    assert new.circuits[2] is panel.circuits[2]  # untouched circuits are shared, not copied


def test_analysis_sees_the_measured_loads() -> None:
    new, _ = apply_basis(_mixed_panel(), "measured")
    loads = analyze(new)
    # Space 1 is line A, space 3 line B, space 5 line C (common practice numbering).
    assert loads.phase_va["A"] == pytest.approx(600.0)
    assert loads.phase_va["B"] == pytest.approx(1440.0)
    assert loads.unplaced == ("4",)


def test_unknown_basis_is_refused() -> None:
    with pytest.raises(ValueError, match="basis must be one of"):
        apply_basis(_mixed_panel(), "guess")  # type: ignore[arg-type]


def test_basis_report_names_each_circuit_and_its_basis() -> None:
    details = basis_details(_mixed_panel(), "larger")
    lines = basis_lines(details, "larger")
    assert lines[0].startswith("Load basis: larger — 1 circuit(s) on readings, 3 on schedule VA")
    assert len(lines) == 1 + 4
    assert "measured" in lines[2]
    assert "1,440 VA" in lines[2]
    assert "no reading" in lines[3]
    report = basis_json(details, "larger")
    assert report["requested"] == "larger"
    assert [c["used"] for c in report["circuits"]] == [
        "nameplate",
        "measured",
        "nameplate",
        "nameplate",
    ]
    assert report["circuits"][0]["measured_va"] == pytest.approx(600.0)
    assert report["circuits"][2]["measured_va"] is None

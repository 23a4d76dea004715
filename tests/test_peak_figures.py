"""The load-over-time figures the outputs show: NEC 220.87 from the data against hand
arithmetic, the hour-by-line table, and the Intervals sheet of a long horizon."""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest
from openpyxl import load_workbook

from balancer.domain.panel import Circuit, Panel
from balancer.domain.result import BalanceOptions
from balancer.domain.systems import get_system
from balancer.intervals.series import LoadSeries
from balancer.io.writer import write_workbook
from balancer.optimize.engine import balance
from balancer.report.peak import existing_load, peak_figures

SYSTEM = get_system("208Y/120")


def _panel() -> Panel:
    circuits = (
        Circuit("1", "lights", 1, 1200.0, (1,)),
        Circuit("2", "heater", 1, 1200.0, (2,)),
        Circuit("3", "fridge", 1, 600.0, (3,)),
    )
    return Panel("DEMO", SYSTEM, 6, circuits)


def _series(va: np.ndarray, minutes: int, kind: str = "measured") -> LoadSeries:
    starts = np.datetime64("2026-01-05T00:00") + np.arange(len(va)) * np.timedelta64(minutes, "m")
    return LoadSeries("demo", kind, starts, minutes, ("1", "2", "3"), va)  # type: ignore[arg-type]


def test_existing_load_is_the_peak_15_minute_average_at_125_percent() -> None:
    """5-minute readings on line A (space 1 and 2 are line A): 1,200, 2,400, 3,600 VA in the
    first 15 minutes, then 600 VA. The highest 15-minute average is 2,400 VA = 20 A at 120 V;
    at 125 % (NEC 220.87) 25 A. Hand arithmetic."""
    panel = _panel()
    first = [[1200.0, 0.0, 0.0], [1200.0, 1200.0, 0.0], [1200.0, 2400.0, 0.0]]
    rest = [[600.0, 0.0, 0.0]] * 9
    series = _series(np.array(first + rest), 5)
    figures = peak_figures(series, panel, None)
    existing = figures.existing
    assert existing is not None
    assert existing.line == "A"
    assert existing.window_min == 15
    assert existing.demand_va == pytest.approx(2400.0)
    assert existing.demand_a == pytest.approx(20.0)
    assert existing.existing_a == pytest.approx(25.0)
    assert not existing.enough  # an hour of data, not 30 days
    assert "30 days" in existing.remark


def test_hourly_data_says_it_understates() -> None:
    panel = _panel()
    series = _series(np.full((24 * 31, 3), 600.0), 60)
    existing = existing_load(panel, series, peak_figures(series, panel, None).before_va)
    assert existing.window_min == 60
    assert not existing.enough
    assert "understates" in existing.remark


def test_typical_shapes_give_no_existing_load() -> None:
    series = _series(np.full((24, 3), 600.0), 60, kind="typical")
    assert peak_figures(series, _panel(), None).existing is None


def test_by_hour_means_each_hour_of_the_day() -> None:
    panel = _panel()
    va = np.zeros((48, 3))
    va[:, 0] = np.tile(np.arange(24) * 10.0, 2)  # circuit 1 (line A) draws 10 VA × the hour
    figures = peak_figures(_series(va, 60), panel, None)
    table = figures.by_hour(after=False)
    assert table.shape == (24, 3)
    assert table[:, 0] == pytest.approx(np.arange(24) * 10.0)
    assert table[:, 1] == pytest.approx(0.0)


def test_a_long_horizon_shows_the_weeks_around_the_widest(tmp_path: Path) -> None:
    """More than a year of hourly intervals: the Intervals sheet keeps four weeks around the
    widest interval, says so, and marks the widest."""
    panel = _panel()
    hours = 9_000
    rng = np.random.default_rng(5)
    va = rng.uniform(0.0, 1.0, (hours, 3)) * np.array([1200.0, 1200.0, 600.0])
    series = _series(va, 60)
    result = balance(panel, BalanceOptions(objective="peak", intervals=series))
    figures = peak_figures(series, panel, result)
    path = write_workbook(result, tmp_path / "long.xlsx", peak=figures, phasor_diagram=False)
    book = load_workbook(path)
    sheet = book["Intervals"]
    assert sheet.max_row == 4 * 7 * 24 + 1
    marked = [r for r in sheet.iter_rows(min_row=2, values_only=True) if r[-1] is not None]
    assert len(marked) == 1
    widest = figures.worst(after=True)
    assert marked[0][0] == figures.stamp(widest)
    notes = " ".join(str(c.value) for c in book["Load over time"]["A"] if c.value)
    assert "shows 672 of the 9,000 intervals" in notes

"""Balancing the worst interval of a load series: against every legal layout of small panels,
against an independent scipy.optimize.milp model over every interval, and on a case where the
connected-VA balance and the peak balance disagree."""

from __future__ import annotations

import random
import sys
from pathlib import Path

import numpy as np
import pytest
from scipy.optimize import Bounds, LinearConstraint, milp

from balancer.domain.panel import Circuit, Panel
from balancer.domain.result import BalanceOptions, SolveStatus
from balancer.domain.systems import get_system
from balancer.errors import SolverError
from balancer.intervals.figures import line_loads, peak_spread_va, peak_va, spreads_va
from balancer.intervals.series import LoadSeries
from balancer.optimize.engine import balance

sys.path.insert(0, str(Path(__file__).parent))
from exhaustive import all_layouts, random_panel

ATOL_VA = 1e-6


def _series(panel: Panel, va: np.ndarray, minutes: int = 60) -> LoadSeries:
    starts = np.datetime64("2026-01-05T00:00") + np.arange(len(va)) * np.timedelta64(minutes, "m")
    ids = tuple(c.id for c in panel.circuits)
    return LoadSeries("test series", "typical", starts, minutes, ids, va)


def _random_series(panel: Panel, rng: random.Random, intervals: int = 24) -> LoadSeries:
    va = np.array(
        [
            [c.load_va * rng.choice([0.0, 0.3, 0.6, 1.0]) for c in panel.circuits]
            for _ in range(intervals)
        ]
    )
    return _series(panel, va)


def _peak_options(series: LoadSeries) -> BalanceOptions:
    return BalanceOptions(objective="peak", intervals=series, time_limit_s=30.0)


def _moved(panel: Panel, layout: dict[str, tuple[int, ...]]) -> Panel:
    return panel.with_circuits([c.moved_to(layout[c.id]) for c in panel.circuits])


@pytest.mark.parametrize("seed", range(24))
def test_matches_every_layout(seed: int) -> None:
    """Least peak spread, then fewest moves, equal to the exhaustive search over every legal
    layout (tests/exhaustive.py, written apart from the optimiser)."""
    rng = random.Random(seed)
    panel = random_panel(rng, spaces=8, count=5, multiwire=seed % 4 == 0)
    series = _random_series(panel, rng)
    result = balance(panel, _peak_options(series))
    figures = []
    for layout in all_layouts(panel):
        moves = sum(1 for c in panel.circuits if c.placed and c.spaces != layout[c.id])
        figures.append((peak_spread_va(_moved(panel, layout), series), moves))
    best = min(v for v, _ in figures)
    tolerance = result.tolerance_va
    assert result.status is SolveStatus.OPTIMAL
    assert result.goal_proven
    assert result.goal_value <= best + tolerance + ATOL_VA
    assert result.goal_bound <= best + ATOL_VA  # the bound holds for every layout
    assert result.goal_value == pytest.approx(peak_spread_va(result.after_panel, series))
    fewest = min(m for v, m in figures if v <= result.goal_value + ATOL_VA)
    assert len(result.moves) == fewest


def test_peak_and_connected_balance_disagree() -> None:
    """Six 1,000 VA circuits, two per line: the connected VA is balanced as it stands (spread 0),
    but both daytime lighting circuits share line A and both night heaters line B. The peak goal
    moves them apart: the day interval then spreads 1,000 VA, not 2,000 (four 1,000 VA loads on
    three lines cannot do better)."""
    system = get_system("208Y/120")
    names = ["light 1", "light 2", "heater 1", "heater 2", "fridge 1", "fridge 2"]
    spaces = [(1,), (2,), (3,), (4,), (5,), (6,)]  # A, A, B, B, C, C
    circuits = tuple(
        Circuit(str(i + 1), name, 1, 1000.0, span)
        for i, (name, span) in enumerate(zip(names, spaces, strict=True))
    )
    panel = Panel("DEMO", system, 6, circuits)
    day = [1000.0, 1000.0, 0.0, 0.0, 1000.0, 1000.0]
    night = [0.0, 0.0, 1000.0, 1000.0, 1000.0, 1000.0]
    series = _series(panel, np.array([day, night]))
    connected = balance(panel, BalanceOptions())
    assert connected.after.spread_va == pytest.approx(0.0)
    assert not connected.moves  # nothing to gain on connected VA
    assert peak_spread_va(panel, series) == pytest.approx(2000.0)
    peak = balance(panel, _peak_options(series))
    assert peak.status is SolveStatus.OPTIMAL
    assert peak.goal_value == pytest.approx(1000.0)
    assert len(peak.moves) == 2  # one light and one heater trade places with other loads
    per_line = line_loads(peak.after_panel, series)
    assert spreads_va(per_line).max() == pytest.approx(1000.0)


def _milp_peak(panel: Panel, series: LoadSeries) -> float:
    """Least worst-interval spread over every interval, as its own model: a binary per circuit
    and line (1-pole circuits on a panel with room everywhere), z ≥ line a − line b for every
    interval and pair, solved by scipy.optimize.milp (HiGHS inside scipy)."""
    lines = panel.lines
    n, m, t = len(panel.circuits), len(lines), len(series.starts)
    count = n * m + 1  # x[i, j] then z
    rows, lower, upper = [], [], []
    for i in range(n):  # each circuit on one line
        row = np.zeros(count)
        row[i * m : (i + 1) * m] = 1
        rows.append(row)
        lower.append(1)
        upper.append(1)
    room = panel.spaces // m
    for j in range(m):  # no line takes more circuits than it has spaces
        row = np.zeros(count)
        row[j : n * m : m] = 1
        rows.append(row)
        lower.append(0)
        upper.append(room)
    for k in range(t):
        for a in range(m):
            for b in range(m):
                if a == b:
                    continue
                row = np.zeros(count)
                for i in range(n):
                    row[i * m + a] += series.va[k, i]
                    row[i * m + b] -= series.va[k, i]
                row[-1] = -1
                rows.append(row)
                lower.append(-np.inf)
                upper.append(0)
    cost = np.zeros(count)
    cost[-1] = 1
    integrality = np.ones(count)
    integrality[-1] = 0
    found = milp(
        cost,
        constraints=LinearConstraint(np.array(rows), lower, upper),
        integrality=integrality,
        bounds=Bounds(np.zeros(count), np.r_[np.ones(n * m), np.inf]),
        options={"mip_rel_gap": 0.0},
    )
    assert found.status == 0, found.message
    return float(found.fun)


@pytest.mark.parametrize("seed", range(6))
def test_matches_scipy_milp_over_every_interval(seed: int) -> None:
    """A fresh 208Y/120 layout of 1-pole loads over 96 intervals: the constraint-generated
    answer equals an independent model holding every interval (within the stated tolerance)."""
    rng = random.Random(100 + seed)
    system = get_system("208Y/120")
    circuits = tuple(
        Circuit(str(i + 1), f"load {i + 1}", 1, float(rng.choice([600, 900, 1200, 1500])))
        for i in range(9)
    )
    panel = Panel("DEMO", system, 12, circuits)
    hours = np.arange(96) % 24
    shapes = [
        np.clip(np.sin((hours - rng.uniform(0, 24)) / 24 * 2 * np.pi), 0, 1) for _ in circuits
    ]
    va = np.stack([c.load_va * s for c, s in zip(circuits, shapes, strict=True)], axis=1)
    series = _series(panel, va)
    result = balance(panel, BalanceOptions(objective="peak", intervals=series, fresh=True))
    reference = _milp_peak(panel, series)
    assert result.goal_proven
    assert result.goal_value >= reference - ATOL_VA  # nothing beats the full model
    assert result.goal_value <= reference + result.tolerance_va + ATOL_VA
    assert result.goal_bound <= reference + ATOL_VA


def test_per_line_series_cannot_choose() -> None:
    """Per-line readings say nothing of which circuit draws what: refused with a reason."""
    system = get_system("208Y/120")
    panel = Panel("DEMO", system, 6, (Circuit("1", "a", 1, 500.0, (1,)),))
    starts = np.array(["2026-01-05T00:00"], dtype="datetime64[m]")
    series = LoadSeries("lines", "measured", starts, 15, (), np.zeros((1, 0)), np.ones((1, 3)))
    with pytest.raises(SolverError, match="per-line readings"):
        balance(panel, _peak_options(series))


@pytest.mark.parametrize("seed", range(8))
def test_move_budget_is_kept(seed: int) -> None:
    """With at most one move (a trade-off row), the least peak spread among the layouts that
    move at most one breaker (exhaustive), and never more moves than that."""
    rng = random.Random(200 + seed)
    panel = random_panel(rng, spaces=8, count=5)
    series = _random_series(panel, rng)
    options = BalanceOptions(objective="peak", intervals=series, max_moves=1, time_limit_s=30.0)
    result = balance(panel, options)
    assert len(result.moves) <= 1
    best = min(
        peak_spread_va(_moved(panel, layout), series)
        for layout in all_layouts(panel)
        if sum(1 for c in panel.circuits if c.placed and c.spaces != layout[c.id]) <= 1
    )
    assert result.goal_value >= best - ATOL_VA
    assert result.goal_value <= best + result.tolerance_va + ATOL_VA
    assert result.goal_proven


@pytest.mark.parametrize("seed", range(8))
def test_heaviest_line_goal_matches_every_layout(seed: int) -> None:
    """Objective ``peak-line``: the least load on the heaviest line at its worst interval, then
    the fewest moves, against every legal layout."""
    rng = random.Random(300 + seed)
    panel = random_panel(rng, spaces=8, count=5, multiwire=seed % 3 == 0)
    series = _random_series(panel, rng)
    options = BalanceOptions(objective="peak-line", intervals=series, time_limit_s=30.0)
    result = balance(panel, options)
    figures = []
    for layout in all_layouts(panel):
        moves = sum(1 for c in panel.circuits if c.placed and c.spaces != layout[c.id])
        figures.append((peak_va(_moved(panel, layout), series, "line"), moves))
    best = min(v for v, _ in figures)
    assert result.first_goal == "peak-line"
    assert result.status is SolveStatus.OPTIMAL
    assert best - ATOL_VA <= result.goal_value <= best + result.tolerance_va + ATOL_VA
    assert result.goal_value == pytest.approx(peak_va(result.after_panel, series, "line"))
    fewest = min(m for v, m in figures if v <= result.goal_value + ATOL_VA)
    assert len(result.moves) == fewest

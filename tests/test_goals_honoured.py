"""The goal the user chose is the goal solved, end to end: with the trade-off table on, every
row and the arrangement recommended are checked against an exhaustive search over every legal
layout, for each goal, on placed panels and fresh layouts.

The reference figures are computed here from first principles (unity-PF current phasors of the
system's nominal voltages, common practice), and the transformer loading by
``balancer.physics.transformer.loading_pct``, not by the optimiser's linear terms.
"""

from __future__ import annotations

import cmath
import math
import random
from collections.abc import Callable, Mapping
from dataclasses import dataclass

import pytest
from conftest import slow_cases
from exhaustive import all_layouts, random_panel

from balancer.domain.panel import Panel
from balancer.domain.result import BalanceOptions, BalanceResult, SolveStatus
from balancer.domain.systems import Line
from balancer.field.run import FieldRun
from balancer.field.tradeoff import count_moves
from balancer.optimize import balance
from balancer.optimize.goals import CURRENT_GAP, POLYGON_ERROR, POLYGON_SIDES
from balancer.physics.transformer import loading_pct, loading_terms, supply_bank

GOALS = ("spread", "line", "neutral", "transformer")
BANK_KVA = 15.0
SPREAD_TOL_VA = 1.0
EPS = 1e-6
Layout = Mapping[str, tuple[int, ...]]


@dataclass(frozen=True)
class Figures:
    """One layout as the reference sees it."""

    moves: int
    true: float  # the goal's figure (a current's true magnitude)
    polygon: float  # what the engine minimises: the largest projection on the polygon's sides
    imbalance_pct: float


def _currents(panel: Panel, layout: Layout) -> tuple[dict[Line, float], dict[Line, complex]]:
    system = panel.system
    phase = dict.fromkeys(panel.lines, 0.0)
    current = dict.fromkeys(panel.lines, 0j)
    for c in panel.circuits:
        lines = [panel.geometry.line_of(s) for s in layout[c.id]]
        for line in lines:
            phase[line] += c.load_va / len(lines)
        if len(lines) == 1:
            v = system.voltage_phasor(lines[0])
            current[lines[0]] += c.load_va / abs(v) * v / abs(v)
        else:  # a 2-pole load across its two lines (unity PF)
            v = system.voltage_between(lines[0], lines[1])
            i = c.load_va / abs(v) * v / abs(v)
            current[lines[0]] += i
            current[lines[1]] -= i
    return phase, current


def _polygon(value: complex) -> float:
    return max(
        (value * cmath.rect(1.0, -2 * math.pi * k / POLYGON_SIDES)).real
        for k in range(POLYGON_SIDES)
    )


def _nema(values: list[float]) -> float:
    average = sum(values) / len(values)
    return 0.0 if average == 0 else max(abs(v - average) for v in values) / average * 100


def _reference(panel: Panel, goal: str) -> list[Figures]:
    bank = supply_bank(panel.system, BANK_KVA) if goal == "transformer" else None
    terms = loading_terms(bank) if bank else ()
    out = []
    for layout in all_layouts(panel):
        phase, current = _currents(panel, layout)
        moves = sum(1 for c in panel.circuits if c.spaces and layout[c.id] != c.spaces)
        if goal == "spread":
            true = polygon = max(phase.values()) - min(phase.values())
        elif goal == "line":
            true = max(abs(i) for i in current.values())
            polygon = max(_polygon(i) for i in current.values())
        elif goal == "neutral":
            neutral = sum(current.values(), 0j)
            true, polygon = abs(neutral), _polygon(neutral)
        else:
            assert bank is not None
            true = loading_pct(bank, current)
            polygon = max(_polygon(t.value(current)) for t in terms)
        out.append(Figures(moves, true, polygon, _nema(list(phase.values()))))
    return out


def _options(panel: Panel, goal: str, fresh: bool) -> BalanceOptions:
    terms = loading_terms(supply_bank(panel.system, BANK_KVA)) if goal == "transformer" else ()
    return BalanceOptions(
        fresh=fresh,
        time_limit_s=20,
        objective=goal,  # type: ignore[arg-type]
        transformer_terms=terms,
    )


def _run(panel: Panel, options: BalanceOptions) -> tuple[BalanceResult, FieldRun]:
    """What ``balance`` does for a schedule: solve, then the trade-off table and the pick."""
    run = FieldRun(tradeoff=True)
    result = balance(panel, options)
    return run.finish(panel, result, options, balance), run


def _gap(goal: str) -> float:
    return SPREAD_TOL_VA if goal == "spread" else CURRENT_GAP


def _fewest(figures: list[Figures], ok: Callable[[Figures], bool]) -> int:
    return min(f.moves for f in figures if ok(f))


def _panel(seed: int) -> Panel:
    return random_panel(random.Random(1000 + seed), spaces=8, count=5)


def _first_goal(panel: Panel, goal: str) -> str:
    if goal == "neutral" and not any(c.poles == 1 for c in panel.circuits):
        return "spread"  # no 1-pole load: the neutral does not depend on the arrangement
    return goal


# seed 4's panel takes about 4 s over the goals, the others 2 s or less: whole suite only
@pytest.mark.parametrize("goal", GOALS)
@pytest.mark.parametrize("seed", slow_cases(range(10), slow={4}))
def test_placed_panel_rows_and_pick_follow_the_goal(goal: str, seed: int) -> None:
    panel = _panel(seed)
    options = _options(panel, goal, fresh=False)
    result, run = _run(panel, options)
    goal = _first_goal(panel, goal)
    assert result.first_goal == goal
    figures = _reference(panel, goal)
    assert run.table is not None
    for row in run.table.rows:
        within = [f for f in figures if f.moves <= row.moves]
        least = min(f.true for f in within)
        least_polygon = min(f.polygon for f in within)
        assert row.goal == goal
        # legal within the budget, so never below the true least; proven rows are at it
        assert row.goal_value >= least - EPS
        if row.status is SolveStatus.OPTIMAL:
            ceiling = (least_polygon + _gap(goal)) * (1 + POLYGON_ERROR) + EPS
            assert row.goal_value <= ceiling
    assert all(r.status is SolveStatus.OPTIMAL for r in run.table.rows)
    moves = count_moves(panel, result.after_panel)
    chosen = result.recommendation
    assert chosen is not None
    if goal == "spread":
        # the fewest moves within one point of the best balance (the default margin)
        assert chosen.rule in ("within", "fewest-same", "best")
        limit = chosen.best_imbalance_pct + 1.0
        assert result.after.imbalance_pct <= limit + EPS
        fewest = _fewest(figures, lambda f: f.imbalance_pct <= limit + EPS)
        if chosen.proven:
            assert moves == fewest
        assert moves >= fewest
        return
    least = min(f.true for f in figures)
    least_polygon = min(f.polygon for f in figures)
    ceiling = (least_polygon + _gap(goal)) * (1 + POLYGON_ERROR) + EPS
    assert least - EPS <= result.goal_value <= ceiling
    # No needless moves: fewer moves cannot reach the least figure (a proven row with them
    # would have been chosen), and no more are spent than reach the least polygon figure.
    if moves:
        assert min(f.true for f in figures if f.moves < moves) > least + 1e-4
    assert moves <= _fewest(figures, lambda f: f.polygon <= least_polygon * (1 + 1e-6) + EPS)


@pytest.mark.parametrize("goal", GOALS)
@pytest.mark.parametrize("seed", slow_cases(range(5), slow={4}))
def test_fresh_layout_reaches_the_goals_least(goal: str, seed: int) -> None:
    panel = _panel(seed)
    result, run = _run(panel, _options(panel, goal, fresh=True))
    goal = _first_goal(panel, goal)
    assert run.table is None
    assert result.recommendation is None
    assert result.first_goal == goal
    assert result.goal_proven
    figures = _reference(panel, goal)
    least = min(f.true for f in figures)
    least_polygon = min(f.polygon for f in figures)
    assert least - EPS <= result.goal_value
    assert result.goal_value <= (least_polygon + _gap(goal)) * (1 + POLYGON_ERROR) + EPS

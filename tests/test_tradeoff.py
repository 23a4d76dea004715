"""Trade-off table: best spread per move budget against an exhaustive search over layouts,
monotone in the budget, and the fewest-moves answer for a target imbalance."""

from __future__ import annotations

import importlib
import itertools
import math
import random
from collections.abc import Callable, Mapping
from dataclasses import replace

import pytest
from exhaustive import all_layouts, group_ok, random_panel
from hypothesis import given, settings
from hypothesis import strategies as st

from balancer.domain.panel import Circuit, Panel
from balancer.domain.result import BalanceOptions, BalanceResult, SolveStatus
from balancer.domain.systems import get_system
from balancer.errors import SolverError
from balancer.field.tradeoff import (
    count_moves,
    fewest_moves_to,
    imbalance_floor_pct,
    tradeoff,
    tradeoff_json,
    tradeoff_lines,
    tradeoff_rows,
)
from balancer.physics.analysis import analyze
from balancer.physics.phasors import nema_unbalance_pct

TOL_VA = 1.0  # the optimiser's default absolute tolerance on the spread
ATOL_VA = 1e-6


# --- exhaustive reference --------------------------------------------------------------------


def _spread(panel: Panel, layout: dict[str, tuple[int, ...]]) -> float:
    phase = dict.fromkeys(panel.lines, 0.0)
    for c in panel.circuits:
        lines = [panel.geometry.line_of(s) for s in layout[c.id]]
        for line in lines:
            phase[line] += c.load_va / len(lines)
    return max(phase.values()) - min(phase.values())


def brute_best_by_budget(panel: Panel) -> dict[int, tuple[float, dict[str, tuple[int, ...]]]]:
    """For each move count m, the smallest spread of a layout with exactly m moves."""
    best: dict[int, tuple[float, dict[str, tuple[int, ...]]]] = {}
    for layout in all_layouts(panel):
        moves = sum(1 for c in panel.circuits if c.spaces and layout[c.id] != c.spaces)
        spread = _spread(panel, layout)
        if moves not in best or spread < best[moves][0] - ATOL_VA:
            best[moves] = (spread, layout)
    return best


def brute_at_most(
    best: dict[int, tuple[float, dict[str, tuple[int, ...]]]], k: int | None
) -> tuple[float, dict[str, tuple[int, ...]]]:
    """Best spread with at most k moves, ties to fewer moves."""
    candidates = [best[m] for m in sorted(best) if k is None or m <= k]
    return min(candidates, key=lambda pair: pair[0])  # min keeps the first (fewest-moves) tie


def _result(
    panel: Panel, layout: Mapping[str, tuple[int, ...]], status: SolveStatus
) -> BalanceResult:
    after = panel.with_circuits([c.moved_to(layout[c.id]) for c in panel.circuits])
    loads = analyze(after)
    return BalanceResult(
        before_panel=panel,
        after_panel=after,
        before=analyze(panel),
        after=loads,
        status=status,
        engine="exhaustive",
        tolerance_va=TOL_VA,
        # Enumeration proves its answer; a scripted unproven answer carries the trivial bound.
        lower_bound_spread_va=loads.spread_va if status is SolveStatus.OPTIMAL else 0.0,
        moves=(),
        first_goal="spread",
        goal_value=loads.spread_va,
        goal_bound=loads.spread_va if status is SolveStatus.OPTIMAL else 0.0,
        goal_proven=status is SolveStatus.OPTIMAL,
    )


def exhaustive_balance(panel: Panel, options: BalanceOptions) -> BalanceResult:
    """A stand-in optimiser built on the exhaustive search (proven by enumeration)."""
    best = brute_best_by_budget(panel)
    if options.target_imbalance_pct is not None:
        for m in sorted(best):
            layouts = [
                lay
                for lay in all_layouts(panel)
                if sum(1 for c in panel.circuits if c.spaces and lay[c.id] != c.spaces) == m
            ]
            for lay in layouts:
                result = _result(panel, lay, SolveStatus.OPTIMAL)
                if result.after.imbalance_pct <= options.target_imbalance_pct:
                    return result
    _, layout = brute_at_most(best, options.max_moves)
    return _result(panel, layout, SolveStatus.OPTIMAL)


# --- the exhaustive reference checks itself on a hand case ----------------------------------


def test_exhaustive_reference_on_a_hand_panel() -> None:
    # Three 1-pole loads all on line A (spaces 1, 2 and 7 of a 208Y/120 panel: rows 1 and 4
    # are line A by the common-practice numbering). Two moves put one load on each line.
    panel = Panel(
        "H",
        get_system("208Y/120"),
        8,
        (
            Circuit("a", "x", 1, 1000.0, (1,)),
            Circuit("b", "y", 1, 1000.0, (2,)),
            Circuit("c", "z", 1, 1000.0, (7,)),
        ),
    )
    best = brute_best_by_budget(panel)
    assert brute_at_most(best, 0)[0] == pytest.approx(3000.0)
    assert brute_at_most(best, 1)[0] == pytest.approx(2000.0)  # 2000 / 1000 / 0
    assert brute_at_most(best, 2)[0] == pytest.approx(0.0)


# --- the table against the exhaustive search -------------------------------------------------


@settings(max_examples=25, deadline=None)
@given(seed=st.integers(0, 2**32 - 1))
def test_rows_match_exhaustive_search(seed: int) -> None:
    panel = random_panel(random.Random(seed))
    best = brute_best_by_budget(panel)
    table = tradeoff(panel, balance_fn=exhaustive_balance)
    global_best = brute_at_most(best, None)[0]
    fewest_for_best = min(m for m in best if best[m][0] <= global_best + ATOL_VA)
    assert table.full_moves == fewest_for_best
    assert [r.moves for r in table.rows] == list(range(fewest_for_best + 1))
    for row in table.rows:
        assert row.spread_va == pytest.approx(brute_at_most(best, row.moves)[0], abs=ATOL_VA)
        assert row.status is SolveStatus.OPTIMAL
    spreads = [r.spread_va for r in table.rows]
    assert all(b <= a + ATOL_VA for a, b in itertools.pairwise(spreads))
    assert spreads[-1] == pytest.approx(global_best, abs=ATOL_VA)
    # Locked circuits never move in any row's arrangement.
    for result in table.results:
        for c in panel.circuits:
            if c.locked:
                assert result.after_panel.circuit(c.id).spaces == c.spaces


def _engine_balance() -> object | None:
    try:
        module = importlib.import_module("balancer.optimize")
    except ImportError:  # pragma: no cover - the package exists; its solver may not yet
        return None
    return getattr(module, "balance", None)


@pytest.mark.slow
@settings(max_examples=8, deadline=None)
@given(seed=st.integers(0, 2**32 - 1))
def test_engine_rows_match_exhaustive_search(seed: int) -> None:
    balance = _engine_balance()
    if balance is None:
        pytest.skip("balancer.optimize.balance is not available")
    rng = random.Random(seed)
    if rng.random() < 0.5:
        panel = random_panel(rng, spaces=10, count=3, multiwire=True)
    else:
        panel = random_panel(rng)
    best = brute_best_by_budget(panel)
    table = tradeoff(panel, BalanceOptions(time_limit_s=20.0), balance_fn=balance)  # type: ignore[arg-type]
    for row, result in zip(table.rows, table.results, strict=True):
        exact = brute_at_most(best, row.moves)[0]
        assert row.spread_va >= exact - ATOL_VA  # nothing beats the exhaustive minimum
        # Panels this small are proven well inside the time limit.
        assert row.status is SolveStatus.OPTIMAL
        assert row.spread_va <= exact + TOL_VA + ATOL_VA
        after = result.after_panel
        assert count_moves(panel, after) <= row.moves
        for c in panel.circuits:
            new = after.circuit(c.id)
            assert len(new.spaces) == c.poles  # a multi-pole breaker moves whole
            if c.locked:
                assert new.spaces == c.spaces
        assert group_ok(panel, {c.id: c.spaces for c in after.circuits})
    assert not table.capped
    global_best = brute_at_most(best, None)[0]
    assert table.rows[-1].spread_va <= global_best + TOL_VA + ATOL_VA
    # The table ends at the fewest moves that reach the best spread (spreads here are multiples
    # of 5 VA, so no other spread lies within the 1 VA tolerance).
    assert table.full_moves == min(m for m in best if best[m][0] <= global_best + TOL_VA)


# --- monotone repair, caps and contradictions ------------------------------------------------


def _scripted(
    panel: Panel, by_budget: Mapping[int | None, tuple[Mapping[str, tuple[int, ...]], SolveStatus]]
) -> Callable[[Panel, BalanceOptions], BalanceResult]:
    """A stand-in optimiser that answers each move budget with a given layout."""

    def run(p: Panel, options: BalanceOptions) -> BalanceResult:
        layout, status = by_budget[options.max_moves]
        return _result(p, layout, status)

    return run


def _three_on_a() -> Panel:
    return Panel(
        "H",
        get_system("208Y/120"),
        8,
        (
            Circuit("a", "x", 1, 1000.0, (1,)),
            Circuit("b", "y", 1, 1000.0, (2,)),
            Circuit("c", "z", 1, 1000.0, (7,)),
        ),
    )


def test_an_unproven_worse_row_keeps_the_smaller_budget_arrangement() -> None:
    panel = _three_on_a()
    start = {"a": (1,), "b": (2,), "c": (7,)}
    one = {"a": (1,), "b": (3,), "c": (7,)}
    best = {"a": (1,), "b": (3,), "c": (5,)}
    run = _scripted(
        panel,
        {
            None: (best, SolveStatus.OPTIMAL),
            0: (start, SolveStatus.OPTIMAL),
            1: (one, SolveStatus.OPTIMAL),
        },
    )
    table = tradeoff(panel, balance_fn=run)
    assert [r.spread_va for r in table.rows] == pytest.approx([3000.0, 2000.0, 0.0])
    assert table.notes == ()
    # An unproven one-move answer worse than staying put: at most one move also allows none.
    lean = {"a": (1,), "b": (3,), "c": (7,)}  # A 2000, B 1000, C 0 VA
    two_moves = {"a": (2,), "b": (3,), "c": (5,)}  # a stays on line A, c goes to C
    bad_middle = _scripted(
        panel.with_circuits([c.moved_to(lean[c.id]) for c in panel.circuits]),
        {
            None: (two_moves, SolveStatus.OPTIMAL),
            0: (lean, SolveStatus.OPTIMAL),
            1: ({"a": (1,), "b": (2,), "c": (7,)}, SolveStatus.FEASIBLE),  # A 3000 VA
        },
    )
    lean_panel = panel.with_circuits([c.moved_to(lean[c.id]) for c in panel.circuits])
    table = tradeoff(lean_panel, balance_fn=bad_middle)
    assert [r.spread_va for r in table.rows] == pytest.approx([2000.0, 2000.0, 0.0])
    assert table.rows[1].status is SolveStatus.FEASIBLE
    assert table.results[1].after_panel.circuit("b").spaces == (3,)
    assert "kept the 0-move arrangement" in table.notes[0]
    too_many = _scripted(
        panel,
        {
            None: (best, SolveStatus.OPTIMAL),
            0: (one, SolveStatus.FEASIBLE),  # claims a move inside a zero budget
        },
    )
    with pytest.raises(SolverError, match="at most 0 moves"):
        tradeoff(panel, balance_fn=too_many)


def test_proven_rows_that_contradict_are_an_error() -> None:
    lean = {"a": (1,), "b": (3,), "c": (7,)}  # A 2000, B 1000, C 0 VA
    panel = _three_on_a().with_circuits([c.moved_to(lean[c.id]) for c in _three_on_a().circuits])
    # Zero moves proven at 2000 VA spread and one move "proven" at 3000 VA cannot both hold.
    run = _scripted(
        panel,
        {
            None: ({"a": (2,), "b": (3,), "c": (5,)}, SolveStatus.OPTIMAL),
            0: (lean, SolveStatus.OPTIMAL),
            1: ({"a": (1,), "b": (2,), "c": (7,)}, SolveStatus.OPTIMAL),
        },
    )
    with pytest.raises(SolverError, match=r"1 moves proven at 3,000 VA but 0 moves reach 2,000 VA"):
        tradeoff(panel, balance_fn=run)


def test_table_stops_at_the_first_budget_reaching_the_unlimited_spread() -> None:
    panel = _three_on_a()
    best = {"a": (1,), "b": (3,), "c": (5,)}
    detour = {"a": (2,), "b": (3,), "c": (5,)}  # same spread, one needless move more
    run = _scripted(
        panel,
        {
            None: (detour, SolveStatus.OPTIMAL),
            0: ({"a": (1,), "b": (2,), "c": (7,)}, SolveStatus.OPTIMAL),
            1: ({"a": (1,), "b": (3,), "c": (7,)}, SolveStatus.OPTIMAL),
            2: (best, SolveStatus.OPTIMAL),
        },
    )
    unlimited = run(panel, BalanceOptions())
    table = tradeoff(panel, balance_fn=run, unlimited=unlimited)
    assert count_moves(panel, unlimited.after_panel) == 3
    assert [r.moves for r in table.rows] == [0, 1, 2]
    assert table.full_moves == 2
    assert not table.capped
    assert "3 moves; 2 reach the same figure for the phase spread" in table.notes[0]


def test_cap_stops_the_table_and_says_so() -> None:
    panel = _three_on_a()
    table = tradeoff(panel, balance_fn=exhaustive_balance, max_moves=1)
    assert [r.moves for r in table.rows] == [0, 1]
    assert table.capped
    assert table.full_moves == 2
    assert "needs 2 moves" in table.notes[0]
    assert any("note:" in line for line in tradeoff_lines(table))


# --- imbalance floor and target --------------------------------------------------------------


def test_floor_against_the_nema_example() -> None:
    # 462 / 463 / 455 V: NEMA MG 1 unbalance 1.087 % (F: an eng-tips forum thread quoting the
    # MG 1 method; docs/references.md). The floor from the
    # spread (8 / 2 / 460 = 0.870 %) is below it, as it must be.
    assert nema_unbalance_pct([462, 463, 455]) == pytest.approx(1.087, abs=0.001)
    assert imbalance_floor_pct(8.0, 462 + 463 + 455, 3) == pytest.approx(0.8696, abs=1e-4)


@given(st.lists(st.floats(0.0, 1e5), min_size=2, max_size=3))
def test_floor_never_exceeds_the_nema_figure(values: list[float]) -> None:
    total = math.fsum(values)
    floor = imbalance_floor_pct(max(values) - min(values), total, len(values))
    actual = nema_unbalance_pct(values)
    assert floor <= actual + 1e-9 * max(1.0, actual)
    if len(values) == 2:
        assert floor == pytest.approx(actual, rel=1e-9, abs=1e-9)


def test_fewest_moves_to_a_target_is_proven_from_the_table() -> None:
    panel = _three_on_a()
    table = tradeoff(panel, balance_fn=exhaustive_balance)
    # Rows: 3000 VA (200 %), 2000 VA (100 %), 0 VA (0 %): average 1000 VA per line.
    answer = fewest_moves_to(table, 50.0, panel)
    assert (answer.moves, answer.proven) == (2, True)
    assert "fewer moves cannot (proven)" in answer.message
    answer = fewest_moves_to(table, 100.0, panel)
    assert (answer.moves, answer.proven) == (1, True)


def test_target_no_number_of_moves_can_reach() -> None:
    # Two 1-pole loads of 1000 VA and 200 VA on a 208Y/120 panel: some line is always empty, so
    # the imbalance is at least (1000 − 0) / 2 / 400 = 125 %.
    panel = Panel(
        "Q",
        get_system("208Y/120"),
        6,
        (Circuit("a", "x", 1, 1000.0, (1,)), Circuit("b", "y", 1, 200.0, (2,))),
    )
    table = tradeoff(panel, balance_fn=exhaustive_balance)
    answer = fewest_moves_to(table, 10.0, panel)
    assert answer.moves is None
    assert answer.proven
    assert answer.message.startswith("no number of moves reaches 10 %")


def test_target_falls_back_to_the_optimiser_when_the_table_cannot_settle_it() -> None:
    panel = _three_on_a()
    table = tradeoff(panel, balance_fn=exhaustive_balance)
    unproven = replace(
        table, rows=tuple(replace(r, status=SolveStatus.FEASIBLE) for r in table.rows)
    )
    answer = fewest_moves_to(unproven, 100.0, panel)
    assert (answer.moves, answer.proven) == (1, False)
    assert "not proven" in answer.message


# --- renderings ------------------------------------------------------------------------------


def test_renderings_carry_every_row() -> None:
    panel = _three_on_a()
    table = tradeoff(panel, balance_fn=exhaustive_balance)
    data = tradeoff_json(table)
    assert [d["moves"] for d in data] == [0, 1, 2]
    assert set(data[0]) == {
        "moves",
        "goal",
        "goal_value",
        "spread_va",
        "imbalance_pct",
        "neutral_rms_a",
        "neutral_fundamental_a",
        "status",
    }
    assert all(d["goal"] == "spread" and d["goal_value"] == d["spread_va"] for d in data)
    assert data[2]["status"] == "optimal"
    assert data[0]["spread_va"] == pytest.approx(3000.0)
    rows = tradeoff_rows(table)
    assert rows[0][0] == "Moves (at most)"
    assert [r[0] for r in rows[1:4]] == [0, 1, 2]
    lines = tradeoff_lines(table)
    assert len(lines) == 4
    assert "optimal (proven)" in lines[-1]


def test_count_moves_ignores_new_breakers() -> None:
    panel = _three_on_a().with_circuits([*_three_on_a().circuits, Circuit("n", "new", 1, 10.0, ())])
    after = panel.with_circuits([c.moved_to((8,)) if c.id == "n" else c for c in panel.circuits])
    assert count_moves(panel, after) == 0


def test_a_recommendation_that_raises_the_neutral_says_so_and_names_a_row_that_does_not() -> None:
    from writer_demo import demo_result

    from balancer.domain.result import Recommendation, TradeoffRow
    from balancer.field.run import _with_neutral
    from balancer.field.tradeoff import Tradeoff

    result = demo_result()
    present = result.before.neutral_amps  # 49.2 A on the demo panel as it stands
    raised = replace(result.after, neutral_rms_a=present + 10.0)
    chosen = Recommendation("within", "2 move(s)", 2, 1.0, 4, 0.1)
    result = replace(result, after=raised, recommendation=chosen)

    def row(moves: int, imbalance: float, neutral: float) -> TradeoffRow:
        return TradeoffRow(
            moves, 0.0, imbalance, neutral, SolveStatus.OPTIMAL, neutral_rms_a=neutral
        )

    rows = (row(0, 20.0, present), row(1, 5.0, present - 3), row(2, 1.0, present + 10))
    table = Tradeoff(rows, (), 2, False)
    note = _with_neutral(result, table)
    assert note is not None
    assert note.neutral_message is not None
    assert f"from {present:.1f} A to {present + 10:.1f} A" in note.neutral_message
    assert "the 1-move row (5.00 % imbalance)" in note.neutral_message
    # and none when the neutral does not rise
    calm = replace(result, after=replace(raised, neutral_rms_a=present - 1.0))
    assert _with_neutral(calm, table) == chosen

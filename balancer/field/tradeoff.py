"""How much balance each extra move buys on a placed panel: the best spread reachable with at most
0, 1, 2, … moves, each row as proven as the optimiser could make it, and the fewest moves that
reach a target imbalance.

Every re-landed breaker on a live building is an outage, labour and risk, so the table lets the
person paying for the work choose where to stop.
"""

from __future__ import annotations

import math
from collections.abc import Callable
from dataclasses import dataclass, replace
from typing import Any

from balancer.domain.panel import Panel
from balancer.domain.result import BalanceOptions, BalanceResult, SolveStatus, TradeoffRow
from balancer.errors import InfeasibleError, SolverError
from balancer.optimize.goals import Goal, goal_for

BalanceFn = Callable[[Panel, BalanceOptions], BalanceResult]


@dataclass(frozen=True, slots=True)
class Tradeoff:
    """Rows by move budget, the arrangement behind each, and what the table leaves out."""

    rows: tuple[TradeoffRow, ...]
    results: tuple[BalanceResult, ...]
    full_moves: int  # moves of the best arrangement found with no move limit
    capped: bool  # True when the table stops before ``full_moves``
    notes: tuple[str, ...] = ()
    new_circuits: int = 0  # circuits with no space yet, which every row lands


NEW_ROW_NOTE = (
    "0 moves: the {count} new circuit(s) landed where they fit best and no breaker moved "
    "(the 'with additions' figures); every row includes them"
)


@dataclass(frozen=True, slots=True)
class TargetAnswer:
    """Fewest moves that reach a target imbalance, or why none is given."""

    target_pct: float
    moves: int | None
    proven: bool
    message: str
    result: BalanceResult | None = None  # the arrangement that reaches the target


# Each row is a whole solve; these keep the table to minutes on a hard panel. A row stopped by
# its time limit is marked not proven, never optimal.
ROW_TIME_LIMIT_S = 10.0
DEFAULT_MAX_ROWS = 12


def count_moves(before: Panel, after: Panel) -> int:
    """Circuits that were placed before and sit in other spaces after (new breakers excluded)."""
    where = {c.id: c.spaces for c in after.circuits}
    return sum(1 for c in before.circuits if c.spaces and where.get(c.id) != c.spaces)


def _default_balance() -> BalanceFn:
    from balancer.optimize import balance  # type: ignore[attr-defined,unused-ignore]

    return balance  # type: ignore[no-any-return,unused-ignore]


# long: one loop over the move budgets; each row's checks (budget kept, same goal, no row worse
# than a smaller budget's, the early stop) read and change the rows before it
def tradeoff(
    panel: Panel,
    options: BalanceOptions | None = None,
    *,
    max_moves: int | None = None,
    balance_fn: BalanceFn | None = None,
    unlimited: BalanceResult | None = None,
) -> Tradeoff:
    """The best balance for each move budget from 0 up to the unlimited optimum's move count.

    Parameters
    ----------
    panel
        A placed panel (its current layout is the starting point).
    options
        Engine, time limit, tolerance and the rest; ``max_moves``, ``target_imbalance_pct`` and
        ``fresh`` are set here per row.
    max_moves
        Stop the table at this many moves even when the unlimited optimum needs more.
    balance_fn
        The optimiser; ``balancer.optimize.balance`` when None.
    unlimited
        A result already found for this panel with no move limit (saves solving it again).

    Raises
    ------
    SolverError
        When two rows proven optimal contradict each other (a larger budget proven worse).
    """
    options = options or BalanceOptions()
    solve = balance_fn or _default_balance()
    unlimited_options = replace(options, fresh=False, target_imbalance_pct=None, max_moves=None)
    base = replace(unlimited_options, time_limit_s=min(options.time_limit_s, ROW_TIME_LIMIT_S))
    full = unlimited if unlimited is not None else solve(panel, unlimited_options)
    goal = goal_for(full.first_goal)
    full_moves = count_moves(panel, full.after_panel)
    last = min(full_moves, DEFAULT_MAX_ROWS if max_moves is None else max_moves)
    results: list[BalanceResult] = []
    rows: list[TradeoffRow] = []
    notes: list[str] = []
    floors: list[tuple[int, float]] = []  # proven spread floors of the budgets solved so far
    for k in range(last + 1):
        row_options = replace(base, max_moves=k, spread_floors=tuple(floors))
        result = full if k == full_moves else solve(panel, row_options)
        if result.first_goal == "spread" and math.isfinite(result.goal_bound):
            floors.append((k, result.goal_bound))
        used = count_moves(panel, result.after_panel)
        if used > k:
            raise SolverError(f"asked for at most {k} moves, the optimiser returned {used}")
        if result.first_goal != goal.name:
            raise SolverError(
                f"the {k}-move row was balanced for {result.first_goal}, not {goal.name}"
            )
        status = row_status(result)
        if results and _worse(goal, result, results[-1], options):
            # At most k−1 moves is also at most k moves: a worse answer here was not proven.
            if status is SolveStatus.OPTIMAL and rows[-1].status is SolveStatus.OPTIMAL:
                raise SolverError(
                    f"{k} moves proven at {goal.text(result.goal_value)} but {k - 1} moves "
                    f"reach {goal.text(results[-1].goal_value)} ({goal.phrase})"
                )
            notes.append(f"{k} moves: kept the {k - 1}-move arrangement, which was better")
            result, status = results[-1], SolveStatus.FEASIBLE
        results.append(result)
        rows.append(_row(k, result, status))
        if (
            row_status(full) is SolveStatus.OPTIMAL
            and k < full_moves
            and status is SolveStatus.OPTIMAL
            and not _worse(goal, result, full, options)
        ):
            # The unlimited run may not have proven its move count (or spent moves on a
            # tie-breaker): the table stops at the first budget proven to reach its figure.
            notes.append(
                f"the unlimited run used {full_moves} moves; {k} reach the same figure for "
                f"{goal.phrase}"
            )
            full_moves = k
            break
    capped = len(rows) - 1 < full_moves
    if capped:
        notes.append(
            f"table stops at {last} moves; the best arrangement found needs {full_moves} "
            f"moves to bring {goal.phrase} to {goal.text(full.goal_value)} ({full.status.value})"
        )
    new = sum(1 for c in panel.circuits if not c.placed)
    return Tradeoff(tuple(rows), tuple(results), full_moves, capped, tuple(notes), new)


def _row(moves: int, result: BalanceResult, status: SolveStatus) -> TradeoffRow:
    return TradeoffRow(
        moves=moves,
        spread_va=result.after.spread_va,
        imbalance_pct=result.after.imbalance_pct,
        neutral_a=result.after.neutral_a,
        status=status,
        goal=result.first_goal,
        goal_value=result.goal_value,
        neutral_rms_a=result.after.neutral_amps,
    )


def _worse(goal: Goal, result: BalanceResult, than: BalanceResult, options: BalanceOptions) -> bool:
    """Whether ``result``'s figure of the goal is worse than ``than``'s beyond the tolerance."""
    margin = goal.tolerance(max(result.goal_value, than.goal_value), options)
    return result.goal_value > than.goal_value + margin + 1e-9


def row_status(result: BalanceResult) -> SolveStatus:
    """OPTIMAL when the run's first goal is proven within its tolerance for the run's budget.

    The optimiser's own status also covers its later goals (fewest moves, tie-breakers); a
    row of this table is about the first goal alone.
    """
    if result.status is SolveStatus.UNCHANGED:
        return result.status
    return SolveStatus.OPTIMAL if result.goal_proven else SolveStatus.FEASIBLE


def imbalance_floor_pct(spread_va: float, total_va: float, line_count: int) -> float:
    """Smallest NEMA imbalance any arrangement with phase spread ≥ ``spread_va`` can have.

    With p the largest line's excess over the average and q the smallest line's shortfall, the
    imbalance is max(p, q) / average and the spread p + q, so imbalance ≥ spread / 2 / average
    (equal for two lines). Minimising the spread therefore does not always minimise the NEMA
    figure on three lines, but this bound holds for every arrangement.
    """
    average = total_va / line_count
    return 0.0 if average <= 0 else max(0.0, spread_va) / 2.0 / average * 100.0


# long: the ways of settling the answer in order (the table's proof, proven impossible, the
# optimiser asked directly, the table's unproven row), each returning its own wording
def fewest_moves_to(
    table: Tradeoff,
    target_pct: float,
    panel: Panel,
    *,
    tolerance_va: float = 1.0,
    balance_fn: BalanceFn | None = None,
    options: BalanceOptions | None = None,
) -> TargetAnswer:
    """Fewest moves whose best arrangement reaches ``target_pct`` NEMA imbalance.

    The table gives an upper bound (the first row that reaches the target); a row proven
    optimal whose spread floor (:func:`imbalance_floor_pct`) is above the target proves that
    budget too small. The answer is ``proven`` when those two meet. When the table cannot
    settle it and an optimiser is given, it is asked for the target directly.
    """
    lines = len(panel.lines)
    total = table.results[0].after.total_va if table.results else 0.0
    too_few = -1  # largest budget proven unable to reach the target
    for row in table.rows:
        floor = imbalance_floor_pct(row.spread_va - tolerance_va, total, lines)
        if row.status is SolveStatus.OPTIMAL and floor > target_pct:
            too_few = row.moves
    reached = next((row for row in table.rows if row.imbalance_pct <= target_pct), None)
    if reached is not None and reached.moves == too_few + 1:
        return TargetAnswer(
            target_pct,
            reached.moves,
            True,
            f"{reached.moves} move(s) reach {reached.imbalance_pct:.2f} % (target "
            f"{target_pct:g} %); fewer moves cannot (proven)",
            table.results[reached.moves],
        )
    last = table.rows[-1] if table.rows else None
    if (
        reached is None
        and last is not None
        and not table.capped
        and too_few == last.moves
        and table.results[-1].status is SolveStatus.OPTIMAL
    ):
        best_floor = imbalance_floor_pct(last.spread_va - tolerance_va, total, lines)
        return TargetAnswer(
            target_pct,
            None,
            True,
            f"no number of moves reaches {target_pct:g} %: even the best arrangement "
            f"({last.spread_va:,.0f} VA spread, proven) cannot go below {best_floor:.2f} %",
        )
    if balance_fn is not None:
        try:
            asked = balance_fn(
                panel,
                replace(options or BalanceOptions(), fresh=False, target_imbalance_pct=target_pct),
            )
        except InfeasibleError:
            return TargetAnswer(
                target_pct,
                None,
                True,
                f"no number of moves reaches {target_pct:g} %: the optimiser proved it infeasible",
            )
        if asked.after.imbalance_pct <= target_pct:
            moves = count_moves(panel, asked.after_panel)
            # proven by the table's floors, or by the solve itself: with a target the move
            # count is its first goal, so OPTIMAL means no fewer moves reach the target
            proven = moves == too_few + 1 or asked.status is SolveStatus.OPTIMAL
            if reached is not None and proven and moves == reached.moves:
                # the table's row uses as few moves and has the least spread for them
                chosen = table.results[reached.moves]
                return TargetAnswer(
                    target_pct,
                    moves,
                    True,
                    f"{moves} move(s) reach {chosen.after.imbalance_pct:.2f} % (target "
                    f"{target_pct:g} %); fewer cannot (proven)",
                    chosen,
                )
            if reached is None or moves < reached.moves:
                return TargetAnswer(
                    target_pct,
                    moves,
                    proven,
                    f"{moves} move(s) reach {asked.after.imbalance_pct:.2f} % (target "
                    f"{target_pct:g} %)" + ("; fewer cannot (proven)" if proven else ""),
                    asked,
                )
    if reached is not None:
        return TargetAnswer(
            target_pct,
            reached.moves,
            False,
            f"{reached.moves} move(s) reach {reached.imbalance_pct:.2f} % (target "
            f"{target_pct:g} %); not proven that fewer cannot",
            table.results[reached.moves],
        )
    return TargetAnswer(
        target_pct,
        None,
        False,
        f"no arrangement found reaches {target_pct:g} %; not proven impossible",
    )


def _goal_column(table: Tradeoff) -> Goal | None:
    """The chosen goal when it is not the spread (which has a column of its own)."""
    goal = table.rows[0].goal if table.rows else "spread"
    return None if goal == "spread" else goal_for(goal)


def tradeoff_lines(table: Tradeoff) -> list[str]:
    """Terminal lines: one per move budget; the status speaks of the chosen goal."""
    extra = _goal_column(table)
    head = f"  {extra.label} ({extra.unit})" if extra else ""
    out = [f"Moves  Spread (VA)  Imbalance (%)  Neutral (A){head}  Status"]
    for row in table.rows:
        cell = ""
        if extra:
            cell = f"  {row.goal_value:>{len(head) - 2},.{extra.digits}f}"
        out.append(
            f"{row.moves:>5}  {row.spread_va:>11,.0f}  {row.imbalance_pct:>13.2f}  "
            f"{row.neutral_a:>11.1f}{cell}  {_status_text(row.status)}"
        )
    if extra:
        out.append(f"  status: how far {extra.phrase} is proven for each budget")
    out += [f"  note: {n}" for n in _notes(table)]
    return out


def _notes(table: Tradeoff) -> list[str]:
    """The table's notes, the meaning of its 0-move row first when there are new circuits."""
    first = [NEW_ROW_NOTE.format(count=table.new_circuits)] if table.new_circuits else []
    return first + list(table.notes)


def tradeoff_json(table: Tradeoff) -> list[dict[str, Any]]:
    """The ``"tradeoff"`` field of the JSON report."""
    return [
        {
            "moves": row.moves,
            "goal": row.goal,
            "goal_value": _finite(row.goal_value),
            "spread_va": _finite(row.spread_va),
            "imbalance_pct": _finite(row.imbalance_pct),
            "neutral_rms_a": _finite(row.neutral_rms_a),
            "neutral_fundamental_a": _finite(row.neutral_a),
            "status": row.status.value,
        }
        for row in table.rows
    ]


TRADEOFF_HEADER = ("Moves (at most)", "Spread (VA)", "Imbalance (%)", "Neutral (A)", "Status")


def tradeoff_rows(table: Tradeoff) -> list[list[Any]]:
    """Rows for a workbook sheet: a header, one row per move budget, then the notes."""
    extra = _goal_column(table)
    header = list(TRADEOFF_HEADER)
    if extra:
        header.insert(4, f"{extra.label} ({extra.unit})")
    rows: list[list[Any]] = [header]
    for row in table.rows:
        cells: list[Any] = [
            row.moves,
            round(row.spread_va, 1),
            round(row.imbalance_pct, 3),
            round(row.neutral_a, 2),
            _status_text(row.status),
        ]
        if extra:
            cells.insert(4, round(row.goal_value, extra.digits))
        rows.append(cells)
    if _notes(table):
        rows.append([])
        rows += [["Note", n] for n in _notes(table)]
    return rows


def _status_text(status: SolveStatus) -> str:
    return {
        SolveStatus.OPTIMAL: "optimal (proven)",
        SolveStatus.FEASIBLE: "best found, not proven",
        SolveStatus.UNCHANGED: "nothing to move",
    }[status]


def _finite(value: float) -> float | None:
    return value if math.isfinite(value) else None

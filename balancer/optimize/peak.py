"""Balancing the worst interval of a load series: the same integer program with one spread row
per interval that can bind, the binding intervals found by constraint generation.

A year of 15-minute readings is 35,040 intervals; the model never holds them all. A model over
some of the intervals is a relaxation of the full one, so the bound the engine proves for it
holds for every arrangement over the whole horizon. Its answer is then measured on every
interval, and the intervals it spreads wider than the model said are added. When the answer's
worst interval over the whole horizon is within the tolerance of that bound, the answer is proven
best for the horizon: the intervals left out cannot bind.

Stage 1 settles the peak spread on the line-level relaxation (a bound for every arrangement in
spaces); stage 2 keeps it within the tolerance of that bound and, in the exact mixed model,
finds the fewest moves (on a placed schedule) or the least connected-VA spread (on a fresh
layout). Stage 1 is repeated on the exact model only when the line-level answer cannot be placed.
"""

from __future__ import annotations

import math
import time
from collections.abc import Sequence
from dataclasses import dataclass, replace

import numpy as np
import pulp

from balancer.domain.panel import Panel
from balancer.domain.result import BalanceOptions, BalanceResult, SolveStatus
from balancer.errors import InfeasibleError, SolverError
from balancer.intervals.figures import (
    PeakMeasure,
    circuit_loads,
    interval_figures,
    peak_va,
    share_weights,
)
from balancer.intervals.series import LoadSeries
from balancer.optimize.goals import MOVES_GAP
from balancer.optimize.model import (
    Layout,
    Model,
    Option,
    build_layout,
    build_model,
    placed_circuits,
    placement_start,
    realise,
    spread_lower_bound,
    to_mixed,
)
from balancer.optimize.search.baselines import greedy_lines
from balancer.optimize.solve import BOUND_SLACK, StageResult, solve_goal
from balancer.optimize.verify import moves_between, verify
from balancer.physics.analysis import analyze

__all__ = ["balance_peak"]

FIRST_INTERVALS = 12  # intervals of each kind the first model starts with
ADD_PER_ROUND = 32  # at most this many violated intervals are added per round
# Interval loads are not whole numbers of VA, and proving a min-max spread to the last VA over
# many intervals is slow: the peak is proven within this share of the average line load at the
# heaviest interval (or the run's tolerance, if larger).
PEAK_TOLERANCE_SHARE = 0.01
SEARCH_INTERVALS = 512  # the local search stops adding intervals at this many
SEARCH_S = 2.0  # the local search's safety net (it stops at a local optimum first)
PEAK_SHARE = 0.6  # stage 1 may use this share of the time limit
PLACE_MIN_S = 2.0  # stage 2 always gets at least this long
MOVES_S = 10.0  # the fewest-moves stages together take at most this long
SMOOTHING = 0.05  # weight of the mean spread in the local search's score
ROUND_SHARE = 0.34  # one round of stage 1 may use this share of the time left to it
MOVE_PENALTY_VA = 1e-3  # the local search prefers fewer changes among equal spreads


@dataclass(slots=True)
class _Horizon:
    """The load matrix and the share matrices of a layout's fixed circuits and options."""

    layout: Layout
    loads: np.ndarray  # (intervals, circuits)
    fixed: np.ndarray  # (circuits, lines) shares of what stays put
    shares: list[list[np.ndarray]]  # per unit and option, (circuits, lines)
    measure: PeakMeasure

    @classmethod
    def of(
        cls,
        layout: Layout,
        loads: np.ndarray,
        unit_options: Sequence[Sequence[Option]],
        measure: PeakMeasure,
    ) -> _Horizon:
        panel = layout.panel
        fixed = np.zeros((len(panel.circuits), len(panel.lines)))
        for i in layout.fixed:
            fixed[i] = share_weights(panel, panel.circuits[i], panel.lines_of(panel.circuits[i]))
        shares = []
        for unit, opts in zip(layout.units, unit_options, strict=True):
            per_option = []
            for option in opts:
                m = np.zeros_like(fixed)
                for i, member_lines in zip(unit.members, option.lines, strict=True):
                    m[i] = share_weights(panel, panel.circuits[i], member_lines)
                per_option.append(m)
            shares.append(per_option)
        return cls(layout, loads, fixed, shares, measure)

    def per_line(self, picks: Sequence[int]) -> np.ndarray:
        """Line VA in every interval for one option per unit."""
        total = self.fixed.copy()
        for u, k in enumerate(picks):
            total += self.shares[u][k]
        result: np.ndarray = self.loads @ total
        return result

    def spreads(self, picks: Sequence[int]) -> np.ndarray:
        """Each interval's figure (spread, or heaviest line) for one option per unit."""
        return interval_figures(self.per_line(picks), self.measure)


def _add_rows(
    model: Model, horizon: _Horizon, intervals: Sequence[int], above: pulp.LpVariable | float
) -> None:
    """``above`` ≥ (line a − line b) at each interval, for every ordered pair of lines; for the
    heaviest-line measure ``above`` ≥ line a (``b`` is then none)."""
    lines = range(len(horizon.layout.panel.lines))
    pairs: list[tuple[int, int | None]] = [(a, b) for a in lines for b in lines if a != b]
    if horizon.measure == "line":
        pairs = [(a, None) for a in lines]
    sub = horizon.loads[list(intervals)]  # (k, circuits)
    fixed = sub @ horizon.fixed  # (k, lines)
    option_va = [[sub @ m for m in per_option] for per_option in horizon.shares]
    for row, t in enumerate(intervals):
        for a, b in pairs:
            terms = []
            for u, per_option in enumerate(option_va):
                for k, va in enumerate(per_option):
                    coefficient = float(va[row, a] - (va[row, b] if b is not None else 0.0))
                    if coefficient:
                        terms.append((model.choice[u, k], coefficient))
            constant = float(fixed[row, a] - (fixed[row, b] if b is not None else 0.0))
            expr = pulp.LpAffineExpression(terms, constant=constant)
            model.prob += (above >= expr, f"peak_{t}_{a}_{b}")


def _first_intervals(horizon: _Horizon, starts: Sequence[Sequence[int]]) -> list[int]:
    """The intervals the first model holds: the heaviest total loads, and the widest spreads of
    each starting arrangement."""
    chosen: list[int] = []
    total = horizon.loads.sum(axis=1)
    candidates = [np.argsort(-total, kind="stable")[:FIRST_INTERVALS]]
    for picks in starts:
        candidates.append(np.argsort(-horizon.spreads(picks), kind="stable")[:FIRST_INTERVALS])
    for group in candidates:
        for t in group:
            if int(t) not in chosen:
                chosen.append(int(t))
    return chosen


@dataclass(frozen=True, slots=True)
class _Settled:
    """What a cut loop found: the picks, the worst interval over the whole horizon, the bound
    and the intervals the model ended with."""

    picks: tuple[int, ...]
    worst_va: float
    bound_va: float
    proven: bool
    intervals: tuple[int, ...]
    stage: StageResult | None


def _violated(spreads: np.ndarray, limit: float, have: set[int]) -> list[int]:
    order = np.argsort(-spreads, kind="stable")
    out = []
    for t in order:
        if spreads[t] <= limit:
            break
        if int(t) not in have:
            out.append(int(t))
        if len(out) == ADD_PER_ROUND:
            break
    return out


def _minimise_peak(
    model: Model,
    horizon: _Horizon,
    intervals: Sequence[int],
    options: BalanceOptions,
    tolerance: float,
    start: Sequence[int] | None,
    deadline: float,
) -> _Settled:
    """Stage 1: least worst-interval spread, rows added until the intervals left out cannot
    bind."""
    z = model.prob.add_variable("z_peak", 0, None)
    model.goals["peak"] = pulp.LpAffineExpression([(z, 1.0)])
    best: tuple[int, ...] | None = tuple(start) if start is not None else None
    best_worst = float(horizon.spreads(best).max()) if best is not None else math.inf
    bound = 0.0
    have: set[int] = set()
    new = list(intervals)
    stage = None
    while True:
        _add_rows(model, horizon, new, z)
        have.update(new)
        left = deadline - time.perf_counter()
        # one round should not take all the time: its answer may break intervals left out
        limit = max(min(left, 1.0), ROUND_SHARE * left)
        stage = solve_goal(model, "peak", options.engine, limit, tolerance, start=best)
        if stage.value > best_worst + tolerance and best is not None:
            # the engine stopped before it reached the start's figure: keep the start
            stage = replace(stage, picks=best)
        bound = max(bound, stage.bound)
        spreads = horizon.spreads(stage.picks)
        worst = float(spreads.max())
        if best is None or worst < best_worst:
            best, best_worst = stage.picks, worst
        slack = BOUND_SLACK * max(1.0, best_worst)
        if best_worst - bound <= tolerance + slack:
            return _Settled(best, best_worst, bound, True, tuple(sorted(have)), stage)
        new = _violated(spreads, stage.value + tolerance / 2, have)
        if not new or time.perf_counter() >= deadline:
            return _Settled(best, best_worst, bound, False, tuple(sorted(have)), stage)


def _line_use(panel: Panel, option: Option) -> np.ndarray:
    """Poles the option puts on each line."""
    use = np.zeros(len(panel.lines))
    for member in option.lines:
        for line in member:
            use[panel.lines.index(line)] += 1
    return use


def _search(
    horizon: _Horizon,
    unit_options: Sequence[Sequence[Option]],
    room: np.ndarray,
    start: Sequence[int],
    intervals: Sequence[int],
    budget_s: float,
    max_moves: float = math.inf,
) -> list[int]:
    """Single and paired changes of option that lower the worst spread over ``intervals`` (and,
    among equal spreads, the changes), within each line's room and the move budget, to a local
    optimum."""
    panel = horizon.layout.panel
    picks = list(start)
    sub = horizon.loads[list(intervals)]
    index = [(u, k) for u, opts in enumerate(unit_options) for k in range(len(opts))]
    va = np.stack([sub @ horizon.shares[u][k] for u, k in index])  # (options, intervals, lines)
    use = np.stack([_line_use(panel, unit_options[u][k]) for u, k in index])
    moves = np.array([float(unit_options[u][k].moves) for u, k in index])
    owner = np.array([u for u, _ in index])
    first = {u: i for i, (u, k) in reversed(list(enumerate(index))) if k == 0}

    def at(u: int) -> int:
        return first[u] + picks[u]

    stop = time.perf_counter() + budget_s
    while time.perf_counter() < stop:
        now = [at(u) for u in range(len(picks))]
        total = sub @ horizon.fixed + va[now].sum(axis=0)
        used = use[now].sum(axis=0)
        score = float(_score(total[None], horizon.measure)[0]) + MOVE_PENALTY_VA * moves[now].sum()
        change = np.arange(len(index))
        change = change[change != np.array(now)[owner]]  # every other option of each unit
        d_va = va[change] - va[np.array(now)[owner[change]]]
        d_use = use[change] - use[np.array(now)[owner[change]]]
        d_moves = moves[change] - moves[np.array(now)[owner[change]]]
        single = total + d_va
        fits = ((used + d_use) <= room + 1e-9).all(axis=1)
        fits &= moves[now].sum() + d_moves <= max_moves
        single_score = _score(single, horizon.measure) + MOVE_PENALTY_VA * (
            moves[now].sum() + d_moves
        )
        single_score[~fits] = np.inf
        best_single = int(np.argmin(single_score)) if len(change) else -1
        best: tuple[float, tuple[int, ...]] = (score, ())
        if best_single >= 0 and single_score[best_single] < best[0] - 1e-9:
            best = (float(single_score[best_single]), (int(change[best_single]),))
        # pairs of changes of two different units
        i, j = np.triu_indices(len(change), k=1)
        keep = owner[change[i]] != owner[change[j]]
        i, j = i[keep], j[keep]
        for lo in range(0, len(i), 4096):
            a, b = i[lo : lo + 4096], j[lo : lo + 4096]
            pair_fits = ((used + d_use[a] + d_use[b]) <= room + 1e-9).all(axis=1)
            pair_fits &= moves[now].sum() + d_moves[a] + d_moves[b] <= max_moves
            pair_score = _score(total + d_va[a] + d_va[b], horizon.measure) + MOVE_PENALTY_VA * (
                moves[now].sum() + d_moves[a] + d_moves[b]
            )
            pair_score[~pair_fits] = np.inf
            k = int(np.argmin(pair_score))
            if pair_score[k] < best[0] - 1e-9:
                best = (float(pair_score[k]), (int(change[a[k]]), int(change[b[k]])))
        if not best[1]:
            break
        for option in best[1]:
            u, k = index[option]
            picks[u] = k
    return picks


def _score(per_line_va: np.ndarray, measure: PeakMeasure) -> np.ndarray:
    """What the local search lowers for each candidate (shape: candidates, intervals, lines):
    the worst interval's spread, plus a little of the mean spread so that changes which leave
    the worst interval alone but ease the others are taken (a pure maximum has plateaus)."""
    spreads = interval_figures(per_line_va, measure)
    result: np.ndarray = spreads.max(axis=1) + SMOOTHING * spreads.mean(axis=1)
    return result


def _searched(
    horizon: _Horizon,
    model: Model,
    intervals: Sequence[int],
    start: Sequence[int],
    deadline: float,
    budget: float,
) -> tuple[list[int], list[int]]:
    """The local search, repeated with the intervals its answers spread widest added, until
    its answer's worst interval is among those it searched on; never past ``budget`` moves."""
    layout = horizon.layout
    geometry = layout.panel.geometry
    room = np.array(
        [
            sum(1 for s in layout.free_spaces if geometry.line_of(s) == line)
            for line in layout.panel.lines
        ],
        dtype=float,
    )
    have = list(intervals)
    picks = list(start)
    stop = min(deadline, time.perf_counter() + SEARCH_S)
    while True:
        left = stop - time.perf_counter()
        picks = _search(horizon, model.options, room, picks, have, left, budget)
        spreads = horizon.spreads(picks)
        new = _violated(spreads, float(spreads[have].max()) + 1e-9, set(have))
        if not new or time.perf_counter() >= stop or len(have) >= SEARCH_INTERVALS:
            return picks, have
        have += new


def _fewest_on_lines(
    relaxed: Model,
    horizon: _Horizon,
    peak: _Settled,
    cap_va: float,
    options: BalanceOptions,
    limit_s: float,
) -> _Settled:
    """The fewest changed units on the relaxation with every interval within ``cap_va``: its
    proven bound is a floor under the moves any placement in spaces needs. Rows are added
    until no interval of the horizon is over the cap; the peak's own answer comes back when the
    time runs out first."""
    z = next(iter(relaxed.goals["peak"].keys()))
    relaxed.prob += (z <= cap_va, "peak_cap")
    have = set(peak.intervals)
    stop = time.perf_counter() + limit_s
    bound = -math.inf
    while True:
        try:
            stage = solve_goal(
                relaxed, "moves", options.engine, stop - time.perf_counter(), MOVES_GAP, peak.picks
            )
        except SolverError:
            return replace(peak, bound_va=bound, proven=False)
        bound = max(bound, stage.bound)
        spreads = horizon.spreads(stage.picks)
        new = _violated(spreads, cap_va + BOUND_SLACK * max(1.0, cap_va), have)
        if not new:
            worst = float(spreads.max())
            return _Settled(stage.picks, worst, bound, stage.proven, tuple(sorted(have)), stage)
        if time.perf_counter() >= stop:
            return replace(peak, bound_va=bound, proven=False)
        _add_rows(relaxed, horizon, new, z)
        have.update(new)


def _within_cap(
    model: Model,
    horizon: _Horizon,
    intervals: Sequence[int],
    cap_va: float,
    goal: str,
    options: BalanceOptions,
    start: Sequence[int],
    limit_s: float,
) -> _Settled:
    """Stage 2: least ``goal`` with every interval's spread at most ``cap_va``; rows added
    until no interval of the horizon is over the cap. ``start`` keeps every interval within the
    cap; it is returned, not proven, when the engine runs out of time first."""
    have: set[int] = set()
    new = list(intervals)
    gap = MOVES_GAP if goal == "moves" else options.tolerance_va
    stop = time.perf_counter() + limit_s
    hint: Sequence[int] | None = start
    while True:
        _add_rows(model, horizon, new, cap_va)
        have.update(new)
        try:
            stage = solve_goal(model, goal, options.engine, stop - time.perf_counter(), gap, hint)
        except SolverError:
            stage = None
        if stage is not None:
            spreads = horizon.spreads(stage.picks)
            new = _violated(spreads, cap_va + BOUND_SLACK * max(1.0, cap_va), have)
            if not new:
                worst = float(spreads.max())
                return _Settled(
                    stage.picks, worst, stage.bound, stage.proven, tuple(sorted(have)), stage
                )
        if stage is None or time.perf_counter() >= stop:
            worst = float(horizon.spreads(start).max())
            return _Settled(tuple(start), worst, -math.inf, False, tuple(sorted(have)), None)
        hint = start


def _as_found(layout: Layout, unit_options: Sequence[Sequence[Option]]) -> list[int] | None:
    """The option per unit that leaves it where it is, when the schedule places every unit."""
    panel = layout.panel
    picks = []
    for unit, opts in zip(layout.units, unit_options, strict=True):
        if not all(panel.circuits[i].placed for i in unit.members):
            return None
        now = tuple(panel.lines_of(panel.circuits[i]) for i in unit.members)
        match = [k for k, o in enumerate(opts) if o.lines == now and o.moves == 0]
        if not match:
            return None
        picks.append(match[0])
    return picks


def _place_lines(
    layout: Layout, options: BalanceOptions, relaxed: Model, picks: Sequence[int], exact: Model
) -> tuple[list[int], float] | None:
    """Lines chosen on the relaxation put into spaces with the fewest moves: the exact model's
    option per unit and the move count; None when they do not fit."""
    allowed = {u: {relaxed.options[u][k].pattern} for u, k in enumerate(picks)}
    placement = build_model(layout, "space", options, allowed=allowed, include=())
    try:
        placed = solve_goal(
            placement,
            "moves",
            options.engine,
            PLACE_MIN_S,
            MOVES_GAP,
            placement_start(placement.options),
        )
    except (InfeasibleError, SolverError):
        return None
    chosen = [placement.options[u][k] for u, k in enumerate(placed.picks)]
    return to_mixed(exact, chosen), placed.value


def peak_tolerance_va(horizon_loads: np.ndarray, lines: int, options: BalanceOptions) -> float:
    """How close to the best possible the peak is proven: ``PEAK_TOLERANCE_SHARE`` of the
    average line load at the heaviest interval, or the run's tolerance if larger."""
    heaviest = float(horizon_loads.sum(axis=1).max()) if len(horizon_loads) else 0.0
    return max(options.tolerance_va, PEAK_TOLERANCE_SHARE * heaviest / lines)


@dataclass(frozen=True, slots=True)
class _Run:
    """What every stage of one peak balancing run shares."""

    layout: Layout
    options: BalanceOptions
    loads: np.ndarray  # (intervals, circuits)
    tolerance: float
    stage1_end: float
    deadline: float
    measure: PeakMeasure

    def cap(self, peak: _Settled) -> float:
        """The spread no interval may pass in the move stage: within the tolerance of the
        proven bound when the peak is proven, else no worse than its answer."""
        if peak.proven:
            return max(peak.bound_va + self.tolerance, peak.worst_va)
        return peak.worst_va


def balance_peak(panel: Panel, options: BalanceOptions) -> BalanceResult:
    """Rearrange the panel to keep its worst interval's phase spread lowest over the series in
    ``options.intervals``, then the fewest moves; prove how good the result is.

    Raises
    ------
    InfeasibleError
        When no arrangement meets the panel's rules.
    SolverError
        When the series cannot choose an arrangement, the engine fails, or its answer does not
        pass the independent check.
    """
    series = options.intervals
    if series is None:
        raise SolverError("the peak goal needs a load series")
    if len(series.starts) == 0:
        raise SolverError("the load series holds no intervals")
    begin = time.perf_counter()
    layout = build_layout(panel, options)
    loads = circuit_loads(panel, series)
    tolerance = peak_tolerance_va(loads, len(panel.lines), options)
    measure: PeakMeasure = "line" if options.objective == "peak-line" else "spread"
    if not layout.units:
        return _unchanged(panel, series, options, tolerance, begin, measure)
    run = _Run(
        layout,
        options,
        loads,
        tolerance,
        begin + PEAK_SHARE * options.time_limit_s,
        begin + options.time_limit_s,
        measure,
    )
    relaxed = build_model(layout, "line", options, include=())
    on_lines = _Horizon.of(layout, loads, relaxed.options, measure)
    peak = _settle_peak(run, relaxed, on_lines)
    peak, placed, exact = _fewest_moves(run, relaxed, on_lines, peak)
    chosen = realise(layout, [exact.options[u][k] for u, k in enumerate(placed.picks)])
    after_panel = panel.with_circuits(placed_circuits(layout, chosen))
    after = verify(panel, after_panel, options)
    worst = peak_va(after_panel, series, measure)
    bound = min(peak.bound_va, worst)
    peak_proven = peak.proven and worst - bound <= tolerance + BOUND_SLACK * max(1.0, worst)
    moves_proven = placed.proven or not layout.count_moves
    moves = moves_between(panel, after_panel)
    return BalanceResult(
        before_panel=panel,
        after_panel=after_panel,
        before=analyze(panel),
        after=after,
        status=SolveStatus.OPTIMAL if peak_proven and moves_proven else SolveStatus.FEASIBLE,
        engine=options.engine,
        tolerance_va=tolerance,
        lower_bound_spread_va=min(spread_lower_bound(layout), after.spread_va),
        moves=moves,
        solve_seconds=time.perf_counter() - begin,
        notes=_notes(run, series, worst, bound, peak_proven, placed, len(moves), after.spread_va),
        first_goal=options.objective,
        goal_value=worst,
        goal_bound=bound,
        goal_proven=peak_proven,
    )


def _unchanged(
    panel: Panel,
    series: LoadSeries,
    options: BalanceOptions,
    tolerance: float,
    begin: float,
    measure: PeakMeasure,
) -> BalanceResult:
    """Every circuit keeps its spaces: the schedule as it stands is the only arrangement."""
    before = analyze(panel)
    value = peak_va(panel, series, measure)
    return BalanceResult(
        panel,
        panel,
        before,
        before,
        SolveStatus.UNCHANGED,
        options.engine,
        tolerance,
        before.spread_va,
        (),
        time.perf_counter() - begin,
        ("every circuit keeps its spaces; nothing to rearrange",),
        first_goal=options.objective,
        goal_value=value,
        goal_bound=value,
        goal_proven=True,
    )


def _settle_peak(run: _Run, relaxed: Model, on_lines: _Horizon) -> _Settled:
    """Stage 1 on the line relaxation: the local search from the schedule as it stands (or the
    connected-VA greedy answer), then the integer program over the intervals that can bind."""
    layout = run.layout
    as_found = _as_found(layout, relaxed.options)
    seed = as_found if as_found is not None else greedy_lines(layout)
    first = _first_intervals(on_lines, [p for p in (as_found, seed) if p is not None])
    budget = math.inf
    if layout.count_moves and run.options.max_moves is not None:
        budget = run.options.max_moves
    searched = None
    if seed is not None and sum(relaxed.options[u][k].moves for u, k in enumerate(seed)) <= budget:
        searched, first = _searched(on_lines, relaxed, first, seed, run.deadline, budget)
    return _minimise_peak(
        relaxed, on_lines, first, run.options, run.tolerance, searched, run.stage1_end
    )


def _fewest_moves(
    run: _Run, relaxed: Model, on_lines: _Horizon, peak: _Settled
) -> tuple[_Settled, _Settled, Model]:
    """Stage 2: the fewest moves keeping every interval within the cap, on the relaxation (a
    floor) and then in spaces; the peak settled again on the exact model when its lines do not
    fit the spaces. Returns the peak, the placement and the exact model it indexes."""
    layout, options = run.layout, run.options
    cap_va = run.cap(peak)
    moves_s = min(MOVES_S, max(PLACE_MIN_S, run.deadline - time.perf_counter()))
    lines = peak
    if layout.count_moves:
        lines = _fewest_on_lines(relaxed, on_lines, peak, cap_va, options, moves_s / 2)
    exact = build_model(layout, "mixed", options, include=())
    in_spaces = _Horizon.of(layout, run.loads, exact.options, run.measure)
    start = _place_lines(layout, options, relaxed, lines.picks, exact)
    if start is None and lines is not peak:
        lines = peak
        start = _place_lines(layout, options, relaxed, peak.picks, exact)
    if start is None:
        # the line-level answer does not fit the spaces: settle the peak on the exact model
        end = max(run.stage1_end, time.perf_counter() + PLACE_MIN_S)
        peak = _minimise_peak(exact, in_spaces, peak.intervals, options, run.tolerance, None, end)
        cap_va = run.cap(peak)
        start, lines = (list(peak.picks), math.inf), peak
        exact = build_model(layout, "mixed", options, include=())
    floor = lines.bound_va if lines is not peak else -math.inf  # fewest moves on lines
    picks, start_moves = start
    if not layout.count_moves or start_moves <= floor + MOVES_GAP:
        return (
            peak,
            _Settled(tuple(picks), lines.worst_va, floor, True, lines.intervals, None),
            exact,
        )
    limit = max(PLACE_MIN_S, min(moves_s, run.deadline - time.perf_counter()))
    placed = _within_cap(exact, in_spaces, lines.intervals, cap_va, "moves", options, picks, limit)
    if placed.stage is not None and placed.stage.value <= floor + MOVES_GAP:
        placed = replace(placed, proven=True)
    return peak, placed, exact


def _notes(
    run: _Run,
    series: LoadSeries,
    worst: float,
    bound: float,
    proven: bool,
    placed: _Settled,
    moves: int,
    connected_spread_va: float,
) -> tuple[str, ...]:
    """One note per goal: the figure and how far it is proven."""
    count = len(series.starts)
    what = (
        "peak-interval spread" if run.measure == "spread" else "heaviest line at its worst interval"
    )
    notes = [
        f"{what}: {worst:,.0f} VA over {count:,} intervals, "
        + (
            f"proven within {run.tolerance:,.0f} VA of the best possible"
            if proven
            else f"not proven (no arrangement is below {bound:,.0f} VA)"
        ),
        f"the model held {len(placed.intervals):,} of the {count:,} intervals"
        + ("; every other interval was measured and cannot bind" if proven else ""),
    ]
    if run.layout.count_moves:
        notes.append(
            f"moves: {moves}" + (", proven fewest" if placed.proven else ", not proven fewest")
        )
    notes.append(f"connected-VA spread of this arrangement: {connected_spread_va:,.0f} VA")
    return tuple(notes)

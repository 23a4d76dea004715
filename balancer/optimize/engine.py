"""The balancing engine, stage by stage: layout → first goal on lines → fewest changes → place in
spaces → exact lexicographic model → verify → result.

1. The first goal (phase spread by default) is settled on a line-level relaxation: 1-pole loads
   to A/B/C, 2-pole to AB/BC/CA, with the free spaces per line as capacity. No symmetry between
   spaces of one line, so its bound is tight; a heuristic answer that meets the combinatorial
   bound is proven without a solver.
2. On a placed schedule a search then finds the fewest line changes within the spread cap; its
   proven count bounds the moves, so an answer that meets it needs no solver proof.
3. Those lines are placed into spaces, fewest moves first (a start for step 4).
4. The exact mixed model (multi-pole breakers and groups by placement, 1-pole breakers by
   staying put or by line) keeps the first goal and settles the move count and tie-breakers.
5. Every answer is checked independently before it is returned; only what is proven is claimed.
"""

from __future__ import annotations

import math
import time
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, replace

from balancer.domain.panel import Panel
from balancer.domain.result import BalanceOptions, BalanceResult, SolveStatus
from balancer.errors import InfeasibleError, SolverError
from balancer.optimize.goals import GOALS, MOVES_GAP, goal_for
from balancer.optimize.model import (
    Layout,
    Model,
    build_layout,
    build_model,
    placed_circuits,
    placement_start,
    realise,
    spread_lower_bound,
    to_mixed,
)
from balancer.optimize.peak import balance_peak
from balancer.optimize.search.baselines import greedy_lines, karmarkar_karp_lines
from balancer.optimize.search.fewest import fewest_changes_lines
from balancer.optimize.search.lines import pattern_spread_va
from balancer.optimize.search.local import (
    LOCAL_STEPS,
    fewer_changes_lines,
    local_search_lines,
    present_lines,
)
from balancer.optimize.search.split import split_search_lines
from balancer.optimize.solve import StageResult, cap, evaluate, solve_goal
from balancer.optimize.verify import moves_between, verify
from balancer.physics.analysis import Loads, analyze

__all__ = ["balance"]

PLACEMENT_MIN_S = 2.0  # the placement stage always gets at least this long
# The searches and the tie-breaking stages are bounded by work (steps, pairs, nodes), so a panel
# gets the same answer on every run; these times are only safety nets for a slow machine.
LOCAL_SEARCH_S = 2.0  # improving the seed by single and paired changes: at most this, ...
SAFETY_SHARE = 0.2  # ... and at most this share of the time limit (each search below too)
FRESH_STEPS = 10  # steps of that search on a fresh layout (the seeded solver is quicker)
SPLIT_SEARCH_S = 5.0  # then re-deciding many units at once when that missed
UNDO_S = 5.0  # undoing needless changes from the schedule as it stands
FEWEST_S = 5.0  # the fewest changed units within the spread cap, proven
TIEBREAK_NODES = 0  # branch-and-bound nodes for each tie-breaking current goal
TIEBREAK_S = 5.0  # ... and its safety net


def balance(panel: Panel, options: BalanceOptions | None = None) -> BalanceResult:
    """Rearrange the panel's circuits to balance its phases, and prove how good the result is.

    Goals are lexicographic: ``options.objective`` (phase spread by default), then fewest moves
    (for a placed schedule), then the remaining one of spread and neutral current. With
    ``target_imbalance_pct`` the fewest moves reaching the target come first. The status is
    OPTIMAL only when the first goal and the move count are proven within their tolerances;
    tie-breaking current goals get a short time budget and say whether they were proven.
    ``time_limit_s`` bounds the solver stages together, except that placing the chosen lines
    into spaces always gets at least ``PLACEMENT_MIN_S``.

    Parameters
    ----------
    panel : Panel
        The schedule as read; never modified.
    options : BalanceOptions, optional
        Choices for the run.

    Returns
    -------
    BalanceResult
        A checked arrangement with before/after figures, moves, status and lower bound.

    Raises
    ------
    InfeasibleError
        When no arrangement meets the panel's rules; the message names the conflict.
    SolverError
        When the engine fails or its answer does not pass the independent check.
    """
    options = options or BalanceOptions()
    if options.objective in ("peak", "peak-line"):
        return balance_peak(panel, options)
    begin = time.perf_counter()
    deadline = begin + options.time_limit_s
    layout = build_layout(panel, options)
    before = analyze(panel)
    if not layout.units:
        return _nothing_to_rearrange(panel, before, options, begin)
    lines = _first_goal_on_lines(layout, options, deadline)
    fewest = _fewest_changes(layout, options, lines)
    spaces = _place_in_spaces(layout, options, lines, fewest, deadline)
    exact = _exact_lexicographic(layout, options, lines, fewest, spaces, deadline)
    after = _verified(panel, layout, options, exact)
    return _result(panel, before, after, layout, options, lines, exact, begin)


# What each stage hands to the next.


@dataclass(frozen=True, slots=True)
class _OnLines:
    """The first goal settled on the line-level relaxation."""

    first: StageResult
    model: Model
    goals: list[str]  # the lexicographic order of the goals
    target: float | None  # the target imbalance kept: None when none is asked or reachable
    floor: float  # the combinatorial lower bound on the spread
    notes: tuple[str, ...]


@dataclass(frozen=True, slots=True)
class _Fewest:
    """Lines changing the fewest units within the spread cap (None when none fewer were found
    or the search does not apply), and that count as a proven bound on the moves (or -inf)."""

    stage: StageResult | None
    moves_floor: float


@dataclass(frozen=True, slots=True)
class _InSpaces:
    """The line answer placed into spaces, the placement model and its answer (None when the
    lines do not fit)."""

    first: StageResult
    placement: Model
    placed: StageResult | None


@dataclass(frozen=True, slots=True)
class _Exact:
    """The exact model, its lexicographic stages, the bounds known beside them and the
    option chosen per unit."""

    model: Model
    stages: list[StageResult]
    bounds: dict[str, float]
    picks: list[int]
    notes: tuple[str, ...]


@dataclass(frozen=True, slots=True)
class _Verified:
    """The arrangement returned, checked independently, with its analysis."""

    panel: Panel
    loads: Loads


# The stages, in the order balance() runs them.


def _nothing_to_rearrange(
    panel: Panel, before: Loads, options: BalanceOptions, begin: float
) -> BalanceResult:
    """Every circuit keeps its spaces: the schedule as it stands is the only arrangement."""
    goal = goal_for(_primary(options))
    value = goal.measure(panel, before, options)
    return BalanceResult(
        panel,
        panel,
        before,
        before,
        SolveStatus.UNCHANGED,
        options.engine,
        options.tolerance_va,
        before.spread_va,
        (),
        time.perf_counter() - begin,
        ("every circuit keeps its spaces; nothing to rearrange",),
        first_goal=goal.name,
        goal_value=value,
        goal_bound=value,  # the only arrangement there is
        goal_proven=True,
    )


def _first_goal_on_lines(layout: Layout, options: BalanceOptions, deadline: float) -> _OnLines:
    """The first goal on the line-level relaxation, its bound holding for every arrangement;
    without the target imbalance when no arrangement reaches it."""
    floor = spread_lower_bound(layout)
    target = options.target_imbalance_pct
    notes: tuple[str, ...] = ()
    try:
        first, model, goals = _solve_on_lines(layout, options, target, deadline, floor)
    except InfeasibleError:
        if target is None:
            raise
        notes = (f"no arrangement reaches {target:g} % imbalance; the best balance is shown",)
        target = None
        first, model, goals = _solve_on_lines(layout, options, None, deadline, floor)
    return _OnLines(first, model, goals, target, floor, notes)


def _fewest_changes(layout: Layout, options: BalanceOptions, lines: _OnLines) -> _Fewest:
    """Lines that change the fewest units within the spread cap the move stage will keep, and
    that count as a proven lower bound on the moves (-inf when not proven).

    The stage is the first stage with those lines when they change fewer units than its own,
    else None. Runs only where the cap is the proven spread one: spread first, then moves, with
    no move budget or target.
    """
    stage, moves_floor = _fewest_on_lines(
        layout, options, lines.target, lines.goals, lines.first, lines.floor
    )
    return _Fewest(stage, moves_floor)


def _fewest_on_lines(
    layout: Layout,
    options: BalanceOptions,
    target: float | None,
    goals: Sequence[str],
    first: StageResult,
    floor: float,
) -> tuple[StageResult | None, float]:
    if not layout.count_moves or list(goals[:2]) != ["spread", "moves"]:
        return None, -math.inf
    if options.max_moves is not None or target is not None:
        return None, -math.inf
    bound = max(first.bound, floor)
    if not _proven(first, options, bound):
        return None, -math.inf
    cap_va = max(first.value, bound + options.tolerance_va)  # as _lexicographic keeps it
    budget_s = min(FEWEST_S, SAFETY_SHARE * options.time_limit_s)
    found = fewest_changes_lines(layout, cap_va, budget_s)
    if found is None:
        return None, -math.inf
    if found.picks is None or found.moves is None:
        return None, float(found.bound)
    moves = sum(u.patterns()[k].moves for u, k in zip(layout.units, first.picks, strict=True))
    if found.moves >= moves:
        return None, float(found.bound)
    # within the cap, so still proven; the cap itself (bound + tolerance) does not change
    value = pattern_spread_va(layout, found.picks)
    return replace(first, picks=tuple(found.picks), value=value), float(found.bound)


def _place_in_spaces(
    layout: Layout, options: BalanceOptions, lines: _OnLines, fewest: _Fewest, deadline: float
) -> _InSpaces:
    """The line-level answer put into spaces, fewest moves first: a start for the exact model,
    and usually its answer. The fewest-changes lines are tried first, the first stage's when
    those do not fit."""
    first = lines.first
    placement, placed = _place(
        layout, options, lines.target, lines.model, fewest.stage or first, deadline
    )
    if placed is None and fewest.stage is not None:
        placement, placed = _place(layout, options, lines.target, lines.model, first, deadline)
    elif fewest.stage is not None:
        first = fewest.stage
    return _InSpaces(first, placement, placed)


def _exact_lexicographic(
    layout: Layout,
    options: BalanceOptions,
    lines: _OnLines,
    fewest: _Fewest,
    spaces: _InSpaces,
    deadline: float,
) -> _Exact:
    """The exact mixed model, goal after goal; what the earlier stages proved is kept as it is
    (``preset``) rather than solved again."""
    goals = lines.goals
    first, placed = spaces.first, spaces.placed
    exact = build_model(layout, "mixed", options, target_imbalance_pct=lines.target)
    start = _exact_start(layout, exact, spaces, lines.target)
    notes: tuple[str, ...] = ()
    preset: dict[str, StageResult] = {}
    if placed is not None and not (goals[0] == "moves" and placed.value > first.value + 0.5):
        preset[goals[0]] = first  # same lines, so the same proven value
    elif placed is None:
        notes = ("the best line assignment does not fit the spaces; the exact model decided",)
    bounds = {
        "spread": lines.floor,
        goals[0]: max(first.bound, lines.floor if goals[0] == "spread" else -math.inf),
    }
    if goals[0] in preset and start is not None:
        # the move stage keeps the spread cap the line search used, so its count bounds it;
        # so does a smaller budget proven unable to reach that cap
        moves_floor = max(
            fewest.moves_floor, _moves_floor_from_budgets(options, goals, first, bounds)
        )
        bounds["moves"] = moves_floor
        start_moves = _moves_at(exact, start)
        if start_moves <= moves_floor + MOVES_GAP:
            preset["moves"] = StageResult(
                "moves", start_moves, moves_floor, True, tuple(start), 0.0, "fewest changes"
            )
    stages = _lexicographic(exact, goals, options, deadline, start, bounds, preset)
    picks = _last_picks(stages, preset, start)
    return _Exact(exact, stages, bounds, picks, notes)


def _moves_floor_from_budgets(
    options: BalanceOptions, goals: Sequence[str], first: StageResult, bounds: Mapping[str, float]
) -> float:
    """Fewest moves proven by ``options.spread_floors``: a budget of m moves whose spread
    floor is above the cap the move stage keeps cannot reach it, so at least m + 1 are needed.
    -inf when no floor applies."""
    if list(goals[:2]) != ["spread", "moves"] or not options.spread_floors:
        return -math.inf
    bound = max(first.bound, bounds.get("spread", -math.inf))
    if not _proven(first, options, bound):
        return -math.inf
    cap_va = max(first.value, bound + options.tolerance_va)  # as _lexicographic keeps it
    beaten = [m for m, floor_va in options.spread_floors if floor_va > cap_va + 1e-9]
    return float(max(beaten) + 1) if beaten else -math.inf


def _exact_start(
    layout: Layout, exact: Model, spaces: _InSpaces, target: float | None
) -> list[int] | None:
    """The exact model's start: the placed lines, else the schedule as it stands (first fit
    for the rest), which is within any move budget; None when neither applies."""
    if spaces.placed is not None:
        placement = spaces.placement
        return to_mixed(exact, [placement.options[u][k] for u, k in enumerate(spaces.placed.picks)])
    every = [unit.placements for unit in layout.units]
    stay = placement_start(every)
    if stay is not None and target is None:
        return to_mixed(exact, [every[u][k] for u, k in enumerate(stay)])
    return None


def _verified(panel: Panel, layout: Layout, options: BalanceOptions, exact: _Exact) -> _Verified:
    """The chosen options as circuits in spaces, checked independently of the model."""
    chosen = realise(layout, [exact.model.options[u][k] for u, k in enumerate(exact.picks)])
    for (u, k), var in exact.model.choice.items():
        var.varValue = 1.0 if exact.picks[u] == k else 0.0
    claimed = {line: evaluate(expr) for line, expr in exact.model.phase_va.items()}
    after_panel = panel.with_circuits(placed_circuits(layout, chosen))
    return _Verified(after_panel, verify(panel, after_panel, options, claimed))


def _result(
    panel: Panel,
    before: Loads,
    after: _Verified,
    layout: Layout,
    options: BalanceOptions,
    lines: _OnLines,
    exact: _Exact,
    begin: float,
) -> BalanceResult:
    """The result: figures before and after, moves, status, bounds, and a note per goal saying
    how far it is proven."""
    goals, stages, bounds = lines.goals, exact.stages, exact.bounds
    proven = {s.goal: _proven(s, options, bounds.get(s.goal, -math.inf)) for s in stages}
    notes = [*lines.notes, *exact.notes]
    for s in stages:
        # the figure of the arrangement returned (a true magnitude, not the polygon's)
        value = (
            s.value
            if s.goal == "moves"
            else goal_for(s.goal).measure(after.panel, after.loads, options)
        )
        bound = max(s.bound, bounds.get(s.goal, -math.inf))
        notes.append(_describe(s.goal, value, proven[s.goal], bound, options))
    key_goals = goals[: _key_count(goals)]
    status = SolveStatus.OPTIMAL if all(proven[g] for g in key_goals) else SolveStatus.FEASIBLE
    spread_bound = lines.floor
    if goals[0] == "spread":
        spread_bound = max(lines.floor, stages[0].bound, bounds["spread"])
    spread_bound = min(spread_bound, after.loads.spread_va)
    if options.max_moves is not None and layout.count_moves:
        notes.append(
            f"limited to at most {options.max_moves} moves: 'best possible' means with at most "
            "that many moves"
        )
    first_goal = next(g for g in goals if g != "moves")
    first_stage = next(s for s in stages if s.goal == first_goal)
    return BalanceResult(
        before_panel=panel,
        after_panel=after.panel,
        before=before,
        after=after.loads,
        status=status,
        engine=options.engine,
        tolerance_va=options.tolerance_va,
        lower_bound_spread_va=spread_bound,
        moves=moves_between(panel, after.panel),
        solve_seconds=time.perf_counter() - begin,
        notes=tuple(notes),
        first_goal=first_goal,
        goal_value=goal_for(first_goal).measure(after.panel, after.loads, options),
        goal_bound=max(first_stage.bound, bounds.get(first_goal, -math.inf)),
        goal_proven=proven[first_goal],
        move_budget=options.max_moves if layout.count_moves else None,
    )


# What the stages share.


def _primary(options: BalanceOptions) -> str:
    """The first goal: the objective asked for, when it has a figure to keep low."""
    if options.objective == "transformer" and not options.transformer_terms:
        return "spread"
    return options.objective


def _goal_order(options: BalanceOptions, count_moves: bool, available: Sequence[str]) -> list[str]:
    primary = options.objective if options.objective in available else "spread"
    order: list[str] = [primary]
    if count_moves:
        order.insert(0 if options.target_imbalance_pct is not None else 1, "moves")
    order += [g for g in ("spread", "neutral") if g != primary and g in available]
    return order


def _key_count(goals: Sequence[str]) -> int:
    """How many leading goals decide the status: the first, and the move count next to it."""
    return 2 if "moves" in goals[:2] else 1


def _gap(goal: str, options: BalanceOptions) -> float:
    return MOVES_GAP if goal == "moves" else goal_for(goal).gap(options)


def _proven(stage: StageResult, options: BalanceOptions, extra_bound: float) -> bool:
    bound = max(stage.bound, extra_bound)
    return stage.proven or stage.value <= bound + _gap(stage.goal, options) + 1e-9


def _solve_on_lines(
    layout: Layout, options: BalanceOptions, target: float | None, deadline: float, floor: float
) -> tuple[StageResult, Model, list[str]]:
    """The first goal on the line-level relaxation: its bound holds for every arrangement.

    The spread is tried by the searches first, which prove it without a solver when they meet
    the combinatorial bound or try every line assignment; the solver starts from their answer.
    """
    available = ["moves"] + [g.name for g in GOALS.values() if g.applies(layout, options)]
    goals = _goal_order(
        replace(options, target_imbalance_pct=target), layout.count_moves, available
    )
    model = build_model(layout, "line", options, target_imbalance_pct=target, include=goals[:1])
    if goals[0] == "spread" and options.max_moves is not None and target is None:
        within = _spread_within_budget(layout, options, floor, options.max_moves)
        if within is not None:
            return within, model, goals
    seed = _seed(layout)
    if goals[0] == "spread" and seed is not None:
        searched, seed = _spread_by_search(layout, options, target, floor, seed)
        if searched is not None:
            return searched, model, goals
    stage = solve_goal(
        model,
        goals[0],
        options.engine,
        deadline - time.perf_counter(),
        _gap(goals[0], options),
        seed,
    )
    if goals[0] == "spread":
        stage = replace(stage, bound=max(stage.bound, floor))
        legal = options.max_moves is None and target is None
        if legal and seed is not None and pattern_spread_va(layout, seed) < stage.value - 1e-9:
            # the engine may drop its start (see solve_goal): keep the better seed, which
            # meets every rule of the line model when no move budget or target applies
            stage = replace(stage, picks=tuple(seed), value=pattern_spread_va(layout, seed))
        if options.max_moves is None:
            stage = _fewer_changes(layout, options, stage)
    return stage, model, goals


def _spread_by_search(
    layout: Layout, options: BalanceOptions, target: float | None, floor: float, seed: list[int]
) -> tuple[StageResult | None, list[int]]:
    """The spread by local search, then by split search: a proven stage when they prove it
    (None otherwise), and the start the solver gets when they do not."""
    began = time.perf_counter()
    goal_va = floor + options.tolerance_va
    budget = min(LOCAL_SEARCH_S, SAFETY_SHARE * options.time_limit_s)
    steps = LOCAL_STEPS if layout.count_moves else FRESH_STEPS
    seeds = [local_search_lines(layout, seed, goal_va, budget, max_steps=steps)]
    present = present_lines(layout) if layout.count_moves else None
    if present is not None:
        # From the schedule as it stands: reaching the goal this way moves few breakers.
        seeds.insert(0, local_search_lines(layout, present, goal_va, budget, max_steps=steps))
    spreads = [pattern_spread_va(layout, p) for p in seeds]
    reached = [p for p, v in zip(seeds, spreads, strict=True) if v <= goal_va]
    # A fresh layout that missed the goal starts the solver from the plain heuristic answer
    # (measured quicker there than from the searched one), unless the split search runs.
    if reached or layout.count_moves:
        seed = reached[0] if reached else seeds[spreads.index(min(spreads))]
    if reached and options.max_moves is None:
        # The combinatorial bound proves it; no solver needed for this goal.
        value = pattern_spread_va(layout, seed)
        spent = time.perf_counter() - began
        stage = StageResult("spread", value, floor, True, tuple(seed), spent, "bound")
        return _fewer_changes(layout, options, stage), seed
    if not reached and options.max_moves is None and target is None:
        # Re-deciding many units at once: near-perfect splits of odd loads, and with few
        # distinct loads every line assignment (the least spread, so a proof).
        split = split_search_lines(
            layout,
            seeds[spreads.index(min(spreads))],
            goal_va,
            min(SPLIT_SEARCH_S, SAFETY_SHARE * options.time_limit_s),
        )
        seed = split.picks  # the solver's start (and incumbent) when this proves nothing
        value = pattern_spread_va(layout, seed)
        if value <= goal_va or split.exhaustive:
            # Proven by the combinatorial bound, or by having tried every line assignment
            # of the relaxation (whose least spread bounds every arrangement).
            bound = floor if value <= goal_va else max(floor, value)
            how = "bound" if value <= goal_va else "every line assignment tried"
            spent = time.perf_counter() - began
            stage = StageResult("spread", value, bound, True, tuple(seed), spent, how)
            return _fewer_changes(layout, options, stage), seed
    return None, seed


def _spread_within_budget(
    layout: Layout, options: BalanceOptions, floor: float, budget: int
) -> StageResult | None:
    """The least spread reachable with at most ``budget`` moves, proven by bisection on the
    spread cap with the fewest-changes search (its move counts are proven): a cap that needs
    more than ``budget`` moves is a proven lower bound, an arrangement within the budget an
    upper one. None when the search cannot settle it (the solver decides then).
    """
    if not layout.count_moves:
        return None
    began = time.perf_counter()
    stop = began + min(FEWEST_S, SAFETY_SHARE * options.time_limit_s)
    present = present_lines(layout)
    if present is None:
        return None
    best, high = present, pattern_spread_va(layout, present)  # no moves: within any budget
    low = floor - options.tolerance_va  # every arrangement's spread is above this
    while high - low > options.tolerance_va:
        left = stop - time.perf_counter()
        if left <= 0:
            return None
        cap_va = max(floor, (low + high) / 2.0)
        found = fewest_changes_lines(layout, cap_va, left)
        if found is None:
            return None
        if found.bound > budget:
            low = cap_va  # every arrangement within the cap needs more moves than the budget
        elif found.picks is not None and found.moves is not None and found.moves <= budget:
            best, high = found.picks, min(high, pattern_spread_va(layout, found.picks))
        else:
            return None  # neither proven out of reach nor found within the budget
    spent = time.perf_counter() - began
    return StageResult("spread", high, low, True, tuple(best), spent, "fewest changes by budget")


def _fewer_changes(layout: Layout, options: BalanceOptions, stage: StageResult) -> StageResult:
    """Undo needless line changes from the schedule as it stands, keeping the spread proven.

    The spread may move within the cap the later stages keep anyway, so what was proven stays
    proven; this only gives the move-count stage a better start.
    """
    present = present_lines(layout) if layout.count_moves else None
    if present is None:
        return stage
    limit_va = stage.value
    if _proven(stage, options, stage.bound):
        limit_va = max(stage.value, stage.bound + options.tolerance_va)
    # The fewest changes within the cap, when the search proves them, leave nothing to undo.
    found = fewest_changes_lines(
        layout, limit_va, min(FEWEST_S, SAFETY_SHARE * options.time_limit_s)
    )
    if found is not None and found.picks is not None and found.moves == found.bound:
        value = pattern_spread_va(layout, found.picks)
        return replace(stage, picks=tuple(found.picks), value=max(value, stage.value))
    undo_s = min(UNDO_S, SAFETY_SHARE * options.time_limit_s)
    picks = fewer_changes_lines(layout, stage.picks, present, limit_va, undo_s)
    value = pattern_spread_va(layout, picks)
    return replace(stage, picks=tuple(picks), value=max(value, stage.value))


def _seed(layout: Layout) -> list[int] | None:
    candidates = [p for p in (greedy_lines(layout), karmarkar_karp_lines(layout)) if p is not None]
    if not candidates:
        return None
    return min(candidates, key=lambda p: pattern_spread_va(layout, p))


def _lexicographic(
    model: Model,
    goals: Sequence[str],
    options: BalanceOptions,
    deadline: float,
    start: Sequence[int] | None,
    extra_bounds: Mapping[str, float],
    preset: Mapping[str, StageResult] | None = None,
) -> list[StageResult]:
    """Solve the goals in order, each kept within its tolerance while the next is solved.

    The first goal and a following move count get the whole time limit; later tie-breaking
    goals get a short budget each and stop early rather than delay the answer.
    """
    stages: list[StageResult] = []
    picks = start
    key = _key_count(goals)
    for position, goal in enumerate(goals):
        if preset and goal in preset:
            stage = preset[goal]
        else:
            budget = deadline - time.perf_counter()
            if position >= key:
                budget = min(budget, TIEBREAK_S)
            nodes = TIEBREAK_NODES if position >= key else None
            try:
                stage = solve_goal(
                    model, goal, options.engine, budget, _gap(goal, options), picks, nodes
                )
            except SolverError:
                if picks is None or options.target_imbalance_pct is not None:
                    raise
                if position >= key:
                    break  # a tie-breaker that found nothing new leaves the previous answer
                stage = _unproven(model, goal, picks)  # keep the (legal) start, claim nothing
            picks = stage.picks
        stages.append(stage)
        if position == len(goals) - 1:
            break
        bound = max(stage.bound, extra_bounds.get(goal, -math.inf))
        if goal == "spread" and _proven(stage, options, bound):
            limit = max(stage.value, bound + options.tolerance_va)
        else:
            limit = stage.value + 1e-6 * max(1.0, abs(stage.value))
        cap(model, goal, limit, f"keep_{goal}")
    return stages


def _unproven(model: Model, goal: str, picks: Sequence[int]) -> StageResult:
    """The start kept as the answer when the engine found nothing in time: no bound."""
    for (u, k), var in model.choice.items():
        var.varValue = 1.0 if picks[u] == k else 0.0
    if goal == "spread":
        phase = [evaluate(expr) for expr in model.phase_va.values()]
        value = max(phase) - min(phase)
    elif goal == "moves":
        value = evaluate(model.goals["moves"])
    else:
        raise SolverError(f"no arrangement found for the {goal} goal in time; raise the limit")
    return StageResult(goal, value, -math.inf, False, tuple(picks), 0.0, "time limit, start kept")


def _place(
    layout: Layout,
    options: BalanceOptions,
    target: float | None,
    line_model: Model,
    first: StageResult,
    deadline: float,
) -> tuple[Model, StageResult | None]:
    """The fewest moves putting the first stage's lines into spaces; None when they do not fit."""
    allowed = {u: {line_model.options[u][k].pattern} for u, k in enumerate(first.picks)}
    placement = build_model(
        layout, "space", options, allowed=allowed, target_imbalance_pct=target, include=()
    )
    try:
        placed: StageResult | None = solve_goal(
            placement,
            "moves",
            options.engine,
            max(PLACEMENT_MIN_S, deadline - time.perf_counter()),
            MOVES_GAP,
            placement_start(placement.options),
        )
    except (InfeasibleError, SolverError):
        placed = None
    return placement, placed


def _moves_at(exact: Model, picks: Sequence[int]) -> float:
    """The exact model's move count for a choice of option per unit."""
    for (u, k), var in exact.choice.items():
        var.varValue = 1.0 if picks[u] == k else 0.0
    return evaluate(exact.goals["moves"])


def _last_picks(
    stages: Sequence[StageResult], preset: Mapping[str, StageResult], start: list[int] | None
) -> list[int]:
    solved = [s for s in stages if s.goal not in preset]
    if solved:
        return list(solved[-1].picks)
    if start is None:
        raise SolverError("no arrangement in spaces was found")
    return start


def _describe(
    goal_name: str, value: float, proven: bool, bound: float, options: BalanceOptions
) -> str:
    """One note on a goal: the returned arrangement's figure and how far it is proven."""
    if goal_name == "moves":
        text = f"moves: {value:.0f}"
        return text + (", proven fewest" if proven else ", not proven fewest")
    goal = goal_for(goal_name)
    # the current goals are optimised at the fundamental; say so beside RMS figures
    label = goal.phrase.removeprefix("the ") + (" (fundamental)" if goal.linearised else "")
    text = f"{label}: {goal.text(value)}"
    if proven:
        margin = goal.tolerance(value, options)
        return text + f", proven within {margin:.{goal.digits}f} {goal.unit} of the best possible"
    if math.isfinite(bound):
        return text + f", not proven (no arrangement is below {goal.text(bound)})"
    return text + ", not proven"

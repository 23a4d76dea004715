"""Baselines: largest-first greedy and Karmarkar–Karp differencing, on numbers and on panels.

Karmarkar & Karp, "The differencing method of set partitioning", UCB/CSD 82/113 (1982); the
k-way form combines the two partial partitions with the largest spread, pairing the heaviest
subset of one with the lightest of the other. Graham (1969) bounds greedy at 4/3 − 1/(3m).
On panels they pick lines only (no space numbers); the exact model seeds from the better one.

Searches improve such a choice: single and paired changes, then (``split_search_lines``) meet in
the middle over many units at once (Horowitz & Sahni, JACM 21(2), 1974, from memory), which
finds near-perfect splits of odd loads and, when the loads take few distinct sizes, tries every
line assignment of the relaxation. ``fewest_changes_lines`` meets sets of changes from the
schedule as it stands in the same way, for the fewest moves within a spread cap and a proof.
"""

from __future__ import annotations

import functools
import itertools
import math
import random
import time
from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np

from balancer.optimize.model import Layout
from balancer.optimize.search.baselines import greedy_lines
from balancer.optimize.search.lines import LineState, pattern_spread_va

# Work budgets, so that a panel gets the same answer on every run and every machine; the time
# budgets the callers pass are only a safety net for a slow machine.
LOCAL_STEPS = 25  # improving steps (or shakes) of the local search
UNDO_STEPS = 150  # handfuls re-decided while undoing needless changes
PATIENCE = 5  # shakes per unit without a better answer before the search gives up
UNDO_TRIES = 400  # fruitless handfuls before undoing changes stops (each finds one ~1 in 50)


def local_search_lines(
    layout: Layout,
    picks: Sequence[int],
    goal_spread_va: float,
    budget_s: float,
    restarts: bool = True,
    max_steps: int = LOCAL_STEPS,
) -> list[int]:
    """Improve a line-pattern choice by single and paired changes until ``goal_spread_va``.

    Each step takes the best single change, else the best pair, so from the present arrangement
    the answer stays close to it (few breakers moved). With ``restarts`` a local optimum is
    shaken by a few random changes (seeded, so runs repeat) and the search goes on.
    """
    state = LineState(layout, picks)
    best = (state.score(state.load), list(state.picks))
    rng = random.Random(0)
    stop = time.perf_counter() + budget_s
    stale = 0  # shakes since the best last improved
    for _ in range(max_steps):
        if best[0][0] <= goal_spread_va or time.perf_counter() >= stop:
            break
        change = state.best_change()
        if change is not None:
            state.apply(change)
            if state.score(state.load) < best[0]:
                best = (state.score(state.load), list(state.picks))
                stale = 0
            continue
        stale += 1
        if not restarts or stale > PATIENCE * len(state.picks):
            break
        # Re-decide a random handful of units exactly, all their combinations at once.
        if state.reopt(rng.sample(range(len(state.picks)), len(state.picks))):
            stale = 0
        if state.score(state.load) < best[0]:
            best = (state.score(state.load), list(state.picks))
    return best[1]


def present_lines(layout: Layout) -> list[int] | None:
    """Line pattern per unit as the schedule stands; unplaced units go where greedy puts them."""
    panel = layout.panel
    picks: list[int] = []
    missing = False
    for unit in layout.units:
        current = tuple(tuple(sorted(panel.lines_of(panel.circuits[i]))) for i in unit.members)
        found = [k for k, o in enumerate(unit.patterns()) if o.pattern == current]
        picks.append(found[0] if found else 0)
        missing = missing or not found
    if missing:
        greedy = greedy_lines(layout)
        if greedy is None:
            return None
        for u, unit in enumerate(layout.units):
            current = tuple(tuple(sorted(panel.lines_of(panel.circuits[i]))) for i in unit.members)
            if current not in {o.pattern for o in unit.patterns()}:
                picks[u] = greedy[u]
    state = LineState(layout, picks)
    return picks if min(state.room) >= 0 else None


def fewer_changes_lines(
    layout: Layout,
    picks: Sequence[int],
    home: Sequence[int],
    goal_va: float,
    budget_s: float,
    max_steps: int = UNDO_STEPS,
) -> list[int]:
    """Undo changes from ``home`` (the schedule as it stands) while the spread stays in goal.

    Random handfuls of changed units, with one unchanged unit, are re-decided jointly for the
    fewest changes; the spread never leaves ``goal_va``. Seeded, so runs repeat.
    """
    state = LineState(layout, picks)
    rng = random.Random(1)
    stop = time.perf_counter() + budget_s
    stale = 0
    for _ in range(max_steps):
        if time.perf_counter() >= stop or stale >= UNDO_TRIES:
            break
        changed = [u for u, k in enumerate(state.picks) if k != home[u]]
        if not changed:
            break
        kept = [u for u, k in enumerate(state.picks) if k == home[u]]
        units = rng.sample(changed, min(len(changed), 9))
        units += rng.sample(kept, min(len(kept), 1))
        stale = 0 if state.fewer_changes(units, home, goal_va) else stale + 1
    return state.picks


# Meet in the middle: re-decide many units at once by enumerating two halves of them and
# pairing a choice from one half with the best-fitting choice from the other. Units that add
# the same VA and use the same lines in every pattern (equal loads) are enumerated by how many
# take each pattern, so a panel of a few repeated load sizes is searched exhaustively.
HALF_COMBINATIONS = 20_000  # joint choices per half in one step on a handful of units
EXACT_HALF_COMBINATIONS = 250_000  # per half, when the whole panel is enumerated at once
PAIR_LIMIT = 300_000  # candidate pairs one step on a handful evaluates at most
EXACT_PAIR_LIMIT = 3_000_000  # ... and the widest window of the whole enumeration
PAIR_CHUNK = 400_000  # candidate pairs evaluated at once (memory)
SPLIT_ROUNDS = 60  # steps on random handfuls (seeded) before the search gives up
STALE_BEFORE_WHOLE = 2  # fruitless steps before a panel that can be enumerated whole is
STALE_LIMIT = 4  # fruitless steps before the search gives up (a step seldom fails near balance)
SPLIT_SEED = 2


@dataclass(frozen=True, slots=True)
class SplitResult:
    """What :func:`split_search_lines` found.

    ``exhaustive`` is True only when every line assignment was considered (directly or by
    dominance in the pairing), so ``spread_va`` is the least spread of the line-level
    relaxation: a lower bound for every arrangement in spaces.
    """

    picks: list[int]
    spread_va: float
    exhaustive: bool


@dataclass(frozen=True, slots=True)
class _Half:
    """Every joint choice of some units, counted per group of interchangeable units."""

    kinds: list[list[int]]
    sizes: list[int]
    load: np.ndarray  # (choices, lines) VA
    use: np.ndarray  # (choices, lines) spaces


def _kinds(state: LineState, units: Sequence[int]) -> list[list[int]]:
    """Units grouped when their patterns add the same VA and use the same lines (in order)."""
    groups: dict[object, list[int]] = {}
    for u in units:
        groups.setdefault((tuple(state.share[u]), tuple(state.use[u])), []).append(u)
    return list(groups.values())


def _split_count(state: LineState, kind: Sequence[int]) -> int:
    patterns = len(state.patterns[kind[0]])
    return math.comb(len(kind) + patterns - 1, len(kind))


def _kind_splits(state: LineState, kind: Sequence[int]) -> tuple[np.ndarray, np.ndarray]:
    """Pattern per unit (rows: every way to share the kind out) and the counts per pattern."""
    patterns = len(state.patterns[kind[0]])
    assign = np.array(
        list(itertools.combinations_with_replacement(range(patterns), len(kind))), dtype=np.int64
    ).reshape(-1, len(kind))
    counts = (assign[:, :, None] == np.arange(patterns)[None, None, :]).sum(axis=1)
    return assign, counts


def _half(state: LineState, kinds: list[list[int]]) -> _Half:
    n = len(state.load)
    load = np.zeros((1, n))
    use = np.zeros((1, n))
    sizes = []
    for kind in kinds:
        _, counts = _kind_splits(state, kind)
        sizes.append(len(counts))
        kind_load = counts @ np.asarray(state.share[kind[0]], dtype=float)
        kind_use = counts @ np.asarray(state.use[kind[0]], dtype=float)
        load = (load[:, None, :] + kind_load[None, :, :]).reshape(-1, n)
        use = (use[:, None, :] + kind_use[None, :, :]).reshape(-1, n)
    return _Half(kinds, sizes, load, use)


def _decode(state: LineState, half: _Half, row: int) -> list[tuple[int, int]]:
    """(unit, pattern) changes for one row of a half."""
    if not half.kinds:
        return []
    changes = []
    index = np.unravel_index(row, half.sizes)
    for kind, split in zip(half.kinds, index, strict=True):
        assign, _ = _kind_splits(state, kind)
        changes += [(u, int(k)) for u, k in zip(kind, assign[int(split)], strict=True)]
    return changes


def _pair_windows(
    base: np.ndarray, first: _Half, second: _Half, radius: float
) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """For each choice of ``first``, the run of ``second`` (sorted on the first two lines'
    difference) that can keep those two lines within ``radius`` of each other: every pair of
    spread at most ``radius`` lies in these runs, since no two lines differ by more."""
    gap_first = first.load[:, 0] - first.load[:, 1] + (base[0] - base[1])
    gap_second = second.load[:, 0] - second.load[:, 1]
    order = np.argsort(gap_second, kind="stable")
    ordered = gap_second[order]
    # a little wider than asked, so rounding never leaves a pair out; the spread decides
    radius += 1e-9 * (1.0 + float(np.abs(base).max()) + abs(radius))
    low = np.searchsorted(ordered, -gap_first - radius, side="left")
    high = np.searchsorted(ordered, -gap_first + radius, side="right")
    return order, low, high


class _TooManyPairs(Exception):
    """The window holds more candidate pairs than one step may look at."""


def _best_pair(
    base: np.ndarray,
    room: np.ndarray,
    first: _Half,
    second: _Half,
    radius: float,
    pair_limit: int,
) -> tuple[int, int, float, float] | None:
    """The pair (row of ``first``, row of ``second``, spread, squared deviation) of least
    (spread, squared deviation) with spread at most ``radius`` that fits the room; None when
    there is none. Raises _TooManyPairs beyond ``pair_limit`` candidates."""
    order, low, high = _pair_windows(base, first, second, radius)
    counts = high - low
    total = int(counts.sum())
    if total > pair_limit:
        raise _TooManyPairs
    best: tuple[float, float, int, int] | None = None
    ends = np.cumsum(counts)
    start_row = 0
    while start_row < len(counts):
        # rows of ``first`` whose candidates fit one chunk (at least one row)
        reach = ends[start_row - 1] if start_row else 0
        stop_row = int(np.searchsorted(ends, reach + PAIR_CHUNK, side="right"))
        stop_row = max(stop_row, start_row + 1)
        rows = np.arange(start_row, stop_row)
        per = counts[rows]
        if per.sum():
            ia = np.repeat(rows, per)
            offsets = np.arange(int(per.sum())) - np.repeat(np.cumsum(per) - per, per)
            ib = order[np.repeat(low[rows], per) + offsets]
            # the room first: on a full panel it rules out most pairs before any arithmetic
            fits = ((first.use[ia] + second.use[ib]) <= room).all(axis=1)
            ia, ib = ia[fits], ib[fits]
            load = base + first.load[ia] + second.load[ib]
            columns = [load[:, j] for j in range(load.shape[1])]
            spread = functools.reduce(np.maximum, columns) - functools.reduce(np.minimum, columns)
            near = spread <= radius
            if near.any():
                ia, ib, load, spread = ia[near], ib[near], load[near], spread[near]
                deviation = ((load - load.mean(axis=1, keepdims=True)) ** 2).sum(axis=1)
                k = int(np.lexsort((deviation, spread))[0])
                found = (float(spread[k]), float(deviation[k]), int(ia[k]), int(ib[k]))
                if best is None or found[:2] < best[:2]:
                    best = found
        start_row = stop_row
    if best is None:
        return None
    return best[2], best[3], best[0], best[1]


def _two_halves(state: LineState, kinds: list[list[int]]) -> tuple[list[list[int]], ...]:
    """Kinds shared out so the two products of split counts are about equal (largest first)."""
    halves: tuple[list[list[int]], list[list[int]]] = ([], [])
    products = [1, 1]
    for kind in sorted(kinds, key=lambda k: -_split_count(state, k)):
        side = 0 if products[0] <= products[1] else 1
        halves[side].append(kind)
        products[side] *= _split_count(state, kind)
    return halves


class _Pairing:
    """Two halves of some units enumerated once, the other units held where they are."""

    def __init__(self, state: LineState, units: Sequence[int], halves: Sequence[list[list[int]]]):
        self.state = state
        base = np.asarray(state.load, dtype=float)
        room = np.asarray(state.room, dtype=float)
        for u in units:
            base = base - np.asarray(state.share[u][state.picks[u]])
            room = room + np.asarray(state.use[u][state.picks[u]])
        self.base, self.room = base, room
        self.first, self.second = _half(state, halves[0]), _half(state, halves[1])

    def count(self, radius: float) -> int:
        """How many candidate pairs a window of ``radius`` holds."""
        _, low, high = _pair_windows(self.base, self.first, self.second, radius)
        return int((high - low).sum())

    def best(self, radius: float, pair_limit: int) -> tuple[int, int, float, float] | None:
        return _best_pair(self.base, self.room, self.first, self.second, radius, pair_limit)

    def apply(self, found: tuple[int, int, float, float]) -> None:
        ia, ib = found[0], found[1]
        self.state.apply(_decode(self.state, self.first, ia) + _decode(self.state, self.second, ib))


def _exact_halves(state: LineState, half_limit: int) -> tuple[list[list[int]], ...] | None:
    """Every movable unit in two halves of at most ``half_limit`` choices each, or None."""
    movable = [u for u in range(len(state.picks)) if len(state.patterns[u]) > 1]
    halves = _two_halves(state, _kinds(state, movable))
    if any(math.prod(_split_count(state, k) for k in half) > half_limit for half in halves):
        return None
    return halves


def _exhaustive(state: LineState, halves: Sequence[list[list[int]]], first_radius: float) -> bool:
    """Apply the least spread over every line assignment to ``state``; False (``state``
    unchanged) when the widest window would hold too many pairs.

    The window starts at ``first_radius`` and doubles until it holds a pair: the best
    pair inside a window that holds any is the best of all. At the present spread it holds the
    present choice itself.
    """
    movable = [u for half in halves for kind in half for u in kind]
    pairing = _Pairing(state, movable, halves)
    here = max(state.load) - min(state.load)
    widest = here + 1e-9 * max(1.0, max(abs(v) for v in state.load))  # rounding kept in
    if pairing.count(widest) > EXACT_PAIR_LIMIT:
        return False  # settling it may need the widest window: too many pairs
    radius = min(max(first_radius, 1e-6), widest)
    while True:
        try:
            found = pairing.best(radius, EXACT_PAIR_LIMIT)
        except _TooManyPairs:
            return False
        if found is not None:
            pairing.apply(found)
            return True
        if radius >= widest:
            return True  # nothing inside the present spread but by rounding: it is the best
        radius = min(2 * radius, widest)


def split_search_lines(
    layout: Layout,
    picks: Sequence[int],
    goal_spread_va: float,
    budget_s: float,
    rounds: int = SPLIT_ROUNDS,
) -> SplitResult:
    """Lower the spread of a line-pattern choice by re-deciding many units at once.

    When the units take few distinct loads (counted per pattern, not one by one), every
    assignment is enumerated in two halves and paired: the answer is then the least spread of
    the line-level relaxation (``exhaustive``). Otherwise, in up to ``rounds`` seeded steps, a
    random handful of units is re-decided jointly by meet in the middle, the rest held, until
    the spread reaches ``goal_spread_va`` or ``budget_s`` runs out (half of it when a whole
    enumeration is still to come). Every answer keeps the units' legal patterns and the free
    spaces per line.

    The steps are seeded, so a panel gives the same answer each run unless the time budget
    stops the search first.
    """
    state = LineState(layout, picks)
    if min(state.room) < 0:
        raise ValueError("the starting line choice needs more spaces than a line has")
    begin = time.perf_counter()
    cheap = _exact_halves(state, HALF_COMBINATIONS)
    if cheap is not None and _exhaustive(state, cheap, goal_spread_va):
        return SplitResult(list(state.picks), pattern_spread_va(layout, state.picks), True)
    whole = _exact_halves(state, EXACT_HALF_COMBINATIONS)
    stop = begin + (budget_s / 2 if whole is not None else budget_s)
    spread = max(state.load) - min(state.load)
    movable = [u for u in range(len(state.picks)) if len(state.patterns[u]) > 1]
    rng = random.Random(SPLIT_SEED)
    stale = 0  # steps since the spread last went down
    for _ in range(rounds):
        if spread <= goal_spread_va or time.perf_counter() >= stop:
            break
        if whole is not None and stale >= STALE_BEFORE_WHOLE:
            # repeated loads: the whole enumeration settles it sooner, if its window allows
            if _exhaustive(state, whole, goal_spread_va):
                return SplitResult(list(state.picks), pattern_spread_va(layout, state.picks), True)
            whole, stop = None, begin + budget_s
            continue
        if stale >= STALE_LIMIT:
            break  # far from an even split (a full line, or a heavy load): leave it to the solver
        halves: tuple[list[int], list[int]] = ([], [])
        products = [1, 1]
        for u in rng.sample(movable, len(movable)):
            side = 0 if products[0] <= products[1] else 1
            count = len(state.patterns[u])
            if products[side] * count <= HALF_COMBINATIONS:
                products[side] *= count
                halves[side].append(u)
        pairing = _Pairing(
            state, halves[0] + halves[1], (_kinds(state, halves[0]), _kinds(state, halves[1]))
        )
        radius = spread
        found: tuple[int, int, float, float] | None = None
        for _ in range(12):  # narrow the window until the candidate pairs fit the limit
            try:
                found = pairing.best(radius, PAIR_LIMIT)
                break
            except _TooManyPairs:
                radius /= 2
        stale += 1
        if found is not None and found[2:] < state.score(state.load):
            pairing.apply(found)
            stale = 0 if max(state.load) - min(state.load) < spread else stale
            spread = max(state.load) - min(state.load)
    # The whole panel, when it has few distinct loads: this settles the least spread.
    exhaustive = (
        spread > goal_spread_va
        and whole is not None
        and time.perf_counter() < begin + budget_s
        and _exhaustive(state, whole, goal_spread_va)
    )
    return SplitResult(list(state.picks), pattern_spread_va(layout, state.picks), exhaustive)


# Fewest moves from the schedule as it stands: every set of k changed units, for k = 0, 1, …, by
# meet in the middle. A set of k changes is split into its k // 2 lowest-numbered units and the
# rest, so each set is met once; the halves are bucketed on the differences between the first
# line and the others, and only pairs in buckets that can meet the cap are checked.
FEWEST_HALF_ROWS = 1_500_000  # change sets one half may hold (memory: about 100 bytes each)
FEWEST_PAIR_LIMIT = 6_000_000  # candidate pairs checked for one count of changes at most
FEWEST_CHUNK = 400_000  # candidate pairs checked at once (memory)
FEWEST_FREE_CHOICES = 5_000  # joint choices of the unplaced units enumerated at most


@dataclass(frozen=True, slots=True)
class FewestChanges:
    """What :func:`fewest_changes_lines` found.

    ``bound`` is proven: every line assignment with spread at most the cap, within the free
    spaces per line, needs at least that many moves (each changed unit counted at the fewest
    moves its new lines need). ``picks`` is the assignment of fewest moves found and ``moves``
    its count, equal to ``bound`` when it is proven fewest; both None when none was found.
    """

    picks: list[int] | None
    moves: int | None
    bound: int


@dataclass(frozen=True, slots=True)
class _ChangeSets:
    """Every set of a given size of changes (unit, new pattern) on distinct units."""

    items: np.ndarray  # (sets, size) indices into the change list
    load: np.ndarray  # (sets, lines) VA added
    use: np.ndarray  # (sets, lines) spaces taken
    moves: np.ndarray  # (sets,) fewest moves the changes need
    low: np.ndarray  # (sets,) lowest unit changed (a large number for the empty set)
    high: np.ndarray  # (sets,) highest unit changed (-1 for the empty set)

    @staticmethod
    def empty(lines: int) -> _ChangeSets:
        """The one set of no changes."""
        return _ChangeSets(
            np.zeros((1, 0), dtype=np.int64),
            np.zeros((1, lines)),
            np.zeros((1, lines)),
            np.zeros(1, dtype=np.int64),
            np.array([np.iinfo(np.int64).max]),
            np.array([-1]),
        )

    def take(self, rows: np.ndarray) -> _ChangeSets:
        return _ChangeSets(
            self.items[rows],
            self.load[rows],
            self.use[rows],
            self.moves[rows],
            self.low[rows],
            self.high[rows],
        )


def _change_sets(
    unit: np.ndarray, load: np.ndarray, use: np.ndarray, moves: np.ndarray, size: int, limit: int
) -> _ChangeSets | None:
    """Sets of ``size`` changes on distinct units, grown one unit at a time in unit order;
    None when there would be more than ``limit``."""
    sets = _ChangeSets.empty(load.shape[1])
    for _ in range(size):
        sets = sets.take(np.argsort(sets.high, kind="stable"))
        # a change extends every set whose units all come before its own
        per = np.searchsorted(sets.high, unit, side="left")
        if int(per.sum()) > limit:
            return None
        item = np.repeat(np.arange(len(unit)), per)
        row = np.arange(int(per.sum())) - np.repeat(np.cumsum(per) - per, per)
        sets = _ChangeSets(
            np.concatenate([sets.items[row], item[:, None]], axis=1),
            sets.load[row] + load[item],
            sets.use[row] + use[item],
            sets.moves[row] + moves[item],
            np.minimum(sets.low[row], unit[item]),
            unit[item],
        )
    return sets


def _joined(free: _ChangeSets, sets: _ChangeSets, limit: int) -> _ChangeSets | None:
    """Every choice of the unplaced units with every set of changes; None beyond ``limit``."""
    if len(free.moves) * len(sets.moves) > limit:
        return None
    a = np.repeat(np.arange(len(free.moves)), len(sets.moves))
    b = np.tile(np.arange(len(sets.moves)), len(free.moves))
    return _ChangeSets(
        np.concatenate([free.items[a], sets.items[b]], axis=1),
        free.load[a] + sets.load[b],
        free.use[a] + sets.use[b],
        sets.moves[b],
        sets.low[b],
        sets.high[b],
    )


class _Budget(Exception):
    """The time budget or the pair limit ran out before a count of changes was settled."""


def _meet(
    first: _ChangeSets,
    second: _ChangeSets,
    base: np.ndarray,
    room: np.ndarray,
    cap_va: float,
    stop: float,
) -> tuple[int, int, int] | None:
    """The pair (row of ``first``, row of ``second``, moves) whose lines end within ``cap_va``
    of each other and fit the room, every unit of the first below every unit of the second;
    of fewest moves, then least spread and squared deviation. None when there is none;
    raises _Budget when the pairs to check exceed the limit or the time runs out."""
    lines = base.size
    if cap_va < 0:
        return None  # no spread is negative
    reach = cap_va + 1e-9 * (1.0 + float(np.abs(base).max()) + cap_va)  # rounding kept in
    width = 2.5 * reach + 1e-3  # wider than the window (2·reach): it spans at most two buckets
    # (line 0 − line j) for j ≥ 1: what the first half leaves, what the second adds
    key_first = (base[0] + first.load[:, :1]) - (base[1:] + first.load[:, 1:])
    key_second = second.load[:, :1] - second.load[:, 1:]
    cell = np.floor(key_second / width).astype(np.int64)
    low_cell = cell.min(axis=0)
    span = cell.max(axis=0) - low_cell + 1
    stride = np.cumprod(np.concatenate([[1], span[:-1]]))
    order = np.argsort(((cell - low_cell) * stride).sum(axis=1), kind="stable")
    sorted_code = ((cell - low_cell) * stride).sum(axis=1)[order]
    lo_cell = np.floor((-key_first - reach) / width).astype(np.int64)
    hi_cell = np.floor((-key_first + reach) / width).astype(np.int64)
    starts: list[np.ndarray] = []
    counts: list[np.ndarray] = []
    rows: list[np.ndarray] = []
    for corner in itertools.product((False, True), repeat=lines - 1):
        upper = np.array(corner, dtype=bool)
        cell_at = np.where(upper, hi_cell, lo_cell)
        # the upper bucket only where it differs from the lower one, so no pair is met twice
        wanted = np.all(~upper | (hi_cell != lo_cell), axis=1)
        wanted &= np.all((cell_at >= low_cell) & (cell_at < low_cell + span), axis=1)
        where = np.flatnonzero(wanted)
        code = ((cell_at[where] - low_cell) * stride).sum(axis=1)
        begin = np.searchsorted(sorted_code, code, side="left")
        starts.append(begin)
        counts.append(np.searchsorted(sorted_code, code, side="right") - begin)
        rows.append(where)
    start = np.concatenate(starts)
    count = np.concatenate(counts)
    row = np.concatenate(rows)
    if int(count.sum()) > FEWEST_PAIR_LIMIT:
        raise _Budget
    best: tuple[int, float, float, int, int] | None = None
    total = np.cumsum(count)
    at = 0
    while at < len(count):
        if time.perf_counter() >= stop:
            raise _Budget
        done = total[at - 1] if at else 0
        upto = max(int(np.searchsorted(total, done + FEWEST_CHUNK, side="right")), at + 1)
        per = count[at:upto]
        if per.sum():
            ia = np.repeat(row[at:upto], per)
            offsets = np.arange(int(per.sum())) - np.repeat(np.cumsum(per) - per, per)
            ib = order[np.repeat(start[at:upto], per) + offsets]
            keep = first.high[ia] < second.low[ib]
            keep &= ((first.use[ia] + second.use[ib]) <= room).all(axis=1)
            ia, ib = ia[keep], ib[keep]
            load = base + first.load[ia] + second.load[ib]
            spread = load.max(axis=1) - load.min(axis=1)
            near = spread <= reach
            if near.any():
                ia, ib, load, spread = ia[near], ib[near], load[near], spread[near]
                deviation = ((load - load.mean(axis=1, keepdims=True)) ** 2).sum(axis=1)
                moves = first.moves[ia] + second.moves[ib]
                k = int(np.lexsort((ib, ia, deviation, spread, moves))[0])
                found = (
                    int(moves[k]),
                    float(spread[k]),
                    float(deviation[k]),
                    int(ia[k]),
                    int(ib[k]),
                )
                if best is None or found[:3] < best[:3]:
                    best = found
        at = upto
    return None if best is None else (best[3], best[4], best[0])


def fewest_changes_lines(layout: Layout, cap_va: float, budget_s: float) -> FewestChanges | None:
    """The fewest moves from the schedule as it stands that bring the phase spread to at most
    ``cap_va``, every line keeping room, with a proven lower bound on that count.

    Each changed unit counts the fewest moves its new lines need (one for a breaker, one per
    moved member for a multiwire group), so no arrangement in spaces within the cap needs
    fewer than ``bound`` moves. Counts of changed units k = 0, 1, 2, … are settled in turn,
    each by meeting every set of k // 2 changes with every set of the other k − k // 2, until
    k reaches the fewest moves found (a proof) or the budget, the pair limit or the set limit
    stops the search (the bound is then the first count not settled, or the moves found if
    fewer). Units not yet placed take any lines at no move: every joint choice of theirs (up
    to FEWEST_FREE_CHOICES) joins the first half. Returns None when the search does not apply:
    a unit that keeps its lines only by moving, or too many unplaced units.
    """
    home: list[int] = []
    free: list[int] = []  # units not placed yet
    for piece in layout.units:
        patterns = piece.patterns()
        stay = [k for k, o in enumerate(patterns) if o.moves == 0]
        if len(stay) == len(patterns):
            free.append(len(home))  # not placed yet: no line costs a move
        elif len(stay) != 1:
            return None  # moves not counted per changed unit
        home.append(stay[0] if stay else 0)
    state = LineState(layout, home)
    unplaced = set(free)
    changes = [
        (u, k)
        for u, patterns in enumerate(state.patterns)
        if u not in unplaced
        for k in range(len(patterns))
        if k != home[u]
    ]
    n = len(state.load)
    unit = np.array([u for u, _ in changes], dtype=np.int64)
    load = np.array(
        [np.subtract(state.share[u][k], state.share[u][home[u]]) for u, k in changes]
    ).reshape(-1, n)
    use = np.array(
        [np.subtract(state.use[u][k], state.use[u][home[u]]) for u, k in changes]
    ).reshape(-1, n)
    moves = np.array([state.patterns[u][k].moves for u, k in changes], dtype=np.int64)
    free_sets = _free_choices(state, free, len(changes))
    if free_sets is None:
        return None
    changes += [(u, k) for u in free for k in range(len(state.patterns[u]))]
    base = np.asarray(state.load, dtype=float)
    room = np.asarray(state.room, dtype=float)
    for u in free:  # their lines come with the first half
        base -= state.share[u][home[u]]
        room += state.use[u][home[u]]
    stop = time.perf_counter() + budget_s
    cache: dict[int, _ChangeSets | None] = {}

    def sets(size: int) -> _ChangeSets | None:
        if size not in cache:
            cache[size] = _change_sets(unit, load, use, moves, size, FEWEST_HALF_ROWS)
        return cache[size]

    def first_half(size: int) -> _ChangeSets | None:
        ways = sets(size)
        if ways is None or not free:
            return ways
        return _joined(free_sets, ways, FEWEST_HALF_ROWS)

    best: tuple[int, list[int]] | None = None
    units = len(set(unit.tolist()))
    for count in range(units + 1):
        if best is not None and best[0] <= count:
            return FewestChanges(best[1], best[0], best[0])  # k changes need k moves or more
        first, second = first_half(count // 2), sets(count - count // 2)
        if first is None or second is None or time.perf_counter() >= stop:
            return _stopped(best, count)
        try:
            found = _meet(first, second, base, room, cap_va, stop)
        except _Budget:
            return _stopped(best, count)
        if found is not None and (best is None or found[2] < best[0]):
            picks = list(home)
            for index in np.concatenate([first.items[found[0]], second.items[found[1]]]):
                u, k = changes[int(index)]
                picks[u] = k
            best = (found[2], picks)
    if best is not None:
        return FewestChanges(best[1], best[0], best[0])  # every count settled
    return FewestChanges(None, None, units + 1)  # no line assignment reaches the cap


def _free_choices(state: LineState, free: Sequence[int], offset: int) -> _ChangeSets | None:
    """Every joint choice of lines for the unplaced units (indices into the change list from
    ``offset``), with the VA and spaces they add; None beyond FEWEST_FREE_CHOICES."""
    sets = _ChangeSets.empty(len(state.load))
    for u in free:
        count = len(state.patterns[u])
        if len(sets.moves) * count > FEWEST_FREE_CHOICES:
            return None
        a = np.repeat(np.arange(len(sets.moves)), count)
        k = np.tile(np.arange(count), len(sets.moves))
        sets = _ChangeSets(
            np.concatenate([sets.items[a], (offset + k)[:, None]], axis=1),
            sets.load[a] + np.asarray(state.share[u], dtype=float)[k],
            sets.use[a] + np.asarray(state.use[u], dtype=float)[k],
            sets.moves[a],
            sets.low[a],
            sets.high[a],
        )
        offset += count
    return sets


def _stopped(best: tuple[int, list[int]] | None, count: int) -> FewestChanges:
    """Counts below ``count`` settled: at least that many moves, or the best found if fewer."""
    if best is None:
        return FewestChanges(None, None, count)
    return FewestChanges(best[1], best[0], min(best[0], count))

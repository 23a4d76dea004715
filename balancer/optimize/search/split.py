"""Split search: many units re-decided at once by meet in the middle (Horowitz & Sahni, JACM
21(2), 1974, from memory), which finds near-perfect splits of odd loads and, when the loads take
few distinct sizes, tries every line assignment of the relaxation.
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
from balancer.optimize.search.lines import LineState, pattern_spread_va

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

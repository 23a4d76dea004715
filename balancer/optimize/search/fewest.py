"""Fewest changes: the fewest moves from the schedule as it stands that bring the spread within a
cap, every set of changes met in the middle, with a proven lower bound on that count.
"""

from __future__ import annotations

import itertools
import time
from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np

from balancer.optimize.model import Layout
from balancer.optimize.search.lines import LineState

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
    if cap_va < 0:
        return None  # no spread is negative
    reach = cap_va + 1e-9 * (1.0 + float(np.abs(base).max()) + cap_va)  # rounding kept in
    order, start, count, row = _candidate_runs(first, second, base, reach)
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
            found = _best_of_pairs(first, second, base, room, reach, ia, ib)
            if found is not None and (best is None or found[:3] < best[:3]):
                best = found
        at = upto
    return None if best is None else (best[3], best[4], best[0])


def _candidate_runs(
    first: _ChangeSets, second: _ChangeSets, base: np.ndarray, reach: float
) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
    """The rows of ``second`` each row of ``first`` may meet within ``reach``: ``second``'s rows
    in bucket order, and per candidate run its start there, its length and its ``first`` row."""
    lines = base.size
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
    return order, np.concatenate(starts), np.concatenate(counts), np.concatenate(rows)


def _best_of_pairs(
    first: _ChangeSets,
    second: _ChangeSets,
    base: np.ndarray,
    room: np.ndarray,
    reach: float,
    ia: np.ndarray,
    ib: np.ndarray,
) -> tuple[int, float, float, int, int] | None:
    """Of the candidate pairs (``ia[i]``, ``ib[i]``) that meet in unit order, fit the room and
    end within ``reach``: (moves, spread, squared deviation, row of first, row of second) of
    the least by that order; None when none does."""
    keep = first.high[ia] < second.low[ib]
    keep &= ((first.use[ia] + second.use[ib]) <= room).all(axis=1)
    ia, ib = ia[keep], ib[keep]
    load = base + first.load[ia] + second.load[ib]
    spread = load.max(axis=1) - load.min(axis=1)
    near = spread <= reach
    if not near.any():
        return None
    ia, ib, load, spread = ia[near], ib[near], load[near], spread[near]
    deviation = ((load - load.mean(axis=1, keepdims=True)) ** 2).sum(axis=1)
    moves = first.moves[ia] + second.moves[ib]
    k = int(np.lexsort((ib, ia, deviation, spread, moves))[0])
    return int(moves[k]), float(spread[k]), float(deviation[k]), int(ia[k]), int(ib[k])


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
    found = _home_lines(layout)
    if found is None:
        return None
    home, free = found
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
    sets = _SetsBySize(unit, load, use, moves, free_sets if free else None)
    best: tuple[int, list[int]] | None = None
    units = len(set(unit.tolist()))
    for count in range(units + 1):
        if best is not None and best[0] <= count:
            return FewestChanges(best[1], best[0], best[0])  # k changes need k moves or more
        first, second = sets.first(count // 2), sets.second(count - count // 2)
        if first is None or second is None or time.perf_counter() >= stop:
            return _stopped(best, count)
        try:
            met = _meet(first, second, base, room, cap_va, stop)
        except _Budget:
            return _stopped(best, count)
        if met is not None and (best is None or met[2] < best[0]):
            picks = list(home)
            for index in np.concatenate([first.items[met[0]], second.items[met[1]]]):
                u, k = changes[int(index)]
                picks[u] = k
            best = (met[2], picks)
    if best is not None:
        return FewestChanges(best[1], best[0], best[0])  # every count settled
    return FewestChanges(None, None, units + 1)  # no line assignment reaches the cap


def _home_lines(layout: Layout) -> tuple[list[int], list[int]] | None:
    """The pattern each unit has as the schedule stands, and the units not placed yet (any
    pattern at no move); None when a unit keeps its lines only by moving."""
    home: list[int] = []
    free: list[int] = []
    for piece in layout.units:
        patterns = piece.patterns()
        stay = [k for k, o in enumerate(patterns) if o.moves == 0]
        if len(stay) == len(patterns):
            free.append(len(home))  # not placed yet: no line costs a move
        elif len(stay) != 1:
            return None  # moves not counted per changed unit
        home.append(stay[0] if stay else 0)
    return home, free


class _SetsBySize:
    """Sets of changes by their size, each size built once; a first half also takes every joint
    choice of the unplaced units (``free``, None when there are none)."""

    def __init__(
        self,
        unit: np.ndarray,
        load: np.ndarray,
        use: np.ndarray,
        moves: np.ndarray,
        free: _ChangeSets | None,
    ) -> None:
        self.unit, self.load, self.use, self.moves = unit, load, use, moves
        self.free = free
        self.cache: dict[int, _ChangeSets | None] = {}

    def second(self, size: int) -> _ChangeSets | None:
        """Every set of ``size`` changes; None beyond FEWEST_HALF_ROWS."""
        if size not in self.cache:
            self.cache[size] = _change_sets(
                self.unit, self.load, self.use, self.moves, size, FEWEST_HALF_ROWS
            )
        return self.cache[size]

    def first(self, size: int) -> _ChangeSets | None:
        """Every set of ``size`` changes with every choice of the unplaced units."""
        ways = self.second(size)
        if ways is None or self.free is None:
            return ways
        return _joined(self.free, ways, FEWEST_HALF_ROWS)


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

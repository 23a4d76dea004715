"""Local search over line assignments: single and paired changes with seeded shakes, and undoing
changes from the schedule as it stands that the spread does not need.
"""

from __future__ import annotations

import random
import time
from collections.abc import Sequence

from balancer.optimize.model import Layout
from balancer.optimize.search.baselines import greedy_lines
from balancer.optimize.search.lines import LineState

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

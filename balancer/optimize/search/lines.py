"""The phase sums and free spaces per line for a choice of line pattern per unit, which the
local, split and fewest-changes searches share, and the spread of such a choice.
"""

from __future__ import annotations

from collections.abc import Sequence

import numpy as np

from balancer.optimize.model import Layout, contribution


def pattern_spread_va(layout: Layout, picks: Sequence[int]) -> float:
    """Spread of the phase VA for a line-pattern choice per unit."""
    panel = layout.panel
    fixed = contribution(
        panel, layout.fixed, [panel.lines_of(panel.circuits[i]) for i in layout.fixed]
    )
    load = dict(fixed.phase_va)
    for u, unit in enumerate(layout.units):
        option = unit.patterns()[picks[u]]
        for line, va in contribution(panel, unit.members, option.lines).phase_va.items():
            load[line] += va
    return max(load.values()) - min(load.values())


REOPT_COMBINATIONS = 60_000  # joint choices tried at once by one re-decision (3^10 ≈ 59 000)


class LineState:
    """Phase sums and free spaces per line for a choice of line pattern per unit."""

    def __init__(self, layout: Layout, picks: Sequence[int]) -> None:
        panel = layout.panel
        lines = panel.lines
        self.patterns = [unit.patterns() for unit in layout.units]
        self.share = [
            [
                tuple(contribution(panel, unit.members, o.lines).phase_va[x] for x in lines)
                for o in opts
            ]
            for unit, opts in zip(layout.units, self.patterns, strict=True)
        ]
        self.use = [
            [tuple(sum(m.count(x) for m in o.lines) for x in lines) for o in opts]
            for opts in self.patterns
        ]
        fixed = contribution(
            panel, layout.fixed, [panel.lines_of(panel.circuits[i]) for i in layout.fixed]
        )
        self.load = [fixed.phase_va[x] for x in lines]
        self.room = [
            sum(1 for s in layout.free_spaces if panel.geometry.line_of(s) == x) for x in lines
        ]
        self.picks = list(picks)
        for u, k in enumerate(self.picks):
            for j in range(len(lines)):
                self.load[j] += self.share[u][k][j]
                self.room[j] -= self.use[u][k][j]

    def score(self, load: Sequence[float]) -> tuple[float, float]:
        mean = sum(load) / len(load)
        return max(load) - min(load), sum((v - mean) ** 2 for v in load)

    def trial(self, changes: Sequence[tuple[int, int]]) -> list[float] | None:
        """Phase sums after the changes (unit, new pattern), or None when a line runs out."""
        load = list(self.load)
        room = list(self.room)
        for u, k in changes:
            old = self.picks[u]
            for j in range(len(load)):
                load[j] += self.share[u][k][j] - self.share[u][old][j]
                room[j] += self.use[u][old][j] - self.use[u][k][j]
        return None if min(room) < 0 else load

    def apply(self, changes: Sequence[tuple[int, int]]) -> None:
        for u, k in changes:
            old = self.picks[u]
            for j in range(len(self.load)):
                self.load[j] += self.share[u][k][j] - self.share[u][old][j]
                self.room[j] += self.use[u][old][j] - self.use[u][k][j]
            self.picks[u] = k

    def best_change(self) -> list[tuple[int, int]] | None:
        """The single change, else the pair of changes, that lowers (spread, squared deviation)
        most while every line keeps room; None at a local optimum."""
        moves = [
            (u, k)
            for u in range(len(self.picks))
            for k in range(len(self.patterns[u]))
            if k != self.picks[u]
        ]
        if not moves:
            return None
        owner = np.array([u for u, _ in moves])
        delta = np.array(
            [np.subtract(self.share[u][k], self.share[u][self.picks[u]]) for u, k in moves]
        )
        need = np.array([np.subtract(self.use[u][k], self.use[u][self.picks[u]]) for u, k in moves])
        load = np.asarray(self.load)
        room = np.asarray(self.room)
        here = self.score(self.load)
        single = load + delta
        ok: np.ndarray = np.asarray((need <= room).all(axis=1))
        found = _pick(single, ok, here)
        if found is not None:
            return [moves[found]]
        pair = load + delta[:, None, :] + delta[None, :, :]
        ok2 = ((need[:, None, :] + need[None, :, :]) <= room).all(axis=2)
        ok2 &= owner[:, None] < owner[None, :]
        found = _pick(pair.reshape(-1, load.size), ok2.reshape(-1), here)
        if found is None:
            return None
        i, j = divmod(found, len(moves))
        return [moves[i], moves[j]]

    def _joint(
        self, units: Sequence[int], home: Sequence[int] | None = None
    ) -> tuple[list[int], np.ndarray, np.ndarray, np.ndarray] | None:
        """Every joint choice for the first ``units`` (up to REOPT_COMBINATIONS), the others
        held: (units chosen, line loads per combination, fits-the-room flags, patterns
        differing from ``home`` per combination); None when no unit has a choice."""
        chosen: list[int] = []
        size = 1
        for u in units:
            count = len(self.patterns[u])
            if count > 1 and size * count <= REOPT_COMBINATIONS:
                chosen.append(u)
                size *= count
        if not chosen:
            return None
        n = len(self.load)
        base = np.asarray(self.load, dtype=float)
        room = np.asarray(self.room, dtype=float)
        for u in chosen:
            base -= self.share[u][self.picks[u]]
            room += self.use[u][self.picks[u]]
        loads = base[None, :]
        used = np.zeros((1, n))
        changed = np.zeros(1)
        for u in chosen:
            loads = (loads[:, None, :] + np.asarray(self.share[u])[None, :, :]).reshape(-1, n)
            used = (used[:, None, :] + np.asarray(self.use[u])[None, :, :]).reshape(-1, n)
            if home is not None:
                away = np.array([k != home[u] for k in range(len(self.patterns[u]))], dtype=float)
                changed = (changed[:, None] + away[None, :]).reshape(-1)
        ok: np.ndarray = np.asarray((used <= room).all(axis=1))
        return chosen, loads, ok, changed

    def _apply_index(self, chosen: list[int], index: int) -> None:
        ks = np.unravel_index(index, [len(self.patterns[u]) for u in chosen])
        self.apply([(u, int(k)) for u, k in zip(chosen, ks, strict=True)])

    def reopt(self, order: Sequence[int]) -> bool:
        """Best joint choice for the first units of ``order`` (up to REOPT_COMBINATIONS
        combinations), the others held; True when it improved the score."""
        joint = self._joint(order)
        if joint is None:
            return False
        chosen, loads, ok, _ = joint
        found = _pick(loads, ok, self.score(self.load))
        if found is None:
            return False
        self._apply_index(chosen, found)
        return True

    def fewer_changes(self, units: Sequence[int], home: Sequence[int], goal_va: float) -> bool:
        """Re-decide ``units`` jointly for the fewest patterns differing from ``home`` while the
        spread stays within ``goal_va``; True when that count went down."""
        joint = self._joint(units, home)
        if joint is None:
            return False
        chosen, loads, ok, changed = joint
        ok = ok & (loads.max(axis=1) - loads.min(axis=1) <= goal_va)
        if not ok.any():
            return False
        now = sum(1 for u in chosen if self.picks[u] != home[u])
        best = int(np.argmin(np.where(ok, changed, np.inf)))
        if changed[best] >= now:
            return False
        self._apply_index(chosen, best)
        return True


def _pick(loads: np.ndarray, ok: np.ndarray, here: tuple[float, float]) -> int | None:
    """Index of the row with the lowest (spread, squared deviation) below ``here``."""
    if not ok.any():
        return None
    spread = loads.max(axis=1) - loads.min(axis=1)
    deviation = ((loads - loads.mean(axis=1, keepdims=True)) ** 2).sum(axis=1)
    spread = np.where(ok, spread, np.inf)
    order = np.lexsort((deviation, spread))
    best = int(order[0])
    if not ok[best] or (spread[best], deviation[best]) >= here:
        return None
    return best

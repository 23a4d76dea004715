"""Baselines: largest-first greedy and Karmarkar–Karp differencing, on numbers and on panels.

Karmarkar & Karp, "The differencing method of set partitioning", UCB/CSD 82/113 (1982); the
k-way form combines the two partial partitions with the largest spread, pairing the heaviest
subset of one with the lightest of the other. Graham (1969) bounds greedy at 4/3 − 1/(3m).
On panels they pick lines only (no space numbers); the exact model seeds from the better one.
"""

from __future__ import annotations

import heapq
import itertools
import random
from collections.abc import Sequence

from balancer.optimize.model import Layout, contribution


def greedy_partition(values: Sequence[float], ways: int) -> list[list[float]]:
    """Largest value first onto the lightest subset."""
    subsets: list[list[float]] = [[] for _ in range(ways)]
    sums = [0.0] * ways
    for value in sorted(values, reverse=True):
        j = min(range(ways), key=lambda i: (sums[i], i))
        subsets[j].append(value)
        sums[j] += value
    return subsets


def karmarkar_karp(values: Sequence[float], ways: int) -> list[list[float]]:
    """Differencing: repeatedly merge the two partial partitions of largest spread."""
    counter = itertools.count()
    heap: list[tuple[float, int, list[tuple[float, list[float]]]]] = []
    for value in values:
        part = [(value, [value])] + [(0.0, []) for _ in range(ways - 1)]
        heapq.heappush(heap, (-value, next(counter), part))
    if not heap:
        return [[] for _ in range(ways)]
    while len(heap) > 1:
        _, _, first = heapq.heappop(heap)
        _, _, second = heapq.heappop(heap)
        first.sort(key=lambda s: -s[0])
        second.sort(key=lambda s: s[0])
        merged = [(a[0] + b[0], a[1] + b[1]) for a, b in zip(first, second, strict=True)]
        sums = [m[0] for m in merged]
        heapq.heappush(heap, (-(max(sums) - min(sums)), next(counter), merged))
    return [subset for _, subset in heap[0][2]]


def greedy_lines(layout: Layout) -> list[int] | None:
    """Line-pattern index per unit: heaviest unit first, onto the pattern leaving the least spread.

    Returns None when the free spaces per line run out before every unit is placed.
    """
    panel = layout.panel
    lines = panel.lines
    geometry = panel.geometry
    room = {
        line: sum(1 for s in layout.free_spaces if geometry.line_of(s) == line) for line in lines
    }
    fixed = contribution(
        panel, layout.fixed, [panel.lines_of(panel.circuits[i]) for i in layout.fixed]
    )
    load = dict(fixed.phase_va)
    picks = [-1] * len(layout.units)
    order = sorted(
        range(len(layout.units)),
        key=lambda u: (-sum(panel.circuits[i].basis_va for i in layout.units[u].members), u),
    )
    for u in order:
        unit = layout.units[u]
        best: tuple[float, float, int] | None = None
        for k, option in enumerate(unit.patterns()):
            use = {line: sum(m.count(line) for m in option.lines) for line in lines}
            if any(use[line] > room[line] for line in lines):
                continue
            share = contribution(panel, unit.members, option.lines).phase_va
            after = [load[line] + share[line] for line in lines]
            score = (max(after) - min(after), max(after), k)
            if best is None or score < best:
                best = score
        if best is None:
            return None
        k = best[2]
        option = unit.patterns()[k]
        for line in lines:
            room[line] -= sum(m.count(line) for m in option.lines)
        for line, va in contribution(panel, unit.members, option.lines).phase_va.items():
            load[line] += va
        picks[u] = k
    return picks


def karmarkar_karp_lines(layout: Layout, rng: random.Random | None = None) -> list[int] | None:
    """Line-pattern index per unit by vector differencing; None when the result breaks a rule.

    Each unit is a vector of its per-line VA in its first pattern; merging permutes whole
    subsets, which maps every unit onto another legal pattern except where a high leg or the
    space count per line forbids it, which is then reported as None.
    """
    panel = layout.panel
    lines = panel.lines
    ways = len(lines)
    counter = itertools.count()
    Bin = tuple[float, list[tuple[int, int]]]  # (VA, [(unit or -1 for fixed, position)])
    heap: list[tuple[float, int, list[Bin]]] = []

    def push(vector: list[float], owner: int) -> None:
        part: list[Bin] = [(vector[j], [(owner, j)]) for j in range(ways)]
        heapq.heappush(heap, (-(max(vector) - min(vector)), next(counter), part))

    fixed = contribution(
        panel, layout.fixed, [panel.lines_of(panel.circuits[i]) for i in layout.fixed]
    )
    push([fixed.phase_va[line] for line in lines], -1)
    reference = [unit.patterns()[0] for unit in layout.units]
    for u, unit in enumerate(layout.units):
        share = contribution(panel, unit.members, reference[u].lines).phase_va
        # With ``rng``, slightly disturbed loads give another near-balanced split (a restart).
        scale = 1.0 + (rng.uniform(-0.02, 0.02) if rng else 0.0)
        push([share[line] * scale for line in lines], u)
    while len(heap) > 1:
        _, _, first = heapq.heappop(heap)
        _, _, second = heapq.heappop(heap)
        first.sort(key=lambda b: -b[0])
        second.sort(key=lambda b: b[0])
        merged: list[Bin] = [(a[0] + b[0], a[1] + b[1]) for a, b in zip(first, second, strict=True)]
        sums = [m[0] for m in merged]
        heapq.heappush(heap, (-(max(sums) - min(sums)), next(counter), merged))
    bins = heap[0][2]
    # Name the subsets so the fixed loads stay on their own lines.
    line_of_bin = {}
    for b, (_, owners) in enumerate(bins):
        for owner, position in owners:
            if owner == -1:
                line_of_bin[b] = lines[position]
    moved_to: dict[tuple[int, int], str] = {}
    for b, (_, owners) in enumerate(bins):
        for owner, position in owners:
            moved_to[owner, position] = line_of_bin[b]
    picks: list[int] = []
    for u, unit in enumerate(layout.units):
        mapping = {lines[j]: moved_to[u, j] for j in range(ways)}
        wanted = tuple(tuple(sorted(mapping[x] for x in m)) for m in reference[u].lines)
        found = [k for k, o in enumerate(unit.patterns()) if o.pattern == wanted]
        if not found:
            return None
        picks.append(found[0])
    room = {
        line: sum(1 for s in layout.free_spaces if panel.geometry.line_of(s) == line)
        for line in lines
    }
    for u, unit in enumerate(layout.units):
        for member in unit.patterns()[picks[u]].lines:
            for line in member:
                room[line] -= 1
    if any(v < 0 for v in room.values()):
        return None
    return picks

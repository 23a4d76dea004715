"""Every legal layout of a small panel: the exhaustive reference the optimiser's tests compare
with. Written apart from the optimiser (its own reading of the space rules)."""

from __future__ import annotations

import itertools
import random
from collections.abc import Iterator

from balancer.domain.panel import Circuit, Panel
from balancer.domain.systems import get_system


def _legal_spans(panel: Panel, circuit: Circuit) -> Iterator[tuple[int, ...]]:
    if circuit.locked or (circuit.is_spare and circuit.spaces):
        yield circuit.spaces
        return
    geometry = panel.geometry
    for first in range(1, panel.spaces + 1):
        if not geometry.fits(first, circuit.poles):
            continue
        span = geometry.span(first, circuit.poles)
        lines = geometry.lines_of(first, circuit.poles)
        if circuit.poles == 1 and not panel.system.serves_line_to_neutral(lines[0]):
            continue
        yield span


def group_ok(panel: Panel, layout: dict[str, tuple[int, ...]]) -> bool:
    """Members of a multiwire group: distinct lines, consecutive spaces of one side."""
    groups: dict[str, list[int]] = {}
    for c in panel.circuits:
        if c.group:
            groups.setdefault(c.group, []).extend(layout[c.id])
    for spaces in groups.values():
        spaces.sort()
        lines = [panel.geometry.line_of(s) for s in spaces]
        if len(set(lines)) != len(lines):
            return False
        if any(b - a != 2 for a, b in itertools.pairwise(spaces)):
            return False
    return True


def all_layouts(panel: Panel) -> Iterator[dict[str, tuple[int, ...]]]:
    """Every legal layout of the panel's circuits (small panels only)."""
    circuits = list(panel.circuits)
    layout: dict[str, tuple[int, ...]] = {}
    taken: set[int] = set()

    def place(index: int) -> Iterator[dict[str, tuple[int, ...]]]:
        if index == len(circuits):
            if group_ok(panel, layout):
                yield dict(layout)
            return
        circuit = circuits[index]
        for span in _legal_spans(panel, circuit):
            if taken & set(span):
                continue
            layout[circuit.id] = span
            taken.update(span)
            yield from place(index + 1)
            taken.difference_update(span)
            del layout[circuit.id]

    yield from place(0)


def random_panel(
    rng: random.Random, spaces: int = 8, count: int = 5, multiwire: bool = False
) -> Panel:
    """A small placed panel of round loads: 1- and 2-pole circuits, sometimes one locked, and
    optionally a multiwire pair."""
    system = get_system(rng.choice(["208Y/120", "208Y/120", "120/240"]))
    panel = Panel("T", system, spaces, ())
    circuits: list[Circuit] = []
    taken: set[int] = set()
    if multiwire:
        # A multiwire pair on two lines: adjacent spaces of one side (NEC 2023 210.4 handle tie, F;
        # docs/references.md).
        first = rng.choice([s for s in range(1, spaces - 1)])
        circuits += [
            Circuit("m1", "mwbc 1", 1, 700.0, (first,), group="G"),
            Circuit("m2", "mwbc 2", 1, 400.0, (first + 2,), group="G"),
        ]
        taken |= {first, first + 2}
    for i in range(count):
        poles = rng.choice([1, 1, 1, 2]) if system.phase_count == 3 else rng.choice([1, 1, 2])
        starts = [
            s
            for s in range(1, spaces + 1)
            if panel.geometry.fits(s, poles) and not taken & set(panel.geometry.span(s, poles))
        ]
        if not starts:
            break
        span = panel.geometry.span(rng.choice(starts), poles)
        taken |= set(span)
        load = rng.choice([180, 360, 500, 720, 900, 1200, 1440, 1800, 2400, 3000])
        locked = rng.random() < 0.1
        circuits.append(Circuit(str(i), f"load {i}", poles, float(load), span, locked=locked))
    return panel.with_circuits(circuits)

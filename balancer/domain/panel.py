"""The panel as read: immutable panel and branch-circuit records, and the space geometry.

Space geometry (common practice in North American panelboards, not a code rule): odd spaces run
down the left, even down the right, and each row of two spaces sits on one line; rows take the
lines in turn (A, B, C, A, … on three-phase; A, B, A, … on single-phase 3-wire). A k-pole breaker
whose first space is n also takes n+2, …, n+2(k−1), so it spans k rows and k different lines.
All of that lives in :class:`Geometry`, so another numbering can be added in one place.
"""

from __future__ import annotations

from dataclasses import dataclass, field, replace
from typing import Any

from balancer.domain.systems import Line, System

# Load classes balancer treats specially everywhere; the demand rules know many more.
SPARE = "spare"


@dataclass(frozen=True, slots=True)
class Geometry:
    """Where spaces are and which line each one is on."""

    lines: tuple[Line, ...]
    spaces: int

    def line_of(self, space: int) -> Line:
        row = (space - 1) // 2
        return self.lines[row % len(self.lines)]

    def side_of(self, space: int) -> str:
        return "left" if space % 2 == 1 else "right"

    def span(self, first_space: int, poles: int) -> tuple[int, ...]:
        """Spaces a ``poles``-pole breaker whose first space is ``first_space`` takes."""
        return tuple(first_space + 2 * k for k in range(poles))

    def fits(self, first_space: int, poles: int) -> bool:
        return first_space >= 1 and self.span(first_space, poles)[-1] <= self.spaces

    def lines_of(self, first_space: int, poles: int) -> tuple[Line, ...]:
        return tuple(self.line_of(s) for s in self.span(first_space, poles))

    def spaces_on(self, line: Line) -> list[int]:
        return [s for s in range(1, self.spaces + 1) if self.line_of(s) == line]

    def rows(self) -> int:
        return (self.spaces + 1) // 2


@dataclass(frozen=True, slots=True)
class Circuit:
    """One branch circuit (or spare breaker) as the schedule gives it.

    ``spaces`` is empty when the schedule gives no space number. ``load_va`` is the connected
    load of the whole circuit. ``extra`` keeps every input column balancer does not use,
    verbatim, in input order, so the writer can hand them back.
    """

    id: str
    description: str
    poles: int
    load_va: float
    spaces: tuple[int, ...] = ()
    trip_a: float | None = None
    load_class: str = ""
    power_factor: float = 1.0
    locked: bool = False
    group: str = ""
    measured_a: float | None = None
    notes: str = ""
    voltage_v: float | None = None
    continuous: bool | None = None
    neutral_va: float | None = None
    yokes: float | None = None
    source_row: int | None = None
    extra: tuple[tuple[str, Any], ...] = ()

    @property
    def is_spare(self) -> bool:
        return self.load_class == SPARE

    @property
    def placed(self) -> bool:
        return bool(self.spaces)

    @property
    def first_space(self) -> int | None:
        return self.spaces[0] if self.spaces else None

    def moved_to(self, spaces: tuple[int, ...]) -> Circuit:
        return replace(self, spaces=spaces)


@dataclass(frozen=True, slots=True)
class Panel:
    """A panelboard and its branch circuits, as read; never mutated (results are new objects)."""

    name: str
    system: System
    spaces: int
    circuits: tuple[Circuit, ...]
    bus_a: float | None = None
    main_a: float | None = None
    main_lugs_only: bool = False
    source: str = ""
    notices: tuple[str, ...] = field(default=())

    @property
    def geometry(self) -> Geometry:
        return Geometry(self.system.lines, self.spaces)

    @property
    def lines(self) -> tuple[Line, ...]:
        return self.system.lines

    def lines_of(self, circuit: Circuit) -> tuple[Line, ...]:
        """Lines a placed circuit is on, in space order; empty when unplaced."""
        return tuple(self.geometry.line_of(s) for s in circuit.spaces)

    def with_circuits(self, circuits: tuple[Circuit, ...] | list[Circuit]) -> Panel:
        return replace(self, circuits=tuple(circuits))

    def circuit(self, circuit_id: str) -> Circuit:
        for c in self.circuits:
            if c.id == circuit_id:
                return c
        raise KeyError(circuit_id)

    def occupied(self) -> dict[int, str]:
        """Space number → id of the circuit in it, for placed circuits."""
        return {s: c.id for c in self.circuits for s in c.spaces}


STANDARD_SPACE_COUNTS = (18, 24, 30, 42, 54, 60, 84)  # common practice for panelboard sizes


def smallest_space_count(poles_needed: int, highest_space: int = 0) -> int:
    """The smallest common panelboard size holding ``poles_needed`` poles and ``highest_space``."""
    need = max(poles_needed, highest_space)
    for count in STANDARD_SPACE_COUNTS:
        if count >= need:
            return count
    return need + need % 2

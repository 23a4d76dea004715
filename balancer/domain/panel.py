"""The panel as read: immutable panel and branch-circuit records, and the space geometry.

Space geometry (common practice in North American panelboards, not a code rule): odd spaces run
down the left, even down the right, and each row of two spaces sits on one line; rows take the
lines in turn (A, B, C, A, … on three-phase; A, B, A, … on single-phase 3-wire). A k-pole breaker
whose first space is n also takes n+2, …, n+2(k−1), so it spans k rows and k different lines.
All of that lives in :class:`Geometry`, so another numbering can be added in one place.
"""

from __future__ import annotations

from collections.abc import Iterator, Mapping
from dataclasses import dataclass, field, replace
from typing import Any, Literal

from balancer.domain.systems import Line, System

# Load classes balancer treats specially everywhere; the demand rules know many more.
SPARE = "spare"

Material = Literal["cu", "al"]


@dataclass(frozen=True, slots=True)
class Conductor:
    """A conductor size as a schedule writes it: size (``"12"``, ``"3/0"``, ``"250"``) and metal.

    ``text`` is the schedule's own wording (``"2#12 + #12G"``), kept for the revised workbook and
    the work order; it takes no part in comparisons. :func:`balancer.code.feeder.parse_conductor`
    makes one from text.
    """

    size: str
    material: Material
    text: str = field(default="", compare=False)

    def __str__(self) -> str:
        unit = "kcmil" if self.size in {"250", "300", "350", "400", "500"} else "AWG"
        return f"{self.size} {unit} {self.material.capitalize()}"

    @property
    def as_written(self) -> str:
        return self.text or str(self)


@dataclass(frozen=True, slots=True)
class LineReadings(Mapping[Line, float]):
    """Clamp-meter readings of one circuit, in amperes, by line (``Measured line A (A)`` …);
    a read-only mapping, empty when the schedule gives none."""

    readings: tuple[tuple[Line, float], ...] = ()

    @classmethod
    def of(cls, by_line: Mapping[Line, float]) -> LineReadings:
        return cls(tuple(sorted((line, float(a)) for line, a in by_line.items())))

    def __getitem__(self, line: Line) -> float:
        for key, amps in self.readings:
            if key == line:
                return amps
        raise KeyError(line)

    def __iter__(self) -> Iterator[Line]:
        return (line for line, _ in self.readings)

    def __len__(self) -> int:
        return len(self.readings)

    def as_dict(self) -> dict[Line, float]:
        return dict(self.readings)


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
    (design, nameplate) load of the whole circuit, as the schedule gives it: always, whatever
    load basis a run chooses. ``balance_va`` is the load a run balances and analyses on instead
    (a clamp reading under ``--basis measured`` or ``larger``, set by
    :func:`balancer.field.basis.apply_basis`), None for the design load; :attr:`basis_va` is
    the one to use for figures. ``critical`` is the ``Critical`` column's answer (the load must
    not lose power), None when blank. ``measured_a`` is the single clamp reading of the circuit,
    ``measured_line_a`` the per-line readings of a multi-pole circuit (amperes);
    ``harmonic_profile`` names a harmonic profile (checked when read), ``conductor`` the branch
    conductor. ``extra`` keeps every other input column, verbatim, in input order, so the writer
    can hand them back.
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
    measured_line_a: LineReadings = LineReadings()
    harmonic_profile: str | None = None
    conductor: Conductor | None = None
    balance_va: float | None = None
    critical: bool | None = None  # the load must not lose power; None: not said
    extra: tuple[tuple[str, Any], ...] = ()

    @property
    def basis_va(self) -> float:
        """The load figures are made on: ``balance_va`` when a load basis set one, else the
        design ``load_va``."""
        return self.load_va if self.balance_va is None else self.balance_va

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
class PanelHeader:
    """What a schedule's title block says of the panel beyond its ratings: where it is, what
    feeds it, its enclosure and buses, and the project, date and revision of the schedule.

    Text is as the schedule writes it (blank when not given); ``sccr_ka`` is the short-circuit
    current rating in kA, ``neutral_pct`` the neutral bus rating as a percentage of the phase
    bus, ``mounting`` one of surface / flush / semi-flush, ``enclosure`` a NEMA type written
    ``NEMA 3R``. ``balanced`` is what balancer writes on a revised schedule (the date it was
    balanced), kept when the revised schedule is read again.
    """

    location: str = ""
    fed_from: str = ""
    feeder: str = ""
    mounting: str = ""
    enclosure: str = ""
    sccr_ka: float | None = None
    neutral_pct: float | None = None
    ground_bus: str = ""
    isolated_ground: bool | None = None
    project: str = ""
    date: str = ""
    revision: str = ""
    balanced: str = ""

    def revision_text(self, balanced_on: str = "") -> str:
        """The revision as a title block shows it: ``"2, balanced 2026-12-02"``; the schedule's
        own revision is kept and the balancing date added, never a number made up."""
        balanced = balanced_on or self.balanced
        parts = [self.revision or "not given"]
        if balanced:
            parts.append(f"balanced {balanced}")
        return ", ".join(parts)


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
    header: PanelHeader = PanelHeader()

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

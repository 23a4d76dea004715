"""The work order: moves between two layouts of one panel as steps a person can follow, each
needing no more than the free spaces the panel has at that moment.

A circuit (or a multiwire group, which always moves as one step so its shared neutral and handle
tie stay with it) moves straight to its new spaces when they are free. When every remaining move
waits on another (a swap, a rotation), one breaker first goes to a free space out of the way; when
no free space fits, the step says a temporary space is needed (the breaker is set aside with its
circuit de-energised and re-installed later). :func:`replay` re-applies the steps to the
original layout and is run on every work order before it is returned.
"""

from __future__ import annotations

from collections.abc import Iterable
from dataclasses import dataclass
from typing import Any, Literal

from balancer.domain.panel import Circuit, Panel
from balancer.domain.result import BalanceResult
from balancer.domain.systems import Line
from balancer.field.critical import critical_reason
from balancer.physics.analysis import analyze
from balancer.report.safety import CAUTIONS, MUST_STAY_ON_CAUTION, MUST_STAY_ON_STEP

Action = Literal["install", "move", "park", "set aside", "reinstall"]

ACTION_TEXT: dict[Action, str] = {
    "install": "Install new breaker",
    "move": "Move breaker",
    "park": "Move breaker to temporary space",
    "set aside": "Remove breaker and set aside (temporary space needed)",
    "reinstall": "Re-install breaker set aside earlier",
}


@dataclass(frozen=True, slots=True)
class StepItem:
    """One breaker relocated in a step; empty spaces mean "not in the panel"."""

    circuit_id: str
    description: str
    from_spaces: tuple[int, ...]
    from_lines: tuple[Line, ...]
    to_spaces: tuple[int, ...]
    to_lines: tuple[Line, ...]
    notes: str = ""
    breaker: str = ""  # "2-pole, 40 A"
    conductor: str = ""  # a new breaker's conductor: the schedule's, else the one implied
    critical: str = ""  # why the load must not lose power; empty when it may

    @property
    def details(self) -> list[str]:
        """What a person at the panel needs beside the move: the new breaker and its wire, and
        the warning for a load that must not lose power."""
        out = []
        if not self.from_spaces and self.to_spaces:
            out.append(f"new breaker: {self.breaker}; conductor {self.conductor or 'not known'}")
        if self.critical:
            out.append(MUST_STAY_ON_STEP.format(why=self.critical))
        return out


@dataclass(frozen=True, slots=True)
class Step:
    """One thing to do at the panel; a multiwire group is one step with several items."""

    number: int
    action: Action
    items: tuple[StepItem, ...]
    group: str = ""
    remark: str = ""


@dataclass(frozen=True, slots=True)
class WorkOrder:
    """Ordered steps from one layout to another, with the figures to expect afterwards."""

    panel_name: str
    steps: tuple[Step, ...]
    expected_line_a: dict[Line, float]
    expected_neutral_a: float
    temporary_space_needed: bool
    cautions: tuple[str, ...] = CAUTIONS

    @property
    def moved_circuits(self) -> int:
        """Circuits that end in different spaces (new breakers included)."""
        final: dict[str, tuple[int, ...]] = {}
        start: dict[str, tuple[int, ...]] = {}
        for step in self.steps:
            for item in step.items:
                start.setdefault(item.circuit_id, item.from_spaces)
                final[item.circuit_id] = item.to_spaces
        return sum(1 for cid in final if final[cid] != start[cid])


@dataclass(slots=True)
class _Unit:
    members: tuple[str, ...]
    target: dict[str, tuple[int, ...]]
    group: str
    parked: int = 0


def circuit_notes(circuit: Circuit) -> str:
    """The circuit's notes, its per-line readings, harmonic profile and conductor as the schedule
    gives them, and every non-blank extra input column, as one line."""
    parts = [circuit.notes.strip()] if circuit.notes and circuit.notes.strip() else []
    parts += [
        f"Measured line {line} (A): {amps:g}" for line, amps in circuit.measured_line_a.items()
    ]
    if circuit.harmonic_profile:
        parts.append(f"Harmonics: {circuit.harmonic_profile}")
    if circuit.conductor is not None:
        parts.append(f"Wire: {circuit.conductor.as_written}")
    for header, value in circuit.extra:
        if value is None or (isinstance(value, str) and not value.strip()):
            continue
        parts.append(f"{header}: {value}")
    return "; ".join(parts)


def work_order(before: Panel, after: Panel) -> WorkOrder:
    """Steps that take ``before``'s layout to ``after``'s, one breaker (or group) at a time.

    Raises
    ------
    ValueError
        When the two panels do not hold the same circuits, or a layout double-books a space.
    """
    ids_before = [c.id for c in before.circuits]
    ids_after = {c.id for c in after.circuits}
    if set(ids_before) != ids_after:
        missing = sorted(set(ids_before) ^ ids_after)
        raise ValueError(f"the layouts hold different circuits: {', '.join(missing)}")
    if before.spaces != after.spaces:
        raise ValueError("the layouts are of panels with different space counts")
    _check_layout(before)
    _check_layout(after)
    by_id = {c.id: c for c in before.circuits}
    target = {c.id: c.spaces for c in after.circuits}
    current = {c.id: c.spaces for c in before.circuits}
    units = _units(before.circuits, target)
    steps: list[Step] = []
    temporary = False
    guard = 4 * len(units) + 8
    while units:
        guard -= 1
        if guard < 0:  # pragma: no cover - the park rules below always make progress
            raise RuntimeError("work order did not converge")
        occupied = {s: cid for cid, spaces in current.items() for s in spaces}
        # Re-install set-aside breakers first (their circuits are out) and new breakers only
        # when no existing breaker is left to move: a new breaker takes a free space for good,
        # and a swap may still need it.
        ready_units = [u for u in units if _free_for(u, u.target, occupied)]
        existing = [u for u in ready_units if _priority(u, current) < 2]
        ready = min(existing, key=lambda u: _priority(u, current), default=None)
        if ready is None and not any(_priority(u, current) < 2 for u in units) and ready_units:
            ready = ready_units[0]
        if ready is not None:
            kind: Action = "move"
            if all(not current[m] for m in ready.members):
                kind = "reinstall" if ready.parked else "install"
            steps.append(_step(len(steps) + 1, kind, ready, current, ready.target, before, by_id))
            for m in ready.members:
                current[m] = ready.target[m]
            units.remove(ready)
            continue
        unit, spot = _choose_park(units, current, occupied, before)
        unit.parked += 1
        if spot is None:
            temporary = True
            spot = {m: () for m in unit.members}
            steps.append(_step(len(steps) + 1, "set aside", unit, current, spot, before, by_id))
        else:
            steps.append(_step(len(steps) + 1, "park", unit, current, spot, before, by_id))
        for m in unit.members:
            current[m] = spot[m]
    loads = analyze(after)
    critical = [i.circuit_id for s in steps for i in s.items if i.critical]
    cautions = CAUTIONS
    if critical:
        ids = list(dict.fromkeys(critical))
        named = ("circuit " if len(ids) == 1 else "circuits ") + ", ".join(ids)
        cautions = (MUST_STAY_ON_CAUTION.format(circuits=named), *CAUTIONS)
    if after.system.high_leg:  # the electrician at the panel reads which line it is first
        cautions = (f"{after.system.label()}. {after.system.high_leg_note()}", *cautions)
    order = WorkOrder(
        panel_name=after.name,
        steps=tuple(steps),
        expected_line_a=dict(loads.line_amps),
        expected_neutral_a=loads.neutral_amps,
        temporary_space_needed=temporary,
        cautions=cautions,
    )
    final = replay(before, order)
    if final != target:  # pragma: no cover - guards the planner itself
        raise RuntimeError("work order does not reach the requested layout")
    return order


def work_order_for(result: BalanceResult) -> WorkOrder:
    """The work order of a balancing result (before panel to after panel)."""
    return work_order(result.before_panel, result.after_panel)


def replay(before: Panel, order: WorkOrder) -> dict[str, tuple[int, ...]]:
    """Apply the steps in order to ``before``'s layout and return where each circuit ends.

    Raises
    ------
    ValueError
        When a step starts from spaces the circuit is not in, lands outside the panel or on a
        space another breaker still holds.
    """
    where = {c.id: c.spaces for c in before.circuits}
    for step in order.steps:
        for item in step.items:
            if where.get(item.circuit_id) != item.from_spaces:
                raise ValueError(
                    f"step {step.number}: circuit {item.circuit_id} is not in spaces "
                    f"{_spaces_text(item.from_spaces)}"
                )
            where[item.circuit_id] = ()
        held = {s: cid for cid, spaces in where.items() for s in spaces}
        for item in step.items:
            for s in item.to_spaces:
                if not 1 <= s <= before.spaces:
                    raise ValueError(f"step {step.number}: space {s} is outside the panel")
                if s in held:
                    raise ValueError(
                        f"step {step.number}: space {s} is still held by circuit {held[s]}"
                    )
                held[s] = item.circuit_id
            where[item.circuit_id] = item.to_spaces
    return where


def work_order_lines(order: WorkOrder) -> list[str]:
    """Plain-text rendering for the terminal or a printout."""
    out = [f"Work order for panel {order.panel_name}", ""]
    out += ["CAUTION"] + [f"  - {c}" for c in order.cautions] + [""]
    if not order.steps:
        out.append("No breaker changes spaces.")
    for step in order.steps:
        head = f"Step {step.number}. {ACTION_TEXT[step.action]}"
        if step.group:
            head += f" (multiwire group {step.group}, as one)"
        out.append(head)
        for item in step.items:
            out.append(
                f"    circuit {item.circuit_id} {item.description!r}: "
                f"{_place_text(item.from_spaces, item.from_lines)} -> "
                f"{_place_text(item.to_spaces, item.to_lines)}"
            )
            for detail in item.details:
                out.append(f"      {detail}")
            if item.notes:
                out.append(f"      notes: {item.notes}")
        if step.remark:
            out.append(f"    {step.remark}")
        out.append("    done: ____")
    if order.temporary_space_needed:
        out += ["", "A temporary space is needed: at some step no free space fits the breaker."]
    out += ["", "Expected after the work (true RMS amps, at the loads balanced on):"]
    out.append(
        "  "
        + "  ".join(f"line {line} {amps:,.1f} A" for line, amps in order.expected_line_a.items())
        + f"  neutral {order.expected_neutral_a:,.1f} A"
    )
    out.append(
        "  (compare with a true-RMS clamp meter; an average-responding meter misreads "
        "currents that carry harmonics)"
    )
    return out


STEP_HEADER = (
    "Step",
    "Action",
    "Circuit",
    "Description",
    "From spaces",
    "From lines",
    "To spaces",
    "To lines",
    "Breaker",
    "Conductor (new breaker)",
    "Notes",
    "Done (initials)",
)


def work_order_rows(order: WorkOrder) -> list[list[Any]]:
    """Rows for a printable sheet: a title, the cautions, a header, one row per breaker, the
    expected figures. Spaces and lines are text ("3, 5"; "B-C"); blank for "not in the panel"."""
    rows: list[list[Any]] = [[f"Work order — panel {order.panel_name}"], []]
    rows += [["Caution", c] for c in order.cautions]
    rows += [[], list(STEP_HEADER), *step_rows(order), []]
    if order.temporary_space_needed:
        rows.append(["Note", "A temporary space is needed (see the set-aside steps)."])
    rows.append(["Expected after the work", "Current (A, true RMS)"])
    rows += [[f"Line {line}", round(a, 1)] for line, a in order.expected_line_a.items()]
    rows.append(["Neutral", round(order.expected_neutral_a, 1)])
    return rows


def step_rows(order: WorkOrder) -> list[list[Any]]:
    """One row per breaker of every step, in the columns of ``STEP_HEADER``."""
    rows: list[list[Any]] = []
    for step in order.steps:
        for item in step.items:
            critical = MUST_STAY_ON_STEP.format(why=item.critical) if item.critical else ""
            rest = "; ".join(x for x in (item.notes, step.remark) if x)
            notes = " ".join(x for x in (critical, rest) if x)
            rows.append(
                [
                    step.number,
                    ACTION_TEXT[step.action],
                    item.circuit_id,
                    item.description,
                    _spaces_text(item.from_spaces),
                    "-".join(item.from_lines),
                    _spaces_text(item.to_spaces),
                    "-".join(item.to_lines),
                    item.breaker,
                    item.conductor,
                    notes,
                    "",
                ]
            )
    return rows


def work_order_json(order: WorkOrder) -> list[dict[str, Any]]:
    """The ``"work_order"`` field of the JSON report: one object per step."""
    return [
        {
            "step": step.number,
            "action": step.action,
            "group": step.group,
            "remark": step.remark,
            "circuits": [
                {
                    "id": item.circuit_id,
                    "description": item.description,
                    "from_spaces": list(item.from_spaces),
                    "from_lines": list(item.from_lines),
                    "to_spaces": list(item.to_spaces),
                    "to_lines": list(item.to_lines),
                    "notes": item.notes,
                    "breaker": item.breaker,
                    "conductor": item.conductor or None,
                    "critical": item.critical or None,
                    "details": item.details,  # the lines printed under the step
                }
                for item in step.items
            ],
        }
        for step in order.steps
    ]


def _units(circuits: Iterable[Circuit], target: dict[str, tuple[int, ...]]) -> list[_Unit]:
    units: list[_Unit] = []
    grouped: dict[str, _Unit] = {}
    for c in circuits:
        if c.spaces == target[c.id]:
            continue
        if c.group:
            unit = grouped.get(c.group)
            if unit is None:
                unit = grouped[c.group] = _Unit((), {}, c.group)
                units.append(unit)
            unit.members += (c.id,)
            unit.target[c.id] = target[c.id]
        else:
            units.append(_Unit((c.id,), {c.id: target[c.id]}, ""))
    return units


def _priority(unit: _Unit, current: dict[str, tuple[int, ...]]) -> int:
    if any(current[m] for m in unit.members):
        return 1
    return 0 if unit.parked else 2


def _free_for(unit: _Unit, spots: dict[str, tuple[int, ...]], occupied: dict[int, str]) -> bool:
    return all(occupied.get(s, m) in unit.members for m in unit.members for s in spots[m])


def _choose_park(
    units: list[_Unit],
    current: dict[str, tuple[int, ...]],
    occupied: dict[int, str],
    panel: Panel,
) -> tuple[_Unit, dict[str, tuple[int, ...]] | None]:
    """The blocking unit to move out of the way, and where (None: no free space fits)."""
    wanted = {s for u in units for spaces in u.target.values() for s in spaces}

    def blocks_another(u: _Unit) -> bool:
        others = {s for w in units if w is not u for sp in w.target.values() for s in sp}
        return any(s in others for m in u.members for s in current[m])

    blockers = [u for u in units if blocks_another(u)]

    def unblocks(u: _Unit) -> bool:
        freed = {s: cid for s, cid in occupied.items() if cid not in u.members}
        return any(_free_for(w, w.target, freed) for w in units if w is not u)

    blockers.sort(key=lambda u: (not unblocks(u), sum(len(current[m]) for m in u.members)))
    for u in blockers:
        spot = _park_spot(u, current, occupied, wanted, panel, allow_wanted=u.parked == 0)
        if spot is not None:
            return u, spot
    return blockers[0], None


def _park_spot(
    unit: _Unit,
    current: dict[str, tuple[int, ...]],
    occupied: dict[int, str],
    wanted: set[int],
    panel: Panel,
    allow_wanted: bool,
) -> dict[str, tuple[int, ...]] | None:
    """Free spaces for the unit, keeping every member on its own lines where possible.

    Shifting a layout to the other side of the same row, or by a whole cycle of rows, keeps
    each pole on its line, so an energised circuit keeps its voltage and a multiwire group its
    distinct lines. A single breaker may also go to any legal free span as a last resort.
    """
    free = set(range(1, panel.spaces + 1)) - set(occupied)
    cycle = 2 * len(panel.lines)
    reach = panel.spaces // cycle + 1
    shifts = sorted(
        ((k, flip) for k in range(-reach, reach + 1) for flip in (False, True) if k or flip),
        key=lambda kf: (abs(kf[0]), kf[1], kf[0]),
    )
    passes = [False, True] if allow_wanted else [False]
    for use_wanted in passes:
        room = free if use_wanted else free - wanted
        for k, flip in shifts:
            spot = {m: _shift(current[m], k * cycle, flip) for m in unit.members}
            if all(spaces and set(spaces) <= room for spaces in spot.values()) and _same_lines(
                unit, current, spot, panel
            ):
                return spot
        if len(unit.members) == 1:
            (m,) = unit.members
            circuit = panel.circuit(m)
            for first in range(1, panel.spaces + 1):
                span = panel.geometry.span(first, circuit.poles)
                if set(span) <= room and _legal(panel, circuit, span):
                    return {m: span}
    return None


def _shift(spaces: tuple[int, ...], offset: int, flip: bool) -> tuple[int, ...]:
    """Spaces moved by ``offset`` spaces, and to the other side of the row when ``flip``
    (odd spaces are on the left, so the same row's other side is +1 for odd, −1 for even)."""
    return tuple(s + offset + ((1 if s % 2 == 1 else -1) if flip else 0) for s in spaces)


def _same_lines(
    unit: _Unit,
    current: dict[str, tuple[int, ...]],
    spot: dict[str, tuple[int, ...]],
    panel: Panel,
) -> bool:
    geometry = panel.geometry
    return all(
        all(1 <= s <= panel.spaces for s in spot[m])
        and [geometry.line_of(s) for s in spot[m]] == [geometry.line_of(s) for s in current[m]]
        for m in unit.members
    )


def _legal(panel: Panel, circuit: Circuit, span: tuple[int, ...]) -> bool:
    lines = [panel.geometry.line_of(s) for s in span]
    if len(set(lines)) != len(lines):
        return False
    return circuit.poles != 1 or panel.system.serves_line_to_neutral(lines[0])


def _step(
    number: int,
    action: Action,
    unit: _Unit,
    current: dict[str, tuple[int, ...]],
    to: dict[str, tuple[int, ...]],
    panel: Panel,
    by_id: dict[str, Circuit],
) -> Step:
    geometry = panel.geometry
    items = tuple(
        StepItem(
            circuit_id=m,
            description=by_id[m].description,
            from_spaces=current[m],
            from_lines=tuple(geometry.line_of(s) for s in current[m]),
            to_spaces=to[m],
            to_lines=tuple(geometry.line_of(s) for s in to[m]),
            notes=circuit_notes(by_id[m]),
            breaker=breaker_text(by_id[m]),
            conductor=conductor_text(panel, by_id[m]) if not by_id[m].placed else "",
            critical=critical_reason(by_id[m]) or "",
        )
        for m in unit.members
    )
    remarks = []
    if unit.group:
        remarks.append(mwbc_remark(unit.group, unit.members))
    if action == "park":
        remarks.append("Temporary position: this breaker moves again in a later step.")
    if action == "set aside":
        remarks.append(
            "No free space fits this breaker now: keep its circuit de-energised until it is "
            "re-installed in a later step."
        )
    return Step(number, action, items, unit.group, " ".join(remarks))


def mwbc_remark(group: str, members: Iterable[str]) -> str:
    """The step remark of a multiwire branch circuit: which circuits, and the handle tie."""
    return (
        f"Multiwire branch circuit {group} (circuits {', '.join(members)}, one shared neutral): "
        "move them together with their neutral, keep them on different lines, and handle-tie "
        "them or use one multipole breaker so they open together (common trip or handle ties, "
        "NEC 210.4(B))."
    )


def breaker_text(circuit: Circuit) -> str:
    """``"2-pole, 40 A"``; the rating "not given" when the schedule has none."""
    rating = f"{circuit.trip_a:g} A" if circuit.trip_a else "rating not given"
    return f"{circuit.poles}-pole, {rating}"


def conductor_text(panel: Panel, circuit: Circuit) -> str:
    """A circuit's conductor as the schedule gives it, else the size the branch-circuit check
    implies for its design load and breaker (said so), else empty."""
    from dataclasses import replace

    from balancer.code.demand import branch_conductor

    if circuit.conductor is not None:
        written = circuit.conductor.as_written
        same = written == str(circuit.conductor)
        return f"{circuit.conductor} (from the schedule" + ("" if same else f": {written}") + ")"
    implied = branch_conductor(panel, replace(circuit, balance_va=None))
    return implied.text if implied is not None else ""


def _check_layout(panel: Panel) -> None:
    seen: dict[int, str] = {}
    for c in panel.circuits:
        for s in c.spaces:
            if s in seen:
                raise ValueError(f"space {s} holds both {seen[s]} and {c.id}")
            if not 1 <= s <= panel.spaces:
                raise ValueError(f"circuit {c.id} is in space {s}, outside the panel")
            seen[s] = c.id


def _spaces_text(spaces: tuple[int, ...]) -> str:
    return ", ".join(str(s) for s in spaces)


def _place_text(spaces: tuple[int, ...], lines: tuple[Line, ...]) -> str:
    if not spaces:
        return "(not in the panel)"
    return f"space {_spaces_text(spaces)} (line {'-'.join(lines)})"

"""Independent check of an arrangement against the panelboard's rules and the solver's claim.

Nothing here trusts the model: spaces, spans, locks, multiwire groups and the high leg are checked
from the circuits themselves, and phase sums are recomputed with
:func:`balancer.physics.analysis.analyze`.
"""

from __future__ import annotations

from collections.abc import Mapping

from balancer.domain.panel import Circuit, Panel
from balancer.domain.result import BalanceOptions, Move
from balancer.domain.systems import Line
from balancer.errors import SolverError
from balancer.physics.analysis import Loads, analyze

PHASE_ATOL_VA = 1e-6  # relative to the total load, for comparing phase sums


def problems(before: Panel, after: Panel, options: BalanceOptions) -> list[str]:
    """Every rule the arrangement ``after`` breaks; empty when it is legal."""
    if [c.id for c in before.circuits] != [c.id for c in after.circuits]:
        return ["the circuits differ from the schedule's"]
    found: list[str] = []
    holder: dict[int, str] = {}
    for old, new in zip(before.circuits, after.circuits, strict=True):
        found += _circuit_problems(after, old, new, options, holder)
    return found + _group_problems(after)


def _circuit_problems(
    after: Panel, old: Circuit, new: Circuit, options: BalanceOptions, holder: dict[int, str]
) -> list[str]:
    """What one circuit breaks where it now sits; ``holder`` records whose each space is."""
    geometry = after.geometry
    system = after.system
    if not new.spaces:
        return [f"circuit {new.id} is not placed"]
    found: list[str] = []
    first = new.spaces[0]
    if not geometry.fits(first, new.poles) or tuple(new.spaces) != geometry.span(first, new.poles):
        found.append(f"circuit {new.id}: spaces {list(new.spaces)} are not a legal span")
    for s in new.spaces:
        if s in holder:
            found.append(f"space {s} holds both {holder[s]} and {new.id}")
        holder[s] = new.id
    lines = after.lines_of(new)
    if len(set(lines)) != len(lines):
        found.append(f"circuit {new.id} has two poles on one line")
    if new.poles == 1 and not system.serves_line_to_neutral(lines[0]):
        found.append(f"circuit {new.id} is a line-to-neutral load on line {lines[0]}")
    if new.poles > system.max_poles:
        found.append(f"circuit {new.id} has more poles than the system has lines")
    if old.locked and old.spaces != new.spaces:
        found.append(f"locked circuit {new.id} moved")
    if old.is_spare and old.placed and not options.move_spares and old.spaces != new.spaces:
        found.append(f"spare {new.id} moved")
    return found


def _group_problems(after: Panel) -> list[str]:
    """Multiwire groups whose conductors share a line or are not on adjacent spaces."""
    found: list[str] = []
    groups: dict[str, list[int]] = {}
    for c in after.circuits:
        if c.group:
            groups.setdefault(c.group, []).extend(c.spaces)
    for name, spaces in groups.items():
        ordered = sorted(spaces)
        group_lines = [after.geometry.line_of(s) for s in ordered]
        if len(set(group_lines)) != len(group_lines):
            found.append(f"multiwire group {name!r} has two conductors on one line")
        if ordered and ordered != list(range(ordered[0], ordered[0] + 2 * len(ordered), 2)):
            found.append(f"multiwire group {name!r} is not on adjacent spaces of one side")
    return found


def verify(
    before: Panel,
    after: Panel,
    options: BalanceOptions,
    claimed_phase_va: Mapping[Line, float] | None = None,
) -> Loads:
    """Raise SolverError unless ``after`` is legal and matches the claim; return its figures."""
    found = problems(before, after, options)
    loads = analyze(after)
    if claimed_phase_va is not None:
        scale = max(1.0, loads.total_va)
        for line, va in claimed_phase_va.items():
            if abs(loads.phase_va[line] - va) > PHASE_ATOL_VA * scale:
                found.append(
                    f"line {line}: the solver claimed {va:.3f} VA, the schedule sums to "
                    f"{loads.phase_va[line]:.3f} VA"
                )
    if found:
        raise SolverError("the optimiser's arrangement failed its check: " + "; ".join(found))
    return loads


def moves_between(before: Panel, after: Panel) -> tuple[Move, ...]:
    """Every placed circuit whose spaces changed, with its spaces and lines before and after."""
    return tuple(
        Move(
            old.id,
            old.description,
            old.spaces,
            new.spaces,
            before.lines_of(old),
            after.lines_of(new),
        )
        for old, new in zip(before.circuits, after.circuits, strict=True)
        if old.placed and old.spaces != new.spaces
    )

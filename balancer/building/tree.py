"""Whole buildings: panels feeding panels (directly or through transformers), the roll-up of
every subpanel's per-line loads onto its feeder circuit upstream, and balancing of the tree.

A building is a set of panels and feeds. A feed names the fed panel, the panel it is fed from
and the feeder circuit there (its first space number, as the schedule gives it), and optionally
a transformer between them. Loads are on the connected basis.

Roll-up rules
-------------
* A three-phase subpanel fed directly keeps its phases: its line A load is on line A upstream.
* A single-phase 3-wire subpanel lands on the two lines of its 2-pole feeder breaker: its line
  A on the breaker's first line (in space order) and B on the second, or the other way round
  when the feed is ``swapped`` (which conductor lands on which pole is free at the terminals).
* Through a transformer the secondary's winding loads appear on the primary lines as
  :mod:`balancer.physics.transformer` describes.
"""

from __future__ import annotations

import cmath
import math
from collections.abc import Callable, Iterable, Mapping, Sequence
from dataclasses import dataclass, field, replace
from typing import TYPE_CHECKING

from balancer.domain.panel import Circuit, Panel
from balancer.domain.result import BalanceOptions, BalanceResult, SolveStatus
from balancer.domain.systems import Line, System
from balancer.errors import Problem, ScheduleError, SolverError
from balancer.physics.analysis import share_by_line, spread_and_imbalance
from balancer.physics.phasors import circuit_line_currents
from balancer.physics.transformer import (
    Transformer,
    loading_pct,
    loading_terms,
    primary_line_currents,
    primary_phase_va,
    winding_primary_lines,
)

if TYPE_CHECKING:
    from balancer.code.demand import DemandOptions

VOLTAGE_RTOL = 0.02  # nominal voltages closer than 2 % are taken as the same system
MAX_LEVELS = 20  # a service, then panels fed from panels: real buildings have well under ten
ANGLE_TOL_DEG = 1.0


@dataclass(frozen=True, slots=True)
class Feed:
    """``panel`` is fed from circuit ``circuit_id`` of panel ``source``."""

    panel: str
    source: str
    circuit_id: str
    transformer: Transformer | None = None
    swapped: bool = False
    where: str = ""  # place of the feed in the building index, for messages


@dataclass(frozen=True, slots=True)
class Building:
    """Panels and the feeds between them; validated by :func:`make_building`."""

    name: str
    panels: tuple[Panel, ...]
    feeds: tuple[Feed, ...]

    def panel(self, name: str) -> Panel:
        for p in self.panels:
            if p.name == name:
                return p
        raise KeyError(name)

    def feed_of(self, name: str) -> Feed | None:
        """The feed supplying panel ``name``; None for a service (a root of the tree)."""
        return next((f for f in self.feeds if f.panel == name), None)

    def fed_from(self, name: str) -> list[Feed]:
        """Feeds leaving panel ``name``."""
        return [f for f in self.feeds if f.source == name]

    def services(self) -> list[str]:
        fed = {f.panel for f in self.feeds}
        return [p.name for p in self.panels if p.name not in fed]

    def order(self) -> list[str]:
        """Panel names with every subpanel before the panel feeding it."""
        children: dict[str, list[str]] = {}
        for feed in self.feeds:
            children.setdefault(feed.source, []).append(feed.panel)
        out: list[str] = []
        # depth first, subpanels in feed order, without recursion: a deep tree is no limit here
        stack = [(root, False) for root in reversed(self.services())]
        while stack:
            name, expanded = stack.pop()
            if expanded:
                out.append(name)
                continue
            stack.append((name, True))
            stack += [(child, False) for child in reversed(children.get(name, []))]
        return out

    def feeder_circuit(self, feed: Feed) -> Circuit:
        return self.panel(feed.source).circuit(feed.circuit_id)

    def feeder_number(self, feed: Feed) -> str:
        """The feeder breaker's circuit number in this building's layout: its first space.

        ``feed.circuit_id`` is the breaker's identity, the number it had when read; after
        balancing the breaker may sit in other spaces, and the revised schedule numbers it by
        them. Every output names a feeder through this (or :meth:`feeder_text`), so one
        feeder never carries two numbers.
        """
        circuit = self.feeder_circuit(feed)
        return str(circuit.first_space) if circuit.placed else circuit.id

    def feeder_text(self, feed: Feed, was: Building | None = None) -> str:
        """``"MDP circuit 9"``; with ``was`` (the building as found), ``"MDP circuit 9 (was
        7)"`` when the breaker moved."""
        number = self.feeder_number(feed)
        text = f"{feed.source} circuit {number}"
        if was is not None:
            old = was.feeder_number(feed)
            if old != number:
                text += f" (was {old})"
        return text

    def with_panels(self, panels: Iterable[Panel], feeds: Iterable[Feed] | None = None) -> Building:
        return replace(
            self, panels=tuple(panels), feeds=tuple(self.feeds if feeds is None else feeds)
        )


# ---------------------------------------------------------------- validation


def _same_voltage(first: float, second: float) -> bool:
    return math.isclose(first, second, rel_tol=VOLTAGE_RTOL)


def _angle_between(first: complex, second: complex) -> float:
    """Angle from ``second`` to ``first`` in degrees, in (−180, 180]."""
    return math.degrees(cmath.phase(first / second)) if first and second else 0.0


def direct_line_map(
    child: System, parent: System, feeder_lines: Sequence[Line], swapped: bool
) -> dict[Line, Line]:
    """Subpanel line → upstream line for a feed without a transformer."""
    if child.phase_count == 3:
        return {line: line for line in child.lines}
    first, second = feeder_lines if not swapped else tuple(reversed(feeder_lines))
    return {child.lines[0]: first, child.lines[1]: second}


def _direct_fits(child: System, parent: System, mapping: Mapping[Line, Line]) -> str:
    """Why the subpanel's voltages do not match the upstream lines it lands on ('' when they do)."""
    if child.neutral and not all(parent.serves_line_to_neutral(u) for u in mapping.values()):
        return (
            "the subpanel has a neutral but the upstream lines do not serve line-to-neutral loads"
        )
    for k, u in mapping.items():
        if not _same_voltage(
            child.line_to_neutral_v[child.lines.index(k)], abs(parent.voltage_phasor(u))
        ):
            own = child.line_to_neutral_v[child.lines.index(k)]
            return (
                f"line {k} of the subpanel is {own:g} V to neutral, "
                f"upstream line {u} is {abs(parent.voltage_phasor(u)):g} V"
            )
    pairs = list(mapping.items())
    (k0, u0) = pairs[0]
    for k, u in pairs[1:]:
        child_angle = _angle_between(child.voltage_phasor(k), child.voltage_phasor(k0))
        parent_angle = _angle_between(parent.voltage_phasor(u), parent.voltage_phasor(u0))
        if abs((child_angle - parent_angle + 180) % 360 - 180) > ANGLE_TOL_DEG:
            return f"the subpanel's {k0}-{k} voltage does not match the upstream {u0}-{u} voltage"
    if not _same_voltage(
        child.line_to_line_v, abs(parent.voltage_between(*list(mapping.values())[:2]))
    ):
        return (
            f"the subpanel is {child.line_to_line_v:g} V line to line, "
            f"the upstream lines {parent.line_to_line_v:g} V"
        )
    return ""


def _feed_problems(building: Building, feed: Feed) -> list[Problem]:
    parent = building.panel(feed.source)
    child = building.panel(feed.panel)
    circuit = parent.circuit(feed.circuit_id)
    where = feed.where
    label = f"feeder {feed.source} circuit {feed.circuit_id} → {feed.panel}"
    t = feed.transformer
    if t is not None:
        if circuit.poles not in t.primary_poles():
            wanted = " or ".join(str(p) for p in t.primary_poles())
            return [
                Problem(
                    where,
                    f"{label}: a {circuit.poles}-pole breaker cannot feed a {t.connection} "
                    f"transformer (needs {wanted} poles)",
                )
            ]
        if t.primary != parent.system or t.secondary != child.system:
            return [
                Problem(
                    where,
                    f"{label}: transformer {t.name} is {t.primary.designation} → "
                    f"{t.secondary.designation}, the panels are {parent.system.designation} → "
                    f"{child.system.designation}",
                )
            ]
        if (
            circuit.poles == 1
            and circuit.placed
            and not parent.system.serves_line_to_neutral(parent.lines_of(circuit)[0])
        ):
            return [
                Problem(
                    where,
                    f"{label}: a 1-pole feeder needs a line that serves line-to-neutral loads",
                )
            ]
        return []
    needed = 3 if child.system.phase_count == 3 else 2
    if circuit.poles != needed:
        return [
            Problem(
                where,
                f"{label}: a {circuit.poles}-pole breaker cannot feed panel {child.name} "
                f"({child.system.label()}; needs {needed} poles)",
            )
        ]
    if needed == 3 and child.system.designation != parent.system.designation:
        reason = _direct_fits(
            child.system, parent.system, direct_line_map(child.system, parent.system, (), False)
        )
        if reason:
            return [
                Problem(
                    where,
                    f"{label}: {parent.system.designation} cannot feed {child.system.designation} "
                    f"without a transformer ({reason})",
                )
            ]
        return []
    if needed == 2:
        pairs = [parent.geometry.lines_of(s, 2) for s in (1, 3, 5)[: len(parent.lines)]]
        if circuit.placed:
            pairs = [parent.lines_of(circuit)]
        reasons = [
            _direct_fits(
                child.system, parent.system, direct_line_map(child.system, parent.system, p, False)
            )
            for p in pairs
        ]
        if all(reasons):
            return [
                Problem(
                    where,
                    f"{label}: {parent.system.designation} cannot feed {child.system.designation} "
                    f"there without a transformer ({reasons[0]})",
                )
            ]
    return []


def make_building(name: str, panels: Sequence[Panel], feeds: Sequence[Feed]) -> Building:
    """A validated building. Every problem is reported at once.

    Raises
    ------
    ScheduleError
        For a panel named twice, a feed naming a panel or circuit that is not there, a panel fed
        twice, a loop in the tree, or a feeder breaker that does not suit the panel it feeds.
    """
    problems: list[Problem] = []
    names = [p.name for p in panels]
    for n in sorted({n for n in names if names.count(n) > 1}):
        problems.append(Problem("", f"panel '{n}' appears more than once"))
    known = set(names)
    by_name = {p.name: p for p in panels}
    fed: dict[str, Feed] = {}
    used: dict[tuple[str, str], str] = {}
    good: list[Feed] = []
    for feed in feeds:
        missing = [n for n in (feed.panel, feed.source) if n not in known]
        if missing:
            for n in missing:
                problems.append(
                    Problem(
                        feed.where,
                        f"panel '{n}' is named in the building but no schedule for it was found",
                    )
                )
            continue
        if feed.panel == feed.source:
            problems.append(Problem(feed.where, f"panel '{feed.panel}' is fed from itself"))
            continue
        if feed.panel in fed:
            problems.append(
                Problem(
                    feed.where,
                    f"panel '{feed.panel}' is fed twice (also from {fed[feed.panel].source})",
                )
            )
            continue
        try:
            by_name[feed.source].circuit(feed.circuit_id)
        except KeyError:
            ids = ", ".join(c.id for c in by_name[feed.source].circuits[:12])
            problems.append(
                Problem(
                    feed.where,
                    f"panel '{feed.source}' has no circuit '{feed.circuit_id}' to feed "
                    f"'{feed.panel}' (circuits are named by first space: {ids}, …)",
                )
            )
            continue
        key = (feed.source, feed.circuit_id)
        if key in used:
            problems.append(
                Problem(
                    feed.where,
                    f"circuit {feed.circuit_id} of '{feed.source}' already feeds '{used[key]}'",
                )
            )
            continue
        used[key] = feed.panel
        fed[feed.panel] = feed
        good.append(feed)
    problems += _loop_problems(fed) + _depth_problems(fed)
    building = Building(name, tuple(panels), tuple(good))
    if not problems:
        for feed in good:
            problems += _feed_problems(building, feed)
    if problems:
        raise ScheduleError(problems, name)
    return building


def deepest(source_of: Mapping[str, str]) -> tuple[str, int]:
    """The panel farthest from its service and its level (a service is level 1), from each
    fed panel's source; a loop counts as a service where it closes (loops are reported apart).
    Walked without recursion, each panel once."""
    level: dict[str, int] = {}
    far = ("", 0)
    for start in source_of:
        chain, on_chain = [], set()
        at = start
        while at in source_of and at not in level and at not in on_chain:
            chain.append(at)
            on_chain.add(at)
            at = source_of[at]
        below = level.get(at, 0 if at in on_chain else 1)
        for name in reversed(chain):
            below += 1
            level[name] = below
            far = max(far, (name, below), key=lambda x: x[1])
    return far


def _depth_problems(fed: Mapping[str, Feed]) -> list[Problem]:
    name, level = deepest({panel: feed.source for panel, feed in fed.items()})
    if level <= MAX_LEVELS:
        return []
    return [
        Problem(
            fed[name].where,
            f"panel '{name}' is {level:,} levels down from its service; balancer takes "
            f"buildings of at most {MAX_LEVELS} levels",
        )
    ]


def _loop_problems(fed: Mapping[str, Feed]) -> list[Problem]:
    problems: list[Problem] = []
    reported: set[str] = set()
    for start in fed:
        path, on_path = [start], {start}
        while path[-1] in fed and fed[path[-1]].source not in on_path:
            path.append(fed[path[-1]].source)
            on_path.add(path[-1])
        if path[-1] in fed:  # stopped because the next source is already on the path
            loop_start = path.index(fed[path[-1]].source)
            loop = path[loop_start:]
            if not reported.intersection(loop):
                reported.update(loop)
                chain = " → ".join([*reversed(loop), loop[-1]])
                problems.append(
                    Problem(
                        fed[loop[0]].where,
                        f"the feeds form a loop: {chain} (each panel must be fed from exactly "
                        "one panel nearer the service)",
                    )
                )
    return problems


# ---------------------------------------------------------------- roll-up


@dataclass(frozen=True, slots=True)
class PanelFigures:
    """A panel's loads with every subpanel rolled up, connected basis.

    ``phase_va`` follows the schedule convention of :func:`balancer.physics.analysis.share_by_line`;
    ``branch_va`` is the panel's own branch circuits (feeders excluded) and ``tree_branch_va``
    that plus every panel below it, so ``sum(phase_va) == tree_branch_va``.
    """

    name: str
    phase_va: dict[Line, float]
    branch_va: float
    tree_branch_va: float
    line_current: dict[Line, complex]
    neutral_a: float
    unplaced: tuple[str, ...] = ()
    # the part of phase_va that is line-to-neutral load (1-pole circuits, whole), per line
    neutral_side_va: dict[Line, float] = field(default_factory=dict)

    @property
    def total_va(self) -> float:
        return math.fsum(self.phase_va.values())

    @property
    def spread_va(self) -> float:
        return spread_and_imbalance(self.phase_va)[0]

    @property
    def imbalance_pct(self) -> float:
        return spread_and_imbalance(self.phase_va)[1]

    @property
    def line_a(self) -> dict[Line, float]:
        return {line: abs(i) for line, i in self.line_current.items()}


@dataclass(frozen=True, slots=True)
class FeederFigures:
    """What a subpanel puts on its feeder circuit, on the upstream panel's lines."""

    panel: str
    source: str
    circuit_id: str
    lines: tuple[Line, ...]
    phase_va: dict[Line, float]
    line_current: dict[Line, complex]
    transformer_loading_pct: float | None = None
    neutral_side_va: dict[Line, float] = field(default_factory=dict)  # upstream, per line

    @property
    def line_a(self) -> dict[Line, float]:
        return {line: abs(self.line_current[line]) for line in self.lines}


@dataclass(frozen=True, slots=True)
class RollUp:
    panels: dict[str, PanelFigures]
    feeders: dict[str, FeederFigures]  # keyed by the fed panel's name


def _move_currents(
    child: System, parent: System, currents: Mapping[Line, complex], mapping: Mapping[Line, Line]
) -> dict[Line, complex]:
    """Carry currents up a feed without a transformer: same conductors, the parent's frame."""
    out = dict.fromkeys(parent.lines, 0j)
    for k, u in mapping.items():
        power = child.voltage_phasor(k) * currents[k].conjugate()
        out[u] += (power / parent.voltage_phasor(u)).conjugate()
    return out


def feeder_figures(building: Building, feed: Feed, child: PanelFigures) -> FeederFigures:
    """The fed panel's rolled-up loads as its feeder circuit's load upstream."""
    parent = building.panel(feed.source)
    circuit = parent.circuit(feed.circuit_id)
    lines = parent.lines_of(circuit)
    child_system = building.panel(feed.panel).system
    t = feed.transformer
    if not lines:
        zero = dict.fromkeys(parent.lines, 0.0)
        return FeederFigures(
            feed.panel,
            feed.source,
            feed.circuit_id,
            (),
            zero,
            dict.fromkeys(parent.lines, 0j),
            loading_pct(t, child.line_current) if t else None,
        )
    if t is not None:
        va = primary_phase_va(t, child.phase_va, lines, child.line_current, child.neutral_side_va)
        current = primary_line_currents(t, child.line_current, lines)
        # primary windings from a line to neutral carry line-to-neutral load upstream
        to_neutral = all(len(winding_primary_lines(w, lines)) == 1 for w in t.windings)
        return FeederFigures(
            feed.panel,
            feed.source,
            feed.circuit_id,
            lines,
            va,
            current,
            loading_pct(t, child.line_current),
            dict(va) if to_neutral else dict.fromkeys(parent.lines, 0.0),
        )
    mapping = direct_line_map(child_system, parent.system, lines, feed.swapped)
    va = dict.fromkeys(parent.lines, 0.0)
    neutral_side = dict.fromkeys(parent.lines, 0.0)
    for k, u in mapping.items():
        va[u] += child.phase_va[k]
        neutral_side[u] += child.neutral_side_va.get(k, 0.0)
    current = _move_currents(child_system, parent.system, child.line_current, mapping)
    return FeederFigures(
        feed.panel, feed.source, feed.circuit_id, lines, va, current, None, neutral_side
    )


def roll_up(building: Building) -> RollUp:
    """Figures for every panel and feeder, subpanels first."""
    panels: dict[str, PanelFigures] = {}
    feeders: dict[str, FeederFigures] = {}
    for name in building.order():
        panel = building.panel(name)
        outgoing = {f.circuit_id: f for f in building.fed_from(name)}
        phase_va = dict.fromkeys(panel.lines, 0.0)
        neutral_side = dict.fromkeys(panel.lines, 0.0)
        current = dict.fromkeys(panel.lines, 0j)
        branch_parts: list[float] = []
        below: list[float] = []
        unplaced: list[str] = []
        for circuit in panel.circuits:
            if circuit.id in outgoing:
                feed = outgoing[circuit.id]
                figures = feeder_figures(building, feed, panels[feed.panel])
                feeders[feed.panel] = figures
                below.append(panels[feed.panel].tree_branch_va)
                if not figures.lines:
                    unplaced.append(circuit.id)
                parts_va, parts_i = figures.phase_va, figures.line_current
                for line, va in figures.neutral_side_va.items():
                    neutral_side[line] += va
            else:
                branch_parts.append(circuit.load_va)
                lines = panel.lines_of(circuit)
                if not lines:
                    if circuit.load_va:
                        unplaced.append(circuit.id)
                    continue
                parts_va = share_by_line(panel, circuit)
                parts_i = circuit_line_currents(
                    panel.system, lines, circuit.load_va, circuit.power_factor
                )
                if len(lines) == 1:  # a 1-pole load is line to neutral (circuit_line_currents)
                    neutral_side[lines[0]] += circuit.load_va
            for line, va in parts_va.items():
                phase_va[line] += va
            for line, i in parts_i.items():
                current[line] += i
        neutral = abs(sum(current.values())) if panel.system.neutral else 0.0
        branch_va = math.fsum(branch_parts)
        panels[name] = PanelFigures(
            name,
            phase_va,
            branch_va,
            math.fsum([branch_va, *below]),
            current,
            neutral,
            tuple(unplaced),
            neutral_side,
        )
    return RollUp(panels, feeders)


def subtree(building: Building, name: str) -> list[str]:
    """``name`` and every panel fed from it, directly or further down."""
    out = [name]
    for n in out:
        out += [f.panel for f in building.fed_from(n)]
    return out


def demand_roll_up(building: Building, options: DemandOptions | None = None) -> RollUp:
    """Per-line demand loads of every panel, its whole subtree's loads taken together.

    A feeder's demand is worked out on all the loads it serves (the class factors of the rule
    set apply to the combined class totals, so demand is not the sum of the subpanels' demand
    loads). For each panel: every branch circuit of its subtree is given to
    :func:`balancer.code.demand.compute_demand` on one list, each circuit's demand VA replaces its
    connected VA, and that is rolled up through the tree as the connected loads are.
    """
    from balancer.code.demand import compute_demand

    figures: dict[str, PanelFigures] = {}
    feeders: dict[str, FeederFigures] = {}
    for name in building.order():
        names = subtree(building, name)
        feeding = {(f.source, f.circuit_id) for f in building.feeds}
        tagged = [
            (n, c) for n in names for c in building.panel(n).circuits if (n, c.id) not in feeding
        ]
        top = building.panel(name)
        listed = [
            replace(c, id=f"{n}/{c.id}", spaces=(), group="", poles=min(c.poles, len(top.lines)))
            for n, c in tagged
        ]
        combined = replace(top, circuits=tuple(listed), spaces=max(top.spaces, 2 * len(listed)))
        result = compute_demand(combined, options)
        demand_of = {d.circuit_id: d.demand_va for d in result.circuits}  # adder included
        panels = []
        for n in names:
            panel = building.panel(n)
            panels.append(
                panel.with_circuits(
                    [
                        c
                        if (n, c.id) in feeding
                        else replace(c, load_va=demand_of.get(f"{n}/{c.id}", c.load_va))
                        for c in panel.circuits
                    ]
                )
            )
        part = Building(
            building.name,
            tuple(panels),
            tuple(f for f in building.feeds if f.panel in names and f.source in names),
        )
        rolled = roll_up(part)
        figures[name] = rolled.panels[name]
        for f in building.fed_from(name):
            feeders[f.panel] = rolled.feeders[f.panel]
    return RollUp(figures, feeders)


# ---------------------------------------------------------------- whole-tree balancing

BalanceFunction = Callable[[Panel, BalanceOptions], BalanceResult]
_MEMBER = "~"  # separates a feeder id from the subpanel line its stand-in circuit carries
_VIRTUAL = "~fixed"


@dataclass(frozen=True, slots=True)
class PanelOutcome:
    """How the balancing of one panel went."""

    name: str
    status: SolveStatus
    exact: bool  # the optimiser saw the rolled-up subpanel loads exactly as they land
    moves: tuple[str, ...]  # ids of circuits whose breaker changed spaces
    swapped_feeds: tuple[str, ...]  # single-phase subpanels whose conductors change poles
    solve_seconds: float
    gap_va: float
    view_spread_va: float  # the spread the optimiser reached on the panel as it saw it
    goal_proven: bool  # the first goal is proven best within its tolerance (moves may not be)
    notes: tuple[str, ...] = ()
    first_goal: str = "spread"  # "transformer": the feeding transformer's heaviest winding


@dataclass(frozen=True, slots=True)
class BuildingResult:
    before: Building
    after: Building
    before_figures: RollUp
    after_figures: RollUp
    outcomes: dict[str, PanelOutcome] = field(default_factory=dict)

    @property
    def all_proven(self) -> bool:
        return all(o.status is not SolveStatus.FEASIBLE for o in self.outcomes.values())


@dataclass(frozen=True, slots=True)
class _View:
    """The panel as handed to the optimiser, with what is needed to map the answer back."""

    panel: Panel
    members: dict[str, tuple[str, Line]]  # stand-in id → (feeder id, subpanel line)
    exact: bool


def _optimiser_view(building: Building, name: str, figures: RollUp) -> _View:
    """The panel with each feeder circuit replaced by what the optimiser can place exactly.

    * a feeder whose per-line load does not depend on where its breaker sits (3-pole feeders,
      by name or through a three-phase transformer) keeps its breaker with a load of 3 × its
      lightest line; the rest is fixed per line and carried by locked stand-ins in virtual
      spaces beyond the panel's last space (one row per line), so the spread seen is the real one;
    * a single-phase subpanel on a 2-pole breaker becomes two 1-pole stand-ins, one per
      subpanel line, tied as a multiwire group: the group rule (different lines, adjacent spaces
      of one side) is exactly the span of a 2-pole breaker, and either order is allowed;
    * a single-phase transformer loads its two primary lines equally, like any 2-pole load.
    """
    panel = building.panel(name)
    lines = panel.lines
    outgoing = {f.circuit_id: f for f in building.fed_from(name)}
    fixed = dict.fromkeys(lines, 0.0)
    members: dict[str, tuple[str, Line]] = {}
    circuits: list[Circuit] = []
    exact = True
    for circuit in panel.circuits:
        feed = outgoing.get(circuit.id)
        if feed is None:
            circuits.append(circuit)
            continue
        child = figures.panels[feed.panel]
        child_system = building.panel(feed.panel).system
        if feed.transformer is None and child_system.phase_count == 1:
            order = list(child_system.lines)
            if feed.swapped:
                order.reverse()
            for index, k in enumerate(order):
                member_id = f"{circuit.id}{_MEMBER}{k}"
                members[member_id] = (circuit.id, k)
                member_spaces = (circuit.spaces[index],) if circuit.placed else ()
                circuits.append(
                    replace(
                        circuit,
                        id=member_id,
                        poles=1,
                        load_va=child.phase_va[k],
                        spaces=member_spaces,
                        group=f"{_MEMBER}{circuit.id}",
                        power_factor=1.0,
                    )
                )
            continue
        if circuit.poles == 3:
            contribution = (
                feeder_figures(building, feed, child).phase_va
                if circuit.placed
                else _placed_anywhere(building, feed, child)
            )
            floor = min(contribution.values())
            for line in lines:
                fixed[line] += contribution[line] - floor
            circuits.append(replace(circuit, load_va=3 * floor))
            continue
        circuits.append(replace(circuit, load_va=child.tree_branch_va))
    spaces = panel.spaces
    if any(v > 0 for v in fixed.values()):
        if not all(panel.system.serves_line_to_neutral(line) for line, v in fixed.items() if v > 0):
            # no line-to-neutral stand-in can sit on this line: fold the fixed part back into
            # the feeders as an even load and say the figure the optimiser saw is approximate
            exact = False
            circuits = [_spread_back(c, outgoing, building, figures) for c in circuits]
        else:
            spaces, virtual = _virtual_spaces(panel, fixed)
            circuits += virtual
    return _View(replace(panel, spaces=spaces, circuits=tuple(circuits)), members, exact)


def _placed_anywhere(building: Building, feed: Feed, child: PanelFigures) -> dict[Line, float]:
    parent = building.panel(feed.source)
    lines = parent.geometry.lines_of(1, 3)
    t = feed.transformer
    if t is not None:
        return primary_phase_va(t, child.phase_va, lines, child.line_current, child.neutral_side_va)
    return {line: child.phase_va.get(line, 0.0) for line in parent.lines}


def _spread_back(
    circuit: Circuit, outgoing: Mapping[str, Feed], building: Building, figures: RollUp
) -> Circuit:
    feed = outgoing.get(circuit.id)
    if feed is None or circuit.poles != 3:
        return circuit
    return replace(circuit, load_va=figures.panels[feed.panel].tree_branch_va)


def _virtual_spaces(panel: Panel, fixed: Mapping[Line, float]) -> tuple[int, list[Circuit]]:
    """Locked stand-ins carrying ``fixed`` VA per line in spaces past the last one, every new
    space filled so nothing can be moved there."""
    first = panel.spaces + 1
    count = 2 * len(panel.lines) + 2
    geometry = replace(panel.geometry, spaces=panel.spaces + count)
    out: list[Circuit] = []
    pending = {line: va for line, va in fixed.items() if va > 0}
    for space in range(first, first + count):
        line = geometry.line_of(space)
        load = pending.pop(line, 0.0)
        out.append(
            Circuit(
                id=f"{_VIRTUAL}{space}",
                description="fixed part of subpanel loads",
                poles=1,
                load_va=load,
                spaces=(space,),
                locked=True,
            )
        )
    assert not pending
    return panel.spaces + count, out


def _map_back(original: Panel, view: _View, arranged: Panel) -> tuple[Panel, dict[str, bool]]:
    """The real panel in the optimiser's arrangement, and the line order of 1-phase feeders."""
    spaces_of = {c.id: c.spaces for c in arranged.circuits}
    swapped: dict[str, bool] = {}
    member_spaces: dict[str, dict[Line, tuple[int, ...]]] = {}
    for member_id, (feeder_id, k) in view.members.items():
        member_spaces.setdefault(feeder_id, {})[k] = spaces_of[member_id]
    circuits = []
    for circuit in original.circuits:
        if circuit.id in member_spaces:
            by_line = member_spaces[circuit.id]
            first_line = min(by_line, key=lambda k: by_line[k])
            spaces = tuple(sorted(s for v in by_line.values() for s in v))
            if spaces and spaces != original.geometry.span(spaces[0], len(spaces)):
                raise SolverError(
                    f"panel {original.name}: the stand-ins for feeder {circuit.id} came back in "
                    f"spaces {spaces}, which no {len(spaces)}-pole breaker spans"
                )
            swapped[circuit.id] = first_line != sorted(by_line)[0]
            circuits.append(circuit.moved_to(spaces))
        else:
            circuits.append(circuit.moved_to(spaces_of[circuit.id]))
    taken = [s for c in circuits for s in c.spaces]
    if len(taken) != len(set(taken)) or any(s > original.spaces for s in taken):
        raise SolverError(
            f"panel {original.name}: the arrangement returned double-books a space or uses one "
            f"past space {original.spaces}"
        )
    return original.with_circuits(circuits), swapped


def _default_balance() -> BalanceFunction:
    try:
        from balancer.optimize import balance
    except ImportError as exc:
        raise SolverError(f"the optimiser could not be loaded: {exc}") from exc
    return balance


def levels(building: Building) -> list[list[str]]:
    """Panels grouped by height in the tree: those feeding nothing first, the services last.

    Panels of one level do not feed each other, so they can be balanced at the same time.
    """
    height: dict[str, int] = {}
    for name in building.order():
        height[name] = 1 + max((height[f.panel] for f in building.fed_from(name)), default=-1)
    out: list[list[str]] = [[] for _ in range(max(height.values(), default=-1) + 1)]
    for name in building.order():
        out[height[name]].append(name)
    return out


def panel_options(building: Building, name: str, options: BalanceOptions) -> BalanceOptions:
    """The options a panel is balanced with: behind a transformer with a delta secondary the
    first goal is the transformer's heaviest winding, since there the per-line VA and the
    winding loads part ways (a high-leg panel's 120 V loads all sit on one winding; a 240 V
    load on a closed delta loads all three windings, two thirds on the one across it).
    Elsewhere each winding carries one line's load and the phase spread comes first."""
    feed = building.feed_of(name)
    t = feed.transformer if feed is not None else None
    if t is None or not any(w.across for w in t.windings):
        return options
    return replace(options, objective="transformer", transformer_terms=loading_terms(t))


def _solve_views(
    views: Mapping[str, _View],
    options: Mapping[str, BalanceOptions],
    balance: BalanceFunction,
    jobs: int,
) -> dict[str, BalanceResult]:
    if jobs <= 1 or len(views) <= 1:
        return {name: balance(view.panel, options[name]) for name, view in views.items()}
    from concurrent.futures import ProcessPoolExecutor

    with ProcessPoolExecutor(max_workers=min(jobs, len(views))) as pool:
        futures = {
            name: pool.submit(balance, view.panel, options[name]) for name, view in views.items()
        }
        return {name: future.result() for name, future in futures.items()}


def balance_building(
    building: Building,
    options: BalanceOptions | None = None,
    balance: BalanceFunction | None = None,
    jobs: int = 1,
) -> BuildingResult:
    """Balance every panel, subpanels first, then each panel with its subpanels' final loads.

    Upstream, the optimiser also chooses where each feeder breaker sits and, for a single-phase
    subpanel, which of its lines lands on which pole, so every panel in the tree is balanced on
    the loads it really carries. ``jobs`` > 1 balances the panels of one level of the tree in
    that many worker processes (``balance`` must then be a module-level function).
    """
    options = options or BalanceOptions()
    balance = balance or _default_balance()
    current = building
    before = roll_up(building)
    outcomes: dict[str, PanelOutcome] = {}
    for level in levels(building):
        figures = roll_up(current)
        views = {name: _optimiser_view(current, name, figures) for name in level}
        chosen = {name: panel_options(current, name, options) for name in level}
        results = _solve_views(views, chosen, balance, jobs)
        for name in level:
            view, result = views[name], results[name]
            original = current.panel(name)
            arranged, swapped = _map_back(original, view, result.after_panel)
            previous = current.feeds
            feeds = [
                replace(f, swapped=swapped.get(f.circuit_id, f.swapped)) if f.source == name else f
                for f in previous
            ]
            current = current.with_panels(
                [arranged if p.name == name else p for p in current.panels], feeds
            )
            outcomes[name] = replace(
                _outcome(name, view, result, original, arranged, previous, feeds),
                first_goal=chosen[name].objective,
            )
    ordered = {name: outcomes[name] for name in building.order()}
    return BuildingResult(building, current, before, roll_up(current), ordered)


def _outcome(
    name: str,
    view: _View,
    result: BalanceResult,
    original: Panel,
    arranged: Panel,
    previous: Sequence[Feed],
    feeds: Sequence[Feed],
) -> PanelOutcome:
    moves = tuple(
        c.id
        for c, d in zip(original.circuits, arranged.circuits, strict=True)
        if c.placed and c.spaces != d.spaces
    )
    changed = tuple(
        f.panel
        for f, g in zip(previous, feeds, strict=True)
        if f.source == name and f.swapped != g.swapped
    )
    status = result.status
    notes = list(result.notes)
    if not view.exact and status is SolveStatus.OPTIMAL:
        status = SolveStatus.FEASIBLE
        notes.append(
            "a three-phase feeder's unequal line loads could not be given to the optimiser "
            "exactly on this system; the arrangement is checked but not proven best"
        )
    goal_proven = view.exact and result.goal_proven
    return PanelOutcome(
        name,
        status,
        view.exact,
        moves,
        changed,
        result.solve_seconds,
        result.gap_va,
        result.after.spread_va,
        goal_proven,
        tuple(notes),
    )

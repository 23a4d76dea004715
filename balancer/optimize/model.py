"""The balancing problem as data and as mixed-integer programs; building touches no file or solver.

A *unit* is what moves as one piece: a single circuit, or every member of a multiwire group (its
members sit on consecutive spaces of one side). Each unit has *options*: in the space-level model
every legal placement, in the line-level model every distinct assignment of lines (the space
numbers on one line are interchangeable for the phase sums, so deciding lines first removes that
symmetry). Variables are named by index (``y_12_3``) and mapped back through ``Model.choice``.
"""

from __future__ import annotations

import cmath
import functools
import itertools
import math
from collections.abc import Collection, Mapping, Sequence
from dataclasses import dataclass, field
from typing import Literal

import pulp

from balancer.domain.panel import Circuit, Panel
from balancer.domain.result import BalanceOptions
from balancer.domain.systems import Line, System
from balancer.errors import InfeasibleError
from balancer.optimize.goals import MODEL_ORDER, POLYGON_SIDES, Goal, goal_for
from balancer.physics.harmonics import circuit_currents_by_order
from balancer.physics.phasors import CircuitCurrents

ModelKind = Literal["line", "space", "mixed"]


@dataclass(frozen=True, slots=True)
class Option:
    """One way to place a unit: per member, its lines (space order) and spaces.

    ``spans`` is empty in the line-level model, where ``moves`` is the fewest moves any placement
    with these lines needs (a lower bound on what the space placement will need).
    """

    lines: tuple[tuple[Line, ...], ...]
    spans: tuple[tuple[int, ...], ...]
    moves: int
    # each member's lines in order: worked out once, as the searches ask for it very often
    pattern: tuple[tuple[Line, ...], ...] = field(init=False, repr=False, compare=False)

    def __post_init__(self) -> None:
        object.__setattr__(self, "pattern", tuple(tuple(sorted(m)) for m in self.lines))


@dataclass(frozen=True, slots=True)
class Unit:
    """Circuits that move together (indices into ``panel.circuits``) and their legal placements."""

    members: tuple[int, ...]
    group: str
    placements: tuple[Option, ...]
    _patterns: tuple[Option, ...] = field(init=False, repr=False, compare=False)

    def __post_init__(self) -> None:
        best: dict[tuple[tuple[Line, ...], ...], Option] = {}
        for option in self.placements:
            key = option.pattern
            if key not in best or option.moves < best[key].moves:
                best[key] = Option(key, (), option.moves)
        object.__setattr__(self, "_patterns", tuple(best.values()))

    def patterns(self) -> tuple[Option, ...]:
        """Distinct line assignments, each with the fewest moves among its placements (worked
        out once: every search and model asks for them)."""
        return self._patterns


@dataclass(frozen=True, slots=True)
class Layout:
    """Which circuits stay put (``fixed``) and which units the optimiser places."""

    panel: Panel
    units: tuple[Unit, ...]
    fixed: tuple[int, ...]
    free_spaces: tuple[int, ...]
    count_moves: bool


def _keeps_spaces(circuit: Circuit, options: BalanceOptions) -> bool:
    if circuit.locked:
        return True
    return circuit.is_spare and circuit.placed and not options.move_spares


def _check_circuit(panel: Panel, circuit: Circuit) -> None:
    system = panel.system
    if circuit.poles not in range(1, system.max_poles + 1):
        raise InfeasibleError(
            f"circuit {circuit.id}: {circuit.poles} poles cannot connect to a "
            f"{system.label()} system with {len(system.lines)} lines"
        )
    if circuit.poles == 1 and not system.neutral:
        raise InfeasibleError(
            f"circuit {circuit.id}: a 1-pole (line-to-neutral) load needs a neutral, "
            f"and a {system.label()} system has none"
        )


def _check_fixed(panel: Panel, circuit: Circuit) -> None:
    geometry = panel.geometry
    if not circuit.placed:
        raise InfeasibleError(f"circuit {circuit.id} is locked but has no space number")
    first = circuit.spaces[0]
    if not geometry.fits(first, circuit.poles) or geometry.span(first, circuit.poles) != tuple(
        circuit.spaces
    ):
        raise InfeasibleError(
            f"circuit {circuit.id} keeps spaces {list(circuit.spaces)}, which are not a legal "
            f"{circuit.poles}-pole position in a {panel.spaces}-space panel"
        )
    if circuit.poles == 1 and not panel.system.serves_line_to_neutral(geometry.line_of(first)):
        raise InfeasibleError(
            f"circuit {circuit.id} keeps space {first} on line {geometry.line_of(first)}, "
            "which may not serve a line-to-neutral load"
        )


def _placements(
    panel: Panel, members: Sequence[int], fixed_members: set[int], free: set[int], fresh: bool
) -> tuple[Option, ...]:
    """Every legal placement of one unit in ``free`` spaces (its fixed members' own included)."""
    geometry = panel.geometry
    circuits = [panel.circuits[i] for i in members]
    total_poles = sum(c.poles for c in circuits)
    out: list[Option] = []
    seen: set[tuple[tuple[int, ...], ...]] = set()
    for order in itertools.permutations(range(len(members))):
        for first in range(1, panel.spaces + 1):
            if not geometry.fits(first, total_poles):
                continue
            block = geometry.span(first, total_poles)
            if not set(block) <= free:
                continue
            spans: list[tuple[int, ...]] = [()] * len(members)
            at = 0
            for k in order:
                spans[k] = block[at : at + circuits[k].poles]
                at += circuits[k].poles
            key = tuple(spans)
            if key in seen:
                continue
            if any(members[k] in fixed_members and spans[k] != circuits[k].spaces for k in order):
                continue
            lines = tuple(tuple(geometry.line_of(s) for s in span) for span in spans)
            if any(
                c.poles == 1 and not panel.system.serves_line_to_neutral(ls[0])
                for c, ls in zip(circuits, lines, strict=True)
            ):
                continue
            seen.add(key)
            moves = 0
            if not fresh:
                moves = sum(
                    1 for c, s in zip(circuits, spans, strict=True) if c.placed and c.spaces != s
                )
            out.append(Option(lines, key, moves))
    return tuple(out)


def build_layout(panel: Panel, options: BalanceOptions) -> Layout:
    """Split the panel into fixed circuits and movable units; raise InfeasibleError on conflicts.

    The layout depends only on the panel and on ``fresh`` and ``move_spares``, and every row of
    a trade-off table asks for the same one: it is worked out once (panels are frozen)."""
    try:
        return _layout(panel, options.fresh, options.move_spares)
    except TypeError:  # pragma: no cover - a kept input column holding an unhashable value
        return _layout.__wrapped__(panel, options.fresh, options.move_spares)


@functools.lru_cache(maxsize=8)
def _layout(panel: Panel, fresh: bool, move_spares: bool) -> Layout:
    options = BalanceOptions(fresh=fresh, move_spares=move_spares)
    lines = panel.lines
    for circuit in panel.circuits:
        _check_circuit(panel, circuit)
    poles = sum(c.poles for c in panel.circuits)
    if poles > panel.spaces:
        raise InfeasibleError(
            f"the circuits need {poles} poles but the panel has only {panel.spaces} spaces"
        )
    keeps = [_keeps_spaces(c, options) for c in panel.circuits]
    groups: dict[str, list[int]] = {}
    for i, circuit in enumerate(panel.circuits):
        if circuit.group:
            groups.setdefault(circuit.group, []).append(i)
    holder: dict[int, str] = {}
    for i, circuit in enumerate(panel.circuits):
        if not keeps[i]:
            continue
        _check_fixed(panel, circuit)
        for s in circuit.spaces:
            if s in holder:
                raise InfeasibleError(f"circuits {holder[s]} and {circuit.id} both keep space {s}")
            holder[s] = circuit.id
    fixed = tuple(i for i, c in enumerate(panel.circuits) if keeps[i] and not c.group)
    taken = {s for i in fixed for s in panel.circuits[i].spaces}
    free = set(range(1, panel.spaces + 1)) - taken
    # Members of a group that keep their spaces bind the group; other units may not use them.
    group_held = {s for i, c in enumerate(panel.circuits) if keeps[i] and c.group for s in c.spaces}
    units: list[Unit] = []
    pieces: list[tuple[Sequence[int], str]] = []
    for i, circuit in enumerate(panel.circuits):
        if not keeps[i] and not circuit.group:
            pieces.append(((i,), ""))
    for name, group_members in groups.items():
        group_poles = sum(panel.circuits[i].poles for i in group_members)
        if group_poles > len(lines):
            raise InfeasibleError(
                f"multiwire group {name!r} has {group_poles} poles, but its conductors must be on "
                f"different lines and the system has {len(lines)}"
            )
        pieces.append((tuple(group_members), name))
    for member_list, name in pieces:
        members = tuple(member_list)
        fixed_members = {i for i in members if keeps[i]}
        own = {s for i in fixed_members for s in panel.circuits[i].spaces}
        usable = (free - group_held) | own
        placements = _placements(panel, members, fixed_members, usable, options.fresh)
        if not placements:
            what = (
                f"multiwire group {name!r}" if name else f"circuit {panel.circuits[members[0]].id}"
            )
            need = sum(panel.circuits[i].poles for i in members)
            raise InfeasibleError(
                f"{what} has no legal place: it needs {need} adjacent free spaces on one side"
                + (" on lines that serve line-to-neutral loads" if panel.system.high_leg else "")
                + (" around its locked members" if fixed_members else "")
            )
        units.append(Unit(members, name, placements))
    return Layout(panel, tuple(units), fixed, tuple(sorted(free)), not options.fresh)


@dataclass(frozen=True, slots=True)
class Contribution:
    """What one option adds to the phase sums and currents."""

    phase_va: dict[Line, float]
    neutral: complex
    line_current: dict[Line, complex]


@functools.lru_cache(maxsize=8192)
def _fundamental(system: System, circuit: Circuit, lines: tuple[Line, ...]) -> CircuitCurrents:
    """A circuit's fundamental phasors on ``lines``: every model, search and trade-off row of a
    run asks for the same few thousand (circuits and systems are frozen, so this is exact)."""
    return circuit_currents_by_order(system, circuit, lines)[1]


def contribution(
    panel: Panel, members: Sequence[int], lines: Sequence[Sequence[Line]]
) -> Contribution:
    phase = dict.fromkeys(panel.lines, 0.0)
    current = dict.fromkeys(panel.lines, 0j)
    neutral = 0j
    for i, member_lines in zip(members, lines, strict=True):
        circuit = panel.circuits[i]
        for line in member_lines:
            phase[line] += circuit.basis_va / len(member_lines)
        # the same fundamental phasors analyze() reports (voltage, neutral share and the
        # harmonic profile included), so a proven current is the current shown
        fundamental = _fundamental(panel.system, circuit, tuple(member_lines))
        for line, value in fundamental.lines.items():
            current[line] += value
        neutral += fundamental.neutral
    return Contribution(phase, neutral, current)


@dataclass(slots=True)
class Model:
    """A PuLP problem and the maps back to units and options."""

    kind: ModelKind
    layout: Layout
    prob: pulp.LpProblem
    options: tuple[tuple[Option, ...], ...]
    choice: dict[tuple[int, int], pulp.LpVariable]
    phase_va: dict[Line, pulp.LpAffineExpression]
    goals: dict[str, pulp.LpAffineExpression] = field(default_factory=dict)

    def chosen(self) -> list[int]:
        """Option index per unit from the current variable values (binaries rounded)."""
        picks = []
        for u, opts in enumerate(self.options):
            on = [k for k in range(len(opts)) if (self.choice[u, k].varValue or 0.0) > 0.5]
            picks.append(on[0] if len(on) == 1 else -1)
        return picks


def _polygon_rows(
    prob: pulp.LpProblem,
    bound: pulp.LpVariable,
    terms: Sequence[tuple[pulp.LpVariable, complex]],
    constant: complex,
    tag: str,
) -> None:
    """bound ≥ Re(I e^{-jθk}) for every side k, with I = constant + Σ value·x."""
    for k in range(POLYGON_SIDES):
        turn = cmath.rect(1.0, -2.0 * math.pi * k / POLYGON_SIDES)
        expr = pulp.LpAffineExpression(
            [(x, (value * turn).real) for x, value in terms if abs(value) > 0]
        )
        prob += (bound >= expr + (constant * turn).real, f"{tag}_{k}")


def _single_pole(layout: Layout, unit: Unit) -> bool:
    return len(unit.members) == 1 and layout.panel.circuits[unit.members[0]].poles == 1


def _single_pole_options(layout: Layout, unit: Unit) -> tuple[Option, ...]:
    """Stay where it is (if legal), or go to any free space of a line (counted, not named).

    1-pole breakers on one line are interchangeable, so the mixed model counts them per line
    against the spaces left free there; which free space each takes is settled afterwards.
    """
    circuit = layout.panel.circuits[unit.members[0]]
    cost = 1 if circuit.placed and layout.count_moves else 0
    stay = [o for o in unit.placements if o.spans == (circuit.spaces,)] if cost else []
    return tuple(stay) + tuple(Option(p.lines, (), cost) for p in unit.patterns())


def realise(layout: Layout, chosen: Sequence[Option]) -> list[Option]:
    """Give every counted 1-pole choice a free space on its line (lowest number first)."""
    geometry = layout.panel.geometry
    used = {s for o in chosen for span in o.spans for s in span}
    open_on: dict[Line, list[int]] = {}
    for s in layout.free_spaces:
        if s not in used:
            open_on.setdefault(geometry.line_of(s), []).append(s)
    out = []
    for unit, option in zip(layout.units, chosen, strict=True):
        if option.spans:
            out.append(option)
            continue
        (line,) = option.lines[0]
        spaces = open_on.get(line, [])
        if not spaces:
            raise InfeasibleError(f"no free space left on line {line}")
        own = layout.panel.circuits[unit.members[0]].spaces
        space = own[0] if own and own[0] in spaces else spaces[0]
        spaces.remove(space)
        out.append(Option(option.lines, ((space,),), 0 if (space,) == own else option.moves))
    return out


def build_model(
    layout: Layout,
    kind: ModelKind,
    options: BalanceOptions,
    allowed: Mapping[int, set[tuple[tuple[Line, ...], ...]]] | None = None,
    target_imbalance_pct: float | None = None,
    include: Collection[str] | None = None,
) -> Model:
    """Build a problem; goals are expressions in ``Model.goals``.

    ``kind``: ``line`` decides lines only, with the free spaces per line as capacity (a
    relaxation: its bounds hold for every arrangement); ``space`` names every placement (the
    plain model, kept as a baseline and for placing a line-level answer); ``mixed`` is exact:
    multi-pole breakers and groups by placement, 1-pole breakers by staying put or by line.

    ``allowed`` restricts a unit to options with the given line patterns (placing a line-level
    answer into spaces); ``include`` limits the current goals built (their polygon rows are
    dense), by default those ``options`` needs. Goal expressions: ``spread`` (max − min phase
    VA), ``moves``, ``neutral`` and ``line`` (polygon bounds on |I_N| and the largest |I_line|,
    amperes), and with ``options.transformer_terms`` ``transformer`` (polygon bound on the
    heaviest winding of the feeding transformer, % of its rating).
    """
    prob = pulp.LpProblem(f"balance_{kind}", pulp.LpMinimize)
    unit_options = _unit_options(layout, kind, allowed)
    choice = define_choice(prob, unit_options)
    if kind in ("line", "mixed"):
        define_line_room(prob, layout, unit_options, choice)
    if kind in ("space", "mixed"):
        define_space_cover(prob, unit_options, choice)
    panel = layout.panel
    fixed = contribution(
        panel, layout.fixed, [panel.lines_of(panel.circuits[i]) for i in layout.fixed]
    )
    parts = [
        [contribution(panel, layout.units[u].members, o.lines) for o in opts]
        for u, opts in enumerate(unit_options)
    ]
    phase_va = phase_sums(panel.lines, choice, fixed, parts)
    goals: dict[str, pulp.LpAffineExpression] = {"spread": define_spread(prob, phase_va)}
    goals["moves"] = define_moves(prob, layout, options, unit_options, choice)
    if target_imbalance_pct is not None:
        define_target(prob, layout, fixed, phase_va, target_imbalance_pct)
    wanted = set(include) if include is not None else {"neutral", options.objective}
    for name in MODEL_ORDER:
        if name in wanted:
            bound = define_current_goal(prob, goal_for(name), layout, options, choice, fixed, parts)
            if bound is not None:
                goals[name] = bound
    prob.setObjective(goals["spread"])
    return Model(kind, layout, prob, tuple(unit_options), choice, phase_va, goals)


# One function per family of variables and constraints, in the order build_model adds them:
# the solver's path depends on the order of variables and rows, so keep it.

Choice = dict[tuple[int, int], pulp.LpVariable]


def _unit_options(
    layout: Layout,
    kind: ModelKind,
    allowed: Mapping[int, set[tuple[tuple[Line, ...], ...]]] | None,
) -> list[tuple[Option, ...]]:
    """The options each unit chooses among in a model of ``kind``."""
    unit_options: list[tuple[Option, ...]] = []
    for u, unit in enumerate(layout.units):
        if kind == "line":
            opts = unit.patterns()
        elif kind == "mixed" and _single_pole(layout, unit):
            opts = _single_pole_options(layout, unit)
        else:
            opts = unit.placements
        if allowed is not None and u in allowed:
            opts = tuple(o for o in opts if o.pattern in allowed[u])
        unit_options.append(opts)
    return unit_options


def define_choice(prob: pulp.LpProblem, unit_options: Sequence[Sequence[Option]]) -> Choice:
    """A binary ``y_u_k`` per option of each unit, and exactly one option per unit."""
    choice: Choice = {}
    for u, opts in enumerate(unit_options):
        for k in range(len(opts)):
            choice[u, k] = prob.add_variable(f"y_{u}_{k}", 0, 1, cat=pulp.LpBinary)
    for u, opts in enumerate(unit_options):
        prob += (pulp.lpSum(choice[u, k] for k in range(len(opts))) == 1, f"one_{u}")
    return choice


def define_line_room(
    prob: pulp.LpProblem,
    layout: Layout,
    unit_options: Sequence[Sequence[Option]],
    choice: Choice,
) -> None:
    """No line takes more poles than it has free spaces (``room_j``)."""
    geometry = layout.panel.geometry
    lines = layout.panel.lines
    free_on = {
        line: sum(1 for s in layout.free_spaces if geometry.line_of(s) == line) for line in lines
    }
    for j, line in enumerate(lines):
        use = [
            (choice[u, k], sum(member.count(line) for member in o.lines))
            for u, opts in enumerate(unit_options)
            for k, o in enumerate(opts)
        ]
        prob += (
            pulp.LpAffineExpression([(x, n) for x, n in use if n]) <= free_on[line],
            f"room_{j}",
        )


def define_space_cover(
    prob: pulp.LpProblem, unit_options: Sequence[Sequence[Option]], choice: Choice
) -> None:
    """No space is taken by two chosen placements (``space_s``)."""
    cover: dict[int, list[pulp.LpVariable]] = {}
    for u, opts in enumerate(unit_options):
        for k, o in enumerate(opts):
            for span in o.spans:
                for s in span:
                    cover.setdefault(s, []).append(choice[u, k])
    for s in sorted(cover):
        if len(cover[s]) > 1:
            prob += (pulp.lpSum(cover[s]) <= 1, f"space_{s}")


def phase_sums(
    lines: Sequence[Line],
    choice: Choice,
    fixed: Contribution,
    parts: Sequence[Sequence[Contribution]],
) -> dict[Line, pulp.LpAffineExpression]:
    """The VA on each line: what stays put, plus each chosen option's share."""
    phase_va: dict[Line, pulp.LpAffineExpression] = {}
    for line in lines:
        phase_va[line] = pulp.LpAffineExpression(
            [
                (choice[u, k], part.phase_va[line])
                for u, unit_parts in enumerate(parts)
                for k, part in enumerate(unit_parts)
                if part.phase_va[line]
            ],
            constant=fixed.phase_va[line],
        )
    return phase_va


def define_spread(
    prob: pulp.LpProblem, phase_va: Mapping[Line, pulp.LpAffineExpression]
) -> pulp.LpAffineExpression:
    """``t_max`` above and ``t_min`` below every phase sum (``hi_j``, ``lo_j``); the spread is
    their difference."""
    high = prob.add_variable("t_max", None, None)
    low = prob.add_variable("t_min", None, None)
    for j, expr in enumerate(phase_va.values()):
        prob += (high >= expr, f"hi_{j}")
        prob += (low <= expr, f"lo_{j}")
    return high - low


def define_moves(
    prob: pulp.LpProblem,
    layout: Layout,
    options: BalanceOptions,
    unit_options: Sequence[Sequence[Option]],
    choice: Choice,
) -> pulp.LpAffineExpression:
    """The move count, and on a placed schedule the budget ``options.max_moves``."""
    moves = pulp.LpAffineExpression(
        [
            (choice[u, k], o.moves)
            for u, opts in enumerate(unit_options)
            for k, o in enumerate(opts)
            if o.moves
        ]
    )
    if layout.count_moves and options.max_moves is not None:
        prob += (moves <= options.max_moves, "move_budget")
    return moves


def define_target(
    prob: pulp.LpProblem,
    layout: Layout,
    fixed: Contribution,
    phase_va: Mapping[Line, pulp.LpAffineExpression],
    target_imbalance_pct: float,
) -> None:
    """Every phase sum within the target imbalance of the average (``target_hi_j``,
    ``target_lo_j``)."""
    panel = layout.panel
    lines = panel.lines
    total = sum(fixed.phase_va.values()) + sum(
        panel.circuits[i].basis_va for unit in layout.units for i in unit.members
    )
    allowance = target_imbalance_pct / 100.0 * total / len(lines)
    for j, line in enumerate(lines):
        prob += (phase_va[line] <= total / len(lines) + allowance, f"target_hi_{j}")
        prob += (phase_va[line] >= total / len(lines) - allowance, f"target_lo_{j}")


def define_current_goal(
    prob: pulp.LpProblem,
    goal: Goal,
    layout: Layout,
    options: BalanceOptions,
    choice: Choice,
    fixed: Contribution,
    parts: Sequence[Sequence[Contribution]],
) -> pulp.LpAffineExpression | None:
    """One variable above the polygon of every current ``goal`` keeps low; that variable is the
    goal's expression. None when the goal has no current the arrangement changes."""
    currents = goal.currents(layout, options) if goal.currents else ()
    if not currents:
        return None
    bound = prob.add_variable(goal.variable, 0, None)
    for tag, phasor in currents:
        terms = [
            (choice[u, k], phasor(part))
            for u, unit_parts in enumerate(parts)
            for k, part in enumerate(unit_parts)
        ]
        _polygon_rows(prob, bound, terms, phasor(fixed), tag)
    return pulp.LpAffineExpression([(bound, 1.0)])


def placed_circuits(layout: Layout, options: Sequence[Option]) -> list[Circuit]:
    """The panel's circuits with each unit moved to its chosen placement."""
    circuits = list(layout.panel.circuits)
    for unit, option in zip(layout.units, options, strict=True):
        for i, span in zip(unit.members, option.spans, strict=True):
            circuits[i] = circuits[i].moved_to(tuple(span))
    return circuits


def _on_grid(values: Sequence[float]) -> list[int] | None:
    """Values in sixths of a VA (halves and thirds of whole-VA loads), or None when off it."""
    sixths = [round(v * 6) for v in values]
    ok = all(abs(v * 6 - k) < 1e-6 for v, k in zip(values, sixths, strict=True))
    return sixths if ok else None


def _step_bound(panel: Panel, layout: Layout, fixed_va: Mapping[Line, float]) -> float:
    """Spread bound from the step of the movable shares and what stays where it is.

    Every share a movable circuit (not on every line) puts on a line is a multiple of ``g``, so
    line i carries F_i + g·k_i: F_i its fixed load, k_i ≥ 0 whole steps, and the k_i add up to
    K, the movable load in steps. Forgetting which share may go where leaves a relaxation whose
    least spread is exact to compute: water-filling, one step at a time onto the lightest line.
    (It maximises the lightest line; and when the heaviest line was raised, every line sits in
    a window of one step, where any other vector with the same residues and sum differs by a
    whole step up on one line and down on another, so it spreads at least as wide.)
    Circuits on every line shift all lines alike and change no difference.
    """
    n = len(panel.lines)
    movable = [
        panel.circuits[i].basis_va / panel.circuits[i].poles
        for unit in layout.units
        for i in unit.members
        if panel.circuits[i].poles < n
        for _ in range(panel.circuits[i].poles)
    ]
    fixed, steps = _on_grid([fixed_va[line] for line in panel.lines]), _on_grid(movable)
    if fixed is None or steps is None:
        return 0.0
    g = math.gcd(*steps) if steps else 0
    if g == 0:
        return (max(fixed) - min(fixed)) / 6
    total_steps = sum(steps) // g

    def needed(level: int) -> int:  # steps that bring every line to at least ``level``
        return sum(max(0, -((v - level) // g)) for v in fixed)

    low, high = min(fixed), max(fixed) + g * total_steps + 1
    while high - low > 1:  # the highest level the steps can lift every line to
        mid = (low + high) // 2
        low, high = (mid, high) if needed(mid) <= total_steps else (low, mid)
    final = [v + g * max(0, -((v - low) // g)) for v in fixed]
    for _ in range(total_steps - needed(low)):  # fewer than n steps are left
        final[final.index(min(final))] += g
    return (max(final) - min(final)) / 6


def spread_lower_bound(layout: Layout) -> float:
    """A combinatorial lower bound on the phase spread of any legal arrangement (VA).

    Two arguments, both from the phase sums alone (so they hold whatever the geometry):

    * largest piece: some line carries at least ``m`` (the heaviest single share on top of the
      lightest fixed line, a fixed line load, or the average), and the lightest line then has at
      most ``(total − m)/(n − 1)``, so spread ≥ m − (total − m)/(n − 1);
    * granularity: when every share of a circuit not on every line is a multiple of ``g``
      (checked on a 1/6 VA grid, which holds halves and thirds of whole-VA loads) and their
      total is not ``n`` equal multiples of ``g``, the lines cannot all be equal, so spread ≥ g.
    """
    panel = layout.panel
    n = len(panel.lines)
    fixed = contribution(
        panel, layout.fixed, [panel.lines_of(panel.circuits[i]) for i in layout.fixed]
    )
    # A circuit on every line adds the same to each, so it changes neither the spread nor
    # whether the lines can be equal: leave it out of the granularity argument.
    shares: list[float] = []
    for i in layout.fixed:
        circuit = panel.circuits[i]
        if circuit.poles < n:
            shares += [circuit.basis_va / circuit.poles] * circuit.poles
    heaviest = 0.0
    for unit in layout.units:
        for i in unit.members:
            circuit = panel.circuits[i]
            share = circuit.basis_va / circuit.poles
            if circuit.poles < n:
                shares += [share] * circuit.poles
                heaviest = max(heaviest, share)
    total = math.fsum(fixed.phase_va.values()) + math.fsum(
        panel.circuits[i].basis_va for unit in layout.units for i in unit.members
    )
    top = max(total / n, max(fixed.phase_va.values()), min(fixed.phase_va.values()) + heaviest)
    bound = max(0.0, top - (total - top) / (n - 1))
    sixths = [round(s * 6) for s in shares]
    if all(abs(s * 6 - k) < 1e-6 for s, k in zip(shares, sixths, strict=True)):
        g = math.gcd(*sixths) if sixths else 0
        if g and (sum(sixths) // g) % n:
            bound = max(bound, g / 6)
    bound = max(bound, _step_bound(panel, layout, fixed.phase_va))
    return bound if bound > 1e-9 * max(1.0, total) else 0.0  # float noise is not a bound


def placement_start(options: Sequence[Sequence[Option]]) -> list[int] | None:
    """First fit into spaces, staying put where possible (a start for a placement model)."""
    used: set[int] = set()
    picks = [-1] * len(options)
    order = sorted(range(len(options)), key=lambda u: -sum(len(x) for x in options[u][0].spans))
    for u in order:
        ranked = sorted(range(len(options[u])), key=lambda k: options[u][k].moves)
        for k in ranked:
            spaces = {s for span in options[u][k].spans for s in span}
            if not spaces & used:
                used |= spaces
                picks[u] = k
                break
        else:
            return None
    return picks


def to_mixed(exact: Model, chosen: Sequence[Option]) -> list[int]:
    """Option indices of the mixed model for placements chosen elsewhere."""
    out = []
    for u, option in enumerate(chosen):
        opts = exact.options[u]
        if option in opts:
            out.append(opts.index(option))
        else:  # a 1-pole breaker counted by line in the mixed model
            out.append(
                next(j for j, o in enumerate(opts) if not o.spans and o.lines == option.lines)
            )
    return out

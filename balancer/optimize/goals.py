"""The optimiser's goals as data: what each one measures, in which unit, how closely the engine
closes it, how it reads in a report, and for a current goal which currents the model bounds.

Every stage that compares arrangements (the engine's stages, the trade-off rows, the fewest-moves
pick, buildings and batches) asks the goal the user chose for its figure here, so no stage can
quietly compare another one.
"""

from __future__ import annotations

import math
from collections.abc import Callable, Mapping, Sequence
from dataclasses import dataclass
from typing import TYPE_CHECKING

from balancer.domain.panel import Panel
from balancer.domain.result import BalanceOptions, CurrentTerm, Objective
from balancer.domain.systems import Line
from balancer.intervals.figures import peak_va
from balancer.physics.analysis import Loads
from balancer.physics.harmonics import circuit_currents_by_order

if TYPE_CHECKING:
    from balancer.optimize.model import Contribution, Layout

# A current as a function of what one option (or the circuits that stay put) adds to the panel.
PhasorOf = Callable[["Contribution"], complex]
# The currents a goal keeps low for a layout, each with the tag its polygon rows are named by;
# none when the arrangement cannot change the goal (no neutral current to move, no transformer).
Currents = Callable[["Layout", BalanceOptions], Sequence[tuple[str, PhasorOf]]]

# Sides of the regular polygon that linearises |I|: max_k Re(I e^{-jθk}) ≤ |I| ≤ that / cos(π/m).
POLYGON_SIDES = 64
POLYGON_ERROR = 1.0 / math.cos(math.pi / POLYGON_SIDES) - 1.0  # 0.12 % for 64 sides
CURRENT_GAP = 0.01  # absolute gap the engine closes on a current goal (A, or % for a winding)
MOVES_GAP = 0.999  # moves are whole numbers: a gap below one proves the count


@dataclass(frozen=True, slots=True)
class Goal:
    """One thing the optimiser can keep low.

    ``linearised`` goals are currents minimised through the polygon: the engine proves the
    polygon figure, and the true magnitude is at most ``POLYGON_ERROR`` above it. Their
    ``currents`` are what the model bounds (every side of the polygon of each, one variable
    named ``variable`` above them all); the spread is built with the phase sums instead.
    """

    name: Objective
    label: str  # as a column or row heading: "Phase spread"
    phrase: str  # in a sentence: "the phase spread"
    unit: str
    digits: int
    linearised: bool
    variable: str = ""
    currents: Currents | None = None

    def applies(self, layout: Layout, options: BalanceOptions) -> bool:
        """Whether the arrangement of ``layout`` can change this goal's figure."""
        return self.currents is None or bool(self.currents(layout, options))

    def gap(self, options: BalanceOptions) -> float:
        """The absolute gap the engine is asked to close on this goal."""
        return options.tolerance_va if self.name in ("spread", "peak", "peak-line") else CURRENT_GAP

    def tolerance(self, value: float, options: BalanceOptions) -> float:
        """How far two figures of this goal may differ and still count as the same optimum:
        the engine's gap, plus the polygon's error on a linearised current."""
        extra = POLYGON_ERROR * abs(value) if self.linearised and math.isfinite(value) else 0.0
        return self.gap(options) + extra

    def measure(self, panel: Panel, loads: Loads, options: BalanceOptions) -> float:
        """The goal's figure for an arrangement, from its analysis (fundamental currents, as the
        optimiser sees them)."""
        if self.name == "spread":
            return loads.spread_va
        if self.name == "neutral":
            return loads.neutral_a
        if self.name == "line":
            return max(loads.line_a.values(), default=0.0)
        if self.name in ("peak", "peak-line"):
            series = options.intervals
            if series is None:
                return math.nan
            return peak_va(panel, series, "line" if self.name == "peak-line" else "spread")
        currents = fundamental_currents(panel)
        terms = options.transformer_terms
        return max((abs(term.value(currents)) for term in terms), default=math.nan)

    def text(self, value: float) -> str:
        """``12.3 A``: the figure with its unit, at the precision shown everywhere."""
        if not math.isfinite(value):
            return "n/a"
        return f"{value:,.{self.digits}f} {self.unit}"


def has_neutral_goal(layout: Layout) -> bool:
    """Whether the neutral current depends on the arrangement (a neutral and a 1-pole load)."""
    panel = layout.panel
    return panel.system.neutral and any(
        panel.circuits[i].poles == 1 for unit in layout.units for i in unit.members
    )


def _neutral_currents(layout: Layout, options: BalanceOptions) -> list[tuple[str, PhasorOf]]:
    if not has_neutral_goal(layout):
        return []
    return [("neutral", lambda part: part.neutral)]


def _line_currents(layout: Layout, options: BalanceOptions) -> list[tuple[str, PhasorOf]]:
    return [(f"line_{j}", _on_line(line)) for j, line in enumerate(layout.panel.lines)]


def _on_line(line: Line) -> PhasorOf:
    return lambda part: part.line_current[line]


def _winding_currents(layout: Layout, options: BalanceOptions) -> list[tuple[str, PhasorOf]]:
    """The windings of the feeding transformer, as linear terms of the line currents."""
    return [(f"winding_{j}", _in_winding(term)) for j, term in enumerate(options.transformer_terms)]


def _in_winding(term: CurrentTerm) -> PhasorOf:
    return lambda part: term.value(part.line_current)


GOALS: dict[str, Goal] = {
    goal.name: goal
    for goal in (
        Goal("spread", "Phase spread", "the phase spread", "VA", 0, False),
        Goal(
            "line",
            "Worst line current",
            "the worst line current",
            "A",
            2,
            True,
            variable="z_l",
            currents=_line_currents,
        ),
        Goal(
            "neutral",
            "Neutral current",
            "the neutral current",
            "A",
            2,
            True,
            variable="z_n",
            currents=_neutral_currents,
        ),
        Goal(
            "transformer",
            "Heaviest transformer winding",
            "the supply transformer's heaviest winding",
            "%",
            2,
            True,
            variable="z_t",
            currents=_winding_currents,
        ),
        Goal(
            "peak", "Peak-interval spread", "the phase spread at the worst interval", "VA", 0, False
        ),
        Goal(
            "peak-line",
            "Heaviest line at its worst interval",
            "the heaviest line's load at its worst interval",
            "VA",
            0,
            False,
        ),
    )
}
# The order the model adds the current goals in: their variables and rows keep this order,
# which the solver's path depends on, so a new goal goes at the end.
MODEL_ORDER = ("neutral", "line", "transformer")


def goal_for(name: str) -> Goal:
    """The goal called ``name``; a ValueError names the ones there are."""
    try:
        return GOALS[name]
    except KeyError:
        raise ValueError(f"unknown goal {name!r}; one of {', '.join(GOALS)}") from None


def fundamental_currents(panel: Panel) -> Mapping[Line, complex]:
    """Fundamental line current phasors of the panel as its circuits are placed (the same
    phasors :func:`balancer.physics.analysis.analyze` sums)."""
    out: dict[Line, complex] = dict.fromkeys(panel.lines, 0j)
    for circuit in panel.circuits:
        lines = panel.lines_of(circuit)
        if not lines or not circuit.basis_va:
            continue
        fundamental = circuit_currents_by_order(panel.system, circuit, lines)[1]
        for line, current in fundamental.lines.items():
            out[line] += current
    return out

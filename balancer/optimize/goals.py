"""The optimiser's goals as data: what each one measures, in which unit, how closely the engine
closes it, and how it reads in a report.

Every stage that compares arrangements (the engine's stages, the trade-off rows, the fewest-moves
pick, buildings and batches) asks the goal the user chose for its figure here, so no stage can
quietly compare another one.
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from dataclasses import dataclass

from balancer.domain.panel import Panel
from balancer.domain.result import BalanceOptions, Objective
from balancer.domain.systems import Line
from balancer.physics.analysis import Loads
from balancer.physics.harmonics import circuit_currents_by_order

# Sides of the regular polygon that linearises |I|: max_k Re(I e^{-jθk}) ≤ |I| ≤ that / cos(π/m).
POLYGON_SIDES = 64
POLYGON_ERROR = 1.0 / math.cos(math.pi / POLYGON_SIDES) - 1.0  # 0.12 % for 64 sides
CURRENT_GAP = 0.01  # absolute gap the engine closes on a current goal (A, or % for a winding)
MOVES_GAP = 0.999  # moves are whole numbers: a gap below one proves the count


@dataclass(frozen=True, slots=True)
class Goal:
    """One thing the optimiser can keep low.

    ``linearised`` goals are currents minimised through the polygon: the engine proves the
    polygon figure, and the true magnitude is at most ``POLYGON_ERROR`` above it.
    """

    name: Objective
    label: str  # as a column or row heading: "Phase spread"
    phrase: str  # in a sentence: "the phase spread"
    unit: str
    digits: int
    linearised: bool

    def gap(self, options: BalanceOptions) -> float:
        """The absolute gap the engine is asked to close on this goal."""
        return options.tolerance_va if self.name == "spread" else CURRENT_GAP

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
        currents = fundamental_currents(panel)
        terms = options.transformer_terms
        return max((abs(term.value(currents)) for term in terms), default=math.nan)

    def text(self, value: float) -> str:
        """``12.3 A``: the figure with its unit, at the precision shown everywhere."""
        if not math.isfinite(value):
            return "n/a"
        return f"{value:,.{self.digits}f} {self.unit}"


GOALS: dict[str, Goal] = {
    goal.name: goal
    for goal in (
        Goal("spread", "Phase spread", "the phase spread", "VA", 0, False),
        Goal("line", "Worst line current", "the worst line current", "A", 2, True),
        Goal("neutral", "Neutral current", "the neutral current", "A", 2, True),
        Goal(
            "transformer",
            "Heaviest transformer winding",
            "the supply transformer's heaviest winding",
            "%",
            2,
            True,
        ),
    )
}


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
        if not lines or not circuit.load_va:
            continue
        fundamental = circuit_currents_by_order(panel.system, circuit, lines)[1]
        for line, current in fundamental.lines.items():
            out[line] += current
    return out

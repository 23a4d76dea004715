"""What a balancing run asks for and what it returns; shared by the optimiser, writer and CLI."""

from __future__ import annotations

import enum
import math
from collections.abc import Mapping
from dataclasses import dataclass, field
from typing import Literal

from balancer.domain.panel import Panel
from balancer.domain.systems import Line
from balancer.intervals.series import LoadSeries
from balancer.physics.analysis import Loads

Engine = Literal["highs", "cbc"]
Objective = Literal["spread", "line", "neutral", "transformer", "peak", "peak-line"]


class SolveStatus(enum.Enum):
    """How far the result is proven. Never derived from a solver's label alone."""

    OPTIMAL = "optimal"  # proven within the stated tolerance
    FEASIBLE = "feasible"  # a checked arrangement, with a remaining gap
    UNCHANGED = "unchanged"  # nothing to do (for example every circuit locked)


@dataclass(frozen=True, slots=True)
class CurrentTerm:
    """A weighted sum of a panel's line current phasors, Σ w_k·I_k; ``scale`` times its
    magnitude is the figure kept low (for a transformer winding: its loading in %)."""

    name: str
    weights: tuple[tuple[Line, complex], ...]
    scale: float

    def value(self, currents: Mapping[Line, complex]) -> complex:
        return self.scale * sum((w * currents.get(k, 0j) for k, w in self.weights), 0j)


@dataclass(frozen=True, slots=True)
class BalanceOptions:
    """Choices for one balancing run; passed explicitly, never global.

    ``transformer_terms`` describe the windings of the transformer feeding the panel (see
    :func:`balancer.physics.transformer.loading_terms`); with them, objective
    ``"transformer"`` keeps the heaviest winding's loading lowest.

    ``spread_floors`` are proven lower bounds on the phase spread for smaller move budgets:
    ``(m, va)`` says no arrangement moving at most ``m`` circuits has a spread below ``va``
    (the trade-off table passes its earlier rows). Where the spread kept is below such a floor,
    the move count is proven without another solve.

    ``intervals`` are the loads per time interval (logger readings or typical load shapes);
    with them, objective ``"peak"`` keeps the worst interval's phase spread lowest, and
    ``"peak-line"`` the heaviest line's load at its worst interval.
    """

    fresh: bool = False
    max_moves: int | None = None
    target_imbalance_pct: float | None = None
    engine: Engine = "highs"
    time_limit_s: float = 60.0
    tolerance_va: float = 1.0
    move_spares: bool = False
    objective: Objective = "spread"
    transformer_terms: tuple[CurrentTerm, ...] = ()
    spread_floors: tuple[tuple[int, float], ...] = ()
    intervals: LoadSeries | None = None


@dataclass(frozen=True, slots=True)
class Move:
    """One circuit whose breaker changes spaces."""

    circuit_id: str
    description: str
    from_spaces: tuple[int, ...]
    to_spaces: tuple[int, ...]
    from_lines: tuple[Line, ...]
    to_lines: tuple[Line, ...]


@dataclass(frozen=True, slots=True)
class TradeoffRow:
    """Best balance reachable with at most ``moves`` moves."""

    moves: int
    spread_va: float
    imbalance_pct: float
    neutral_a: float
    status: SolveStatus  # how far the row's figure of the chosen goal is proven
    goal: str = "spread"
    goal_value: float = math.nan  # the chosen goal's figure for this row
    neutral_rms_a: float = math.nan


@dataclass(frozen=True, slots=True)
class Recommendation:
    """Which rule chose the arrangement returned from the trade-off table, and the best row
    beside it."""

    rule: Literal["best", "within", "target", "fewest-same"]
    message: str
    moves: int
    imbalance_pct: float
    best_moves: int
    best_imbalance_pct: float
    within_pct: float | None = None
    proven: bool = False  # fewer moves proven unable to satisfy the rule
    neutral_message: str | None = None  # when the arrangement raises the neutral current


@dataclass(frozen=True, slots=True)
class BalanceResult:
    """A checked arrangement of the panel's circuits and how good it is proven to be."""

    before_panel: Panel
    after_panel: Panel
    before: Loads
    after: Loads
    status: SolveStatus
    engine: str
    tolerance_va: float
    lower_bound_spread_va: float
    moves: tuple[Move, ...]
    solve_seconds: float = 0.0
    notes: tuple[str, ...] = ()
    tradeoff: tuple[TradeoffRow, ...] = field(default=())
    first_goal: str = "spread"  # what the status speaks of: spread, line, neutral, transformer
    goal_value: float = math.nan  # the first goal's figure for the arrangement returned
    goal_bound: float = -math.inf  # proven lower bound on that figure over every arrangement
    goal_proven: bool = False  # the figure is within the goal's tolerance of the bound
    recommendation: Recommendation | None = None  # why this row of the trade-off was chosen
    # The panel as it stands plus its new circuits landed without moving any breaker (the
    # 0-move row of the trade-off table), and its figures; None when there is nothing new.
    with_additions_panel: Panel | None = None
    with_additions: Loads | None = None
    # At most this many breakers could move (a trade-off row, --max-moves): "the best possible"
    # means the best with that many moves. None when moves were not limited.
    move_budget: int | None = None

    @property
    def gap_va(self) -> float:
        return max(0.0, self.after.spread_va - self.lower_bound_spread_va)

    @property
    def new_circuits(self) -> tuple[str, ...]:
        """Ids of the new circuits: no space in the panel as it stands, one after."""
        where = {c.id: c.placed for c in self.after_panel.circuits}
        return tuple(c.id for c in self.before_panel.circuits if not c.placed and where.get(c.id))

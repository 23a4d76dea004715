"""The states of a panel a balancing run compares, named and explained the same way in every
output (terminal, workbook, PDF, JSON, web page).

A panel with new circuits has three: as it stands (its existing circuits only), with the
additions (the new circuits landed without moving any breaker: the trade-off table's 0-move
row) and after (the recommended arrangement). Without new circuits "before" and "after" say it.
The figures are the result's own (:class:`balancer.domain.result.BalanceResult`); nothing is
computed here.
"""

from __future__ import annotations

from dataclasses import dataclass

from balancer.domain.result import BalanceResult
from balancer.physics.analysis import Loads


@dataclass(frozen=True, slots=True)
class State:
    """One state: its short title (a column heading), what it is, and its figures."""

    key: str  # as_it_stands, with_additions, after (JSON names)
    title: str
    detail: str
    loads: Loads
    short: str = ""  # a few words for a chart legend or a bar heading

    @property
    def heading(self) -> str:
        return f"{self.title} ({self.short})" if self.short else self.title


def states(result: BalanceResult) -> list[State]:
    """The states to show, in order: two without new circuits, else three (two when the new
    circuits cannot land without a move)."""
    new = result.new_circuits
    moves = len(result.moves)
    if not new:
        return [
            State("as_it_stands", "Before", "the panel as it stands", result.before),
            State("after", "After", f"the recommended arrangement, {moves} move(s)", result.after),
        ]
    count = f"{len(new)} new circuit(s)"
    out = [
        State(
            "as_it_stands",
            "As it stands",
            f"existing circuits only; the {count} not yet in the panel are not counted",
            result.before,
            "existing circuits only",
        )
    ]
    if result.with_additions is not None:
        out.append(
            State(
                "with_additions",
                "With additions",
                f"as it stands plus the {count} landed without moving any breaker; this is "
                "the 0-move row of the trade-off table",
                result.with_additions,
                f"{len(new)} new landed, nothing moved: the 0-move row",
            )
        )
    out.append(
        State(
            "after",
            "After",
            f"the recommended arrangement: {moves} move(s) and the {count} installed"
            + ("" if result.with_additions is not None else "; they do not fit without a move"),
            result.after,
            f"recommended, {moves} move(s)",
        )
    )
    return out

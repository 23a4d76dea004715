"""Balancing a panel already in service: the load basis before the solve, the trade-off table,
the target imbalance and the work order after it, and their report sections."""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass, field, replace
from typing import Any

from balancer.basis import Basis, CircuitBasis, apply_basis, basis_details, basis_json, basis_lines
from balancer.panel import Panel
from balancer.result import BalanceOptions, BalanceResult
from balancer.tradeoff import (
    TargetAnswer,
    Tradeoff,
    count_moves,
    fewest_moves_to,
    tradeoff,
    tradeoff_json,
    tradeoff_lines,
)
from balancer.workorder import WorkOrder, work_order_for, work_order_json, work_order_lines

BalanceFn = Callable[[Panel, BalanceOptions], BalanceResult]


@dataclass(slots=True)
class FieldRun:
    """Choices for an existing panel, and what the run found.

    Mutable on purpose: one record is handed through read → solve → write and collects the
    sections the report prints afterwards.
    """

    basis: Basis = "nameplate"
    tradeoff: bool | None = None  # None: on for a placed panel that is not laid out afresh
    tradeoff_moves: int | None = None  # stop the table at this many moves
    target_imbalance_pct: float | None = None
    details: dict[str, CircuitBasis] = field(default_factory=dict)
    table: Tradeoff | None = None
    target: TargetAnswer | None = None
    order: WorkOrder | None = None

    def prepare(self, panel: Panel) -> Panel:
        """The panel on the chosen load basis (a new panel; the one read is unchanged)."""
        self.details = basis_details(panel, self.basis)
        new, _ = apply_basis(panel, self.basis)
        return new

    def finish(
        self, panel: Panel, result: BalanceResult, options: BalanceOptions, balance_fn: BalanceFn
    ) -> BalanceResult:
        """Add the trade-off rows, pick the fewest-moves arrangement for a target, and plan the
        work order. ``panel`` is the prepared panel the optimiser saw."""
        placed = any(c.placed for c in panel.circuits)
        wanted = self.tradeoff if self.tradeoff is not None else placed and not options.fresh
        if options.fresh:
            wanted = False
        if (wanted or self.target_imbalance_pct is not None) and not options.fresh:
            self.table = tradeoff(
                panel,
                options,
                max_moves=self.tradeoff_moves,
                balance_fn=balance_fn,
                unlimited=result,
            )
            result = self._fewest_moves(result, self.table, options.tolerance_va)
            if wanted:
                result = replace(result, tradeoff=self.table.rows)
        if self.target_imbalance_pct is not None and self.table is not None:
            self.target = fewest_moves_to(
                self.table,
                self.target_imbalance_pct,
                panel,
                tolerance_va=options.tolerance_va,
                balance_fn=balance_fn,
                options=options,
            )
            if self.target.result is not None:
                result = replace(self.target.result, tradeoff=result.tradeoff)
        if not options.fresh:
            self.order = work_order_for(result)
        return result

    @staticmethod
    def _fewest_moves(result: BalanceResult, table: Tradeoff, tolerance_va: float) -> BalanceResult:
        """The table's arrangement when it reaches the same spread with fewer moves (fewest
        moves is the next goal after the spread)."""
        moves = count_moves(result.before_panel, result.after_panel)
        for row, candidate in zip(table.rows, table.results, strict=True):
            if row.moves >= moves:
                break
            if candidate.after.spread_va <= result.after.spread_va + tolerance_va:
                note = (
                    f"{row.moves} move(s) reach the same spread as the unlimited run's {moves}; "
                    "that arrangement is used"
                )
                return replace(candidate, notes=(*candidate.notes, note))
        return result

    def to_json(self) -> dict[str, Any]:
        """The ``basis``, ``tradeoff``, ``target`` and ``work_order`` fields of the JSON report."""
        target = None
        if self.target is not None:
            target = {
                "target_pct": self.target.target_pct,
                "moves": self.target.moves,
                "proven": self.target.proven,
                "message": self.target.message,
            }
        return {
            "basis": basis_json(self.details, self.basis),
            "tradeoff": tradeoff_json(self.table) if self.table is not None else [],
            "target": target,
            "work_order": work_order_json(self.order) if self.order is not None else [],
        }

    def text_lines(self, show_work_order: bool = False) -> list[str]:
        """Terminal sections: the basis, the trade-off table, the target and the work order."""
        lines = basis_lines(self.details, self.basis)
        if self.basis == "nameplate" and not any(
            d.measured_va is not None for d in self.details.values()
        ):
            lines = lines[:1]
        if self.table is not None and self.table.rows:
            lines += ["", "Balance by number of moves:", *tradeoff_lines(self.table)]
        if self.target is not None:
            lines += ["", f"Target imbalance: {self.target.message}"]
        if self.order is not None and self.order.steps:
            if show_work_order:
                lines += ["", *work_order_lines(self.order)]
            else:
                lines += [
                    "",
                    f"Work order: {len(self.order.steps)} step(s), in the workbook's "
                    "'Work order' sheet (--work-order prints it here)",
                ]
        return lines

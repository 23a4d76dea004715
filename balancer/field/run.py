"""Balancing a panel already in service: the load basis before the solve, the trade-off table,
the target imbalance and the work order after it, and their report sections."""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass, field, replace
from typing import Any, Literal

from balancer.domain.panel import Panel
from balancer.domain.result import BalanceOptions, BalanceResult, Recommendation, SolveStatus
from balancer.errors import BalancerError
from balancer.field.basis import (
    Basis,
    CircuitBasis,
    apply_basis,
    basis_details,
    basis_json,
    basis_lines,
)
from balancer.field.tradeoff import (
    TargetAnswer,
    Tradeoff,
    count_moves,
    fewest_moves_to,
    tradeoff,
    tradeoff_json,
    tradeoff_lines,
)
from balancer.field.workorder import WorkOrder, work_order_for, work_order_json, work_order_lines
from balancer.optimize.goals import goal_for

BalanceFn = Callable[[Panel, BalanceOptions], BalanceResult]
NEUTRAL_RISE_A = 0.05  # a rise in neutral current smaller than this is not worth a word
DEFAULT_WITHIN_PCT = 1.0  # points of imbalance a placed panel may give up to save moves


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
    within_pct: float | None = None  # None: 1 point on a placed panel balanced for the spread
    details: dict[str, CircuitBasis] = field(default_factory=dict)
    table: Tradeoff | None = None
    target: TargetAnswer | None = None
    order: WorkOrder | None = None
    recommendation: Recommendation | None = None

    def prepare(self, panel: Panel) -> Panel:
        """The panel on the chosen load basis (a new panel; the one read is unchanged)."""
        self.details = basis_details(panel, self.basis)
        new, _ = apply_basis(panel, self.basis)
        return new

    def finish(
        self, panel: Panel, result: BalanceResult, options: BalanceOptions, balance_fn: BalanceFn
    ) -> BalanceResult:
        """Add the trade-off rows, choose the arrangement to recommend, and plan the work order.
        ``panel`` is the prepared panel the optimiser saw.

        The recommendation, in this order: the fewest moves reaching ``target_imbalance_pct``;
        on a placed panel balanced for the spread, the fewest moves within ``within_pct``
        points of the best imbalance; else the best figure of the chosen goal (with the fewest
        moves the table proves for it).
        """
        placed = any(c.placed for c in panel.circuits)
        within = self.margin(panel, options)
        # with a load series each row is a solve over the whole horizon: asked for, not default
        default = placed and not options.fresh and options.intervals is None
        wanted = self.tradeoff if self.tradeoff is not None else default
        needs_table = wanted or self.target_imbalance_pct is not None or within is not None
        if needs_table and not options.fresh and placed:
            self.table = tradeoff(
                panel,
                options,
                max_moves=self.tradeoff_moves,
                balance_fn=balance_fn,
                unlimited=result,
            )
            best = result
            result = self._fewest_moves(result, self.table, options)
            if self.target_imbalance_pct is not None:
                self.target = fewest_moves_to(
                    self.table,
                    self.target_imbalance_pct,
                    panel,
                    tolerance_va=options.tolerance_va,
                    balance_fn=balance_fn,
                    options=options,
                )
                if self.target.result is not None:
                    result = self._recommend(
                        self.target.result,
                        best,
                        "target",
                        self.target.message,
                        self.target.proven,
                    )
            elif within is not None:
                result = self._within(panel, result, best, within, options, balance_fn)
            if result.recommendation is None:
                goal = goal_for(result.first_goal)
                message = (
                    f"the best figure for {goal.phrase}: {goal.text(result.goal_value)} with "
                    f"{count_moves(panel, result.after_panel)} move(s) ({_proof(result)})"
                )
                result = self._recommend(result, best, "best", message, result.goal_proven)
            result = replace(
                result,
                tradeoff=self.table.rows if wanted else (),
                recommendation=_with_neutral(result, self.table),
            )
            self.recommendation = result.recommendation
        if not options.fresh and placed:
            result = self._with_additions(panel, result, options, balance_fn)
        if not options.fresh:
            self.order = work_order_for(result)
        return result

    def _with_additions(
        self, panel: Panel, result: BalanceResult, options: BalanceOptions, balance_fn: BalanceFn
    ) -> BalanceResult:
        """The result with the middle of its three states: the panel as it stands plus its new
        circuits landed without moving a breaker. That is the trade-off table's 0-move row when
        there is a table, else one solve with no move allowed."""
        if not any(not c.placed for c in panel.circuits):
            return result
        if self.table is not None and self.table.rows and self.table.rows[0].moves == 0:
            landed = self.table.results[0]
        else:
            try:
                landed = balance_fn(panel, replace(options, max_moves=0, target_imbalance_pct=None))
            except BalancerError:  # the new circuits do not fit without a move
                return result
        return replace(result, with_additions_panel=landed.after_panel, with_additions=landed.after)

    def margin(self, panel: Panel, options: BalanceOptions) -> float | None:
        """The imbalance margin that applies: ``within_pct`` (1 point by default) on a placed
        panel balanced for the spread with no move budget or target, else None."""
        placed = any(c.placed for c in panel.circuits)
        if options.fresh or not placed or options.objective != "spread":
            return None
        if self.target_imbalance_pct is not None or options.max_moves is not None:
            return None
        if self.within_pct is None:
            return None if self.tradeoff is False else DEFAULT_WITHIN_PCT
        return self.within_pct

    def _within(
        self,
        panel: Panel,
        result: BalanceResult,
        best: BalanceResult,
        within: float,
        options: BalanceOptions,
        balance_fn: BalanceFn,
    ) -> BalanceResult:
        """The fewest moves within ``within`` points of the best arrangement's imbalance."""
        assert self.table is not None
        limit = best.after.imbalance_pct + within
        if within <= 0:
            message = (
                f"the best balance whatever it costs in moves (--within-pct 0): "
                f"{best.after.imbalance_pct:.2f} % with {len(result.moves)} move(s)"
            )
            return self._recommend(result, best, "best", message, True, within)
        answer = fewest_moves_to(
            self.table,
            limit,
            panel,
            tolerance_va=options.tolerance_va,
            balance_fn=balance_fn,
            options=options,
        )
        chosen = answer.result if answer.result is not None else result
        moves = count_moves(panel, chosen.after_panel)
        proof = "fewer cannot (proven)" if answer.proven else "not proven that fewer cannot"
        message = (
            f"{moves} move(s) for {chosen.after.imbalance_pct:.2f} % imbalance: the fewest moves "
            f"within {within:g} point(s) of the best balance ({best.after.imbalance_pct:.2f} % "
            f"with {count_moves(panel, best.after_panel)} moves, {_proof(best)}); {proof}"
        )
        return self._recommend(chosen, best, "within", message, answer.proven, within)

    @staticmethod
    def _recommend(
        chosen: BalanceResult,
        best: BalanceResult,
        rule: Literal["best", "within", "target", "fewest-same"],
        message: str,
        proven: bool,
        within: float | None = None,
    ) -> BalanceResult:
        before = chosen.before_panel
        return replace(
            chosen,
            recommendation=Recommendation(
                rule=rule,
                message=message,
                moves=count_moves(before, chosen.after_panel),
                imbalance_pct=chosen.after.imbalance_pct,
                best_moves=count_moves(before, best.after_panel),
                best_imbalance_pct=best.after.imbalance_pct,
                within_pct=within,
                proven=proven,
            ),
        )

    def _fewest_moves(
        self, result: BalanceResult, table: Tradeoff, options: BalanceOptions
    ) -> BalanceResult:
        """The table's arrangement when it reaches the same figure of the chosen goal with
        fewer moves (fewest moves is the next goal after the first)."""
        moves = count_moves(result.before_panel, result.after_panel)
        goal = goal_for(result.first_goal)
        margin = goal.tolerance(result.goal_value, options)
        for index, (row, candidate) in enumerate(zip(table.rows, table.results, strict=True)):
            if row.moves < moves and candidate.goal_value <= result.goal_value + margin + 1e-9:
                # fewest when the budget below was proven not to reach it
                proven = index == 0 or table.rows[index - 1].status is SolveStatus.OPTIMAL
                message = (
                    f"{row.moves} move(s) reach the same figure for {goal.phrase} "
                    f"({goal.text(candidate.goal_value)}) as the unlimited run's {moves}; "
                    "that arrangement is used"
                )
                return self._recommend(candidate, result, "fewest-same", message, proven)
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
        chosen = self.recommendation
        recommendation = None
        if chosen is not None:
            recommendation = {
                "rule": chosen.rule,
                "message": chosen.message,
                "moves": chosen.moves,
                "imbalance_pct": round(chosen.imbalance_pct, 3),
                "within_pct": chosen.within_pct,
                "proven": chosen.proven,
                "best": {
                    "moves": chosen.best_moves,
                    "imbalance_pct": round(chosen.best_imbalance_pct, 3),
                },
                "neutral": chosen.neutral_message,
            }
        return {
            "recommendation": recommendation,
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
        chosen = self.recommendation
        if chosen is not None and chosen.rule != "target":
            lines += ["", f"Recommended: {chosen.message}"]
            if chosen.rule != "best" and chosen.moves != chosen.best_moves:
                lines.append(
                    f"  Best balance: {chosen.best_imbalance_pct:.2f} % with "
                    f"{chosen.best_moves} moves (--within-pct 0 chooses it)"
                )
        if chosen is not None and chosen.neutral_message:
            lines.append(f"  Note: {chosen.neutral_message}")
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


def _proof(result: BalanceResult) -> str:
    return "proven" if result.goal_proven else "not proven"


def _with_neutral(result: BalanceResult, table: Tradeoff) -> Recommendation | None:
    """The recommendation, with a word when it raises the neutral current (RMS) above the
    panel's present one, naming the best-balanced row that does not."""
    chosen = result.recommendation
    present = result.before.neutral_amps
    after = result.after.neutral_amps
    if chosen is None or after <= present + NEUTRAL_RISE_A:
        return chosen
    lower = [r for r in table.rows if r.neutral_rms_a <= present + NEUTRAL_RISE_A and r.moves]
    text = f"it raises the neutral current from {present:.1f} A to {after:.1f} A (RMS)"
    if lower:
        row = min(lower, key=lambda r: (r.imbalance_pct, r.moves))
        text += (
            f"; the {row.moves}-move row ({row.imbalance_pct:.2f} % imbalance) keeps it at "
            f"{row.neutral_rms_a:.1f} A"
        )
    else:
        text += "; no row with moves keeps it at or below the present figure"
    return replace(chosen, neutral_message=text)

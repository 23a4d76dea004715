"""Invented demo data for the output tests (a made-up tenant panel, not any real installation)."""

from __future__ import annotations

from balancer.domain.panel import Circuit, Panel
from balancer.domain.result import BalanceResult, Move, SolveStatus, TradeoffRow
from balancer.domain.systems import get_system
from balancer.physics.analysis import analyze

DEMO_NOTICE = "Demo data: invented panel for tests."


def demo_panel() -> Panel:
    """Panel 'DEMO-LP1' (demo data), 208Y/120, 24 spaces, with two unknown input columns."""
    system = get_system("208Y/120")

    def c(
        cid: str, desc: str, poles: int, va: float, first: int, trip: float, **kw: object
    ) -> Circuit:
        spaces = tuple(first + 2 * k for k in range(poles))
        extra = (("Room", kw.pop("room", None)), ("Tag", kw.pop("tag", None)))
        return Circuit(
            id=cid,
            description=desc,
            poles=poles,
            load_va=va,
            spaces=spaces,
            trip_a=trip,
            extra=extra,
            **kw,  # type: ignore[arg-type]
        )

    circuits = (
        c("1", "Demo lighting east", 1, 1800.0, 1, 20, room="101", tag=7),
        c("2", "Demo receptacles lobby", 1, 1440.0, 2, 20, room="102"),
        c("3", "Demo copier", 1, 1500.0, 3, 20, room="103", tag="X-1"),
        c("4", "Demo water heater", 2, 4500.0, 4, 30, room="104"),
        c("5", "Demo lighting west", 1, 2400.0, 15, 20, room="105", tag=3.5),
        c("6", "Demo rooftop unit", 3, 9000.0, 7, 40, room="roof"),
        c("7", "Demo receptacles office", 1, 900.0, 16, 20),
        c("8", "Demo spare", 1, 0.0, 13, 20, load_class="spare"),
        c("9", "Demo signage", 1, 600.0, 14, 20, room="front"),
        c("10", "Demo server rack", 1, 2000.0, 10, 20, room="106"),
    )
    return Panel(
        name="DEMO-LP1",
        system=system,
        spaces=24,
        circuits=circuits,
        bus_a=100.0,
        main_a=100.0,
        source="demo-lp1.xlsx",
        notices=(DEMO_NOTICE,),
    )


def demo_result(moves: bool = True) -> BalanceResult:
    """A hand-made balancing result for the demo panel: circuits 5 and 7 leave line B."""
    before_panel = demo_panel()
    new_spaces = {"5": (5,), "7": (8,)} if moves else {}
    after_circuits = tuple(
        c.moved_to(new_spaces[c.id]) if c.id in new_spaces else c for c in before_panel.circuits
    )
    after_panel = before_panel.with_circuits(after_circuits)
    made = []
    for c in before_panel.circuits:
        if c.id in new_spaces:
            made.append(
                Move(
                    circuit_id=c.id,
                    description=c.description,
                    from_spaces=c.spaces,
                    to_spaces=new_spaces[c.id],
                    from_lines=before_panel.lines_of(c),
                    to_lines=after_panel.lines_of(after_panel.circuit(c.id)),
                )
            )
    before = analyze(before_panel)
    after = analyze(after_panel)
    tradeoff = (
        TradeoffRow(
            0, before.spread_va, before.imbalance_pct, before.neutral_a, SolveStatus.OPTIMAL
        ),
        TradeoffRow(1, (before.spread_va + after.spread_va) / 2, 5.0, 9.0, SolveStatus.OPTIMAL),
        TradeoffRow(2, after.spread_va, after.imbalance_pct, after.neutral_a, SolveStatus.FEASIBLE),
    )
    return BalanceResult(
        before_panel=before_panel,
        after_panel=after_panel,
        before=before,
        after=after,
        status=SolveStatus.OPTIMAL if moves else SolveStatus.UNCHANGED,
        engine="highs",
        tolerance_va=1.0,
        lower_bound_spread_va=max(0.0, after.spread_va - 10.0),
        moves=tuple(made),
        solve_seconds=0.25,
        tradeoff=tradeoff if moves else (),
    )

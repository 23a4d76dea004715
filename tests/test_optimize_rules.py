"""Each panelboard rule the engine enforces, on small invented panels (demo data made up here).

Sources of the rules checked: multiwire members on different lines and opened together, so on
adjacent spaces of one side for one handle tie or multipole breaker (NEC 2023 210.4, F); no
1-pole load on the high leg, which NEC 408.3(E) puts on B (F); odd-left / even-right numbering
with rows taking the lines in turn (common practice, no published source); see
docs/references.md. Expected figures are computed by hand in the comments.
"""

from __future__ import annotations

import dataclasses

import pytest

from balancer.domain.panel import Circuit, Panel
from balancer.domain.result import BalanceOptions, SolveStatus
from balancer.domain.systems import get_system
from balancer.errors import InfeasibleError, SolverError
from balancer.optimize import balance
from balancer.optimize.model import build_layout, build_model
from balancer.optimize.verify import verify

WYE = get_system("208Y/120")
HIGH_LEG = get_system("240/120")
DELTA = get_system("480 delta")
SPLIT = get_system("120/240")


def demo_panel(system=WYE, spaces: int = 12, circuits: tuple[Circuit, ...] = ()) -> Panel:
    return Panel("demo", system, spaces, circuits)


def one_pole(cid: str, va: float, spaces: tuple[int, ...] = (), **kw: object) -> Circuit:
    return Circuit(cid, "demo load", 1, va, spaces=spaces, **kw)  # type: ignore[arg-type]


def legal_span(panel: Panel, circuit: Circuit) -> bool:
    g = panel.geometry
    return g.fits(circuit.spaces[0], circuit.poles) and tuple(circuit.spaces) == g.span(
        circuit.spaces[0], circuit.poles
    )


def test_locked_circuits_stay_and_others_balance() -> None:
    panel = demo_panel(
        circuits=(
            one_pole("L1", 1800, (1,), locked=True),
            one_pole("L2", 1800, (2,), locked=True),
            one_pole("a", 1200, (3,)),
            one_pole("b", 1200, (4,)),
            one_pole("c", 1800, (5,)),
            one_pole("d", 1800, (6,)),
        )
    )
    result = balance(panel, BalanceOptions())
    after = {c.id: c for c in result.after_panel.circuits}
    assert after["L1"].spaces == (1,)
    assert after["L2"].spaces == (2,)
    # A carries 3600 locked; B and C can take 3000 + 3000 only as 1800 + 1200 each: spread 600.
    assert result.after.spread_va == pytest.approx(600.0)
    assert result.status is SolveStatus.OPTIMAL
    assert result.after.spread_va < result.before.spread_va


def test_multiwire_group_lands_adjacent_on_distinct_lines() -> None:
    panel = demo_panel(
        circuits=(
            one_pole("m1", 1500, (1,), group="MW-1"),
            one_pole("m2", 1500, (7,), group="MW-1"),  # both on A and apart: must be fixed
            one_pole("m3", 1500, (2,), group="MW-1"),
            one_pole("x", 300, (4,)),
        )
    )
    result = balance(panel, BalanceOptions())
    spaces = sorted(s for c in result.after_panel.circuits if c.group for s in c.spaces)
    assert spaces == list(range(spaces[0], spaces[0] + 6, 2))  # s, s+2, s+4: one side, adjacent
    lines = {result.after_panel.geometry.line_of(s) for s in spaces}
    assert lines == {"A", "B", "C"}


def test_spans_are_legal_and_inside_the_panel() -> None:
    circuits = (
        Circuit("r1", "demo range", 2, 8000),
        Circuit("m1", "demo motor", 3, 9000),
        Circuit("m2", "demo motor", 3, 6000),
        one_pole("a", 1000),
        one_pole("b", 700),
    )
    panel = demo_panel(spaces=12, circuits=circuits)
    result = balance(panel, BalanceOptions(fresh=True))
    used: list[int] = []
    for c in result.after_panel.circuits:
        assert legal_span(result.after_panel, c), c
        assert max(c.spaces) <= panel.spaces
        lines = result.after_panel.lines_of(c)
        assert len(set(lines)) == len(lines)
        used += list(c.spaces)
    assert len(used) == len(set(used))


def test_more_poles_than_spaces_is_infeasible_and_says_so() -> None:
    circuits = tuple(one_pole(f"c{i}", 100) for i in range(7))
    with pytest.raises(InfeasibleError, match=r"7 poles but the panel has only 6 spaces"):
        balance(demo_panel(spaces=6, circuits=circuits), BalanceOptions())


def test_locked_conflict_names_both_circuits() -> None:
    circuits = (one_pole("p", 100, (3,), locked=True), one_pole("q", 100, (3,), locked=True))
    with pytest.raises(InfeasibleError, match=r"p and q both keep space 3"):
        balance(demo_panel(circuits=circuits), BalanceOptions())


def test_group_that_cannot_fit_is_named() -> None:
    # Every second row is locked, so no three adjacent free spaces exist on either side.
    locked = tuple(one_pole(f"k{s}", 100, (s,), locked=True) for s in (3, 4, 9, 10))
    group = tuple(one_pole(f"g{i}", 500, group="MW-7") for i in range(3))
    with pytest.raises(InfeasibleError, match=r"multiwire group 'MW-7' has no legal place"):
        balance(demo_panel(spaces=12, circuits=locked + group), BalanceOptions())


def test_high_leg_carries_no_line_to_neutral_load() -> None:
    singles = [one_pole(f"c{i}", 500 + 100 * i) for i in range(6)]
    circuits = (*singles, Circuit("ac", "demo condenser", 2, 3000))
    panel = demo_panel(HIGH_LEG, spaces=18, circuits=circuits)
    result = balance(panel, BalanceOptions(fresh=True))
    for c in result.after_panel.circuits:
        if c.poles == 1:
            assert result.after_panel.lines_of(c) != ("B",)
    assert result.after.phase_va["B"] == pytest.approx(1500.0)  # only half the 2-pole load


def test_single_pole_on_three_wire_delta_is_refused() -> None:
    panel = demo_panel(DELTA, circuits=(one_pole("x", 100),))
    with pytest.raises(InfeasibleError, match=r"needs a neutral"):
        balance(panel, BalanceOptions())


def test_three_pole_needs_three_phase() -> None:
    panel = demo_panel(SPLIT, circuits=(Circuit("m", "demo motor", 3, 5000),))
    with pytest.raises(InfeasibleError, match=r"3 poles cannot connect"):
        balance(panel, BalanceOptions())


def test_spares_keep_their_spaces_unless_asked() -> None:
    spare = Circuit("sp", "spare", 1, 0.0, spaces=(1,), load_class="spare")
    circuits = (spare, one_pole("a", 900, (3,)), one_pole("b", 900, (5,)), one_pole("c", 900))
    panel = demo_panel(circuits=circuits)
    kept = balance(panel, BalanceOptions())
    assert kept.after_panel.circuit("sp").spaces == (1,)
    moved = balance(panel, BalanceOptions(move_spares=True, fresh=True))
    assert moved.after_panel.circuit("sp").placed


def test_unplaced_circuits_are_placed_and_not_counted_as_moves() -> None:
    circuits = (one_pole("a", 1000, (1,)), one_pole("b", 1000, (3,)), one_pole("new", 1000))
    result = balance(demo_panel(circuits=circuits), BalanceOptions())
    assert result.after_panel.circuit("new").placed
    assert result.moves == ()
    assert result.after.spread_va == pytest.approx(0.0)


def test_check_rejects_an_illegal_arrangement() -> None:
    panel = demo_panel(circuits=(one_pole("a", 100, (1,), locked=True), one_pole("b", 100, (2,))))
    moved_lock = panel.with_circuits((panel.circuits[0].moved_to((3,)), panel.circuits[1]))
    with pytest.raises(SolverError, match=r"locked circuit a moved"):
        verify(panel, moved_lock, BalanceOptions())
    double = panel.with_circuits((panel.circuits[0], panel.circuits[1].moved_to((1,))))
    with pytest.raises(SolverError, match=r"space 1 holds both a and b"):
        verify(panel, double, BalanceOptions())
    with pytest.raises(SolverError, match=r"solver claimed"):
        verify(panel, panel, BalanceOptions(), {"A": 999.0, "B": 100.0, "C": 0.0})


def test_model_is_built_without_a_solver_and_named_by_index() -> None:
    circuits = (one_pole("a-1 [x]", 100, (1,)), Circuit("b/2", "demo", 2, 400, spaces=(3, 5)))
    panel = demo_panel(circuits=circuits)
    layout = build_layout(panel, BalanceOptions())
    model = build_model(layout, "line", BalanceOptions())
    names = {v.name for v in model.prob.variables()}
    assert {"y_0_0", "y_1_0", "t_max", "t_min"} <= names
    assert model.prob.get_constraint_by_name("one_0") is not None
    assert model.prob.get_constraint_by_name("room_0") is not None
    assert model.prob.status == 0  # LpStatusNotSolved: building ran no solver
    # The 2-pole breaker has three line pairs (AB, BC, CA) on a three-phase panel.
    assert len(model.options[1]) == 3


def test_json_stdout_stays_clean(capfd: pytest.CaptureFixture[str]) -> None:
    circuits = tuple(one_pole(f"c{i}", 100 * (i + 1)) for i in range(5))
    balance(demo_panel(circuits=circuits), BalanceOptions(fresh=True))
    out, _ = capfd.readouterr()
    assert out == ""


def test_every_circuit_locked_is_unchanged() -> None:
    circuits = (one_pole("a", 100, (1,), locked=True), one_pole("b", 300, (3,), locked=True))
    result = balance(demo_panel(circuits=circuits), BalanceOptions())
    assert result.status is SolveStatus.UNCHANGED
    assert result.after_panel == result.before_panel


def test_input_panel_is_not_mutated() -> None:
    circuits = (one_pole("a", 100, (1,)), one_pole("b", 100, (3,)), one_pole("c", 500, (5,)))
    panel = demo_panel(circuits=circuits)
    copy = dataclasses.replace(panel)
    balance(panel, BalanceOptions(fresh=True))
    assert panel == copy

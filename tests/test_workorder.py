"""Work orders: steps replay onto the original layout without double-booking a space and end in
the requested layout, through free spaces or a temporary space when the panel is full."""

from __future__ import annotations

import random
from dataclasses import replace

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from balancer.domain.panel import Circuit, Panel
from balancer.domain.systems import get_system
from balancer.field.workorder import (
    STEP_HEADER,
    Step,
    StepItem,
    WorkOrder,
    replay,
    work_order,
    work_order_json,
    work_order_lines,
    work_order_rows,
)
from balancer.physics.analysis import analyze

ATOL_A = 1e-9


def _panel(spaces: int, *circuits: Circuit, system: str = "208Y/120") -> Panel:
    return Panel("LP-1", get_system(system), spaces, tuple(circuits))


def _after(panel: Panel, new_spaces: dict[str, tuple[int, ...]]) -> Panel:
    return panel.with_circuits(
        [c.moved_to(new_spaces[c.id]) if c.id in new_spaces else c for c in panel.circuits]
    )


def _target(panel: Panel) -> dict[str, tuple[int, ...]]:
    return {c.id: c.spaces for c in panel.circuits}


def test_swap_goes_through_a_free_space() -> None:
    before = _panel(
        6, Circuit("1", "Lights", 1, 1000.0, (1,)), Circuit("2", "Fans", 1, 500.0, (3,))
    )
    after = _after(before, {"1": (3,), "2": (1,)})
    order = work_order(before, after)
    assert [s.action for s in order.steps] == ["park", "move", "move"]
    assert replay(before, order) == _target(after)
    assert not order.temporary_space_needed
    # The breaker parked out of the way stays on its own line (space 2 is line A like space 1).
    parked = order.steps[0].items[0]
    assert parked.from_lines == parked.to_lines == ("A",)


def test_full_panel_rotation_needs_a_temporary_space() -> None:
    circuits = [Circuit(str(i), f"load {i}", 1, 100.0 * i, (i,)) for i in range(1, 7)]
    before = _panel(6, *circuits)
    after = _after(before, {str(i): ((i % 6) + 1,) for i in range(1, 7)})
    order = work_order(before, after)
    assert order.temporary_space_needed
    assert order.steps[0].action == "set aside"
    assert order.steps[-1].action == "reinstall"
    assert replay(before, order) == _target(after)
    assert "A temporary space is needed" in "\n".join(work_order_lines(order))


def test_three_way_rotation_with_one_free_space() -> None:
    before = _panel(
        8,
        Circuit("a", "A load", 1, 900.0, (1,)),
        Circuit("b", "B load", 1, 800.0, (3,)),
        Circuit("c", "C load", 1, 700.0, (5,)),
        Circuit("x", "Locked", 1, 50.0, (2,), locked=True),
        Circuit("y", "Other", 1, 60.0, (4,)),
        Circuit("z", "Other", 1, 70.0, (6,)),
        Circuit("w", "Other", 1, 80.0, (8,)),
    )
    after = _after(before, {"a": (3,), "b": (5,), "c": (1,)})
    order = work_order(before, after)
    assert replay(before, order) == _target(after)
    assert sum(1 for s in order.steps if s.action == "park") == 1
    assert len(order.steps) == 4
    assert not order.temporary_space_needed


def test_two_pole_breaker_sliding_over_its_own_space_is_one_step() -> None:
    before = _panel(8, Circuit("wh", "Water heater", 2, 4500.0, (1, 3)))
    after = _after(before, {"wh": (3, 5)})
    order = work_order(before, after)
    assert [s.action for s in order.steps] == ["move"]
    item = order.steps[0].items[0]
    assert (item.from_spaces, item.to_spaces) == ((1, 3), (3, 5))
    assert (item.from_lines, item.to_lines) == (("A", "B"), ("B", "C"))


def test_multiwire_group_moves_as_one_step() -> None:
    before = _panel(
        12,
        Circuit("7", "Workstations 1", 1, 1440.0, (1,), group="W1"),
        Circuit("9", "Workstations 2", 1, 1260.0, (3,), group="W1"),
        Circuit("11", "Workstations 3", 1, 1620.0, (5,), group="W1"),
        Circuit("2", "Copier", 1, 1500.0, (7,)),
    )
    after = _after(before, {"7": (7,), "9": (9,), "11": (11,), "2": (1,)})
    order = work_order(before, after)
    group_steps = [s for s in order.steps if s.group == "W1"]
    assert len(group_steps) == 1
    assert {i.circuit_id for i in group_steps[0].items} == {"7", "9", "11"}
    assert "handle tie" in group_steps[0].remark
    assert replay(before, order) == _target(after)
    # Lines of the group stay distinct after the work.
    lines = {after.lines_of(after.circuit(cid)) for cid in ("7", "9", "11")}
    assert len(lines) == 3


def test_group_parked_keeps_each_member_on_its_line() -> None:
    # Group and a 2-pole load trade places: the group parks on the other side, same rows.
    before = _panel(
        12,
        Circuit("m1", "Receptacles 1", 1, 900.0, (1,), group="M"),
        Circuit("m2", "Receptacles 2", 1, 900.0, (3,), group="M"),
        Circuit("h", "Heater", 2, 3000.0, (5, 7)),
    )
    after = _after(before, {"m1": (5,), "m2": (7,), "h": (1, 3)})
    order = work_order(before, after)
    parks = [s for s in order.steps if s.action == "park"]
    assert len(parks) == 1
    for item in parks[0].items:
        assert item.from_lines == item.to_lines
    assert replay(before, order) == _target(after)


def test_new_circuit_is_installed() -> None:
    before = _panel(
        6, Circuit("1", "Lights", 1, 1000.0, (1,)), Circuit("n", "New EV", 2, 7000.0, ())
    )
    after = _after(before, {"n": (3, 5)})
    order = work_order(before, after)
    assert [s.action for s in order.steps] == ["install"]
    assert order.steps[0].items[0].from_spaces == ()
    assert replay(before, order) == _target(after)


def test_notes_and_extra_columns_reach_the_steps() -> None:
    circuit = Circuit(
        "14",
        "Water heater",
        2,
        4500.0,
        (1, 3),
        notes="breaker is bolt-on",
        extra=(("Wire", "10 AWG Cu"), ("Room", None)),
    )
    before = _panel(8, circuit)
    order = work_order(before, _after(before, {"14": (5, 7)}))
    assert order.steps[0].items[0].notes == "breaker is bolt-on; Wire: 10 AWG Cu"
    rows = work_order_rows(order)
    assert list(STEP_HEADER) in rows
    step_row = rows[rows.index(list(STEP_HEADER)) + 1]
    assert step_row[:8] == [1, "Move breaker", "14", "Water heater", "1, 3", "A-B", "5, 7", "C-A"]
    assert "10 AWG Cu" in step_row[STEP_HEADER.index("Notes")]


def test_expected_currents_are_those_of_the_new_layout() -> None:
    before = _panel(6, Circuit("1", "a", 1, 1200.0, (1,)), Circuit("2", "b", 1, 600.0, (2,)))
    after = _after(before, {"2": (3,)})
    order = work_order(before, after)
    loads = analyze(after)
    assert order.expected_line_a == pytest.approx(loads.line_a, abs=ATOL_A)
    assert order.expected_neutral_a == pytest.approx(loads.neutral_a, abs=ATOL_A)
    # 1200 VA / 120 V = 10 A on A, 600 VA / 120 V = 5 A on B; the neutral of two unity-PF
    # currents 120° apart is √(10² + 5² − 10·5) = 8.66 A (C from the phasor sum, the closed
    # form in docs/references.md).
    assert order.expected_line_a["A"] == pytest.approx(10.0)
    assert order.expected_neutral_a == pytest.approx(75**0.5)


def test_cautions_are_in_every_rendering() -> None:
    before = _panel(6, Circuit("1", "a", 1, 1200.0, (1,)))
    order = work_order(before, _after(before, {"1": (3,)}))
    text = "\n".join(work_order_lines(order))
    for phrase in ("qualified persons", "De-energise", "meter", "210.4", "408.4", "jurisdiction"):
        assert phrase in text
    rows = work_order_rows(order)
    assert sum(1 for r in rows if r and r[0] == "Caution") == len(order.cautions)


def test_json_lists_steps_with_circuits() -> None:
    before = _panel(6, Circuit("1", "a", 1, 1200.0, (1,)), Circuit("2", "b", 1, 600.0, (3,)))
    order = work_order(before, _after(before, {"1": (3,), "2": (1,)}))
    data = work_order_json(order)
    assert [d["step"] for d in data] == [1, 2, 3]
    assert data[0]["circuits"][0]["from_spaces"] == [1]
    assert data[-1]["circuits"][0] == {
        "id": "1",
        "description": "a",
        "from_spaces": list(order.steps[-1].items[0].from_spaces),
        "from_lines": list(order.steps[-1].items[0].from_lines),
        "to_spaces": [3],
        "to_lines": ["B"],
        "notes": "",
        "breaker": "1-pole, rating not given",
        "conductor": None,
        "critical": None,
        "details": [],
    }


def test_no_moves_gives_no_steps() -> None:
    before = _panel(6, Circuit("1", "a", 1, 1200.0, (1,)))
    order = work_order(before, before)
    assert order.steps == ()
    assert "No breaker changes spaces." in work_order_lines(order)


def test_replay_refuses_a_double_booking() -> None:
    before = _panel(6, Circuit("1", "a", 1, 1200.0, (1,)), Circuit("2", "b", 1, 600.0, (3,)))
    bad = WorkOrder(
        "LP-1",
        (Step(1, "move", (StepItem("1", "a", (1,), ("A",), (3,), ("B",)),)),),
        {},
        0.0,
        False,
    )
    with pytest.raises(ValueError, match="space 3 is still held by circuit 2"):
        replay(before, bad)
    wrong_start = replace(
        bad, steps=(Step(1, "move", (StepItem("1", "a", (5,), ("C",), (2,), ("A",)),)),)
    )
    with pytest.raises(ValueError, match="not in spaces 5"):
        replay(before, wrong_start)


def test_mismatched_layouts_are_refused() -> None:
    before = _panel(6, Circuit("1", "a", 1, 1200.0, (1,)))
    other = _panel(6, Circuit("9", "z", 1, 1200.0, (1,)))
    with pytest.raises(ValueError, match="different circuits"):
        work_order(before, other)
    clash = _panel(6, Circuit("1", "a", 1, 1200.0, (1,)), Circuit("2", "b", 1, 1.0, (1,)))
    with pytest.raises(ValueError, match="space 1 holds both"):
        work_order(clash, clash)


def _random_layout(
    rng: random.Random, panel: Panel, poles: list[int], fixed: dict[int, tuple[int, ...]]
) -> list[tuple[int, ...]] | None:
    """A random legal placement of breakers with these pole counts (fixed ones stay put)."""
    taken = {s for spaces in fixed.values() for s in spaces}
    out: list[tuple[int, ...]] = []
    for index, count in enumerate(poles):
        if index in fixed:
            out.append(fixed[index])
            continue
        starts = [
            s
            for s in range(1, panel.spaces + 1)
            if panel.geometry.fits(s, count) and not taken & set(panel.geometry.span(s, count))
        ]
        if not starts:
            return None
        span = panel.geometry.span(rng.choice(starts), count)
        taken |= set(span)
        out.append(span)
    return out


@settings(max_examples=150, deadline=None)
@given(
    seed=st.integers(0, 2**32 - 1),
    spaces=st.sampled_from([6, 8, 12, 18]),
    fill=st.floats(0.4, 1.0),
)
def test_random_layouts_replay_without_double_booking(seed: int, spaces: int, fill: float) -> None:
    rng = random.Random(seed)
    poles: list[int] = []
    while sum(poles) < fill * spaces:
        poles.append(rng.choice([1, 1, 1, 2, 3]))
    if sum(poles) > spaces:
        poles.pop()
    shell = _panel(spaces)
    locked = {i for i in range(len(poles)) if rng.random() < 0.15}
    start = _random_layout(rng, shell, poles, {})
    if start is None:
        return
    end = _random_layout(rng, shell, poles, {i: start[i] for i in locked})
    if end is None:
        return
    # Some breakers are new: not in the panel before, installed by the work order.
    for i in range(len(poles)):
        if i not in locked and rng.random() < 0.15:
            start[i] = ()
    circuits = [
        Circuit(str(i), f"load {i}", p, 100.0 * (i + 1), start[i], locked=i in locked)
        for i, p in enumerate(poles)
    ]
    before = shell.with_circuits(circuits)
    after = _after(before, {str(i): end[i] for i in range(len(poles))})
    order = work_order(before, after)
    assert replay(before, order) == _target(after)
    moved = sum(1 for i in range(len(poles)) if start[i] != end[i])
    assert order.moved_circuits == moved
    # Each moved breaker takes one final step and at most two steps out of the way (once onto a
    # space another breaker still needs, then once to a space nobody needs or set aside).
    assert moved <= len(order.steps) <= 3 * moved
    for step in order.steps:
        for item in step.items:
            assert item.circuit_id not in {str(i) for i in locked}
    if order.temporary_space_needed:
        assert any(s.action == "set aside" for s in order.steps)


def test_one_pole_breaker_never_parks_on_the_high_leg() -> None:
    # 240/120 V high-leg delta: B is the high leg (NEC 2023 110.15, 408.3(E), F); spaces 3 and 4 are
    # the only free ones, so the swap of x and y must set one breaker aside instead.
    before = _panel(
        6,
        Circuit("x", "Lights", 1, 900.0, (1,)),
        Circuit("y", "Receptacles", 1, 700.0, (5,)),
        Circuit("z", "Fan", 1, 300.0, (2,)),
        Circuit("w", "Sign", 1, 200.0, (6,)),
        system="240/120",
    )
    after = _after(before, {"x": (5,), "y": (1,)})
    order = work_order(before, after)
    assert order.temporary_space_needed
    for step in order.steps:
        for item in step.items:
            assert "B" not in item.to_lines
    assert replay(before, order) == _target(after)


def test_new_breakers_wait_until_the_swaps_are_done() -> None:
    # One free space (2): the swap of x and y needs it before the new breaker takes it.
    before = _panel(
        4,
        Circuit("x", "Lights", 1, 900.0, (1,)),
        Circuit("y", "Receptacles", 1, 700.0, (3,)),
        Circuit("z", "Fan", 1, 300.0, (4,)),
        Circuit("n", "New sign", 1, 200.0, ()),
    )
    after = _after(before, {"x": (3,), "y": (1,), "n": (2,)})
    order = work_order(before, after)
    assert not order.temporary_space_needed
    assert [s.action for s in order.steps] == ["park", "move", "move", "install"]
    assert replay(before, order) == _target(after)

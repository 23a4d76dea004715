"""What the work order tells a person at the panel: a new breaker's poles, rating and conductor
(the schedule's, else the size the branch-circuit check implies, said so), a multiwire branch
circuit named with its handle tie (terminal and PDF alike), and loads that must not lose power
(the Critical column or the words of the description) asked for temporary power or a scheduled
outage first."""

from __future__ import annotations

from pathlib import Path

import pypdf
import pytest

from balancer.code.demand import branch_conductor
from balancer.code.feeder import parse_conductor
from balancer.domain.panel import Circuit, Panel
from balancer.domain.systems import get_system
from balancer.errors import ScheduleError
from balancer.field.critical import critical_reason
from balancer.field.workorder import (
    STEP_HEADER,
    work_order,
    work_order_json,
    work_order_lines,
    work_order_rows,
)
from balancer.io.pdf import write_pdf
from balancer.io.reader import PanelOverrides, read_schedule
from balancer.physics.analysis import analyze
from balancer.report.safety import MUST_STAY_ON_STEP


def _panel(spaces: int, *circuits: Circuit) -> Panel:
    return Panel("LP-1", get_system("208Y/120"), spaces, tuple(circuits))


def _after(panel: Panel, spaces: dict[str, tuple[int, ...]]) -> Panel:
    return panel.with_circuits(
        [c.moved_to(spaces[c.id]) if c.id in spaces else c for c in panel.circuits]
    )


def _item(order: object, circuit_id: str) -> object:
    return next(i for s in order.steps for i in s.items if i.circuit_id == circuit_id)  # type: ignore[attr-defined]


# --- new breakers -----------------------------------------------------------------------------


def test_new_breaker_with_the_schedules_conductor() -> None:
    ev = Circuit(
        "R9", "EV charger (new)", 2, 6656.0, (), trip_a=40.0, load_class="ev charger",
        conductor=parse_conductor("8 AWG Cu"),
    )  # fmt: skip
    before = _panel(12, Circuit("1", "Lights", 1, 900.0, (1,)), ev)
    order = work_order(before, _after(before, {"R9": (4, 6)}))
    item = _item(order, "R9")
    assert item.breaker == "2-pole, 40 A"  # type: ignore[attr-defined]
    assert item.conductor == "8 AWG Cu (from the schedule)"  # type: ignore[attr-defined]
    text = "\n".join(work_order_lines(order))
    assert "new breaker: 2-pole, 40 A; conductor 8 AWG Cu (from the schedule)" in text
    rows = work_order_rows(order)
    row = rows[rows.index(list(STEP_HEADER)) + 1]
    assert row[STEP_HEADER.index("Breaker")] == "2-pole, 40 A"
    assert row[STEP_HEADER.index("Conductor (new breaker)")].startswith("8 AWG Cu")
    data = work_order_json(order)[0]["circuits"][0]
    assert data["breaker"] == "2-pole, 40 A"
    assert data["conductor"].startswith("8 AWG Cu")


@pytest.mark.parametrize(
    ("poles", "trip_a", "load_va", "size"),
    [
        # 1500 VA / 120 V = 12.5 A on 20 A: 12 AWG Cu carries 20 A in the 60 °C column
        # (Table 310.16, 110.14(C)(1)(a)) and is limited to 20 A (240.4(D)); 14 AWG only 15 A.
        (1, 20.0, 1500.0, "12"),
        # 3000 VA / 208 V = 14.4 A on a 30 A breaker: 14 AWG carries it but 240.4(D) limits
        # 14 AWG Cu to 15 A and 12 AWG to 20 A, so 10 AWG (30 A) is the smallest.
        (2, 30.0, 3000.0, "10"),
        # 9000 VA / 208 V = 43.3 A on 50 A: 8 AWG Cu is 40 A at 60 °C, 6 AWG 55 A.
        (2, 50.0, 9000.0, "6"),
    ],
)
def test_implied_conductor_follows_table_310_16_and_240_4_d(
    poles: int, trip_a: float, load_va: float, size: str
) -> None:
    """Values of NEC 2023 Table 310.16 (Cu, 60 °C column) and 240.4(D), as copied with their
    source in docs/references.md."""
    circuit = Circuit("R5", "Heater (new)", poles, load_va, (), trip_a=trip_a, load_class="other")
    panel = _panel(12, circuit)
    implied = branch_conductor(panel, circuit)
    assert implied is not None
    assert implied.conductor.size == size
    assert implied.conductor.material == "cu"
    order = work_order(panel, _after(panel, {"R5": (1,) if poles == 1 else (1, 3)}))
    conductor = _item(order, "R5").conductor  # type: ignore[attr-defined]
    assert conductor.startswith(f"{size} AWG Cu (implied by the branch-circuit check")
    assert "not in the schedule" in conductor


def test_a_breaker_that_only_moves_gets_no_conductor_line() -> None:
    before = _panel(6, Circuit("1", "Lights", 1, 900.0, (1,), trip_a=20.0))
    item = _item(work_order(before, _after(before, {"1": (3,)})), "1")
    assert item.conductor == ""
    assert item.details == []


# --- loads that must not lose power -----------------------------------------------------------


@pytest.mark.parametrize(
    ("description", "notes", "critical", "why"),
    [
        ("Fire alarm control panel", "", None, "fire alarm"),
        ("Walk-in freezer", "", None, "freezer"),
        ("Vaccine refrigerator", "", None, "medical refrigeration"),
        ("Corridor lights", "egress path", None, "egress lighting"),
        ("Server closet", "", None, "server / IT"),
        ("Sump pump", "", None, "sump pump"),
        ("Refrigerator", "", None, None),  # a kitchen refrigerator is not singled out
        ("Copier", "", True, "marked critical"),
        ("Fire alarm booster", "", False, None),  # the column decides when filled in
    ],
)
def test_critical_reason(
    description: str, notes: str, critical: bool | None, why: str | None
) -> None:
    circuit = Circuit("1", description, 1, 500.0, (1,), notes=notes, critical=critical)
    assert critical_reason(circuit) == why


def test_critical_step_asks_for_temporary_power_first() -> None:
    before = _panel(
        8,
        Circuit("1", "Medication refrigerator", 1, 800.0, (1,), critical=True),
        Circuit("2", "Copier", 1, 1500.0, (3,)),
    )
    order = work_order(before, _after(before, {"1": (5,), "2": (7,)}))
    critical = _item(order, "1")
    plain = _item(order, "2")
    step = MUST_STAY_ON_STEP.format(why="marked critical")
    assert critical.details == [step]  # type: ignore[attr-defined]
    assert "temporary power" in step
    assert "schedule the outage" in step
    assert plain.details == []  # type: ignore[attr-defined]
    # a caution line names the circuit, ahead of the others
    assert "circuit 1" in order.cautions[0]
    assert "temporary power" in order.cautions[0]
    text = "\n".join(work_order_lines(order))
    assert step in text
    rows = work_order_rows(order)
    notes = [r[STEP_HEADER.index("Notes")] for r in rows if len(r) == len(STEP_HEADER)]
    assert any(step in str(n) for n in notes)


def test_critical_column_is_read(tmp_path: Path) -> None:
    path = tmp_path / "c.csv"
    path.write_text(
        "Space,Description,Load (VA),Critical\n1,Alarm,300,yes\n2,Lights,600,no\n3,Fan,200,\n",
        encoding="utf-8",
    )
    panel = read_schedule(path, PanelOverrides(system="208Y/120", spaces=6))
    assert [c.critical for c in panel.circuits] == [True, False, None]
    path.write_text("Space,Description,Load (VA),Critical\n1,Alarm,300,maybe\n", encoding="utf-8")
    with pytest.raises(ScheduleError) as error:
        read_schedule(path, PanelOverrides(system="208Y/120", spaces=6))
    assert "D2" in str(error.value)


# --- multiwire branch circuits ----------------------------------------------------------------


def _mwbc_order() -> tuple[Panel, object]:
    before = _panel(
        12,
        Circuit("1", "Exam receptacles", 1, 1200.0, (1,), group="E1"),
        Circuit("3", "Exam receptacles", 1, 1000.0, (3,), group="E1"),
        Circuit("2", "Lights", 1, 400.0, (2,)),
    )
    after = _after(before, {"1": (7,), "3": (9,)})
    return after, work_order(before, after)


def test_mwbc_named_with_its_handle_tie_in_the_terminal() -> None:
    _, order = _mwbc_order()
    text = " ".join(work_order_lines(order))  # type: ignore[arg-type]
    assert "Multiwire branch circuit E1 (circuits 1, 3, one shared neutral)" in text
    assert "handle-tie" in text
    assert "210.4(B)" in text


def test_mwbc_handle_tie_is_printed_in_the_pdf(tmp_path: Path) -> None:
    after, order = _mwbc_order()
    pdf = write_pdf(tmp_path / "wo.pdf", after, analyze(after), order=order)  # type: ignore[arg-type]
    text = " ".join(" ".join(page.extract_text().split()) for page in pypdf.PdfReader(pdf).pages)
    assert "Multiwire branch circuit E1 (circuits 1, 3, one shared neutral)" in text
    assert "handle-tie them or use one multipole breaker" in text
    assert "NEC 210.4(B)" in text

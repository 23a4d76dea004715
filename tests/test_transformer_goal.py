"""Balancing for the feeding transformer's heaviest winding.

The loading terms must reproduce :func:`balancer.physics.transformer.loading_pct` exactly, and the
optimiser's proven heaviest winding must match an exhaustive search over every line choice of
a small panel (invented test data). The polygon that linearises |I| may leave the answer at
most POLYGON_ERROR above the true least loading, never below it (it is a real arrangement).
"""

from __future__ import annotations

import cmath
import itertools
import random
from pathlib import Path

import pytest

from balancer.building.files import read_building
from balancer.building.tree import Feed, balance_building, make_building, panel_options, roll_up
from balancer.domain.panel import Circuit, Panel
from balancer.domain.result import BalanceOptions, SolveStatus
from balancer.domain.systems import get_system
from balancer.optimize import balance
from balancer.optimize.goals import POLYGON_ERROR
from balancer.physics.phasors import circuit_line_currents
from balancer.physics.transformer import loading_pct, loading_terms, make_transformer

ROOT = Path(__file__).resolve().parents[1]
DEMO_BOOK = ROOT / "sample_schedules" / "building-demo" / "building-demo.xlsx"

BANKS = [
    ("480Y/277", "208Y/120", "delta-wye"),
    ("480Y/277", "208Y/120", "wye-wye"),
    ("480Y/277", "120/240", "single-phase"),
    ("480 delta", "240/120", "delta-delta"),
    ("480Y/277", "240/120", "wye-delta"),
    ("480 delta", "240/120", "open-delta"),
    ("480 delta", "240 delta", "delta-delta"),
]


@pytest.mark.parametrize(("primary", "secondary", "connection"), BANKS)
def test_loading_terms_reproduce_the_loading(primary: str, secondary: str, connection: str) -> None:
    unit = make_transformer("T", 30, get_system(primary), get_system(secondary), connection)
    terms = loading_terms(unit)
    lines = unit.secondary.lines
    rng = random.Random(7)
    for _ in range(100):
        currents = {k: cmath.rect(rng.uniform(0, 120), rng.uniform(-3.2, 3.2)) for k in lines}
        if not unit.secondary.neutral:  # a 3-wire secondary: the line currents sum to zero
            currents[lines[-1]] = -sum(v for k, v in currents.items() if k != lines[-1])
        expected = loading_pct(unit, currents)
        assert max(abs(t.value(currents)) for t in terms) == pytest.approx(expected, rel=1e-12)


def _one(space: int, va: float, pf: float = 1.0) -> Circuit:
    return Circuit(str(space), f"load {space}", 1, va, (space,), power_factor=pf)


def _two(space: int, va: float) -> Circuit:
    return Circuit(str(space), f"load {space}", 2, va, (space, space + 2))


def _shop() -> Panel:
    """240/120 V high leg on B: 1-pole loads on A or C only (rows: 1-2 A, 3-4 B, 5-6 C)."""
    return Panel(
        "W",
        get_system("240/120"),
        24,
        (
            _one(2, 1440.0),
            _one(6, 1080.0),
            _one(8, 1200.0),
            _one(11, 1200.0, 0.8),
            Circuit("1", "compressor", 3, 7500.0, (1, 3, 5), power_factor=0.85),
            _two(7, 9600.0),
            _two(14, 2000.0),
        ),
    )


def _currents(panel: Panel) -> dict[str, complex]:
    out = dict.fromkeys(panel.system.lines, 0j)
    for c in panel.circuits:
        lines = panel.lines_of(c)
        for k, i in circuit_line_currents(panel.system, lines, c.load_va, c.power_factor).items():
            out[k] += i
    return out


def _least_loading_by_exhaustion(panel: Panel, bank_terms: tuple) -> float:
    system = panel.system
    choices = []
    for c in panel.circuits:
        if c.poles == 1:
            choices.append([("A",), ("C",)])  # B is the high leg
        elif c.poles == 2:
            choices.append([("A", "B"), ("B", "C"), ("C", "A")])
        else:
            choices.append([("A", "B", "C")])
    best = float("inf")
    for pick in itertools.product(*choices):
        currents = dict.fromkeys(system.lines, 0j)
        for c, lines in zip(panel.circuits, pick, strict=True):
            for k, i in circuit_line_currents(system, lines, c.load_va, c.power_factor).items():
                currents[k] += i
        best = min(best, max(abs(t.value(currents)) for t in bank_terms))
    return best


def test_heaviest_winding_is_proven_against_every_line_choice() -> None:
    panel = _shop()
    bank = make_transformer("T3", 30, get_system("480 delta"), panel.system, "delta-delta")
    terms = loading_terms(bank)
    least = _least_loading_by_exhaustion(panel, terms)
    options = BalanceOptions(
        fresh=True, time_limit_s=30, objective="transformer", transformer_terms=terms
    )
    result = balance(panel, options)
    assert result.status is SolveStatus.OPTIMAL
    after = loading_pct(bank, _currents(result.after_panel))
    assert least - 1e-9 <= after <= least * (1 + POLYGON_ERROR) + 1e-9
    assert any(n.startswith("supply transformer's heaviest winding") for n in result.notes)
    assert result.first_goal == "transformer"
    assert result.goal_proven
    assert result.goal_value == pytest.approx(after, rel=1e-9)
    # the plain spread goal does worse on the winding here (the 240 V welder decides it)
    spread_first = balance(panel, BalanceOptions(fresh=True, time_limit_s=30))
    assert loading_pct(bank, _currents(spread_first.after_panel)) > after + 1.0


def test_delta_secondaries_are_balanced_for_their_windings_wye_ones_for_spread() -> None:
    building = read_building(DEMO_BOOK)
    base = BalanceOptions(time_limit_s=20)
    assert panel_options(building, "W1", base).objective == "transformer"  # delta-delta
    assert panel_options(building, "L1", base).objective == "spread"  # delta-wye
    assert panel_options(building, "H1", base).objective == "spread"  # no transformer
    result = balance_building(building, base)
    assert result.outcomes["W1"].first_goal == "transformer"
    assert result.outcomes["W1"].status is SolveStatus.OPTIMAL
    found = result.before_figures.feeders["W1"].transformer_loading_pct
    now = result.after_figures.feeders["W1"].transformer_loading_pct
    assert found is not None
    assert now is not None
    assert found > 100.0 > now  # the demo's workshop bank starts overloaded


def test_three_wire_delta_secondary_goal_in_a_tree() -> None:
    """A 240 V 3-wire delta panel behind a delta-delta bank: no neutral, 2- and 3-pole loads."""
    p480 = get_system("480Y/277")
    s240 = get_system("240 delta")
    shop = Panel(
        "D",
        s240,
        18,
        (_two(1, 6000.0), _two(2, 4000.0), _two(7, 3000.0), _two(8, 2000.0), _two(13, 5000.0)),
    )
    service = Panel("S", p480, 18, (Circuit("1", "feeder", 3, 0.0, (1, 3, 5)),))
    bank = make_transformer("T", 30, p480, s240, "delta-delta")
    building = make_building("d", [service, shop], [Feed("D", "S", "1", bank)])
    result = balance_building(building, BalanceOptions(time_limit_s=20))
    assert result.outcomes["D"].first_goal == "transformer"
    least = _least_loading_by_exhaustion(shop, loading_terms(bank))
    after = roll_up(result.after).feeders["D"].transformer_loading_pct
    assert after is not None
    assert least - 1e-9 <= after <= least * (1 + POLYGON_ERROR) + 1e-9


HIGH_LEG_SAMPLE = ROOT / "sample_schedules" / "machine-shop-240-120-high-leg.xlsx"


def test_balance_command_for_the_supply_bank(
    tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    import json

    from balancer.cli.main import main
    from balancer.io.reader import read_schedule
    from balancer.physics.transformer import supply_bank

    out = tmp_path / "shop.xlsx"
    args = ["balance", str(HIGH_LEG_SAMPLE), "-o", str(out), "--no-tradeoff", "--json"]
    assert main([*args, "--objective", "transformer", "--bank-kva", "75"]) == 0
    data = json.loads(capsys.readouterr().out)
    assert data["first_goal"] == "transformer"
    assert data["status"] == "optimal"
    assert any("heaviest winding" in n for n in data["notes"])
    bank = supply_bank(get_system("240/120"), 75)
    assert bank.connection == "delta-delta"
    found = loading_pct(bank, _currents(read_schedule(HIGH_LEG_SAMPLE)))
    balanced = loading_pct(bank, _currents(read_schedule(out)))
    assert balanced < found
    # the spread goal on the same panel leaves the bank's heaviest winding higher
    assert main([*args, "-o", str(tmp_path / "spread.xlsx")]) == 0
    capsys.readouterr()
    by_spread = loading_pct(bank, _currents(read_schedule(tmp_path / "spread.xlsx")))
    assert balanced < by_spread


@pytest.mark.parametrize(
    ("extra", "message"),
    [
        (["--objective", "transformer"], "needs the transformer's kVA rating"),
        (["--bank-kva", "75"], "used by --objective transformer"),
        (["--objective", "transformer", "--bank-kva", "-5"], "must be a positive number"),
    ],
)
def test_balance_command_refuses_an_incomplete_supply_bank(
    tmp_path: Path, capsys: pytest.CaptureFixture[str], extra: list[str], message: str
) -> None:
    from balancer.cli.main import main

    out = tmp_path / "x.xlsx"
    assert main(["balance", str(HIGH_LEG_SAMPLE), "-o", str(out), *extra]) == 2
    assert message in capsys.readouterr().err
    assert not out.exists()


def test_no_single_bank_supplies_two_lines_of_a_wye() -> None:
    from balancer.errors import ScheduleError
    from balancer.physics.transformer import supply_bank

    with pytest.raises(ScheduleError, match="two lines of a wye"):
        supply_bank(get_system("120/208 network"), 25)
    with pytest.raises(ScheduleError, match="open delta bank supplies a delta system"):
        supply_bank(get_system("208Y/120"), 50, open_delta=True)

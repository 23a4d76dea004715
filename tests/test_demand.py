"""Demand rules at and around their thresholds, rule files, the feeder check and branch flags.

Panels here are invented demo data. NEC values cite the clause and how they were obtained:
"F" read in a published copy (listed in docs/references.md), "from memory" recalled.
"""

from __future__ import annotations

import cmath
import json
import math
from pathlib import Path
from typing import Any

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from balancer.code.demand import (
    OCCUPANCIES,
    ClassRule,
    DemandOptions,
    DemandResult,
    Tier,
    apply_tiers,
    builtin_rule_set,
    check_choices,
    classify,
    compute_demand,
    default_rule_set_name,
    demand_sheet_rows,
    demand_to_dict,
    load_rule_set,
    loads_section_lines,
    resolve_rule_set,
    units_demand,
)
from balancer.code.feeder import parse_conductor
from balancer.domain.panel import Circuit, Panel
from balancer.domain.systems import get_system
from balancer.errors import ScheduleError

ATOL_VA = 1e-6
ATOL_A = 1e-6
# Top-level keys of a complete rule file, for the malformed-file cases.
HEAD = (
    'name = "x"\ntitle = "x"\nedition = "x"\ncontinuous_factor = 1.25\n'
    'continuous_clause = "x"\nfeeder_sizing = true\n'
)
RULES_DIR = Path(__file__).resolve().parents[1] / "balancer" / "rules"


def make_panel(
    loads: list[tuple[str, float, int]] | list[dict[str, Any]],
    system: str = "208Y/120",
    bus_a: float | None = None,
    main_a: float | None = None,
) -> Panel:
    """Demo panel: circuits placed one after another from space 1 (left column first)."""
    circuits = []
    space = 1
    for i, item in enumerate(loads):
        spec: dict[str, Any] = (
            dict(item)
            if isinstance(item, dict)
            else dict(zip(("load_class", "load_va", "poles"), item, strict=True))
        )
        poles = int(spec.pop("poles", 1))
        spaces = tuple(space + 2 * k for k in range(poles))
        space += 2 * poles
        circuits.append(
            Circuit(
                id=str(spec.pop("id", i + 1)),
                description=f"demo {i + 1}",
                poles=poles,
                spaces=spec.pop("spaces", spaces),
                **spec,
            )
        )
    return Panel(
        "DEMO (invented)", get_system(system), 84, tuple(circuits), bus_a=bus_a, main_a=main_a
    )


def demand_of(result: DemandResult, name: str) -> float:
    return next(c.demand_va for c in result.by_class if c.name == name)


def run(loads: list[Any], **options: Any) -> DemandResult:
    system = options.pop("system", "208Y/120")
    return compute_demand(make_panel(loads, system), DemandOptions(**options))


# --- classes and spellings -------------------------------------------------------------------


@pytest.mark.parametrize(
    ("text", "name"),
    [
        ("ltg", "general_lighting"),
        ("lighting", "general_lighting"),
        ("rcpt", "general_receptacles"),
        ("receptacle", "general_receptacles"),
        ("mtr", "motors"),
        ("motor", "motors"),
        ("htg", "space_heating"),
        ("ac", "air_conditioning"),
        ("a/c", "air_conditioning"),
        ("kitchen", "kitchen"),
        ("wh", "water_heating"),
        ("ev", "ev"),
        ("spare", "spare"),
        ("lighting - exterior", "general_lighting"),
        ("widget", None),
    ],
)
def test_classify(text: str, name: str | None) -> None:
    assert classify(text) == name


def test_unknown_type_warns_and_counts_in_full() -> None:
    result = run([("widget", 1500.0, 1), ("", 500.0, 1)])
    assert result.total_demand_va == pytest.approx(2000.0, abs=ATOL_VA)
    assert any("'widget' is not a known load class" in w for w in result.warnings)
    assert any("give no type" in w for w in result.warnings)


# --- general lighting, Table 220.45 (2023) / Table 220.42 (2020) (F) -------------------------


@pytest.mark.parametrize(
    ("occupancy", "load_va", "demand_va"),
    [
        ("dwelling", 3000.0, 3000.0),
        ("dwelling", 3001.0, 3000.35),
        ("dwelling", 120000.0, 3000.0 + 117000.0 * 0.35),
        ("dwelling", 120001.0, 3000.0 + 117000.0 * 0.35 + 0.25),
        ("hotel", 20000.0, 10000.0),
        ("hotel", 20001.0, 10000.4),
        ("hotel", 100000.0, 10000.0 + 80000.0 * 0.4),
        ("hotel", 100001.0, 42000.3),
        ("warehouse", 12500.0, 12500.0),
        ("warehouse", 12501.0, 12500.5),
        ("other", 250000.0, 250000.0),
    ],
)
def test_general_lighting_tiers(occupancy: str, load_va: float, demand_va: float) -> None:
    result = run([("ltg", load_va, 1)], occupancy=occupancy)
    assert demand_of(result, "general_lighting") == pytest.approx(demand_va, abs=ATOL_VA)


# --- receptacles, 220.47 (2023) / 220.44 (2020): first 10 kVA at 100%, rest at 50% (F) -------


@pytest.mark.parametrize(
    ("load_va", "demand_va"),
    [(9999.0, 9999.0), (10000.0, 10000.0), (10001.0, 10000.5), (30000.0, 20000.0)],
)
def test_receptacles_non_dwelling(load_va: float, demand_va: float) -> None:
    # Split over several circuits: the tiers apply to the class total, not per circuit.
    result = run([("rcpt", load_va / 4, 1)] * 4)
    assert demand_of(result, "general_receptacles") == pytest.approx(demand_va, abs=ATOL_VA)


def test_receptacle_count_gives_180_va_per_yoke() -> None:
    # 220.14(I) (F): 180 VA per yoke. 56 yokes = 10,080 VA -> 10,000 + 40 = 10,040 VA demand.
    result = run(
        [
            {"load_class": "rcpt", "load_va": 0.0, "yokes": 30.0},
            {"load_class": "rcpt", "load_va": 999.0, "yokes": 26.0},
        ]
    )
    row = next(c for c in result.by_class if c.name == "general_receptacles")
    assert row.connected_va == pytest.approx(10080.0, abs=ATOL_VA)
    assert row.demand_va == pytest.approx(10040.0, abs=ATOL_VA)
    assert any("26 receptacles × 180 VA" in w for w in result.warnings)


def test_annex_d_example_d3_receptacles() -> None:
    # NEC Annex D, Example D3 (store building), receptacle part (from memory):
    # 80 receptacles × 180 VA = 14,400 VA; 10,000 VA at 100% + 4,400 VA at 50% = 12,200 VA.
    result = run([{"load_class": "rcpt", "load_va": 0.0, "yokes": 8.0}] * 10)
    assert demand_of(result, "general_receptacles") == pytest.approx(12200.0, abs=ATOL_VA)


def test_annex_d_example_d1a_dwelling_general_loads() -> None:
    # NEC Annex D, Example D1(a), one-family dwelling of 1,500 ft² (from memory):
    # general lighting 1,500 × 3 VA = 4,500 VA, two small-appliance circuits 3,000 VA and a
    # laundry circuit 1,500 VA: 9,000 VA; first 3,000 VA at 100%, 6,000 VA at 35% = 2,100 VA;
    # net 5,100 VA. Small-appliance and laundry loads join general lighting (220.52).
    loads = [("ltg", 1500.0, 1)] * 3 + [("rcpt", 1500.0, 1)] * 2 + [("rcpt", 1500.0, 1)]
    result = run(loads, occupancy="dwelling", system="120/240")
    total = demand_of(result, "general_lighting") + demand_of(result, "general_receptacles")
    assert total == pytest.approx(5100.0, abs=ATOL_VA)
    rcpt = next(c for c in result.by_class if c.name == "general_receptacles")
    assert "220.52" in rcpt.rule
    assert "counted with general lighting" in rcpt.rule


# --- Table 220.56 kitchen equipment (factors from memory; two-largest floor F) ---------------


@pytest.mark.parametrize(
    ("units", "factor"),
    [(1, 1.0), (2, 1.0), (3, 0.9), (4, 0.8), (5, 0.7), (6, 0.65), (7, 0.65)],
)
def test_kitchen_units(units: int, factor: float) -> None:
    result = run([("kitchen", 2000.0, 1)] * units)
    # Equal units: the two-largest floor never binds here (it does below).
    assert demand_of(result, "kitchen") == pytest.approx(factor * 2000.0 * units, abs=ATOL_VA)


def test_kitchen_never_below_two_largest() -> None:
    # Six units, 22,000 VA: 65% gives 14,300 VA, below the two largest (20,000 VA) (220.56, F).
    loads = [("kitchen", 10000.0, 3), ("kitchen", 10000.0, 3)] + [("kitchen", 500.0, 1)] * 4
    result = run(loads)
    assert demand_of(result, "kitchen") == pytest.approx(20000.0, abs=ATOL_VA)


def test_units_demand_direct() -> None:
    rule = builtin_rule_set("nec2023").classes["kitchen"]
    assert units_demand([], rule) == 0.0
    assert units_demand([3000.0, 3000.0, 3000.0], rule) == pytest.approx(8100.0, abs=ATOL_VA)


# --- motors, heating vs cooling, EV, water heating -------------------------------------------


def test_largest_motor_at_125_percent() -> None:
    # 430.24 (F): 125% of the largest motor plus the others.
    result = run([("mtr", 5000.0, 3), ("mtr", 3000.0, 3)])
    assert demand_of(result, "motors") == pytest.approx(5000.0 * 1.25 + 3000.0, abs=ATOL_VA)
    adders = [c.motor_adder_va for c in result.circuits]
    assert adders == [pytest.approx(1250.0), 0.0]


def test_heating_and_cooling_noncoincident() -> None:
    # 220.60 (F): only the larger of noncoincident loads is counted.
    result = run([("htg", 15000.0, 3), ("ac", 10000.0, 3)])
    assert demand_of(result, "space_heating") == pytest.approx(15000.0, abs=ATOL_VA)
    assert demand_of(result, "air_conditioning") == 0.0
    row = next(c for c in result.by_class if c.name == "air_conditioning")
    assert "220.60" in row.rule


def test_cooling_larger_keeps_its_motor_adder() -> None:
    # With cooling the larger, the compressor is the largest motor (440.33, from memory).
    result = run([("htg", 8000.0, 3), ("ac", 10000.0, 3), ("mtr", 2000.0, 3)])
    assert demand_of(result, "space_heating") == 0.0
    assert demand_of(result, "air_conditioning") == pytest.approx(12500.0, abs=ATOL_VA)
    assert demand_of(result, "motors") == pytest.approx(2000.0, abs=ATOL_VA)


def test_ev_floor_and_continuous_default() -> None:
    # 220.57 (from memory): EVSE at 7,200 VA or its nameplate, whichever is larger.
    result = run([("ev", 6000.0, 2), ("ev", 9600.0, 2)])
    assert demand_of(result, "ev") == pytest.approx(7200.0 + 9600.0, abs=ATOL_VA)
    assert all(c.continuous for c in result.circuits)
    assert "each at least 7,200 VA" in next(c.rule for c in result.by_class if c.name == "ev")


def test_spares_count_nothing() -> None:
    result = run([("spare", 0.0, 1), ("ltg", 1000.0, 1)])
    assert result.total_demand_va == pytest.approx(1000.0, abs=ATOL_VA)


# --- continuous loads ------------------------------------------------------------------------


def test_continuous_defaults_by_occupancy_and_override() -> None:
    other = run([("ltg", 1000.0, 1)])
    assert other.circuits[0].continuous  # non-dwelling lighting: continuous (common practice)
    dwelling = run([("ltg", 1000.0, 1)], occupancy="dwelling")
    assert not dwelling.circuits[0].continuous
    flagged = run([{"load_class": "rcpt", "load_va": 1000.0, "continuous": True}])
    assert flagged.circuits[0].continuous


def test_feeder_required_current_adds_125_percent_and_motor() -> None:
    # 215.2(A)(1), 215.3 (F): noncontinuous + 125% continuous; 430.24: +25% largest motor.
    # Demo: 1-pole 12,000 VA continuous lighting on A; 3-pole 10,000 VA motor.
    result = run([("ltg", 12000.0, 1), ("mtr", 10000.0, 3)])
    per_line_motor_a = 10000.0 / (math.sqrt(3) * 208.0)
    expected_design = 12000.0 / 120.0 + per_line_motor_a * 1.25
    expected_required = 12000.0 * 1.25 / 120.0 + per_line_motor_a * 1.25
    feeder = result.feeder
    assert feeder.design_line == "A"
    assert feeder.design_a == pytest.approx(expected_design, abs=ATOL_A)
    assert feeder.required_a == pytest.approx(expected_required, abs=ATOL_A)
    assert feeder.min_ocpd_a == 175  # 159.7 A -> 175 A (240.6(A), F)
    assert feeder.conductor_cu == "2/0"  # 175 A at 75 °C (Table 310.16, F)
    assert feeder.conductor_al == "4/0"  # 180 A at 75 °C (Table 310.16, F)


def test_two_pole_share_uses_line_to_line_current() -> None:
    # A 2-pole 4,160 VA load at 208 V draws 20 A on each of its lines (C: I = VA / V_LL).
    result = run([{"load_class": "wh", "load_va": 4160.0, "poles": 2, "continuous": False}])
    assert result.feeder.design_a == pytest.approx(20.0, abs=ATOL_A)


# --- spread over phases ----------------------------------------------------------------------


def test_phase_demand_sums_to_total_and_follows_the_factor() -> None:
    loads = [("rcpt", 8000.0, 1), ("rcpt", 8000.0, 1), ("rcpt", 4000.0, 1), ("mtr", 6000.0, 3)]
    result = run(loads)
    assert math.fsum(result.phase_demand_va.values()) == pytest.approx(
        result.total_demand_va, abs=ATOL_VA
    )
    # Receptacles 20,000 VA -> 15,000 VA: factor 0.75 on each circuit's share.
    motor_share = 6000.0 * 1.25 / 3
    assert result.phase_demand_va["A"] == pytest.approx(8000.0 * 0.75 + motor_share, abs=ATOL_VA)
    assert result.phase_demand_va["C"] == pytest.approx(4000.0 * 0.75 + motor_share, abs=ATOL_VA)


def test_unplaced_circuit_spread_evenly_with_warning() -> None:
    result = run([{"load_class": "other", "load_va": 3000.0, "spaces": ()}])
    assert all(v == pytest.approx(1000.0) for v in result.phase_demand_va.values())
    assert any("not placed" in w for w in result.warnings)


# --- neutral 220.61 --------------------------------------------------------------------------


def test_neutral_reduction_above_200_a_and_nonlinear_exception() -> None:
    # 36,000 VA line-to-neutral on A = 300 A: 200 + 0.7 × 100 = 270 A (220.61(B), F).
    loads = [
        {"load_class": "other", "load_va": 12000.0, "spaces": (1,)},
        {"load_class": "other", "load_va": 12000.0, "spaces": (7,)},
        {"load_class": "other", "load_va": 12000.0, "spaces": (13,)},
    ]
    result = run(loads)
    assert result.feeder.neutral_unreduced_a == pytest.approx(300.0, abs=ATOL_A)
    assert result.feeder.neutral_a == pytest.approx(270.0, abs=ATOL_A)
    # 220.61(C)(2): the non-linear part on a 4-wire wye is not reduced.
    nonlinear = run(loads, nonlinear_classes=("other",))
    assert nonlinear.feeder.neutral_a == pytest.approx(300.0, abs=ATOL_A)


def test_no_neutral_on_three_wire_delta() -> None:
    result = run([("mtr", 10000.0, 3)], system="480 delta")
    assert result.feeder.neutral_a is None


# --- ratings, spare capacity, voltage drop ---------------------------------------------------


def test_spare_capacity_against_smaller_of_bus_and_main() -> None:
    panel = make_panel(
        [{"load_class": "other", "load_va": 12000.0, "spaces": (1,)}], bus_a=225, main_a=200
    )
    result = compute_demand(panel)
    assert result.feeder.rating_a == 200
    assert result.feeder.spare_a == pytest.approx(100.0, abs=ATOL_A)
    assert result.feeder.spare_pct == pytest.approx(50.0, abs=1e-9)


def test_voltage_drop_uses_chosen_conductor_and_design_current() -> None:
    result = run([("mtr", 30000.0, 3)], feeder_length_ft=200.0, feeder_conductor="1/0 Cu")
    current = 30000.0 * 1.25 / (math.sqrt(3) * 208.0)
    expected = math.sqrt(3) * current * 0.122 * 200.0 / 1000.0 / 208.0 * 100.0
    assert result.feeder.voltage_drop_pct == pytest.approx(expected, rel=1e-9)
    bad = DemandOptions(feeder_length_ft=100.0, feeder_conductor="huge")
    with pytest.raises(ScheduleError, match="feeder-conductor"):
        compute_demand(make_panel([("mtr", 1000.0, 3)]), bad)


def test_ambient_and_bundling_raise_conductor() -> None:
    plain = run([{"load_class": "other", "load_va": 12000.0, "spaces": (1,)}])
    hot = run(
        [{"load_class": "other", "load_va": 12000.0, "spaces": (1,)}],
        ambient_c=40,
        current_carrying=6,
    )
    # A 100 A feeder: NEC 2023 110.14(C)(1)(a) (from memory), 60 °C terminations: 2 AWG Cu 95 A is
    # short, 1 AWG Cu 110 A will do (Table 310.16, F; docs/references.md).
    assert plain.feeder.conductor_cu == "1"
    assert plain.feeder.conductor_cu_c == 60
    # Terminations listed for 75 °C: 3 AWG Cu 100 A (Table 310.16, F).
    listed = run(
        [{"load_class": "other", "load_va": 12000.0, "spaces": (1,)}], terminations_75c=True
    )
    assert listed.feeder.conductor_cu == "3"
    assert hot.feeder.conductor_factor == pytest.approx(0.88 * 0.8)
    # 1 AWG: min(130 × 0.704, 110) = 91.5 A < 100 A; 1/0: min(150 × 0.704, 125) = 105.6 A.
    assert hot.feeder.conductor_cu == "1/0"


# --- branch circuits -------------------------------------------------------------------------


@pytest.mark.parametrize(
    ("load_va", "continuous", "flagged", "suggested"),
    [
        (1920.0, True, False, None),  # 16 A × 1.25 = 20 A on a 20 A breaker: at the limit
        (1921.0, True, True, 25),
        (2400.0, False, False, None),  # 20 A noncontinuous on 20 A
        (2401.0, False, True, 25),
    ],
)
def test_branch_breaker_check(
    load_va: float, continuous: bool, flagged: bool, suggested: int | None
) -> None:
    # 210.19(A)(1), 210.20(A) (F): continuous load at 125%; 240.6(A) next rating.
    result = run(
        [{"load_class": "other", "load_va": load_va, "trip_a": 20.0, "continuous": continuous}]
    )
    flags = [b for b in result.branch_flags if b.kind == "overloaded"]
    assert bool(flags) == flagged
    if flagged:
        assert flags[0].suggested_trip_a == suggested


def test_branch_missing_trip_suggests_one() -> None:
    result = run([{"load_class": "other", "load_va": 3000.0, "continuous": False}])
    flag = result.branch_flags[0]
    assert flag.kind == "no_trip"
    assert flag.suggested_trip_a == 25  # 3,000 VA / 120 V = 25 A, a standard rating (240.6(A))


@pytest.mark.parametrize(
    ("wire", "trip_a", "limit_a"),
    [("#12", 30.0, 20), ("14 AWG", 20.0, 15), ("10 AL", 30.0, 25), ("12 AL", 20.0, 15)],
)
def test_small_conductor_limit_240_4_d(wire: str, trip_a: float, limit_a: int) -> None:
    # 240.4(D) (F): 14 Cu 15 A, 12 Cu 20 A, 10 Cu 30 A, 12 Al 15 A, 10 Al 25 A.
    item = {
        "load_class": "other",
        "load_va": 600.0,
        "trip_a": trip_a,
        "conductor": parse_conductor(wire),
    }
    result = run([item])
    flags = [b for b in result.branch_flags if b.kind == "small_conductor"]
    assert len(flags) == 1
    assert flags[0].suggested_trip_a == limit_a
    assert flags[0].clause == "240.4(D)"


def test_small_conductor_within_limit_and_motor_exempt() -> None:
    fine = run(
        [
            {
                "load_class": "other",
                "load_va": 600.0,
                "trip_a": 20.0,
                "conductor": parse_conductor("#12"),
            }
        ]
    )
    assert not fine.branch_flags
    # 240.4(G) sends motor circuits to Article 430: no 240.4(D) flag there.
    motor = run(
        [
            {
                "load_class": "mtr",
                "load_va": 1000.0,
                "trip_a": 30.0,
                "conductor": parse_conductor("#12"),
            }
        ]
    )
    assert not [b for b in motor.branch_flags if b.kind == "small_conductor"]


def test_conductor_ampacity() -> None:
    # 30 A continuous on 10 AWG: 37.5 A needed, 10 AWG Cu carries 30 A in the 60 °C column
    # (Table 310.16, F; 60 °C for circuits of 100 A or less, 110.14(C)(1)(a)).
    item = {
        "load_class": "wh",
        "load_va": 6240.0,
        "poles": 2,
        "trip_a": 40.0,
        "conductor": parse_conductor("#10"),
    }
    result = run([item])
    kinds = {b.kind for b in result.branch_flags}
    assert "conductor_ampacity" in kinds
    assert "small_conductor" in kinds  # 10 AWG Cu on a 40 A breaker
    # A size balancer does not know ("see plan") is refused when the schedule is read, at its
    # cell (tests/test_typed_columns.py), so it never reaches the check.
    assert parse_conductor("see plan") is None


# --- rule sets as data -----------------------------------------------------------------------


@pytest.mark.parametrize("name", ["nec2023", "nec2020", "connected"])
def test_rule_set_from_its_file_equals_builtin(name: str) -> None:
    from_file = load_rule_set(RULES_DIR / f"{name}.toml")
    assert from_file == builtin_rule_set(name)
    assert resolve_rule_set(str(RULES_DIR / f"{name}.toml"), get_system("208Y/120")) == from_file


def test_nec2023_factors_match_the_published_tables() -> None:
    # Expected values written out here from docs/references.md (F), independently of the file.
    rules = builtin_rule_set("nec2023")
    lighting = rules.classes["general_lighting"]
    assert lighting.tiers["dwelling"] == (Tier(3000.0, 1.0), Tier(120000.0, 0.35), Tier(None, 0.25))
    assert lighting.tiers["hotel"] == (Tier(20000.0, 0.5), Tier(100000.0, 0.4), Tier(None, 0.3))
    assert lighting.tiers["warehouse"] == (Tier(12500.0, 1.0), Tier(None, 0.5))
    assert lighting.tiers_for("other") == (Tier(None, 1.0),)
    receptacles = rules.classes["general_receptacles"]
    assert receptacles.tiers_for("other") == (Tier(10000.0, 1.0), Tier(None, 0.5))
    assert receptacles.pool == {"dwelling": "general_lighting"}
    assert rules.classes["kitchen"].unit_factors == (1.0, 1.0, 0.9, 0.8, 0.7, 0.65)  # from memory
    assert rules.classes["kitchen"].floor_two_largest
    assert rules.continuous_factor == 1.25
    assert rules.largest_motor_extra == 0.25
    assert rules.noncoincident == ((("space_heating", "air_conditioning"), "220.60"),)
    assert rules.classes["spare"].factor == 0.0


def test_editions_differ_only_in_clause_numbers() -> None:
    # 2020 -> 2023 renumbering (F): Table 220.12 -> 220.42(A); 220.42 -> 220.45; 220.44 -> 220.47.
    new, old = builtin_rule_set("nec2023"), builtin_rule_set("nec2020")
    assert "Table 220.45" in new.classes["general_lighting"].clause
    assert "Table 220.42" in old.classes["general_lighting"].clause
    assert "220.47" in new.classes["general_receptacles"].clause
    assert "220.44" in old.classes["general_receptacles"].clause
    for name, rule in new.classes.items():
        assert rule.tiers == old.classes[name].tiers
        assert rule.factor == old.classes[name].factor


def test_default_rule_set_by_system() -> None:
    assert default_rule_set_name(get_system("208Y/120")) == "nec2023"
    assert default_rule_set_name(get_system("400Y/230")) == "connected"


def test_connected_set_on_400y230_sizes_nothing() -> None:
    result = run([("ltg", 23000.0, 1), ("rcpt", 23000.0, 1)], system="400Y/230")
    assert result.rule_set.name == "connected"
    assert result.total_demand_va == pytest.approx(46000.0, abs=ATOL_VA)
    assert result.feeder.min_ocpd_a is None
    assert result.feeder.conductor_cu is None
    assert result.feeder.design_a == pytest.approx(100.0, abs=ATOL_A)  # 23,000 VA / 230 V
    assert any("No code demand factors" in c for c in result.cautions)
    text = " ".join(loads_section_lines(result))
    assert "connected load, no multipliers" in text
    assert "220.61" not in text


def test_user_file_with_base_overrides_one_class(tmp_path: Path) -> None:
    path = tmp_path / "site.toml"
    path.write_text(
        'name = "site"\ntitle = "Site diversity (demo)"\nedition = "owner\'s standard, demo"\n'
        'base = "nec2023"\n[classes.general_receptacles]\n'
        'method = "factor"\nfactor = 0.8\nclause = "owner\'s factor"\n',
        encoding="utf-8",
    )
    result = run([("rcpt", 20000.0, 1), ("ltg", 1000.0, 1)], rules=path)
    assert result.rule_set.title == "Site diversity (demo)"
    assert demand_of(result, "general_receptacles") == pytest.approx(16000.0, abs=ATOL_VA)
    assert demand_of(result, "general_lighting") == pytest.approx(1000.0, abs=ATOL_VA)


@pytest.mark.parametrize(
    ("text", "key"),
    [
        (
            HEAD + '[classes.other]\nmethod = "factor"\nfactor = "high"\nclause = "x"\n',
            "classes.other.factor",
        ),
        (
            HEAD + '[classes.other]\nmethod = "factor"\n',
            "classes.other.clause",
        ),
        (
            'base = "nec2023"\n[classes.general_lighting]\nmethod = "tiers"\nclause = "x"\n'
            "tiers.default = [{ upto_va = 100, factor = 1.0 }]\n",
            "classes.general_lighting.tiers.default[0].upto_va",
        ),
        (
            'base = "nec2023"\n[classes.kitchen]\nmethod = "lookup"\nclause = "x"\n',
            "classes.kitchen.method",
        ),
        ('base = "nec1999"\n', "base"),
        (
            'base = "nec2023"\n[[noncoincident]]\n'
            'classes = ["space_heating", "snow_melting"]\nclause = "x"\n',
            "noncoincident[0].classes",
        ),
    ],
)
def test_malformed_rule_file_names_file_and_key(tmp_path: Path, text: str, key: str) -> None:
    path = tmp_path / "bad.toml"
    path.write_text(text, encoding="utf-8")
    with pytest.raises(ScheduleError) as info:
        load_rule_set(path)
    message = str(info.value)
    assert str(path) in message
    assert f"key {key}" in message


def test_rule_file_not_toml(tmp_path: Path) -> None:
    path = tmp_path / "broken.toml"
    path.write_text("name = \n", encoding="utf-8")
    with pytest.raises(ScheduleError, match="not valid TOML"):
        load_rule_set(path)
    with pytest.raises(ScheduleError, match="--rules"):
        resolve_rule_set("no-such-set", get_system("208Y/120"))


def test_unknown_occupancy_is_a_clear_error() -> None:
    assert "other" in OCCUPANCIES
    with pytest.raises(ScheduleError, match="--occupancy"):
        run([("ltg", 100.0, 1)], occupancy="spaceport")
    assert run([("ltg", 100.0, 1)], occupancy="Office").occupancy == "other"


def test_apply_tiers_direct() -> None:
    tiers = (Tier(3000.0, 1.0), Tier(120000.0, 0.35), Tier(None, 0.25))
    assert apply_tiers(0.0, tiers) == 0.0
    assert apply_tiers(2000.0, tiers) == pytest.approx(2000.0)
    assert apply_tiers(200000.0, tiers) == pytest.approx(3000 + 117000 * 0.35 + 80000 * 0.25)
    assert isinstance(builtin_rule_set("nec2023").classes["ev"], ClassRule)


# --- output ----------------------------------------------------------------------------------


def _sample() -> DemandResult:
    loads = [("ltg", 9000.0, 1), ("rcpt", 14400.0, 1), ("mtr", 7500.0, 3), ("spare", 0.0, 1)]
    panel = make_panel(loads, bus_a=225, main_a=225)
    return compute_demand(panel, DemandOptions(feeder_length_ft=120.0))


def test_demand_to_dict_shape_and_json() -> None:
    data = demand_to_dict(_sample())
    json.dumps(data)
    assert data["rule_set"] == "nec2023"
    assert set(data["by_class"]["general_receptacles"]) == {"connected_va", "demand_va", "rule"}
    assert data["by_class"]["general_receptacles"]["demand_va"] == 12200.0
    for key in ("design_a", "min_ocpd_a", "conductor_cu", "conductor_al", "neutral_a", "spare_pct"):
        assert key in data["feeder"]
    assert data["total_connected_va"] == 30900.0
    assert isinstance(data["branch_flags"], list)


def test_loads_section_names_rule_set_and_cautions() -> None:
    lines = loads_section_lines(_sample())
    assert lines[0].startswith("Loads: NEC 2023")
    text = " ".join(line.strip() for line in lines)  # cautions wrap over lines
    assert "authority having jurisdiction" in text
    assert "qualified person" in text  # the field cautions are the workbook's and PDF's
    assert "Minimum OCPD" in text
    assert "Voltage drop" in text
    assert all(isinstance(line, str) for line in lines)


def test_sheet_rows_are_lists() -> None:
    rows = demand_sheet_rows(_sample())
    assert rows[0][:2] == ["Rule set", "NEC 2023"]
    assert ["Class", "Circuits", "Connected VA", "Demand VA", "Rule"] in rows
    assert all(isinstance(r, list) for r in rows)


def test_two_pole_neutral_part_reduced_only_off_a_wye() -> None:
    # A 2-pole load whose 30,000 VA line-to-neutral part puts 250 A on the neutral.
    item = {"load_class": "other", "load_va": 40000.0, "poles": 2, "neutral_va": 30000.0}
    single_phase = run([item], system="120/240")
    # 120/240 V: 200 + 0.7 × 50 = 235 A (220.61(B), F).
    assert single_phase.feeder.neutral_a == pytest.approx(235.0, abs=ATOL_A)
    # Two phases and neutral of a 4-wire wye: no reduction (220.61(C)(1), F).
    wye = run([item], system="208Y/120")
    assert wye.feeder.neutral_a == pytest.approx(250.0, abs=ATOL_A)


@given(
    loads=st.lists(
        st.tuples(
            st.sampled_from(["ltg", "rcpt", "mtr", "htg", "ac", "kitchen", "wh", "ev", "x"]),
            st.floats(min_value=0.0, max_value=50000.0, allow_nan=False),
            st.sampled_from([1, 2, 3]),
        ),
        min_size=1,
        max_size=12,
    ),
    occupancy=st.sampled_from(OCCUPANCIES),
)
@settings(max_examples=60, deadline=None)
def test_demand_invariants(loads: list[tuple[str, float, int]], occupancy: str) -> None:
    # The lines carry the whole demand; the demand never exceeds connected load plus the motor
    # adder and the EV floor; the required current is never below the demand current.
    result = run(loads, occupancy=occupancy)
    assert math.fsum(result.phase_demand_va.values()) == pytest.approx(
        result.total_demand_va, rel=1e-9, abs=1e-6
    )
    ev_floor = sum(7200.0 for cls, va, _ in loads if cls == "ev" and va > 0)
    adder = sum(c.motor_adder_va for c in result.circuits)
    assert result.total_demand_va <= result.total_connected_va + adder + ev_floor + 1e-6
    assert result.feeder.required_a >= result.feeder.design_a - 1e-9


@given(st.floats(min_value=0.0, max_value=1e6), st.floats(min_value=0.0, max_value=1e6))
def test_tiers_monotone(first_va: float, second_va: float) -> None:
    tiers = builtin_rule_set("nec2023").classes["general_lighting"].tiers["dwelling"]
    low, high = sorted((first_va, second_va))
    assert apply_tiers(low, tiers) <= apply_tiers(high, tiers) + 1e-9
    assert apply_tiers(high, tiers) <= high + 1e-9


def test_check_choices_fails_early_on_bad_input(tmp_path: Path) -> None:
    check_choices("nec2023", "dwelling")
    check_choices(None, "other")
    with pytest.raises(ScheduleError, match="--occupancy"):
        check_choices(None, "spaceport")
    with pytest.raises(ScheduleError, match="--rules"):
        check_choices(str(tmp_path / "missing.toml"), "other")


# --- code checks: non-linear neutral, largest motor, conductor protection, neutral share -----

SMPS = "switch-mode"


def test_nonlinear_neutral_from_the_harmonic_profile_is_not_reduced() -> None:
    # NEC 2023 220.61(C)(2) (F; item number from memory; docs/references.md): no 220.61(B) reduction
    # for the part of the neutral load that is non-linear on a 4-wire wye. 60 × 1,500 VA switch-mode
    # circuits on 208Y/120: 30,000 VA per line / 120 V = 250 A (C); all non-linear, so 250 A, not
    # 200 + 0.7 × 50 = 235 A.
    loads = [{"load_class": "other", "load_va": 1500.0, "spaces": (k,)} for k in range(1, 61)]
    linear = compute_demand(make_panel(loads))
    assert linear.feeder.design_a == pytest.approx(250.0, abs=ATOL_A)
    assert linear.feeder.neutral_a == pytest.approx(235.0, abs=ATOL_A)
    smps = compute_demand(make_panel([{**item, "harmonic_profile": SMPS} for item in loads]))
    assert smps.feeder.neutral_a == pytest.approx(250.0, abs=ATOL_A)
    assert any("220.61(C)" in note for note in smps.feeder.notes)
    # The same by naming the class (Type spellings are accepted too).
    named = compute_demand(make_panel(loads), DemandOptions(nonlinear_classes=("misc",)))
    assert named.feeder.neutral_a == pytest.approx(250.0, abs=ATOL_A)
    # The bundled "linear" profile has no harmonics: reduced as before.
    plain = compute_demand(make_panel([{**item, "harmonic_profile": "linear"} for item in loads]))
    assert plain.feeder.neutral_a == pytest.approx(235.0, abs=ATOL_A)


def test_mixed_linear_and_nonlinear_neutral_by_hand() -> None:
    # NEC 2023 220.61(B), (C)(2) (F). Per line: 4 × 7,200 VA linear = 240 A and 1 × 7,200 VA
    # switch-mode = 60 A (C: 7,200 / 120). Only the linear 240 A is reduced above 200 A:
    # 60 + 200 + 0.7 × 40 = 288 A.
    linear = [{"load_class": "other", "load_va": 7200.0} for _ in range(12)]
    nonlinear = [
        {"load_class": "other", "load_va": 7200.0, "harmonic_profile": SMPS} for _ in range(3)
    ]
    result = compute_demand(make_panel(linear + nonlinear))
    assert result.feeder.neutral_unreduced_a == pytest.approx(300.0, abs=ATOL_A)
    assert result.feeder.neutral_a == pytest.approx(288.0, abs=ATOL_A)


def test_nonlinear_neutral_off_a_wye_is_reduced() -> None:
    # NEC 2023 220.61(C)(2) (F; item number from memory) names 4-wire wye systems only: on 120/240 V
    # the same 250 A of switch-mode load is reduced to 200 + 0.7 × 50 = 235 A (220.61(B)).
    loads = [
        {"load_class": "other", "load_va": 1500.0, "spaces": (k,), "harmonic_profile": SMPS}
        for k in range(1, 41)
    ]
    result = compute_demand(make_panel(loads, "120/240"))
    assert result.feeder.neutral_unreduced_a == pytest.approx(250.0, abs=ATOL_A)
    assert result.feeder.neutral_a == pytest.approx(235.0, abs=ATOL_A)


def test_unknown_nonlinear_class_is_an_error() -> None:
    with pytest.raises(ScheduleError, match="nonlinear-classes"):
        run([("other", 100.0, 1)], nonlinear_classes=("widget",))
    with pytest.raises(ScheduleError, match="nonlinear-classes"):
        check_choices(None, "other", ("other,widget",))
    check_choices(None, "other", ("other, receptacle",))  # both known: no error


def test_largest_motor_is_the_one_of_highest_full_load_current() -> None:
    # NEC 2023 430.24 (F) with 430.17 (from memory; docs/references.md): 25 % of the motor with the
    # highest rated full-load current. 1-pole 1,900 VA at 120 V = 15.8 A beats a 2-pole 3,000 VA
    # motor at 208 V = 14.4 A (C), though the second has more VA.
    result = run([("mtr", 1900.0, 1), ("mtr", 3000.0, 2)])
    adders = {c.circuit_id: c.motor_adder_va for c in result.circuits}
    assert adders == {"1": pytest.approx(0.25 * 1900.0), "2": 0.0}
    assert "circuit 1" in next(c.rule for c in result.by_class if c.name == "motors")
    # Line A: 1,900 × 1.25 / 120 = 19.79 A, above line B's 3,000 / 208 = 14.42 A (C).
    assert result.feeder.required_a == pytest.approx(1900.0 * 1.25 / 120.0, abs=ATOL_A)
    assert result.feeder.design_line == "A"


def _wired(load_class: str, va: float, trip_a: float, wire: str) -> dict[str, Any]:
    return {
        "load_class": load_class,
        "load_va": va,
        "trip_a": trip_a,
        "continuous": False,
        "conductor": parse_conductor(wire),
    }


@pytest.mark.parametrize(
    ("item", "listed_75c", "suggested_a"),
    [
        # 6 AWG Cu, 60 °C 55 A, on 60 A: the next size up (240.4(B)) protects it.
        (_wired("other", 4800.0, 60.0, "#6"), False, None),
        # The same on a receptacle circuit: 240.4(B)(1) does not allow it; at most 50 A.
        (_wired("rcpt", 4800.0, 60.0, "#6"), False, 50),
        # 8 AWG Cu, 60 °C 40 A (a standard rating) on 50 A: not protected; at most 40 A.
        (_wired("other", 3600.0, 50.0, "#8"), False, 40),
        # Terminations listed for 75 °C: 8 AWG Cu carries 50 A (110.14(C)(1)(a)).
        (_wired("other", 3600.0, 50.0, "#8"), True, None),
        # 3 AWG Cu, 60 °C 85 A, on 90 A: next size up (240.4(B)).
        (_wired("other", 9600.0, 90.0, "3 AWG"), False, None),
        # 1 AWG Cu on 125 A: a 14-1 AWG conductor at 60 °C, 110 A; at most 110 A.
        (_wired("other", 12000.0, 125.0, "1 Cu"), False, 110),
        (_wired("other", 12000.0, 125.0, "1 Cu"), True, None),  # 75 °C 130 A
        # 1/0 Cu on 125 A: above 100 A and above 1 AWG, 75 °C 150 A (110.14(C)(1)(b)).
        (_wired("other", 12000.0, 125.0, "1/0"), False, None),
    ],
)
def test_branch_conductor_protection_240_4_b_and_110_14_c(
    item: dict[str, Any], listed_75c: bool, suggested_a: int | None
) -> None:
    # NEC 2023 240.6(A), Table 310.16 (F); 240.4(B), 110.14(C)(1) (from memory);
    # docs/references.md.
    result = run([item], terminations_75c=listed_75c)
    flags = [b for b in result.branch_flags if b.kind == "unprotected_conductor"]
    assert [b.suggested_trip_a for b in flags] == ([] if suggested_a is None else [suggested_a])
    assert not [b for b in result.branch_flags if b.kind == "conductor_ampacity"]


def test_240_4_d_conductor_is_not_flagged_twice() -> None:
    # 12 AWG Cu on 30 A: the 240.4(D) limit (20 A, F) is the one flag.
    result = run([_wired("other", 1200.0, 30.0, "#12")])
    assert [b.kind for b in result.branch_flags] == ["small_conductor"]


def test_given_feeder_conductor_too_small_warns() -> None:
    # 12,000 VA on line A = 100 A; a 100 A feeder at 60 °C terminations (110.14(C)(1)(a)):
    # 2 AWG Cu carries 95 A (Table 310.16, F), short of 100 A; 1 AWG Cu (110 A) is enough.
    loads = [{"load_class": "other", "load_va": 12000.0, "spaces": (1,)}]
    small = run(loads, feeder_conductor="2 Cu")
    assert any("2 AWG Cu carries 95.0 A" in w and "100.0 A" in w for w in small.warnings)
    assert any("feeder conductor" in line for line in loads_section_lines(small))
    enough = run(loads, feeder_conductor="1 Cu")
    assert not any("feeder conductor" in w for w in enough.warnings)
    # Listed 75 °C terminations: 3 AWG Cu (100 A) will do, 4 AWG (85 A) will not.
    assert not any(
        "feeder" in w for w in run(loads, feeder_conductor="3", terminations_75c=True).warnings
    )
    assert any(
        "4 AWG Cu" in w for w in run(loads, feeder_conductor="4", terminations_75c=True).warnings
    )


def test_given_feeder_conductor_with_factors_warns() -> None:
    # 4,800 VA on A = 40 A, a 40 A feeder: 8 AWG Al carries 35 A at 60 °C (Table 310.16, F;
    # 110.14(C)(1)(a)), short of 40 A; with terminations listed for 75 °C, 40 A: enough.
    loads = [{"load_class": "other", "load_va": 4800.0, "spaces": (1,)}]
    assert any("8 AWG Al carries 35.0 A" in w for w in run(loads, feeder_conductor="8 Al").warnings)
    listed = run(loads, feeder_conductor="8 Al", terminations_75c=True)
    assert not any("feeder conductor" in w for w in listed.warnings)
    # 10,200 VA on A = 85 A. 3 AWG Cu at 75 °C with six current-carrying conductors (0.8,
    # Table 310.15(C)(1), from memory): 100 × 0.8 = 80 A (C), short of 85 A.
    hot = run(
        [{"load_class": "other", "load_va": 10200.0, "spaces": (1,)}],
        feeder_conductor="3",
        terminations_75c=True,
        current_carrying=6,
    )
    assert any("carries 80.0 A (75 °C terminations, factor 0.80)" in w for w in hot.warnings)


def _heavier_line_by_hand(load_va: float, neutral_va: float, system: str) -> float:
    """Hand calculation (C): the share from line A to neutral (120 V at 0°), the rest across
    A-B (240 V at 0° on 120/240; the nominal 208 V leading V_A by 30° on 208Y/120)."""
    v_ll, angle = (240.0, 0.0) if system == "120/240" else (208.0, math.radians(30.0))
    to_neutral = neutral_va / 120.0
    between = cmath.rect((load_va - neutral_va) / v_ll, angle)
    return max(abs(to_neutral + between), abs(between))


@pytest.mark.parametrize(
    ("system", "load_va", "neutral_va"),
    [("120/240", 5600.0, 600.0), ("208Y/120", 5000.0, 1000.0)],
)
def test_two_pole_with_neutral_share_uses_the_heavier_line(
    system: str, load_va: float, neutral_va: float
) -> None:
    # 120/240 V: 5,000 VA / 240 V = 20.83 A on both lines, plus 600 / 120 = 5 A on one: 25.83 A
    # (C). On 208Y/120 the two currents are 30° apart, so the phasor sum is taken.
    from balancer.physics.analysis import analyze

    item = {"load_class": "other", "load_va": load_va, "poles": 2, "neutral_va": neutral_va}
    panel = make_panel([item], system)
    expected = _heavier_line_by_hand(load_va, neutral_va, system)
    if system == "120/240":
        assert expected == pytest.approx(5000.0 / 240.0 + 5.0, abs=ATOL_A)
    loads = analyze(panel)
    assert max(loads.line_a.values()) == pytest.approx(expected, abs=ATOL_A)
    result = compute_demand(panel)
    assert result.feeder.design_a == pytest.approx(expected, abs=ATOL_A)
    assert all(
        a == pytest.approx(expected, abs=ATOL_A) for a in result.feeder.line_design_a.values() if a
    )
    flag = next(b for b in result.branch_flags if b.kind == "no_trip")
    assert flag.required_a == pytest.approx(expected, abs=ATOL_A)

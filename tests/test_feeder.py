"""Feeder arithmetic: 240.6(A) ratings, Table 310.16 selection, 220.61 neutral, resistance, drop.

Reference values carry their source; "F" values come from a published copy (listed in
docs/references.md), "from memory" marks values recalled rather than read.
"""

from __future__ import annotations

import itertools
import math

import pytest

from balancer.code.feeder import (
    AMPACITY_A,
    RESISTANCE_OHM_PER_KFT,
    SIZES,
    Conductor,
    allowable_a,
    ambient_factor,
    ampacity_a,
    bundling_factor,
    neutral_220_61,
    next_standard_rating,
    parse_conductor,
    protected_by,
    select_conductor,
    termination_column_c,
    voltage_drop_pct,
)

ATOL_A = 1e-9
REL_PCT = 1e-9


# 240.6(A) standard ratings (F): the next rating at or above a current.
@pytest.mark.parametrize(
    ("current_a", "rating_a"),
    [
        (0.0, 15),
        (15.0, 15),
        (15.01, 20),
        (100.0, 100),
        (100.5, 110),
        (110.01, 125),
        (228.2, 250),
        (450.0, 450),
        (800.01, 1000),
        (6000.0, 6000),
    ],
)
def test_next_standard_rating(current_a: float, rating_a: int) -> None:
    assert next_standard_rating(current_a) == rating_a


def test_no_standard_rating_above_6000_a() -> None:
    assert next_standard_rating(6000.1) is None


# Table 310.16, 75 °C column (F, values in docs/references.md).
@pytest.mark.parametrize(
    ("required_a", "material", "size"),
    [
        (20.0, "cu", "14"),
        (20.01, "cu", "12"),
        (100.0, "cu", "3"),
        (100.01, "cu", "2"),
        (200.0, "cu", "3/0"),
        (230.0, "cu", "4/0"),
        (380.0, "cu", "500"),
        (20.0, "al", "12"),
        (100.0, "al", "1"),
        (100.01, "al", "1/0"),
        (180.01, "al", "250"),
        (310.0, "al", "500"),
    ],
)
def test_select_conductor_75c(required_a: float, material: str, size: str) -> None:
    assert select_conductor(required_a, material) == size  # type: ignore[arg-type]


def test_select_conductor_beyond_500_kcmil_is_none() -> None:
    assert select_conductor(380.01, "cu") is None
    assert select_conductor(310.01, "al") is None


def test_select_conductor_240_4_b_next_size_up() -> None:
    # 240.4(B) (F): up to 800 A a device may be the next standard rating above the ampacity.
    # 4 AWG Cu carries 85 A at 75 °C; the next rating above 85 is 90, so a 90 A device protects
    # it, a 100 A device does not and the size steps up to 3 AWG (100 A).
    assert select_conductor(82.0, "cu", ocpd_a=90) == "4"
    assert select_conductor(82.0, "cu", ocpd_a=100) == "3"


def test_adjustment_factor_raises_the_size() -> None:
    # 100 A with a 0.8 factor needs 125 A of table ampacity: 1 AWG Cu (130 A).
    assert select_conductor(100.0 / 0.8, "cu") == "1"


def test_ampacity_table_rises_with_size_and_temperature() -> None:
    # Internal consistency of the transcribed table: every column rises with size and every
    # row rises with insulation rating.
    for material, table in AMPACITY_A.items():
        rows = [table[s] for s in SIZES if s in table]
        for smaller, larger in itertools.pairwise(rows):
            assert all(a < b for a, b in zip(smaller, larger, strict=True)), material
        assert all(r[0] < r[1] < r[2] for r in rows)
    assert ampacity_a("al", "14") is None
    assert ampacity_a("cu", "12", 60) == 20  # Table 310.16 (F)


# 220.61(B): 70% of the part above 200 A; 220.61(C): no reduction for the non-linear part.
@pytest.mark.parametrize(
    ("linear_a", "nonlinear_a", "neutral_a"),
    [
        (150.0, 0.0, 150.0),
        (200.0, 0.0, 200.0),
        (300.0, 0.0, 270.0),  # 200 + 0.7 × 100 (C)
        (0.0, 300.0, 300.0),  # all non-linear: no reduction
        (250.0, 50.0, 285.0),  # excess 100 A: 50 non-linear in full, 50 linear at 70% (C)
        (200.0, 100.0, 300.0),
        (300.0, 50.0, 320.0),  # excess 150 A: 50 non-linear in full, 100 linear at 70% (C)
    ],
)
def test_neutral_220_61(linear_a: float, nonlinear_a: float, neutral_a: float) -> None:
    assert neutral_220_61(linear_a, nonlinear_a) == pytest.approx(neutral_a, abs=ATOL_A)


def test_correction_factors_from_memory() -> None:
    # Table 310.15(B)(1), 75 °C column, and Table 310.15(C)(1) (from memory).
    assert ambient_factor(30) == 1.0
    assert ambient_factor(31) == 0.94
    assert ambient_factor(40) == 0.88
    assert bundling_factor(3) == 1.0
    assert bundling_factor(4) == 0.8
    assert bundling_factor(9) == 0.7
    assert bundling_factor(10) == 0.5
    with pytest.raises(ValueError, match="above 70"):
        ambient_factor(71)


def _awg_area_mm2(size: str) -> float:
    """Cross-section by the AWG definition (ASTM B258: d = 0.005 in × 92^((36 − n)/39)),
    kcmil by 1 kcmil = 0.5067 mm²."""
    if size.endswith("/0"):
        gauge = 1 - int(size[0])
    elif int(size) >= 250:
        return int(size) * 0.506707
    else:
        gauge = int(size)
    diameter_mm = 0.005 * 92 ** ((36 - gauge) / 39) * 25.4
    return math.pi / 4 * diameter_mm**2


@pytest.mark.parametrize(
    # Resistivity at 20 °C and temperature coefficient: annealed copper 100% IACS
    # (1/58 Ω·mm²/m, α 0.00393) and EC aluminium 61% IACS (0.028264 Ω·mm²/m, α 0.00403), common
    # handbook values (from memory).
    ("material", "rho20", "alpha"),
    [("cu", 1 / 58, 0.00393), ("al", 0.028264, 0.00403)],
)
def test_table_8_resistance_agrees_with_resistivity(
    material: str, rho20: float, alpha: float
) -> None:
    # Chapter 9 Table 8 resistances (stranded, 75 °C) should sit 1-3% above the solid-wire
    # figure: stranding makes each strand longer than the cable (common practice: ~2%).
    rho75 = rho20 * (1 + alpha * (75 - 20))
    for size, table_ohm_per_kft in RESISTANCE_OHM_PER_KFT[material].items():  # type: ignore[index]
        computed = rho75 / _awg_area_mm2(size) * 304.8
        assert 1.01 <= table_ohm_per_kft / computed <= 1.03, (material, size)


def test_voltage_drop_three_phase_and_single_phase() -> None:
    # √3·I·R·L: 100 A over 100 ft of 3 AWG Cu (0.245 Ω/kft) = 4.244 V, 2.04% of 208 V (C).
    drop = voltage_drop_pct(100.0, 100.0, Conductor("3", "cu"), 208.0, three_phase=True)
    assert drop == pytest.approx(math.sqrt(3) * 100 * 0.0245 / 208 * 100, rel=REL_PCT)
    assert drop == pytest.approx(2.040, abs=0.001)
    # 2·I·R·L on 120/240: 50 A, 80 ft of 6 AWG Cu (0.491 Ω/kft) = 3.928 V, 1.64% of 240 V (C).
    single = voltage_drop_pct(50.0, 80.0, Conductor("6", "cu"), 240.0, three_phase=False)
    assert single == pytest.approx(3.928 / 240 * 100, rel=1e-6)


@pytest.mark.parametrize(
    ("text", "expected"),
    [
        ("#12", Conductor("12", "cu")),
        ("12 AWG", Conductor("12", "cu")),
        ("10 AL", Conductor("10", "al")),
        ("3/0 Cu", Conductor("3/0", "cu")),
        ("250 kcmil", Conductor("250", "cu")),
        ("2#12 + #12G", Conductor("12", "cu")),
        ("4/0 aluminum", Conductor("4/0", "al")),
        ("", None),
        ("tbd", None),
        ("#7", None),
    ],
)
def test_parse_conductor(text: str, expected: Conductor | None) -> None:
    assert parse_conductor(text) == expected


def test_conductor_text() -> None:
    assert str(Conductor("250", "al")) == "250 kcmil Al"
    assert str(Conductor("1/0", "cu")) == "1/0 AWG Cu"


def test_240_4_b_applies_to_the_adjusted_ampacity() -> None:
    # 3 AWG Cu: 100 A × 0.8 = 80 A adjusted. A 90 A device: next rating above 80 A is 80 A
    # itself, below 90, so 3 AWG is not protected; 2 AWG (115 × 0.8 = 92 A) is (240.4(B), C).
    assert select_conductor(75.0, "cu", ocpd_a=90, factor=0.8) == "2"
    # 4 AWG Cu: 85 × 0.94 = 79.9 A; the next rating above is 80 A: an 80 A device protects it.
    assert select_conductor(75.0, "cu", ocpd_a=80, factor=0.94) == "4"


# NEC 2023 110.14(C)(1) (from memory, docs/references.md): circuits rated 100 A or less, or
# terminals marked for 14-1 AWG, use the 60 °C column unless the equipment is listed for 75 °C;
# above 100 A and larger than 1 AWG, 75 °C. A schedule does not say how a terminal is marked, so a
# 14-1 AWG conductor is taken to land on a 14-1 AWG terminal.
@pytest.mark.parametrize(
    ("rating_a", "size", "listed_75c", "column_c"),
    [
        (100.0, "1/0", False, 60),
        (100.0, "1/0", True, 75),
        (110.0, "1/0", False, 75),
        (110.0, "2", False, 60),
        (110.0, "2", True, 75),
        (400.0, "500", False, 75),
        (20.0, "12", False, 60),
    ],
)
def test_termination_column_110_14_c_1(
    rating_a: float, size: str, listed_75c: bool, column_c: int
) -> None:
    assert termination_column_c(rating_a, size, listed_75c) == column_c


def test_allowable_current_is_limited_by_the_termination_column() -> None:
    # NEC 2023 110.14(C)(1) (from memory), Table 310.16 (F): 1/0 Cu on a 100 A circuit: 75 °C 150 A
    # × 0.8 = 120 A, but the 60 °C column limits it to 125 A, not reached; at 0.9 it is 135 -> 125
    # A.
    assert allowable_a("cu", "1/0", 100.0, 0.8) == (pytest.approx(120.0), 60)
    assert allowable_a("cu", "1/0", 100.0, 0.9) == (125.0, 60)
    assert allowable_a("cu", "1/0", 100.0, 0.9, terminations_75c=True) == (
        pytest.approx(135.0),
        75,
    )
    assert allowable_a("al", "14", 15.0) is None


@pytest.mark.parametrize(
    ("conductor_a", "ocpd_a", "receptacles", "protected"),
    [
        (55.0, 60, False, True),  # 240.4(B): 55 A is not a standard rating; next up is 60 A
        (55.0, 60, True, False),  # 240.4(B)(1): not on a circuit of several receptacles
        (55.0, 70, False, False),  # two ratings up
        (40.0, 45, False, False),  # 40 A is a standard rating: no next size up
        (40.0, 40, True, True),  # at the rating: always protected (240.4)
        (750.0, 800, False, True),  # next standard rating 800 A: allowed up to 800 A
        (850.0, 1000, False, False),  # 240.4(B)(3): not above 800 A (240.4(C) applies)
    ],
)
def test_protected_by_240_4_b(
    conductor_a: float, ocpd_a: int, receptacles: bool, protected: bool
) -> None:
    # NEC 2023 240.4(B) (from memory), 240.6(A) standard ratings (F); docs/references.md.
    assert protected_by(conductor_a, ocpd_a, receptacles) is protected


def test_select_conductor_by_termination_column() -> None:
    # NEC 2023 110.14(C)(1) (from memory), Table 310.16 (F): 100 A at a 100 A device, 60 °C
    # terminations: 2 AWG Cu 95 A is short, 1 AWG Cu 110 A; listed 75 °C terminations: 3 AWG Cu 100
    # A.
    assert select_conductor(100.0, "cu", 100, temperature_c=None) == "1"
    assert select_conductor(100.0, "cu", 100, temperature_c=None, terminations_75c=True) == "3"
    # 105 A at a 125 A device: 1 AWG is still a 14-1 AWG size at 60 °C (110 A carries it, next
    # rating 110 A < 125 A); 1/0 Cu is read at 75 °C (150 A).
    assert select_conductor(105.0, "cu", 125, temperature_c=None) == "1/0"

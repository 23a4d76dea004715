"""Figures checked against the outside world; the source of each check stands beside it."""

from __future__ import annotations

import math

import pytest
from conftest import panel_from

from balancer.domain.panel import Panel
from balancer.physics.analysis import analyze
from balancer.physics.phasors import nema_unbalance_pct, neutral_magnitude_unity_pf

ATOL_A = 1e-9


def _panel(loads_va: list[float], system: str = "208Y/120") -> Panel:
    # spaces 1, 3, 5 are on lines A, B, C (common practice numbering)
    return panel_from([(1, va, (s,)) for s, va in zip((1, 3, 5), loads_va, strict=False)], system)


@pytest.mark.parametrize("system", ["208Y/120", "480Y/277", "400Y/230"])
def test_balanced_wye_load_has_no_neutral_current(system: str) -> None:
    # Fact of the trade (any circuits textbook): three equal line-to-neutral loads 120° apart
    # sum to zero in the neutral.
    loads = analyze(_panel([1800.0, 1800.0, 1800.0], system))
    assert loads.neutral_a == pytest.approx(0.0, abs=1e-9 * sum(loads.line_a.values()))
    assert loads.imbalance_pct == pytest.approx(0.0)


def test_neutral_current_matches_the_unity_pf_formula() -> None:
    # |I_N| = √(Ia² + Ib² + Ic² − IaIb − IbIc − IcIa), the closed form of the phasor sum of
    # unity-PF currents 120° apart (common practice). 1200, 960, 720 VA at 120 V: 10, 8, 6 A
    # give √12 = 3.4641 A.
    loads = analyze(_panel([1200.0, 960.0, 720.0]))
    assert loads.neutral_a == pytest.approx(math.sqrt(12.0), abs=ATOL_A)
    assert neutral_magnitude_unity_pf(10, 8, 6) == pytest.approx(math.sqrt(12.0))
    assert loads.line_a == pytest.approx({"A": 10.0, "B": 8.0, "C": 6.0})


def test_single_phase_neutral_is_the_difference_of_the_lines() -> None:
    # 120/240 V single-phase 3-wire: the two 120 V halves are 180° apart, so the neutral
    # carries the difference of the line currents (common practice).
    loads = analyze(panel_from([(1, 1800.0, (1,)), (1, 600.0, (3,))], "120/240"))
    assert loads.line_a == pytest.approx({"A": 15.0, "B": 5.0})
    assert loads.neutral_a == pytest.approx(10.0)


@pytest.mark.parametrize(
    ("values", "expected_pct", "abs_tol"),
    [
        # NEMA MG 1 definition; example 462/463/455 V → 1.1 % (exact 1.087 %), from an
        # eng-tips forum thread quoting the MG 1 method (F; docs/references.md).
        ((462.0, 463.0, 455.0), 1.087, 0.001),
        # Trade-article example: 480/476/472 V → 0.84 %; (max − min)/average would wrongly
        # give 1.68 % (F; docs/references.md).
        ((480.0, 476.0, 472.0), 0.84, 0.001),
    ],
)
def test_nema_unbalance_published_examples(
    values: tuple[float, ...], expected_pct: float, abs_tol: float
) -> None:
    assert nema_unbalance_pct(values) == pytest.approx(expected_pct, abs=abs_tol)


def test_schedule_convention_splits_multipole_loads() -> None:
    # Common practice for panel schedules: a 2-pole line-to-line load counts half on each of
    # its lines, a 3-pole load a third on each.
    heater, fan = (2, 3000.0, (1, 3)), (3, 9000.0, (2, 4, 6))
    loads = analyze(panel_from([heater, fan]))
    assert loads.phase_va == pytest.approx({"A": 4500.0, "B": 4500.0, "C": 3000.0})
    # the 2-pole 208 V load draws 3000/208 = 14.42 A in each of its lines
    heater_only = analyze(panel_from([heater]))
    assert heater_only.line_a["A"] == pytest.approx(3000 / 208)
    assert heater_only.neutral_a == pytest.approx(0.0, abs=ATOL_A)


def test_network_single_phase_neutral_does_not_cancel() -> None:
    # Two lines of a 208Y/120 wye are 120° apart, not 180°: 10 A and 5 A at unity PF leave
    # √(10² + 5² − 10·5) = √75 A on the neutral (the phasor sum; common practice for network
    # services), where a 120/240 V panel would carry the 5 A difference.
    loads = analyze(panel_from([(1, 1200.0, (1,)), (1, 600.0, (3,))], "120/208 network"))
    assert loads.neutral_a == pytest.approx(math.sqrt(75.0))

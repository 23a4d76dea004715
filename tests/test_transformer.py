"""Transformer mapping of secondary loads onto primary lines.

Hand checks use the delta-winding relation "the line current at a corner of a delta is the
difference of the two winding currents meeting there" (any circuits text, e.g. Grainger &
Stevenson, Power System Analysis, 1994, ch. 1; from memory) and the law of cosines. The
time-domain checks simulate the ideal transformer on sampled waveforms with numpy: ampere-turn
balance per winding, Kirchhoff's current law at the delta corners, then a Fourier projection.
"""

from __future__ import annotations

import cmath
import math

import numpy as np
import pytest

from balancer.domain.systems import get_system
from balancer.errors import ScheduleError
from balancer.physics.phasors import current_phasor
from balancer.physics.transformer import (
    loading_pct,
    make_transformer,
    primary_line_currents,
    primary_phase_va,
)

ATOL_A = 1e-6
SIM_ATOL_A = 1e-6

P480D = get_system("480 delta")
P480Y = get_system("480Y/277")
S208 = get_system("208Y/120")
S240 = get_system("120/240")


def _secondary_currents(phase_va: dict[str, float], pf: float = 1.0) -> dict[str, complex]:
    return {k: current_phasor(va, S208.voltage_phasor(k), pf) for k, va in phase_va.items() if va}


def test_single_phase_load_on_delta_wye_lands_in_one_winding_and_two_lines() -> None:
    t = make_transformer("T1", 45, P480D, S208, "delta-wye")
    # 12 kVA on a-n at 120 V is 100 A; turns ratio 480/120 = 4, so the A-C winding carries 25 A.
    out = primary_line_currents(t, _secondary_currents({"A": 12000.0}), ("A", "B", "C"))
    assert abs(out["A"]) == pytest.approx(25.0, abs=ATOL_A)
    assert abs(out["C"]) == pytest.approx(25.0, abs=ATOL_A)
    assert abs(out["B"]) == pytest.approx(0.0, abs=ATOL_A)
    assert abs(sum(out.values())) < ATOL_A  # a delta primary has no neutral path


def test_balanced_load_gives_root_three_times_winding_current() -> None:
    t = make_transformer("T1", 45, P480D, S208, "delta-wye")
    out = primary_line_currents(
        t, _secondary_currents(dict.fromkeys("ABC", 10000.0)), ("A", "B", "C")
    )
    winding_a = 10000.0 / 480.0
    for line in "ABC":
        # balanced delta: line current = √3 × winding current (textbook relation, from memory),
        # and also = total VA / (√3 · V_LL)
        assert abs(out[line]) == pytest.approx(math.sqrt(3) * winding_a, abs=ATOL_A)
        assert abs(out[line]) == pytest.approx(30000.0 / (math.sqrt(3) * 480.0), abs=ATOL_A)


def test_two_loaded_windings_match_law_of_cosines_hand_calculation() -> None:
    t = make_transformer("T1", 45, P480D, S208, "delta-wye")
    secondary = _secondary_currents({"A": 12000.0, "B": 6000.0})
    out = primary_line_currents(t, secondary, ("A", "B", "C"))
    # windings: a → A-C, 25 A; b → B-A, 12.5 A, their currents 120° apart.
    # Line A is the difference of the two: √(25² + 12.5² − 2·25·12.5·cos 120°) = 33.0719 A.
    hand_line_a = math.sqrt(25**2 + 12.5**2 - 2 * 25 * 12.5 * math.cos(math.radians(120)))
    assert abs(out["A"]) == pytest.approx(hand_line_a, abs=ATOL_A)
    assert abs(out["B"]) == pytest.approx(12.5, abs=ATOL_A)
    assert abs(out["C"]) == pytest.approx(25.0, abs=ATOL_A)
    # The secondary neutral current (|100∠0 + 50∠−120| = 86.6 A) does not pass to the delta.
    neutral_secondary = abs(sum(secondary.values()))
    assert neutral_secondary == pytest.approx(math.sqrt(100**2 + 50**2 - 100 * 50), abs=ATOL_A)
    assert abs(sum(out.values())) < ATOL_A


def test_wye_wye_passes_the_neutral_current_through() -> None:
    t = make_transformer("T2", 45, P480Y, S208, "wye-wye")
    out = primary_line_currents(t, _secondary_currents({"A": 12000.0}), ("A", "B", "C"))
    assert abs(out["A"]) == pytest.approx(12000.0 / 277.0, abs=ATOL_A)
    assert abs(sum(out.values())) == pytest.approx(12000.0 / 277.0, abs=ATOL_A)


def test_single_phase_transformer_takes_the_feeder_lines() -> None:
    t = make_transformer("T3", 25, P480D, S240, "single-phase")
    a_only = {"A": current_phasor(12000.0, S240.voltage_phasor("A"))}
    out = primary_line_currents(t, a_only, ("B", "C"))
    # 12 kVA from one 120 V half: 12000 / 480 = 25 A on both primary lines.
    assert abs(out["B"]) == pytest.approx(25.0, abs=ATOL_A)
    assert abs(out["C"]) == pytest.approx(25.0, abs=ATOL_A)
    assert abs(out["A"]) == 0.0
    va = primary_phase_va(t, {"A": 12000.0, "B": 4000.0}, ("B", "C"))
    assert va == {"A": 0.0, "B": 8000.0, "C": 8000.0}


def test_primary_phase_va_conserves_the_total() -> None:
    t = make_transformer("T1", 45, P480D, S208, "delta-wye")
    secondary = {"A": 12000.0, "B": 6000.0, "C": 1500.0}
    va = primary_phase_va(t, secondary, ("A", "B", "C"))
    assert math.fsum(va.values()) == pytest.approx(19500.0)
    # A-C winding carries a, B-A carries b, C-B carries c; half of each on its two lines.
    assert va == pytest.approx({"A": 9000.0, "B": 3750.0, "C": 6750.0})


def test_loading_is_against_one_winding_share() -> None:
    t = make_transformer("T1", 45, P480D, S208, "delta-wye")
    assert loading_pct(t, _secondary_currents({"A": 12000.0})) == pytest.approx(80.0)
    assert loading_pct(t, _secondary_currents(dict.fromkeys("ABC", 15000.0))) == pytest.approx(
        100.0
    )


@pytest.mark.parametrize(
    ("phase_va", "pf"),
    [
        ({"A": 12000.0}, 1.0),
        ({"A": 12000.0, "B": 6000.0}, 0.85),
        ({"A": 9000.0, "B": 2500.0, "C": 14000.0}, -0.9),
    ],
)
def test_delta_wye_matches_time_domain_simulation(phase_va: dict[str, float], pf: float) -> None:
    t = make_transformer("T1", 75, P480D, S208, "delta-wye")
    secondary = _secondary_currents(phase_va, pf)
    phasor = primary_line_currents(t, secondary, ("A", "B", "C"))

    omega = 2 * math.pi * 60.0
    samples = 4096
    time_s = np.arange(samples) / samples / 60.0  # one cycle

    def wave(value: complex) -> np.ndarray:
        return math.sqrt(2) * np.real(value * np.exp(1j * omega * time_s))

    def phasor_of(signal: np.ndarray) -> complex:
        return complex(np.sum(signal * np.exp(-1j * omega * time_s)) * math.sqrt(2) / samples)

    turns = 480.0 / 120.0
    # Both systems list their phasors with their own A at 0°; on one time axis the secondary
    # sits 30° behind (delta-wye displacement), so its waveforms are rotated by −30° here.
    shift = cmath.rect(1.0, math.radians(-30.0))
    # Each winding's voltage must be in phase with the secondary phase it drives, or the model
    # below would not be a real transformer.
    for k, (p, q) in {"A": ("A", "C"), "B": ("B", "A"), "C": ("C", "B")}.items():
        v_winding = wave(P480D.voltage_between(p, q))
        v_secondary = wave(S208.voltage_phasor(k) * shift)
        np.testing.assert_allclose(v_winding, turns * v_secondary, atol=1e-9 * 480)
    # Ampere-turn balance: winding current = secondary current / turns (flowing p → q).
    i_winding = {k: wave(secondary.get(k, 0j) * shift) / turns for k in "ABC"}
    # Kirchhoff at each delta corner: line = winding leaving it − winding arriving at it.
    i_line = {
        "A": i_winding["A"] - i_winding["B"],
        "B": i_winding["B"] - i_winding["C"],
        "C": i_winding["C"] - i_winding["A"],
    }
    for line in "ABC":
        assert abs(phasor_of(i_line[line]) - phasor[line]) < SIM_ATOL_A
    # Instantaneous power in equals power out at every sample (ideal transformer).
    v_line = {line: wave(P480D.voltage_phasor(line)) for line in "ABC"}
    p_primary = sum(v_line[line] * i_line[line] for line in "ABC")
    p_secondary = sum(
        wave(S208.voltage_phasor(k) * shift) * wave(secondary.get(k, 0j) * shift) for k in "ABC"
    )
    np.testing.assert_allclose(p_primary, p_secondary, atol=1e-6 * sum(phase_va.values()))


def test_unknown_connection_and_wrong_secondary_are_clear_errors() -> None:
    with pytest.raises(ScheduleError, match="connection 'zigzag' is not known"):
        make_transformer("T9", 30, P480D, S208, "zigzag", where="Building!F5")
    with pytest.raises(ScheduleError, match="three-phase wye secondary"):
        make_transformer("T9", 30, P480D, S240, "delta-wye")
    with pytest.raises(ScheduleError, match="must be a positive number"):
        make_transformer("T9", 0, P480D, S208, "delta-wye")


def test_phase_shift_is_thirty_degrees_lagging() -> None:
    # Secondary a-n in phase with primary A-C: 30° behind primary A-N (see module comment).
    angle = cmath.phase(P480D.voltage_between("A", "C")) - cmath.phase(P480D.voltage_phasor("A"))
    assert math.degrees(angle) == pytest.approx(-30.0)


def test_single_phase_loading_counts_the_heavier_half_of_the_winding() -> None:
    """A 25 kVA 120/240 V unit: full-load current 25,000 / 240 = 104.2 A in each secondary line
    conductor (common practice). 12 kVA all on one 120 V half draws 100 A there: 96 %, not the
    48 % its kVA alone would suggest; the same 12 kVA at 240 V draws 50 A: 48 %."""
    unit = make_transformer("T", 25, P480Y, S240, "single-phase")
    one_half = {"A": current_phasor(12_000, S240.voltage_phasor("A"), 1.0)}
    assert abs(one_half["A"]) == pytest.approx(100.0)
    assert loading_pct(unit, one_half) == pytest.approx(96.0)
    across = current_phasor(12_000, S240.voltage_between("A", "B"), 1.0)
    assert loading_pct(unit, {"A": across, "B": -across}) == pytest.approx(48.0)


def test_single_phase_unit_cannot_feed_two_lines_of_a_wye() -> None:
    network = get_system("120/208 network")
    with pytest.raises(ScheduleError, match="centre-tapped winding"):
        make_transformer("T", 25, P480Y, network, "single-phase")

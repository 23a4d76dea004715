"""Harmonic profiles and what harmonic currents do to line and neutral RMS currents.

Sources beside each check: C = computed from the cited formula, F = read in a published
source, M = recalled from memory.
"""

from __future__ import annotations

import math
from pathlib import Path

import numpy as np
import pytest

from balancer.domain.panel import Circuit, Panel
from balancer.domain.systems import System, get_system
from balancer.errors import ScheduleError
from balancer.physics.analysis import analyze
from balancer.physics.harmonics import (
    Profile,
    all_profiles,
    builtin_profiles,
    find_profile,
    load_profiles,
    neutral_by_order,
    profile_for,
)
from balancer.physics.phasors import circuit_harmonic_currents, rms

ATOL_A = 1e-9


def panel_of(system: System, circuits: list[Circuit]) -> Panel:
    return Panel("demo panel (invented data)", system, 42, tuple(circuits))


def with_profile(cid: str, space: int, load_va: float, profile: str, poles: int = 1) -> Circuit:
    spaces = tuple(space + 2 * k for k in range(poles))
    return Circuit(cid, "demo", poles, load_va, spaces=spaces, harmonic_profile=profile)


THIRD_ONLY = {"third": Profile("third", "invented: a third harmonic of 40 %", ((3, 0.4),))}


def test_balanced_third_harmonic_only_neutral_is_three_times_i3() -> None:
    """Balanced non-linear wye loads with only a third harmonic: I_N = 3·I3 (M: textbook
    result, e.g. Dugan, McGranaghan, Santoso & Beaty, Electrical Power Systems Quality,
    chapter on harmonics; docs/references.md)."""
    system = get_system("208Y/120")
    circuits = [with_profile(f"c{i}", s, 1800.0, "third") for i, s in enumerate((1, 3, 5))]
    loads = analyze(panel_of(system, circuits), THIRD_ONLY)
    rms_a = 1800.0 / 120.0
    i1 = rms_a / math.sqrt(1 + 0.4**2)
    i3 = 0.4 * i1
    assert loads.neutral_a == pytest.approx(0.0, abs=ATOL_A)  # fundamentals cancel
    assert loads.neutral_rms_a == pytest.approx(3 * i3)
    assert loads.neutral_without_harmonics_a == pytest.approx(0.0, abs=ATOL_A)
    for line in "ABC":
        assert loads.line_a[line] == pytest.approx(i1)
        assert loads.line_rms_a[line] == pytest.approx(rms_a)
    # 3·I3 = 1.2·I1 > √(1 + 0.16)·I1: the neutral carries more than any line (C).
    assert loads.neutral_exceeds_phase


def test_third_harmonic_angle_is_three_times_the_line_angle() -> None:
    """Harmonic h of a load on a line at angle φ sits at h·φ, so the triplens of A, B and C
    are in phase (zero sequence) and other orders keep a 120° spacing (C)."""
    system = get_system("480Y/277")
    spectrum = {3: 0.5, 5: 0.3}
    by_line = {
        line: circuit_harmonic_currents(system, [line], 2770.0, 1.0, spectrum) for line in "ABC"
    }
    thirds = [by_line[line][3].lines[line] for line in "ABC"]
    assert thirds[1] == pytest.approx(thirds[0])
    assert thirds[2] == pytest.approx(thirds[0])
    fifths = [by_line[line][5].lines[line] for line in "ABC"]
    assert abs(sum(fifths)) == pytest.approx(0.0, abs=ATOL_A)
    # Fifth harmonic is negative sequence: B's fifth sits at 5·(−120°) = +120° (C).
    assert fifths[1] / fifths[0] == pytest.approx(complex(-0.5, math.sqrt(3) / 2))


def test_single_phase_three_wire_odd_harmonics_cancel_in_neutral() -> None:
    """120/240 V: the two lines are 180° apart, so every odd harmonic of equal loads on A and B
    cancels in the neutral (C: h·180° is 180° for odd h)."""
    system = get_system("120/240")
    circuits = [
        with_profile("a", 1, 1200.0, "switch-mode"),
        with_profile("b", 3, 1200.0, "computer"),
    ]
    loads = analyze(Panel("demo (invented)", system, 24, tuple(circuits)))
    assert loads.neutral_rms_a == pytest.approx(0.0, abs=ATOL_A)
    assert loads.line_rms_a["A"] == pytest.approx(10.0)
    assert not loads.neutral_exceeds_phase


def test_delta_load_triplens_stay_out_of_the_lines() -> None:
    """A 3-pole load as three equal delta elements: triplen currents of the elements are in
    phase and circulate, so the lines carry none (C: I_A = I_AB − I_CA)."""
    system = get_system("208Y/120")
    parts = circuit_harmonic_currents(system, ["A", "B", "C"], 9000.0, 0.9, {3: 0.5, 5: 0.2})
    for line in "ABC":
        assert abs(parts[3].lines[line]) == pytest.approx(0.0, abs=ATOL_A)
        assert abs(parts[5].lines[line]) > 0.1
    assert abs(parts[3].neutral) == pytest.approx(0.0, abs=ATOL_A)


def test_switch_mode_panel_flags_neutral_above_phase() -> None:
    """Balanced switch-mode loads (bundled profile, typical values from memory): the triplens
    add to a neutral above the phase current, which NEC 310.15(E) counts as current-carrying
    and 220.61(C) gives no demand reduction (F: NEC 2023; docs/references.md)."""
    system = get_system("208Y/120")
    circuits = [
        Circuit(f"pc{i}", "demo workstations", 1, 1440.0, spaces=(s,), load_class="computers")
        for i, s in enumerate((1, 3, 5))
    ]
    loads = analyze(panel_of(system, circuits))
    profile = builtin_profiles()["switch-mode"]
    m = profile.as_dict()
    i1 = 12.0 / math.sqrt(1 + sum(v * v for v in m.values()))
    triplen = [3 * m[h] * i1 for h in profile.triplen_orders()]
    assert loads.neutral_rms_a == pytest.approx(math.sqrt(sum(x * x for x in triplen)))
    assert loads.neutral_rms_a > max(loads.line_rms_a.values())
    assert loads.neutral_exceeds_phase
    # Real power falls with the distortion factor 1/√(1 + THD²) at unity displacement PF (C).
    assert loads.phase_kw["A"] == pytest.approx(1.44 / math.sqrt(1 + (profile.thd_pct / 100) ** 2))

    linear = [Circuit(c.id, c.description, 1, c.load_va, spaces=c.spaces) for c in circuits]
    plain = analyze(panel_of(system, linear))
    assert plain.neutral_rms_a == pytest.approx(0.0, abs=ATOL_A)
    assert not plain.neutral_exceeds_phase


def test_six_pulse_profile_matches_fourier_series_of_ideal_current() -> None:
    """The bundled six-pulse profile equals the spectrum of an ideal six-pulse line current,
    ±1 for 120° and 0 for 60° each half-cycle (C: FFT of the sampled waveform; I_h = I_1/h)."""
    samples = 3600
    x = (np.arange(samples) + 0.5) * 2 * math.pi / samples
    degrees = np.degrees(x)
    wave = np.where((degrees > 30) & (degrees < 150), 1.0, 0.0)
    wave -= np.where((degrees > 210) & (degrees < 330), 1.0, 0.0)
    spectrum = np.abs(np.fft.rfft(wave))
    bundled = builtin_profiles()["six-pulse"].as_dict()
    for h, m in bundled.items():
        assert spectrum[h] / spectrum[1] == pytest.approx(m, abs=1e-4)
    for h in (2, 3, 4, 6, 9, 15):
        assert spectrum[h] / spectrum[1] == pytest.approx(0.0, abs=1e-6)


def test_neutral_hook_sums_to_the_analysis_neutral() -> None:
    """The per-order neutral contributions an optimiser would sum give the analysed neutral."""
    system = get_system("208Y/120")
    circuits = [
        Circuit("1", "demo", 1, 1500.0, spaces=(1,), load_class="computers", power_factor=0.95),
        Circuit("2", "demo", 1, 900.0, spaces=(3,), load_class="led lighting"),
        Circuit("3", "demo", 1, 2000.0, spaces=(6,)),
        Circuit("4", "demo", 2, 3000.0, spaces=(7, 9), load_class="vfd", power_factor=0.85),
        Circuit("5", "demo", 2, 4000.0, spaces=(11, 13), voltage_v=208.0, neutral_va=500.0),
    ]
    panel = panel_of(system, circuits)
    loads = analyze(panel)
    per_order: dict[int, complex] = {}
    for circuit in circuits:
        for h, value in neutral_by_order(system, circuit, panel.lines_of(circuit)).items():
            per_order[h] = per_order.get(h, 0j) + value
    assert rms(per_order.values()) == pytest.approx(loads.neutral_rms_a)
    assert abs(per_order[1]) == pytest.approx(loads.neutral_a)
    # Other candidate lines give other neutrals: moving circuit 3 to A changes order 1 only.
    moved = neutral_by_order(system, circuits[2], ("A",))
    assert set(moved) == {1}
    assert neutral_by_order(get_system("480 delta"), circuits[3], ("A", "B")) == {}


def test_profile_lookup_by_class_and_override() -> None:
    assert find_profile("Computers") is builtin_profiles()["switch-mode"]
    assert find_profile("EV charger") is builtin_profiles()["ev-charger"]
    assert find_profile("lighting") is None  # the general class says nothing of the source
    assert find_profile("") is None
    plain = Circuit("1", "demo", 1, 100.0, load_class="computers")
    assert profile_for(plain) is builtin_profiles()["switch-mode"]
    overridden = Circuit("1", "demo", 1, 100.0, load_class="computers", harmonic_profile="none")
    profile = profile_for(overridden)
    assert profile is not None
    assert profile.name == "linear"
    assert profile.thd_pct == 0.0
    blank = Circuit("1", "demo", 1, 100.0, load_class="computers", harmonic_profile=" ")
    assert profile_for(blank) is builtin_profiles()["switch-mode"]


def test_unknown_profile_is_reported_with_its_circuit() -> None:
    system = get_system("208Y/120")
    bad = Circuit("12", "demo", 1, 100.0, spaces=(1,), source_row=14, harmonic_profile="xx")
    with pytest.raises(
        ScheduleError, match=r"circuit 12 \(row 14\): unknown harmonic profile 'xx'"
    ):
        analyze(panel_of(system, [bad]))


def test_user_profiles_file(tmp_path: Path) -> None:
    path = tmp_path / "harmonics.toml"
    path.write_text(
        '[[profile]]\nname = "server-rack"\naliases = ["servers"]\n'
        'source = "invented demo values"\nspectrum = { 3 = 0.1, 5 = 0.05 }\n'
        '[[profile]]\nname = "led"\nspectrum = { 3 = 0.9 }\n',
        "utf-8",
    )
    mine = load_profiles(path)
    assert mine["server-rack"].as_dict() == {3: 0.1, 5: 0.05}
    merged = all_profiles(path)
    assert merged["led"].as_dict() == {3: 0.9}  # replaces the bundled one
    assert "switch-mode" in merged
    assert find_profile("servers", merged) == mine["server-rack"]
    assert find_profile("led", merged) == mine["led"]
    assert mine["server-rack"].thd_pct == pytest.approx(100 * math.sqrt(0.01 + 0.0025))


@pytest.mark.parametrize(
    ("text", "message"),
    [
        ("[[profile]\n", "not valid TOML"),
        ("x = 1\n", "no \\[\\[profile\\]\\] tables"),
        ("[[profile]]\nspectrum = { 3 = 0.1 }\n", "malformed"),
        ('[[profile]]\nname = "a"\nspectrum = { 1 = 0.1 }\n', "order 1 is outside"),
        ('[[profile]]\nname = "a"\nspectrum = { 3 = -0.1 }\n', "outside 0..10"),
        ('[[profile]]\nname = "a"\nspectrum = { x = 0.1 }\n', "malformed"),
        ('[[profile]]\nname = "a"\nspectrum = [0.1]\n', "spectrum must be a table"),
    ],
)
def test_malformed_profiles_file(tmp_path: Path, text: str, message: str) -> None:
    path = tmp_path / "harmonics.toml"
    path.write_text(text, "utf-8")
    with pytest.raises(ScheduleError, match=message):
        load_profiles(path)


def test_every_bundled_profile_names_its_source() -> None:
    for profile in builtin_profiles().values():
        assert profile.source, profile.name
        assert all(2 <= h <= 99 and m >= 0 for h, m in profile.spectrum)


def test_non_overlapping_pulses_give_neutral_root_three_times_phase() -> None:
    """Balanced loads drawing narrow current pulses that do not overlap between phases: the
    neutral RMS is √3 × the phase RMS (M: Gruzs, IEEE Trans. Industry Applications 26(4), 1990;
    C: the six pulses per cycle in the neutral do not overlap, so its mean square is the sum of
    the three phases'). The spectrum is taken by FFT from a sampled 50° raised-cosine pulse."""
    samples = 7200
    x = np.arange(samples) * 2 * math.pi / samples
    width = math.radians(50.0)

    def pulse(at: np.ndarray) -> np.ndarray:
        offset = (at + math.pi) % (2 * math.pi) - math.pi
        return np.where(np.abs(offset) < width / 2, np.cos(math.pi * offset / width) ** 2, 0.0)

    wave = pulse(x) - pulse(x - math.pi)
    coefficients = np.abs(np.fft.rfft(wave))
    spectrum = tuple(
        (h, float(coefficients[h] / coefficients[1]))
        for h in range(2, 100)
        if coefficients[h] / coefficients[1] > 1e-12
    )
    profiles = {"pulses": Profile("pulses", "invented: narrow rectifier pulses", spectrum)}
    system = get_system("480Y/277")
    circuits = [with_profile(f"c{i}", s, 2770.0, "pulses") for i, s in enumerate((1, 3, 5))]
    loads = analyze(panel_of(system, circuits), profiles)
    assert loads.line_rms_a["A"] == pytest.approx(10.0)
    assert loads.neutral_rms_a == pytest.approx(math.sqrt(3) * 10.0, rel=1e-6)
    assert loads.neutral_exceeds_phase

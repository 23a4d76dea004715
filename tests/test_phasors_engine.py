"""Phasor engine: circuit currents, line and neutral currents, power, symmetrical components.

Reference values carry their source: C = computed from the cited formula, F = read in a
published source, M = recalled from memory.
"""

from __future__ import annotations

import cmath
import math

import numpy as np
import pytest

from balancer.domain.panel import Circuit, Panel
from balancer.domain.systems import System, get_system
from balancer.errors import ScheduleError
from balancer.physics.analysis import analyze
from balancer.physics.harmonics import Profile
from balancer.physics.phasors import (
    A_OP,
    circuit_harmonic_currents,
    circuit_line_currents,
    nema_unbalance_pct,
    sequence_components,
    unbalance_factor_pct,
)

ATOL_A = 1e-9
RTOL_TIME = 1e-9  # time-domain RMS of a sampled trigonometric polynomial is exact to rounding
SAMPLES_PER_CYCLE = 4096

# Spaces of the first row on each line (common practice numbering: 1-2 A, 3-4 B, 5-6 C).
FIRST_SPACE = {"A": 1, "B": 3, "C": 5}


def panel_of(system: System, circuits: list[Circuit], spaces: int = 42) -> Panel:
    return Panel("demo panel (invented data)", system, spaces, tuple(circuits))


# ---------------------------------------------------------------------------------------------
# Time-domain model, written independently of the phasor code: instantaneous voltages from
# the nominal figures of the trade, each load's current a fixed waveform that moves with its
# voltage, conductor currents by Kirchhoff's current law, RMS by sampling one cycle.


def voltage_wave(system: System, line: str, t: np.ndarray) -> np.ndarray:
    index = system.lines.index(line)
    peak = system.line_to_neutral_v[index] * math.sqrt(2)
    omega = 2 * math.pi * system.frequency_hz
    return peak * np.cos(omega * t + math.radians(system.angle_deg[index]))


def load_wave(
    rms_a: float, voltage_angle: float, pf_angle: float, spectrum: dict[int, float], x: np.ndarray
) -> np.ndarray:
    """Current of one load element: RMS ``rms_a``, the fundamental lagging its voltage by
    ``pf_angle``, harmonics of the same waveform shifted with the voltage (x = ωt)."""
    fundamental = rms_a / math.sqrt(1 + sum(m * m for m in spectrum.values()))
    wave = np.cos(x + voltage_angle - pf_angle)
    for h, m in spectrum.items():
        wave = wave + m * np.cos(h * (x + voltage_angle))
    return math.sqrt(2) * fundamental * wave


def sampled_rms(wave: np.ndarray) -> float:
    return float(np.sqrt(np.mean(wave * wave)))


def time_axis(system: System) -> np.ndarray:
    period = 1.0 / system.frequency_hz
    return np.arange(SAMPLES_PER_CYCLE) * period / SAMPLES_PER_CYCLE


# ---------------------------------------------------------------------------------------------


@pytest.mark.parametrize("designation", ["208Y/120", "400Y/230", "120/240", "240/120"])
def test_time_domain_matches_phasors_mixed_pf_and_harmonics(designation: str) -> None:
    """Line and neutral RMS from sampled waveforms equal the phasor figures (C, Parseval)."""
    system = get_system(designation)
    t = time_axis(system)
    x = 2 * math.pi * system.frequency_hz * t
    computer = {3: 0.81, 5: 0.61, 7: 0.37, 9: 0.16}
    lighting = {3: 0.2, 5: 0.1}
    ln_lines = [line for line in system.lines if system.serves_line_to_neutral(line)]
    # (line, VA, PF, spectrum): lagging, leading and unity loads, linear and non-linear.
    specs = [
        (ln_lines[0], 1500.0, 0.8, computer),
        (ln_lines[0], 700.0, -0.9, {}),
        (ln_lines[1], 1100.0, 1.0, lighting),
        (ln_lines[-1], 400.0, 0.7, {}),
    ]
    circuits = [
        Circuit(str(i), "demo", 1, va, spaces=(FIRST_SPACE[line] + 12 * i,), power_factor=pf)
        for i, (line, va, pf, _) in enumerate(specs)
    ]
    profiles = {}
    for i, (_, _, _, spectrum) in enumerate(specs):
        if spectrum:
            name = f"demo-{i}"
            profiles[name] = Profile(name, "invented", tuple(spectrum.items()))
            circuits[i] = Circuit(
                circuits[i].id,
                "demo",
                1,
                circuits[i].load_va,
                spaces=circuits[i].spaces,
                power_factor=circuits[i].power_factor,
                harmonic_profile=name,
            )
    # A 2-pole line-to-line load with a lagging PF and a six-pulse-like spectrum.
    first, second = system.lines[0], system.lines[1]
    circuits.append(
        Circuit(
            "ll",
            "demo",
            2,
            3000.0,
            spaces=(FIRST_SPACE[first] + 48, FIRST_SPACE[first] + 50),
            power_factor=0.85,
            harmonic_profile="ll",
        )
    )
    ll_spectrum = {5: 0.2, 7: 0.14}
    profiles["ll"] = Profile("ll", "invented", tuple(ll_spectrum.items()))
    panel = panel_of(system, circuits, 84)
    loads = analyze(panel, profiles)

    line_waves = {line: np.zeros_like(t) for line in system.lines}
    for (line, va, pf, spectrum), circuit in zip(specs, circuits, strict=False):
        assert panel.lines_of(circuit) == (line,)
        v_angle = math.radians(system.angle_deg[system.lines.index(line)])
        rms_a = va / system.line_to_neutral_v[system.lines.index(line)]
        line_waves[line] += load_wave(rms_a, v_angle, math.acos(abs(pf)) * np.sign(pf), spectrum, x)
    ll_lines = panel.lines_of(circuits[-1])
    v_ll = voltage_wave(system, ll_lines[0], t) - voltage_wave(system, ll_lines[1], t)
    # Angle of the line-to-line voltage from its own samples (first Fourier coefficient).
    ll_angle = cmath.phase(np.sum(v_ll * np.exp(-1j * x)))
    i_ll = load_wave(3000.0 / system.line_to_line_v, ll_angle, math.acos(0.85), ll_spectrum, x)
    line_waves[ll_lines[0]] += i_ll
    line_waves[ll_lines[1]] -= i_ll
    neutral_wave = np.sum(list(line_waves.values()), axis=0)

    for line in system.lines:
        assert loads.line_rms_a[line] == pytest.approx(sampled_rms(line_waves[line]), rel=RTOL_TIME)
    assert loads.neutral_rms_a == pytest.approx(sampled_rms(neutral_wave), rel=RTOL_TIME, abs=1e-9)
    # Each load element's own RMS current is its VA over its voltage (the RMS convention).
    assert sampled_rms(i_ll) == pytest.approx(3000.0 / system.line_to_line_v, rel=RTOL_TIME)
    assert first != second


def test_balanced_three_phase_neutral_zero_and_power_constant() -> None:
    """Balanced wye: I_N = 0 and p(t) = 3·Vm·Im/2·cos θ at every instant (common practice, any
    circuits textbook; docs/references.md)."""
    system = get_system("480Y/277")
    pf = 0.82
    circuits = [
        Circuit(f"c{i}", "demo", 1, 9000.0, spaces=(s,), power_factor=pf)
        for i, s in enumerate((1, 3, 5))
    ]
    loads = analyze(panel_of(system, circuits))
    assert loads.neutral_rms_a == pytest.approx(0.0, abs=1e-9 * 3 * 9000 / 277)
    assert loads.unbalance_factor_pct == pytest.approx(0.0, abs=1e-9)
    t = time_axis(system)
    omega = 2 * math.pi * system.frequency_hz
    power = np.zeros_like(t)
    for line in "ABC":
        current = circuit_line_currents(system, [line], 9000.0, pf)[line]
        i_wave = math.sqrt(2) * abs(current) * np.cos(omega * t + cmath.phase(current))
        power += voltage_wave(system, line, t) * i_wave
    vm, im = 277.0 * math.sqrt(2), 9000.0 / 277.0 * math.sqrt(2)
    expected = 3 * vm * im / 2 * pf
    assert np.allclose(power, expected, rtol=1e-12)
    assert sum(loads.phase_kw.values()) == pytest.approx(3 * 9.0 * pf)
    assert all(value == pytest.approx(pf) for value in loads.phase_pf.values())


def test_line_currents_of_delta_loads_follow_kcl() -> None:
    """I_A = I_AB − I_CA, I_B = I_BC − I_AB, I_C = I_CA − I_BC (C, Kirchhoff)."""
    system = get_system("208Y/120")
    pairs = {("A", "B"): (2000.0, 0.9), ("B", "C"): (3500.0, 1.0), ("C", "A"): (1200.0, -0.8)}
    branch = {}
    for (p, q), (va, pf) in pairs.items():
        currents = circuit_line_currents(system, [p, q], va, pf)
        branch[p + q] = currents[p]
        assert currents[q] == pytest.approx(-currents[p])
        # Magnitude VA / 208 V, angle the V_pq angle minus the PF angle (C).
        assert abs(currents[p]) == pytest.approx(va / 208.0)
    circuits = [
        Circuit("ab", "demo", 2, 2000.0, spaces=(1, 3), power_factor=0.9),
        Circuit("bc", "demo", 2, 3500.0, spaces=(4, 6), power_factor=1.0),
        Circuit("ca", "demo", 2, 1200.0, spaces=(11, 13), power_factor=-0.8),
    ]
    panel = panel_of(system, circuits)
    assert [panel.lines_of(c) for c in circuits] == [("A", "B"), ("B", "C"), ("C", "A")]
    loads = analyze(panel)
    assert loads.line_a["A"] == pytest.approx(abs(branch["AB"] - branch["CA"]))
    assert loads.line_a["B"] == pytest.approx(abs(branch["BC"] - branch["AB"]))
    assert loads.line_a["C"] == pytest.approx(abs(branch["CA"] - branch["BC"]))
    assert loads.neutral_rms_a == pytest.approx(0.0, abs=ATOL_A)


def test_v_ab_leads_v_a_by_thirty_degrees() -> None:
    """ABC sequence: V_AB = √3·V_A∠30° (common practice)."""
    system = get_system("208Y/120")
    current = circuit_line_currents(system, ["A", "B"], 208.0, 1.0)["A"]
    assert current == pytest.approx(cmath.rect(1.0, math.radians(30.0)))


def test_high_leg_neutral_is_difference_of_a_and_c() -> None:
    """240/120 V high-leg delta: A-N and C-N are 180° apart, so at unity PF the neutral is
    |I_A − I_C| (C from the phasor sum; docs/references.md)."""
    system = get_system("240/120")
    circuits = [
        Circuit("a1", "demo", 1, 1800.0, spaces=(1,)),
        Circuit("a2", "demo", 1, 600.0, spaces=(2,)),
        Circuit("c1", "demo", 1, 900.0, spaces=(5,)),
    ]
    loads = analyze(panel_of(system, circuits))
    i_a, i_c = 2400.0 / 120.0, 900.0 / 120.0
    assert loads.neutral_a == pytest.approx(abs(i_a - i_c))
    assert loads.neutral_rms_a == pytest.approx(abs(i_a - i_c))
    assert loads.line_a["B"] == pytest.approx(0.0, abs=ATOL_A)


def test_high_leg_line_to_neutral_load_is_refused_in_analysis() -> None:
    system = get_system("240/120")
    panel = panel_of(
        system, [Circuit("7", "demo receptacles", 1, 360.0, spaces=(3,), source_row=9)]
    )
    with pytest.raises(ScheduleError, match=r"circuit 7 \(row 9\): .*high leg.*110\.15"):
        analyze(panel)


def test_two_pole_load_with_neutral_share() -> None:
    """A 120/240 V dryer: the 120 V part is a line-to-neutral load on the first line, the rest
    line-to-line; the neutral carries only the 120 V part (C)."""
    system = get_system("120/240")
    dryer = Circuit("d", "demo dryer", 2, 5600.0, spaces=(1, 3), voltage_v=240.0, neutral_va=600.0)
    loads = analyze(panel_of(system, [dryer], 24))
    between_a = 5000.0 / 240.0
    assert loads.line_a["A"] == pytest.approx(between_a + 600.0 / 120.0)
    assert loads.line_a["B"] == pytest.approx(between_a)
    assert loads.neutral_a == pytest.approx(5.0)
    assert loads.neutral_without_harmonics_a == pytest.approx(5.0)
    assert loads.phase_kw["A"] == pytest.approx(2.5 + 0.6)
    assert loads.phase_kw["B"] == pytest.approx(2.5)
    assert loads.phase_va == {"A": 2800.0, "B": 2800.0}  # schedule convention: half each


def test_multiwire_circuit_neutral() -> None:
    """Two 120 V loads on one 2-pole 208Y/120 multiwire circuit: lines 120° apart, so the
    neutral carries the same current as each line when the halves are equal (C)."""
    system = get_system("208Y/120")
    mwbc = Circuit("m", "demo", 2, 2400.0, spaces=(1, 3), voltage_v=120.0)
    loads = analyze(panel_of(system, [mwbc]))
    assert loads.line_a["A"] == pytest.approx(10.0)
    assert loads.line_a["B"] == pytest.approx(10.0)
    assert loads.neutral_a == pytest.approx(10.0)


def test_bad_voltage_is_located() -> None:
    system = get_system("208Y/120")
    panel = panel_of(system, [Circuit("5", "demo", 2, 2000.0, spaces=(1, 3), voltage_v=240.0)])
    with pytest.raises(ScheduleError, match=r"circuit 5: 240 V does not fit .*runs at 208 V"):
        analyze(panel)


def test_leading_and_lagging_power() -> None:
    system = get_system("208Y/120")
    circuits = [
        Circuit("l", "demo", 1, 1000.0, spaces=(1,), power_factor=0.6),
        Circuit("d", "demo", 1, 500.0, spaces=(3,), power_factor=-0.8),
    ]
    loads = analyze(panel_of(system, circuits))
    assert loads.phase_kw["A"] == pytest.approx(0.6)
    assert loads.phase_kvar["A"] == pytest.approx(0.8)
    assert loads.phase_kw["B"] == pytest.approx(0.4)
    assert loads.phase_kvar["B"] == pytest.approx(-0.3)
    assert loads.phase_pf["A"] == pytest.approx(0.6)
    assert loads.phase_pf["B"] == pytest.approx(-0.8)
    # A lagging current sits behind its voltage (C).
    current = circuit_harmonic_currents(system, ["A"], 1000.0, 0.6)[1].lines["A"]
    assert cmath.phase(current) == pytest.approx(-math.acos(0.6))


def test_symmetrical_components_textbook_example() -> None:
    """I_a = 10∠0°, I_b = 10∠180°, I_c = 0 gives I0 = 0, I1 = 5.774∠−30°, I2 = 5.774∠30°
    (M: Glover, Sarma & Overbye, Power System Analysis and Design, the sequence-components
    example of the symmetrical-components chapter; C: Fortescue 1918 formulas)."""
    i0, i1, i2 = sequence_components(10 + 0j, cmath.rect(10, math.pi), 0j)
    assert abs(i0) == pytest.approx(0.0, abs=1e-12)
    assert i1 == pytest.approx(cmath.rect(10 / math.sqrt(3), math.radians(-30)))
    assert i2 == pytest.approx(cmath.rect(10 / math.sqrt(3), math.radians(30)))
    assert abs(i1) == pytest.approx(5.774, abs=5e-4)
    assert unbalance_factor_pct(10 + 0j, cmath.rect(10, math.pi), 0j) == pytest.approx(100.0)


def test_pure_sequences() -> None:
    """A positive-sequence set has |I2| = 0; a negative one |I1| = 0; a zero one only I0, with
    I_N = 3·I0 (C: Fortescue 1918)."""
    ia = cmath.rect(12.0, 0.3)
    positive = (ia, ia * A_OP**2, ia * A_OP)
    i0, i1, i2 = sequence_components(*positive)
    assert abs(i2) == pytest.approx(0.0, abs=1e-12)
    assert abs(i0) == pytest.approx(0.0, abs=1e-12)
    assert i1 == pytest.approx(ia)
    assert unbalance_factor_pct(*positive) == pytest.approx(0.0, abs=1e-10)
    negative = (ia, ia * A_OP, ia * A_OP**2)
    assert abs(sequence_components(*negative)[1]) == pytest.approx(0.0, abs=1e-12)
    zero = (ia, ia, ia)
    assert 3 * sequence_components(*zero)[0] == pytest.approx(sum(zero))


def test_nema_and_negative_sequence_unbalance_side_by_side() -> None:
    """Line-to-line voltages 462/463/455 V: NEMA MG 1 1.087 % (F: eng-tips thread quoting the
    MG 1 method) and |V2|/|V1| = 1.091 % (C; docs/references.md) once the three phasors close a
    triangle (Kirchhoff: V_ab + V_bc + V_ca = 0, angles by the law of cosines)."""
    a, b, c = 462.0, 463.0, 455.0
    assert nema_unbalance_pct((a, b, c)) == pytest.approx(1.087, abs=5e-4)
    angle_at_b = math.acos((a * a + b * b - c * c) / (2 * a * b))
    v_ab = complex(a, 0.0)
    v_bc = cmath.rect(b, -(math.pi - angle_at_b))
    v_ca = -(v_ab + v_bc)
    assert abs(v_ca) == pytest.approx(c)
    factor = unbalance_factor_pct(v_ab, v_bc, v_ca)
    assert factor == pytest.approx(1.091, abs=5e-4)
    # Closed form from the magnitudes alone, β = Σ V⁴ / (Σ V²)² (M: CIGRE formula for the
    # voltage unbalance factor).
    beta = (a**4 + b**4 + c**4) / (a * a + b * b + c * c) ** 2
    root = math.sqrt(3 - 6 * beta)
    assert factor == pytest.approx(100 * math.sqrt((1 - root) / (1 + root)), rel=1e-9)
    # F: a trade article on motor voltage unbalance (docs/references.md)
    assert nema_unbalance_pct((480.0, 476.0, 472.0)) == pytest.approx(0.84, abs=5e-3)


def test_analysis_reports_both_unbalance_figures() -> None:
    system = get_system("208Y/120")
    circuits = [
        Circuit(f"c{i}", "demo", 1, va, spaces=(s,))
        for i, (s, va) in enumerate(((1, 3000.0), (3, 2000.0), (5, 1000.0)))
    ]
    loads = analyze(panel_of(system, circuits))
    currents = [3000 / 120, 2000 / 120, 1000 / 120]
    angles = (0.0, -120.0, 120.0)
    phasors = [cmath.rect(i, math.radians(a)) for i, a in zip(currents, angles, strict=True)]
    expected = unbalance_factor_pct(*phasors)
    assert loads.unbalance_factor_pct == pytest.approx(expected)
    assert loads.imbalance_pct == pytest.approx(50.0)  # (3000 − 2000) / 2000
    # Unity-PF closed form for the neutral (C; docs/references.md).
    ia, ib, ic = currents
    closed = math.sqrt(ia * ia + ib * ib + ic * ic - ia * ib - ib * ic - ic * ia)
    assert loads.neutral_a == pytest.approx(closed)


def wave_angle(wave: np.ndarray, x: np.ndarray) -> float:
    """Angle of the fundamental of a sampled wave (its first Fourier coefficient)."""
    return cmath.phase(np.sum(wave * np.exp(-1j * x)))


@pytest.mark.parametrize(
    ("designation", "circuit", "elements"),
    [
        # 3-pole load: three equal delta elements.
        (
            "480Y/277",
            Circuit("m", "demo", 3, 30000.0, spaces=(1, 3, 5), power_factor=0.8),
            [("A", "B", 10000.0), ("B", "C", 10000.0), ("C", "A", 10000.0)],
        ),
        # 3-pole multiwire circuit at 277 V: one line-to-neutral element per pole.
        (
            "480Y/277",
            Circuit("l", "demo", 3, 8310.0, spaces=(1, 3, 5), voltage_v=277.0, power_factor=0.95),
            [("A", None, 2770.0), ("B", None, 2770.0), ("C", None, 2770.0)],
        ),
        # Range with a 120 V part on its first line (B here) and the rest between B and A.
        (
            "120/240",
            Circuit(
                "r",
                "demo",
                2,
                9000.0,
                spaces=(3, 5),
                voltage_v=240.0,
                neutral_va=1200.0,
                power_factor=0.98,
            ),
            [("B", None, 1200.0), ("B", "A", 7800.0)],
        ),
        # 3-wire delta, 2-pole and 3-pole loads only.
        (
            "240 delta",
            Circuit("p", "demo", 2, 4800.0, spaces=(4, 6), power_factor=0.7),
            [("B", "C", 4800.0)],
        ),
    ],
)
def test_time_domain_matches_other_connections(
    designation: str, circuit: Circuit, elements: list[tuple[str, str | None, float]]
) -> None:
    """Multi-pole, multiwire and neutral-share circuits with harmonics: sampled RMS line and
    neutral currents equal the phasor figures (C, Parseval)."""
    system = get_system(designation)
    spectrum = {3: 0.5, 5: 0.3, 7: 0.1}
    profiles = {"demo": Profile("demo", "invented", tuple(spectrum.items()))}
    tagged = Circuit(
        circuit.id,
        circuit.description,
        circuit.poles,
        circuit.load_va,
        spaces=circuit.spaces,
        power_factor=circuit.power_factor,
        voltage_v=circuit.voltage_v,
        neutral_va=circuit.neutral_va,
        harmonic_profile="demo",
    )
    panel = panel_of(system, [tagged])
    loads = analyze(panel, profiles)
    t = time_axis(system)
    x = 2 * math.pi * system.frequency_hz * t
    theta = math.acos(abs(circuit.power_factor)) * np.sign(circuit.power_factor)
    line_waves = {line: np.zeros_like(t) for line in system.lines}
    for source, sink, load_va in elements:
        v = voltage_wave(system, source, t)
        if sink is None:
            rms_a = load_va / system.line_to_neutral_v[system.lines.index(source)]
        else:
            v = v - voltage_wave(system, sink, t)
            rms_a = load_va / system.line_to_line_v
        current = load_wave(rms_a, wave_angle(v, x), theta, spectrum, x)
        line_waves[source] += current
        if sink is not None:
            line_waves[sink] -= current
    for line in system.lines:
        expected = sampled_rms(line_waves[line])
        assert loads.line_rms_a[line] == pytest.approx(expected, rel=RTOL_TIME, abs=1e-9)
    neutral = sampled_rms(np.sum(list(line_waves.values()), axis=0))
    if system.neutral:
        assert loads.neutral_rms_a == pytest.approx(neutral, rel=RTOL_TIME, abs=1e-9)
    else:
        assert neutral == pytest.approx(0.0, abs=1e-9)
        assert loads.neutral_rms_a == 0.0

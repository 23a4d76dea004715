"""Current phasors of branch circuits, line and neutral currents, symmetrical components,
harmonic currents and the RMS figures made from them.

Pure functions of numbers and a :class:`~balancer.domain.systems.System`; RMS phasors throughout.
Power factor: a positive value is lagging (current behind voltage), a negative value leading.
"""

from __future__ import annotations

import cmath
import math
from collections.abc import Iterable, Mapping, Sequence
from dataclasses import dataclass

import numpy as np

from balancer.domain.systems import Line, System, check_connection, circuit_wiring

# Fortescue's operator a = 1∠120°.
A_OP = cmath.rect(1.0, math.radians(120.0))
_FORTESCUE = np.array([[1, 1, 1], [1, A_OP, A_OP**2], [1, A_OP**2, A_OP]], dtype=complex) / 3


def pf_angle_rad(power_factor: float) -> float:
    """Angle by which current lags voltage: positive for lagging, negative for leading."""
    pf = max(-1.0, min(1.0, power_factor))
    if pf == 0:
        return math.pi / 2
    angle = math.acos(abs(pf))
    return angle if pf > 0 else -angle


def current_phasor(load_va: float, voltage: complex, power_factor: float = 1.0) -> complex:
    """Current of a load of apparent power ``load_va`` across a voltage phasor."""
    if load_va == 0:
        return 0j
    magnitude = load_va / abs(voltage)
    return cmath.rect(magnitude, cmath.phase(voltage) - pf_angle_rad(power_factor))


def circuit_line_currents(
    system: System,
    lines: Sequence[Line],
    load_va: float,
    power_factor: float = 1.0,
) -> dict[Line, complex]:
    """Contribution of one circuit to each line current.

    A 1-pole circuit is a line-to-neutral load; a 2-pole circuit a line-to-line load between its
    two lines (I_pq leaves on p, returns on q); a 3-pole circuit a balanced load, taken as three
    equal delta branches so the result holds on wye and delta supplies alike. The fundamental
    of a sinusoidal load only, and no check of the connection: see
    :func:`~balancer.domain.systems.check_connection` and :func:`circuit_harmonic_currents`.
    """
    if len(lines) == 1:
        (line,) = lines
        return {line: current_phasor(load_va, system.voltage_phasor(line), power_factor)}
    if len(lines) == 2:
        first, second = lines
        branch = current_phasor(load_va, system.voltage_between(first, second), power_factor)
        return {first: branch, second: -branch}
    out: dict[Line, complex] = dict.fromkeys(lines, 0j)
    for first, second in zip(lines, [*lines[1:], lines[0]], strict=True):
        branch = current_phasor(load_va / 3, system.voltage_between(first, second), power_factor)
        out[first] += branch
        out[second] -= branch
    return out


def sum_currents(
    parts: Iterable[Mapping[Line, complex]], lines: Sequence[Line]
) -> dict[Line, complex]:
    total = dict.fromkeys(lines, 0j)
    for part in parts:
        for line, value in part.items():
            total[line] += value
    return total


def neutral_magnitude_unity_pf(ia: float, ib: float, ic: float) -> float:
    """|I_N| for three unity-PF line-to-neutral currents 120° apart (closed form)."""
    return math.sqrt(max(0.0, ia * ia + ib * ib + ic * ic - ia * ib - ib * ic - ic * ia))


def sequence_components(ia: complex, ib: complex, ic: complex) -> tuple[complex, complex, complex]:
    """Zero, positive and negative sequence (Fortescue 1918) of a set of phasors A, B, C."""
    i0, i1, i2 = _FORTESCUE @ np.array([ia, ib, ic], dtype=complex)
    return complex(i0), complex(i1), complex(i2)


def unbalance_factor_pct(ia: complex, ib: complex, ic: complex) -> float:
    """Negative-sequence unbalance |I2|/|I1| × 100 (the IEC 61000-4-30 style figure)."""
    _, i1, i2 = sequence_components(ia, ib, ic)
    return 0.0 if abs(i1) == 0 else abs(i2) / abs(i1) * 100.0


def nema_unbalance_pct(values: Sequence[float]) -> float:
    """Largest deviation from the average ÷ average × 100 (the NEMA MG 1 definition)."""
    average = math.fsum(values) / len(values)
    if average == 0:
        return 0.0
    return max(abs(v - average) for v in values) / average * 100.0


@dataclass(frozen=True, slots=True)
class CircuitCurrents:
    """One circuit's current phasors at one harmonic order (RMS, amperes).

    ``lines`` holds the current the circuit draws on each of its lines; ``neutral`` the current
    it returns on the neutral, which by Kirchhoff's current law is the sum of its line currents.
    """

    lines: dict[Line, complex]
    neutral: complex


@dataclass(frozen=True, slots=True)
class _Element:
    """One load element: ``load_va`` across ``voltage`` (line ``source`` to ``sink``, or to
    neutral when ``sink`` is None)."""

    load_va: float
    voltage: complex
    source: Line
    sink: Line | None


def _elements(
    system: System,
    lines: Sequence[Line],
    load_va: float,
    voltage_v: float | None,
    neutral_va: float | None,
) -> list[_Element]:
    wiring = circuit_wiring(system, tuple(lines), voltage_v)
    if wiring.kind == "line-to-neutral":
        return [_Element(load_va, system.voltage_phasor(lines[0]), lines[0], None)]
    if wiring.kind == "multiwire":
        share = load_va / len(lines)
        return [_Element(share, system.voltage_phasor(x), x, None) for x in lines]
    out = []
    between_va = load_va
    if neutral_va:
        out.append(_Element(neutral_va, system.voltage_phasor(lines[0]), lines[0], None))
        between_va = load_va - neutral_va
    if len(lines) == 2:
        pairs = [(lines[0], lines[1])]
    else:
        pairs = list(zip(lines, [*lines[1:], lines[0]], strict=True))
    share = between_va / len(pairs)
    out += [_Element(share, system.voltage_between(p, q), p, q) for p, q in pairs]
    return out


def circuit_harmonic_currents(
    system: System,
    lines: Sequence[Line],
    load_va: float,
    power_factor: float = 1.0,
    spectrum: Mapping[int, float] | None = None,
    voltage_v: float | None = None,
    neutral_va: float | None = None,
) -> dict[int, CircuitCurrents]:
    """Current phasors of one circuit by harmonic order; order 1 is the fundamental.

    How the circuit connects follows :func:`~balancer.domain.systems.circuit_wiring`: a
    line-to-neutral load, a line-to-line load (a 3-pole load as three equal delta elements), or a
    multiwire circuit with one line-to-neutral element per pole. ``neutral_va`` of a load between
    lines is a line-to-neutral element on the circuit's first line; the rest stays between lines.

    ``load_va`` is taken as each element's voltage times its RMS current (how nameplates and
    clamp-meter readings state it), so with a spectrum the fundamental is the RMS current
    ÷ √(1 + Σ m_h²). ``spectrum`` maps order h ≥ 2 to the per-unit magnitude m_h of the
    fundamental current. Harmonic h of an element across a voltage whose angle is φ sits at
    angle h·φ (the same waveform shifted with its voltage); the displacement power factor moves
    only the fundamental.

    Raises
    ------
    ValueError
        When the circuit cannot connect that way (see
        :func:`~balancer.domain.systems.check_connection`).
    """
    problem = check_connection(system, tuple(lines), len(lines), voltage_v, neutral_va)
    if problem:
        raise ValueError(problem)
    if neutral_va and neutral_va > load_va:
        raise ValueError(f"the neutral share {neutral_va:g} VA exceeds the load {load_va:g} VA")
    harmonics = {h: m for h, m in (spectrum or {}).items() if h >= 2 and m}
    rms_per_fundamental = math.sqrt(1.0 + math.fsum(m * m for m in harmonics.values()))
    theta = pf_angle_rad(power_factor)
    orders = [1, *sorted(harmonics)]
    out: dict[int, CircuitCurrents] = {}
    elements = _elements(system, lines, load_va, voltage_v, neutral_va)
    for h in orders:
        on_line: dict[Line, complex] = dict.fromkeys(lines, 0j)
        neutral = 0j
        for element in elements:
            if element.load_va == 0:
                continue
            fundamental_a = element.load_va / abs(element.voltage) / rms_per_fundamental
            angle = cmath.phase(element.voltage)
            if h == 1:
                current = cmath.rect(fundamental_a, angle - theta)
            else:
                current = cmath.rect(harmonics[h] * fundamental_a, h * angle)
            on_line[element.source] += current
            if element.sink is None:
                neutral += current
            else:
                on_line[element.sink] -= current
        out[h] = CircuitCurrents(on_line, neutral)
    return out


def circuit_power(
    system: System,
    lines: Sequence[Line],
    load_va: float,
    power_factor: float = 1.0,
    spectrum: Mapping[int, float] | None = None,
    voltage_v: float | None = None,
    neutral_va: float | None = None,
) -> dict[Line, complex]:
    """Complex power P + jQ (W, var) of one circuit by line, at the fundamental.

    A line-to-neutral element counts wholly on its line; an element between two lines half on
    each (the schedule convention, common practice). Harmonic currents against a sinusoidal
    voltage carry no real power, so a spectrum lowers P and Q by √(1 + Σ m_h²).
    """
    harmonics = [m for h, m in (spectrum or {}).items() if h >= 2]
    rms_per_fundamental = math.sqrt(1.0 + math.fsum(m * m for m in harmonics))
    theta = pf_angle_rad(power_factor)
    out: dict[Line, complex] = dict.fromkeys(lines, 0j)
    for element in _elements(system, lines, load_va, voltage_v, neutral_va):
        power = cmath.rect(element.load_va / rms_per_fundamental, theta)
        if element.sink is None:
            out[element.source] += power
        else:
            out[element.source] += power / 2
            out[element.sink] += power / 2
    return out


def rms(values: Iterable[complex]) -> float:
    """RMS of a current made of harmonic phasors: √(Σ_h |I_h|²)."""
    return math.sqrt(math.fsum(abs(v) ** 2 for v in values))

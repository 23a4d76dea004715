"""Current phasors of branch circuits, line and neutral currents, symmetrical components.

Pure functions of numbers and a :class:`~balancer.systems.System`; RMS phasors throughout.
Power factor: a positive value is lagging (current behind voltage), a negative value leading.
"""

from __future__ import annotations

import cmath
import math
from collections.abc import Iterable, Mapping, Sequence

import numpy as np

from balancer.systems import Line, System

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
    equal delta branches so the result holds on wye and delta supplies alike.
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


def sum_currents(parts: Iterable[Mapping[Line, complex]], lines: Sequence[Line]) -> dict[Line, complex]:
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

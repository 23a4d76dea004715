"""Per-line loads of a panel: schedule VA by line, imbalance, line and neutral currents."""

from __future__ import annotations

import math
from collections.abc import Mapping
from dataclasses import dataclass, field

from balancer.domain.panel import Circuit, Panel
from balancer.domain.systems import Line
from balancer.errors import Problem, ScheduleError
from balancer.physics.harmonics import Profile, spectrum_for
from balancer.physics.phasors import (
    CircuitCurrents,
    circuit_harmonic_currents,
    circuit_power,
    nema_unbalance_pct,
    rms,
    unbalance_factor_pct,
)

# Relative margin by which the neutral RMS current must exceed the largest line RMS current
# before it is flagged; keeps rounding noise on a balanced panel from raising the flag.
NEUTRAL_FLAG_MARGIN = 1e-9


@dataclass(frozen=True, slots=True)
class Loads:
    """Figures for one arrangement of a panel's circuits.

    ``phase_va`` follows the schedule convention (common practice): a 1-pole load counts wholly
    on its line, a 2-pole load half on each of its lines, a 3-pole load a third on each.
    ``imbalance_pct`` is the NEMA MG 1 unbalance definition applied to those phase loads.

    ``line_a`` and ``neutral_a`` are fundamental-frequency current magnitudes (A RMS);
    ``line_rms_a`` and ``neutral_rms_a`` the true RMS currents with every circuit's harmonic
    spectrum, √(Σ_h |I_h|²); ``neutral_without_harmonics_a`` the neutral as it would be if every
    load drew a sinusoidal current of its stated VA. ``unbalance_factor_pct`` is |I2|/|I1| of
    the fundamental line currents (three-phase systems only). ``phase_kw`` and ``phase_kvar``
    are fundamental real and reactive power by line (a line-to-neutral part wholly on its line,
    a line-to-line part half on each); ``phase_pf`` their displacement power factor, negative
    when leading.
    ``neutral_exceeds_phase`` is True when the neutral RMS current is above the largest line
    RMS current: such a neutral counts as a current-carrying conductor (NEC 310.15(E)) and its
    non-linear share gets no demand reduction (NEC 220.61(C)).
    """

    phase_va: dict[Line, float]
    total_va: float
    spread_va: float
    imbalance_pct: float
    line_a: dict[Line, float]
    neutral_a: float
    unbalance_factor_pct: float | None
    phase_kw: dict[Line, float]
    phase_kvar: dict[Line, float]
    unplaced: tuple[str, ...] = ()
    line_rms_a: dict[Line, float] = field(default_factory=dict)
    neutral_rms_a: float = 0.0
    neutral_without_harmonics_a: float = 0.0
    neutral_exceeds_phase: bool = False
    phase_pf: dict[Line, float] = field(default_factory=dict)

    @property
    def line_amps(self) -> dict[Line, float]:
        """True RMS line currents (the fundamental where no harmonic figures were made)."""
        return self.line_rms_a or self.line_a

    @property
    def neutral_amps(self) -> float:
        """True RMS neutral current (the fundamental where no harmonic figures were made)."""
        return self.neutral_rms_a or self.neutral_a

    @property
    def heaviest_line(self) -> Line:
        return max(self.line_a, key=lambda line: self.line_a[line])


def share_by_line(panel: Panel, circuit: Circuit) -> dict[Line, float]:
    """The circuit's VA on each of its lines, by the schedule convention, on the load it is
    balanced on (:attr:`Circuit.basis_va`)."""
    lines = panel.lines_of(circuit)
    return {line: circuit.basis_va / len(lines) for line in lines} if lines else {}


def spread_and_imbalance(phase_va: dict[Line, float]) -> tuple[float, float]:
    values = list(phase_va.values())
    return max(values) - min(values), nema_unbalance_pct(values)


def _phase_pf(power: complex) -> float:
    if abs(power) == 0:
        return 1.0
    pf = power.real / abs(power)
    return -pf if power.imag < 0 else pf


@dataclass(slots=True)
class _Sums:
    """The placed circuits' figures summed by line, and their currents by harmonic order."""

    phase_va: dict[Line, float]
    power: dict[Line, complex]
    by_order: dict[int, dict[Line, complex]] = field(default_factory=dict)
    sinusoidal_neutral: complex = 0j

    def add(
        self,
        parts: dict[int, CircuitCurrents],
        sinusoidal: dict[int, CircuitCurrents],
        circuit_kva: dict[Line, complex],
    ) -> None:
        """Add one circuit's currents by order, its neutral without harmonics and its power."""
        for h, part in parts.items():
            total = self.by_order.setdefault(h, dict.fromkeys(self.phase_va, 0j))
            for line, current in part.lines.items():
                total[line] += current
        self.sinusoidal_neutral += sinusoidal[1].neutral
        for line, value in circuit_kva.items():
            self.power[line] += value


def analyze(panel: Panel, profiles: Mapping[str, Profile] | None = None) -> Loads:
    """Figures for the panel as its circuits are placed; unplaced circuits are left out and named.

    ``profiles`` are the harmonic profiles circuits may name (the bundled ones when None).

    Raises
    ------
    ScheduleError
        Listing every placed circuit that cannot connect where it is (a 1-pole load on a high
        leg or on a system without neutral, a voltage that does not fit the poles...).
    """
    lines = panel.lines
    sums = _Sums(dict.fromkeys(lines, 0.0), dict.fromkeys(lines, 0j))
    unplaced = []
    problems = []
    for circuit in panel.circuits:
        circuit_lines = panel.lines_of(circuit)
        if not circuit_lines:
            if circuit.basis_va:
                unplaced.append(circuit.id)
            continue
        for line, va in share_by_line(panel, circuit).items():
            sums.phase_va[line] += va
        if circuit.basis_va == 0:
            continue
        try:
            currents = _circuit_currents(panel, circuit, circuit_lines, profiles)
        except ValueError as exc:
            where = f"circuit {circuit.id}" + (
                f" (row {circuit.source_row})" if circuit.source_row is not None else ""
            )
            problems.append(Problem(where, str(exc)))
            continue
        sums.add(*currents)
    if problems:
        raise ScheduleError(problems, source=panel.source)
    return _loads(panel, sums, tuple(unplaced))


def _circuit_currents(
    panel: Panel,
    circuit: Circuit,
    circuit_lines: tuple[Line, ...],
    profiles: Mapping[str, Profile] | None,
) -> tuple[dict[int, CircuitCurrents], dict[int, CircuitCurrents], dict[Line, complex]]:
    """One placed circuit's currents by harmonic order, the same without harmonics, and its
    power by line. Raises ValueError when it cannot connect where it is."""
    spectrum = spectrum_for(circuit, profiles)
    system, load_va, pf = panel.system, circuit.basis_va, circuit.power_factor
    volts, neutral_va = circuit.voltage_v, circuit.neutral_va
    parts = circuit_harmonic_currents(
        system, circuit_lines, load_va, pf, spectrum, volts, neutral_va
    )
    sinusoidal = (
        circuit_harmonic_currents(system, circuit_lines, load_va, pf, None, volts, neutral_va)
        if spectrum
        else parts
    )
    circuit_kva = circuit_power(system, circuit_lines, load_va, pf, spectrum, volts, neutral_va)
    return parts, sinusoidal, circuit_kva


def _loads(panel: Panel, sums: _Sums, unplaced: tuple[str, ...]) -> Loads:
    """The panel's figures from its sums: fundamental and RMS currents, neutral, unbalance."""
    lines = panel.lines
    phase_va, power, by_order = sums.phase_va, sums.power, sums.by_order
    fundamental = by_order.get(1, dict.fromkeys(lines, 0j))
    line_rms = {line: rms(order[line] for order in by_order.values()) for line in lines}
    # Kirchhoff: whatever the lines carry out returns on the neutral.
    neutral_by_order = [sum(order.values(), 0j) for order in by_order.values()]
    has_neutral = panel.system.neutral
    neutral_rms = rms(neutral_by_order) if has_neutral else 0.0
    largest_line = max(line_rms.values(), default=0.0)
    spread, imbalance = spread_and_imbalance(phase_va)
    factor = None
    if len(lines) == 3:
        factor = unbalance_factor_pct(*(fundamental[line] for line in lines))
    return Loads(
        phase_va=phase_va,
        total_va=math.fsum(phase_va.values()),
        spread_va=spread,
        imbalance_pct=imbalance,
        line_a={line: abs(value) for line, value in fundamental.items()},
        neutral_a=abs(sum(fundamental.values(), 0j)) if has_neutral else 0.0,
        unbalance_factor_pct=factor,
        phase_kw={line: value.real / 1000.0 for line, value in power.items()},
        phase_kvar={line: value.imag / 1000.0 for line, value in power.items()},
        unplaced=unplaced,
        line_rms_a=line_rms,
        neutral_rms_a=neutral_rms,
        neutral_without_harmonics_a=abs(sums.sinusoidal_neutral) if has_neutral else 0.0,
        neutral_exceeds_phase=has_neutral
        and neutral_rms > largest_line * (1 + NEUTRAL_FLAG_MARGIN) + NEUTRAL_FLAG_MARGIN,
        phase_pf={line: _phase_pf(value) for line, value in power.items()},
    )

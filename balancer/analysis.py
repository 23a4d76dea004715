"""Per-line loads of a panel: schedule VA by line, imbalance, line and neutral currents."""

from __future__ import annotations

import math
from dataclasses import dataclass

from balancer.panel import Circuit, Panel
from balancer.phasors import (
    circuit_line_currents,
    nema_unbalance_pct,
    pf_angle_rad,
    sum_currents,
    unbalance_factor_pct,
)
from balancer.systems import Line


@dataclass(frozen=True, slots=True)
class Loads:
    """Figures for one arrangement of a panel's circuits.

    ``phase_va`` follows the schedule convention (common practice): a 1-pole load counts wholly
    on its line, a 2-pole load half on each of its lines, a 3-pole load a third on each.
    ``imbalance_pct`` is the NEMA MG 1 unbalance definition applied to those phase loads.
    Currents are phasor magnitudes in amperes RMS at the fundamental.
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

    @property
    def heaviest_line(self) -> Line:
        return max(self.line_a, key=lambda line: self.line_a[line])


def share_by_line(panel: Panel, circuit: Circuit) -> dict[Line, float]:
    """The circuit's VA on each of its lines, by the schedule convention."""
    lines = panel.lines_of(circuit)
    return {line: circuit.load_va / len(lines) for line in lines} if lines else {}


def spread_and_imbalance(phase_va: dict[Line, float]) -> tuple[float, float]:
    values = list(phase_va.values())
    return max(values) - min(values), nema_unbalance_pct(values)


def analyze(panel: Panel) -> Loads:
    """Figures for the panel as its circuits are placed; unplaced circuits are left out and named."""
    lines = panel.lines
    phase_va = dict.fromkeys(lines, 0.0)
    phase_kw = dict.fromkeys(lines, 0.0)
    phase_kvar = dict.fromkeys(lines, 0.0)
    parts = []
    neutral = 0j
    unplaced = []
    for circuit in panel.circuits:
        circuit_lines = panel.lines_of(circuit)
        if not circuit_lines:
            if circuit.load_va:
                unplaced.append(circuit.id)
            continue
        angle = pf_angle_rad(circuit.power_factor)
        for line, va in share_by_line(panel, circuit).items():
            phase_va[line] += va
            phase_kw[line] += va * math.cos(angle) / 1000.0
            phase_kvar[line] += va * math.sin(angle) / 1000.0
        currents = circuit_line_currents(
            panel.system, circuit_lines, circuit.load_va, circuit.power_factor
        )
        parts.append(currents)
        if len(circuit_lines) == 1:
            neutral += currents[circuit_lines[0]]
    line_currents = sum_currents(parts, lines)
    spread, imbalance = spread_and_imbalance(phase_va)
    factor = None
    if len(lines) == 3:
        factor = unbalance_factor_pct(*(line_currents[line] for line in lines))
    return Loads(
        phase_va=phase_va,
        total_va=math.fsum(phase_va.values()),
        spread_va=spread,
        imbalance_pct=imbalance,
        line_a={line: abs(value) for line, value in line_currents.items()},
        neutral_a=abs(neutral) if panel.system.neutral else 0.0,
        unbalance_factor_pct=factor,
        phase_kw=phase_kw,
        phase_kvar=phase_kvar,
        unplaced=tuple(unplaced),
    )

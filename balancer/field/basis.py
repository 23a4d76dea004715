"""Which load figure each circuit is balanced on: the schedule (nameplate) VA or a clamp-meter
reading converted to VA, and the report of which one each circuit used.

A reading in amperes becomes VA with the circuit's voltage (common practice for field loads):
line-to-neutral × A for a 1-pole circuit, line-to-line × A for a 2-pole circuit, and
√3 × line-to-line × A for a 3-pole circuit. Where a multi-pole circuit has one reading per line
(``Measured line A (A)``, ``Measured line B (A)``, ``Measured line C (A)`` columns; the word
"line", "phase" or "leg" keeps them apart from the single ``Measured (A)`` column, which a bare
``Measured A`` would be read as), the average of its lines'
readings stands for A: the schedule convention spreads a multi-pole load evenly over its lines
anyway, so an uneven reading shows up in the per-line figures only through that average.

The reader parses and checks the readings (``Circuit.measured_a``, ``Circuit.measured_line_a``)
with their cells; here they only become VA. Choosing a basis never changes a circuit's design
``load_va``: the chosen figure goes in ``Circuit.balance_va``, read through ``Circuit.basis_va``.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, replace
from typing import Any, Literal

from balancer.domain.panel import Circuit, Panel
from balancer.domain.systems import Line, System
from balancer.errors import Problem, ScheduleError

Basis = Literal["nameplate", "measured", "larger"]
BasisUsed = Literal["nameplate", "measured"]
BASES: tuple[Basis, ...] = ("nameplate", "measured", "larger")


@dataclass(frozen=True, slots=True)
class CircuitBasis:
    """Both load figures of one circuit and the one balancing used."""

    circuit_id: str
    nameplate_va: float
    measured_va: float | None
    used: BasisUsed

    @property
    def used_va(self) -> float:
        if self.used == "measured" and self.measured_va is not None:
            return self.measured_va
        return self.nameplate_va


def per_line_readings(circuit: Circuit) -> dict[Line, float]:
    """The circuit's per-line readings in amperes (``Measured line A (A)`` …), as read.

    Raises
    ------
    ScheduleError
        When a reading is negative or not finite (only a circuit made in code can hold one: the
        reader refuses them at their cell).
    """
    problems = [
        Problem(
            _where(circuit, f"Measured line {line} (A)"), f"reading {amps!r} is not amperes ≥ 0"
        )
        for line, amps in circuit.measured_line_a.items()
        if not (math.isfinite(amps) and amps >= 0)
    ]
    if problems:
        raise ScheduleError(problems)
    return circuit.measured_line_a.as_dict()


def circuit_voltage_v(system: System, circuit: Circuit, lines: tuple[Line, ...]) -> float:
    """Voltage that turns one ampere reading into VA for this circuit.

    ``Circuit.voltage_v`` wins when the schedule gives it; otherwise line-to-neutral of the
    circuit's line for one pole (the first line that serves line-to-neutral loads when the
    circuit is not placed yet), and the nominal line-to-line voltage for two or three poles.
    """
    if circuit.voltage_v:
        return circuit.voltage_v
    if circuit.poles == 1:
        if lines:
            return system.line_to_neutral_v[system.lines.index(lines[0])]
        for line in system.lines:
            if system.serves_line_to_neutral(line):
                return system.line_to_neutral_v[system.lines.index(line)]
        return system.line_to_line_v
    return system.line_to_line_v


def measured_va(panel: Panel, circuit: Circuit) -> float | None:
    """The circuit's load in VA from its readings, or None when it has none.

    Per-line readings (``measured_line_a``) win over the single ``measured_a`` when both are given,
    since they are the finer record; a per-line reading on a line the circuit is not on is an
    input error.

    Raises
    ------
    ScheduleError
        When a reading names a line the circuit does not occupy.
    """
    lines = panel.lines_of(circuit)
    readings = per_line_readings(circuit)
    if readings:
        stray = sorted(set(readings) - set(lines)) if lines else []
        if stray:
            on = ", ".join(lines)
            raise ScheduleError(
                Problem(
                    _where(circuit, f"Measured line {stray[0]} (A)"),
                    f"circuit {circuit.id} is on line(s) {on}, not {', '.join(stray)}",
                )
            )
        amps = math.fsum(readings.values()) / len(readings)
    elif circuit.measured_a is not None:
        if circuit.measured_a < 0 or not math.isfinite(circuit.measured_a):
            raise ScheduleError(
                Problem(
                    _where(circuit, "Measured (A)"), f"reading {circuit.measured_a} is negative"
                )
            )
        amps = circuit.measured_a
    else:
        return None
    voltage = circuit_voltage_v(panel.system, circuit, lines)
    factor = math.sqrt(3.0) if circuit.poles == 3 else 1.0
    return amps * voltage * factor


def apply_basis(panel: Panel, basis: Basis) -> tuple[Panel, dict[str, BasisUsed]]:
    """A new panel whose circuits carry the load of the chosen basis, and the basis each used.

    ``"nameplate"`` keeps the schedule VA; ``"measured"`` takes the reading where there is one
    and the schedule VA elsewhere; ``"larger"`` takes whichever of the two is larger (the
    cautious choice when readings may have been taken at light load). A circuit balanced on its
    reading gets it as ``balance_va``; its ``load_va`` stays the schedule's design load, so the
    revised workbook and the JSON keep both. The input panel is not changed.

    Examples
    --------
    >>> from balancer.domain.systems import get_system
    >>> p = Panel("P", get_system("208Y/120"), 6, (Circuit("1", "Lights", 1, 1000.0, (1,),
    ...     measured_a=10.0),))
    >>> new, used = apply_basis(p, "measured")
    >>> new.circuits[0].basis_va, new.circuits[0].load_va, used
    (1200.0, 1000.0, {'1': 'measured'})
    """
    details = basis_details(panel, basis)
    balance = {cid: d.used_va if d.used == "measured" else None for cid, d in details.items()}
    circuits = [
        c if c.balance_va == balance[c.id] else replace(c, balance_va=balance[c.id])
        for c in panel.circuits
    ]
    return panel.with_circuits(circuits), {cid: d.used for cid, d in details.items()}


def basis_details(panel: Panel, basis: Basis) -> dict[str, CircuitBasis]:
    """Both figures and the chosen one, per circuit id; every reading problem reported at once."""
    if basis not in BASES:
        raise ValueError(f"basis must be one of {', '.join(BASES)}, not {basis!r}")
    out: dict[str, CircuitBasis] = {}
    problems: list[Problem] = []
    for circuit in panel.circuits:
        try:
            reading = measured_va(panel, circuit)
        except ScheduleError as exc:
            problems += exc.problems
            continue
        used: BasisUsed = "nameplate"
        if reading is not None and (
            basis == "measured" or (basis == "larger" and reading > circuit.load_va)
        ):
            used = "measured"
        out[circuit.id] = CircuitBasis(circuit.id, circuit.load_va, reading, used)
    if problems:
        raise ScheduleError(problems, source=panel.source)
    return out


def basis_lines(details: dict[str, CircuitBasis], basis: Basis) -> list[str]:
    """Terminal lines saying which figure each circuit was balanced on."""
    counts = {"measured": 0, "nameplate": 0}
    for d in details.values():
        counts[d.used] += 1
    out = [
        f"Load basis: {basis} — {counts['measured']} circuit(s) on readings, "
        f"{counts['nameplate']} on schedule VA"
    ]
    for d in details.values():
        reading = "no reading" if d.measured_va is None else f"reading {d.measured_va:,.0f} VA"
        out.append(
            f"  {d.circuit_id:>6}  {d.used:<9}  {d.used_va:>9,.0f} VA  "
            f"(schedule {d.nameplate_va:,.0f} VA, {reading})"
        )
    return out


def basis_json(details: dict[str, CircuitBasis], basis: Basis) -> dict[str, Any]:
    """The ``"basis"`` field of the JSON report."""
    return {
        "requested": basis,
        "circuits": [
            {
                "id": d.circuit_id,
                "used": d.used,
                "load_va": d.used_va,
                "nameplate_va": d.nameplate_va,
                "measured_va": d.measured_va,
            }
            for d in details.values()
        ],
    }


def _where(circuit: Circuit, column: str) -> str:
    row = f"row {circuit.source_row}" if circuit.source_row else f"circuit {circuit.id}"
    return f"{row}, {column}"

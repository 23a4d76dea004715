"""Voltage systems as data: the table in ``data/systems.toml`` (or a user's own file) becomes
immutable :class:`System` objects with their line-to-neutral voltage phasors."""

from __future__ import annotations

import cmath
import math
import re
from dataclasses import dataclass
from functools import cache
from pathlib import Path
from typing import Literal

from balancer.domain.datafiles import array_of_tables, read_toml
from balancer.errors import Problem, ScheduleError

Line = str  # "A", "B" or "C"


@dataclass(frozen=True, slots=True)
class System:
    """A supply system: its lines, nominal voltages, neutral and frequency."""

    designation: str
    description: str
    lines: tuple[Line, ...]
    line_to_line_v: float
    neutral: bool
    line_to_neutral_v: tuple[float, ...]
    angle_deg: tuple[float, ...]
    frequency_hz: float = 60.0
    high_leg: Line | None = None
    aliases: tuple[str, ...] = ()

    @property
    def phase_count(self) -> int:
        """3 for a three-phase system, 1 for single-phase 3-wire (which has two lines)."""
        return 3 if len(self.lines) == 3 else 1

    @property
    def max_poles(self) -> int:
        return len(self.lines)

    def voltage_phasor(self, line: Line) -> complex:
        """Line-to-neutral voltage phasor (RMS) of ``line``."""
        i = self.lines.index(line)
        return cmath.rect(self.line_to_neutral_v[i], math.radians(self.angle_deg[i]))

    def voltage_between(self, first: Line, second: Line) -> complex:
        """Line-to-line voltage phasor V_first − V_second, at the nominal line-to-line magnitude.

        The angle comes from the line-to-neutral phasors; the magnitude is the nominal
        ``line_to_line_v`` (a 208Y/120 system is 208 V, not 120·√3 = 207.8 V).
        """
        difference = self.voltage_phasor(first) - self.voltage_phasor(second)
        return cmath.rect(self.line_to_line_v, cmath.phase(difference))

    def serves_line_to_neutral(self, line: Line) -> bool:
        """Whether a 1-pole (line-to-neutral) load may connect to ``line``."""
        return self.neutral and line != self.high_leg

    def label(self) -> str:
        """``208Y/120 V, 3-phase 4-wire``; ``480 V delta, 3-phase 3-wire``; a high-leg delta
        says so and names its high leg with its voltage to neutral (NEC 110.15, 408.3(E)):
        ``240/120 V high-leg delta, 3-phase 4-wire, high leg B (208 V to neutral)``."""
        number, _, rest = self.designation.partition(" ")
        name = f"{number} V {rest}".rstrip()
        wires = f"{self.phase_count}-phase {self._wires()}-wire"
        if self.high_leg is None:
            return f"{name}, {wires}"
        to_neutral = abs(self.voltage_phasor(self.high_leg))
        return (
            f"{name} high-leg delta, {wires}, high leg {self.high_leg} "
            f"({to_neutral:.0f} V to neutral)"
        )

    def high_leg_note(self) -> str:
        """What a schedule says of a high-leg delta's high leg (NEC 110.15 marking, 408.3(E)
        position): ``High leg: line B, 208 V to neutral; …``; empty on any other system."""
        if self.high_leg is None:
            return ""
        to_neutral = abs(self.voltage_phasor(self.high_leg))
        return (
            f"High leg: line {self.high_leg}, {to_neutral:.0f} V to neutral; no line-to-neutral "
            "loads on it; marked orange or by other effective means (NEC 110.15)."
        )

    def _wires(self) -> int:
        return len(self.lines) + (1 if self.neutral else 0)


def _key(text: str) -> str:
    return re.sub(r"[^0-9A-Z/]", "", text.upper().replace("VOLTS", "").replace("V", ""))


# Line-to-line magnitudes implied by the line-to-neutral phasors must agree with the nominal
# line-to-line voltage this closely; catches a mistyped angle or voltage in a systems file.
_GEOMETRY_TOLERANCE = 0.02


def _check_geometry(system: System, where: str) -> list[Problem]:
    problems = []
    if system.line_to_line_v <= 0 or any(v <= 0 for v in system.line_to_neutral_v):
        problems.append(Problem(where, "voltages must be positive"))
        return problems
    if system.frequency_hz <= 0:
        problems.append(Problem(where, f"frequency_hz must be positive, got {system.frequency_hz}"))
    if system.high_leg is not None:
        if system.high_leg not in system.lines:
            problems.append(Problem(where, f"high_leg {system.high_leg!r} is not one of the lines"))
        elif not system.neutral:
            problems.append(
                Problem(where, "a high leg only makes sense on a system with a neutral")
            )
    lines = system.lines
    pairs = list(zip(lines, [*lines[1:], lines[0]], strict=True)) if len(lines) == 3 else [lines]
    for first, second in pairs:
        implied = abs(system.voltage_phasor(first) - system.voltage_phasor(second))
        if abs(implied - system.line_to_line_v) > _GEOMETRY_TOLERANCE * system.line_to_line_v:
            problems.append(
                Problem(
                    where,
                    f"line_to_neutral_v and angle_deg put {implied:.1f} V between {first} and "
                    f"{second}, not the line_to_line_v of {system.line_to_line_v:g} V",
                )
            )
    return problems


def _system_from_table(table: dict[str, object], where: str) -> System:
    try:
        lines = tuple(str(x) for x in table["lines"])  # type: ignore[attr-defined]
        system = System(
            designation=str(table["designation"]),
            description=str(table.get("description", "")),
            lines=lines,
            line_to_line_v=float(table["line_to_line_v"]),  # type: ignore[arg-type]
            neutral=bool(table["neutral"]),
            line_to_neutral_v=tuple(float(v) for v in table["line_to_neutral_v"]),  # type: ignore[attr-defined]
            angle_deg=tuple(float(v) for v in table["angle_deg"]),  # type: ignore[attr-defined]
            frequency_hz=float(table.get("frequency_hz", 60.0)),  # type: ignore[arg-type]
            high_leg=str(table["high_leg"]) if table.get("high_leg") else None,
            aliases=tuple(str(a) for a in table.get("aliases", ())),  # type: ignore[attr-defined]
        )
    except (KeyError, TypeError, ValueError) as exc:
        raise ScheduleError(
            Problem(where, f"system entry is incomplete or malformed ({exc})")
        ) from exc
    if lines not in (("A", "B", "C"), ("A", "B")):
        raise ScheduleError(Problem(where, f"lines must be A, B, C or A, B; got {lines}"))
    if len(system.line_to_neutral_v) != len(lines) or len(system.angle_deg) != len(lines):
        raise ScheduleError(Problem(where, "give one line_to_neutral_v and one angle_deg per line"))
    problems = _check_geometry(system, where)
    if problems:
        raise ScheduleError(problems)
    return system


def load_systems(path: Path | None = None) -> dict[str, System]:
    """Read a systems table; the bundled one when ``path`` is None. Keyed by designation.

    The file holds ``[[system]]`` tables in the layout of the bundled ``data/systems.toml``
    (described in docs/electrical.md). Every system is checked: lines, one voltage and angle per
    line, positive voltages and frequency, a high leg that is a line of a system with neutral,
    line-to-neutral phasors that reproduce the line-to-line voltage within 2 %, and unique
    designations.

    Raises
    ------
    ScheduleError
        Naming the file and the position of the system at fault.
    """
    data, where = read_toml(path, "data/systems.toml")
    tables = array_of_tables(data, "system", where)
    systems = [_system_from_table(t, f"{where} system {i + 1}") for i, t in enumerate(tables)]
    seen: dict[str, int] = {}
    for i, system in enumerate(systems):
        if system.designation in seen:
            raise ScheduleError(
                Problem(
                    f"{where} system {i + 1}",
                    f"designation {system.designation!r} already used by system "
                    f"{seen[system.designation] + 1}",
                )
            )
        seen[system.designation] = i
    return {s.designation: s for s in systems}


def all_systems(path: Path | None = None) -> dict[str, System]:
    """The bundled systems plus those in a user's file; a user's entry replaces a bundled one
    of the same designation."""
    return {**builtin_systems(), **(load_systems(path) if path is not None else {})}


@cache
def builtin_systems() -> dict[str, System]:
    return load_systems()


def find_system(text: str, extra: dict[str, System] | None = None) -> System | None:
    """The system whose designation or alias matches ``text`` (case, spaces and 'V' ignored)."""
    table = {**builtin_systems(), **(extra or {})}
    wanted = _key(text)
    for system in table.values():
        if wanted in {_key(system.designation), *(_key(a) for a in system.aliases)}:
            return system
    return None


def get_system(designation: str) -> System:
    """A bundled system by designation or alias; ``KeyError`` when unknown."""
    found = find_system(designation)
    if found is None:
        raise KeyError(designation)
    return found


def known_designations() -> list[str]:
    return list(builtin_systems())


# How a circuit's load connects: one line to neutral; between lines (2-pole: one element,
# 3-pole: three equal delta elements); or one line-to-neutral element per pole sharing the
# neutral (a multiwire branch circuit, NEC 210.4).
WiringKind = Literal["line-to-neutral", "line-to-line", "multiwire"]

# A circuit's stated voltage may sit this far below or above the system's nominal figure and
# still name it: equipment is rated at utilization voltages such as 115, 200, 230, 460 and
# 575 V on 120, 208, 240, 480 and 600 V systems (common practice, NEMA MG 1 motor ratings).
VOLTAGE_MATCH_TOLERANCE = 0.05


@dataclass(frozen=True, slots=True)
class Wiring:
    """How a circuit connects and the nominal voltage across each of its load elements."""

    kind: WiringKind
    element_voltage_v: float


def _matches(stated_v: float, nominal_v: float) -> bool:
    return abs(stated_v - nominal_v) <= VOLTAGE_MATCH_TOLERANCE * nominal_v + 1e-9


def _high_leg_reason(system: System) -> str:
    leg = system.high_leg
    others = " or ".join(line for line in system.lines if line != leg)
    volts = system.line_to_neutral_v[system.lines.index(leg)] if leg else 0.0
    return (
        f"{leg} is the high leg of {system.label()} ({volts:.0f} V to neutral): NEC 110.15 "
        f"requires it marked orange and 408.3(E) puts it at position {leg}; it serves no "
        f"line-to-neutral load, so put 1-pole loads on {others}"
    )


def circuit_wiring(
    system: System,
    lines: tuple[Line, ...] | list[Line],
    voltage_v: float | None = None,
) -> Wiring:
    """How a circuit on ``lines`` connects, from its pole count and its stated voltage.

    Without a stated voltage, a 1-pole circuit is line-to-neutral and a 2- or 3-pole circuit
    line-to-line (a 2-pole on 208Y/120 is a 208 V load). A stated voltage equal (within
    :data:`VOLTAGE_MATCH_TOLERANCE`) to the line-to-neutral voltage makes a 2- or 3-pole
    circuit a multiwire branch circuit: one line-to-neutral element per pole.

    Raises
    ------
    ValueError
        With a message saying why the circuit cannot connect that way.
    """
    lines = tuple(lines)
    poles = len(lines)
    if poles < 1 or poles > system.max_poles:
        raise ValueError(
            f"{system.label()} takes 1 to {system.max_poles} poles per circuit, not {poles}"
        )
    unknown = [line for line in lines if line not in system.lines]
    if unknown:
        raise ValueError(f"line {unknown[0]!r} is not one of {', '.join(system.lines)}")
    if len(set(lines)) != poles:
        raise ValueError(f"the poles of one circuit must be on different lines, got {lines}")
    line_to_line_v = system.line_to_line_v
    if poles == 1:
        (line,) = lines
        if not system.neutral:
            raise ValueError(
                f"{system.label()} has no neutral, so a 1-pole (line-to-neutral) load cannot "
                f"connect; a load between lines needs 2 or 3 poles"
            )
        if line == system.high_leg:
            raise ValueError(f"a 1-pole load cannot go on {line}: {_high_leg_reason(system)}")
        line_to_neutral_v = system.line_to_neutral_v[system.lines.index(line)]
        if voltage_v is None or _matches(voltage_v, line_to_neutral_v):
            return Wiring("line-to-neutral", line_to_neutral_v)
        if _matches(voltage_v, line_to_line_v):
            raise ValueError(
                f"a {voltage_v:g} V load is line-to-line on {system.label()} and needs 2 poles "
                f"(or 3 for a three-phase load), not 1"
            )
        raise ValueError(
            f"{voltage_v:g} V does not fit a 1-pole circuit on line {line} of {system.label()}, "
            f"which gives {line_to_neutral_v:.0f} V line to neutral"
        )
    if voltage_v is None or _matches(voltage_v, line_to_line_v):
        return Wiring("line-to-line", line_to_line_v)
    servable = [system.line_to_neutral_v[system.lines.index(x)] for x in lines]
    ordinary = [v for x, v in zip(lines, servable, strict=True) if x != system.high_leg]
    if system.neutral and ordinary and all(_matches(voltage_v, v) for v in ordinary):
        if system.high_leg in lines:
            raise ValueError(
                f"a {voltage_v:g} V multiwire circuit cannot use line {system.high_leg}: "
                f"{_high_leg_reason(system)}"
            )
        return Wiring("multiwire", ordinary[0])
    hint = ""
    if system.designation == "208Y/120" and _matches(voltage_v, 240.0):
        hint = "; 240 V equipment on a 208Y/120 system runs at 208 V: check its rating"
    raise ValueError(
        f"{voltage_v:g} V does not fit a {poles}-pole circuit on {system.label()}, which gives "
        f"{line_to_line_v:g} V between lines"
        + (f" and {servable[0]:g} V line to neutral" if system.neutral else "")
        + hint
    )


def check_connection(
    system: System,
    lines: tuple[Line, ...] | list[Line],
    poles: int,
    voltage_v: float | None = None,
    neutral_va: float | None = None,
) -> str | None:
    """Why a circuit cannot connect to ``lines`` of ``system``, or None when it can.

    ``neutral_va`` is the line-to-neutral part of a 2- or 3-pole load (a dryer's or range's
    120 V controls and motor); it is taken from the neutral on the circuit's first line, so that
    line must serve line-to-neutral loads.

    Examples
    --------
    >>> from balancer.domain.systems import get_system
    >>> check_connection(get_system("240/120"), ["A"], 1, 120.0) is None
    True
    >>> print(check_connection(get_system("240/120"), ["B"], 1, 120.0))  # doctest: +ELLIPSIS
    a 1-pole load cannot go on B: B is the high leg ...
    """
    if len(lines) != poles:
        return f"a {poles}-pole circuit needs {poles} line(s), got {len(lines)}: {tuple(lines)}"
    try:
        wiring = circuit_wiring(system, lines, voltage_v)
    except ValueError as exc:
        return str(exc)
    if neutral_va:
        if neutral_va < 0:
            return f"the neutral share must not be negative, got {neutral_va:g} VA"
        if wiring.kind != "line-to-line":
            return "a neutral share only applies to a 2- or 3-pole load between lines"
        if not system.neutral:
            return f"{system.label()} has no neutral to carry a neutral share"
        if lines[0] == system.high_leg:
            return (
                f"the line-to-neutral part of this load would sit on {lines[0]}: "
                f"{_high_leg_reason(system)}"
            )
    return None

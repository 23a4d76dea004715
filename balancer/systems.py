"""Voltage systems as data: the table in ``data/systems.toml`` (or a user's own file) becomes
immutable :class:`System` objects with their line-to-neutral voltage phasors."""

from __future__ import annotations

import cmath
import math
import re
import tomllib
from dataclasses import dataclass
from functools import cache
from importlib import resources
from pathlib import Path

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
        """``208Y/120 V, 3-phase 4-wire``; ``480 V delta, 3-phase 3-wire``."""
        number, _, rest = self.designation.partition(" ")
        name = f"{number} V {rest}".rstrip()
        return f"{name}, {self.phase_count}-phase {self._wires()}-wire"

    def _wires(self) -> int:
        return len(self.lines) + (1 if self.neutral else 0)


def _key(text: str) -> str:
    return re.sub(r"[^0-9A-Z/]", "", text.upper().replace("VOLTS", "").replace("V", ""))


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
        raise ScheduleError(Problem(where, f"system entry is incomplete or malformed ({exc})")) from exc
    if lines not in (("A", "B", "C"), ("A", "B")):
        raise ScheduleError(Problem(where, f"lines must be A, B, C or A, B; got {lines}"))
    if len(system.line_to_neutral_v) != len(lines) or len(system.angle_deg) != len(lines):
        raise ScheduleError(Problem(where, "give one line_to_neutral_v and one angle_deg per line"))
    return system


def load_systems(path: Path | None = None) -> dict[str, System]:
    """Read a systems table; the bundled one when ``path`` is None. Keyed by designation."""
    if path is None:
        text = resources.files("balancer").joinpath("data/systems.toml").read_text("utf-8")
        where = "systems.toml"
    else:
        text = path.read_text("utf-8")
        where = str(path)
    try:
        data = tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        raise ScheduleError(Problem(where, f"not valid TOML: {exc}")) from exc
    systems = [_system_from_table(t, f"{where} system {i + 1}") for i, t in enumerate(data.get("system", []))]
    return {s.designation: s for s in systems}


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

"""Harmonic current profiles of load classes, and each circuit's harmonic current phasors.

A profile is a spectrum: per-unit magnitudes m_h of the fundamental current by order h. The
bundled table lives in ``data/harmonics.toml``; a user's file of the same layout adds profiles
or replaces them. A circuit takes the profile its ``Harmonics`` entry names
(``Circuit.harmonic_profile``, checked when the schedule is read), else the one its load class
matches, else none (a linear load).
"""

from __future__ import annotations

import math
import re
from collections.abc import Mapping
from dataclasses import dataclass
from functools import cache, lru_cache
from pathlib import Path

from balancer.domain.datafiles import array_of_tables, read_toml
from balancer.domain.panel import Circuit
from balancer.domain.systems import Line, System
from balancer.errors import Problem, ScheduleError
from balancer.physics.phasors import CircuitCurrents, circuit_harmonic_currents

HIGHEST_ORDER = 99  # orders above this add nothing a panel schedule can use


@dataclass(frozen=True, slots=True)
class Profile:
    """A named harmonic spectrum and where its numbers come from."""

    name: str
    description: str
    spectrum: tuple[tuple[int, float], ...]
    source: str = ""
    aliases: tuple[str, ...] = ()

    def as_dict(self) -> dict[int, float]:
        return dict(self.spectrum)

    @property
    def thd_pct(self) -> float:
        """Total harmonic distortion of the current, √(Σ m_h²) × 100, in per cent of I_1."""
        return math.sqrt(math.fsum(m * m for _, m in self.spectrum)) * 100.0

    def triplen_orders(self) -> tuple[int, ...]:
        """Orders that are odd multiples of three: zero-sequence on a balanced 3-phase set."""
        return tuple(h for h, _ in self.spectrum if h % 3 == 0 and h % 2 == 1)


@lru_cache(maxsize=4096)  # analysis looks classes up once per circuit per arrangement
def _key(text: str) -> str:
    return re.sub(r"[^a-z0-9]", "", text.lower())


def _profile_from_table(table: dict[str, object], where: str) -> Profile:
    try:
        name = str(table["name"])
        raw = table.get("spectrum", {})
        if not isinstance(raw, dict):
            raise TypeError("spectrum must be a table of order = per-unit magnitude")
        spectrum = []
        for order_text, value in raw.items():
            order = int(order_text)
            magnitude = float(value)
            if not 2 <= order <= HIGHEST_ORDER:
                raise ValueError(f"order {order} is outside 2..{HIGHEST_ORDER}")
            if not 0.0 <= magnitude <= 10.0:
                raise ValueError(f"order {order}: {magnitude} per unit is outside 0..10")
            spectrum.append((order, magnitude))
        aliases = table.get("aliases", [])
        if not isinstance(aliases, list):
            raise TypeError("aliases must be a list of strings")
        return Profile(
            name=name,
            description=str(table.get("description", "")),
            spectrum=tuple(sorted(spectrum)),
            source=str(table.get("source", "")),
            aliases=tuple(str(a) for a in aliases),
        )
    except (KeyError, TypeError, ValueError) as exc:
        raise ScheduleError(Problem(where, f"harmonic profile is malformed ({exc})")) from exc


def load_profiles(path: Path | None = None) -> dict[str, Profile]:
    """Read a profiles table; the bundled one when ``path`` is None. Keyed by name.

    A file holds ``[[profile]]`` tables with ``name``, optional ``description``, ``aliases``
    and ``source``, and ``spectrum = { 3 = 0.8, 5 = 0.6 }`` (order = per-unit of fundamental).
    """
    data, where = read_toml(path, "data/harmonics.toml")
    tables = array_of_tables(data, "profile", where)
    profiles = [_profile_from_table(t, f"{where} profile {i + 1}") for i, t in enumerate(tables)]
    return {p.name: p for p in profiles}


@cache
def builtin_profiles() -> dict[str, Profile]:
    return load_profiles()


def all_profiles(path: Path | None = None) -> dict[str, Profile]:
    """Bundled profiles plus a user's; a user's profile replaces a bundled one of its name and
    comes first, so its aliases win over bundled ones."""
    mine = load_profiles(path) if path is not None else {}
    return {**mine, **{k: v for k, v in builtin_profiles().items() if k not in mine}}


def find_profile(text: str, profiles: Mapping[str, Profile] | None = None) -> Profile | None:
    """The profile whose name or alias matches ``text`` (case, spaces and punctuation ignored)."""
    wanted = _key(text)
    if not wanted:
        return None
    for profile in (profiles if profiles is not None else builtin_profiles()).values():
        if wanted in {_key(profile.name), *(_key(a) for a in profile.aliases)}:
            return profile
    return None


def profile_for(circuit: Circuit, profiles: Mapping[str, Profile] | None = None) -> Profile | None:
    """The circuit's harmonic profile: its ``Harmonics`` entry, else its load class, else None.

    Raises
    ------
    ValueError
        When the circuit names a profile that ``profiles`` does not hold (the reader refuses a
        name no bundled profile has, so this is a circuit made in code or other profiles).
    """
    named = (circuit.harmonic_profile or "").strip()
    if named:
        found = find_profile(named, profiles)
        if found is None:
            known = ", ".join(sorted((profiles or builtin_profiles()).keys()))
            raise ValueError(f"unknown harmonic profile {named!r}; known: {known}")
        return found
    return find_profile(circuit.load_class, profiles) if circuit.load_class else None


def spectrum_for(
    circuit: Circuit, profiles: Mapping[str, Profile] | None = None
) -> dict[int, float]:
    """The circuit's spectrum (order → per-unit of fundamental); empty for a linear load."""
    profile = profile_for(circuit, profiles)
    return profile.as_dict() if profile else {}


def circuit_currents_by_order(
    system: System,
    circuit: Circuit,
    lines: tuple[Line, ...] | list[Line],
    profiles: Mapping[str, Profile] | None = None,
) -> dict[int, CircuitCurrents]:
    """Current phasors of ``circuit`` placed on ``lines``, by harmonic order (1 = fundamental)."""
    return circuit_harmonic_currents(
        system,
        tuple(lines),
        circuit.basis_va,
        circuit.power_factor,
        spectrum_for(circuit, profiles),
        circuit.voltage_v,
        circuit.neutral_va,
    )


def neutral_by_order(
    system: System,
    circuit: Circuit,
    lines: tuple[Line, ...] | list[Line],
    profiles: Mapping[str, Profile] | None = None,
) -> dict[int, complex]:
    """Neutral current phasor the circuit adds at each harmonic order, for a candidate ``lines``.

    For an optimiser: the neutral of an arrangement at order h is the sum of these phasors over
    circuits, and its RMS is √(Σ_h |Σ_circuits I_N,h|²). Orders are independent, so a model can
    treat each order as its own linear sum of the same assignment variables. Triplen orders of
    line-to-neutral elements sit at the same angle on every line and add; the fundamental and
    other orders cancel when balanced.
    """
    if not system.neutral:
        return {}
    parts = circuit_currents_by_order(system, circuit, lines, profiles)
    return {h: part.neutral for h, part in parts.items()}

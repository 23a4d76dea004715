"""Transformers between panels: how a secondary's unbalanced loads appear on the primary lines.

The transformer is ideal (no losses, no magnetising current): each primary winding carries the
complex power of the secondary winding it is coupled to, at the primary winding's voltage. A
winding between two primary lines p, q is therefore, seen from the primary, a line-to-line load
on p and q (its current leaves on p and returns on q); a winding from a primary line to neutral
is a line-to-neutral load. On a delta primary every winding sits between two lines, so the line
currents are differences of winding currents, they sum to zero and the secondary neutral current
does not reach the primary.
"""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from typing import Literal

from balancer.errors import Problem, ScheduleError
from balancer.systems import Line, System

Connection = Literal["delta-wye", "wye-wye", "single-phase"]
CONNECTIONS: tuple[Connection, ...] = ("delta-wye", "wye-wye", "single-phase")

# Delta-wye winding pairing: secondary a-n is coupled to the primary winding A-C, b-n to B-A,
# c-n to C-B, so the secondary lags the primary by 30°, the angular displacement IEEE C57.12.00
# gives for delta-wye units (from memory). Which corner pairs with which only moves load
# between primary lines; it never changes a total.
_DELTA_WYE_PAIRS: dict[Line, tuple[Line, Line]] = {
    "A": ("A", "C"),
    "B": ("B", "A"),
    "C": ("C", "B"),
}


@dataclass(frozen=True, slots=True)
class Winding:
    """One primary winding and the secondary lines whose loads it carries.

    ``primary_lines`` are two primary lines (a winding between lines) or one (a winding from a
    line to the primary neutral). An empty tuple means "the lines of the feeder breaker", used
    by single-phase transformers, whose primary goes wherever the breaker sits.
    """

    secondary_lines: tuple[Line, ...]
    primary_lines: tuple[Line, ...] = ()


@dataclass(frozen=True, slots=True)
class Transformer:
    """A transformer fed from a panel's feeder breaker and feeding another panel."""

    name: str
    kva: float
    primary: System
    secondary: System
    connection: Connection
    windings: tuple[Winding, ...]

    @property
    def winding_kva(self) -> float:
        """Rating of one winding: the unit's kVA shared equally among its windings."""
        return self.kva / len(self.windings)

    def primary_poles(self) -> tuple[int, ...]:
        """Pole counts of feeder breaker that may feed this transformer."""
        if self.connection == "single-phase":
            return (2, 1) if self.primary.neutral else (2,)
        return (3,)


def make_transformer(
    name: str,
    kva: float,
    primary: System,
    secondary: System,
    connection: str,
    where: str = "",
) -> Transformer:
    """A validated transformer with the usual winding arrangement for ``connection``.

    Raises
    ------
    ScheduleError
        When the rating is not positive or the connection does not suit the two systems.
    """
    label = f"transformer {name}" if name else "transformer"
    problems: list[Problem] = []
    if not (kva > 0 and math.isfinite(kva)):
        problems.append(Problem(where, f"{label}: rating {kva:g} kVA must be a positive number"))
    key = connection.strip().lower().replace("–", "-").replace(" ", "-").replace("/", "-")
    key = {"delta-wye": "delta-wye", "dy": "delta-wye", "wye-wye": "wye-wye", "yy": "wye-wye"}.get(
        key, key
    )
    if key in ("single-phase", "1-phase", "1ph", "single"):
        key = "single-phase"
    windings: tuple[Winding, ...] = ()
    secondary_is_wye = secondary.neutral and secondary.high_leg is None
    if key == "delta-wye":
        if primary.phase_count != 3 or secondary.phase_count != 3 or not secondary_is_wye:
            problems.append(
                Problem(
                    where,
                    f"{label}: a delta-wye transformer needs a three-phase primary and a "
                    f"three-phase wye secondary; got {primary.designation} → "
                    f"{secondary.designation}",
                )
            )
        windings = tuple(Winding((k,), _DELTA_WYE_PAIRS[k]) for k in ("A", "B", "C"))
    elif key == "wye-wye":
        if not (primary.phase_count == 3 and primary.neutral and primary.high_leg is None) or not (
            secondary.phase_count == 3 and secondary_is_wye
        ):
            problems.append(
                Problem(
                    where,
                    f"{label}: a wye-wye transformer needs a wye primary with a neutral and a "
                    f"wye secondary; got {primary.designation} → {secondary.designation}",
                )
            )
        windings = tuple(Winding((k,), (k,)) for k in ("A", "B", "C"))
    elif key == "single-phase":
        if secondary.lines != ("A", "B") or not secondary.neutral:
            problems.append(
                Problem(
                    where,
                    f"{label}: a single-phase transformer here feeds a single-phase 3-wire panel; "
                    f"got {secondary.designation}",
                )
            )
        windings = (Winding(("A", "B")),)
    else:
        problems.append(
            Problem(
                where,
                f"{label}: connection '{connection}' is not known; use one of "
                f"{', '.join(CONNECTIONS)}",
            )
        )
    if problems:
        raise ScheduleError(problems)
    return Transformer(name, float(kva), primary, secondary, key, windings)  # type: ignore[arg-type]


def _primary_lines(winding: Winding, feeder_lines: Sequence[Line]) -> tuple[Line, ...]:
    return winding.primary_lines or tuple(feeder_lines)


def winding_powers(
    transformer: Transformer, secondary_currents: Mapping[Line, complex]
) -> tuple[complex, ...]:
    """Complex power S = V·I* (VA) each winding delivers to the secondary, nominal voltages."""
    system = transformer.secondary
    return tuple(
        sum(
            (
                system.voltage_phasor(k) * secondary_currents.get(k, 0j).conjugate()
                for k in winding.secondary_lines
            ),
            0j,
        )
        for winding in transformer.windings
    )


def primary_line_currents(
    transformer: Transformer,
    secondary_currents: Mapping[Line, complex],
    feeder_lines: Sequence[Line],
) -> dict[Line, complex]:
    """Primary line current phasors (A, RMS) for the secondary line current phasors given.

    ``secondary_currents`` are the currents leaving the secondary terminals toward the loads,
    in the secondary system's own angle frame. ``feeder_lines`` are the primary panel's lines
    the feeder breaker is on (space order); they place a single-phase transformer's winding.
    The result is in the primary system's frame; a winding between lines p, q adds I to p and
    −I to q, so on a delta primary each line current is the difference of two winding currents.
    """
    primary = transformer.primary
    out: dict[Line, complex] = dict.fromkeys(primary.lines, 0j)
    for winding, power in zip(
        transformer.windings, winding_powers(transformer, secondary_currents), strict=True
    ):
        lines = _primary_lines(winding, feeder_lines)
        if len(lines) == 2:
            voltage = primary.voltage_between(lines[0], lines[1])
        else:
            voltage = primary.voltage_phasor(lines[0])
        current = (power / voltage).conjugate()
        out[lines[0]] += current
        if len(lines) == 2:
            out[lines[1]] -= current
    return out


def primary_phase_va(
    transformer: Transformer,
    secondary_phase_va: Mapping[Line, float],
    feeder_lines: Sequence[Line],
) -> dict[Line, float]:
    """Schedule-convention VA per primary line: a winding between two lines counts half on each.

    The total is conserved: the primary lines carry exactly the secondary's VA.
    """
    out: dict[Line, float] = dict.fromkeys(transformer.primary.lines, 0.0)
    for winding in transformer.windings:
        va = math.fsum(secondary_phase_va.get(k, 0.0) for k in winding.secondary_lines)
        lines = _primary_lines(winding, feeder_lines)
        for line in lines:
            out[line] += va / len(lines)
    return out


def loading_pct(transformer: Transformer, secondary_currents: Mapping[Line, complex]) -> float:
    """Heaviest winding's apparent power as a percentage of one winding's share of the rating.

    A three-phase unit of S kVA is taken as three windings of S/3 kVA each, so an unbalanced
    load can overload one winding while the total is within the rating.
    """
    powers = winding_powers(transformer, secondary_currents)
    heaviest_kva = max(abs(p) for p in powers) / 1000.0
    return heaviest_kva / transformer.winding_kva * 100.0

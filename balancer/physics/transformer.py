"""Transformers between panels: how a secondary's unbalanced loads appear on the primary lines.

The transformer is ideal (no losses, no magnetising current) and its units share one turns
ratio. Ampere-turns balance on every core: a primary winding carries its secondary winding's
ampere-turn current divided by the turns ratio, or, the same thing said with powers, the
complex power S = V·I* of the secondary winding at the primary winding's voltage. A primary
winding between two primary lines p, q is therefore, seen from the primary, a line-to-line load
on p and q (its current leaves on p and returns on q); a winding from a primary line to neutral
is a line-to-neutral load. On a delta primary every winding sits between two lines, so the line
currents are differences of winding currents, they sum to zero and no zero-sequence current
reaches the primary.

Secondary windings from a line to neutral (delta-wye, wye-wye, single-phase) carry their line
currents. A delta secondary's windings sit between lines, and its line currents alone do not fix
their currents: a current circulating round a closed delta is left undetermined by Kirchhoff's
current law. balancer takes the usual assumption of equal per-unit winding impedances, under
which no current circulates: the ampere-turn currents of the three windings sum to zero round
the delta (common practice, from memory). A centre-tapped winding, whose tap is the neutral of a
4-wire high-leg delta, has two halves whose currents differ by the neutral current entering at
the tap; its ampere-turn current is their mean. With a wye primary whose neutral is not
connected the assumption is exact, since the primary winding currents must then sum to zero.
An open delta (two windings) needs no assumption: Kirchhoff's current law fixes both currents.
"""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from typing import Literal

from balancer.domain.result import CurrentTerm
from balancer.domain.systems import Line, System, find_system
from balancer.errors import Problem, ScheduleError

Connection = Literal[
    "delta-wye", "wye-wye", "single-phase", "delta-delta", "wye-delta", "open-delta"
]
CONNECTIONS: tuple[Connection, ...] = (
    "delta-wye",
    "wye-wye",
    "single-phase",
    "delta-delta",
    "wye-delta",
    "open-delta",
)

# Accepted spellings, compared with case, spaces, hyphens and slashes removed.
_SPELLINGS: dict[str, Connection] = {
    "deltawye": "delta-wye",
    "dy": "delta-wye",
    "wyewye": "wye-wye",
    "yy": "wye-wye",
    "singlephase": "single-phase",
    "1phase": "single-phase",
    "1ph": "single-phase",
    "single": "single-phase",
    "deltadelta": "delta-delta",
    "dd": "delta-delta",
    "wyedelta": "wye-delta",
    "yd": "wye-delta",
    "stardelta": "wye-delta",
    "opendelta": "open-delta",
    "vv": "open-delta",
}

# Delta-wye winding pairing: secondary a-n is coupled to the primary winding A-C, b-n to B-A,
# c-n to C-B, so the secondary lags the primary by 30°, the angular displacement IEEE C57.12.00
# gives for delta-wye units (from memory). Which corner pairs with which only moves load
# between primary lines; it never changes a total.
_DELTA_WYE_PAIRS: dict[Line, tuple[Line, Line]] = {
    "A": ("A", "C"),
    "B": ("B", "A"),
    "C": ("C", "B"),
}

# Delta secondary windings in cyclic order: a-b, b-c, c-a. Delta-delta couples each to the
# primary winding between the same lines (0° displacement); wye-delta couples a-b to primary
# A-N, b-c to B-N and c-a to C-N, so the secondary's line-to-neutral equivalent lags the primary
# by 30°, the displacement IEEE C57.12.00 gives for wye-delta units as for delta-wye (from
# memory).
_DELTA_CYCLE: tuple[tuple[Line, Line], ...] = (("A", "B"), ("B", "C"), ("C", "A"))

# A high-leg secondary's neutral must sit at the middle of the winding between the two other
# lines: their voltages to neutral are each half the line-to-line voltage, opposite in phase.
_TAP_TOLERANCE = 0.02


@dataclass(frozen=True, slots=True)
class Winding:
    """One winding pair: the secondary lines it serves and the primary lines it is fed from.

    ``primary_lines`` are two primary lines (a winding between lines) or one (a winding from a
    line to the primary neutral). An empty tuple means "the lines of the feeder breaker", used
    by single-phase transformers, whose primary goes wherever the breaker sits.

    ``across`` marks a delta secondary winding between ``secondary_lines[0]`` and
    ``secondary_lines[1]``; otherwise each secondary line is served from the neutral by its own
    winding or half winding. ``tapped`` marks a delta winding whose centre tap is the secondary
    neutral.
    """

    secondary_lines: tuple[Line, ...]
    primary_lines: tuple[Line, ...] = ()
    across: bool = False
    tapped: bool = False


@dataclass(frozen=True, slots=True)
class Transformer:
    """A transformer (or bank of single-phase units) fed from a panel's feeder breaker and
    feeding another panel.

    ``kva`` is the whole bank's nameplate: for an open delta, the sum of its two units.
    """

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

    @property
    def balanced_kva(self) -> float:
        """The balanced three-phase load the bank carries at full rating of its windings.

        An open delta of two units of S kVA carries √3·S, 86.6 % of 2·S (common practice, from
        memory): each winding then carries a full line current at line-to-line voltage. The
        figure follows from the winding currents, so :func:`loading_pct` applies it as it is.
        """
        if self.connection == "open-delta":
            return math.sqrt(3.0) * self.winding_kva
        return self.kva

    def primary_poles(self) -> tuple[int, ...]:
        """Pole counts of feeder breaker that may feed this transformer."""
        if self.connection == "single-phase":
            return (2, 1) if self.primary.neutral else (2,)
        return (3,)


def _connection_key(connection: str) -> str:
    key = connection.strip().lower().replace("–", "-").replace("δ", "delta")
    compact = "".join(ch for ch in key if ch not in " -/_")
    return _SPELLINGS.get(compact, key)


def _tapped_pair(secondary: System) -> tuple[Line, Line] | None:
    """The delta winding whose tap is the neutral (the one away from the high leg), if any."""
    if secondary.high_leg is None:
        return None
    return next(pair for pair in _DELTA_CYCLE if secondary.high_leg not in pair)


def _delta_secondary_problem(secondary: System) -> str:
    """Why ``secondary`` cannot be a delta secondary ('' when it can)."""
    if secondary.phase_count != 3:
        return "a delta secondary gives three lines"
    if secondary.neutral and secondary.high_leg is None:
        return (
            "a wye secondary's neutral is the star point of its windings, which a delta does not "
            "have (use delta-wye or wye-wye)"
        )
    pair = _tapped_pair(secondary)
    if pair is not None:
        first, second = (secondary.voltage_phasor(k) for k in pair)
        half = secondary.line_to_line_v / 2
        if (
            abs(first + second) > _TAP_TOLERANCE * secondary.line_to_line_v
            or abs(abs(first) - half) > _TAP_TOLERANCE * half
        ):
            return (
                f"its neutral is not the centre tap of the {pair[0]}-{pair[1]} winding "
                f"({abs(first):g} V and {abs(second):g} V to neutral)"
            )
    return ""


def _delta_windings(connection: Connection, secondary: System) -> tuple[Winding, ...]:
    pair = _tapped_pair(secondary)
    windings = []
    for (p, q), k in zip(_DELTA_CYCLE, ("A", "B", "C"), strict=True):
        primary_lines = (k,) if connection == "wye-delta" else (p, q)
        windings.append(Winding((p, q), primary_lines, across=True, tapped=(p, q) == pair))
    if connection == "open-delta":
        # Two windings: c-a (the tapped one on a high-leg secondary) and a-b; b-c is left open.
        windings = [windings[2], windings[0]]
    return tuple(windings)


# long: one branch per connection, each naming what it refuses for the two systems
def make_transformer(
    name: str,
    kva: float,
    primary: System,
    secondary: System,
    connection: str,
    where: str = "",
) -> Transformer:
    """A validated transformer with the usual winding arrangement for ``connection``.

    ``connection`` is one of :data:`CONNECTIONS`, in any of the usual spellings ("dy",
    "delta/delta", "Yd", "open delta", ...). An open delta keeps the windings c-a and a-b
    (b-c open); on a high-leg secondary c-a is the centre-tapped winding, a-b the other unit.

    Raises
    ------
    ScheduleError
        When the rating is not positive or the connection does not suit the two systems.
    """
    label = f"transformer {name}" if name else "transformer"
    problems: list[Problem] = []
    if not (kva > 0 and math.isfinite(kva)):
        problems.append(Problem(where, f"{label}: rating {kva:g} kVA must be a positive number"))
    key = _connection_key(connection)
    windings: tuple[Winding, ...] = ()
    secondary_is_wye = secondary.neutral and secondary.high_leg is None
    pair_text = f"{primary.designation} → {secondary.designation}"
    if key == "delta-wye":
        if primary.phase_count != 3 or secondary.phase_count != 3 or not secondary_is_wye:
            problems.append(
                Problem(
                    where,
                    f"{label}: a delta-wye transformer needs a three-phase primary and a "
                    f"three-phase wye secondary; got {pair_text}",
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
                    f"wye secondary; got {pair_text}",
                )
            )
        windings = tuple(Winding((k,), (k,)) for k in ("A", "B", "C"))
    elif key == "single-phase":
        # one centre-tapped winding: its two halves are in phase opposition (120/240 V); two
        # lines of a wye (120/208 V) need two windings and so cannot come from this unit
        opposed = (
            secondary.lines == ("A", "B")
            and secondary.neutral
            and abs(secondary.voltage_phasor("A") + secondary.voltage_phasor("B"))
            < 1e-6 * abs(secondary.voltage_phasor("A"))
        )
        if not opposed:
            problems.append(
                Problem(
                    where,
                    f"{label}: a single-phase transformer feeds a single-phase 3-wire panel "
                    f"from one centre-tapped winding (such as 120/240); got "
                    f"{secondary.designation}",
                )
            )
        windings = (Winding(("A", "B")),)
    elif key in ("delta-delta", "wye-delta", "open-delta"):
        if key == "wye-delta":
            if not (primary.phase_count == 3 and primary.neutral and primary.high_leg is None):
                problems.append(
                    Problem(
                        where,
                        f"{label}: a wye-delta transformer needs a three-phase wye primary with "
                        f"a neutral; got {pair_text}",
                    )
                )
        elif primary.phase_count != 3:
            problems.append(
                Problem(
                    where,
                    f"{label}: a {key} transformer needs a three-phase primary; got {pair_text}",
                )
            )
        reason = _delta_secondary_problem(secondary)
        if reason:
            problems.append(
                Problem(
                    where,
                    f"{label}: a {key} transformer needs a 3-wire delta or a high-leg delta "
                    f"secondary; got {pair_text}: {reason}",
                )
            )
        else:
            windings = _delta_windings(key, secondary)  # type: ignore[arg-type]
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


def winding_primary_lines(winding: Winding, feeder_lines: Sequence[Line]) -> tuple[Line, ...]:
    """The primary lines a winding sits between; a single-phase unit's are its breaker's lines."""
    return winding.primary_lines or tuple(feeder_lines)


def _neutral_current(
    transformer: Transformer, secondary_currents: Mapping[Line, complex]
) -> complex:
    """Current returning on the secondary neutral: the sum of the currents leaving on the lines."""
    if not transformer.secondary.neutral:
        return 0j
    return sum((secondary_currents.get(k, 0j) for k in transformer.secondary.lines), 0j)


def winding_currents(
    transformer: Transformer, secondary_currents: Mapping[Line, complex]
) -> tuple[tuple[complex, ...], ...]:
    """Current phasors (A, RMS) in each part of each secondary winding, in the secondary frame.

    A winding from a line to neutral carries its line's current: ``(I,)``. The single-phase
    winding is two halves carrying I_A and I_B out to their lines. A delta winding between p
    and q carries J leaving it at p: ``(J,)``; a centre-tapped delta winding two halves,
    ``(J + I_N/2, J − I_N/2)``, the p half first, where I_N is the neutral current returning to
    the tap. J is the winding's ampere-turn current (for a tapped winding, the mean of its
    halves).

    Closed delta (no circulating current, see the module docstring): with every line current
    I_k taken as the line-to-line equivalent I'_k (half the neutral current moved to each end of
    the tapped winding, so that ΣI' = 0), J_pq = (I'_p − I'_q)/3. Open delta with b-c open:
    J_ab = −I'_b and J_ca = I'_c, from Kirchhoff's current law at b and c.
    """
    if not any(w.across for w in transformer.windings):
        return tuple(
            tuple(secondary_currents.get(k, 0j) for k in w.secondary_lines)
            for w in transformer.windings
        )
    equivalent = _equivalent_currents(transformer, secondary_currents)
    neutral = _neutral_current(transformer, secondary_currents)
    out: list[tuple[complex, ...]] = []
    for winding in transformer.windings:
        p, q = winding.secondary_lines
        if transformer.connection == "open-delta":
            # the winding's far end from the open side: c-a ends at c, a-b at b
            current = equivalent["C"] if (p, q) == ("C", "A") else -equivalent["B"]
        else:
            current = (equivalent[p] - equivalent[q]) / 3
        if winding.tapped:
            out.append((current + neutral / 2, current - neutral / 2))
        else:
            out.append((current,))
    return tuple(out)


def _equivalent_currents(
    transformer: Transformer, secondary_currents: Mapping[Line, complex]
) -> dict[Line, complex]:
    """Line currents with the neutral current split between the two ends of the tapped winding:
    a load from a tap-end line to neutral acts on the bank as a load across the whole winding."""
    out = {k: secondary_currents.get(k, 0j) for k in transformer.secondary.lines}
    neutral = _neutral_current(transformer, secondary_currents)
    for winding in transformer.windings:
        if winding.tapped:
            for k in winding.secondary_lines:
                out[k] -= neutral / 2
    return out


def _winding_voltage(system: System, winding: Winding) -> complex:
    return system.voltage_between(*winding.secondary_lines[:2])


def winding_powers(
    transformer: Transformer, secondary_currents: Mapping[Line, complex]
) -> tuple[complex, ...]:
    """Complex power S = V·I* (VA) each winding delivers to the secondary, nominal voltages.

    A delta winding's S is its line-to-line voltage times its ampere-turn current (for a tapped
    winding, the sum of its two halves' powers, each at half the voltage).
    """
    system = transformer.secondary
    if not any(w.across for w in transformer.windings):
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
    return tuple(
        _winding_voltage(system, winding) * (sum(parts, 0j) / len(parts)).conjugate()
        for winding, parts in zip(
            transformer.windings, winding_currents(transformer, secondary_currents), strict=True
        )
    )


def primary_line_currents(
    transformer: Transformer,
    secondary_currents: Mapping[Line, complex],
    feeder_lines: Sequence[Line],
) -> dict[Line, complex]:
    """Primary line current phasors (A, RMS) for the secondary line current phasors given.

    ``secondary_currents`` are the currents leaving the secondary terminals toward the loads,
    in the secondary system's own angle frame (their sum, on a system with a neutral, returns
    on the neutral). ``feeder_lines`` are the primary panel's lines the feeder breaker is on
    (space order); they place a single-phase transformer's winding. The result is in the primary
    system's frame; a winding between lines p, q adds I to p and −I to q, so on a delta primary
    each line current is the difference of two winding currents.
    """
    primary = transformer.primary
    out: dict[Line, complex] = dict.fromkeys(primary.lines, 0j)
    for winding, power in zip(
        transformer.windings, winding_powers(transformer, secondary_currents), strict=True
    ):
        lines = winding_primary_lines(winding, feeder_lines)
        if len(lines) == 2:
            voltage = primary.voltage_between(lines[0], lines[1])
        else:
            voltage = primary.voltage_phasor(lines[0])
        # S/V* is the secondary ampere-turn current over the turns ratio, turned into the
        # primary winding's frame
        current = (power / voltage).conjugate()
        out[lines[0]] += current
        if len(lines) == 2:
            out[lines[1]] -= current
    return out


def _equivalent_va(
    transformer: Transformer,
    secondary_phase_va: Mapping[Line, float],
    secondary_currents: Mapping[Line, complex] | None,
    secondary_neutral_va: Mapping[Line, float] | None = None,
) -> dict[Line, float]:
    """Per-line VA of a delta secondary re-expressed as line-to-line loads only.

    On a high-leg secondary, the line-to-neutral VA on the tap-end lines p, q is moved half to
    each end of the tapped winding: the lines then carry L_p − D/2 and L_q + D/2, D = N_p − N_q
    being the difference of the two lines' line-to-neutral VA. D is taken from
    ``secondary_neutral_va`` when given, else read from the neutral current when the currents
    are given (|V_p|·|I_N|, signed by the side it is in phase with;
    exact when the line-to-neutral loads share one power factor) and otherwise taken as close to
    0 as the figures allow. Either way it is kept where every line-to-line equivalent is
    possible (no line above the sum of the other two), so no winding share comes out negative.
    """
    out = {k: secondary_phase_va.get(k, 0.0) for k in transformer.secondary.lines}
    tapped = next((w for w in transformer.windings if w.tapped), None)
    if tapped is None:
        return out
    p, q = tapped.secondary_lines
    (r,) = (k for k in transformer.secondary.lines if k not in (p, q))
    difference = 0.0
    if secondary_neutral_va is not None:
        difference = secondary_neutral_va.get(p, 0.0) - secondary_neutral_va.get(q, 0.0)
    elif secondary_currents is not None:
        neutral = _neutral_current(transformer, secondary_currents)
        voltage = transformer.secondary.voltage_phasor(p)
        sign = 1.0 if (neutral * voltage.conjugate()).real >= 0 else -1.0
        difference = sign * abs(voltage) * abs(neutral)
    low = out[p] - out[q] - out[r]
    high = out[p] + out[r] - out[q]
    difference = max(low, min(high, difference))
    out[p] -= difference / 2
    out[q] += difference / 2
    return out


def primary_phase_va(
    transformer: Transformer,
    secondary_phase_va: Mapping[Line, float],
    feeder_lines: Sequence[Line],
    secondary_currents: Mapping[Line, complex] | None = None,
    secondary_neutral_va: Mapping[Line, float] | None = None,
) -> dict[Line, float]:
    """Schedule-convention VA per primary line; the total is the secondary's, exactly.

    Each secondary load is put on the primary as the load it presents there, counted by the
    schedule convention:

    * line-to-neutral secondary windings (delta-wye, wye-wye, single-phase): each winding's VA,
      half on each of its two primary lines, or wholly on one line to neutral;
    * delta or open-delta primary with a delta secondary: the primary line currents are the
      secondary's line-to-line equivalent line currents over the turns ratio, so each primary
      line takes its secondary line's VA (a 120 V load on a high-leg secondary, seen across the
      whole tapped winding, counts half on each of its two primary lines);
    * wye-delta: each primary winding is a line-to-neutral load taking its winding's share
      w_pq = 2/3·(L_p + L_q) − 1/3·L_r of the line-to-line equivalent VA L: the part of the
      power each winding carries at unity power factor (a single line-to-line load puts 2/3 on
      the winding across it and 1/6 on each of the other two).

    On a high-leg secondary the 120 V loads on the two ends of the tapped winding count across
    the whole winding. ``secondary_neutral_va`` (the line-to-neutral VA on each secondary line)
    says exactly how much is on each end; failing that, ``secondary_currents`` let it be read
    from the neutral current (exact when those loads share one power factor), and failing both
    the difference is taken as small as the figures allow (see :func:`_equivalent_va`).
    """
    out: dict[Line, float] = dict.fromkeys(transformer.primary.lines, 0.0)
    if not any(w.across for w in transformer.windings):
        for winding in transformer.windings:
            va = math.fsum(secondary_phase_va.get(k, 0.0) for k in winding.secondary_lines)
            lines = winding_primary_lines(winding, feeder_lines)
            for line in lines:
                out[line] += va / len(lines)
        return out
    equivalent = _equivalent_va(
        transformer, secondary_phase_va, secondary_currents, secondary_neutral_va
    )
    if transformer.connection != "wye-delta":
        for line, va in equivalent.items():
            out[line] += va
        return out
    total = math.fsum(equivalent.values())
    for winding in transformer.windings:
        p, q = winding.secondary_lines
        share = 2.0 / 3.0 * (equivalent[p] + equivalent[q]) - 1.0 / 3.0 * (
            total - equivalent[p] - equivalent[q]
        )
        out[winding.primary_lines[0]] += share
    return out


def loading_pct(transformer: Transformer, secondary_currents: Mapping[Line, complex]) -> float:
    """Heaviest winding's loading as a percentage of one winding's share of the rating.

    A three-phase unit or bank of S kVA is taken as three windings of S/3 kVA each (an open
    delta as two of S/2), so an unbalanced load can overload one winding while the total is
    within the rating. A winding's load is its apparent power |S|; for a delta winding, its
    voltage times the heavier current in it, which on a centre-tapped winding is the heavier
    half (the two halves differ by the neutral current). A single-phase unit's centre-tapped
    winding is treated the same way: 240 V times the heavier of its two line currents.
    """
    if any(w.across for w in transformer.windings):
        system = transformer.secondary
        heaviest_va = max(
            abs(_winding_voltage(system, w)) * max(abs(i) for i in parts)
            for w, parts in zip(
                transformer.windings, winding_currents(transformer, secondary_currents), strict=True
            )
        )
    elif transformer.connection == "single-phase":
        # each half of the centre-tapped winding is rated for the unit's full-load current, so
        # the heavier line current counts against the whole winding's voltage (common practice)
        system = transformer.secondary
        voltage = abs(system.voltage_between("A", "B"))
        heaviest_va = voltage * max(abs(secondary_currents.get(k, 0j)) for k in ("A", "B"))
    else:
        heaviest_va = max(abs(p) for p in winding_powers(transformer, secondary_currents))
    return heaviest_va / 1000.0 / transformer.winding_kva * 100.0


def loading_terms(transformer: Transformer) -> tuple[CurrentTerm, ...]:
    """The transformer's loading as terms linear in the secondary line currents: the largest
    ``scale·|Σ w_k·I_k|`` over the terms is :func:`loading_pct` for those currents.

    One term per winding, or per half of a centre-tapped winding: every winding or half
    current is a fixed linear combination of the line currents (the neutral current is minus
    their sum), found here by putting 1 A on each line in turn.
    """
    system = transformer.secondary
    rating_va = transformer.winding_kva * 1000.0
    unit = {k: winding_currents(transformer, {k: 1 + 0j}) for k in system.lines}
    terms: list[CurrentTerm] = []
    for index, winding in enumerate(transformer.windings):
        if winding.across:
            voltage = abs(_winding_voltage(system, winding))
        elif transformer.connection == "single-phase":
            voltage = abs(system.voltage_between("A", "B"))
        else:
            voltage = abs(system.voltage_phasor(winding.secondary_lines[0]))
        for part in range(len(unit[system.lines[0]][index])):
            weights = tuple((k, unit[k][index][part]) for k in system.lines)
            name = "-".join(winding.secondary_lines) + (f" part {part + 1}" if part else "")
            terms.append(CurrentTerm(name, weights, voltage / rating_va * 100.0))
    return tuple(terms)


def supply_bank(
    system: System, kva: float, open_delta: bool = False, where: str = ""
) -> Transformer:
    """The transformer that usually supplies a panel of ``system``, for balancing one panel
    against its windings: delta-wye for a wye, a delta bank (closed, or open with
    ``open_delta``) for a delta or high-leg delta, single-phase for 120/240 V. Only the
    secondary matters to the loading, so the primary is a nominal 480 V.

    Raises
    ------
    ScheduleError
        When no single such transformer supplies the system (two lines of a wye) or the rating
        is not a positive number.
    """
    if system.phase_count != 3 and abs(
        system.voltage_phasor(system.lines[0]) + system.voltage_phasor(system.lines[1])
    ) > 1e-6 * abs(system.voltage_phasor(system.lines[0])):
        raise ScheduleError(
            Problem(
                where,
                f"a {system.designation} panel takes two lines of a wye, so no one transformer "
                "winding supplies it; balance it for the spread, the worst line or the neutral",
            )
        )
    delta_secondary = system.phase_count == 3 and (not system.neutral or system.high_leg)
    if open_delta and not delta_secondary:
        raise ScheduleError(
            Problem(where, f"an open delta bank supplies a delta system, not {system.designation}")
        )
    if system.phase_count == 3:
        connection = (
            "open-delta" if open_delta else "delta-delta" if delta_secondary else "delta-wye"
        )
        primary = find_system("480 delta")
    else:
        connection, primary = "single-phase", find_system("480Y/277")
    assert primary is not None
    return make_transformer("supply", kva, primary, system, connection, where)

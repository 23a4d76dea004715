"""Feeder and conductor arithmetic: standard OCPD ratings, Table 310.16 ampacities, the 110.14(C)(1)
termination column, conductor protection (240.4(B), 240.4(D)), the 220.61 neutral and an
informational voltage drop.

Pure functions of numbers; :mod:`balancer.code.demand` decides which loads go in. Tables are
those of NFPA 70 (NEC); each constant names its table and how its values were obtained.
"""

from __future__ import annotations

import math
import re

# A circuit carries its conductor (read and checked with the schedule), so the type lives in the
# domain; re-exported here, beside the tables it is looked up in.
from balancer.domain.panel import Conductor as Conductor
from balancer.domain.panel import Material as Material

# 240.6(A) standard ampere ratings of fuses and inverse-time circuit breakers (values read from a
# published copy; fuse-only ratings 1, 3, 6, 10 and 601 A are left out, and 10 A, added for
# breakers in 2023, is below the smallest branch circuit balancer suggests).
STANDARD_RATINGS_A: tuple[int, ...] = (
    15, 20, 25, 30, 35, 40, 45, 50, 60, 70, 80, 90, 100, 110, 125, 150, 175, 200, 225, 250, 300,
    350, 400, 450, 500, 600, 700, 800, 1000, 1200, 1600, 2000, 2500, 3000, 4000, 5000, 6000,
)  # fmt: skip

# Conductor sizes in ascending order, as the trade writes them.
SIZES: tuple[str, ...] = (
    "14", "12", "10", "8", "6", "4", "3", "2", "1", "1/0", "2/0", "3/0", "4/0",
    "250", "300", "350", "400", "500",
)  # fmt: skip

# Table 310.16, 30 °C ambient, not more than three current-carrying conductors in a raceway,
# cable or earth: (60 °C, 75 °C, 90 °C) ampacity. Values of the 2023 edition read from two
# published copies that agree; older editions differ at a few sizes.
AMPACITY_A: dict[Material, dict[str, tuple[int, int, int]]] = {
    "cu": {
        "14": (15, 20, 25), "12": (20, 25, 30), "10": (30, 35, 40), "8": (40, 50, 55),
        "6": (55, 65, 75), "4": (70, 85, 95), "3": (85, 100, 115), "2": (95, 115, 130),
        "1": (110, 130, 145), "1/0": (125, 150, 170), "2/0": (145, 175, 195),
        "3/0": (165, 200, 225), "4/0": (195, 230, 260), "250": (215, 255, 290),
        "300": (240, 285, 320), "350": (260, 310, 350), "400": (280, 335, 380),
        "500": (320, 380, 430),
    },
    "al": {
        "12": (15, 20, 25), "10": (25, 30, 35), "8": (35, 40, 45), "6": (40, 50, 55),
        "4": (55, 65, 75), "3": (65, 75, 85), "2": (75, 90, 100), "1": (85, 100, 115),
        "1/0": (100, 120, 135), "2/0": (115, 135, 150), "3/0": (130, 155, 175),
        "4/0": (150, 180, 205), "250": (170, 205, 230), "300": (195, 230, 260),
        "350": (210, 250, 280), "400": (225, 270, 305), "500": (260, 310, 350),
    },
}  # fmt: skip
_COLUMN = {60: 0, 75: 1, 90: 2}

# 110.14(C)(1)(a): terminations of circuits rated 100 A or less, or marked for 14 AWG through
# 1 AWG conductors, use the 60 °C column. A schedule does not say how a terminal is marked, so a
# conductor in that size range is taken to land on such a terminal (the safe reading).
SIZES_60C_TERMINALS = frozenset(SIZES[: SIZES.index("1") + 1])
TERMINATION_LIMIT_A = 100.0  # 110.14(C)(1)(a) / (b)
NEXT_SIZE_UP_LIMIT_A = 800  # 240.4(B)(3)

# 240.4(D): largest overcurrent device on small conductors (read from a published copy).
SMALL_CONDUCTOR_LIMIT_A: dict[tuple[Material, str], int] = {
    ("cu", "14"): 15,
    ("cu", "12"): 20,
    ("cu", "10"): 30,
    ("al", "12"): 15,
    ("al", "10"): 25,
}

# NEC Chapter 9 Table 8, DC resistance at 75 °C, ohms per 1000 ft: stranded uncoated copper and
# stranded aluminum (from memory; tests compare them with resistivity and the AWG/kcmil areas).
RESISTANCE_OHM_PER_KFT: dict[Material, dict[str, float]] = {
    "cu": {
        "14": 3.14, "12": 1.98, "10": 1.24, "8": 0.778, "6": 0.491, "4": 0.308, "3": 0.245,
        "2": 0.194, "1": 0.154, "1/0": 0.122, "2/0": 0.0967, "3/0": 0.0766, "4/0": 0.0608,
        "250": 0.0515, "300": 0.0429, "350": 0.0367, "400": 0.0321, "500": 0.0258,
    },
    "al": {
        "12": 3.25, "10": 2.04, "8": 1.28, "6": 0.808, "4": 0.508, "3": 0.403, "2": 0.319,
        "1": 0.253, "1/0": 0.201, "2/0": 0.159, "3/0": 0.126, "4/0": 0.100, "250": 0.0847,
        "300": 0.0707, "350": 0.0605, "400": 0.0529, "500": 0.0424,
    },
}  # fmt: skip

# Table 310.15(B)(1) ambient correction for the 75 °C column (the 2023 edition numbers it
# 310.15(B)(1)(1)): (upper ambient °C, factor), from memory.
AMBIENT_CORRECTION_75C: tuple[tuple[float, float], ...] = (
    (10, 1.20), (15, 1.15), (20, 1.11), (25, 1.05), (30, 1.00), (35, 0.94), (40, 0.88),
    (45, 0.82), (50, 0.75), (55, 0.67), (60, 0.58), (65, 0.47), (70, 0.33),
)  # fmt: skip

# Table 310.15(C)(1) adjustment for more than three current-carrying conductors:
# (upper count, factor), from memory.
BUNDLING_ADJUSTMENT: tuple[tuple[int, float], ...] = (
    (3, 1.0), (6, 0.8), (9, 0.7), (20, 0.5), (30, 0.45), (40, 0.4), (10**9, 0.35),
)  # fmt: skip

NEUTRAL_THRESHOLD_A = 200.0  # 220.61(B)
NEUTRAL_EXCESS_FACTOR = 0.70  # 220.61(B)
BRANCH_DROP_GUIDE_PCT = 3.0  # 210.19(A) Informational Note
TOTAL_DROP_GUIDE_PCT = 5.0  # 215.2(A) Informational Note


def next_standard_rating(current_a: float) -> int | None:
    """The smallest 240.6(A) standard rating not below ``current_a``; None above 6000 A."""
    for rating in STANDARD_RATINGS_A:
        if rating >= current_a - 1e-9:
            return rating
    return None


def ambient_factor(ambient_c: float) -> float:
    """Table 310.15(B)(1) correction for the 75 °C column at an ambient of ``ambient_c``."""
    for upper_c, factor in AMBIENT_CORRECTION_75C:
        if ambient_c <= upper_c:
            return factor
    raise ValueError(f"ambient {ambient_c} °C is above 70 °C: a 75 °C conductor cannot be used")


def bundling_factor(current_carrying: int) -> float:
    """Table 310.15(C)(1) adjustment for ``current_carrying`` conductors in one raceway or cable."""
    if current_carrying < 1:
        raise ValueError("the number of current-carrying conductors must be at least 1")
    for upper, factor in BUNDLING_ADJUSTMENT:
        if current_carrying <= upper:
            return factor
    raise AssertionError("unreachable: the last row has no upper limit")


def ampacity_a(material: Material, size: str, temperature_c: int = 75) -> int | None:
    """Table 310.16 ampacity; None when the table has no such size (14 AWG aluminum)."""
    row = AMPACITY_A[material].get(size)
    return None if row is None else row[_COLUMN[temperature_c]]


def termination_column_c(rating_a: float, size: str, terminations_75c: bool = False) -> int:
    """The Table 310.16 column (°C) a conductor's ampacity is read from, by 110.14(C)(1).

    (a): a circuit rated ``rating_a`` ≤ 100 A, or a conductor of 14–1 AWG (terminals marked for
    those sizes), uses 60 °C, unless the equipment is listed and identified for 75 °C
    (``terminations_75c``). (b): above 100 A and larger than 1 AWG, 75 °C.
    """
    if terminations_75c:
        return 75
    if rating_a <= TERMINATION_LIMIT_A + 1e-9 or size in SIZES_60C_TERMINALS:
        return 60
    return 75


def allowable_a(
    material: Material,
    size: str,
    rating_a: float,
    factor: float = 1.0,
    terminations_75c: bool = False,
) -> tuple[float, int] | None:
    """A 75 °C conductor's allowable current and the termination column that limits it.

    The 75 °C ampacity times the ambient and bundling ``factor``, but never above the ampacity
    of the 110.14(C)(1) termination column (:func:`termination_column_c`), which the factors
    do not touch. None when Table 310.16 has no such size.
    """
    column = termination_column_c(rating_a, size, terminations_75c)
    insulation = ampacity_a(material, size, 75)
    terminal = ampacity_a(material, size, column)
    if insulation is None or terminal is None:
        return None
    return min(insulation * factor, float(terminal)), column


def protected_by(conductor_a: float, ocpd_a: float, multioutlet_receptacles: bool = False) -> bool:
    """Whether a device of ``ocpd_a`` protects a conductor of ampacity ``conductor_a`` (240.4).

    At or above the device rating it always does. Below it, 240.4(B) allows the next standard
    rating above an ampacity that is not itself a standard rating, up to 800 A, except on a
    branch circuit supplying more than one receptacle for cord-and-plug-connected portable loads.
    """
    if conductor_a + 1e-9 >= ocpd_a:
        return True
    if multioutlet_receptacles or ocpd_a > NEXT_SIZE_UP_LIMIT_A:
        return False
    next_up = next_standard_rating(conductor_a)
    return next_up is not None and next_up >= ocpd_a - 1e-9


def select_conductor(
    required_a: float,
    material: Material,
    ocpd_a: float | None = None,
    factor: float = 1.0,
    temperature_c: int | None = 75,
    terminations_75c: bool = False,
) -> str | None:
    """The smallest size whose adjusted ampacity carries ``required_a``.

    ``temperature_c`` is the Table 310.16 column the factor applies to; None: a 75 °C conductor
    limited by each size's 110.14(C)(1) termination column at the device rating (``ocpd_a``,
    else ``required_a``), see :func:`allowable_a`. With ``ocpd_a`` the size must also be
    protected by that device (:func:`protected_by`). None when no size up to 500 kcmil will do
    (parallel sets are not chosen).
    """
    rating_a = ocpd_a if ocpd_a is not None else required_a
    for size in SIZES:
        if temperature_c is None:
            found = allowable_a(material, size, rating_a, factor, terminations_75c)
            if found is None:
                continue
            adjusted = found[0]
        else:
            base = ampacity_a(material, size, temperature_c)
            if base is None:
                continue
            adjusted = base * factor
        if adjusted + 1e-9 < required_a:
            continue
        if ocpd_a is not None and not protected_by(adjusted, ocpd_a):
            continue
        return size
    return None


def neutral_220_61(linear_a: float, nonreducible_a: float) -> float:
    """Feeder neutral load after the 220.61(B) reduction.

    ``linear_a`` may be reduced; ``nonreducible_a`` (the non-linear part on a 4-wire wye and
    two-phase-and-neutral circuits from one, 220.61(C)) may not. The first 200 A count in full;
    of the rest only the reducible part is taken at 70%. The non-reducible part is placed in the
    excess first, which never gives less than any other order.
    """
    total_a = linear_a + nonreducible_a
    excess_a = max(0.0, total_a - NEUTRAL_THRESHOLD_A)
    reducible_excess_a = max(0.0, excess_a - nonreducible_a)
    return total_a - (1.0 - NEUTRAL_EXCESS_FACTOR) * reducible_excess_a


_SIZE_RE = re.compile(r"(?<![\d/])(\d{1,2}/0|\d{1,4})\s*(awg|kcmil|mcm)?", re.IGNORECASE)


def parse_conductor(text: str) -> Conductor | None:
    """Read ``#12``, ``12 AWG``, ``10 AL``, ``3/0 Cu``, ``250 kcmil``, ``2#12 + #12G``.

    Copper unless the text says aluminum (``AL``, ``alum``). None when no known size is found.
    """
    cleaned = text.strip().lower()
    if not cleaned:
        return None
    hash_at = cleaned.find("#")
    body = cleaned[hash_at + 1 :] if hash_at >= 0 else cleaned
    match = _SIZE_RE.search(body)
    if match is None or match.group(1) not in SIZES:
        return None
    material: Material = "al" if re.search(r"\bal\b|alum|aluminium|aluminum", cleaned) else "cu"
    return Conductor(match.group(1), material, text.strip())


def voltage_drop_pct(
    current_a: float,
    length_ft: float,
    conductor: Conductor,
    line_to_line_v: float,
    three_phase: bool,
) -> float:
    """Voltage drop in percent of the line-to-line voltage, from Chapter 9 Table 8 resistance.

    Three-phase: √3·I·R·L; single-phase 3-wire (line to line): 2·I·R·L, with R per foot and L the
    one-way length. Resistive only (reactance left out), so it reads low on large conductors at
    low power factor; informational.
    """
    resistance = RESISTANCE_OHM_PER_KFT[conductor.material][conductor.size] / 1000.0
    multiplier = math.sqrt(3.0) if three_phase else 2.0
    return multiplier * current_a * resistance * length_ft / line_to_line_v * 100.0

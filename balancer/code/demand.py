"""Code demand loads of a panel, the feeder check and the branch-circuit check.

The rules are data: one TOML file per rule set under ``balancer/rules/`` (or a user's own file in
the same format), each class citing its clause. :func:`compute_demand` classifies every circuit,
applies its class's rule, spreads the result over the lines and checks the feeder and each
branch circuit. The result is an aid to estimating, never a substitute for the adopted code.
"""

from __future__ import annotations

import math
import re
import textwrap
from collections import defaultdict
from dataclasses import dataclass, field, replace
from functools import cache
from importlib import resources
from pathlib import Path
from typing import Any, Literal

from balancer.code.feeder import (
    BRANCH_DROP_GUIDE_PCT,
    NEUTRAL_THRESHOLD_A,
    SIZES,
    SMALL_CONDUCTOR_LIMIT_A,
    STANDARD_RATINGS_A,
    TOTAL_DROP_GUIDE_PCT,
    Conductor,
    allowable_a,
    ambient_factor,
    ampacity_a,
    bundling_factor,
    neutral_220_61,
    next_standard_rating,
    parse_conductor,
    protected_by,
    select_conductor,
    termination_column_c,
    voltage_drop_pct,
)
from balancer.domain.datafiles import parse_toml
from balancer.domain.panel import Circuit, Panel
from balancer.domain.systems import Line, System, get_system
from balancer.errors import Problem, ScheduleError
from balancer.physics.analysis import share_by_line
from balancer.physics.harmonics import profile_for
from balancer.physics.phasors import circuit_harmonic_currents

Method = Literal["factor", "tiers", "units"]
BUILTIN_RULE_SETS = ("nec2023", "nec2020", "connected")
VA_PER_YOKE = 180.0  # 220.14(I): a single or multiple receptacle on one yoke

_SPELLINGS = {
    "general_lighting": "ltg lighting light lights lt lts generallighting genltg",
    "general_receptacles": "rcpt rcpts recp rec recept receptacle receptacles receps recs "
    "generalreceptacles genrcpt convenience gfi gfci",
    "motors": "mtr motor motors m pump fan mot",
    "space_heating": "htg heat heating heater spaceheating baseboard eh elecheat electricheat "
    "unitheater",
    "air_conditioning": "ac a/c airconditioning aircond cooling clg condenser",
    "kitchen": "kitchen kit kitch kitchenequipment kiteq kitcheneq cooking",
    "water_heating": "wh waterheater waterheating whtr dhw hwh ewh",
    "ev": "ev evse evcharger evcharging evcs charger",
    "spare": "spare space spc spares spaces",
    # counted at 100 %: equipment with no diversity rule of its own in Article 220 here
    # (welders' 630.11 factors are not applied; a transformer feed is its connected load)
    "other": "other misc miscellaneous equipment equip computer computers it data electronics "
    "welder welders transformer xfmr",
}
# Type/Class spellings (after _normalise) → load class; common practice abbreviations.
CLASS_SPELLINGS: dict[str, str] = {
    word: name for name, words in _SPELLINGS.items() for word in words.split()
}
_OCCUPANCY_WORDS = {
    "dwelling": "dwelling dwellings residential house apartment",
    "hotel": "hotel motel hotels motels hotelmotel",
    "warehouse": "warehouse warehouses storage",
    "other": "other office retail store school commercial",
}
OCCUPANCY_SPELLINGS: dict[str, str] = {
    word: name for name, words in _OCCUPANCY_WORDS.items() for word in words.split()
}
OCCUPANCIES = tuple(_OCCUPANCY_WORDS)


def _normalise(text: str) -> str:
    return re.sub(r"[^0-9a-z/]", "", text.lower())


# ---------------------------------------------------------------------------------------------
# Rule sets


@dataclass(frozen=True, slots=True)
class Tier:
    """``factor`` applies to the load up to ``upto_va`` (cumulative); None: the remainder."""

    upto_va: float | None
    factor: float


@dataclass(frozen=True, slots=True)
class ClassRule:
    """How one load class is counted, and the clause that says so."""

    name: str
    label: str
    method: Method
    clause: str
    factor: float = 1.0
    min_each_va: float = 0.0
    tiers: dict[str, tuple[Tier, ...]] = field(default_factory=dict)
    pool: dict[str, str] = field(default_factory=dict)
    pool_clause: str = ""
    unit_factors: tuple[float, ...] = ()
    floor_two_largest: bool = False
    continuous: bool = False
    continuous_by_occupancy: dict[str, bool] = field(default_factory=dict)
    continuous_clause: str = ""
    largest_motor: bool = False

    def tiers_for(self, occupancy: str) -> tuple[Tier, ...]:
        return self.tiers.get(occupancy) or self.tiers.get("default") or (Tier(None, 1.0),)

    def continuous_for(self, occupancy: str) -> bool:
        return self.continuous_by_occupancy.get(occupancy, self.continuous)


@dataclass(frozen=True, slots=True)
class RuleSet:
    """A set of demand rules; ``source`` (where it was read) does not take part in equality."""

    name: str
    title: str
    edition: str
    continuous_factor: float
    continuous_clause: str
    feeder_sizing: bool
    largest_motor_extra: float
    largest_motor_clause: str
    noncoincident: tuple[tuple[tuple[str, ...], str], ...]
    classes: dict[str, ClassRule]
    source: str = field(default="", compare=False)


class _Reader:
    """Typed access to a rule file's tables; every complaint names the file and the key."""

    def __init__(self, where: str) -> None:
        self.where = where

    def fail(self, key: str, what: str) -> ScheduleError:
        return ScheduleError(Problem(f"{self.where}, key {key}", what))

    def get(
        self, table: dict[str, Any], key: str, path: str, kind: type, default: Any = ...
    ) -> Any:
        if key not in table:
            if default is ...:
                raise self.fail(f"{path}{key}", "is missing")
            return default
        value = table[key]
        if kind is float and isinstance(value, int) and not isinstance(value, bool):
            value = float(value)
        if not isinstance(value, kind) or (kind is not bool and isinstance(value, bool)):
            raise self.fail(f"{path}{key}", f"must be a {kind.__name__}, got {value!r}")
        return value

    def fraction(self, table: dict[str, Any], key: str, path: str, default: Any = ...) -> float:
        value = self.get(table, key, path, float, default)
        if not 0.0 <= value <= 10.0:
            raise self.fail(f"{path}{key}", f"must be between 0 and 10, got {value}")
        return float(value)

    def tiers(self, items: Any, key: str) -> tuple[Tier, ...]:
        if not isinstance(items, list) or not items:
            raise self.fail(key, "must be a non-empty list of {upto_va, factor} tables")
        out: list[Tier] = []
        previous = 0.0
        for i, item in enumerate(items):
            where = f"{key}[{i}]."
            if not isinstance(item, dict):
                raise self.fail(
                    f"{key}[{i}]", "must be a table such as {upto_va = 3000, factor = 1.0}"
                )
            last = i == len(items) - 1
            upto = self.get(item, "upto_va", where, float, None)
            if last and upto is not None:
                raise self.fail(
                    f"{where}upto_va", "the last tier covers the remainder: leave it out"
                )
            if not last and (upto is None or upto <= previous):
                raise self.fail(f"{where}upto_va", "must be given and rise from tier to tier")
            out.append(Tier(upto, self.fraction(item, "factor", where)))
            previous = upto or previous
        return tuple(out)

    def class_rule(self, name: str, table: Any) -> ClassRule:
        path = f"classes.{name}."
        if not isinstance(table, dict):
            raise self.fail(f"classes.{name}", "must be a table")
        method = self.get(table, "method", path, str)
        if method not in ("factor", "tiers", "units"):
            raise self.fail(
                f"{path}method", f'must be "factor", "tiers" or "units", got {method!r}'
            )
        tiers = {
            occupancy: self.tiers(items, f"{path}tiers.{occupancy}")
            for occupancy, items in self.get(table, "tiers", path, dict, {}).items()
        }
        if method == "tiers" and not tiers:
            raise self.fail(f"{path}tiers", 'is required for method "tiers"')
        unit_factors = self.get(table, "unit_factors", path, list, [])
        if method == "units" and not unit_factors:
            raise self.fail(f"{path}unit_factors", 'is required for method "units"')
        units = tuple(
            self.fraction({"f": f}, "f", f"{path}unit_factors[{i}].")
            for i, f in enumerate(unit_factors)
        )
        by_occupancy = self.get(table, "continuous_by_occupancy", path, dict, {})
        for occupancy, flag in by_occupancy.items():
            if not isinstance(flag, bool):
                raise self.fail(
                    f"{path}continuous_by_occupancy.{occupancy}", "must be true or false"
                )
        pool = self.get(table, "pool", path, dict, {})
        for occupancy, target in pool.items():
            if not isinstance(target, str):
                raise self.fail(f"{path}pool.{occupancy}", "must name a class")
        return ClassRule(
            name=name,
            label=self.get(table, "label", path, str, name.replace("_", " ").capitalize()),
            method=method,
            clause=self.get(table, "clause", path, str),
            factor=self.fraction(table, "factor", path, 1.0),
            min_each_va=self.get(table, "min_each_va", path, float, 0.0),
            tiers=tiers,
            pool=dict(pool),
            pool_clause=self.get(table, "pool_clause", path, str, ""),
            unit_factors=units,
            floor_two_largest=self.get(table, "floor_two_largest", path, bool, False),
            continuous=self.get(table, "continuous", path, bool, False),
            continuous_by_occupancy=dict(by_occupancy),
            continuous_clause=self.get(table, "continuous_clause", path, str, ""),
            largest_motor=self.get(table, "largest_motor", path, bool, False),
        )


def parse_rule_set(text: str, where: str) -> RuleSet:
    """A rule set from TOML text; ``where`` names the file in every error message."""
    data = parse_toml(text, where)
    read = _Reader(where)
    base: RuleSet | None = None
    if "base" in data:
        base_name = read.get(data, "base", "", str)
        if base_name not in BUILTIN_RULE_SETS:
            raise read.fail(
                "base", f"must be one of {', '.join(BUILTIN_RULE_SETS)}, got {base_name!r}"
            )
        base = builtin_rule_set(base_name)

    def top(key: str, kind: type, fallback: Any) -> Any:
        return read.get(data, key, "", kind, getattr(base, fallback) if base else ...)

    classes = dict(base.classes) if base else {}
    for name, table in read.get(data, "classes", "", dict, {} if base else ...).items():
        classes[name] = read.class_rule(name, table)
    if "other" not in classes:
        raise read.fail("classes.other", "is required: it counts loads of no known class")
    motor = read.get(data, "largest_motor", "", dict, {})
    noncoincident = tuple(base.noncoincident) if base else ()
    if "noncoincident" in data:
        items = read.get(data, "noncoincident", "", list)
        groups = []
        for i, item in enumerate(items):
            where_i = f"noncoincident[{i}]."
            if not isinstance(item, dict):
                raise read.fail(f"noncoincident[{i}]", "must be a table with classes and clause")
            names = read.get(item, "classes", where_i, list)
            unknown = [n for n in names if n not in classes]
            if len(names) < 2 or unknown:
                raise read.fail(
                    f"{where_i}classes", f"must name two or more known classes (unknown: {unknown})"
                )
            groups.append((tuple(names), read.get(item, "clause", where_i, str)))
        noncoincident = tuple(groups)
    for rule in classes.values():
        for occupancy, target in rule.pool.items():
            if target not in classes or classes[target].method != "tiers":
                raise read.fail(
                    f"classes.{rule.name}.pool.{occupancy}", f"{target!r} is not a tiers class"
                )
    return RuleSet(
        name=top("name", str, "name"),
        title=top("title", str, "title"),
        edition=top("edition", str, "edition"),
        continuous_factor=read.fraction(
            data, "continuous_factor", "", base.continuous_factor if base else ...
        ),
        continuous_clause=top("continuous_clause", str, "continuous_clause"),
        feeder_sizing=top("feeder_sizing", bool, "feeder_sizing"),
        largest_motor_extra=read.fraction(
            motor, "extra", "largest_motor.", base.largest_motor_extra if base else 0.0
        ),
        largest_motor_clause=read.get(
            motor, "clause", "largest_motor.", str, base.largest_motor_clause if base else ""
        ),
        noncoincident=noncoincident,
        classes=classes,
        source=where,
    )


def load_rule_set(path: Path) -> RuleSet:
    """A rule set from a TOML file (the format of ``balancer/rules/nec2023.toml``)."""
    try:
        text = path.read_text("utf-8")
    except OSError as exc:
        raise ScheduleError(
            Problem(str(path), f"cannot read the rule file ({exc.strerror})")
        ) from exc
    return parse_rule_set(text, str(path))


@cache
def builtin_rule_set(name: str) -> RuleSet:
    """One of :data:`BUILTIN_RULE_SETS`, read from the package's ``rules`` folder."""
    if name not in BUILTIN_RULE_SETS:
        raise KeyError(name)
    text = resources.files("balancer").joinpath(f"rules/{name}.toml").read_text("utf-8")
    return parse_rule_set(text, f"rules/{name}.toml")


def default_rule_set_name(system: System) -> str:
    """NEC 2023 for 60 Hz (North American) systems, connected load otherwise."""
    return "nec2023" if math.isclose(system.frequency_hz, 60.0) else "connected"


def resolve_rule_set(rules: str | Path | RuleSet | None, system: System) -> RuleSet:
    """A rule set from a built-in name, a file path, an object, or None (the system's default)."""
    if isinstance(rules, RuleSet):
        return rules
    if rules is None:
        return builtin_rule_set(default_rule_set_name(system))
    key = str(rules).strip().lower().replace(" ", "").replace("-", "")
    if key in BUILTIN_RULE_SETS:
        return builtin_rule_set(key)
    path = Path(rules)
    if not path.exists():
        raise ScheduleError(
            Problem(
                "--rules",
                f"{rules!r} is neither a rule set ({', '.join(BUILTIN_RULE_SETS)}) nor a file",
            )
        )
    return load_rule_set(path)


def check_choices(
    rules: str | Path | None, occupancy: str, nonlinear_classes: tuple[str, ...] = ()
) -> None:
    """Raise the error a bad rule set, occupancy or class name would give, before any long
    computation."""
    normalise_occupancy(occupancy)
    rule_set = builtin_rule_set("nec2023")
    if rules is not None and isinstance(rules, str | Path):
        rule_set = resolve_rule_set(rules, get_system("208Y/120"))
    _nonlinear_classes(rule_set, nonlinear_classes)


def normalise_occupancy(text: str) -> str:
    found = OCCUPANCY_SPELLINGS.get(_normalise(text))
    if found is None:
        raise ScheduleError(
            Problem("--occupancy", f"{text!r} is not known; use one of {', '.join(OCCUPANCIES)}")
        )
    return found


def classify(load_class: str) -> str | None:
    """The load class for a schedule's Type/Class text; None when the spelling is unknown."""
    key = _normalise(load_class)
    if key in CLASS_SPELLINGS:
        return CLASS_SPELLINGS[key]
    first = _normalise(load_class.split()[0]) if load_class.split() else ""
    return CLASS_SPELLINGS.get(first)


def apply_tiers(load_va: float, tiers: tuple[Tier, ...]) -> float:
    """Load after cumulative tiers (first 3,000 VA at 100%, next … at 35%, remainder …)."""
    total = 0.0
    lower = 0.0
    for tier in tiers:
        upper = load_va if tier.upto_va is None else min(load_va, tier.upto_va)
        if upper > lower:
            total += (upper - lower) * tier.factor
        lower = max(lower, upper)
        if tier.upto_va is None or load_va <= tier.upto_va:
            break
    return total


def units_demand(loads_va: list[float], rule: ClassRule) -> float:
    """Table 220.56-style demand: a factor by number of units, never below the two largest."""
    count = sum(1 for v in loads_va if v > 0)
    if count == 0:
        return 0.0
    factor = rule.unit_factors[min(count, len(rule.unit_factors)) - 1]
    demand = factor * math.fsum(loads_va)
    if rule.floor_two_largest:
        demand = max(demand, math.fsum(sorted(loads_va, reverse=True)[:2]))
    return demand


# ---------------------------------------------------------------------------------------------
# Results


@dataclass(frozen=True, slots=True)
class DemandOptions:
    """Choices for the demand and feeder check; passed explicitly, never global.

    ``rules``: a built-in rule set name, a rule file, or None for the system's default.
    ``feeder_length_ft``: one-way feeder length for the voltage drop; ``feeder_conductor``:
    its size (``"3/0 Al"``), else the smallest copper size found. ``ambient_c`` and
    ``current_carrying`` apply Tables 310.15(B)(1) and 310.15(C)(1) to the feeder conductor.
    ``nonlinear_classes``: classes (names or Type spellings) whose neutral load is non-linear
    (220.61(C)(2)); circuits whose harmonic profile has harmonics count without being named.
    ``terminations_75c``: the equipment terminations are listed and identified for 75 °C, so
    conductors of circuits of 100 A or less are taken from the 75 °C column (110.14(C)(1)(a)).
    """

    rules: str | Path | RuleSet | None = None
    occupancy: str = "other"
    feeder_length_ft: float | None = None
    feeder_conductor: str | None = None
    ambient_c: float | None = None
    current_carrying: int | None = None
    nonlinear_classes: tuple[str, ...] = ()
    terminations_75c: bool = False


@dataclass(frozen=True, slots=True)
class CircuitDemand:
    """One circuit's part of the demand load."""

    circuit_id: str
    load_class: str
    connected_va: float
    demand_va: float
    continuous: bool
    motor_adder_va: float = 0.0


@dataclass(frozen=True, slots=True)
class ClassDemand:
    """One class's connected and demand load and the rule applied."""

    name: str
    label: str
    circuits: int
    connected_va: float
    demand_va: float
    rule: str


@dataclass(frozen=True, slots=True)
class FeederCheck:
    """The feeder figures. Currents are the heaviest line's, in amperes.

    ``design_a``: demand load current. ``required_a``: the sizing current, noncontinuous +
    125% continuous + 25% of the largest motor. Sizes are None when the rule set does not size
    feeders or no size up to 500 kcmil will do.
    """

    design_line: Line
    design_a: float
    required_a: float
    line_design_a: dict[Line, float]
    min_ocpd_a: int | None
    conductor_cu: str | None
    conductor_al: str | None
    conductor_factor: float
    neutral_a: float | None
    neutral_unreduced_a: float | None
    rating_a: float | None
    rating_name: str
    spare_a: float | None
    spare_pct: float | None
    voltage_drop_pct: float | None = None
    voltage_drop_conductor: str | None = None
    notes: tuple[str, ...] = ()
    conductor_cu_c: int | None = None  # the Table 310.16 column of each size (110.14(C)(1))
    conductor_al_c: int | None = None


@dataclass(frozen=True, slots=True)
class BranchFlag:
    """Something about one branch circuit to look at, with the clause behind it."""

    circuit_id: str
    # "overloaded", "no_trip", "small_conductor", "conductor_ampacity",
    # "unprotected_conductor"
    kind: str
    message: str
    clause: str
    trip_a: float | None = None
    required_a: float | None = None
    suggested_trip_a: int | None = None


@dataclass(frozen=True, slots=True)
class DemandResult:
    """Demand loads of a panel by class and line, the feeder check and branch flags."""

    rule_set: RuleSet
    occupancy: str
    by_class: tuple[ClassDemand, ...]
    circuits: tuple[CircuitDemand, ...]
    total_connected_va: float
    total_demand_va: float
    phase_demand_va: dict[Line, float]
    feeder: FeederCheck
    branch_flags: tuple[BranchFlag, ...]
    warnings: tuple[str, ...]
    cautions: tuple[str, ...]


# ---------------------------------------------------------------------------------------------
# Computation


def _line_voltage(system: System, line: Line) -> float:
    return system.line_to_neutral_v[system.lines.index(line)]


def _per_line_voltage(system: System, poles: int, line: Line) -> float:
    """Voltage V for which a circuit's per-line VA share ÷ V is its current on that line.

    1-pole: the line-to-neutral voltage. 2-pole: half the line-to-line voltage (share VA/2 ÷
    V_LL/2 = VA/V_LL). 3-pole: V_LL/√3 (share VA/3 ÷ V_LL/√3 = VA/(√3·V_LL)).
    """
    if poles == 1 and system.neutral:
        return _line_voltage(system, line)
    if poles == 2 or system.phase_count == 1:
        return system.line_to_line_v / 2.0
    return system.line_to_line_v / math.sqrt(3.0)


def _heavier_line_a(panel: Panel, circuit: Circuit, load_va: float) -> float:
    """The heavier line current of a 2-pole load with a line-to-neutral share at ``load_va``.

    The same phasor figure :func:`balancer.physics.analysis.analyze` reports: the share on the first
    line to neutral, the rest between the lines (the share scales with the load).
    """
    system = panel.system
    lines = panel.lines_of(circuit)
    if not lines:  # not placed: any two lines of which the first serves line-to-neutral loads
        first = next(ln for ln in system.lines if system.serves_line_to_neutral(ln))
        lines = (first, next(ln for ln in system.lines if ln != first))
    scale = load_va / circuit.basis_va if circuit.basis_va else 1.0
    neutral_va = (circuit.neutral_va or 0.0) * scale
    try:
        currents = circuit_harmonic_currents(
            system, lines, load_va, circuit.power_factor, None, circuit.voltage_v, neutral_va
        )[1]
    except ValueError as exc:
        raise ScheduleError(Problem(f"circuit {circuit.id}", str(exc))) from exc
    return max(abs(current) for current in currents.lines.values())


def _has_neutral_share(panel: Panel, circuit: Circuit) -> bool:
    return circuit.poles == 2 and bool(circuit.neutral_va) and panel.system.neutral


def _circuit_current_a(panel: Panel, circuit: Circuit, load_va: float) -> float:
    """Whole-circuit current at the schedule's voltage, else the one its poles imply; for a
    2-pole load with a line-to-neutral share, its heavier line's current."""
    system = panel.system
    if _has_neutral_share(panel, circuit):
        return _heavier_line_a(panel, circuit, load_va)
    if circuit.voltage_v:
        factor = math.sqrt(3.0) if circuit.poles == 3 else 1.0
        return load_va / (factor * circuit.voltage_v)
    if circuit.poles == 1 and system.neutral:
        placed = list(panel.lines_of(circuit))
        line = (placed or [ln for ln in system.lines if system.serves_line_to_neutral(ln)])[0]
        return load_va / _line_voltage(system, line)
    if circuit.poles == 3:
        return load_va / (math.sqrt(3.0) * system.line_to_line_v)
    return load_va / system.line_to_line_v


def _connected_va(circuit: Circuit, load_class: str, notes: list[str]) -> float:
    if load_class == "general_receptacles" and circuit.yokes is not None:
        va = VA_PER_YOKE * circuit.yokes
        if not math.isclose(va, circuit.basis_va, abs_tol=0.5) and circuit.basis_va:
            notes.append(
                f"circuit {circuit.id}: {circuit.yokes:g} receptacles × 180 VA = {va:,.0f} VA used "
                f"instead of the {circuit.basis_va:,.0f} VA given (220.14(I))"
            )
        return va
    return circuit.basis_va  # the load basis of the run (docs/field.md)


def _classify_all(
    panel: Panel, rules: RuleSet, occupancy: str
) -> tuple[list[tuple[Circuit, str, float, bool]], list[str]]:
    warnings: list[str] = []
    unknown: dict[str, list[str]] = defaultdict(list)
    untyped: list[str] = []
    rows = []
    for circuit in panel.circuits:
        name = "spare" if circuit.is_spare else classify(circuit.load_class)
        if name is None:
            (unknown[circuit.load_class] if circuit.load_class else untyped).append(circuit.id)
            name = "other"
        if name not in rules.classes:
            warnings.append(
                f"rule set {rules.name} has no class {name!r}: "
                f"circuit {circuit.id} counted as other"
            )
            name = "other"
        rule = rules.classes[name]
        connected = 0.0 if name == "spare" else _connected_va(circuit, name, warnings)
        continuous = (
            rule.continuous_for(occupancy) if circuit.continuous is None else circuit.continuous
        )
        rows.append((circuit, name, connected, continuous))
    for text, ids in unknown.items():
        warnings.append(
            f"type {text!r} is not a known load class (circuits {', '.join(ids)}): counted at 100%"
        )
    if untyped:
        warnings.append(
            f"{len(untyped)} circuit(s) give no type ({', '.join(untyped[:8])}"
            f"{' …' if len(untyped) > 8 else ''}): counted at 100% as other loads"
        )
    return rows, warnings


def compute_demand(panel: Panel, options: DemandOptions | None = None) -> DemandResult:
    """Demand loads, feeder check and branch-circuit flags for ``panel`` as its circuits are placed.

    How the class factors reach the lines: each circuit's demand is its connected load times its
    class's effective factor (class demand ÷ class connected load), plus the motor adder on the
    largest motor; its per-line share follows the schedule convention of
    :func:`balancer.physics.analysis.share_by_line`. Unplaced circuits are spread evenly over
    the lines.
    """
    options = options or DemandOptions()
    rules = resolve_rule_set(options.rules, panel.system)
    occupancy = normalise_occupancy(options.occupancy)
    rows, warnings = _classify_all(panel, rules, occupancy)
    pool_of = {
        name: rule.pool.get(occupancy, name) if rule.method == "tiers" else name
        for name, rule in rules.classes.items()
    }
    factor_by_class = _class_factors(rules, rows, pool_of, occupancy)
    demands = [_circuit_demand(rules, factor_by_class, name, va) for _, name, va, _ in rows]
    demands, omitted = _noncoincident(rules, rows, demands)
    adders, largest_motor_id = _motor_adders(panel, rules, rows, demands)
    circuits = tuple(
        CircuitDemand(c.id, name, connected, demands[i] + adders[i], continuous, adders[i])
        for i, (c, name, connected, continuous) in enumerate(rows)
    )
    by_class = _by_class(rules, rows, circuits, pool_of, occupancy, omitted, largest_motor_id)
    feeder, phase_demand, feeder_warnings = _feeder(panel, rules, rows, circuits, options)
    warnings += feeder_warnings
    flags = _branch_flags(panel, rules, rows, options.terminations_75c)
    return DemandResult(
        rule_set=rules,
        occupancy=occupancy,
        by_class=by_class,
        circuits=circuits,
        total_connected_va=math.fsum(r[2] for r in rows),
        total_demand_va=math.fsum(c.demand_va for c in circuits),
        phase_demand_va=phase_demand,
        feeder=feeder,
        branch_flags=flags,
        warnings=tuple(warnings),
        cautions=cautions(rules),
    )


def _class_factors(
    rules: RuleSet,
    rows: list[tuple[Circuit, str, float, bool]],
    pool_of: dict[str, str],
    occupancy: str,
) -> dict[str, float]:
    """Each class's effective factor: its demand over its connected load, from the class (or
    pool) totals."""
    connected_by_class: dict[str, float] = defaultdict(float)
    loads_by_class: dict[str, list[float]] = defaultdict(list)
    for _, name, connected, _ in rows:
        connected_by_class[name] += connected
        loads_by_class[name].append(connected)
    connected_by_pool: dict[str, float] = defaultdict(float)
    for name, va in connected_by_class.items():
        connected_by_pool[pool_of[name]] += va
    factor_by_class: dict[str, float] = {}
    for name, rule in rules.classes.items():
        total = connected_by_class.get(name, 0.0)
        if rule.method == "tiers":
            pool = pool_of[name]
            pooled = connected_by_pool[pool]
            demand = apply_tiers(pooled, rules.classes[pool].tiers_for(occupancy))
            factor_by_class[name] = demand / pooled if pooled else 1.0
        elif rule.method == "units":
            demand = units_demand(loads_by_class.get(name, []), rule)
            factor_by_class[name] = demand / total if total else 1.0
        else:
            factor_by_class[name] = rule.factor
    return factor_by_class


def _circuit_demand(
    rules: RuleSet, factor_by_class: dict[str, float], name: str, connected: float
) -> float:
    """One circuit's demand before noncoincident classes and the motor adder."""
    rule = rules.classes[name]
    demand = connected * factor_by_class[name]
    if rule.method == "factor" and connected > 0:
        demand = max(demand, rule.min_each_va * rule.factor)
    return demand


def _noncoincident(
    rules: RuleSet, rows: list[tuple[Circuit, str, float, bool]], demands: list[float]
) -> tuple[list[float], dict[str, str]]:
    """220.60: of noncoincident classes only the largest is counted. The demands with the
    others at zero, and why each of those is omitted."""
    omitted: dict[str, str] = {}
    for names, clause in rules.noncoincident:
        totals = {
            n: math.fsum(d for d, r in zip(demands, rows, strict=True) if r[1] == n) for n in names
        }
        keep = max(names, key=lambda n: totals[n])
        for n in names:
            if n != keep and totals[n] > 0:
                omitted[n] = (
                    f"omitted: noncoincident with {rules.classes[keep].label.lower()} ({clause})"
                )
    return [0.0 if r[1] in omitted else d for d, r in zip(demands, rows, strict=True)], omitted


def _motor_adders(
    panel: Panel,
    rules: RuleSet,
    rows: list[tuple[Circuit, str, float, bool]],
    demands: list[float],
) -> tuple[list[float], str | None]:
    """Largest motor adder (430.24): on the motor still counted with the highest full-load
    current (430.17), which need not be the one of the most VA. Each row's adder, and that
    motor's circuit."""
    adders = [0.0] * len(rows)
    motor_rows = [
        i for i, r in enumerate(rows) if rules.classes[r[1]].largest_motor and demands[i] > 0
    ]
    if not (motor_rows and rules.largest_motor_extra > 0):
        return adders, None
    i = max(motor_rows, key=lambda k: _circuit_current_a(panel, rows[k][0], rows[k][2]))
    adders[i] = rules.largest_motor_extra * rows[i][2]
    return adders, rows[i][0].id


def _by_class(
    rules: RuleSet,
    rows: list[tuple[Circuit, str, float, bool]],
    circuits: tuple[CircuitDemand, ...],
    pool_of: dict[str, str],
    occupancy: str,
    omitted: dict[str, str],
    largest_motor_id: str | None,
) -> tuple[ClassDemand, ...]:
    out = []
    for name, rule in rules.classes.items():
        members = [c for c, r in zip(circuits, rows, strict=True) if r[1] == name]
        if not members:
            continue
        text = f"{rule.clause}"
        if name in omitted:
            text = omitted[name]
        elif rule.method == "tiers" and pool_of[name] != name:
            target = rules.classes[pool_of[name]].label.lower()
            text = f"{rule.pool_clause or rule.clause}; counted with {target} ({occupancy})"
        elif rule.method == "tiers":
            text += f"; {_tiers_text(rule.tiers_for(occupancy))}"
        elif rule.method == "factor" and rule.min_each_va:
            text += f"; each at least {rule.min_each_va:,.0f} VA"
        elif rule.method == "units":
            text += f"; {sum(1 for c in members if c.connected_va > 0)} units"
        if any(c.motor_adder_va for c in members):
            text += (
                f"; +{rules.largest_motor_extra:.0%} of largest motor, circuit {largest_motor_id} "
                f"({rules.largest_motor_clause})"
            )
        out.append(
            ClassDemand(
                name=name,
                label=rule.label,
                circuits=len(members),
                connected_va=math.fsum(c.connected_va for c in members),
                demand_va=math.fsum(c.demand_va for c in members),
                rule=text,
            )
        )
    return tuple(out)


def _tiers_text(tiers: tuple[Tier, ...]) -> str:
    parts = []
    lower = 0.0
    for tier in tiers:
        if tier.upto_va is None:
            parts.append(f"{'rest' if lower else 'all'} at {tier.factor:.0%}")
        else:
            parts.append(
                f"{'first' if not lower else 'to'} {tier.upto_va:,.0f} VA at {tier.factor:.0%}"
            )
            lower = tier.upto_va
    return ", ".join(parts)


def _nonlinear_classes(rules: RuleSet, names: tuple[str, ...]) -> frozenset[str]:
    """The rule set's classes for names or Type spellings (comma lists allowed)."""
    out = set()
    for item in names:
        for text in filter(None, (part.strip() for part in item.split(","))):
            name = text if text in rules.classes else classify(text)
            if name is None or name not in rules.classes:
                known = ", ".join(n for n in rules.classes if n != "spare")
                raise ScheduleError(
                    Problem("--nonlinear-classes", f"{text!r} is not a load class; use {known}")
                )
            out.add(name)
    return frozenset(out)


def _has_harmonics(circuit: Circuit) -> bool:
    """Whether the circuit's harmonic profile (its Harmonics entry, else its Type) is non-linear."""
    try:
        profile = profile_for(circuit)
    except ValueError as exc:
        raise ScheduleError(Problem(f"circuit {circuit.id}", str(exc))) from exc
    return profile is not None and any(m > 0 for _, m in profile.spectrum)


def _column(rating_a: float | None, size: str | None, terminations_75c: bool) -> int | None:
    if rating_a is None or size is None:
        return None
    return termination_column_c(rating_a, size, terminations_75c)


def _given_feeder_warnings(
    conductor: Conductor, required_a: float, ocpd_a: int | None, factor: float, t75: bool
) -> list[str]:
    """Why a feeder size given on the command line will not do (an empty list when it will)."""
    found = allowable_a(conductor.material, conductor.size, ocpd_a or required_a, factor, t75)
    if found is None:
        return [f"feeder conductor {conductor}: Table 310.16 has no such size"]
    adjusted, column = found
    limit = f"{column} °C terminations" + (f", factor {factor:.2f}" if factor != 1.0 else "")
    text = f"feeder conductor {conductor} carries {adjusted:.1f} A ({limit})"
    # A size that carries the required current is protected by the minimum OCPD, the next
    # standard rating above that current (240.4(B)), so the current is the one test.
    if adjusted + 1e-9 >= required_a:
        return []
    return [
        f"{text} but the feeder needs {required_a:.1f} A (215.2(A)(1), Table 310.16, 110.14(C)(1))"
    ]


def _is_four_wire_wye(system: System) -> bool:
    return system.neutral and system.high_leg is None and system.phase_count == 3


@dataclass(slots=True)
class _LineSums:
    """What the feeder carries, summed by line over the circuits with a demand."""

    phase_va: dict[Line, float]
    design: dict[Line, float]  # demand load current
    sizing: dict[Line, float]  # with 125% of the continuous loads
    neutral_linear: dict[Line, float]  # neutral current 220.61(B) may reduce
    neutral_fixed: dict[Line, float]  # neutral current counted in full (220.61(C))
    unplaced: list[str]

    @classmethod
    def empty(cls, lines: tuple[Line, ...]) -> _LineSums:
        def zero() -> dict[Line, float]:
            return dict.fromkeys(lines, 0.0)

        return cls(zero(), zero(), zero(), zero(), zero(), [])


def _feeder(
    panel: Panel,
    rules: RuleSet,
    rows: list[tuple[Circuit, str, float, bool]],
    circuits: tuple[CircuitDemand, ...],
    options: DemandOptions,
) -> tuple[FeederCheck, dict[Line, float], list[str]]:
    """The feeder check: sizing current, conductors, neutral, rating, voltage drop; with the
    demand per line and the warnings, in the order they are found."""
    system = panel.system
    lines = system.lines
    notes: list[str] = []
    warnings: list[str] = []
    sums = _line_sums(panel, rules, rows, circuits, options)
    if sums.unplaced:
        warnings.append(
            f"circuits not placed ({', '.join(sums.unplaced)}): "
            "their demand is spread evenly over the lines"
        )
    design = sums.design
    design_line = max(lines, key=lambda ln: design[ln])
    required_a = max(sums.sizing.values())
    factor = _conductor_factor(options, notes)
    t75 = options.terminations_75c
    min_ocpd, cu, al = _feeder_conductors(rules, required_a, factor, t75, notes)
    neutral_a, unreduced = _feeder_neutral(system, rules, sums, notes)
    rating_a, rating_name, spare_a, spare_pct = _feeder_rating(
        panel, required_a, min_ocpd, warnings
    )
    given = _given_conductor(options)
    if given is not None and rules.feeder_sizing:
        warnings += _given_feeder_warnings(given, required_a, min_ocpd, factor, t75)
    drop = drop_size = None
    conductor = given or (Conductor(cu, "cu") if cu else None)
    if options.feeder_length_ft is not None and conductor is not None:
        drop = _feeder_drop(system, design[design_line], options.feeder_length_ft, conductor, notes)
        drop_size = str(conductor)
    feeder = FeederCheck(
        design_line=design_line,
        design_a=design[design_line],
        required_a=required_a,
        line_design_a=design,
        min_ocpd_a=min_ocpd,
        conductor_cu=cu,
        conductor_al=al,
        conductor_factor=factor,
        conductor_cu_c=_column(min_ocpd, cu, t75),
        conductor_al_c=_column(min_ocpd, al, t75),
        neutral_a=neutral_a,
        neutral_unreduced_a=unreduced,
        rating_a=rating_a,
        rating_name=rating_name,
        spare_a=spare_a,
        spare_pct=spare_pct,
        voltage_drop_pct=drop,
        voltage_drop_conductor=drop_size,
        notes=tuple(notes),
    )
    return feeder, sums.phase_va, warnings


def _line_sums(
    panel: Panel,
    rules: RuleSet,
    rows: list[tuple[Circuit, str, float, bool]],
    circuits: tuple[CircuitDemand, ...],
    options: DemandOptions,
) -> _LineSums:
    """Each line's demand load, design and sizing currents and neutral currents."""
    system = panel.system
    lines = system.lines
    sums = _LineSums.empty(lines)
    wye = _is_four_wire_wye(system)
    nonlinear = _nonlinear_classes(rules, options.nonlinear_classes)
    for (circuit, name, connected, continuous), result in zip(rows, circuits, strict=True):
        if result.demand_va == 0:
            continue
        rule = rules.classes[name]
        shares = share_by_line(panel, replace(circuit, balance_va=result.demand_va))
        if not shares:
            sums.unplaced.append(circuit.id)
            shares = {line: result.demand_va / len(lines) for line in lines}
        # Motors carry their 125% in the largest-motor adder (430.24), not the continuous factor.
        multiplier = rules.continuous_factor if continuous and not rule.largest_motor else 1.0
        # A 2-pole load with a line-to-neutral share loads one line more than the other; which
        # one the schedule does not say, so each of its lines takes the heavier current.
        heavier_a = (
            _heavier_line_a(panel, circuit, result.demand_va) * 2 / len(shares)
            if _has_neutral_share(panel, circuit)
            else None
        )
        for line, va in shares.items():
            amps = va / _per_line_voltage(system, circuit.poles, line)
            if heavier_a is not None:
                amps = heavier_a
            sums.phase_va[line] += va
            sums.design[line] += amps
            sums.sizing[line] += amps * multiplier
        if not system.neutral:
            continue
        if circuit.poles == 1:
            # 220.61(C)(2): no reduction for the non-linear part on a 4-wire wye.
            fixed = wye and (name in nonlinear or _has_harmonics(circuit))
            for line, va in shares.items():
                target = sums.neutral_fixed if fixed else sums.neutral_linear
                target[line] += va / _line_voltage(system, line)
        elif circuit.neutral_va:
            # Which line the 120 V part sits on is not known: count it on each (conservative).
            circuit_factor = result.demand_va / connected if connected else 1.0
            for line in shares:
                target = sums.neutral_fixed if wye else sums.neutral_linear
                target[line] += circuit.neutral_va * circuit_factor / _line_voltage(system, line)
    return sums


def _conductor_factor(options: DemandOptions, notes: list[str]) -> float:
    """The feeder conductor's ampacity factor for ambient and bundling, each said in a note."""
    factor = 1.0
    if options.ambient_c is not None:
        factor *= ambient_factor(options.ambient_c)
        notes.append(
            f"ambient {options.ambient_c:g} °C: factor {ambient_factor(options.ambient_c):.2f} "
            "(Table 310.15(B)(1))"
        )
    if options.current_carrying is not None:
        factor *= bundling_factor(options.current_carrying)
        notes.append(
            f"{options.current_carrying} current-carrying conductors: factor "
            f"{bundling_factor(options.current_carrying):.2f} (Table 310.15(C)(1))"
        )
    return factor


def _feeder_conductors(
    rules: RuleSet, required_a: float, factor: float, t75: bool, notes: list[str]
) -> tuple[int | None, str | None, str | None]:
    """The minimum OCPD and the smallest copper and aluminium sizes, where the rule set sizes
    feeders."""
    if not rules.feeder_sizing:
        return None, None, None
    min_ocpd = next_standard_rating(required_a)
    cu = select_conductor(required_a, "cu", min_ocpd, factor, None, t75)
    al = select_conductor(required_a, "al", min_ocpd, factor, None, t75)
    if cu is None or al is None:
        notes.append(
            "no single conductor up to 500 kcmil carries the load: "
            "parallel sets are needed (310.10(G))"
        )
    return min_ocpd, cu, al


def _feeder_neutral(
    system: System, rules: RuleSet, sums: _LineSums, notes: list[str]
) -> tuple[float | None, float | None]:
    """The neutral current of the worst line (reduced by 220.61 where the rule set sizes
    feeders) and the same unreduced; None without a neutral."""
    if not system.neutral:
        return None, None
    linear, fixed = sums.neutral_linear, sums.neutral_fixed
    per_line = {ln: neutral_220_61(linear[ln], fixed[ln]) for ln in system.lines}
    worst = max(system.lines, key=lambda ln: per_line[ln])
    unreduced = linear[worst] + fixed[worst]
    if rules.feeder_sizing and fixed[worst] > 0 and unreduced > NEUTRAL_THRESHOLD_A:
        notes.append(
            f"neutral: {fixed[worst]:.1f} A of line {worst}'s line-to-neutral load "
            "is non-linear or from two phases and neutral of a 4-wire wye, "
            "and is not reduced (220.61(C))"
        )
    return (per_line[worst] if rules.feeder_sizing else unreduced), unreduced


def _feeder_rating(
    panel: Panel, required_a: float, min_ocpd: int | None, warnings: list[str]
) -> tuple[float | None, str, float | None, float | None]:
    """The lower of the main and bus ratings, its name, and the spare amperes and percent."""
    ratings = [(v, n) for v, n in ((panel.main_a, "main"), (panel.bus_a, "bus")) if v]
    rating_a, rating_name = min(ratings) if ratings else (None, "")
    if not rating_a:
        return rating_a, rating_name, None, None
    spare_a = rating_a - required_a
    if spare_a < 0:
        warnings.append(
            f"the {rating_name} rating {rating_a:g} A is below the required {required_a:.1f} A"
        )
    if panel.main_a and min_ocpd and panel.main_a < min_ocpd:
        warnings.append(
            f"main {panel.main_a:g} A is below the minimum OCPD {min_ocpd} A (215.3, 240.6(A))"
        )
    return rating_a, rating_name, spare_a, spare_a / rating_a * 100.0


def _given_conductor(options: DemandOptions) -> Conductor | None:
    """The feeder conductor given on the command line; refused when it names no size."""
    if not options.feeder_conductor:
        return None
    given = parse_conductor(options.feeder_conductor)
    if given is None:
        raise ScheduleError(
            Problem(
                "--feeder-conductor",
                f"{options.feeder_conductor!r} is not a size balancer knows",
            )
        )
    return given


def _feeder_drop(
    system: System, design_a: float, length_ft: float, conductor: Conductor, notes: list[str]
) -> float:
    """The feeder's voltage drop in percent, with a note when above the guide."""
    drop = voltage_drop_pct(
        design_a, length_ft, conductor, system.line_to_line_v, system.phase_count == 3
    )
    if drop > BRANCH_DROP_GUIDE_PCT:
        notes.append(
            f"feeder voltage drop {drop:.1f}% is above the {BRANCH_DROP_GUIDE_PCT:g}% the "
            f"215.2(A) Informational Note suggests "
            f"({TOTAL_DROP_GUIDE_PCT:g}% with the branch circuit)"
        )
    return drop


def _branch_flags(
    panel: Panel,
    rules: RuleSet,
    rows: list[tuple[Circuit, str, float, bool]],
    terminations_75c: bool = False,
) -> tuple[BranchFlag, ...]:
    """What to look at on each branch circuit: its breaker against its load, then its
    conductor against both."""
    flags: list[BranchFlag] = []
    sizing = rules.feeder_sizing
    for circuit, name, connected, continuous in rows:
        if name == "spare" or connected <= 0:
            continue
        rule = rules.classes[name]
        current = _circuit_current_a(panel, circuit, connected)
        need = _branch_need(rules, rule, current, continuous)
        flag = _breaker_flag(circuit, rule, sizing, need)
        if flag is not None:
            flags.append(flag)
        if circuit.conductor is not None and sizing:  # read and checked with the schedule
            flags += _conductor_flags(circuit, name, rule, need, terminations_75c)
    return tuple(flags)


@dataclass(frozen=True, slots=True)
class _BranchNeed:
    """What a branch circuit's load needs of its breaker, and the clause that says so."""

    required_a: float
    clause: str
    suggestion: int | None  # the smallest standard breaker, where the rule set sizes circuits
    why: str  # how the required current was reached, for the message


def _branch_need(rules: RuleSet, rule: ClassRule, current: float, continuous: bool) -> _BranchNeed:
    """The current a branch circuit's breaker must carry: 125% for a motor or a continuous load
    where the rule set sizes circuits."""
    sizing = rules.feeder_sizing
    if rule.largest_motor and sizing:
        required, clause = current * 1.25, "430.22, 440.32"
    elif continuous and sizing:
        required, clause = current * rules.continuous_factor, "210.19(A)(1), 210.20(A)"
    else:
        required, clause = current, "210.20(A)" if sizing else "connected load"
    suggestion = max(next_standard_rating(required) or 0, 15) if sizing else None
    why = (
        " with 125% for a continuous load"
        if continuous and sizing and not rule.largest_motor
        else ""
    )
    if rule.largest_motor and sizing:
        why = " at 125% of the motor current"
    return _BranchNeed(required, clause, suggestion, why)


@dataclass(frozen=True, slots=True)
class BranchConductor:
    """The copper conductor a branch circuit's load and breaker imply, when the schedule gives
    none: the smallest size that carries the load, is protected by the breaker and is within
    its small-conductor limit."""

    conductor: Conductor
    rating_a: float  # the breaker it was sized for: the schedule's, else the one suggested
    rating_given: bool
    required_a: float
    column_c: int
    clauses: str

    @property
    def text(self) -> str:
        rating = f"{self.rating_a:g} A breaker" + ("" if self.rating_given else " (suggested)")
        return (
            f"{self.conductor} (implied by the branch-circuit check, not in the schedule: "
            f"{self.required_a:.1f} A on a {rating}, {self.column_c} °C column, {self.clauses}; "
            "confirm before pulling wire)"
        )


def branch_conductor(
    panel: Panel, circuit: Circuit, options: DemandOptions | None = None
) -> BranchConductor | None:
    """The conductor the branch-circuit check implies for ``circuit`` (see
    :class:`BranchConductor`); None for a spare, a circuit without load, or a rule set that
    does not size circuits."""
    options = options or DemandOptions()
    rules = resolve_rule_set(options.rules, panel.system)
    if circuit.is_spare or circuit.basis_va <= 0 or not rules.feeder_sizing:
        return None
    rows, _ = _classify_all(panel.with_circuits([circuit]), rules, options.occupancy)
    _, name, connected, continuous = rows[0]
    rule = rules.classes[name]
    need = _branch_need(rules, rule, _circuit_current_a(panel, circuit, connected), continuous)
    rating = circuit.trip_a or need.suggestion
    if rating is None:
        return None
    receptacles = name == "general_receptacles"
    for size in SIZES:
        column = termination_column_c(rating, size, options.terminations_75c)
        ampacity = ampacity_a("cu", size, column)
        if ampacity is None or ampacity + 1e-9 < need.required_a:
            continue
        limit = SMALL_CONDUCTOR_LIMIT_A.get(("cu", size))
        if not rule.largest_motor and (
            (limit is not None and rating > limit)
            or not protected_by(ampacity, rating, receptacles)
        ):
            continue
        clauses = "Table 310.16, " + ("430.22" if rule.largest_motor else "240.4(D)")
        return BranchConductor(
            Conductor(size, "cu"), rating, circuit.trip_a is not None, need.required_a, column,
            clauses,
        )  # fmt: skip
    return None


def _breaker_flag(
    circuit: Circuit, rule: ClassRule, sizing: bool, need: _BranchNeed
) -> BranchFlag | None:
    """A breaker not given, or smaller than the load needs; None when it will do."""
    required, suggestion, why = need.required_a, need.suggestion, need.why
    if circuit.trip_a is None:
        text = f"no breaker rating given; the load needs {required:.1f} A{why}"
        if suggestion:
            text += f": at least {suggestion} A (240.6(A))"
        return BranchFlag(circuit.id, "no_trip", text, need.clause, None, required, suggestion)
    if required > circuit.trip_a + 1e-9:
        text = f"load {required:.1f} A{why} exceeds the {circuit.trip_a:g} A breaker"
        if suggestion:
            text += f"; suggest {suggestion} A (240.6(A)) with conductors to match"
        if rule.largest_motor and sizing:
            text += "; motor OCPD may be larger per 430.52 / 440.22: check the nameplate"
        return BranchFlag(
            circuit.id, "overloaded", text, need.clause, circuit.trip_a, required, suggestion
        )
    return None


def _conductor_flags(
    circuit: Circuit, name: str, rule: ClassRule, need: _BranchNeed, terminations_75c: bool
) -> list[BranchFlag]:
    """A given conductor over its small-size limit, carrying less than the load, or not
    protected by the breaker."""
    conductor = circuit.conductor
    assert conductor is not None
    flags = []
    required, clause = need.required_a, need.clause
    limit = SMALL_CONDUCTOR_LIMIT_A.get((conductor.material, conductor.size))
    over_limit = bool(limit and circuit.trip_a and circuit.trip_a > limit)
    if over_limit and not rule.largest_motor:
        flags.append(
            BranchFlag(
                circuit.id, "small_conductor",
                f"{conductor} is limited to a {limit} A overcurrent device; "
                f"the breaker is {circuit.trip_a:g} A",
                "240.4(D)", circuit.trip_a, required, limit,
            )
        )  # fmt: skip
    rating = circuit.trip_a or need.suggestion or required
    column = termination_column_c(rating, conductor.size, terminations_75c)
    ampacity = ampacity_a(conductor.material, conductor.size, column)
    if ampacity is None:
        return flags
    if ampacity + 1e-9 < required:
        flags.append(
            BranchFlag(
                circuit.id, "conductor_ampacity",
                f"{conductor} carries {ampacity} A ({column} °C column) "
                f"but the load needs {required:.1f} A",
                f"Table 310.16, 110.14(C)(1), {clause}", circuit.trip_a, required, None,
            )
        )  # fmt: skip
    # 240.4: the breaker protects the conductor; 240.4(D) sizes beyond their limit are
    # flagged above, and 240.4(G) sends motor and air-conditioning circuits elsewhere.
    receptacles = name == "general_receptacles"
    if (
        circuit.trip_a
        and not over_limit
        and not rule.largest_motor
        and not protected_by(ampacity, circuit.trip_a, receptacles)
    ):
        largest = _largest_protecting(ampacity, receptacles)
        why = f"at most {largest} A"
        if receptacles and protected_by(ampacity, circuit.trip_a):
            why += "; no next size up on a branch circuit of several receptacles"
        flags.append(
            BranchFlag(
                circuit.id, "unprotected_conductor",
                f"{conductor} carries {ampacity} A ({column} °C column); the "
                f"{circuit.trip_a:g} A breaker does not protect it ({why})",
                "240.4(B), 110.14(C)(1), Table 310.16", circuit.trip_a, required, largest,
            )
        )  # fmt: skip
    return flags


def _largest_protecting(ampacity: float, multioutlet_receptacles: bool) -> int | None:
    """The largest 240.6(A) rating that protects a conductor of ``ampacity`` (240.4(B))."""
    fitting = [r for r in STANDARD_RATINGS_A if protected_by(ampacity, r, multioutlet_receptacles)]
    return max(fitting) if fitting else None


# ---------------------------------------------------------------------------------------------
# Output


def cautions(rules: RuleSet) -> tuple[str, ...]:
    """Cautions printed with every demand calculation."""
    lines = [
        "This calculation is an aid to estimating and design review, not a substitute for a "
        "load calculation by a qualified person.",
        (
            f"Rules used: {rules.title} ({rules.edition}). The edition adopted where the "
            "installation is, its local amendments and the authority having jurisdiction govern; "
            "check every figure against them and against licensed practice."
            if rules.feeder_sizing
            else f"Rules used: {rules.title}, no code edition. The code in force where the "
            "installation is, its local amendments and the authority having jurisdiction govern; "
            "check every figure against them and against licensed practice."
        ),
    ]
    if not rules.feeder_sizing:
        lines.append(
            "No code demand factors or sizing rules are applied; size overcurrent devices and "
            "conductors by the code in force where the installation is."
        )
    return tuple(lines)


def demand_to_dict(result: DemandResult) -> dict[str, Any]:
    """The ``"demand"`` object of the JSON output."""
    f = result.feeder

    def rnd(value: float | None, digits: int = 1) -> float | None:
        return None if value is None else round(value, digits)

    return {
        "rule_set": result.rule_set.name,
        "rule_set_title": result.rule_set.title,
        "edition": result.rule_set.edition,
        "occupancy": result.occupancy,
        "by_class": {
            c.name: {
                "connected_va": rnd(c.connected_va),
                "demand_va": rnd(c.demand_va),
                "rule": c.rule,
            }
            for c in result.by_class
        },
        "total_connected_va": rnd(result.total_connected_va),
        "total_demand_va": rnd(result.total_demand_va),
        "phase_demand_va": {k: rnd(v) for k, v in result.phase_demand_va.items()},
        "feeder": {
            "design_a": rnd(f.design_a, 2),
            "design_line": f.design_line,
            "required_a": rnd(f.required_a, 2),
            "min_ocpd_a": f.min_ocpd_a,
            "conductor_cu": f.conductor_cu,
            "conductor_al": f.conductor_al,
            "conductor_cu_column_c": f.conductor_cu_c,
            "conductor_al_column_c": f.conductor_al_c,
            "neutral_a": rnd(f.neutral_a, 2),
            "rating_a": f.rating_a,
            "spare_a": rnd(f.spare_a, 2),
            "spare_pct": rnd(f.spare_pct, 1),
            "voltage_drop_pct": rnd(f.voltage_drop_pct, 2),
            "notes": list(f.notes),
        },
        "branch_flags": [
            {
                "circuit": b.circuit_id,
                "kind": b.kind,
                "message": b.message,
                "clause": b.clause,
                "trip_a": b.trip_a,
                "required_a": rnd(b.required_a, 2),
                "suggested_trip_a": b.suggested_trip_a,
            }
            for b in result.branch_flags
        ],
        "warnings": list(result.warnings),
        "cautions": list(result.cautions),
    }


def _size_text(size: str | None, material: str) -> str:
    if size is None:
        return f"{material}: none up to 500 kcmil"
    unit = "kcmil" if size.isdigit() and int(size) >= 250 else "AWG"
    return f"{size} {unit} {material}"


TERMINAL_WIDTH = 100  # columns the terminal report keeps within


def _fit(line: str) -> list[str]:
    """A long line wrapped within TERMINAL_WIDTH, continuation lines indented under it."""
    if len(line) <= TERMINAL_WIDTH:
        return [line]
    indent = " " * (len(line) - len(line.lstrip()) + 2)
    return textwrap.wrap(line, TERMINAL_WIDTH, subsequent_indent=indent, drop_whitespace=True)


def loads_section_lines(result: DemandResult) -> list[str]:
    """The terminal "Loads" section: plain text lines."""
    rules = result.rule_set
    f = result.feeder
    out = [f"Loads: {rules.title}, occupancy {result.occupancy}"]
    width = max([len(c.label) for c in result.by_class] + [5])
    out.append(f"  {'Class':<{width}}  {'Connected VA':>12}  {'Demand VA':>10}  Rule")
    for c in result.by_class:
        row = f"  {c.label:<{width}}  {c.connected_va:>12,.0f}  {c.demand_va:>10,.0f}  "
        # the rule wraps under its own column, so the table stays within a terminal's width
        rule = textwrap.wrap(c.rule, max(30, TERMINAL_WIDTH - len(row))) or [""]
        out.append(row + rule[0])
        out += [" " * len(row) + more for more in rule[1:]]
    out.append(
        f"  {'Total':<{width}}  {result.total_connected_va:>12,.0f}  "
        f"{result.total_demand_va:>10,.0f}"
    )
    out.append(
        "  Demand by line: "
        + "  ".join(f"{k} {v:,.0f} VA" for k, v in result.phase_demand_va.items())
    )
    has_adder = any(c.motor_adder_va for c in result.circuits)
    adder = f" + {rules.largest_motor_extra:.0%} largest motor" if has_adder else ""
    basis = f"noncontinuous + {rules.continuous_factor:.0%} continuous{adder}"
    if rules.continuous_factor == 1 and not has_adder:
        basis = "connected load, no multipliers"
    out.append(
        f"  Feeder: demand {f.design_a:.1f} A on line {f.design_line}; required "
        f"{f.required_a:.1f} A ({basis})"
    )
    if rules.feeder_sizing:
        columns = {c for c in (f.conductor_cu_c, f.conductor_al_c) if c}
        if len(columns) > 1:
            sizes = (
                f"{_size_text(f.conductor_cu, 'Cu')} ({f.conductor_cu_c} °C) or "
                f"{_size_text(f.conductor_al, 'Al')} ({f.conductor_al_c} °C) "
                "(Table 310.16, 110.14(C)(1))"
            )
        else:
            column = f", {columns.pop()} °C" if columns else ""
            sizes = (
                f"{_size_text(f.conductor_cu, 'Cu')} or {_size_text(f.conductor_al, 'Al')} "
                f"(Table 310.16{column}, 110.14(C)(1))"
            )
        out.append(f"  Minimum OCPD {f.min_ocpd_a} A (240.6(A)); conductor {sizes}")
    if f.neutral_a is not None:
        reduced = (
            " after 220.61(B)"
            if f.neutral_unreduced_a and f.neutral_a < f.neutral_unreduced_a - 1e-9
            else ""
        )
        source = (
            "(220.61)" if rules.feeder_sizing else "(largest line-to-neutral load, not reduced)"
        )
        out.append(f"  Neutral {f.neutral_a:.1f} A{reduced} {source}")
    if f.rating_a is not None and f.spare_a is not None and f.spare_pct is not None:
        state = "spare" if f.spare_a >= 0 else "over by"
        out.append(
            f"  Against the {f.rating_name} rating {f.rating_a:g} A: "
            f"{state} {abs(f.spare_a):.1f} A ({abs(f.spare_pct):.0f}%)"
        )
    if f.voltage_drop_pct is not None:
        out.append(
            f"  Voltage drop {f.voltage_drop_pct:.2f}% on {f.voltage_drop_conductor} "
            "(Chapter 9 Table 8 resistance; informational)"
        )
    out += [f"  Note: {n}" for n in f.notes]
    if result.branch_flags:
        out.append(f"  Branch circuits to check: {len(result.branch_flags)}")
        out += [
            f"    {b.circuit_id}: {b.message} ({b.clause})"
            if b.clause
            else f"    {b.circuit_id}: {b.message}"
            for b in result.branch_flags
        ]
    out += [f"  Warning: {w}" for w in result.warnings]
    for caution in result.cautions:
        out += textwrap.wrap(caution, 96, initial_indent="  Caution: ", subsequent_indent=" " * 11)
    return [piece for line in out for piece in _fit(line)]


def _column_text(column_c: int | None) -> str:
    return f"{column_c} °C column" if column_c else ""


def demand_sheet_rows(result: DemandResult) -> list[list[Any]]:
    """Rows for a workbook sheet: a header row, one row per class, the total and the feeder."""
    f = result.feeder
    rows: list[list[Any]] = [
        ["Rule set", result.rule_set.title, result.rule_set.edition],
        ["Occupancy", result.occupancy],
        [],
        ["Class", "Circuits", "Connected VA", "Demand VA", "Rule"],
    ]
    rows += [
        [c.label, c.circuits, round(c.connected_va), round(c.demand_va), c.rule]
        for c in result.by_class
    ]
    rows.append(
        [
            "Total",
            len(result.circuits),
            round(result.total_connected_va),
            round(result.total_demand_va),
            "",
        ]
    )
    rows.append([])
    rows.append(["Line", *result.phase_demand_va])
    rows.append(["Demand VA", *(round(v) for v in result.phase_demand_va.values())])
    rows.append(["Demand A", *(round(f.line_design_a[k], 1) for k in result.phase_demand_va)])
    rows.append([])
    rows += [
        ["Required A", round(f.required_a, 1)],
        ["Minimum OCPD A", f.min_ocpd_a],
        ["Conductor Cu", _size_text(f.conductor_cu, "Cu"), _column_text(f.conductor_cu_c)],
        ["Conductor Al", _size_text(f.conductor_al, "Al"), _column_text(f.conductor_al_c)],
        ["Neutral A", None if f.neutral_a is None else round(f.neutral_a, 1)],
        ["Spare A", None if f.spare_a is None else round(f.spare_a, 1)],
        ["Spare %", None if f.spare_pct is None else round(f.spare_pct, 1)],
    ]
    if result.branch_flags:
        rows.append([])
        rows.append(["Circuit", "Check", "Message", "Clause"])
        rows += [[b.circuit_id, b.kind, b.message, b.clause] for b in result.branch_flags]
    rows.append([])
    rows += [["Caution", c] for c in result.cautions]
    return rows

"""The page's balance and check options (a JSON object) turned into the pipeline's choices, each
problem named by the option's label on the page. Only built-in rule sets and load shapes are
accepted, and the logger file is the one uploaded to the session: nothing from the browser
names a file."""

from __future__ import annotations

import math
import zoneinfo
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any, Literal, get_args

from balancer.api import FieldChoices, LoadOverTime, Supply
from balancer.code.demand import DemandOptions
from balancer.domain.result import BalanceOptions, Objective
from balancer.errors import Problem, ScheduleError
from balancer.field.basis import Basis

GOALS: tuple[str, ...] = get_args(Objective)
BASES: tuple[str, ...] = get_args(Basis)
RULE_SETS = ("nec2023", "nec2020", "connected")
MAX_TIME_LIMIT_S = 600.0
MAX_TABLE_MOVES = 30
LoadSource = Literal["logger", "typical"]
LOAD_SOURCES: tuple[str, ...] = get_args(LoadSource)
MAX_ZONE_CHARS = 64


@dataclass(frozen=True, slots=True)
class OverTimeChoice:
    """Where the load over time comes from: the session's uploaded logger file, the packaged
    (invented) typical load shapes, or nowhere; and the logger's time zone."""

    source: LoadSource | None = None
    tz: str | None = None

    def load_over_time(self, logger: Path | None) -> LoadOverTime | None:
        """The pipeline's :class:`~balancer.api.LoadOverTime`; ``logger`` is the session's
        uploaded file (the server's path, never one the browser named)."""
        if self.source is None:
            return None
        if self.source == "typical":
            return LoadOverTime(shapes="typical")
        if logger is None:
            raise ScheduleError(
                Problem("Logger file", "upload a logger file first, or tick typical load shapes")
            )
        return LoadOverTime(logger=logger, tz=self.tz)


@dataclass(frozen=True, slots=True)
class CheckChoices:
    basis: Basis = "nameplate"
    demand: DemandOptions = field(default_factory=DemandOptions)
    over_time: OverTimeChoice = field(default_factory=OverTimeChoice)


@dataclass(frozen=True, slots=True)
class BalanceChoices:
    options: BalanceOptions
    field: FieldChoices
    demand: DemandOptions
    supply: Supply | None
    locks: dict[str, bool]
    over_time: OverTimeChoice


class _Reader:
    """Reads one option at a time and keeps every problem, so all are reported together."""

    def __init__(self, data: Any) -> None:
        self.data: dict[str, Any] = data if isinstance(data, dict) else {}
        self.problems: list[Problem] = []
        if not isinstance(data, dict):
            self.problems.append(Problem("options", "expected a JSON object"))

    def choice(self, key: str, label: str, allowed: tuple[str, ...], default: str) -> str:
        value = self.data.get(key)
        if value in (None, ""):
            return default
        if value not in allowed:
            self.problems.append(Problem(label, f"{value!r} is not one of {', '.join(allowed)}"))
            return default
        return str(value)

    def number(
        self, key: str, label: str, low: float, high: float, *, whole: bool = False
    ) -> float | None:
        value = self.data.get(key)
        if value in (None, ""):
            return None
        try:
            number = float(value)
        except (TypeError, ValueError):
            number = math.nan
        if isinstance(value, bool) or not math.isfinite(number):
            self.problems.append(Problem(label, f"{value!r} is not a number"))
            return None
        if whole and number != int(number):
            self.problems.append(Problem(label, f"{value!r} is not a whole number"))
            return None
        if not low <= number <= high:
            self.problems.append(Problem(label, f"must be from {low:g} to {high:g}"))
            return None
        return number

    def text(self, key: str, label: str, limit: int) -> str | None:
        value = self.data.get(key)
        if value in (None, ""):
            return None
        if not isinstance(value, str):
            self.problems.append(Problem(label, f"{value!r} is not text"))
            return None
        value = value.strip()
        if len(value) > limit:
            self.problems.append(Problem(label, f"longer than {limit} characters"))
            return None
        return value or None

    def flag(self, key: str) -> bool:
        return self.data.get(key) is True

    def locks(self) -> dict[str, bool]:
        value = self.data.get("locks", {})
        if not isinstance(value, dict) or not all(
            isinstance(k, str) and isinstance(v, bool) for k, v in value.items()
        ):
            self.problems.append(Problem("locks", "expected circuit ids with true or false"))
            return {}
        return dict(value)

    def done(self) -> None:
        if self.problems:
            raise ScheduleError(self.problems)


def _demand(reader: _Reader) -> DemandOptions:
    rules = reader.choice("rules", "Demand rule set", RULE_SETS, "")
    return DemandOptions(rules=rules or None)


def _over_time(reader: _Reader) -> OverTimeChoice:
    source = reader.choice("load", "Load over time", LOAD_SOURCES, "") or None
    tz = reader.text("tz", "Logger time zone", MAX_ZONE_CHARS)
    if tz is not None and source != "logger":
        reader.problems.append(Problem("Logger time zone", "applies to a logger file only"))
        tz = None
    if tz is not None:
        try:
            zoneinfo.ZoneInfo(tz)
        except (zoneinfo.ZoneInfoNotFoundError, ValueError):
            reader.problems.append(
                Problem(
                    "Logger time zone",
                    f"{tz!r} is not a known time zone (an IANA name such as America/Chicago)",
                )
            )
            tz = None
    return OverTimeChoice(source, tz)  # type: ignore[arg-type]


def check_choices(data: Any) -> CheckChoices:
    reader = _Reader(data)
    basis = reader.choice("basis", "Load basis", BASES, "nameplate")
    demand = _demand(reader)
    over_time = _over_time(reader)
    reader.done()
    return CheckChoices(basis, demand, over_time)  # type: ignore[arg-type]


def balance_choices(data: Any) -> BalanceChoices:
    reader = _Reader(data)
    goal = reader.choice("goal", "Goal", GOALS, "spread")
    kva = reader.number("bank_kva", "Transformer kVA", 0.001, 1e6)
    within = reader.number("within_pct", "Margin (points)", 0, 100)
    max_moves = reader.number("max_moves", "Most moves", 0, 1000, whole=True)
    table_moves = reader.number(
        "tradeoff_moves", "Table up to (moves)", 0, MAX_TABLE_MOVES, whole=True
    )
    time_limit = reader.number("time_limit_s", "Time limit (s)", 0.1, MAX_TIME_LIMIT_S)
    basis = reader.choice("basis", "Load basis", BASES, "nameplate")
    demand = _demand(reader)
    locks = reader.locks()
    over_time = _over_time(reader)
    if over_time.source is not None and goal != "spread":
        reader.problems.append(
            Problem(
                "Goal",
                "the load over time sets the goal (the widest interval's phase spread); "
                "choose no load over time for another goal",
            )
        )
    supply = None
    if goal == "transformer":
        if kva is None:
            reader.problems.append(Problem("Transformer kVA", "the transformer goal needs its kVA"))
        else:
            supply = Supply(kva, reader.flag("open_delta"))
    reader.done()
    options = BalanceOptions(
        fresh=reader.flag("fresh"),
        max_moves=None if max_moves is None else int(max_moves),
        objective=goal,  # type: ignore[arg-type]
        time_limit_s=60.0 if time_limit is None else time_limit,
    )
    # with a load series each row of the table is a solve over the whole horizon: on request
    # only, as on the command line (None leaves the pipeline's default)
    choices = FieldChoices(
        basis=basis,  # type: ignore[arg-type]
        tradeoff=True if over_time.source is not None and reader.flag("peak_table") else None,
        tradeoff_moves=None if table_moves is None else int(table_moves),
        within_pct=within,
    )
    return BalanceChoices(options, choices, demand, supply, locks, over_time)

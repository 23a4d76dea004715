"""Typical days per load class, for a panel with no measurements: 24-hour weekday and weekend
shapes (``data/load_shapes.toml``, invented, or a user's file of the same format) turned into
a :class:`LoadSeries` of each circuit's connected load over a week or more."""

from __future__ import annotations

import math
from dataclasses import dataclass
from difflib import get_close_matches
from pathlib import Path
from typing import Any

import numpy as np

from balancer.code.demand import CLASS_SPELLINGS, classify
from balancer.domain.datafiles import read_toml
from balancer.domain.panel import Circuit, Panel
from balancer.errors import Problem, ScheduleError
from balancer.intervals.series import LoadSeries

BUNDLED = "data/load_shapes.toml"
FIRST_DAY = np.datetime64("2026-01-05T00:00", "m")  # a Monday: the series starts on one
HOURS = 24
MAX_DAYS = 366
CLASS_NAMES = tuple(dict.fromkeys(CLASS_SPELLINGS.values()))
DAY_KINDS = ("weekday", "weekend")
_TOP_KEYS = ("title", "classes")
_CLASS_KEYS = (*DAY_KINDS, "note")


@dataclass(frozen=True, slots=True)
class ShapeTable:
    """Shapes by load class: ``by_class[name]`` is a (2, 24) array, weekday then weekend, of
    fractions of the connected load per hour."""

    source: str
    title: str
    invented: bool
    by_class: dict[str, np.ndarray]


def load_shapes(path: Path | None = None) -> ShapeTable:
    """The shapes of a user's file, or the bundled invented ones when ``path`` is None; every
    problem reported at once, each with its table and key."""
    data, where = read_toml(path, BUNDLED)
    problems: list[Problem] = []
    for key in data:
        if key not in _TOP_KEYS:
            problems.append(Problem(where, f"unknown key {key!r}{_hint(key, _TOP_KEYS)}"))
    classes = data.get("classes")
    if not isinstance(classes, dict) or not classes:
        problems.append(Problem(where, "no [classes.<name>] tables found"))
        classes = {}
    by_class = {}
    for name, table in classes.items():
        shape = _class_shape(name, table, where, problems)
        if shape is not None:
            by_class[name] = shape
    if problems:
        raise ScheduleError(problems)
    title = str(data.get("title", "") or where)
    return ShapeTable(where, title, path is None, by_class)


def typical_series(panel: Panel, shapes: Path | None = None, days: int = 7) -> LoadSeries:
    """Each circuit's connected load (``basis_va``) times its class's shape, hourly for ``days``
    days from Monday 2026-01-05 00:00 (weekdays Monday to Friday).

    A circuit's class is its Type as the demand rules read it (:func:`balancer.code.demand.
    classify`); a spare is ``spare``, an unknown or blank Type ``other``. A class the file has
    no shape for is flat at 1, said in a notice.

    Examples
    --------
    >>> from balancer.domain.systems import get_system
    >>> p = Panel("P", get_system("208Y/120"), 6, (Circuit("1", "Lights", 1, 1000.0, (1,),
    ...     load_class="lighting"),))
    >>> s = typical_series(p, days=1)
    >>> s.va.shape, s.kind, float(s.va[9, 0]), str(s.starts[0])
    ((24, 1), 'typical', 1000.0, '2026-01-05T00:00')
    """
    if isinstance(days, bool) or not isinstance(days, int) or not 1 <= days <= MAX_DAYS:
        raise ScheduleError(Problem("days", f"{days!r} is not a whole number from 1 to {MAX_DAYS}"))
    table = load_shapes(shapes)
    starts = FIRST_DAY + np.arange(days * HOURS).astype("timedelta64[h]")
    weekend = (np.arange(days * HOURS) // HOURS) % 7 >= 5
    hour = np.arange(days * HOURS) % HOURS
    notices = [_source_notice(table)]
    flat = np.ones((len(DAY_KINDS), HOURS))
    missing: dict[str, list[str]] = {}
    untyped: list[str] = []
    va = np.empty((starts.size, len(panel.circuits)))
    for j, circuit in enumerate(panel.circuits):
        name = _class_of(circuit, untyped)
        shape = table.by_class.get(name)
        if shape is None:
            missing.setdefault(name, []).append(circuit.id)
            shape = flat
        va[:, j] = circuit.basis_va * shape[weekend.astype(int), hour]
    for name, ids in missing.items():
        notices.append(
            f"{table.source} has no shape for class {name}: circuits {', '.join(ids)} taken as "
            "flat at their full connected load"
        )
    if untyped:
        notices.append(
            f"circuits {', '.join(untyped)} have no known Type: given the shape of class other"
        )
    source = (
        f"typical load shapes (invented, see {BUNDLED})"
        if table.invented
        else f"typical load shapes from {table.source}"
    )
    circuit_ids = tuple(c.id for c in panel.circuits)
    hourly = starts.astype("datetime64[m]")
    return LoadSeries(source, "typical", hourly, 60, circuit_ids, va, None, tuple(notices))


def _class_of(circuit: Circuit, untyped: list[str]) -> str:
    if circuit.is_spare:
        return "spare"
    name = classify(circuit.load_class)
    if name is None:
        untyped.append(circuit.id)
        return "other"
    return name


def _source_notice(table: ShapeTable) -> str:
    if table.invented:
        return (
            f"invented typical shapes, replace with your own ({BUNDLED}: {table.title}); "
            "each hour is a made-up fraction of the circuit's connected load, not a measurement"
        )
    return f"typical shapes from {table.source} ({table.title})"


def _class_shape(name: str, table: Any, where: str, problems: list[Problem]) -> np.ndarray | None:
    at = f"{where}: [classes.{name}]"
    count = len(problems)
    if name not in CLASS_NAMES:
        known = classify(name)
        hint = f"; did you mean {known}?" if known else _hint(name, CLASS_NAMES)
        problems.append(Problem(at, f"{name!r} is not a load class{hint}"))
    if not isinstance(table, dict):
        problems.append(Problem(at, "should be a table with weekday and weekend lists"))
        return None
    for key in table:
        if key not in _CLASS_KEYS:
            problems.append(Problem(at, f"unknown key {key!r}{_hint(key, _CLASS_KEYS)}"))
    rows = [_hours(table.get(kind), f"{at} {kind}", problems) for kind in DAY_KINDS]
    if len(problems) > count:
        return None
    return np.array(rows, dtype=np.float64)


def _hours(values: Any, at: str, problems: list[Problem]) -> list[float]:
    if values is None:
        problems.append(Problem(at, f"missing: give {HOURS} values, hours 0 to 23"))
        return []
    if not isinstance(values, list):
        problems.append(Problem(at, f"should be a list of {HOURS} values, not {values!r}"))
        return []
    if len(values) != HOURS:
        problems.append(Problem(at, f"{len(values)} values, need {HOURS}"))
    out = []
    for hour, value in enumerate(values):
        number = isinstance(value, int | float) and not isinstance(value, bool)
        if not number or not math.isfinite(value) or not 0 <= value <= 1:
            problems.append(Problem(at, f"hour {hour}: {value!r} is not a fraction from 0 to 1"))
        else:
            out.append(float(value))
    return out


def _hint(word: str, choices: tuple[str, ...]) -> str:
    near = get_close_matches(word, choices, n=1)
    return f"; did you mean {near[0]}?" if near else f" (known: {', '.join(choices)})"

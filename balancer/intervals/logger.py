"""Interval readings from a logger's CSV file: its columns, units and cells, turned into a
:class:`LoadSeries` of VA per circuit (or per line). The time side is in :mod:`.clock`.

The file is bounded before it is parsed, read as text (every cell a string, nothing evaluated)
and checked whole: every unknown header, bad unit and bad cell is reported at once with its
file row and column.
"""

from __future__ import annotations

import csv
import math
import re
from dataclasses import dataclass
from difflib import get_close_matches
from io import StringIO
from pathlib import Path

import numpy as np
import pandas as pd

from balancer.domain.panel import Circuit, Panel
from balancer.errors import Problem, ScheduleError
from balancer.field.basis import circuit_voltage_v
from balancer.intervals.clock import arrange, parse_stamps
from balancer.intervals.series import LoadSeries

MAX_FILE_BYTES = 40 * 1024 * 1024
MAX_ROWS = 600_000  # readings, header not counted
MAX_COLUMNS = 200
LISTED_CELLS = 50  # bad cells named one by one; the rest are counted

# Header spellings, compared in lower case with everything but letters and digits dropped.
STAMP_HEADERS = frozenset(
    [
        "time",
        "timestamp",
        "datetime",
        "intervalstart",
        "start",
        "starttime",
        "intervalbegin",
        "readingtime",
        "localtime",
        "interval",
    ]
)
DATE_HEADER = "date"
LINE_WORDS = ("", "line", "phase", "leg")
# unit → VA per unit before the circuit's voltage or power factor is applied
UNITS = {"a": 1.0, "va": 1.0, "kva": 1000.0, "w": 1.0, "kw": 1000.0}
_BRACKETED = re.compile(r"\s*(.*?)\s*[\(\[]\s*([^)\]]*?)\s*[\)\]]\s*")
_TRAILING = re.compile(r"\s*(.*?\S)\s+(a|va|kva|w|kw)\s*", re.IGNORECASE)


@dataclass(frozen=True, slots=True)
class _Column:
    """One value column: where it is, what it measures and how its unit becomes VA."""

    position: int
    header: str
    target: str  # circuit id, or line letter when per_line
    per_line: bool
    unit: str
    va_per_unit: float


@dataclass(frozen=True, slots=True)
class _Layout:
    stamp_positions: tuple[int, ...]  # one timestamp column, or Date then Time
    stamp_header: str
    columns: tuple[_Column, ...]
    notices: tuple[str, ...]

    @property
    def per_line(self) -> bool:
        return any(c.per_line for c in self.columns)


def read_logger(path: Path, panel: Panel, tz: str | None = None) -> LoadSeries:
    """The loads of ``panel``'s circuits per interval, from a logger's CSV file.

    The file has a timestamp column (``Time``, ``Timestamp``, ``Date/Time``, ``Interval
    start`` …, or ``Date`` and ``Time`` apart), each stamp the start of its interval, and then
    either one column per circuit, headed by the circuit id and a unit (``12 (A)``, ``12 kW``),
    or one per line of the panel (``A (A)``, ``Line B (kVA)``). Units become VA:

    - A: the circuit's voltage times the reading, as for a single clamp reading
      (:func:`balancer.field.basis.measured_va`): line-to-neutral × A for 1 pole, line-to-line
      × A for 2 poles, √3 × line-to-line × A for 3 poles; the reading is the current in one of
      the circuit's lines. On a per-line column, the line's line-to-neutral voltage × A.
    - kW, W: divided by the circuit's power factor; a per-line column, which has none, is taken
      at power factor 1 (said in a notice).
    - kVA, VA: as given.

    Circuits of the panel with no column keep their load (``basis_va``) flat over the horizon,
    named in a notice; a spare's column must hold only zeros. ``tz`` (an IANA name such as
    ``America/Chicago``) says the stamps are that zone's wall clock, so a daylight-saving change
    is neither a gap nor duplicates; stamps with their own UTC offsets need none. See
    :mod:`balancer.intervals.clock` for the clock ``starts`` are shown on, and docs/format.md
    for duplicates, gaps and limits.

    Raises
    ------
    ScheduleError
        For a file too large, unreadable headers, cells or timestamps (each named with its
        file row and column), too many duplicates or too much missing.
    """
    name = path.name
    text = _read_text(path)
    header, separator = _header(text, name)
    layout, problems = _layout(header, panel)
    body, rows, values = _fast_body(text, separator, header, layout, name)
    cell_problems: list[Problem] = []
    if values is None:  # a bad cell somewhere: read again as text to name each one
        body, rows = _kept(_parse(text, separator, header, (), name), text=True)
        values, cell_problems = _values(body, rows, layout)
    if not rows.size:
        raise ScheduleError([*problems, Problem(name, "no readings under the header")], name)
    cell_problems += _spare_problems(values, rows, layout, panel)
    stamps = None
    if layout.stamp_positions:
        try:
            stamps = parse_stamps(_stamp_text(body, layout), rows, layout.stamp_header, tz)
        except ScheduleError as exc:
            problems += exc.problems
    problems += cell_problems
    if problems or stamps is None:
        raise ScheduleError(problems, source=name)
    try:
        timeline = arrange(stamps, rows, values, layout.stamp_header)
    except ScheduleError as exc:
        raise ScheduleError(exc.problems, source=name) from None
    notices = (*layout.notices, *timeline.notices)
    return _series(
        panel, name, layout, timeline.starts, timeline.values, timeline.interval_min, notices
    )


# ------------------------------------------------------------------------------- the file


def _read_text(path: Path) -> str:
    name = path.name
    try:
        size = path.stat().st_size
        if size > MAX_FILE_BYTES:
            raise ScheduleError(
                Problem(
                    name,
                    f"{size / 1024 / 1024:,.1f} MB is more than the "
                    f"{MAX_FILE_BYTES // 1024 // 1024} MB balancer reads from a logger file; "
                    "give a shorter period or fewer columns",
                ),
                source=name,
            )
        data = path.read_bytes()
    except OSError as exc:
        raise ScheduleError(Problem(name, f"cannot be read: {exc}"), source=name) from exc
    rows = data.count(b"\n") + (0 if data.endswith(b"\n") else 1) - 1
    if rows > MAX_ROWS:
        raise ScheduleError(
            Problem(
                name,
                f"{rows:,} rows under the header is more than the {MAX_ROWS:,} balancer reads "
                "(a year of 1-minute readings is 525,600)",
            ),
            source=name,
        )
    try:
        return data.decode("utf-8-sig")
    except UnicodeDecodeError as exc:
        line = data[: exc.start].count(b"\n") + 1
        raise ScheduleError(
            Problem(f"{name}, file row {line}", "not UTF-8 text; save the file as UTF-8 CSV"),
            source=name,
        ) from exc


def _header(text: str, name: str) -> tuple[list[str], str]:
    """The header (as written) and the separator it uses: comma, semicolon or tab."""
    first_line = text.split("\n", 1)[0]
    separator = next((s for s in (",", ";", "\t") if s in first_line), ",")
    header = [h.strip() for h in next(csv.reader([first_line], delimiter=separator), [])]
    if len(header) > MAX_COLUMNS:
        raise ScheduleError(
            Problem(name, f"{len(header)} columns is more than the {MAX_COLUMNS} balancer reads"),
            source=name,
        )
    if len(header) < 2:
        raise ScheduleError(
            Problem(f"{name}, file row 1", "need a timestamp column and at least one load column"),
            source=name,
        )
    return header, separator


def _parse(
    text: str, separator: str, header: list[str], numeric: tuple[int, ...], name: str
) -> pd.DataFrame:
    """The body: the ``numeric`` columns parsed as numbers by the C parser (a cell that is not
    one raises ValueError), every other cell a string, an empty cell missing."""
    dtypes = {k: np.float64 if k in numeric else str for k in range(len(header))}
    try:
        return pd.read_csv(
            StringIO(text),
            sep=separator,
            header=None,
            skiprows=1,
            names=range(len(header)),
            dtype=dtypes,
            keep_default_na=False,
            na_values=[""],
            skip_blank_lines=False,  # keeps file rows countable
            engine="c",
        )
    except pd.errors.ParserError as exc:
        raise ScheduleError(Problem(name, f"not a readable CSV table: {exc}"), source=name) from exc


def _kept(body: pd.DataFrame, text: bool) -> tuple[pd.DataFrame, np.ndarray]:
    """The rows that hold anything, and their file rows (the header is row 1)."""
    kept = np.flatnonzero(body.notna().to_numpy().any(axis=1))
    body = body.iloc[kept]
    if text:
        body = body.fillna("")
    return body, kept + 2


def _fast_body(
    text: str, separator: str, header: list[str], layout: _Layout, name: str
) -> tuple[pd.DataFrame, np.ndarray, np.ndarray | None]:
    """Body, file rows and readings in VA when every reading is a number ≥ 0; readings None
    otherwise."""
    numeric = tuple(c.position for c in layout.columns)
    try:
        body, rows = _kept(_parse(text, separator, header, numeric, name), text=False)
    except ValueError:
        return pd.DataFrame(), np.zeros(0, np.int64), None
    raw = body[list(numeric)].to_numpy(dtype=np.float64)
    if not bool(np.all(np.isfinite(raw))) or bool(np.any(raw < 0)):
        return body, rows, None
    return body, rows, raw * np.array([c.va_per_unit for c in layout.columns])


# ---------------------------------------------------------------------------- the columns


def split_unit(header: str) -> tuple[str, str]:
    """``'12 (kW)'`` → ``('12', 'kw')``; ``'Line A A'`` → ``('Line A', 'a')``; no unit: ``''``.

    Examples
    --------
    >>> split_unit("3 (A)"), split_unit("12 kVA"), split_unit("Line B [kW]"), split_unit("7")
    (('3', 'a'), ('12', 'kva'), ('Line B', 'kw'), ('7', ''))
    """
    found = _BRACKETED.fullmatch(header)
    if found:
        return found.group(1), found.group(2).lower().replace(" ", "")
    found = _TRAILING.fullmatch(header)
    if found:
        return found.group(1), found.group(2).lower()
    return header.strip(), ""


def _key(text: str) -> str:
    return re.sub(r"[^a-z0-9]", "", text.lower())


def _layout(header: list[str], panel: Panel) -> tuple[_Layout, list[Problem]]:
    """The timestamp and value columns, and every header problem (the columns understood are
    still checked cell by cell)."""
    problems: list[Problem] = []
    stamps, stamp_header = _stamp_columns(header, problems)
    by_id = {c.id: c for c in panel.circuits}
    folded = {c.id.casefold(): c for c in panel.circuits}
    lines = {_key(f"{word}{line}"): line for line in "ABC" for word in LINE_WORDS}
    columns: list[_Column] = []
    for position, text in enumerate(header):
        if position in stamps:
            continue
        where = f'file row 1, column "{text}"'
        target, unit = split_unit(text)
        circuit = by_id.get(target) or folded.get(target.casefold())
        line = None if circuit else lines.get(_key(target))
        if circuit is None and line is None:
            # the whole header may name it with no unit ("Line A" is not line "Line" in A)
            target, unit = text.strip(), ""
            circuit = by_id.get(target) or folded.get(target.casefold())
            line = None if circuit else lines.get(_key(target))
        if circuit is None and line is None:
            problems.append(Problem(where, _unknown(split_unit(text)[0], panel)))
            continue
        if unit not in UNITS:
            unit_text = f"unit {unit!r} is not one of" if unit else "no unit: give one of"
            problems.append(Problem(where, f'{unit_text} A, VA, kVA, W, kW, e.g. "{target} (A)"'))
            continue
        if circuit is not None:
            columns.append(_circuit_column(position, text, circuit, unit, panel, where, problems))
        elif line is not None:
            columns.append(_line_column(position, text, line, unit, panel, where, problems))
    _check_targets(columns, panel, problems)
    return _Layout(stamps, stamp_header, tuple(columns), _unit_notices(columns)), problems


def _stamp_columns(header: list[str], problems: list[Problem]) -> tuple[tuple[int, ...], str]:
    keys = [_key(split_unit(h)[0]) for h in header]
    if DATE_HEADER in keys and "time" in keys:
        date, time = keys.index(DATE_HEADER), keys.index("time")
        return (date, time), f"{header[date]} + {header[time]}"
    found = [i for i, k in enumerate(keys) if k in STAMP_HEADERS or k == DATE_HEADER]
    if len(found) == 1:
        return (found[0],), header[found[0]]
    if not found:
        problems.append(
            Problem(
                "file row 1",
                "no timestamp column: head one Time, Timestamp, Date/Time or Interval start "
                "(or give Date and Time columns)",
            )
        )
    else:
        named = ", ".join(f'"{header[i]}"' for i in found)
        problems.append(Problem("file row 1", f"more than one timestamp column: {named}"))
    return (), header[found[0]] if found else "Time"


def _unknown(target: str, panel: Panel) -> str:
    known = [c.id for c in panel.circuits] + list(panel.lines)
    near = get_close_matches(target, known, n=1, cutoff=0.6)
    hint = f'; did you mean "{near[0]}"?' if near else ""
    return (
        f"{target!r} is neither a circuit of panel {panel.name} nor one of its lines "
        f"({', '.join(panel.lines)}){hint}"
    )


def _circuit_column(
    position: int,
    text: str,
    circuit: Circuit,
    unit: str,
    panel: Panel,
    where: str,
    problems: list[Problem],
) -> _Column:
    scale = UNITS[unit]
    if unit == "a":
        voltage = circuit_voltage_v(panel.system, circuit, panel.lines_of(circuit))
        scale = voltage * (math.sqrt(3.0) if circuit.poles == 3 else 1.0)
    elif unit in ("w", "kw"):
        if not 0 < abs(circuit.power_factor) <= 1:
            problems.append(
                Problem(where, f"circuit {circuit.id} has no usable power factor to turn W into VA")
            )
        else:
            scale /= abs(circuit.power_factor)
    return _Column(position, text, circuit.id, False, unit, scale)


def _line_column(
    position: int,
    text: str,
    line: str,
    unit: str,
    panel: Panel,
    where: str,
    problems: list[Problem],
) -> _Column:
    if line not in panel.lines:
        problems.append(Problem(where, f"panel {panel.name} has no line {line}"))
        return _Column(position, text, line, True, unit, 1.0)
    scale = UNITS[unit]
    if unit == "a":
        scale = panel.system.line_to_neutral_v[panel.lines.index(line)]
    return _Column(position, text, line, True, unit, scale)


def _check_targets(columns: list[_Column], panel: Panel, problems: list[Problem]) -> None:
    seen: dict[str, str] = {}
    for column in columns:
        if column.target in seen:
            what = "line" if column.per_line else "circuit"
            problems.append(
                Problem(
                    f'file row 1, column "{column.header}"',
                    f'{what} {column.target} already has column "{seen[column.target]}"',
                )
            )
        seen.setdefault(column.target, column.header)
    per_line = [c.header for c in columns if c.per_line]
    per_circuit = [c.header for c in columns if not c.per_line]
    if per_line and per_circuit:
        problems.append(
            Problem(
                "file row 1",
                f"the file mixes per-circuit columns ({', '.join(per_circuit[:3])}) and per-line "
                f"columns ({', '.join(per_line[:3])}): give one or the other",
            )
        )
    elif per_line:
        for line in panel.lines:
            if line not in seen:
                problems.append(Problem("file row 1", f"no column for line {line}"))


def _unit_notices(columns: list[_Column]) -> tuple[str, ...]:
    units = {c.unit for c in columns}
    notes = []
    per_line = any(c.per_line for c in columns)
    if "a" in units:
        notes.append(
            "amperes turned into VA with each line's line-to-neutral voltage"
            if per_line
            else "amperes turned into VA with each circuit's voltage (line-to-neutral × A for "
            "1 pole, line-to-line × A for 2, √3 × line-to-line × A for 3)"
        )
    if units & {"w", "kw"}:
        notes.append(
            "watts turned into VA: per-line columns taken at power factor 1 (VA may be "
            "understated; log kVA or A where you can)"
            if per_line
            else "watts turned into VA by dividing by each circuit's power factor"
        )
    return tuple(notes)


# ------------------------------------------------------------------------------ the cells


def _values(
    body: pd.DataFrame, rows: np.ndarray, layout: _Layout
) -> tuple[np.ndarray, list[Problem]]:
    """Readings in VA from a body read as text, and every bad cell as a problem."""
    columns = layout.columns
    values = np.zeros((len(body), len(columns)))
    bad: list[tuple[int, int]] = []  # (row index, column index)
    for k, column in enumerate(columns):
        numbers = pd.to_numeric(body[column.position], errors="coerce").to_numpy(dtype=np.float64)
        wrong = ~np.isfinite(numbers) | (numbers < 0)
        bad += [(int(i), k) for i in np.flatnonzero(wrong)]
        values[:, k] = np.where(wrong, 0.0, numbers) * column.va_per_unit
    problems = []
    for i, k in sorted(bad)[:LISTED_CELLS]:
        cell = str(body.iat[i, columns[k].position]).strip()
        problems.append(
            Problem(f'file row {rows[i]}, column "{columns[k].header}"', _bad_cell(cell))
        )
    if len(bad) > LISTED_CELLS:
        problems.append(Problem("", f"… and {len(bad) - LISTED_CELLS} more bad cells"))
    return values, problems


def _spare_problems(
    values: np.ndarray, rows: np.ndarray, layout: _Layout, panel: Panel
) -> list[Problem]:
    spares = {c.id for c in panel.circuits if c.is_spare}
    problems = []
    for k, column in enumerate(layout.columns):
        nonzero = np.flatnonzero(values[:, k] > 0)
        if column.target in spares and not column.per_line and nonzero.size:
            problems.append(
                Problem(
                    f'file row {rows[nonzero[0]]}, column "{column.header}"',
                    f"circuit {column.target} is a spare; its column may hold only zeros "
                    f"({nonzero.size} reading(s) are not)",
                )
            )
    return problems


def _bad_cell(cell: str) -> str:
    if not cell:
        return "empty: every interval needs a reading"
    number = pd.to_numeric(pd.Series([cell]), errors="coerce").iloc[0]
    if math.isnan(number):
        return f"{cell!r} is not a number" if cell.lower() != "nan" else "NaN is not a reading"
    if math.isinf(number):
        return f"{cell!r} is not a finite number"
    return f"{cell!r} is negative; a reading is 0 or more"


def _stamp_text(body: pd.DataFrame, layout: _Layout) -> pd.Series:
    if len(layout.stamp_positions) == 2:
        date, time = (body[p].fillna("").str.strip() for p in layout.stamp_positions)
        time = time.str.replace(r"^(\d):", r"0\1:", regex=True)  # 7:15 → 07:15
        return date + " " + time
    return body[layout.stamp_positions[0]].fillna("")


def _series(
    panel: Panel,
    name: str,
    layout: _Layout,
    starts: np.ndarray,
    values: np.ndarray,
    interval_min: int,
    notices: tuple[str, ...],
) -> LoadSeries:
    if layout.per_line:
        of_line = {c.target: k for k, c in enumerate(layout.columns)}
        per_line = np.ascontiguousarray(values[:, [of_line[line] for line in panel.lines]])
        empty = np.zeros((starts.size, 0))
        return LoadSeries(name, "measured", starts, interval_min, (), empty, per_line, notices)
    given = {c.target: k for k, c in enumerate(layout.columns)}
    va = np.empty((starts.size, len(panel.circuits)))
    flat = []
    for j, circuit in enumerate(panel.circuits):
        if circuit.id in given:
            va[:, j] = values[:, given[circuit.id]]
        else:
            va[:, j] = circuit.basis_va
            if circuit.basis_va > 0:
                flat.append(f"{circuit.id} ({circuit.basis_va:,.0f} VA)")
    if flat:
        notices = (
            *notices,
            f"{len(flat)} circuit(s) with load have no column and keep their one load figure "
            f"(the schedule's, or a reading under a measured load basis) flat over the "
            f"horizon: {', '.join(flat)}",
        )
    ids = tuple(c.id for c in panel.circuits)
    return LoadSeries(name, "measured", starts, interval_min, ids, va, None, notices)

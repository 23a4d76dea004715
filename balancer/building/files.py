"""Building files: reading a building (an index of panels and feeds) and writing it back.

A building is read from a workbook with a ``Building`` index sheet and one sheet per panel, or
from an index file (``building.xlsx``/``building.csv``, or the folder holding it) whose
``Schedule`` column names one schedule file per panel. :func:`write_building_schedules` writes a
building in the first form, so a revised building can be read again.
"""

from __future__ import annotations

import csv
import difflib
import math
from collections.abc import Iterable, Mapping
from dataclasses import dataclass
from pathlib import Path
from typing import TYPE_CHECKING

from openpyxl.utils import get_column_letter

from balancer.building.tree import MAX_LEVELS, Building, Feed, deepest, make_building
from balancer.domain.panel import Panel
from balancer.domain.systems import System
from balancer.errors import Problem, ScheduleError
from balancer.physics.transformer import Transformer, make_transformer

if TYPE_CHECKING:
    from openpyxl import Workbook

INDEX_SHEET = "Building"
INDEX_FILES = ("building.xlsx", "building.csv")
MAX_INDEX_ROWS = 5000  # one row per panel
# column key → accepted spellings (compared lower-case with spaces and punctuation removed)
INDEX_COLUMNS: dict[str, tuple[str, ...]] = {
    "panel": ("panel", "panelname", "name"),
    "schedule": ("schedule", "sheet", "file", "schedulefile"),
    "fed_from": ("fedfrom", "source", "upstream", "suppliedfrom", "feedingpanel"),
    "circuit": ("feedercircuit", "circuit", "feeder", "viacircuit", "ckt"),
    "transformer": ("transformer", "xfmr", "transformername"),
    "kva": ("kva", "transformerkva", "ratingkva"),
    "connection": ("connection", "transformerconnection", "winding", "windings"),
    "swapped": ("linesswapped", "swapped", "swaplines"),
}


def _norm(text: object) -> str:
    return "".join(ch for ch in str(text).lower() if ch.isalnum())


def _cell_text(value: object) -> str:
    from balancer.io.reader import CONTROL_CHARACTERS

    if value is None:
        return ""
    if isinstance(value, float) and value.is_integer():
        return str(int(value))
    # a panel name becomes a sheet name and a title: no control characters in a workbook
    return CONTROL_CHARACTERS.sub("", str(value)).strip()


def _index_rows(path: Path) -> tuple[str, list[list[object]]]:
    """(sheet or file name used in messages, rows of cell values) of a building index."""
    from balancer.io.reader import decode_text, open_xlsx, sheet_rows

    rows: list[list[object]]
    if path.suffix.lower() == ".csv":
        # no notice reaches the user from here, so an index in another code page is refused
        text, _ = decode_text(path.read_bytes(), path.name, fallback=False)
        reader = csv.reader(text.splitlines())
        place, rows = path.name, []
        try:
            for row, _ in zip(reader, range(MAX_INDEX_ROWS + 1), strict=False):
                rows.append(list(row))
        except csv.Error as exc:
            raise ScheduleError(Problem(f"{path.name} line {reader.line_num}", str(exc))) from exc
        cut = len(rows) > MAX_INDEX_ROWS
    else:
        with open_xlsx(path) as (book, _, _notes):  # the panels' reading says them
            names = book.sheetnames
            sheet = next((n for n in names if _norm(n) == _norm(INDEX_SHEET)), None)
            if sheet is None:
                raise ScheduleError(
                    Problem(
                        str(path), f"no sheet named '{INDEX_SHEET}' saying which panel feeds which"
                    )
                )
            cells, notice = sheet_rows(book[sheet], MAX_INDEX_ROWS)
            place, rows, cut = sheet, [list(r) for r in cells], notice is not None
    if cut:  # a panel left out would change every figure upstream of it
        raise ScheduleError(
            Problem(place, f"the index is longer than the {MAX_INDEX_ROWS:,} rows balancer reads")
        )
    return place, rows


@dataclass(frozen=True, slots=True)
class _IndexRow:
    cells: dict[str, str]
    where: dict[str, str]


def _parse_index(place: str, rows: list[list[object]]) -> list[_IndexRow]:
    spelled = {s: key for key, spellings in INDEX_COLUMNS.items() for s in spellings}
    for r, row in enumerate(rows[:20]):  # noqa: B007 (r is the header row after the loop)
        columns = {c: spelled[_norm(v)] for c, v in enumerate(row) if _norm(v) in spelled}
        if "panel" in columns.values():
            break
    else:
        raise ScheduleError(
            Problem(place, "no header row with a 'Panel' column found in the first 20 rows")
        )
    problems = []
    for c, v in enumerate(row):
        if _cell_text(v) and c not in columns:
            near = difflib.get_close_matches(_norm(v), list(spelled), n=1)
            hint = f" (did you mean '{near[0]}'?)" if near else ""
            problems.append(
                Problem(
                    f"{place}!{get_column_letter(c + 1)}{r + 1}",
                    f"column '{v}' is not one balancer reads{hint}",
                )
            )
    if problems:
        raise ScheduleError(problems)
    out = []
    for rr in range(r + 1, len(rows)):
        values = rows[rr]
        cells = {
            key: _cell_text(values[c]) if c < len(values) else "" for c, key in columns.items()
        }
        if not any(cells.values()):
            continue
        where = {key: f"{place}!{get_column_letter(c + 1)}{rr + 1}" for c, key in columns.items()}
        out.append(_IndexRow(cells, where))
    return out


def index_file(path: str | Path) -> Path:
    """The building's index: ``path`` itself, or the index file in the folder ``path``.

    Raises
    ------
    ScheduleError
        When there is no such file, or the folder holds no index file.
    """
    path = Path(path)
    if path.is_dir():
        found = [path / n for n in INDEX_FILES if (path / n).is_file()]
        # a folder holding one building workbook (a Building sheet and a sheet per panel)
        found = found or [p for p in sorted(path.glob("*.xlsx")) if _has_building_sheet(p)]
        if len(found) != 1:
            what = "more than one building workbook" if found else "no building index"
            raise ScheduleError(
                Problem(
                    str(path),
                    f"the folder holds {what}: name the file, or keep one "
                    f"{' or '.join(INDEX_FILES)} (or one workbook with a 'Building' sheet)",
                )
            )
        path = found[0]
    if not path.is_file():
        raise ScheduleError(Problem(str(path), "no such file"))
    return path


def _has_building_sheet(path: Path) -> bool:
    """Whether a workbook has the index sheet :func:`read_building` looks for, read the same
    guarded way as every workbook (a damaged or crafted file simply does not count)."""
    from balancer.io.reader import open_xlsx

    try:
        with open_xlsx(path) as (book, _, _notes):
            return any(_norm(n) == _norm(INDEX_SHEET) for n in book.sheetnames)
    except ScheduleError:
        return False


def read_building(path: str | Path) -> Building:
    """Read a building: a workbook with a ``Building`` index sheet and one sheet per panel, or
    an index file (``.csv``/``.xlsx``, or a folder holding ``building.xlsx``/``building.csv``)
    whose ``Schedule`` column names one schedule file per panel, relative to the index.

    Every problem in the index and its panels is gathered before one refusal, then every
    problem in its feeds.

    Raises
    ------
    ScheduleError
        With every problem in the index and in every panel's schedule, each with its place.
    """
    path = index_file(path)
    place, rows = _index_rows(path)
    entries = _parse_index(place, rows)
    problems: list[Problem] = []
    if not entries:
        raise ScheduleError(Problem(place, "the index lists no panels"), str(path))
    _refuse_too_deep(entries, path)
    for e in entries:
        if not e.cells["panel"]:
            problems.append(Problem(e.where["panel"], "a row with no panel name"))
    panels = _read_panels(path, place, entries, problems)
    if problems:
        raise ScheduleError(problems, str(path))
    systems = {p.name: p.system for p in panels}
    feeds = [
        feed for entry in entries if (feed := _feed(entry, systems, place, problems)) is not None
    ]
    if problems:
        raise ScheduleError(problems, str(path))
    return make_building(path.stem, panels, feeds)


def _refuse_too_deep(entries: list[_IndexRow], path: Path) -> None:
    """Refuse a tree deeper than MAX_LEVELS, before any schedule is read: a crafted index
    2,000 panels deep would take long."""
    fed = {e.cells["panel"]: e for e in entries if e.cells.get("fed_from")}
    deep, level = deepest({name: e.cells["fed_from"] for name, e in fed.items()})
    if level > MAX_LEVELS:
        raise ScheduleError(
            Problem(
                fed[deep].where["fed_from"],
                f"panel '{deep}' is {level:,} levels down from its service; balancer takes "
                f"buildings of at most {MAX_LEVELS} levels",
            ),
            str(path),
        )


def _read_panels(
    path: Path, place: str, entries: list[_IndexRow], problems: list[Problem]
) -> list[Panel]:
    """Every panel the index lists, from the index workbook's sheets or from the schedule files
    it names; the problems of each added to ``problems``."""
    from balancer.io.reader import PanelOverrides, read_schedule, read_workbook_sheets

    names = [e.cells["panel"] for e in entries]
    schedules = [e.cells.get("schedule") or e.cells["panel"] for e in entries]
    overrides = [PanelOverrides(name=n) for n in names]
    panels: list[Panel] = []
    # an .xlsx index whose Schedule entries are not file names holds the panels on its sheets
    in_workbook = path.suffix.lower() != ".csv" and not any(Path(s).suffix for s in schedules)
    if in_workbook:
        try:
            panels = read_workbook_sheets(path, schedules, overrides)
        except ScheduleError as exc:
            problems += exc.problems
        return panels
    for entry, schedule, given in zip(entries, schedules, overrides, strict=True):
        try:
            panels.append(read_schedule(path.parent / schedule, given))
        except ScheduleError as exc:
            problems += [
                Problem(p.where or entry.where.get("schedule", place), p.what) for p in exc.problems
            ]
    return panels


def _feed(
    entry: _IndexRow, systems: Mapping[str, System], place: str, problems: list[Problem]
) -> Feed | None:
    """The feed an index row gives (None for a service), or None with its problems added."""
    source = entry.cells.get("fed_from", "")
    if not source:
        return None
    circuit = entry.cells.get("circuit", "")
    where = entry.where.get("fed_from", place)
    if not circuit:
        problems.append(
            Problem(
                entry.where.get("circuit", where),
                f"panel '{entry.cells['panel']}' is fed from '{source}' but no feeder "
                "circuit is given",
            )
        )
        return None
    transformer = None
    if (entry.cells.get("kva") or entry.cells.get("connection")) and source in systems:
        try:
            transformer = _feed_transformer(entry, systems[source], systems, where)
        except ScheduleError as exc:
            problems += exc.problems
            return None
    swapped = entry.cells.get("swapped", "").lower() in ("yes", "y", "true", "1", "x")
    return Feed(entry.cells["panel"], source, circuit, transformer, swapped, where)


def _feed_transformer(
    entry: _IndexRow, primary: System, systems: Mapping[str, System], where: str
) -> Transformer:
    """The transformer between a feed's source and its panel; ScheduleError when refused."""
    try:
        kva = float(entry.cells.get("kva") or "nan")
    except ValueError:
        kva = math.nan
    return make_transformer(
        entry.cells.get("transformer", ""),
        kva,
        primary,
        systems[entry.cells["panel"]],
        entry.cells.get("connection", ""),
        entry.where.get("connection", where),
    )


# ---------------------------------------------------------------- writing a building

_SHEET_FORBIDDEN = set("[]:*?/\\.")  # Excel's forbidden characters, and '.' (read as a suffix)


def panel_sheet_names(building: Building, taken: Iterable[str] = ()) -> dict[str, str]:
    """A sheet name for every panel: its own name where Excel allows it and no other sheet of
    the workbook (``taken``, compared ignoring case) has it, else an adjusted one."""
    used = {t.lower() for t in taken} | {INDEX_SHEET.lower()}
    out: dict[str, str] = {}
    for panel in building.panels:
        base = "".join("-" if ch in _SHEET_FORBIDDEN else ch for ch in panel.name).strip("'")
        base = base[:31] or "panel"
        name, n = base, 1
        while name.lower() in used:
            n += 1
            suffix = f" ({n})"
            name = base[: 31 - len(suffix)] + suffix
        used.add(name.lower())
        out[panel.name] = name
    return out


def _index_rows_of(building: Building, sheets: Mapping[str, str]) -> list[list[object]]:
    header: list[object] = ["Panel", "Schedule", "Fed from", "Feeder circuit", "Transformer", "kVA"]
    header += ["Connection", "Lines swapped"]
    rows: list[list[object]] = [header]
    for panel in building.panels:
        feed = building.feed_of(panel.name)
        if feed is None:
            rows.append([panel.name, sheets[panel.name], None, None, None, None, None, None])
            continue
        number = building.feeder_number(feed)
        t = feed.transformer
        rows.append(
            [
                panel.name,
                sheets[panel.name],
                feed.source,
                int(number) if number.isdigit() else number,
                (t.name or None) if t else None,
                t.kva if t else None,
                t.connection if t else None,
                "yes" if feed.swapped else None,
            ]
        )
    return rows


def write_building_sheets(
    book: Workbook,
    building: Building,
    title: str,
    shaded: Mapping[str, frozenset[str]] | None = None,
    was: Building | None = None,
) -> dict[str, str]:
    """Add to ``book`` a ``Building`` index sheet and one schedule sheet per panel, in the form
    :func:`read_building` reads, so the workbook can be read again as a building.

    Each panel sheet holds the panel's attributes in title rows and its circuits in space
    order; the circuits of ``shaded[panel]`` (ids) are filled. With ``was`` (the building as
    found), a feeder breaker that moved is named by its new number and its old one. Returns
    panel → sheet name.
    """
    from openpyxl.styles import Alignment, Font

    from balancer.io.writer import panel_title_rows, print_setup, write_circuit_table

    sheets = panel_sheet_names(building, book.sheetnames)
    index = book.create_sheet(INDEX_SHEET)
    index.append([title])
    index["A1"].font = Font(bold=True, size=12)
    index.append(["Each panel's schedule is on the sheet named in the Schedule column."])
    for row in _index_rows_of(building, sheets):
        index.append(row)
    for cell in index[3]:
        cell.font = Font(bold=True)
    for col, width in zip("ABCDEFGH", (14, 16, 12, 14, 14, 8, 14, 13), strict=True):
        index.column_dimensions[col].width = width
    print_setup(index, landscape=False, title_rows=None)
    shaded = shaded or {}
    for panel in building.panels:
        ws = book.create_sheet(sheets[panel.name])
        facts = panel_title_rows(panel)
        for label, value in facts:
            ws.append([label, value])
            ws.cell(row=ws.max_row, column=1).font = Font(bold=True)
            ws.cell(row=ws.max_row, column=2).alignment = Alignment(horizontal="left")
        feed = building.feed_of(panel.name)
        if feed is not None:
            ws.append([f"Fed from {building.feeder_text(feed, was=was)}"])
        if panel.system.high_leg:
            ws.append([panel.system.high_leg_note()])
        marked = shaded.get(panel.name, frozenset())
        if marked:
            ws.append(["Shaded rows: breakers that move (see the Work order sheet)."])
        ordered = sorted(panel.circuits, key=lambda c: (not c.placed, c.first_space or 0, c.id))
        table_panel = panel.with_circuits(ordered)
        header_row = ws.max_row + 2
        write_circuit_table(ws, table_panel, header_row, marked)
        # the title block's labels are longer than the table's first column: never cut them
        longest = max((len(str(label)) for label, _ in facts), default=0)
        column = ws.column_dimensions["A"]
        column.width = max(column.width or 10, longest * 1.15 + 2)
        ws.freeze_panes = ws.cell(row=header_row + 1, column=3)
        print_setup(ws, landscape=True, title_rows=f"{header_row}:{header_row}")
    return sheets

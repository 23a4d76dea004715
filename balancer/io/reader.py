"""Read a panel schedule (.xlsx or .csv) into a :class:`~balancer.domain.panel.Panel`.

Every problem is collected with its place (``Circuits!E14``) and reported at once as a
:class:`~balancer.errors.ScheduleError`; the input file is only ever opened for reading.
"""

from __future__ import annotations

import csv
import datetime
import difflib
import io
import math
import re
import warnings
import zipfile
import zlib
from collections.abc import Callable, Iterator, Sequence
from contextlib import contextmanager
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from defusedxml import DefusedXmlException
from defusedxml.ElementTree import fromstring as parse_xml
from openpyxl import load_workbook
from openpyxl.utils import get_column_letter
from openpyxl.utils.exceptions import InvalidFileException

from balancer.code.feeder import parse_conductor
from balancer.domain.panel import (
    SPARE,
    Circuit,
    Conductor,
    Geometry,
    LineReadings,
    Panel,
    PanelHeader,
    smallest_space_count,
)
from balancer.domain.systems import System, check_connection, find_system, known_designations
from balancer.errors import Problem, ScheduleError
from balancer.io.columns import (
    BY_KEY,
    PANEL_BY_KEY,
    ColumnSpec,
    all_spellings,
    match,
    normalise,
    panel_key,
)
from balancer.physics.harmonics import builtin_profiles, find_profile

DEFAULT_SYSTEM = "208Y/120"
HEADER_SEARCH_ROWS = 40

# Bounds on what is read (docs/format.md, "Limits"): a schedule is small, so anything far past
# these is a damaged or crafted file, refused or cut off before it can take minutes or memory.
MAX_ROWS = 1000  # rows of a sheet or CSV read; a panel schedule has a few hundred at most
MAX_COLUMNS = 64
MAX_TEXT_CHARS = 32_767  # what a spreadsheet cell holds
MAX_CSV_BYTES = 16 * 2**20
MAX_PART_BYTES = 32 * 2**20  # one part of an .xlsx unpacked (a sheet, the shared strings)
MAX_WORKBOOK_BYTES = 128 * 2**20  # all parts unpacked
MAX_SPACES = 200
MAX_LOAD_VA = 10e6  # no branch circuit carries 10 MVA
MAX_CURRENT_A = 10_000.0
MAX_VOLTAGE_V = 1_000.0
MAX_RECEPTACLES = 1_000.0
_LIMITS: dict[str, tuple[float, str, str]] = {  # key: (bound, unit, what it bounds)
    **{
        key: (MAX_LOAD_VA, "VA", "one branch circuit (10 MVA)")
        for key in ("load_va", "load_kva", "phase_a", "phase_b", "phase_c", "neutral_va")
    },
    "trip_a": (MAX_CURRENT_A, "A", "a breaker"),
    **{
        key: (MAX_CURRENT_A, "A", "a branch circuit")
        for key in ("measured_a", "measured_line_a", "measured_line_b", "measured_line_c")
    },
    "voltage_v": (MAX_VOLTAGE_V, "V", "a panelboard circuit"),
    "yokes": (MAX_RECEPTACLES, "", "one branch circuit"),
}
# C0 and C1 control characters other than tab and line breaks, and the two non-characters:
# XML cannot hold them (the workbook would not save) and a terminal would act on them.
CONTROL_CHARACTERS = re.compile("[\x00-\x08\x0b\x0c\x0e-\x1f\x7f-\x9f\ufffe\uffff]")
_TOTAL = re.compile(r"\b(sub-?)?totals?\b", re.IGNORECASE)
_SPARE = re.compile(r"^\s*spare\b", re.IGNORECASE)
_SPACE = re.compile(r"^\s*(space|spc|blank|provision|future space)\s*$", re.IGNORECASE)
_TRUE = {"yes", "y", "true", "1", "x", "locked", "fixed", "keep", "continuous", "c", "critical"}
_FALSE = {"no", "n", "false", "0", "", "-"}
_NUMBER = re.compile(
    r"^\s*(?P<num>[-+]?(\d{1,3}(,\d{3})+|\d+)(\.\d+)?|[-+]?\.\d+)\s*(?P<unit>[a-z%]*)\s*$",
    re.IGNORECASE,
)


@dataclass(frozen=True, slots=True)
class PanelOverrides:
    """Panel attributes given on the command line; they win over the schedule's own."""

    name: str | None = None
    system: str | None = None
    spaces: int | None = None
    bus_a: float | None = None
    main: str | None = None


@dataclass(slots=True)
class _Grid:
    """A sheet as a rectangle of cell values, with the names used in messages."""

    sheet: str
    rows: list[list[Any]]
    formulas: dict[tuple[int, int], str] = field(default_factory=dict)  # (row, col) 0-based
    notices: list[str] = field(default_factory=list)  # about reading the file itself

    def where(self, row: int, col: int) -> str:
        return f"{self.sheet}!{get_column_letter(col + 1)}{row + 1}"


# ---------------------------------------------------------------- file → grids


def _read_xlsx(path: Path) -> tuple[_Grid, _Grid | None]:
    with open_xlsx(path) as (values, formulas, notes):
        names = [sheet.title for sheet in values.worksheets]  # not chart sheets
        if not names:
            raise _not_workbook(path, "it holds no worksheet")
        circuits_name = _pick_sheet(names, ("circuits", "circuit", "schedule", "branchcircuits"))
        panel_name = _pick_sheet(names, ("panel", "panelinfo", "paneldata"))
        if circuits_name is None:
            circuits_name = next((n for n in names if n != panel_name), names[0])
        circuits = _grid_from_sheet(values[circuits_name], formulas[circuits_name])
        panel = None
        if panel_name is not None and panel_name != circuits_name:
            panel = _grid_from_sheet(values[panel_name], formulas[panel_name])
    circuits.notices += notes
    return circuits, panel


def _not_workbook(path: Path, why: object) -> ScheduleError:
    hint = " (an old .xls file? save it as .xlsx)" if path.suffix.lower() == ".xls" else ""
    reason = (str(why).splitlines() or [type(why).__name__])[0]  # openpyxl's run on for lines
    return ScheduleError(
        Problem(str(path), f"is not a readable Excel workbook (.xlsx){hint}: {reason}")
    )


def _check_archive(path: Path, raw: bytes) -> None:
    """Refuse a workbook before openpyxl parses it: parts that unpack past the limits (a zip
    bomb), damaged parts, and XML with a DTD, which a workbook never has and which can expand
    entities without bound or read other files."""
    try:
        with zipfile.ZipFile(io.BytesIO(raw)) as archive:
            parts = archive.infolist()
            total = 0
            for info in parts:
                total += info.file_size
                if info.file_size > MAX_PART_BYTES or total > MAX_WORKBOOK_BYTES:
                    raise _not_workbook(
                        path,
                        f"part {info.filename} unpacks to {info.file_size / 2**20:,.0f} MB "
                        f"(at most {MAX_PART_BYTES / 2**20:.0f} MB a part and "
                        f"{MAX_WORKBOOK_BYTES / 2**20:.0f} MB in all are read)",
                    )
            for info in parts:
                try:
                    data = archive.read(info)  # unpacks at most file_size bytes, checks the CRC
                except (zipfile.BadZipFile, zlib.error, EOFError, ValueError, RuntimeError) as exc:
                    # ValueError: an offset before the file's start; RuntimeError: encrypted,
                    # or (NotImplementedError) packed by a method zipfile lacks
                    raise _not_workbook(path, f"part {info.filename} is damaged ({exc})") from exc
                if _looks_like_xml(data) and (b"<!DOCTYPE" in data or b"<!ENTITY" in data):
                    raise _not_workbook(
                        path,
                        f"part {info.filename} declares XML entities (a DTD); refused, as a "
                        "workbook never needs them",
                    )
    except (zipfile.BadZipFile, ValueError, EOFError) as exc:  # the zip's directory is damaged
        raise _not_workbook(path, exc) from exc


def _looks_like_xml(data: bytes) -> bool:
    """A part openpyxl may parse as XML, whatever its name (images and VBA are not)."""
    return data.lstrip(b"\xef\xbb\xbf \t\r\n")[:1] == b"<" or data[:2] in (b"\xff\xfe", b"\xfe\xff")


def _damaged_part(raw: bytes) -> str | None:
    """The first XML part that does not parse, and why: named in the message when openpyxl
    could not read the workbook (its own errors do not say which part)."""
    with zipfile.ZipFile(io.BytesIO(raw)) as archive:
        for info in archive.infolist():
            data = archive.read(info)
            if not _looks_like_xml(data):
                continue
            try:
                parse_xml(data)
            except DefusedXmlException:
                return f"part {info.filename} declares XML entities; refused"
            except SyntaxError as exc:  # xml.etree.ElementTree.ParseError
                return f"part {info.filename} is not well-formed XML ({exc})"
    return None


@contextmanager
def open_xlsx(path: Path) -> Iterator[tuple[Any, Any, list[str]]]:
    """The workbook twice, read-only: saved values and formulas. Read-only streams the sheets,
    so the rows read can be bounded, and never expands merged ranges cell by cell.

    The third item is filled when the block ends: what openpyxl warned of while reading (a part
    it drops, an odd attribute), as notices rather than stray warnings on the terminal.
    """
    size = path.stat().st_size
    if size > MAX_WORKBOOK_BYTES:
        raise _not_workbook(path, f"the file is {size / 2**20:,.0f} MB")
    # read once, parsed from memory: openpyxl leaves its file open when a part fails to parse
    raw = path.read_bytes()
    _check_archive(path, raw)
    books: list[Any] = []
    notes: list[str] = []
    try:
        with warnings.catch_warnings(record=True) as caught:
            warnings.simplefilter("always")
            books.append(load_workbook(io.BytesIO(raw), read_only=True, data_only=True))
            books.append(load_workbook(io.BytesIO(raw), read_only=True, data_only=False))
            yield books[0], books[1], notes
        said = dict.fromkeys(str(w.message).splitlines()[0] for w in caught if str(w.message))
        notes += [f"{path.name}: {text}" for text in said]
    except ScheduleError:
        raise
    except (InvalidFileException, KeyError, OSError, ValueError, TypeError, SyntaxError) as exc:
        # openpyxl on a malformed part; ParseError is a SyntaxError
        raise _not_workbook(path, _damaged_part(raw) or exc) from exc
    finally:
        for book in books:
            book.close()


def _pick_sheet(names: Sequence[str], wanted: Sequence[str]) -> str | None:
    for name in names:
        if normalise(name)[0] in wanted:
            return name
    return None


def sheet_rows(sheet: Any, max_rows: int = MAX_ROWS) -> tuple[list[list[Any]], str | None]:
    """At most ``max_rows`` rows of MAX_COLUMNS cells (trailing blanks dropped), and a notice when
    the sheet's used range reaches further. A cell far out (XFD1048576) makes the used range
    huge; reading it whole would take minutes for nothing."""
    rows: list[list[Any]] = []
    where = f"{sheet.title} row 1"
    try:
        for values in sheet.iter_rows(max_row=max_rows, max_col=MAX_COLUMNS, values_only=True):
            row = list(values)
            while row and row[-1] is None:
                row.pop()
            rows.append(row)
            where = f"{sheet.title} row {len(rows) + 1}"
    except SyntaxError as exc:  # ParseError: its line and column are in the sheet's part
        raise ScheduleError(Problem(sheet.title, f"the sheet's XML is damaged ({exc})")) from exc
    except (KeyError, ValueError, TypeError, OSError, zlib.error) as exc:
        # a cell openpyxl cannot take (a number 'NaN'), found while the sheet streams
        raise ScheduleError(Problem(where, f"a cell cannot be read ({exc})")) from exc
    while rows and not rows[-1]:
        rows.pop()
    last_row, last_col = sheet.max_row or 0, sheet.max_column or 0
    if last_row <= max_rows and last_col <= MAX_COLUMNS:
        return rows, None
    return rows, (
        f"{sheet.title}: the used range reaches {get_column_letter(min(last_col, 16384))}"
        f"{last_row}; only rows 1 to {max_rows} and columns A to "
        f"{get_column_letter(MAX_COLUMNS)} were read"
    )


def _grid_from_sheet(values: Any, formulas: Any) -> _Grid:
    rows, notice = sheet_rows(values)
    found: dict[tuple[int, int], str] = {}
    for r, row in enumerate(sheet_rows(formulas)[0]):
        for c, value in enumerate(row):
            if isinstance(value, str) and value.startswith("="):
                found[(r, c)] = value
    return _Grid(values.title, rows, found, [notice] if notice else [])


def decode_text(raw: bytes, name: str, *, fallback: bool = True) -> tuple[str, str | None]:
    """(text, notice) of a text file: UTF-8, else (with ``fallback``) Windows-1252 with a notice
    saying so; refused, naming the line and the byte, when neither fits."""
    try:
        return raw.decode("utf-8-sig"), None
    except UnicodeDecodeError as exc:
        first = exc.start
    line = raw.count(b"\n", 0, first) + 1
    save_as = "save it as UTF-8 (CSV UTF-8 in a spreadsheet program)"
    if fallback:
        try:
            text = raw.decode("cp1252")
        except UnicodeDecodeError as exc:
            bad_line = raw.count(b"\n", 0, exc.start) + 1
            raise ScheduleError(
                Problem(
                    f"{name} line {bad_line}",
                    f"byte 0x{raw[exc.start]:02X} is neither UTF-8 nor Windows-1252 text; "
                    f"{save_as}",
                )
            ) from exc
        return text, (
            f"{name}: not UTF-8 text (line {line}); read as Windows-1252, so check accented "
            f"letters and symbols, or {save_as}"
        )
    raise ScheduleError(
        Problem(f"{name} line {line}", f"byte 0x{raw[first]:02X} is not UTF-8 text; {save_as}")
    )


def _read_csv(path: Path) -> _Grid:
    size = path.stat().st_size
    if size > MAX_CSV_BYTES:
        raise ScheduleError(
            Problem(
                str(path),
                f"the file is {size / 2**20:,.0f} MB; a schedule CSV of more than "
                f"{MAX_CSV_BYTES / 2**20:.0f} MB is not read",
            )
        )
    raw = path.read_bytes()
    if b"\x00" in raw[:4096]:
        raise ScheduleError(Problem(str(path), "is not a text CSV file (it holds binary data)"))
    text, notice = decode_text(raw, path.name)
    try:
        dialect: Any = csv.Sniffer().sniff(text[:4096], delimiters=",;\t")
    except csv.Error:
        dialect = csv.excel
    notices = [notice] if notice else []
    rows: list[list[Any]] = []
    reader = csv.reader(text.splitlines(), dialect)
    try:
        for cells in reader:
            if len(rows) == MAX_ROWS:
                notices.append(f"{path.name}: only the first {MAX_ROWS} rows were read")
                break
            if len(cells) > MAX_COLUMNS:
                cells = cells[:MAX_COLUMNS]
                if not any("columns" in n for n in notices):
                    notices.append(
                        f"{path.name}: only columns A to {get_column_letter(MAX_COLUMNS)} were read"
                    )
            rows.append([c if c.strip() else None for c in cells])
    except csv.Error as exc:  # a field longer than the csv module takes (128 K characters)
        raise ScheduleError(Problem(f"{path.name} line {reader.line_num}", str(exc))) from exc
    return _Grid(path.name, rows, notices=notices)


def _clean_text(grid: _Grid) -> list[Problem]:
    """Every text cell within MAX_TEXT_CHARS and without control characters (removed, with a
    notice); the problems of cells too long to read."""
    problems = []
    cleaned = []
    for r, row in enumerate(grid.rows):
        for c, value in enumerate(row):
            if not isinstance(value, str):
                continue
            if len(value) > MAX_TEXT_CHARS:
                problems.append(
                    Problem(
                        grid.where(r, c),
                        f"text of {len(value):,} characters; a cell holds at most "
                        f"{MAX_TEXT_CHARS:,}",
                    )
                )
                row[c] = None
            elif CONTROL_CHARACTERS.search(value):
                row[c] = CONTROL_CHARACTERS.sub("", value)
                cleaned.append(grid.where(r, c))
    if cleaned:
        more = f" and {len(cleaned) - 1} more" if len(cleaned) > 1 else ""
        grid.notices.append(f"{cleaned[0]}{more}: removed control characters from the text")
    grid.formulas = {k: _shown(CONTROL_CHARACTERS.sub("", v), 80) for k, v in grid.formulas.items()}
    return problems


def _shown(text: str, width: int = 40) -> str:
    """``text`` cut to ``width`` characters for a message."""
    return text if len(text) <= width else text[: width - 1] + "…"


# ---------------------------------------------------------------- helpers


def _text(value: Any) -> str:
    if value is None:
        return ""
    if isinstance(value, float) and value.is_integer():
        return str(int(value))
    return str(value).strip()


def _number(value: Any) -> tuple[float | None, str]:
    """(number, unit suffix) of a cell; (None, '') when blank; ValueError when not a number."""
    if value is None or (isinstance(value, str) and not value.strip()):
        return None, ""
    if isinstance(value, bool):
        raise ValueError
    if isinstance(value, int | float):
        return float(value), ""
    found = _NUMBER.match(str(value))
    if not found:
        raise ValueError
    return float(found.group("num").replace(",", "")), found.group("unit").lower()


def _flag(value: Any) -> bool | None:
    text = _text(value).lower()
    if text in _TRUE:
        return True
    if text in _FALSE:
        return False if text else None
    raise ValueError


def _space_list(value: Any) -> list[int]:
    text = _text(value)
    parts = [p for p in re.split(r"[,;/&+\s-]+", text) if p]
    if not parts:  # separators only ('/', ';')
        raise ValueError
    spaces = [int(p) for p in parts]  # ValueError for anything else
    return spaces


# ---------------------------------------------------------------- header


def _find_header(grid: _Grid) -> tuple[int, dict[int, tuple[ColumnSpec, float]]]:
    best_row = -1
    best: dict[int, tuple[ColumnSpec, float]] = {}
    for r, row in enumerate(grid.rows[:HEADER_SEARCH_ROWS]):
        found = {}
        for c, value in enumerate(row):
            if isinstance(value, str) and (m := match(value)):
                found[c] = m
        keys = {spec.key for spec, _ in found.values()}
        if (
            len(found) > len(best)
            and len(found) >= 2
            and keys & {"description", "load_va", "load_kva", "space"}
        ):
            best_row, best = r, found
    return best_row, best


def _header_problems(
    grid: _Grid, header_row: int, found: dict[int, tuple[ColumnSpec, float]]
) -> tuple[list[Problem], list[str]]:
    problems, notices = [], []
    headers = grid.rows[header_row] if header_row >= 0 else []
    seen: dict[str, int] = {}
    for c, (spec, _) in sorted(found.items()):
        if spec.key in seen:
            first = seen[spec.key]
            problems.append(
                Problem(
                    grid.where(header_row, c),
                    f"two columns give the {spec.header.lower()}: '{headers[first]}' in column "
                    f"{get_column_letter(first + 1)} and '{headers[c]}' in column "
                    f"{get_column_letter(c + 1)}",
                )
            )
        seen[spec.key] = c
    spellings = list(all_spellings())
    for c, value in enumerate(headers):
        if c in found or value is None or not _text(value):
            continue
        name, _ = normalise(_text(value))
        close = difflib.get_close_matches(name, spellings, n=1, cutoff=0.8)
        if close:
            spec = all_spellings()[close[0]]
            notices.append(
                f"{grid.where(header_row, c)}: column '{value}' is not one balancer reads "
                f"(kept as is); did you mean '{spec.header}'?"
            )
    keys = set(seen)
    has_load = keys & {"load_va", "load_kva", "phase_a", "phase_b", "phase_c"}
    missing = []
    if "description" not in keys:
        missing.append("description")
    if not has_load:
        missing.append("load (VA or kVA, or per-line A/B/C columns)")
    if missing:
        listed = ", ".join(f"'{_text(h)}'" for h in headers if _text(h)) or "none"
        where = grid.where(header_row, 0) if header_row >= 0 else grid.sheet
        hint = ""
        for value in headers:
            close = difflib.get_close_matches(
                normalise(_text(value))[0], spellings, n=1, cutoff=0.7
            )
            if close and value is not None and match(_text(value)) is None:
                hint += f"; did you mean '{all_spellings()[close[0]].header}' for '{value}'?"
        problems.append(
            Problem(
                where,
                f"no column for the {' and the '.join(missing)}; headers found: {listed}{hint}",
            )
        )
    if "load_va" in keys and "load_kva" in keys:
        problems.append(
            Problem(
                grid.where(header_row, seen["load_kva"]),
                "give the load either in VA or in kVA, not both",
            )
        )
    return problems, notices


# ---------------------------------------------------------------- panel attributes


def _panel_pairs(
    grid: _Grid | None, title_rows: list[list[Any]], sheet: str
) -> dict[str, tuple[Any, str]]:
    """Key/value pairs: 'Name | LP-1' rows on a Panel sheet, or 'System: 208Y/120' in title rows."""
    pairs: dict[str, tuple[Any, str]] = {}
    sources = []
    if grid is not None:
        sources.append((grid, grid.rows))
    sources.append((_Grid(sheet, title_rows), title_rows))
    for g, rows in sources:
        for r, row in enumerate(rows):
            cells = [(c, v) for c, v in enumerate(row) if v is not None and _text(v)]
            for i, (c, value) in enumerate(cells):
                text = _text(value)
                key_text, sep, inline = text.partition(":")
                spec = panel_key(key_text)
                if spec is not None and spec.key not in pairs:
                    if sep and inline.strip():
                        pairs[spec.key] = (inline.strip(), g.where(r, c))
                    elif i + 1 < len(cells):
                        pairs[spec.key] = (cells[i + 1][1], g.where(r, cells[i + 1][0]))
    return pairs


NEMA_TYPES = (
    "1",
    "2",
    "3",
    "3R",
    "3S",
    "3X",
    "3RX",
    "3SX",
    "4",
    "4X",
    "5",
    "6",
    "6P",
    "12",
    "12K",
    "13",
)
MOUNTINGS = {"surface": "surface", "flush": "flush", "semiflush": "semi-flush", "recessed": "flush"}
SCCR_KA = (1.0, 200.0)  # panelboard ratings run from 10 kA to 200 kA (common practice)
NEUTRAL_PCT = (50.0, 300.0)


def _panel_header(pairs: dict[str, tuple[Any, str]], problems: list[Problem]) -> PanelHeader:
    """The title block's data; each value that does not read is a problem at its cell."""
    values: dict[str, Any] = {}
    for key, (raw, where) in pairs.items():
        spec = PANEL_BY_KEY[key]
        if key not in PanelHeader.__dataclass_fields__:
            continue  # name, system and the ratings, read above
        if spec.kind == "text":
            values[key] = _header_text(raw)
            continue
        try:
            values[key] = _header_value(spec.kind, raw)
        except ValueError as exc:
            label = re.sub(r"\s*\(.*\)$", "", spec.label)
            problems.append(Problem(where, f"{label} '{_shown(_text(raw))}' {exc}"))
    return PanelHeader(**values)


def _header_text(raw: Any) -> str:
    if isinstance(raw, datetime.datetime | datetime.date):
        return raw.strftime("%Y-%m-%d")  # a date cell: the one spelling nobody misreads
    return _text(raw)


def _header_value(kind: str, raw: Any) -> Any:
    """A title-block figure or choice; ValueError with what it should be."""
    text = _text(raw)
    if kind == "flag":
        try:
            return _flag(raw)
        except ValueError:
            raise ValueError("should be yes or no") from None
    if kind == "mounting":
        found = MOUNTINGS.get(re.sub(r"[^a-z]", "", text.lower()))
        if found is None:
            raise ValueError("should be surface, flush or semi-flush")
        return found
    if kind == "nema":
        bare = re.sub(r"^(nema|type)\s*", "", text.strip(), flags=re.IGNORECASE).upper()
        bare = re.sub(r"^TYPE\s*", "", bare).replace(" ", "")
        if bare not in NEMA_TYPES:
            raise ValueError(f"should be a NEMA enclosure type ({', '.join(NEMA_TYPES)})")
        return f"NEMA {bare}"
    try:
        number, unit = _number(raw)
    except ValueError:
        number, unit = None, "?"
    if kind == "pct":
        if (
            number is None
            or unit not in ("", "%")
            or not NEUTRAL_PCT[0] <= number <= NEUTRAL_PCT[1]
        ):
            raise ValueError("should be a percentage of the phase bus, such as 100 % or 200 %")
        return number
    # kA: '22', '22 kA', '22kAIC', '10,000 AIC', '10000 A'
    if number is not None and unit in ("", "ka", "kaic", "k", "aic", "a", "sccr"):
        if unit in ("a", "aic") or number >= 1000:
            number /= 1000.0
        if SCCR_KA[0] <= number <= SCCR_KA[1]:
            return number
    raise ValueError(
        f"should be a rating in kA ({SCCR_KA[0]:g} to {SCCR_KA[1]:g}), such as 22 kA or 10,000 AIC"
    )


def _main_rating(text: str) -> tuple[float | None, bool]:
    """(main breaker amps or None, understood)."""
    if re.search(r"\b(mlo|lugs?|main lugs?)\b", text, re.IGNORECASE):
        return None, True
    try:
        value, _ = _number(text)
    except ValueError:
        return None, False
    return value, value is not None


# ---------------------------------------------------------------- rows → circuits


@dataclass(slots=True)
class _Row:
    row: int
    cells: dict[str, Any]
    cols: dict[str, int]
    extra: tuple[tuple[str, Any], ...]


def _rows(
    grid: _Grid,
    header_row: int,
    found: dict[int, tuple[ColumnSpec, float]],
    problems: list[Problem],
    notices: list[str],
) -> list[_Row]:
    headers = grid.rows[header_row]
    extras = [(c, _text(h)) for c, h in enumerate(headers) if c not in found and _text(h)]
    formula_cols: dict[int, list[int]] = {}
    for r, c in sorted(grid.formulas):
        formula_cols.setdefault(r, []).append(c)
    out = []
    for r in range(header_row + 1, len(grid.rows)):
        row = grid.rows[r]
        if all(v is None or not _text(v) for v in row):
            continue
        for c in formula_cols.get(r, []):  # rows end at their last value: c may be past it
            if c >= len(row) or row[c] is None:
                problems.append(
                    Problem(
                        grid.where(r, c),
                        f"formula {grid.formulas[(r, c)]} has no saved value; open the file in a "
                        "spreadsheet program, recalculate and save it, then run balancer again",
                    )
                )
        cells = {spec.key: (row[c] if c < len(row) else None) for c, (spec, _) in found.items()}
        cols = {spec.key: c for c, (spec, _) in found.items()}
        texts = " ".join(_text(v) for v in row if v is not None)
        if _TOTAL.search(texts) and not _text(cells.get("space")).isdigit():
            notices.append(f"{grid.where(r, 0)}: skipped the total row '{texts[:40]}'")
            continue
        extra = tuple((h, row[c] if c < len(row) else None) for c, h in extras)
        out.append(_Row(r, cells, cols, extra))
    return out


@dataclass(slots=True)
class _Cells:
    """One circuit row's cells, read with every problem located at its cell."""

    item: _Row
    grid: _Grid
    scales: dict[str, float]
    problems: list[Problem]

    def __contains__(self, key: str) -> bool:
        return key in self.item.cells

    def value(self, key: str) -> Any:
        return self.item.cells.get(key)

    def text(self, key: str) -> str:
        return _text(self.item.cells.get(key))

    def where(self, key: str) -> str:
        return self.grid.where(self.item.row, self.item.cols.get(key, 0))

    def problem(self, key: str, what: str) -> None:
        self.problems.append(Problem(self.where(key), what))

    def number(self, key: str, what: str, *, allow_negative: bool = False) -> float | None:
        """The cell's number in the column's unit (kVA in a cell always read as kVA), or None
        when blank or refused with a problem."""
        if key not in self:
            return None
        shown = _shown(self.text(key))
        try:
            value, unit = _number(self.value(key))
        except ValueError:
            self.problem(key, f"{what} '{shown}' is not a number")
            return None
        if value is None:
            return None
        if math.isnan(value):
            self.problem(key, f"{what} '{shown}' is not a number")
            return None
        is_load = key.startswith(("load", "phase"))
        if unit not in ("", "va", "a", "v", "kva", "%") or (unit in ("va", "kva") and not is_load):
            self.problem(key, f"{what} '{self.text(key)}': unit '{unit}' not understood")
            return None
        if unit == "kva":
            value *= 1000.0  # the cell says kVA, whatever the column's unit
        elif unit != "va":
            value *= self.scales.get(key, 1.0)
        return self._bounded(key, what, value, shown, allow_negative)

    def _bounded(
        self, key: str, what: str, value: float, shown: str, allow_negative: bool
    ) -> float | None:
        """``value`` when within the column's bounds; else None, with a problem."""
        if value < 0 and not allow_negative:
            self.problem(key, f"{what} {value:g} is negative")
            return None
        bound, bound_unit, of = _LIMITS.get(key, (math.inf, "", ""))
        if not abs(value) <= bound:  # also infinity, and a 400-digit number read as one
            self.problem(
                key,
                f"{what} '{shown}' is more than {bound:,.0f}{' ' if bound_unit else ''}"
                f"{bound_unit}, the most balancer takes for {of}",
            )
            return None
        return value


def _circuit(
    item: _Row, grid: _Grid, scales: dict[str, float], problems: list[Problem], notices: list[str]
) -> Circuit | None:
    """The circuit on one schedule row; None for an empty space or line, or a refused row."""
    cells = _Cells(item, grid, scales, problems)
    description = cells.text("description")
    load_class = cells.text("load_class").lower()
    if _SPACE.match(description) or load_class in ("space", "blank"):
        return None  # an empty space, not a breaker
    poles = _poles(cells)
    if poles is None:
        return None
    load = _given_load(cells)
    is_spare = bool(_SPARE.match(description)) or load_class == SPARE
    if not description and load is None and not cells.text("poles") and not cells.text("trip_a"):
        return None  # a numbered but empty line of the schedule
    spaces = _spaces(cells, poles)
    if spaces is None:
        return None
    pf = _power_factor(cells)
    flags = {key: _yes_no(cells, key) for key in ("locked", "continuous", "critical")}
    load = _counted_load(cells, load, description, is_spare, notices)
    return Circuit(
        id=str(spaces[0]) if spaces else f"R{item.row + 1}",
        description=description,
        poles=poles,
        load_va=load,
        spaces=spaces,
        trip_a=cells.number("trip_a", "trip"),
        load_class=SPARE if is_spare else load_class,
        power_factor=pf if pf is not None else 1.0,
        locked=bool(flags["locked"]),
        group=cells.text("group"),
        measured_a=cells.number("measured_a", "measured current"),
        notes=cells.text("notes"),
        voltage_v=cells.number("voltage_v", "voltage"),
        continuous=flags["continuous"],
        critical=flags["critical"],
        neutral_va=cells.number("neutral_va", "neutral share"),
        yokes=cells.number("yokes", "receptacle count"),
        source_row=item.row + 1,
        measured_line_a=_line_readings(cells),
        harmonic_profile=_harmonic_profile(cells.value("harmonic_profile"), cells.where, problems),
        conductor=_conductor(cells.value("conductor"), cells.where, problems),
        extra=item.extra,
    )


def _poles(cells: _Cells) -> int | None:
    """The breaker's poles (1 when blank), or None with a problem."""
    poles_text = cells.text("poles")
    if not poles_text:
        return 1
    found = re.fullmatch(r"(\d+)\s*(p|pole|poles|-pole)?", poles_text, re.IGNORECASE)
    if not found or not 1 <= int(found.group(1)) <= 3:
        cells.problem("poles", f"poles '{poles_text}' must be 1, 2 or 3")
        return None
    return int(found.group(1))


def _given_load(cells: _Cells) -> float | None:
    """The load column's figure, else the sum of the per-line loads given, else None."""
    load = (
        cells.number("load_va", "load") if "load_va" in cells else cells.number("load_kva", "load")
    )
    phase_parts = [
        cells.number(k, f"line {k[-1].upper()} load")
        for k in ("phase_a", "phase_b", "phase_c")
        if k in cells
    ]
    if load is None and any(p is not None for p in phase_parts):
        load = sum(p for p in phase_parts if p is not None)
    return load


def _spaces(cells: _Cells, poles: int) -> tuple[int, ...] | None:
    """The spaces the breaker takes (none when the cell is blank), or None with a problem."""
    space_text = cells.text("space")
    if not space_text:
        return ()
    try:
        listed = _space_list(cells.value("space"))
    except ValueError:
        cells.problem("space", f"space '{_shown(space_text)}' is not a space number")
        return None
    if any(s < 1 for s in listed):
        cells.problem("space", f"space '{space_text}' must be 1 or more")
        return None
    if any(s > MAX_SPACES for s in listed):
        cells.problem(
            "space",
            f"space '{_shown(space_text)}' is past {MAX_SPACES}, the most spaces "
            "balancer takes for a panel",
        )
        return None
    first = listed[0]
    spaces = tuple(first + 2 * k for k in range(poles))
    if len(listed) > 1 and tuple(listed) != spaces:
        cells.problem(
            "space",
            f"spaces {space_text} do not fit a {poles}-pole breaker at space {first} "
            f"(it takes {', '.join(map(str, spaces))})",
        )
        return None
    return spaces


def _power_factor(cells: _Cells) -> float | None:
    """The power factor given (negative for leading), or None when blank or out of range."""
    pf = cells.number("power_factor", "power factor", allow_negative=True)
    if pf is not None and not (0 < abs(pf) <= 1):
        cells.problem(
            "power_factor", f"power factor {pf:g} must be between 0 and 1 (negative for leading)"
        )
        return None
    return pf


def _yes_no(cells: _Cells, key: str) -> bool | None:
    """A yes/no column's answer, None when blank or not understood (with a problem)."""
    try:
        return _flag(cells.value(key))
    except ValueError:
        cells.problem(key, f"{key} '{cells.text(key)}' should be yes or no")
        return None


def _counted_load(
    cells: _Cells, load: float | None, description: str, is_spare: bool, notices: list[str]
) -> float:
    """The load counted: 0 VA when none is given, said in a notice unless the row is a spare."""
    if load is None:
        if not is_spare:
            notices.append(
                f"{cells.where('load_va' if 'load_va' in cells else 'load_kva')}: "
                f"'{description or 'circuit'}' has no load; counted as 0 VA"
            )
        return 0.0
    if is_spare and load:
        notices.append(
            f"{cells.where('load_va')}: spare '{description}' has a load of {load:g} VA; "
            "counted as given"
        )
    return load


def _line_readings(cells: _Cells) -> LineReadings:
    """The per-line current readings given."""
    return LineReadings.of(
        {
            line: amps
            for line in "ABC"
            if (amps := cells.number(f"measured_line_{line.lower()}", f"line {line} reading"))
            is not None
        }
    )


def _harmonic_profile(
    value: Any, where: Callable[[str], str], problems: list[Problem]
) -> str | None:
    """The profile a cell names, as written; a located problem when no profile has that name."""
    text = _text(value)
    if not text:
        return None
    if find_profile(text) is None:
        profiles = builtin_profiles().values()
        names = sorted(p.name for p in profiles)
        spellings = {normalise(n)[0]: n for p in profiles for n in (p.name, *p.aliases)}
        close = difflib.get_close_matches(normalise(text)[0], list(spellings), n=1, cutoff=0.6)
        hint = f" (did you mean '{spellings[close[0]]}'?)" if close else ""
        problems.append(
            Problem(
                where("harmonic_profile"),
                f"unknown harmonic profile '{_shown(text)}'; known: {', '.join(names)}{hint}",
            )
        )
        return None
    return text


def _conductor(
    value: Any, where: Callable[[str], str], problems: list[Problem]
) -> Conductor | None:
    """The conductor a cell gives (its wording kept); a located problem when it names no size."""
    text = _text(value)
    if not text:
        return None
    found = parse_conductor(text)
    if found is None:
        problems.append(
            Problem(
                where("conductor"),
                f"conductor '{_shown(text)}' is not a size balancer knows (14 AWG to 500 kcmil, "
                "e.g. 12 AWG Cu, #10, 3/0 AL, 250 kcmil); leave it blank or put words in Notes",
            )
        )
    return found


def _reading_problems(
    circuits: list[Circuit], grid: _Grid, cols: dict[str, int], geometry: Geometry
) -> list[Problem]:
    """A per-line reading on a line a placed circuit is not on, at its cell."""
    problems = []
    for circuit in circuits:
        if not circuit.spaces or not circuit.measured_line_a or circuit.source_row is None:
            continue
        if circuit.spaces[-1] > geometry.spaces:  # past the last space: reported already
            continue
        lines = geometry.lines_of(circuit.spaces[0], circuit.poles)
        for line in circuit.measured_line_a:
            if line not in lines:
                problems.append(
                    Problem(
                        grid.where(circuit.source_row - 1, cols[f"measured_line_{line.lower()}"]),
                        f"circuit {circuit.id} is on line(s) {', '.join(lines)}, not {line}: "
                        "a reading belongs under a line the circuit is on",
                    )
                )
    return problems


# ---------------------------------------------------------------- checks on the whole panel


def _placement_problems(
    circuits: list[Circuit],
    where: dict[str, str],
    system: System,
    spaces: int,
    spaces_where: str = "",
) -> list[Problem]:
    """Every circuit that cannot go where it is, or at all, on this system; then too few
    spaces."""
    problems = []
    geometry = Geometry(system.lines, spaces)
    taken: dict[int, Circuit] = {}
    for circuit in circuits:
        at = where[circuit.id]
        if circuit.poles > system.max_poles:
            problems.append(
                Problem(
                    at,
                    f"a {circuit.poles}-pole circuit ('{circuit.description}') "
                    f"cannot be served by a {system.label()} panel",
                )
            )
            continue
        if circuit.poles == 1 and not system.neutral:
            problems.append(
                Problem(
                    at,
                    f"'{circuit.description}' is 1-pole, but a {system.label()} "
                    "panel has no neutral for a line-to-neutral load",
                )
            )
        if not circuit.spaces:
            continue
        if circuit.spaces[-1] > spaces:
            problems.append(
                Problem(
                    at,
                    f"a {circuit.poles}-pole breaker at space {circuit.spaces[0]} "
                    f"would take spaces {', '.join(map(str, circuit.spaces))}, "
                    f"past the last space {spaces}",
                )
            )
            continue
        problems += _taken_problems(circuit, at, taken, where)
        reason = _line_problem(circuit, system, geometry)
        if reason:
            problems.append(Problem(at, reason))
    poles = sum(c.poles for c in circuits)
    if poles > spaces:
        problems.append(
            Problem(
                spaces_where,
                f"the circuits need {poles} poles but the panel has only {spaces} spaces",
            )
        )
    return problems


def _taken_problems(
    circuit: Circuit, at: str, taken: dict[int, Circuit], where: dict[str, str]
) -> list[Problem]:
    """A space of ``circuit`` already taken by an earlier circuit; marks its spaces taken."""
    problems = []
    for s in circuit.spaces:
        if s in taken:
            other = taken[s]
            problems.append(
                Problem(
                    at, f"space {s} is already taken by '{other.description}' ({where[other.id]})"
                )
            )
        taken[s] = circuit
    return problems


def _line_problem(circuit: Circuit, system: System, geometry: Geometry) -> str | None:
    """Why a placed circuit cannot be on the lines its spaces give, or None."""
    if (
        circuit.poles == 1
        and system.high_leg
        and geometry.line_of(circuit.spaces[0]) == system.high_leg
    ):
        high_leg_v = system.line_to_neutral_v[system.lines.index(system.high_leg)]
        return (
            f"space {circuit.spaces[0]} is on the high leg "
            f"{system.high_leg} ({high_leg_v:.0f} V "
            f"to neutral; NEC 110.15 marking, 408.3(E) position); a 1-pole "
            f"{system.line_to_neutral_v[0]:.0f} V circuit ('{circuit.description}') "
            "cannot go there"
        )
    if circuit.poles > 1 or system.neutral:
        reason = check_connection(
            system,
            geometry.lines_of(circuit.spaces[0], circuit.poles),
            circuit.poles,
            circuit.voltage_v,
            circuit.neutral_va,
        )
        if reason:
            return f"'{circuit.description}': {reason}"
    return None


def _group_notices(circuits: list[Circuit], panel_lines: Geometry) -> list[str]:
    notices = []
    groups: dict[str, list[Circuit]] = {}
    for c in circuits:
        if c.group:
            groups.setdefault(c.group, []).append(c)
    for name, members in groups.items():
        lines = [panel_lines.line_of(s) for c in members for s in c.spaces]
        if len(lines) != len(set(lines)):
            notices.append(
                f"multiwire group '{name}': members share a line, so the shared neutral "
                "carries the sum of their currents (NEC 210.4 wants different lines)"
            )
    return notices


# ---------------------------------------------------------------- entry point


def read_schedule(path: str | Path, overrides: PanelOverrides | None = None) -> Panel:
    """Read and validate a schedule file.

    Parameters
    ----------
    path
        An ``.xlsx`` workbook (circuits on a sheet named like "Circuits", else the first; panel
        attributes on a sheet named "Panel") or a ``.csv`` file.
    overrides
        Panel attributes from the command line; they win over the file's.

    Raises
    ------
    ScheduleError
        With every problem found, each with its place.
    """
    path = Path(path)
    overrides = overrides or PanelOverrides()
    if not path.exists():
        raise ScheduleError(Problem(str(path), "no such file"))
    if path.is_dir():
        raise ScheduleError(Problem(str(path), "is a folder, not a schedule file"))
    if path.stat().st_size == 0:
        raise ScheduleError(Problem(str(path), "the file is empty"))
    suffix = path.suffix.lower()
    try:
        if suffix in (".xlsx", ".xlsm", ".xls"):
            grid, panel_grid = _read_xlsx(path)
        elif suffix in (".csv", ".txt", ".tsv"):
            grid, panel_grid = _read_csv(path), None
        else:
            raise ScheduleError(
                Problem(str(path), f"'{suffix}' files are not read; give an .xlsx or .csv schedule")
            )
    except ScheduleError as exc:
        if exc.source:
            raise
        raise ScheduleError(exc.problems, str(path)) from exc  # say which file, in a batch too
    return _panel_from_grids(path, grid, panel_grid, overrides)


def _panel_from_grids(
    path: Path, grid: _Grid, panel_grid: _Grid | None, overrides: PanelOverrides
) -> Panel:
    """The panel the read grids describe; every problem found at once, in one refusal."""
    text_problems = _clean_text(grid) + (_clean_text(panel_grid) if panel_grid else [])
    if text_problems:
        raise ScheduleError(text_problems, str(path))
    if not any(any(v is not None for v in row) for row in grid.rows):
        raise ScheduleError(Problem(grid.sheet, "the sheet holds no data"), str(path))

    problems: list[Problem] = []
    notices: list[str] = [*grid.notices, *(panel_grid.notices if panel_grid else [])]
    header_row, found = _find_header(grid)
    header_problems, header_notices = _header_problems(grid, header_row, found)
    if header_row < 0 or header_problems:
        raise ScheduleError(
            header_problems or [Problem(grid.sheet, "no header row found")], str(path)
        )
    notices += header_notices
    circuits, where_of = _read_circuits(grid, header_row, found, problems, notices)

    pairs = _panel_pairs(panel_grid, grid.rows[:header_row], grid.sheet)
    given = CONTROL_CHARACTERS.sub("", overrides.name or "").strip()  # --name is user text too
    name = given or _text(pairs.get("name", (path.stem, ""))[0]) or path.stem
    system = _resolve_system(overrides.system, pairs, problems, notices)
    spaces = _resolve_spaces(overrides.spaces, pairs, circuits, problems, notices, grid.sheet)
    bus_a = _bus_rating(overrides.bus_a, pairs, problems)
    main_text = (
        overrides.main if overrides.main is not None else _text(pairs.get("main", ("", ""))[0])
    )
    main_a = _main_breaker(main_text, pairs, problems)
    header = _panel_header(pairs, problems)
    if system is not None and spaces is not None:
        spaces_where = (
            "--spaces"
            if overrides.spaces is not None
            else pairs["spaces"][1]
            if "spaces" in pairs
            else grid.sheet
        )
        problems += _placement_problems(circuits, where_of, system, spaces, spaces_where)
        cols = {spec.key: c for c, (spec, _) in found.items()}
        problems += _reading_problems(circuits, grid, cols, Geometry(system.lines, spaces))
        notices += _group_notices(circuits, Geometry(system.lines, spaces))
    if not circuits and not problems:
        problems.append(Problem(grid.sheet, "no branch circuits found below the header row"))
    if problems:
        raise ScheduleError(problems, str(path))
    assert system is not None
    assert spaces is not None
    return Panel(
        name=name,
        system=system,
        spaces=spaces,
        circuits=tuple(circuits),
        bus_a=bus_a,
        main_a=main_a,
        main_lugs_only=bool(main_text) and main_a is None,
        source=str(path),
        notices=tuple(notices),
        header=header,
    )


def _read_circuits(
    grid: _Grid,
    header_row: int,
    found: dict[int, tuple[ColumnSpec, float]],
    problems: list[Problem],
    notices: list[str],
) -> tuple[list[Circuit], dict[str, str]]:
    """The circuits below the header row, and the cell each is reported at, by id."""
    scales = {spec.key: scale for spec, scale in found.values()}
    circuits = []
    where_of: dict[str, str] = {}
    for item in _rows(grid, header_row, found, problems, notices):
        circuit = _circuit(item, grid, scales, problems, notices)
        if circuit is not None:
            if circuit.id in where_of:  # same first space twice: keep ids unique, report below
                circuit = Circuit(**{**_as_dict(circuit), "id": f"{circuit.id}@R{item.row + 1}"})
            circuits.append(circuit)
            where_of[circuit.id] = grid.where(item.row, item.cols.get("space", 0))
    return circuits, where_of


def _bus_rating(
    given_a: float | None, pairs: dict[str, tuple[Any, str]], problems: list[Problem]
) -> float | None:
    """The bus rating from --bus, else from the file; None when absent or refused."""
    bus_a = given_a
    if bus_a is None and "bus" in pairs:
        try:
            bus_a = _number(pairs["bus"][0])[0]
        except ValueError:
            problems.append(
                Problem(
                    pairs["bus"][1],
                    f"bus rating '{_shown(_text(pairs['bus'][0]))}' is not a number",
                )
            )
    if bus_a is not None and not 0 <= bus_a <= MAX_CURRENT_A:
        where_bus = "--bus" if given_a is not None else pairs["bus"][1]
        problems.append(
            Problem(where_bus, f"bus rating {bus_a:g} A must be from 0 to {MAX_CURRENT_A:,.0f} A")
        )
        return None
    return bus_a


def _main_breaker(
    main_text: str, pairs: dict[str, tuple[Any, str]], problems: list[Problem]
) -> float | None:
    """The main breaker's rating; None for main lugs only, none given, or refused."""
    main_a, understood = _main_rating(main_text) if main_text else (None, True)
    if main_a is not None and not 0 <= main_a <= MAX_CURRENT_A:
        understood, main_a = False, None
    if not understood:
        problems.append(
            Problem(
                pairs.get("main", ("", "--main"))[1],
                f"main '{_shown(main_text)}' should be a rating in amperes (at most "
                f"{MAX_CURRENT_A:,.0f} A) or MLO (main lugs only)",
            )
        )
    return main_a


def _as_dict(circuit: Circuit) -> dict[str, Any]:
    return {f: getattr(circuit, f) for f in Circuit.__dataclass_fields__}


def _resolve_system(
    given: str | None,
    pairs: dict[str, tuple[Any, str]],
    problems: list[Problem],
    notices: list[str],
) -> System | None:
    text, where = (
        (given, "--system")
        if given
        else (_text(pairs["system"][0]), pairs["system"][1])
        if "system" in pairs
        else (None, "")
    )
    if not text:
        notices.append(f"no system given; assumed {DEFAULT_SYSTEM} (use --system or a Panel sheet)")
        text = DEFAULT_SYSTEM
    system = find_system(text)
    if system is None:
        problems.append(
            Problem(
                where, f"system '{text}' is not known; known: {', '.join(known_designations())}"
            )
        )
    return system


def _resolve_spaces(
    given: int | None,
    pairs: dict[str, tuple[Any, str]],
    circuits: list[Circuit],
    problems: list[Problem],
    notices: list[str],
    sheet: str = "",
) -> int | None:
    if given is not None:
        value: float | None = float(given)
        where = "--spaces"
    elif "spaces" in pairs:
        where = pairs["spaces"][1]
        try:
            value = _number(pairs["spaces"][0])[0]
        except ValueError:
            value = None
        if value is None:
            problems.append(
                Problem(where, f"space count '{_shown(_text(pairs['spaces'][0]))}' is not a number")
            )
            return None
    else:
        poles = sum(c.poles for c in circuits)
        highest = max((c.spaces[-1] for c in circuits if c.spaces), default=0)
        count = smallest_space_count(poles, highest)
        if count > MAX_SPACES:
            problems.append(
                Problem(
                    sheet,
                    f"the circuits need {poles} poles, more than the {MAX_SPACES} spaces "
                    "balancer takes for a panel",
                )
            )
            return None
        notices.append(
            f"no space count given; assumed {count}, the smallest common size that fits "
            f"{poles} poles (use --spaces or a Panel sheet)"
        )
        return count
    assert value is not None
    if not 1 <= value <= MAX_SPACES or not float(value).is_integer():
        problems.append(
            Problem(where, f"space count {value:g} must be a whole number from 1 to {MAX_SPACES}")
        )
        return None
    return int(value)


__all__ = ["BY_KEY", "PanelOverrides", "read_schedule"]


def read_workbook_sheets(
    path: str | Path, sheets: Sequence[str], overrides: Sequence[PanelOverrides] | None = None
) -> list[Panel]:
    """Read one panel from each of ``sheets`` of one workbook (opened once).

    Each sheet holds a whole schedule: panel attributes in title rows above the header
    ("System: 208Y/120"), circuits below. ``overrides`` pairs with ``sheets``.

    Raises
    ------
    ScheduleError
        With every problem of every sheet, each with its place.
    """
    path = Path(path)
    if not path.is_file():
        raise ScheduleError(Problem(str(path), "no such file"))
    grids: list[_Grid | None] = []
    problems: list[Problem] = []
    with open_xlsx(path) as (values, formulas, notes):
        names = [sheet.title for sheet in values.worksheets]  # not chart sheets
        for sheet in sheets:
            if sheet not in names:
                near = difflib.get_close_matches(sheet, names, n=1)
                hint = f" (did you mean '{near[0]}'?)" if near else ""
                problems.append(Problem(str(path), f"no sheet named '{sheet}'{hint}"))
                grids.append(None)
            else:
                grids.append(_grid_from_sheet(values[sheet], formulas[sheet]))
    first = next((g for g in grids if g is not None), None)
    if first is not None:
        first.notices += notes  # said once, with the first panel
    panels: list[Panel] = []
    for index, grid in enumerate(grids):
        if grid is None:
            continue
        try:
            given = overrides[index] if overrides else PanelOverrides()
            panels.append(_panel_from_grids(path, grid, None, given))
        except ScheduleError as exc:
            problems += exc.problems
    if problems:
        raise ScheduleError(problems, str(path))
    return panels

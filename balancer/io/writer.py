"""The revised schedule workbook: summary, panel layout, changes, circuit list, charts and notes.

A new workbook is always written (never the input), atomically: a temporary file in the target
folder, then ``os.replace``. The "Circuits" sheet is a plain list, one row per circuit with
every unused input column handed back unchanged, so the tool's own reader can read it again.
"""

from __future__ import annotations

import io
import math
import re
from collections.abc import Callable, Sequence
from dataclasses import dataclass, replace
from pathlib import Path
from typing import TYPE_CHECKING, Any

from openpyxl import Workbook
from openpyxl.styles import Alignment, Border, Font, PatternFill, Side
from openpyxl.utils import get_column_letter
from openpyxl.worksheet.header_footer import HeaderFooterItem
from openpyxl.worksheet.worksheet import Worksheet

from balancer.domain.panel import Circuit, Panel, PanelHeader
from balancer.domain.result import BalanceResult, SolveStatus
from balancer.domain.systems import Line
from balancer.io.files import refuse_input_path, save_workbook
from balancer.physics.analysis import Loads, share_by_line
from balancer.report.safety import CAUTIONS
from balancer.report.states import states

if TYPE_CHECKING:
    from balancer.code.demand import DemandResult
    from balancer.field.workorder import WorkOrder
    from balancer.report.peak import PeakFigures


ExtraSheet = tuple[str, Sequence[Sequence[Any]]]
"""A sheet another part of balancer adds: its title and its rows (the first row is the header)."""


STATUS_TEXT = {
    SolveStatus.OPTIMAL: "optimal (proven)",
    SolveStatus.FEASIBLE: "checked, not proven the best",
    SolveStatus.UNCHANGED: "unchanged: nothing could be improved or moved",
}


def _flag_text(value: bool | None) -> str | None:
    return None if value is None else ("yes" if value else "no")


# What the list sheet writes for each column key of balancer.io.columns (headers are taken from
# there, so the reader finds them). The first five are always written, the others only when some
# circuit has a value. A multi-pole breaker is written by its first space, as the reader expects.
# The load column is the design load; the load balanced on, where a reading replaced it, has a
# column of its own ("Balanced on (VA)", which the reader ignores) beside the readings.
_CIRCUIT_VALUES: tuple[tuple[str, Callable[[Circuit], Any], str], ...] = (
    ("space", lambda c: c.first_space, "0"),
    ("description", lambda c: c.description, "@"),
    ("poles", lambda c: c.poles, "0"),
    ("trip_a", lambda c: c.trip_a, "0"),
    ("load_va", lambda c: c.load_va, "#,##0"),
    ("load_class", lambda c: c.load_class or None, "@"),
    ("power_factor", lambda c: None if c.power_factor == 1.0 else c.power_factor, "0.00"),
    ("locked", lambda c: "yes" if c.locked else None, "@"),
    ("group", lambda c: c.group or None, "@"),
    ("measured_a", lambda c: c.measured_a, "0.0"),
    ("measured_line_a", lambda c: c.measured_line_a.get("A"), "0.0"),
    ("measured_line_b", lambda c: c.measured_line_a.get("B"), "0.0"),
    ("measured_line_c", lambda c: c.measured_line_a.get("C"), "0.0"),
    ("balance_va", lambda c: c.balance_va, "#,##0"),
    ("voltage_v", lambda c: c.voltage_v, "0"),
    ("continuous", lambda c: _flag_text(c.continuous), "@"),
    ("critical", lambda c: _flag_text(c.critical), "@"),
    ("neutral_va", lambda c: c.neutral_va, "#,##0"),
    ("yokes", lambda c: getattr(c, "yokes", None), "0"),
    ("harmonic_profile", lambda c: c.harmonic_profile, "@"),
    ("conductor", lambda c: c.conductor.as_written if c.conductor else None, "@"),
    ("notes", lambda c: c.notes or None, "@"),
)
_ALWAYS = 5


def _phase_header() -> str:
    from balancer.io.columns import COLUMNS

    return next((spec.header for spec in COLUMNS if spec.key == "phase"), "Phase")


def _circuit_columns() -> tuple[tuple[str, Callable[[Circuit], Any], str], ...]:
    from balancer.io.columns import COLUMNS

    headers = {spec.key: spec.header for spec in COLUMNS}
    return tuple((headers[key], get, fmt) for key, get, fmt in _CIRCUIT_VALUES if key in headers)


CIRCUITS_SHEET = "Circuits"
PANEL_SHEET = "Panel"

VA = "#,##0"
AMPS = "0.0"
PCT = '0.0" %"'

# Our own look: slate header, pale blue-grey banding, thin grey rules.
_HEAD_FILL = PatternFill("solid", fgColor="33475B")
_HEAD_FONT = Font(bold=True, color="FFFFFF")
_BAND_FILL = PatternFill("solid", fgColor="EEF2F5")
_MOVED_FILL = PatternFill("solid", fgColor="FFF1C7")
_LINE_FILL = PatternFill("solid", fgColor="D5DDE4")
_HIGH_LEG_FILL = PatternFill("solid", fgColor="F6B26B")  # orange, as the high leg is marked
_TITLE_FONT = Font(bold=True, size=14)
_SECTION_FONT = Font(bold=True, size=11, color="33475B")
_THIN = Side(style="thin", color="9AA5B1")
_BOX = Border(left=_THIN, right=_THIN, top=_THIN, bottom=_THIN)
_CENTRE = Alignment(horizontal="center", vertical="center")
_WRAP = Alignment(wrap_text=True, vertical="top")


CHART_ROWS = 16  # rows left free for a 7.5 cm chart at the default row height


@dataclass(frozen=True, slots=True)
class _Table:
    """Where a table landed on a sheet, for charts and tests."""

    header_row: int
    first_row: int
    last_row: int
    after_col: int = 3  # the per-line table's "after" column; 4 when a with-additions one is


# --- cell helpers -----------------------------------------------------------------------------


def _header(ws: Worksheet, row: int, titles: Sequence[str], col: int = 1) -> None:
    for i, title in enumerate(titles):
        cell = ws.cell(row=row, column=col + i, value=title)
        cell.fill = _HEAD_FILL
        cell.font = _HEAD_FONT
        cell.alignment = Alignment(horizontal="center", vertical="center", wrap_text=True)
        cell.border = _BOX


def _put(ws: Worksheet, row: int, col: int, value: Any, fmt: str | None = None) -> None:
    cell = ws.cell(row=row, column=col, value=value)
    cell.border = _BOX
    if fmt and isinstance(value, (int, float)) and not isinstance(value, bool):
        cell.number_format = fmt


def _long_text(
    ws: Worksheet, row: int, col: int, text: str, *, last_col: int, chars_per_line: int
) -> None:
    """Text across merged cells, wrapped, on a row tall enough for it: long text must not run
    past the printed width (a spreadsheet does not grow merged rows by itself)."""
    if last_col > col:
        ws.merge_cells(start_row=row, start_column=col, end_row=row, end_column=last_col)
    cell = ws.cell(row=row, column=col, value=text)
    cell.alignment = _WRAP
    ws.row_dimensions[row].height = 15 * max(1, math.ceil(len(text) / chars_per_line)) + 2


def _section(ws: Worksheet, row: int, text: str) -> None:
    ws.cell(row=row, column=1, value=text).font = _SECTION_FONT


LOAD_BASIS_FOOTER = "Load basis: clamp-meter readings where given, design VA otherwise"


def print_setup(ws: Worksheet, *, landscape: bool, title_rows: str | None) -> None:
    ws.page_setup.orientation = "landscape" if landscape else "portrait"
    ws.page_setup.fitToWidth = 1
    ws.page_setup.fitToHeight = 0
    ws.sheet_properties.pageSetUpPr.fitToPage = True
    ws.print_options.horizontalCentered = True
    ws.page_margins.left = ws.page_margins.right = 0.5
    ws.oddFooter.right.text = "&A, page &P of &N"
    ws.oddFooter.left.text = "Engineering aid: verify before work"
    for part in (ws.oddFooter.left, ws.oddFooter.center, ws.oddFooter.right):
        part.size = 7  # small enough that the three parts never meet
    if title_rows:
        ws.print_title_rows = title_rows


def _header_text(text: str) -> str:
    # '&' starts a header code in a spreadsheet's page header; a schedule's own line break
    # would add a line the header's margin has no room for
    return " ".join(text.replace("&", "&&").split())


class PageHeaderLines(HeaderFooterItem):
    """A page header or footer whose line breaks reach the file as line breaks. openpyxl writes
    a line break in header text as the escape ``_x000a_``, which is for cell text only: a
    spreadsheet program prints it as it stands (LibreOffice does). Excel and LibreOffice both
    write a header's line break as a plain newline in the XML, so that is what goes out."""

    def to_tree(self, tagname: str) -> Any:
        element = super().to_tree(tagname)
        if element.text:
            element.text = element.text.replace("_x000a_", "\n")
        return element


def running_header(ws: Worksheet, panel: Panel) -> None:
    """Every printed page's header, two short lines a side: the project over the panel and its
    system (the high leg named on a high-leg delta panel) on the left, the date over the
    revision on the right."""
    project, _ = title_block(panel.header)
    header = PageHeaderLines()
    # the size code is followed by a space that prints: the second line starts with one too
    header.left.text = "\n ".join(
        _header_text(line) for line in (project, f"Panel {panel.name}: {panel.system.label()}")
    )
    header.right.text = "\n".join(
        _header_text(line)
        for line in (
            f"Date: {panel.header.date or 'not given'}",
            f"Revision: {panel.header.revision_text()}",
        )
    )
    for part in (header.left, header.right):
        part.size = 7
    ws.HeaderFooter.oddHeader = header
    ws.page_margins.top = max(ws.page_margins.top, 0.9)
    ws.page_margins.header = 0.3


WIDTH_MAX = 60.0  # characters; longer text is wrapped or merged, never a column this wide


def _shown_width(cell: Any) -> float:
    """About how many characters wide a cell's value shows, at its number format."""
    value = cell.value
    if value is None:
        return 0.0
    if isinstance(value, bool) or not isinstance(value, (int, float)):
        text = str(value)
    else:
        places = 2 if "0.0" in str(cell.number_format) else 0
        unit = re.search(r'"([^"]*)"', str(cell.number_format))  # a unit the format adds
        text = f"{value:,.{places}f}" + (unit.group(1) if unit else "")
    bold = 1.1 if cell.font is not None and cell.font.b else 1.0
    return len(text) * bold


def pad_text(ws: Worksheet) -> None:
    """Text right after a number is set in by one indent, and so is the rest of its column's
    text: the number is flush right in its column, so without it the two read as one
    ("1,080Reception receptacles")."""

    def plain(cell: Any) -> bool:
        align = cell.alignment
        return (
            isinstance(cell.value, str)
            and cell.fill != _HEAD_FILL
            and not align.wrap_text
            and align.horizontal in (None, "general", "left")
        )

    columns = set()
    for row in ws.iter_rows(min_col=2):
        for cell in row:
            left = ws.cell(row=cell.row, column=cell.column - 1).value
            if plain(cell) and isinstance(left, (int, float)) and not isinstance(left, bool):
                columns.add(cell.column)
    for column in columns:
        for (cell,) in ws.iter_rows(min_col=column, max_col=column):
            if plain(cell):
                # an indent counts only on left-aligned text (not on "general")
                align = cell.alignment
                cell.alignment = Alignment(horizontal="left", vertical=align.vertical, indent=1)


def fit_columns(ws: Worksheet) -> None:
    """Widen each column to its widest cell (a header to its longest word, since headers
    wrap) so no text runs into the next column; wrapped and merged cells, and a sheet's
    one-cell title rows, keep the width they were given."""
    merged = {
        (r, c)
        for area in ws.merged_cells.ranges
        for r in range(area.min_row, area.max_row + 1)
        for c in range(area.min_col, area.max_col + 1)
    }
    need: dict[int, float] = {}
    for row in ws.iter_rows():
        filled = [cell for cell in row if cell.value is not None]
        if (
            len(filled) <= 1
            and filled
            and filled[0].column == 1
            and isinstance(filled[0].value, str)
        ):
            continue  # a title or a note across the sheet
        for cell in filled:
            if (cell.row, cell.column) in merged:
                continue
            if cell.alignment is not None and cell.alignment.wrap_text:
                if cell.fill == _HEAD_FILL:
                    longest = max((len(w) for w in str(cell.value).split()), default=0)
                    width = longest * 1.15 + 2
                else:
                    continue
            else:
                width = _shown_width(cell) + 2 + 2 * (cell.alignment.indent or 0)
            need[cell.column] = max(need.get(cell.column, 0.0), min(width, WIDTH_MAX))
    for column, width in need.items():
        dimension = ws.column_dimensions[get_column_letter(column)]
        if (dimension.width or 0) < width:
            dimension.width = width
    _header_heights(ws)


def _header_heights(ws: Worksheet) -> None:
    """Header rows tall enough for their wrapped titles (a spreadsheet does not always grow
    them by itself)."""
    for row in ws.iter_rows():
        lines = 1
        for cell in row:
            if cell.value is None or cell.fill != _HEAD_FILL:
                continue
            width = ws.column_dimensions[get_column_letter(cell.column)].width or 10
            lines = max(lines, math.ceil(len(str(cell.value)) * 1.15 / max(width - 1, 1)))
        if lines > 1:
            height = ws.row_dimensions[row[0].row].height or 15
            ws.row_dimensions[row[0].row].height = max(height, 15 * lines + 2)


def _widths(ws: Worksheet, widths: Sequence[float]) -> None:
    for i, width in enumerate(widths, start=1):
        ws.column_dimensions[get_column_letter(i)].width = width


def _spaces_text(spaces: Sequence[int]) -> str:
    """Space numbers; a circuit with none before balancing is a new breaker to install."""
    return ", ".join(str(s) for s in spaces) if spaces else "new"


def _lines_text(lines: Sequence[str]) -> str:
    return "-".join(lines) if lines else ""


def _main_text(panel: Panel) -> float | str | None:
    if panel.main_a is not None:
        return panel.main_a
    return "MLO" if getattr(panel, "main_lugs_only", False) else None


def header_values(header: PanelHeader) -> list[tuple[str, Any, str | None]]:
    """The title block's data as (Panel-sheet label, value, number format), in the order of
    :data:`balancer.io.columns.PANEL_KEYS`; what the reader takes back unchanged."""
    from balancer.io.columns import PANEL_BY_KEY

    rows: list[tuple[str, Any, str | None]] = []
    for key in HEADER_KEYS:
        value = getattr(header, key)
        if key == "isolated_ground":
            value = _flag_text(value)
        rows.append((PANEL_BY_KEY[key].label, value, "0.0##" if key == "sccr_ka" else "0"))
    return rows


HEADER_KEYS = (
    "location",
    "fed_from",
    "feeder",
    "mounting",
    "enclosure",
    "sccr_ka",
    "neutral_pct",
    "ground_bus",
    "isolated_ground",
    "project",
    "date",
    "revision",
    "balanced",
)


def header_facts(header: PanelHeader, *, neutral: bool = True) -> list[tuple[str, str]]:
    """The title block as a reader sees it, with units: ("SCCR", "22 kA") …; blanks say
    'not given' so a missing rating is seen as missing. A panel without a neutral (``neutral``
    false) has no neutral bus row unless the schedule gives one."""
    ground = header.ground_bus or "not given"
    if header.isolated_ground is not None:
        bar = "with isolated ground bar" if header.isolated_ground else "no isolated ground bar"
        ground = f"{header.ground_bus}, {bar}" if header.ground_bus else bar
    rows = [
        ("Location", header.location),
        ("Fed from", header.fed_from),
        ("Feeder", header.feeder),
        ("Mounting", header.mounting),
        ("Enclosure", header.enclosure),
        ("SCCR", f"{header.sccr_ka:,.4g} kA" if header.sccr_ka else ""),
        ("Neutral bus", f"{header.neutral_pct:g} %" if header.neutral_pct else ""),
        ("Ground bus", ground),
    ]
    if not neutral and header.neutral_pct is None:
        rows = [row for row in rows if row[0] != "Neutral bus"]
    return [(label, value or "not given") for label, value in rows]


def title_block(header: PanelHeader) -> tuple[str, str]:
    """("Project: …", "Date: …   Revision: …") as every page's running header shows them; a
    revised schedule's revision carries the date it was balanced."""
    project = f"Project: {header.project or 'not given'}"
    return project, f"Date: {header.date or 'not given'}   Revision: {header.revision_text()}"


def revised_header(panel: Panel, balanced_on: str | None = None) -> PanelHeader:
    """The revised schedule's title block: the schedule's own, with the date it was balanced
    (today unless given)."""
    import datetime

    on = balanced_on or datetime.date.today().isoformat()
    return replace(panel.header, balanced=on)


def _panel_facts(panel: Panel) -> list[tuple[str, Any, str | None]]:
    main = _main_text(panel)
    neutral = panel.system.neutral
    return [
        ("Panel", panel.name, None),
        ("System", panel.system.label(), None),
        ("Spaces", panel.spaces, "0"),
        ("Bus rating", panel.bus_a, '#,##0" A"'),
        ("Main", "main lugs only" if main == "MLO" else main, '#,##0" A"'),
        *((label, value, None) for label, value in header_facts(panel.header, neutral=neutral)),
        ("Project", panel.header.project or "not given", None),
        ("Date", panel.header.date or "not given", None),
        ("Revision", panel.header.revision_text(), None),
        ("Source", panel.source or "", None),
    ]


def panel_title_rows(panel: Panel) -> list[tuple[str, Any]]:
    """(label, value) rows above a schedule's header that the reader takes the panel's
    attributes from; bus and main only when known."""
    rows: list[tuple[str, Any]] = [
        ("Panel", panel.name),
        ("System", panel.system.designation),
        ("Spaces", panel.spaces),
    ]
    if panel.bus_a is not None:
        rows.append(("Bus", panel.bus_a))
    main = _main_text(panel)
    if main is not None:
        rows.append(("Main", main))
    rows += [(label, value) for label, value, _ in header_values(panel.header) if value]
    return rows


def _panel_sheet(ws: Worksheet, panel: Panel) -> None:
    """Key/value rows the reader takes the panel's attributes from."""
    ws.title = PANEL_SHEET
    _header(ws, 1, ["Attribute", "Value"])
    rows: list[tuple[str, Any, str | None]] = [
        ("Name", panel.name, None),
        ("System", panel.system.designation, None),
        ("Spaces", panel.spaces, "0"),
        ("Bus", panel.bus_a, "0"),
        ("Main", _main_text(panel), "0"),
        *header_values(panel.header),
    ]
    for row, (label, value, fmt) in enumerate(rows, start=2):
        _put(ws, row, 1, label)
        _put(ws, row, 2, value, fmt)
        ws.cell(row=row, column=2).alignment = Alignment(horizontal="left")
    ws.cell(row=len(rows) + 3, column=1, value=panel.system.label())
    _widths(ws, [20, max(24, *(len(str(v)) + 3 for _, v, _ in rows if v is not None))])
    print_setup(ws, landscape=True, title_rows=None)  # room for the running header


# --- sheets -----------------------------------------------------------------------------------


def _summary(ws: Worksheet, result: BalanceResult) -> _Table:
    """The Summary sheet, block by block; returns where its per-line table is, for the chart."""
    ws.title = "Summary"
    ws["A1"] = f"{result.after_panel.name}: revised schedule"
    ws["A1"].font = _TITLE_FONT
    row = _facts_block(ws, result.after_panel, 3)
    table = _line_block(ws, result, row + 1)
    row = table.last_row + CHART_ROWS  # the per-line chart is placed here, under its table
    row = _totals_block(ws, result, row + 2)
    row = _result_block(ws, result, row + 2)
    _cautions_block(ws, row + 2)
    _widths(ws, [36, 16, 16, 13, 14, 14, 14, 14])
    print_setup(ws, landscape=False, title_rows=None)
    return table


def _facts_block(ws: Worksheet, panel: Panel, row: int) -> int:
    """The panel's facts and the reader's notices from ``row``; returns the row after them."""
    for label, value, fmt in _panel_facts(panel):
        ws.cell(row=row, column=1, value=label).font = Font(bold=True)
        ws.cell(row=row, column=1).alignment = Alignment(vertical="top")
        if isinstance(value, str) and len(value) > 16:  # across the sheet, not one wide column
            _long_text(ws, row, 2, value, last_col=6, chars_per_line=70)
            row += 1
            continue
        cell = ws.cell(row=row, column=2, value=value)
        cell.alignment = Alignment(horizontal="left")  # a list of facts, read left to right
        if fmt and isinstance(value, (int, float)):
            cell.number_format = fmt
        row += 1
    for notice in panel.notices:
        ws.cell(row=row, column=1, value="Notice").font = Font(bold=True)
        _long_text(ws, row, 2, notice, last_col=6, chars_per_line=60)
        row += 1
    return row


def _line_block(ws: Worksheet, result: BalanceResult, row: int) -> _Table:
    """The per-line figures of each state (before and after; as it stands, with the additions
    and after when there are new circuits), titled at ``row``."""
    panel = result.after_panel
    shown = states(result)
    _section(ws, row, "Per-line figures")
    row += 1
    header_row = row
    titles = [f"{s.title} VA" for s in shown] + ["Average VA"]
    _header(ws, row, ["Line", *titles, *[f"{s.title} A RMS" for s in shown]])
    if len(shown) > 2:  # "With additions A RMS" wraps: room for two lines
        ws.row_dimensions[row].height = 30
    average = result.after.total_va / len(panel.lines)
    first_row = row + 1
    for line in panel.lines:
        row += 1
        _put(ws, row, 1, line)
        ws.cell(row=row, column=1).alignment = _CENTRE
        for col, state in enumerate(shown, start=2):
            _put(ws, row, col, state.loads.phase_va[line], VA)
            _put(ws, row, col + len(shown) + 1, state.loads.line_amps[line], AMPS)
        _put(ws, row, 2 + len(shown), average, VA)
    return _Table(header_row, first_row, row, 1 + len(shown))


def _totals_block(ws: Worksheet, result: BalanceResult, row: int) -> int:
    """The whole panel's figures before and after, titled at ``row``; returns the last row."""
    neutral = result.after_panel.system.neutral
    shown = states(result)
    _section(ws, row, "Totals")
    row += 1
    _header(ws, row, ["Figure", *[s.title for s in shown]])
    figures: list[tuple[str, Callable[[Loads], Any], str]] = [
        ("Total VA", lambda x: x.total_va, VA),
        ("Spread VA (heaviest - lightest)", lambda x: x.spread_va, VA),
        ("Imbalance % (NEMA MG 1 definition)", lambda x: x.imbalance_pct, PCT),
        (
            "Current unbalance |I2|/|I1| %",
            lambda x: "3-phase only" if x.unbalance_factor_pct is None else x.unbalance_factor_pct,
            PCT,
        ),
        (
            "Neutral current A RMS",
            lambda x: x.neutral_amps if neutral else "no neutral",
            AMPS,
        ),
        ("Heaviest line", lambda x: x.heaviest_line, ""),
    ]
    for label, get, fmt in figures:
        row += 1
        _put(ws, row, 1, label)
        for col, state in enumerate(shown, start=2):
            _put(ws, row, col, get(state.loads), fmt)
    if result.new_circuits:  # what each state is: the with-additions column is the 0-move row
        for state in shown:
            row += 1
            label = ws.cell(row=row, column=1, value=state.title)
            label.font = Font(bold=True)
            label.alignment = Alignment(vertical="top")
            _long_text(ws, row, 2, state.detail, last_col=6, chars_per_line=60)
    return row


def _result_block(ws: Worksheet, result: BalanceResult, row: int) -> int:
    """How the balancing ended, its notes and what was not placed, titled at ``row``; returns
    the last row."""
    from balancer.optimize.goals import goal_for
    from balancer.report.text import plain_notes, proof_sentence

    _section(ws, row, "Result")
    facts: list[tuple[str, Any, str | None]] = [
        ("Status", STATUS_TEXT[result.status], None),
        ("How good", proof_sentence(result), None),
        ("Balanced for", goal_for(result.first_goal).label.lower(), None),
        ("Moves", len(result.moves), "0"),
        ("Engine", result.engine, None),
        ("Solve time s", result.solve_seconds, "0.00"),
    ]
    for label, value, fmt in facts:
        row += 1
        _put(ws, row, 1, label)
        ws.cell(row=row, column=1).alignment = Alignment(vertical="top")
        if isinstance(value, str) and len(value) > 16:
            _long_text(ws, row, 2, value, last_col=6, chars_per_line=60)
        else:
            _put(ws, row, 2, value, fmt)
    for note in plain_notes(list(result.notes), verbose=False):
        row += 1
        _put(ws, row, 1, "Note")
        ws.cell(row=row, column=1).alignment = Alignment(vertical="top")
        _long_text(ws, row, 2, note, last_col=6, chars_per_line=60)
    if result.after.unplaced:
        row += 1
        _put(ws, row, 1, "Not placed (left out of the figures)")
        _put(ws, row, 2, ", ".join(result.after.unplaced))
    return row


def _cautions_block(ws: Worksheet, row: int) -> None:
    """The cautions, titled at ``row``."""
    _section(ws, row, "Cautions")
    for note in CAUTIONS:
        row += 1
        _long_text(ws, row, 1, note, last_col=6, chars_per_line=95)


def _side_cells(panel: Panel, space: int) -> tuple[Any, Any, Any, Any, Any, Circuit | None]:
    """Description, design load VA and VA balanced on, on this space's line, trip and poles for
    one space."""
    occupant = next((c for c in panel.circuits if space in c.spaces), None)
    if occupant is None:
        return "(space)", None, None, None, None, None
    line = panel.geometry.line_of(space)
    share = share_by_line(panel, occupant).get(line, 0.0)
    design = occupant.load_va / len(occupant.spaces)  # the same convention on the design load
    if space == occupant.first_space:
        return occupant.description, design, share, occupant.trip_a, occupant.poles, occupant
    return f"(pole of space {occupant.first_space})", design, share, None, None, occupant


def _layout(ws: Worksheet, result: BalanceResult) -> None:
    """The Layout sheet: the panel as built, two spaces a row, then each line's totals."""
    panel = result.after_panel
    ws.title = "Layout"
    ws["A1"] = f"{panel.name}: revised layout, as the panel is built (odd spaces left, even right)"
    ws["A1"].font = _TITLE_FONT
    # Readings replaced some loads (--basis measured or larger): a "Balanced VA" column beside
    # each "Load VA" (the design load) gives the figure the balance was made on.
    k = 1 if any(c.balance_va is not None for c in panel.circuits) else 0
    side = ["Trip A", "Poles", "Space"]
    load = ["Load VA", "Balanced VA"][: 1 + k]
    titles = ["Was", "Description", *load, *side, "Line", *side[::-1], *load[::-1], "Description"]
    titles.append("Was")
    high_leg = panel.system.high_leg_note()
    note = (
        f"{panel.system.label()}. Load VA is each circuit's share on that row's line"
        + (" (schedule VA); Balanced VA the share it was balanced on" if k else "")
        + ". 'Was' gives the old spaces of a moved breaker."
        + (f" {high_leg} Its Line cells are orange." if high_leg else "")
    )
    # across the table, wrapped: a note wider than the table would shrink the printed page
    _long_text(ws, 2, 1, note, last_col=len(titles), chars_per_line=150)
    _header(ws, 3, titles)
    before_spaces = {c.id: c.spaces for c in result.before_panel.circuits}
    totals = dict.fromkeys(panel.lines, 0.0)
    balanced = dict.fromkeys(panel.lines, 0.0)
    row = 3
    for pair in range(panel.geometry.rows()):
        row += 1
        _layout_row(ws, row, panel, pair, k, before_spaces, (totals, balanced))
    _line_totals(ws, row + 2, result, load, totals, balanced)
    _widths(ws, [8, 30, *[10] * (1 + k), 7, 6, 7, 6, 7, 6, 7, *[10] * (1 + k), 30, 8])
    ws.freeze_panes = "A4"
    print_setup(ws, landscape=True, title_rows="1:3")


def _layout_row(
    ws: Worksheet,
    row: int,
    panel: Panel,
    pair: int,
    k: int,
    before_spaces: dict[str, tuple[int, ...]],
    sums: tuple[dict[Line, float], dict[Line, float]],
) -> None:
    """One row of the layout: the odd space, the line, the even space. Adds the row's design
    and balanced loads to ``sums``."""
    totals, balanced = sums
    left, right = 2 * pair + 1, 2 * pair + 2
    line = panel.geometry.line_of(left)
    sides = (
        (left, (2, 3, 4, 4 + k, 5 + k, 6 + k, 1)),
        (right, (12 + 2 * k, 11 + 2 * k, 11 + k, 10 + k, 9 + k, 8 + k, 13 + 2 * k)),
    )
    for space, cols in sides:
        if space > panel.spaces:
            continue
        description, design, share, trip, poles, occupant = _side_cells(panel, space)
        d_col, va_col, bal_col, trip_col, poles_col, space_col, was_col = cols
        _put(ws, row, d_col, description)
        _put(ws, row, va_col, design, VA)
        if k:
            _put(ws, row, bal_col, share, VA)
        _put(ws, row, trip_col, trip, "0")
        _put(ws, row, poles_col, poles, "0")
        _put(ws, row, space_col, space, "0")
        ws.cell(row=row, column=space_col).alignment = _CENTRE
        moved = occupant is not None and before_spaces.get(occupant.id) != occupant.spaces
        was = _spaces_text(before_spaces.get(occupant.id, ())) if moved and occupant else None
        _put(ws, row, was_col, was)
        if design:
            totals[line] += design
        if share:
            balanced[line] += share
        if description == "(space)":
            ws.cell(row=row, column=d_col).font = Font(italic=True, color="6B7785")
        if moved:
            for col in set(cols):
                ws.cell(row=row, column=col).fill = _MOVED_FILL
    line_col = 7 + k
    _put(ws, row, line_col, line)
    centre = ws.cell(row=row, column=line_col)
    centre.alignment = _CENTRE
    centre.font = Font(bold=True)
    centre.fill = _HIGH_LEG_FILL if line == panel.system.high_leg else _LINE_FILL


def _line_totals(
    ws: Worksheet,
    row: int,
    result: BalanceResult,
    load: list[str],
    totals: dict[Line, float],
    balanced: dict[Line, float],
) -> None:
    """Each line's design (and balanced) load and current under the layout, titled at ``row``."""
    k = len(load) - 1
    _section(ws, row, "Line totals")
    row += 1
    _header(ws, row, ["Line", *load, "A RMS"], col=2)
    for line in result.after_panel.lines:
        row += 1
        _put(ws, row, 2, line)
        _put(ws, row, 3, totals[line], VA)
        if k:
            _put(ws, row, 4, balanced[line], VA)
        _put(ws, row, 4 + k, result.after.line_amps[line], AMPS)
    if result.after_panel.system.neutral:
        row += 1
        _put(ws, row, 2, "N")
        _put(ws, row, 3, None)
        _put(ws, row, 4 + k, result.after.neutral_amps, AMPS)


def _changes(ws: Worksheet, result: BalanceResult) -> None:
    ws.title = "Changes"
    moved = {m.circuit_id for m in result.moves}
    ws["A1"] = f"{result.after_panel.name}: {len(moved)} breaker(s) change spaces"
    ws["A1"].font = _TITLE_FONT
    balanced = any(c.balance_va is not None for c in result.before_panel.circuits)
    titles = [
        "Circuit",
        "Description",
        "Poles",
        "Load VA",
        *(["Balanced VA"] if balanced else []),
        "Old spaces",
        "Old lines",
        "New spaces",
        "New lines",
        "Moved",
    ]
    _header(ws, 2, titles)
    after = {c.id: c for c in result.after_panel.circuits}
    row = 2
    for circuit in result.before_panel.circuits:
        new = after.get(circuit.id, circuit)
        row += 1
        values: list[tuple[Any, str | None]] = [
            (circuit.id, None),
            (circuit.description, None),
            (circuit.poles, "0"),
            (circuit.load_va, VA),
            *([(circuit.basis_va, VA)] if balanced else []),
            (_spaces_text(circuit.spaces), None),
            (_lines_text(result.before_panel.lines_of(circuit)), None),
            (_spaces_text(new.spaces), None),
            (_lines_text(result.after_panel.lines_of(new)), None),
            ("moved" if circuit.id in moved else "", None),
        ]
        for col, (value, fmt) in enumerate(values, start=1):
            _put(ws, row, col, value, fmt)
            if col >= 5 + balanced:
                ws.cell(row=row, column=col).alignment = _CENTRE
            if circuit.id in moved:
                ws.cell(row=row, column=col).fill = _MOVED_FILL
    ws.auto_filter.ref = f"A2:{get_column_letter(len(titles))}{row}"
    _widths(ws, [9, 32, 6, 10, *([10] if balanced else []), 11, 9, 11, 9, 8])
    ws.freeze_panes = "A3"
    print_setup(ws, landscape=True, title_rows="2:2")


def _circuits(ws: Worksheet, panel: Panel) -> None:
    ws.title = CIRCUITS_SHEET
    # a high-leg delta's list says which line is the high leg above its header (the reader
    # takes the header wherever it is)
    header_row = 1
    if panel.system.high_leg:
        ws.cell(row=1, column=1, value=panel.system.high_leg_note()).font = Font(bold=True)
        header_row = 2
    write_circuit_table(ws, panel, header_row)
    ws.freeze_panes = f"C{header_row + 1}"
    print_setup(ws, landscape=True, title_rows=f"{header_row}:{header_row}")


NOTE_WRAP_CHARS = 30


def write_circuit_table(
    ws: Worksheet, panel: Panel, header_row: int, shaded: frozenset[str] = frozenset()
) -> int:
    """The panel's circuits as a list the reader takes back: a header at ``header_row``, one
    row per circuit in the panel's order, the ids in ``shaded`` filled. Returns the last row."""
    columns = [
        column
        for i, column in enumerate(_circuit_columns())
        if i < _ALWAYS or any(column[1](c) is not None for c in panel.circuits)
    ]
    # The lines, for the reader's eye: the reader takes the space as the truth and this column
    # as information only, so a round trip cannot disagree with itself.
    columns.insert(1, (_phase_header(), lambda c: "-".join(panel.lines_of(c)) or None, "@"))
    extra_headers: list[str] = []
    for circuit in panel.circuits:
        for header, _ in circuit.extra:
            if header not in extra_headers:
                extra_headers.append(header)
    _header(ws, header_row, [name for name, _, _ in columns] + extra_headers)
    names = [name for name, _, _ in columns] + extra_headers
    wrapped = [  # free text wraps; the description stays on one line, its column sized to it
        col for col, name in enumerate(names, start=1) if col > len(columns) or name == "Notes"
    ]
    row = header_row
    for row, circuit in enumerate(panel.circuits, start=header_row + 1):
        for col, (_, get, fmt) in enumerate(columns, start=1):
            _put(ws, row, col, get(circuit), fmt)
        extra = dict(circuit.extra)
        for col, header in enumerate(extra_headers, start=len(columns) + 1):
            _put(ws, row, col, extra.get(header))
        for col in wrapped:
            value = ws.cell(row=row, column=col).value
            if isinstance(value, str) and len(value) > NOTE_WRAP_CHARS:
                ws.cell(row=row, column=col).alignment = _WRAP  # notes wrap, the list stays narrow
                lines = math.ceil(len(value) / (NOTE_WRAP_CHARS - 4))
                height = ws.row_dimensions[row].height or 15
                ws.row_dimensions[row].height = max(height, 15 * lines + 2)
                for other in range(1, len(columns) + len(extra_headers) + 1):
                    cell = ws.cell(row=row, column=other)
                    if not cell.alignment.wrap_text:  # the row reads from its top line
                        cell.alignment = Alignment(vertical="top")
        if circuit.id in shaded:
            for col in range(1, len(columns) + len(extra_headers) + 1):
                ws.cell(row=row, column=col).fill = _MOVED_FILL
    width = {"Description": 32, "Notes": 32}
    _widths(ws, [width.get(name, 10) for name, _, _ in columns] + [14] * len(extra_headers))
    pad_text(ws)
    return row


def _tradeoff(ws: Worksheet, result: BalanceResult) -> None:
    from balancer.io.charts import tradeoff_chart

    ws.title = "Trade-off"
    ws["A1"] = "Best balance reachable with at most this many moves"
    ws["A1"].font = _TITLE_FONT
    _header(ws, 2, ["Moves allowed", "Spread VA", "Imbalance %", "Neutral A", "Status"])
    row = 2
    for entry in result.tradeoff:
        row += 1
        _put(ws, row, 1, entry.moves, "0")
        _put(ws, row, 2, entry.spread_va, VA)
        _put(ws, row, 3, entry.imbalance_pct, "0.0")
        _put(ws, row, 4, entry.neutral_a, AMPS)
        _put(ws, row, 5, entry.status.value)
    if result.new_circuits:
        from balancer.field.tradeoff import NEW_ROW_NOTE

        note = NEW_ROW_NOTE.format(count=len(result.new_circuits))
        _long_text(ws, row + 2, 1, f"Note: {note}", last_col=5, chars_per_line=55)
    _widths(ws, [14, 12, 12, 11, 11])
    chart = tradeoff_chart(
        ws, header_row=2, first_row=3, last_row=row, moves_col=1, imbalance_col=3
    )
    ws.add_chart(chart, "G2")
    print_setup(ws, landscape=True, title_rows="2:2")


def _phasors(ws: Worksheet, result: BalanceResult, harmonic: Sequence[float | None] | None) -> None:
    from openpyxl.drawing.image import Image

    from balancer.io.charts import draw_phasor_diagram, phasor_arrows, phasor_figure_bytes

    ws.title = "Phasors"
    ws["A1"] = "Line and neutral current phasors (RMS, fundamental), before and after"
    ws["A1"].font = _TITLE_FONT
    _header(ws, 2, ["Current", "Before A", "Before angle °", "After A", "After angle °"])
    before = phasor_arrows(result.before_panel)
    after = phasor_arrows(result.after_panel)
    row = 2
    for old, new in zip(before, after, strict=True):
        row += 1
        name = "Neutral" if old.kind == "neutral" else f"Line {old.label}"
        _put(ws, row, 1, name)
        _put(ws, row, 2, old.magnitude_a, AMPS)
        _put(ws, row, 3, old.angle_deg, "0.0")
        _put(ws, row, 4, new.magnitude_a, AMPS)
        _put(ws, row, 5, new.angle_deg, "0.0")
    ws.cell(row=row + 1, column=1, value="Angles from line A's line-to-neutral voltage.")
    ws.cell(
        row=row + 2,
        column=1,
        value=f"Panel {result.after_panel.name}: {result.after_panel.system.label()}.",
    )
    _widths(ws, [14, 11, 14, 11, 14])
    fig = draw_phasor_diagram(
        before,
        after,
        harmonic_neutral_rms_a=harmonic,
        title=f"{result.after_panel.name}: current phasors",
    )
    image = Image(io.BytesIO(phasor_figure_bytes(fig, "png", dpi=90)))
    ws.add_image(image, f"A{row + 4}")
    print_setup(ws, landscape=True, title_rows=None)


def _notes(ws: Worksheet) -> None:
    ws.title = "Notes"
    ws["A1"] = "Cautions and how to read this workbook"
    ws["A1"].font = _TITLE_FONT
    lines = [
        *CAUTIONS,
        "Per-line VA follows the usual schedule convention (common practice): a 1-pole load "
        "counts wholly on its line, a 2-pole load half on each line, a 3-pole load a third.",
        "Imbalance % is the largest deviation from the average line load, divided by the average "
        "(the NEMA MG 1 definition, applied to loads).",
        "Currents are phasor sums at the fundamental frequency from the schedule's VA and power "
        "factors; the neutral carries the sum of the 1-pole circuit currents.",
        "A result is called optimal (proven) only when no arrangement can beat it by more than "
        "the margin stated beside it (1 VA of phase spread unless asked otherwise); otherwise "
        "the Summary says how much better another arrangement might still be.",
        "The 'Circuits' sheet can be read back by balancer; edit it there and run again.",
    ]
    for row, text in enumerate(lines, start=3):
        cell = ws.cell(row=row, column=1, value=text)
        cell.alignment = _WRAP
        ws.row_dimensions[row].height = 15 * math.ceil(len(text) / 70) + 3
    ws.column_dimensions["A"].width = 80
    print_setup(ws, landscape=True, title_rows=None)  # room for the running header
    ws.print_options.horizontalCentered = False


HEADER_MIN_CELLS = 4


def row_role(values: Sequence[Any]) -> str:
    """How an extra sheet's row reads: ``blank``, ``title`` (one cell), ``header`` (four or more
    cells, all text) or ``data``. Other parts of balancer hand over free-form rows (a title, key
    and value pairs, then tables), so the look is taken from the rows themselves."""
    cells = [v for v in values if v is not None and v != ""]
    if not cells:
        return "blank"
    if len(values) == 1:
        return "title"
    if len(cells) >= HEADER_MIN_CELLS and all(isinstance(v, str) for v in values):
        return "header"
    return "data"


def row_has_tenths(values: Sequence[Any]) -> bool:
    """Whether a row of figures has one with a fraction: then all its decimals are shown to one
    place ("148.0  145.8", not "148  145.8")."""
    return any(isinstance(v, float) and not v.is_integer() for v in values)


LONG_TEXT_CHARS = 40
COLUMN_CHARS_MAX = 40


def tenths_columns(rows: Sequence[Sequence[Any]]) -> list[set[int]]:
    """For each row, the columns whose figures show one decimal: those where some row of the
    same run of data rows has a fraction, so a column reads "113.4 … 138.0", not "… 138"."""
    out: list[set[int]] = []
    run: list[int] = []

    def close() -> None:
        columns = {
            c
            for i in run
            for c, v in enumerate(rows[i])
            if isinstance(v, float) and not v.is_integer()
        }
        for i in run:
            out[i] = columns
        run.clear()

    for index, values in enumerate(rows):
        out.append(set())
        if row_role(values) == "data":
            run.append(index)
        else:
            close()
    close()
    return out


def write_rows_sheet(ws: Worksheet, title: str, rows: Sequence[Sequence[Any]]) -> None:
    ws.title = title[:31]
    span = max([len(v) for v in rows if row_role(v) == "header"] + [4])
    widths: list[float] = [10.0] * span
    decimals = tenths_columns(rows)
    for r, values in enumerate(rows, start=1):
        role = row_role(values)
        if role == "header":
            _header(ws, r, [str(v) for v in values])
            for c, value in enumerate(values):
                widths[c] = max(widths[c], min(COLUMN_CHARS_MAX, len(str(value)) + 3))
            continue
        if role == "title":
            ws.cell(row=r, column=1, value=values[0]).font = _SECTION_FONT
            continue
        long_text = len(values) == 2 and isinstance(values[1], str)
        if long_text and len(values[1]) > LONG_TEXT_CHARS:
            label = ws.cell(row=r, column=1, value=values[0])
            label.font = Font(bold=True)
            label.alignment = Alignment(vertical="top")
            chars = int(sum(widths[1:span])) or 60
            _long_text(ws, r, 2, values[1], last_col=span, chars_per_line=max(30, chars))
            continue
        tenths = row_has_tenths(values)
        for c, value in enumerate(values, start=1):
            cell = ws.cell(row=r, column=c, value=value)
            if isinstance(value, float):
                cell.number_format = "#,##0.0" if tenths or c - 1 in decimals[r - 1] else VA
            elif isinstance(value, int) and not isinstance(value, bool):
                cell.number_format = VA
            if c == 1 and isinstance(value, str):
                cell.font = Font(bold=True)
            cell.alignment = Alignment(vertical="top")
            while len(widths) < c:
                widths.append(10.0)
            closing = c == len(values) > 1 and len(values) < span and isinstance(value, str)
            if closing and len(str(value)) > widths[c - 1]:
                # a short row's closing text, across the empty cells beside it, not one wide column
                room = int(sum(widths[c - 1 : span]))
                _long_text(ws, r, c, str(value), last_col=span, chars_per_line=max(20, room))
                continue
            if isinstance(value, str) and len(value) > COLUMN_CHARS_MAX:
                cell.alignment = _WRAP
                # Proportional type fits fewer characters than the column's nominal width.
                lines = math.ceil(len(value) / (COLUMN_CHARS_MAX * 0.8))
                height = ws.row_dimensions[r].height or 15
                ws.row_dimensions[r].height = max(height, 15 * lines + 2)
            widths[c - 1] = max(widths[c - 1], min(COLUMN_CHARS_MAX, len(str(value)) + 2))
    _widths(ws, widths)
    pad_text(ws)
    print_setup(ws, landscape=True, title_rows=None)


HARMONIC_MARGIN_A = 0.05  # below this the RMS and fundamental neutral currents count as equal


def harmonic_neutral(*loads: Loads) -> tuple[float | None, ...] | None:
    """Neutral RMS currents with harmonics, or None when harmonics change none of them."""
    values = [getattr(x, "neutral_rms_a", None) for x in loads]
    differs = any(
        v is not None and abs(v - x.neutral_a) > HARMONIC_MARGIN_A
        for v, x in zip(values, loads, strict=True)
    )
    return tuple(values) if differs else None


def write_workbook(
    result: BalanceResult,
    path: Path | str,
    *,
    input_path: Path | str | None = None,
    extra_sheets: Sequence[ExtraSheet] = (),
    demand: DemandResult | None = None,
    order: WorkOrder | None = None,
    phasor_diagram: bool = True,
    harmonic_neutral_rms_a: Sequence[float | None] | None = None,
    balanced_on: str | None = None,
    peak: PeakFigures | None = None,
) -> Path:
    """Write the revised schedule workbook for ``result`` to ``path`` and return the path.

    Parameters
    ----------
    result
        The balancing result (before and after panels and figures).
    path
        The new workbook. Refused when it is the input (``input_path`` or the panel's source).
    input_path
        The schedule that was read, when known.
    extra_sheets
        More ``(title, rows)`` sheets, placed after the built-in ones. Rows are free-form: a
        one-cell row is a title, a row of four or more text cells a table header.
    demand
        Demand loads and feeder check (:func:`balancer.code.demand.compute_demand`), as a "Demand"
        sheet.
    order
        The work order planned for the result, as a "Work order" sheet when it has steps.
    phasor_diagram
        Add the "Phasors" sheet with the diagram image (needs matplotlib and Pillow).
    harmonic_neutral_rms_a
        Neutral RMS current with harmonics before and after; taken from the figures when not
        given, and drawn as bars only when harmonics change the neutral.
    balanced_on
        The date written as the revised schedule's "Balanced" line (today when not given); the
        schedule's own revision is kept beside it.
    peak
        The load over time (:func:`balancer.report.peak.peak_figures`), as a "Load over time"
        sheet and an "Intervals" sheet.

    Raises
    ------
    OutputError
        When ``path`` is the input file or cannot be written.
    """
    path = Path(path)
    refuse_input_path(path, input_path, result.before_panel.source or None)
    after = result.after_panel
    result = replace(result, after_panel=replace(after, header=revised_header(after, balanced_on)))
    wb = Workbook()
    summary = wb.active
    assert summary is not None
    _summary_chart(summary, _summary(summary, result))
    _layout(wb.create_sheet(), result)
    _changes(wb.create_sheet(), result)
    _circuits(wb.create_sheet(), result.after_panel)
    _panel_sheet(wb.create_sheet(), result.after_panel)
    if result.tradeoff:
        _tradeoff(wb.create_sheet(), result)
    if phasor_diagram:
        if harmonic_neutral_rms_a is None:
            harmonic_neutral_rms_a = harmonic_neutral(result.before, result.after)
        _phasors(wb.create_sheet(), result, harmonic_neutral_rms_a)
    _added_sheets(wb, extra_sheets, demand, order, peak)
    _notes(wb.create_sheet())
    if any(c.balance_va is not None for c in result.after_panel.circuits):
        for sheet in wb.worksheets:  # printed, every page says what the figures stand on
            sheet.oddFooter.center.text = LOAD_BASIS_FOOTER
    for sheet in wb.worksheets:
        running_header(sheet, result.after_panel)
        if sheet.title != "Intervals":  # every interval: plain figures, set widths
            pad_text(sheet)
        if sheet.title not in ("Intervals", "Load over time"):  # these set their own widths
            fit_columns(sheet)
    wb.properties.title = f"{result.after_panel.name} revised schedule"
    wb.properties.creator = "balancer"
    return save_workbook(wb, path)


def _summary_chart(summary: Worksheet, table: _Table) -> None:
    """The per-line chart of the Summary sheet, under its table."""
    from balancer.io.charts import phase_load_chart

    chart = phase_load_chart(
        summary,
        header_row=table.header_row,
        first_row=table.first_row,
        last_row=table.last_row,
        line_col=1,
        before_col=2,
        after_col=table.after_col,
        average_col=table.after_col + 1,
        middle_col=3 if table.after_col == 4 else None,
    )
    summary.add_chart(chart, f"A{table.last_row + 2}")


def _added_sheets(
    wb: Workbook,
    extra_sheets: Sequence[ExtraSheet],
    demand: DemandResult | None,
    order: WorkOrder | None,
    peak: PeakFigures | None = None,
) -> None:
    """The load over time, work order and demand sheets, when given, then the extra sheets;
    refused when a name would repeat a sheet's."""
    if peak is not None:
        from balancer.io.overtime import write_over_time_sheets

        write_over_time_sheets(wb, peak)
    sheets = list(extra_sheets)
    if demand is not None:
        from balancer.code.demand import demand_sheet_rows

        sheets.insert(0, ("Demand", demand_sheet_rows(demand)))
    if order is not None and order.steps:
        from balancer.field.workorder import work_order_rows

        sheets.insert(0, ("Work order", work_order_rows(order)))
    taken = set(wb.sheetnames)
    for title, rows in sheets:
        name = title[:31]
        if name in taken:
            raise ValueError(f"extra sheet {title!r} would repeat a sheet name")
        taken.add(name)
        write_rows_sheet(wb.create_sheet(), name, rows)

"""The load over time in the workbook and the PDF: the widest interval before and after, NEC
220.87 from the data, mean loading by hour as a heat map, the spread per interval over the week
around the widest interval as a chart, and every interval in a sheet of its own."""

from __future__ import annotations

from typing import TYPE_CHECKING, Any

import numpy as np
from openpyxl.cell import Cell
from openpyxl.chart import LineChart, Reference
from openpyxl.chart.series import SeriesLabel
from openpyxl.chart.shapes import GraphicalProperties
from openpyxl.formatting.rule import ColorScaleRule
from openpyxl.utils import get_column_letter
from openpyxl.workbook import Workbook

from balancer.report.peak import PeakFigures

if TYPE_CHECKING:
    from openpyxl.worksheet.worksheet import Worksheet

    from balancer.io.pdf import _Page

__all__ = ["over_time_page", "write_over_time_sheets"]

# The Intervals sheet holds every interval up to this many (a year of hourly data; writing a
# cell costs a spreadsheet library about 30 µs), else the four weeks around the widest one.
SHEET_ROWS = 8_760
SHEET_WEEKS = 4
HEAT_LOW, HEAT_MID, HEAT_HIGH = "F7F4EC", "E9B872", "A4443B"  # cool paper to brick red


def _window(figures: PeakFigures, weeks: int = 1) -> slice:
    """The weeks around the widest interval (after balancing when there is an after)."""
    return figures.window(weeks)


def _basis(figures: PeakFigures) -> str:
    series = figures.series
    if series.kind == "measured":
        return f"measured: {series.source}, every {series.interval_min} min"
    return f"typical load shapes (invented, replace with your own): {series.source}"


def write_over_time_sheets(wb: Workbook, figures: PeakFigures) -> None:
    """A "Load over time" sheet (figures, heat map, chart) and an "Intervals" sheet."""
    from balancer.io.writer import _TITLE_FONT, _long_text, print_setup

    ws = wb.create_sheet("Load over time")
    ws["A1"] = "Load over time"
    ws["A1"].font = _TITLE_FONT
    _long_text(ws, 2, 1, f"Load basis: {_basis(figures)}", last_col=8, chars_per_line=90)
    row = 3
    notes = [f"Note: {n}" for n in figures.series.notices]
    shown, count = _sheet_rows(figures), len(figures.series.starts)
    if shown.stop - shown.start < count:
        notes.append(
            f"The Intervals sheet shows {shown.stop - shown.start:,} of the {count:,} intervals, "
            f"the {SHEET_WEEKS} weeks around the widest; every interval was balanced on."
        )
    for note in notes:
        _long_text(ws, row, 1, note, last_col=8, chars_per_line=90)
        row += 1
    row = _widest_block(ws, figures, row + 1)
    row = _existing_block(ws, figures, row)
    row, last_col = _hour_block(ws, figures, row + 2)
    data = wb.create_sheet("Intervals")
    _intervals_sheet(data, figures)
    end = _week_chart(ws, data, figures, row + 2)
    ws.column_dimensions["A"].width = 24
    ws.column_dimensions["B"].width = 18
    for col in range(3, last_col + 1):
        ws.column_dimensions[get_column_letter(col)].width = 14
    ws.print_area = f"A1:{get_column_letter(max(8, last_col))}{end}"
    print_setup(ws, landscape=True, title_rows=None)


def _widest(figures: PeakFigures) -> list[tuple[str, str, list[float], float]]:
    """The widest interval as it stands and after: title, start, per-line VA, spread."""
    shown: list[tuple[str, np.ndarray]] = [("As it stands", figures.before_va)]
    if figures.after_va is not None:
        shown.append(("After balancing", figures.after_va))
    out = []
    for title, va in shown:
        t = int(np.argmax(va.max(axis=1) - va.min(axis=1)))
        out.append((title, figures.stamp(t), [float(v) for v in va[t]], float(np.ptp(va[t]))))
    return out


def _widest_block(ws: Worksheet, figures: PeakFigures, row: int) -> int:
    from balancer.io.writer import _header, _put, _section

    _section(ws, row, "Widest interval (largest phase spread)")
    row += 1
    lines = figures.lines
    _header(
        ws, row, ["Arrangement", "Interval start", *[f"Line {x} VA" for x in lines], "Spread VA"]
    )
    for title, stamp, per_line, spread in _widest(figures):
        row += 1
        _put(ws, row, 1, title)
        _put(ws, row, 2, stamp)
        for j, value in enumerate(per_line):
            _put(ws, row, 3 + j, value, "#,##0")
        _put(ws, row, 3 + len(lines), spread, "#,##0")
    return row


def _existing_block(ws: Worksheet, figures: PeakFigures, row: int) -> int:
    from balancer.io.writer import _long_text, _put, _section

    existing = figures.existing
    if existing is None:
        return row
    row += 2
    _section(ws, row, "Existing load from the data (NEC 220.87)")
    facts = [
        ("Heaviest line", f"Line {existing.line}"),
        (f"Maximum {existing.window_min}-minute demand", f"{existing.demand_a:,.1f} A"),
        ("At 125 %", f"{existing.existing_a:,.1f} A"),
        ("Data", existing.remark),
    ]
    for label, value in facts:
        row += 1
        _put(ws, row, 1, label)
        _long_text(ws, row, 2, value, last_col=7, chars_per_line=80)
    return row


def _hour_block(ws: Worksheet, figures: PeakFigures, row: int) -> tuple[int, int]:
    """Mean VA per line by hour of day, coloured from light (low) to dark (high); returns the
    last row and column."""
    from balancer.io.writer import _header, _put, _section

    _section(ws, row, "Mean load per line by hour of day (VA)")
    row += 1
    heads = ["Hour"] + [f"As it stands {x}" for x in figures.lines]
    tables = [figures.by_hour(after=False)]
    if figures.after_va is not None:
        heads += [f"After {x}" for x in figures.lines]
        tables.append(figures.by_hour(after=True))
    _header(ws, row, heads)
    top = row + 1
    for hour in range(24):
        row += 1
        _put(ws, row, 1, f"{hour:02d}:00")
        values = np.concatenate([t[hour] for t in tables])
        for j, value in enumerate(values):
            _put(ws, row, 2 + j, None if np.isnan(value) else float(value), "#,##0")
    span = f"B{top}:{ws.cell(row=row, column=len(heads)).coordinate}"
    ws.conditional_formatting.add(
        span,
        ColorScaleRule(
            start_type="min",
            start_color=HEAT_LOW,
            mid_type="percentile",
            mid_value=50,
            mid_color=HEAT_MID,
            end_type="max",
            end_color=HEAT_HIGH,
        ),
    )
    return row, len(heads)


def _week_chart(ws: Worksheet, data: Worksheet, figures: PeakFigures, row: int) -> int:
    """The spread per interval over the week around the widest one, before and after, with the
    widest interval marked, drawn from the "Intervals" sheet; returns the row under it."""
    from balancer.io.writer import _section

    window = _window(figures)
    _section(ws, row, "Phase spread per interval, the week around the widest interval")
    shown = _sheet_rows(figures)
    first = window.start - shown.start + 2  # data rows on the Intervals sheet
    last = window.stop - shown.start + 1
    spread_cols = _spread_columns(figures)
    chart = LineChart()
    chart.title = "Phase spread per interval (VA)"
    chart.y_axis.title = "Spread (VA)"
    chart.x_axis.title = "Interval start"
    for col in spread_cols:
        chart.add_data(Reference(data, min_col=col, min_row=first, max_row=last))
    chart.set_categories(Reference(data, min_col=1, min_row=first, max_row=last))
    names = [*["As it stands", "After balancing"][: len(spread_cols) - 1], "Widest interval"]
    for s, name in zip(chart.series, names, strict=True):
        s.tx = SeriesLabel(v=name)
        s.smooth = False
        s.marker.symbol = "none"
    mark = chart.series[-1]
    mark.marker.symbol = "diamond"
    mark.marker.size = 9
    mark.marker.graphicalProperties = GraphicalProperties(solidFill=HEAT_HIGH)
    mark.marker.graphicalProperties.line.solidFill = HEAT_HIGH
    mark.graphicalProperties.line.noFill = True
    chart.x_axis.delete = False
    chart.y_axis.delete = False
    chart.x_axis.tickLblSkip = max(1, (window.stop - window.start) // 4)
    chart.height = 8.0
    chart.width = 24.0
    ws.add_chart(chart, f"A{row + 1}")
    return row + 18


def _spread_columns(figures: PeakFigures) -> list[int]:
    """Columns of the Intervals sheet the chart draws: each spread, then the widest mark."""
    width = len(figures.lines) + 1
    cols = [1 + width]
    if figures.after_va is not None:
        cols.append(1 + 2 * width)
    return [*cols, cols[-1] + 1]


def _sheet_rows(figures: PeakFigures) -> slice:
    """The intervals the Intervals sheet holds: all, or the weeks around the widest."""
    if len(figures.series.starts) <= SHEET_ROWS:
        return slice(0, len(figures.series.starts))
    return _window(figures, SHEET_WEEKS)


def _intervals_sheet(ws: Worksheet, figures: PeakFigures) -> None:
    """Each interval (all of them, or the weeks around the widest when the horizon is long):
    line VA and spread as it stands, and after balancing, and the widest interval's spread in a
    column of its own (the chart marks it)."""
    from balancer.io.writer import _header, print_setup

    lines = figures.lines
    heads = ["Interval start", *[f"As it stands {x} VA" for x in lines], "As it stands spread VA"]
    blocks = [figures.before_va]
    if figures.after_va is not None:
        heads += [*[f"After {x} VA" for x in lines], "After spread VA"]
        blocks.append(figures.after_va)
    heads.append("Widest interval VA")
    _header(ws, 1, heads)
    values = np.concatenate(
        [np.column_stack([b, b.max(axis=1) - b.min(axis=1)]) for b in blocks], axis=1
    )
    widest = figures.worst(after=figures.after_va is not None)
    shown = _sheet_rows(figures)
    stamps = np.datetime_as_string(figures.series.starts[shown], unit="m")
    rows = values[shown].round(0).astype(int).tolist()
    for t, (stamp, row) in enumerate(zip(stamps, rows, strict=True), start=shown.start):
        cells = [Cell(ws, value=v) for v in [*row, row[-1] if t == widest else None]]
        for cell in cells:
            cell.number_format = "#,##0"
        ws.append([str(stamp).replace("T", " "), *cells])
    ws.freeze_panes = "B2"
    ws.column_dimensions["A"].width = 17
    for col in range(2, len(heads) + 1):
        ws.column_dimensions[get_column_letter(col)].width = 13
    ws.row_dimensions[1].height = 30
    print_setup(ws, landscape=True, title_rows="1:1")


def over_time_page(page: _Page, figures: PeakFigures) -> None:
    """A PDF page: the load basis, the widest interval before and after, NEC 220.87 from the
    data, the spread per interval over the week around the widest one (widest marked), and
    the mean loading per line by hour as a heat map."""
    page.heading("Load over time")
    page.paragraph(f"Load basis: {_basis(figures)}.")
    for notice in figures.series.notices:
        page.paragraph(f"Note: {notice}", size=7.5)
    lines = figures.lines
    width = page.width_in - 2 * 0.6
    first = [1.5, 1.5] + [0.9] * len(lines) + [1.0]
    scale = min(1.0, width / sum(first))
    page.table(
        ["Widest interval", "Start", *[f"Line {x} VA" for x in lines], "Spread VA"],
        [
            [title, stamp, *[f"{v:,.0f}" for v in per_line], f"{spread:,.0f}"]
            for title, stamp, per_line, spread in _widest(figures)
        ],
        [w * scale for w in first],
        align=["left", "left"] + ["right"] * (len(lines) + 1),
    )
    existing = figures.existing
    if existing is not None:
        page.paragraph(
            f"Existing load from the data (NEC 220.87): line {existing.line} peaks at "
            f"{existing.demand_a:,.1f} A ({existing.window_min}-minute average); at 125 % "
            f"{existing.existing_a:,.1f} A. {existing.remark[0].upper()}{existing.remark[1:]}."
        )
    page.y_in += 0.5  # room for the chart's title above its legend
    _spread_axes(page, figures, 2.6)
    page.y_in += 0.75  # the date labels hang below the axes
    _heat_axes(page, figures, 2.8)


def _titled_axes(
    page: _Page, title: str, height_in: float, right_in: float, bottom_in: float
) -> Any:
    """Axes under a bold title at the page's current height; the page moves below them."""
    ax = page.fig.add_axes(
        (
            1.2 / page.width_in,
            1.0 - (page.y_in + height_in) / page.height_in,
            (page.width_in - 1.2 - right_in) / page.width_in,
            (height_in - bottom_in) / page.height_in,
        )
    )
    page.text(0.6, page.y_in - 0.3, title, size=9, weight="bold", color="#33475B")
    page.y_in += height_in
    return ax


def _spread_axes(page: _Page, figures: PeakFigures, height_in: float) -> None:
    from matplotlib.ticker import StrMethodFormatter

    window = _window(figures)
    title = "Phase spread per interval, the week around the widest interval (VA)"
    ax = _titled_axes(page, title, height_in, right_in=0.6, bottom_in=0.35)
    x = figures.series.starts[window].astype("datetime64[m]").astype(object)
    ax.plot(x, figures.before_spread_va[window], color="#9AA5B1", lw=0.8, label="as it stands")
    after = figures.after_spread_va
    if after is not None:
        ax.plot(x, after[window], color="#33475B", lw=1.0, label="after balancing")
    widest = figures.worst(after=after is not None)
    marked = after if after is not None else figures.before_spread_va
    if window.start <= widest < window.stop:
        ax.plot(
            [figures.series.starts[widest].astype("datetime64[m]").astype(object)],
            [marked[widest]],
            marker="D",
            color="#A4443B",
            ls="none",
            label=f"widest: {figures.stamp(widest)}",
        )
    ax.set_ylabel("Spread (VA)", fontsize=8)
    ax.yaxis.set_major_formatter(StrMethodFormatter("{x:,.0f}"))
    ax.tick_params(labelsize=7)
    ax.legend(fontsize=7, loc="lower center", bbox_to_anchor=(0.5, 1.0), ncols=3, frameon=False)
    page.fig.autofmt_xdate(rotation=0, ha="center")


def _heat_axes(page: _Page, figures: PeakFigures, height_in: float) -> None:
    from matplotlib.colors import LinearSegmentedColormap

    tables = [("as it stands", figures.by_hour(after=False))]
    if figures.after_va is not None:
        tables.append(("after", figures.by_hour(after=True)))
    columns = [f"{x}\n{name}" for name, _ in tables for x in figures.lines]
    data = np.concatenate([t for _, t in tables], axis=1).T  # (columns, 24)
    title = "Mean load per line by hour of day (VA)"
    ax = _titled_axes(page, title, height_in, right_in=1.4, bottom_in=0.5)
    cmap = LinearSegmentedColormap.from_list(
        "loading", [f"#{HEAT_LOW}", f"#{HEAT_MID}", f"#{HEAT_HIGH}"]
    )
    image = ax.imshow(np.ma.masked_invalid(data), aspect="auto", cmap=cmap)
    ax.set_yticks(range(len(columns)), columns, fontsize=7)
    ax.set_xticks(range(0, 24, 2), [f"{h:02d}" for h in range(0, 24, 2)], fontsize=7)
    ax.set_xlabel("Hour of day", fontsize=8)
    bar = page.fig.colorbar(image, ax=ax, fraction=0.04, pad=0.02)
    bar.ax.tick_params(labelsize=7)
    bar.set_label("Mean VA", fontsize=7)

"""The page's charts as SVG, drawn by the server from the figures of a report.

Every line is told apart three ways: its letter, a fill pattern and its colour (the usual
conductor colours: black, red, blue; orange for the high leg, NEC 110.15). Text is XML-escaped.
"""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from datetime import date
from xml.sax.saxutils import escape, quoteattr

from balancer.domain.result import TradeoffRow

FONT = "DejaVu Sans, Verdana, sans-serif"
INK = "#1d2428"
LINE_COLOUR = {"A": "#222222", "B": "#b3261e", "C": "#1f5fbf"}
HIGH_LEG_COLOUR = "#d96c00"
PATTERN = {"A": "solid", "B": "hatch", "C": "dots"}


def _defs(colours: Mapping[str, str]) -> str:
    parts = ["<defs>"]
    for line, colour in colours.items():
        kind = PATTERN.get(line, "solid")
        pid = f"fill-{line}"
        if kind == "hatch":
            parts.append(
                f'<pattern id="{pid}" width="8" height="8" patternUnits="userSpaceOnUse" '
                f'patternTransform="rotate(45)"><rect width="8" height="8" fill="{colour}" '
                f'opacity="0.35"/><rect width="4" height="8" fill="{colour}"/></pattern>'
            )
        elif kind == "dots":
            parts.append(
                f'<pattern id="{pid}" width="8" height="8" patternUnits="userSpaceOnUse">'
                f'<rect width="8" height="8" fill="{colour}" opacity="0.45"/>'
                f'<circle cx="4" cy="4" r="2.4" fill="{colour}"/></pattern>'
            )
        else:
            parts.append(
                f'<pattern id="{pid}" width="8" height="8" patternUnits="userSpaceOnUse">'
                f'<rect width="8" height="8" fill="{colour}"/></pattern>'
            )
    parts.append(
        '<pattern id="hollow" width="6" height="6" patternUnits="userSpaceOnUse" '
        'patternTransform="rotate(-45)"><rect width="6" height="6" fill="#ffffff"/>'
        '<rect width="1.5" height="6" fill="#8a9196"/></pattern></defs>'
    )
    return "".join(parts)


def _text(
    x: float, y: float, text: str, *, size: int = 15, anchor: str = "start", **kw: str
) -> str:
    extra = "".join(f" {k.replace('_', '-')}={quoteattr(v)}" for k, v in kw.items())
    return (
        f'<text x="{x:.1f}" y="{y:.1f}" font-size="{size}" text-anchor="{anchor}" '
        f'fill="{INK}"{extra}>{escape(text)}</text>'
    )


def _svg(width: int, height: int, label: str, body: Sequence[str]) -> str:
    return (
        f'<svg xmlns="http://www.w3.org/2000/svg" width="{width}" height="{height}" '
        f'viewBox="0 0 {width} {height}" role="img" aria-label={quoteattr(label)} '
        f'font-family="{FONT}">' + "".join(body) + "</svg>"
    )


def line_bars(
    series: Sequence[tuple[str, Mapping[str, float]]],
    lines: Sequence[str],
    high_leg: str | None = None,
) -> str:
    """Horizontal bars of VA per line: one group per line, one bar per series (for example the
    panel as it stands and an arrangement); the first of two series is drawn hollow."""
    colours = {line: HIGH_LEG_COLOUR if line == high_leg else LINE_COLOUR[line] for line in lines}
    top = max((abs(v) for _, values in series for v in values.values()), default=0.0) or 1.0
    bar_h, gap, left, width = 30, 14, 150, 560
    reach = width - left - 200
    body = [_defs(colours)]
    y = 12.0
    words = []
    for line in lines:
        middle = y + bar_h * len(series) / 2
        if line == high_leg:
            body.append(_text(8, middle - 4, f"Line {line}", size=17, font_weight="bold"))
            body.append(_text(8, middle + 14, "HIGH LEG", size=13, font_weight="bold"))
        else:
            body.append(_text(8, middle + 4, f"Line {line}", size=17, font_weight="bold"))
        for index, (label, values) in enumerate(series):
            value = values.get(line, 0.0)
            length = max(2.0, reach * abs(value) / top)
            hollow = len(series) > 1 and index == 0
            fill = "url(#hollow)" if hollow else f"url(#fill-{line})"
            body.append(
                f'<rect x="{left}" y="{y:.1f}" width="{length:.1f}" height="{bar_h - 4}" '
                f'fill="{fill}" stroke="{colours[line]}" stroke-width="2"/>'
            )
            tag = f"{value:,.0f} VA" + (f"  {label}" if len(series) > 1 else "")
            body.append(_text(left + length + 8, y + bar_h - 10, tag, size=15))
            leg = " (high leg)" if line == high_leg else ""
            words.append(f"line {line}{leg} {label} {value:,.0f} VA")
            y += bar_h
        y += gap
    body.append(
        f'<line x1="{left}" y1="4" x2="{left}" y2="{y - gap + 4:.1f}" stroke="{INK}" '
        'stroke-width="1.5"/>'
    )
    return _svg(width, int(y), "Per-line load: " + "; ".join(words), body)


def tradeoff_chart(
    rows: Sequence[TradeoffRow], selected: int | None, recommended: int | None
) -> str:
    """Imbalance for at most 0, 1, 2, … moves: a bar per trade-off row; proven rows solid,
    unproven hatched; the row shown marked with a triangle and "shown", the recommended one
    with "recommended"."""
    width, height, left, bottom, top_pad = 600, 300, 20, 62, 50
    if not rows:
        return _svg(width, 60, "No trade-off table", [_text(10, 30, "No trade-off table")])
    top = max(r.imbalance_pct for r in rows) or 1.0
    slot = (width - left - 20) / len(rows)
    plot_h = height - bottom - top_pad
    body = [
        _defs({"A": "#41606b"}),
        '<pattern id="unproven" width="8" height="8" patternUnits="userSpaceOnUse" '
        'patternTransform="rotate(45)"><rect width="8" height="8" fill="#e9e4d8"/>'
        '<rect width="3" height="8" fill="#41606b"/></pattern>',
        _text(8, 22, "Imbalance (%) by moves allowed", size=17, font_weight="bold"),
    ]
    base = height - bottom
    body.append(
        f'<line x1="{left}" y1="{base}" x2="{width - 10}" y2="{base}" stroke="{INK}" '
        'stroke-width="1.5"/>'
    )
    words = []
    for index, row in enumerate(rows):
        x = left + index * slot + slot * 0.18
        w = slot * 0.64
        h = max(2.0, plot_h * row.imbalance_pct / top)
        proven = row.status.value == "optimal"
        fill = "#41606b" if proven else "url(#unproven)"
        stroke = "#000000" if index == selected else "#41606b"
        body.append(
            f'<rect x="{x:.1f}" y="{base - h:.1f}" width="{w:.1f}" height="{h:.1f}" '
            f'fill="{fill}" stroke="{stroke}" stroke-width="{4 if index == selected else 1.5}"/>'
        )
        body.append(
            _text(x + w / 2, base - h - 8, f"{row.imbalance_pct:.2f}", size=15, anchor="middle")
        )
        body.append(_text(x + w / 2, base + 20, str(row.moves), size=16, anchor="middle"))
        marks = []
        if index == recommended:
            marks.append("recommended")
        if index == selected:
            marks.append("shown")
            body.append(
                f'<path d="M{x + w / 2 - 8:.1f},{base + 44} l8,-12 l8,12 z" fill="#000000"/>'
            )
        if marks:
            body.append(_text(x + w / 2, base + 36, " · ".join(marks), size=13, anchor="middle"))
        words.append(
            f"{row.moves} moves {row.imbalance_pct:.2f} %"
            + ("" if proven else " not proven")
            + (" (shown)" if index == selected else "")
        )
    body.append(
        _text(left, height - 4, "moves (at most); solid: proven, hatched: not proven", size=13)
    )
    return _svg(width, height, "Imbalance by moves: " + "; ".join(words), body)


# ------------------------------------------------------------------ load over time

HEAT_STOPS = ("#f7f4ec", "#e9b872", "#a4443b")  # the workbook's and the PDF's scale: light to dark
BEFORE_STROKE = "#7d868c"
AFTER_STROKE = "#163a40"
MARK = "#a4443b"
WEEKDAYS = ("Mon", "Tue", "Wed", "Thu", "Fri", "Sat", "Sun")


def _nice_step(top: float, ticks: int = 4) -> float:
    """A round step (1, 2 or 5 times a power of ten) giving about ``ticks`` steps to ``top``."""
    raw = max(top, 1.0) / ticks
    power = 10 ** math.floor(math.log10(raw))
    return next(m * power for m in (1, 2, 5, 10) if m * power >= raw)


def _day_label(stamp: str) -> str:
    day = date.fromisoformat(stamp[:10])
    return f"{WEEKDAYS[day.weekday()]} {stamp[5:10]}"


@dataclass(frozen=True, slots=True)
class Widest:
    """An interval to mark on the spread chart: its place in the window, start and spread."""

    index: int
    start: str
    spread_va: float


@dataclass(frozen=True, slots=True)
class _Plot:
    """The spread chart's frame: ``count`` intervals across, 0 to ``top_va`` up."""

    count: int
    top_va: float
    width: int = 760
    height: int = 340
    left: int = 78
    right: int = 16
    top: int = 92
    bottom: int = 44

    @property
    def base(self) -> float:
        return self.height - self.bottom

    def x_at(self, i: float) -> float:
        return self.left + (self.width - self.left - self.right) * i / max(self.count - 1, 1)

    def y_at(self, va: float) -> float:
        return self.base - (self.base - self.top) * va / self.top_va

    def path(self, series: Sequence[float]) -> str:
        return " ".join(f"{self.x_at(i):.1f},{self.y_at(v):.1f}" for i, v in enumerate(series))


def _grid(plot: _Plot, stamps: Sequence[str], step: float) -> list[str]:
    """Level lines every ``step`` VA, and a line and a name at each midnight."""
    body, tick, end = [], 0.0, plot.width - plot.right
    while tick <= plot.top_va + 1e-9:
        y = plot.y_at(tick)
        body.append(
            f'<line x1="{plot.left}" y1="{y:.1f}" x2="{end}" y2="{y:.1f}" '
            'stroke="#d9d5ca" stroke-width="1"/>'
        )
        body.append(_text(plot.left - 6, y + 5, f"{tick:,.0f}", size=13, anchor="end"))
        tick += step
    days = [i for i, stamp in enumerate(stamps) if stamp[11:16] == "00:00"]
    if not days or plot.x_at(days[0]) - plot.left > 80:  # the first day named when there is room
        days.insert(0, 0)
    for i in days:
        x = plot.x_at(i)
        body.append(
            f'<line x1="{x:.1f}" y1="{plot.top}" x2="{x:.1f}" y2="{plot.base + 6}" '
            'stroke="#d9d5ca" stroke-width="1"/>'
        )
        if x < end - 50:
            body.append(_text(x + 3, plot.base + 22, _day_label(stamps[i]), size=13))
    return body


def _marks(
    plot: _Plot,
    marks: Sequence[tuple[Widest | None, str, bool, Sequence[float]]],
    legend_y: float,
) -> tuple[list[str], list[str]]:
    """Each widest interval on its line (filled diamond, or open circle) and in the legend from
    ``legend_y`` down; the drawing and the legend's words."""
    body, words = [], []
    for mark, label, filled, series in marks:
        if mark is None:
            continue
        shape = (
            f'<path d="M{{x}},{{y}} m0,-7 l7,7 l-7,7 l-7,-7 z" fill="{MARK}" stroke="{INK}" '
            'stroke-width="1"/>'
            if filled
            else f'<circle cx="{{x}}" cy="{{y}}" r="6" fill="#ffffff" stroke="{MARK}" '
            'stroke-width="2.5"/>'
        )
        x, y = plot.x_at(mark.index), plot.y_at(series[mark.index])
        body.append(shape.format(x=f"{x:.1f}", y=f"{y:.1f}"))
        text = f"widest {label}: {mark.start}, {mark.spread_va:,.0f} VA"
        body.append(shape.format(x="30.0", y=f"{legend_y:.1f}"))
        body.append(_text(52, legend_y + 5, text, size=14))
        legend_y += 20
        words.append(text)
    return body, words


def spread_chart(
    stamps: Sequence[str],
    before_va: Sequence[float],
    after_va: Sequence[float] | None,
    widest_after: Widest | None,
    widest_before: Widest | None,
) -> str:
    """The phase spread per interval over a window (the week around the widest interval): as it
    stands dashed and grey, arranged solid and dark; the widest interval arranged marked with a
    filled diamond, the widest as it stands with an open circle (each when in the window)."""
    if not stamps:
        return _svg(760, 60, "No intervals", [_text(10, 30, "No intervals")])
    highest = max([*before_va, *(after_va or ())], default=0.0)
    step = _nice_step(highest)
    plot = _Plot(len(stamps), step * math.ceil(max(highest, 1.0) / step))
    body = [_text(8, 22, "Phase spread per interval (VA)", size=17, font_weight="bold")]
    body += _grid(plot, stamps, step)
    dashed = ' stroke-dasharray="5 3"' if after_va is not None else ""
    body.append(
        f'<polyline points="{plot.path(before_va)}" fill="none" stroke="{BEFORE_STROKE}" '
        f'stroke-width="{1.4 if after_va is not None else 1.8}"{dashed}/>'
    )
    legend_y = 46.0
    if after_va is not None:  # the two series side by side on the first legend row
        body += [
            f'<polyline points="{plot.path(after_va)}" fill="none" stroke="{AFTER_STROKE}" '
            'stroke-width="1.8"/>',
            f'<line x1="14" y1="{legend_y}" x2="46" y2="{legend_y}" stroke="{BEFORE_STROKE}" '
            'stroke-width="2" stroke-dasharray="5 3"/>',
            _text(52, legend_y + 5, "as it stands (dashed)", size=14),
            f'<line x1="232" y1="{legend_y}" x2="264" y2="{legend_y}" stroke="{AFTER_STROKE}" '
            'stroke-width="2.5"/>',
            _text(270, legend_y + 5, "arranged (solid)", size=14),
        ]
        legend_y += 20
        marks = [
            (widest_after, "arranged", True, after_va),
            (widest_before, "as it stands", False, before_va),
        ]
    else:
        marks = [(widest_before, "as it stands", True, before_va)]
    body.append(
        f'<line x1="{plot.left}" y1="{plot.base}" x2="{plot.width - plot.right}" '
        f'y2="{plot.base}" stroke="{INK}" stroke-width="1.5"/>'
    )
    drawn, words = _marks(plot, marks, legend_y)
    summary = (
        f"Phase spread per interval from {stamps[0]} to {stamps[-1]}, scale to "
        f"{plot.top_va:,.0f} VA"
        + ("; as it stands dashed, arranged solid" if after_va is not None else "")
        + "".join(f"; {w}" for w in words)
    )
    return _svg(plot.width, plot.height, summary, body + drawn)


def _mix(low: str, high: str, t: float) -> str:
    a = [int(low[i : i + 2], 16) for i in (1, 3, 5)]
    b = [int(high[i : i + 2], 16) for i in (1, 3, 5)]
    return "#" + "".join(f"{round(x + (y - x) * t):02x}" for x, y in zip(a, b, strict=True))


def heat_colour(fraction: float) -> str:
    """The colour of a value ``fraction`` (0 to 1) of the way up the scale."""
    t = min(1.0, max(0.0, fraction)) * 2
    return _mix(*HEAT_STOPS[:2], t) if t <= 1 else _mix(*HEAT_STOPS[1:], t - 1)


def hour_heat_map(
    lines: Sequence[str],
    tables: Sequence[tuple[str, Sequence[Sequence[float | None]]]],
    high_leg: str | None = None,
) -> str:
    """Mean VA per line by hour of day: one row per line of each state (``tables``: a title and
    24 rows of per-line VA, None for an hour with no data), one column per hour, on one scale
    from light (least) to dark (most) shared by every state, with the scale as a legend."""
    cell_w, cell_h, left, top_pad = 25, 26, 190, 54
    found = [v for _, table in tables for row in table for v in row if v is not None]
    low, high = (min(found), max(found)) if found else (0.0, 1.0)
    span = (high - low) or 1.0
    width = left + 24 * cell_w + 16
    body = [
        _defs({}),
        _text(8, 22, "Mean load per line by hour of day (VA)", size=17, font_weight="bold"),
    ]
    for hour in range(0, 24, 3):
        body.append(
            _text(left + hour * cell_w + cell_w / 2, top_pad - 8, f"{hour:02d}", anchor="middle")
        )
    y = float(top_pad)
    words, missing = [], False
    for title, table in tables:
        for j, line in enumerate(lines):
            leg = " (high leg)" if line == high_leg else ""
            body.append(_text(8, y + cell_h - 8, f"{title} · line {line}{leg}", size=14))
            best: tuple[float, int] | None = None
            for hour in range(24):
                value = table[hour][j]
                x = left + hour * cell_w
                if value is None:
                    missing = True
                    fill = "url(#hollow)"
                else:
                    fill = heat_colour((value - low) / span)
                    if best is None or value > best[0]:
                        best = (value, hour)
                body.append(
                    f'<rect x="{x}" y="{y:.1f}" width="{cell_w}" height="{cell_h}" '
                    f'fill="{fill}" stroke="#ffffff" stroke-width="1"/>'
                )
            if best is not None:
                peak_va, hour = best
                words.append(f"{title} line {line}{leg} highest at {hour:02d}:00 {peak_va:,.0f} VA")
            y += cell_h
        y += 10
    y += 8
    body.append(_text(left, y + 6, "hour of day (each column one hour, from 00:00)", size=13))
    y += 22
    bar_w = 300
    body.append(
        '<defs><linearGradient id="heat-scale" x1="0" x2="1" y1="0" y2="0">'
        + "".join(
            f'<stop offset="{k / 2:.1f}" stop-color="{c}"/>' for k, c in enumerate(HEAT_STOPS)
        )
        + "</linearGradient></defs>"
    )
    body.append(_text(8, y + 14, "Scale (mean VA)", size=14, font_weight="bold"))
    body.append(
        f'<rect x="{left}" y="{y}" width="{bar_w}" height="16" fill="url(#heat-scale)" '
        f'stroke="{INK}" stroke-width="1"/>'
    )
    for k, value in enumerate((low, (low + high) / 2, high)):
        anchor = ("start", "middle", "end")[k]
        body.append(_text(left + bar_w * k / 2, y + 34, f"{value:,.0f}", size=13, anchor=anchor))
    if missing:
        body.append(
            f'<rect x="{left + bar_w + 24}" y="{y}" width="16" height="16" fill="url(#hollow)" '
            f'stroke="{INK}" stroke-width="1"/>'
        )
        body.append(_text(left + bar_w + 46, y + 13, "no data", size=13))
    height = int(y + 44)
    summary = (
        f"Mean load per line by hour of day, scale {low:,.0f} to {high:,.0f} VA (light to dark): "
        + "; ".join(words)
    )
    return _svg(width, height, summary, body)

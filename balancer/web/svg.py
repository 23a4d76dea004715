"""The page's charts as SVG, drawn by the server from the figures of a report.

Every line is told apart three ways: its letter, a fill pattern and its colour (the usual
conductor colours: black, red, blue; orange for the high leg, NEC 110.15). Text is XML-escaped.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
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

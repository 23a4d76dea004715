"""A printable PDF of a panel: summary, circuit directory as the panel is built, work order and
cautions. Drawn with matplotlib's PdfPages (its DejaVu fonts ship with it, so any machine that
installs balancer can write the PDF); fonts are embedded as TrueType so the text can be searched
and copied.
"""

from __future__ import annotations

import math
import re
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, replace
from functools import cache
from pathlib import Path
from typing import TYPE_CHECKING, Any, Literal

from balancer.domain.panel import Panel
from balancer.domain.result import BalanceResult
from balancer.io.files import atomic, refuse_input_path
from balancer.io.writer import (
    ExtraSheet,
    header_facts,
    revised_header,
    row_has_tenths,
    row_role,
    title_block,
)
from balancer.physics.analysis import Loads, share_by_line
from balancer.report.safety import CAUTION, CAUTIONS
from balancer.report.states import states

if TYPE_CHECKING:
    from matplotlib.figure import Figure

    from balancer.code.demand import DemandResult
    from balancer.field.workorder import WorkOrder
    from balancer.report.peak import PeakFigures

Paper = Literal["letter", "a4"]
PAPER_IN: dict[Paper, tuple[float, float]] = {"letter": (8.5, 11.0), "a4": (8.27, 11.69)}
MARGIN_IN = 0.6
DIRECTORY_ROWS_PER_PAGE = 30
DIRECTORY_MIN_PT = 6.5
_POINTS = 72.0
_GREY = "#5A6570"
_RULE = "#9AA5B1"
_HEAD = "#33475B"


@cache
def _plain_glyphs() -> dict[str, Any]:
    """One glyph per character (no ligatures) where matplotlib shapes text (3.11 and later): a
    ligature's glyph goes into a second embedded copy of the font, and each copy costs a tenth
    of a second or more to subset when the PDF is written. Copied text reads the same."""
    from matplotlib.text import Text

    if hasattr(Text, "set_fontfeatures"):
        return {"fontfeatures": ("-liga", "-clig")}
    return {}  # pragma: no cover - matplotlib before 3.11 draws no ligatures


@dataclass
class _Page:
    """A page being laid out from the top down, in inches."""

    fig: Figure
    width_in: float
    height_in: float
    y_in: float = MARGIN_IN

    def _xy(self, x_in: float, y_in: float) -> tuple[float, float]:
        return x_in / self.width_in, 1.0 - y_in / self.height_in

    def text(self, x_in: float, y_in: float, text: str, size: float = 9, **kw: Any) -> None:
        # schedule text is shown as given: '$5 or $6' is money, not math for mathtext to parse
        look = {"fontsize": size, "va": "top", "parse_math": False, **_plain_glyphs(), **kw}
        self.fig.text(*self._xy(x_in, y_in), text, **look)

    def line(
        self, x0_in: float, x1_in: float, y_in: float, colour: str = _RULE, lw: float = 0.6
    ) -> None:
        x0, y = self._xy(x0_in, y_in)
        x1, _ = self._xy(x1_in, y_in)
        self.fig.add_artist(_line2d([x0, x1], [y, y], colour, lw))

    def rect(self, x_in: float, y_in: float, w_in: float, h_in: float, colour: str) -> None:
        from matplotlib.patches import Rectangle

        x, y = self._xy(x_in, y_in + h_in)
        self.fig.add_artist(
            Rectangle((x, y), w_in / self.width_in, h_in / self.height_in, color=colour, lw=0)
        )

    def heading(self, text: str, size: float = 13) -> None:
        self.text(MARGIN_IN, self.y_in, text, size=size, weight="bold", color=_HEAD)
        self.y_in += size / _POINTS * 1.6

    def paragraph(self, text: str, size: float = 8.5, indent_in: float = 0.0) -> None:
        """Text wrapped to the page width, measured in the font, never cut."""
        room = self.width_in - 2 * MARGIN_IN - indent_in
        for part in wrap_to_width(text, size, room) or [""]:
            self.text(MARGIN_IN + indent_in, self.y_in, part, size=size)
            self.y_in += size / _POINTS * 1.35

    @property
    def room_in(self) -> float:
        """Height left above the footer."""
        return self.height_in - MARGIN_IN - 0.35 - self.y_in

    def table(
        self,
        header: Sequence[str],
        rows: Sequence[Sequence[Any]],
        widths_in: Sequence[float],
        *,
        size: float = 8.5,
        align: Sequence[str] | None = None,
    ) -> None:
        """Rows of cells; text too long for its column wraps onto more lines in its row."""
        align = align or ["left"] * len(header)
        self.header_band(header, widths_in, size=size, align=align)
        for row in rows:
            self.data_row(row, widths_in, size=size, align=align)
        self.y_in += size / _POINTS * 1.55 * 0.6

    def header_band(
        self,
        header: Sequence[str],
        widths_in: Sequence[float],
        *,
        size: float,
        align: Sequence[str],
    ) -> None:
        step = size / _POINTS * 1.55
        x_positions = [MARGIN_IN + sum(widths_in[:i]) for i in range(len(widths_in))]
        cells = [  # a line break in a title is kept; bold is a little wider
            [
                line
                for part in title.split("\n")
                for line in (wrap_to_width(part, size * 1.05, w - 0.1) or [""])
            ]
            for title, w in zip(header, widths_in, strict=False)
        ]
        lines = max((len(c) for c in cells), default=1)
        height = step + (lines - 1) * size / _POINTS * 1.2
        self.rect(MARGIN_IN, self.y_in - 0.03, sum(widths_in), height, _HEAD)
        for x, w, parts, how in zip(x_positions, widths_in, cells, align, strict=False):
            self._cell(x, w, parts, size, how, color="white", weight="bold")
        self.y_in += height

    def data_row(
        self, row: Sequence[Any], widths_in: Sequence[float], *, size: float, align: Sequence[str]
    ) -> None:
        step = size / _POINTS * 1.55
        x_positions = [MARGIN_IN + sum(widths_in[:i]) for i in range(len(widths_in))]
        cells = [
            wrap_to_width(_fmt(v), size, w - 0.1) for v, w in zip(row, widths_in, strict=False)
        ]
        for x, w, value, parts, how in zip(x_positions, widths_in, row, cells, align, strict=False):
            if how == "auto":  # numbers right, text left
                number = isinstance(value, (int, float)) and not isinstance(value, bool)
                how = "right" if number else "left"
            self._cell(x, w, parts, size, how)
        self.y_in += step + (max((len(c) for c in cells), default=1) - 1) * size / _POINTS * 1.2
        self.line(MARGIN_IN, MARGIN_IN + sum(widths_in), self.y_in - 0.04)

    @property
    def full(self) -> bool:
        return self.y_in > self.height_in - MARGIN_IN - 0.5

    def _cell(
        self, x: float, w: float, parts: Sequence[str], size: float, how: str, **kw: Any
    ) -> None:
        """One cell's lines (already wrapped to its width), top down from the row's top."""
        for n, text in enumerate(parts):
            y = self.y_in + n * size / _POINTS * 1.2
            if how in ("right", "auto"):
                self.text(x + w - 0.05, y, text, size=size, ha="right", **kw)
            elif how == "center":
                self.text(x + w / 2, y, text, size=size, ha="center", **kw)
            else:
                self.text(x + 0.05, y, text, size=size, **kw)


def wrap_to_width(text: str, size: float, room_in: float) -> list[str]:
    """``text`` in lines no wider than ``room_in`` at ``size`` points: broken at spaces (and
    after commas, hyphens and slashes), a word longer than the room broken where it must.
    Nothing is dropped."""
    if not text:
        return []
    if not wider_than(text, size, room_in):
        return [text]
    lines: list[str] = []
    current = ""
    for word in re.findall(r"\S+\s*", text):
        pieces = [word]
        if wider_than(word.rstrip(), size, room_in):  # break at , - / first, then anywhere
            pieces = [p for p in re.split(r"(?<=[,/-])", word) if p]
        for piece in pieces:
            trial = current + piece
            if current and wider_than(trial.rstrip(), size, room_in):
                lines.append(current.rstrip())
                current = ""
                trial = piece
            while wider_than(trial.rstrip(), size, room_in) and len(trial) > 1:
                cut = len(trial) - 1
                while cut > 1 and wider_than(trial[:cut], size, room_in):
                    cut -= 1
                lines.append(trial[:cut])
                trial = trial[cut:]
            current = trial
    if current.strip():
        lines.append(current.rstrip())
    return lines


# How far a sum of glyph advances can be from the measured width of a line of DejaVu Sans: the
# ink of the first and last glyph and the kerning between pairs move it by a fraction of an em
# per line, far inside these margins. Only a line this close to the room is measured.
ESTIMATE_SLACK = 0.1  # of the estimate
ESTIMATE_EMS = 0.5  # and half an em


def wider_than(text: str, size: float, room_in: float) -> bool:
    """Whether ``text`` at ``size`` points is wider than ``room_in``: decided from the glyphs'
    advances when that is clear by a wide margin, else measured (:func:`text_width_in`), so the
    answer is always the measured one while most of the layout's many trial lines cost a sum."""
    estimate = advance_width_in(text, size)
    margin = estimate * ESTIMATE_SLACK + ESTIMATE_EMS * size / _POINTS
    if estimate + margin <= room_in:
        return False
    if estimate - margin > room_in:
        return True
    return text_width_in(text, size) > room_in


def advance_width_in(text: str, size: float) -> float:
    """The sum of the glyphs' advances in DejaVu Sans at ``size`` points, in inches."""
    return sum(_advance_pt(char) for char in text) * size / _ADVANCE_PT / _POINTS


_ADVANCE_PT = 100.0  # advances are read at this size; without hinting they scale linearly


@cache
def _advance_pt(char: str) -> float:
    font = _dejavu()
    font.set_size(_ADVANCE_PT, _POINTS)
    glyph = font.load_char(ord(char), flags=_no_hinting())
    return float(glyph.linearHoriAdvance) / 65536.0


def _no_hinting() -> Any:
    try:
        from matplotlib.ft2font import LoadFlags  # matplotlib 3.10 and later
    except ImportError:  # pragma: no cover - older matplotlib
        from matplotlib import ft2font

        return getattr(ft2font, "LOAD_NO_HINTING")  # noqa: B009 (not in newer stubs)
    return LoadFlags.NO_HINTING


@cache
def _dejavu() -> Any:
    from matplotlib.font_manager import FontProperties, findfont, get_font

    return get_font(findfont(FontProperties(family="DejaVu Sans")))


def _line2d(xs: list[float], ys: list[float], colour: str, lw: float) -> Any:
    from matplotlib.lines import Line2D

    return Line2D(xs, ys, color=colour, lw=lw)


@cache
def text_width_in(text: str, size: float) -> float:
    """Width of ``text`` in DejaVu Sans at ``size`` points, in inches (measured, not guessed)."""
    from matplotlib.font_manager import FontProperties
    from matplotlib.textpath import TextToPath

    width_pt, _, _ = TextToPath().get_text_width_height_descent(
        text, FontProperties(family="DejaVu Sans", size=size), ismath=False
    )
    return float(width_pt) / _POINTS


def _va(value: float | None) -> str:
    return "" if value is None else f"{value:,.0f}"


def _amps(value: float | None) -> str:
    return "" if value is None else f"{value:,.1f}"


def _signed_pct(value: float) -> str:
    """``+3.1 %``, ``-2.0 %``; a deviation that rounds to zero is ``+0.0 %``, never ``-0.0 %``."""
    return f"{round(value, 1) + 0.0:+.1f} %"


def _fmt(value: Any) -> str:
    if value is None:
        return ""
    if isinstance(value, bool):
        return "yes" if value else "no"
    if isinstance(value, int):
        return f"{value:,}"
    if isinstance(value, float):
        if math.isnan(value):
            return ""
        return f"{value:,.0f}" if value.is_integer() else f"{value:,.1f}"
    return str(value)


def _new_page(paper: Paper, panel: Panel) -> _Page:
    from matplotlib.figure import Figure

    width, height = PAPER_IN[paper]
    page = _Page(Figure(figsize=(width, height)), width, height)
    page.text(
        MARGIN_IN,
        height - 0.45,
        "Engineering aid: qualified persons only; de-energise and verify with a meter before work.",
        size=7,
        color=_GREY,
    )
    page.text(
        width - MARGIN_IN, height - 0.45, f"Panel {panel.name}", size=7, color=_GREY, ha="right"
    )
    _running_header(page, panel)
    if any(c.balance_va is not None for c in panel.circuits):
        # every page says so: these figures are not the schedule's design loads
        page.text(
            MARGIN_IN,
            height - 0.32,
            "Load basis: clamp-meter readings where given, design VA otherwise (spot readings).",
            size=7,
            color=_GREY,
        )
    return page


def _running_header(page: _Page, panel: Panel) -> None:
    """Every page's header: the project, the date and revision, and the panel with its system
    (which names the high leg of a high-leg delta panel, NEC 110.15)."""
    project, issue = title_block(panel.header)
    right = page.width_in - MARGIN_IN
    page.text(right, 0.25, issue, size=7, color=_GREY, ha="right")
    room = page.width_in - 2 * MARGIN_IN - text_width_in(issue, 7) - 0.2
    page.text(MARGIN_IN, 0.25, (wrap_to_width(project, 7, room) or [""])[0], size=7, color=_GREY)
    system = f"Panel {panel.name}: {panel.system.label()}"
    page.text(MARGIN_IN, 0.37, system, size=7, color=_HEAD, weight="bold")
    page.line(MARGIN_IN, right, 0.5)


def _summary_page(
    page: _Page,
    panel: Panel,
    loads: Loads,
    result: BalanceResult | None,
    demand: DemandResult | None = None,
) -> bool:
    """The first page: the panel's facts, its per-line table, its figures, the bar chart and
    the cautions. False when the chart did not fit above the caution and is still to draw."""
    page.heading(f"Panel {panel.name}", size=15)
    _facts_block(page, panel)
    page.heading("Per-line figures (currents true RMS)", size=11)
    if result is not None:
        _before_after_table(page, panel, loads, result)
    else:
        _line_table(page, panel, loads)
    if result is not None:
        _before_after_figures(page, panel, loads, result)
    _figure_lines(page, _panel_figures(panel, loads, result))
    if demand is not None:
        feeder = demand.feeder
        _figure_lines(
            page,
            [
                ("Demand load", f"{demand.total_demand_va:,.0f} VA ({demand.rule_set.title})"),
                (
                    "Feeder sizing current",
                    f"{feeder.required_a:,.1f} A on line {feeder.design_line}",
                ),
                (
                    "Minimum feeder OCPD",
                    f"{feeder.min_ocpd_a} A" if feeder.min_ocpd_a is not None else "not sized",
                ),
            ],
        )
    if loads.unplaced:
        page.paragraph("Not placed, left out of the figures: " + ", ".join(loads.unplaced))
    page.y_in += 0.45
    # the chart gives way to the caution, which must end above the footer
    caution_in = 0.45 + len(wrap_to_width(CAUTION, 8.5, page.width_in - 2 * MARGIN_IN)) * 0.17
    chart_in = min(2.3, page.room_in - caution_in - 0.4)
    if chart_in >= 1.6:
        _bar_chart(page, panel, loads, result, chart_in)
        page.y_in += 0.4
    _cautions(page)
    return chart_in >= 1.6


def _facts_block(page: _Page, panel: Panel) -> None:
    """The panel's ratings and schedule, then the reader's notices."""
    ratings = [
        ("Spaces", str(panel.spaces)),
        ("Bus rating", f"{panel.bus_a:,g} A" if panel.bus_a else "not given"),
        (
            "Main",
            f"{panel.main_a:,g} A"
            if panel.main_a
            else ("main lugs only" if getattr(panel, "main_lugs_only", False) else "not given"),
        ),
    ]
    block = header_facts(panel.header, neutral=panel.system.neutral)
    left = ratings + block[5:]  # the ratings, the buses
    right = block[:5]  # where it is, what feeds it, its enclosure
    page.text(MARGIN_IN, page.y_in, "System", size=9, weight="bold")
    page.text(MARGIN_IN + 1.3, page.y_in, panel.system.label(), size=9)
    page.y_in += 0.19
    top = page.y_in
    half = (page.width_in - 2 * MARGIN_IN) / 2
    ends = []
    for x, facts, label_in in ((MARGIN_IN, left, 1.3), (MARGIN_IN + half, right, 0.85)):
        page.y_in = top
        for label, value in facts:
            label_lines = wrap_to_width(label, 9 * 1.08, label_in - 0.1) or [""]  # bold
            lines = wrap_to_width(value, 9, half - label_in - 0.15) or [""]
            for n, text in enumerate(label_lines):
                page.text(x, page.y_in + n * 0.15, text, size=9, weight="bold")
            for n, text in enumerate(lines):
                page.text(x + label_in, page.y_in + n * 0.15, text, size=9)
            page.y_in += 0.19 + 0.15 * (max(len(lines), len(label_lines)) - 1)
        ends.append(page.y_in)
    page.y_in = max(ends)
    page.text(MARGIN_IN, page.y_in, "Schedule", size=9, weight="bold")
    for text in wrap_to_width(panel.source or "not given", 9, page.width_in - 2 * MARGIN_IN - 1.3):
        page.text(MARGIN_IN + 1.3, page.y_in, text, size=9)
        page.y_in += 0.17
    page.y_in += 0.02
    for notice in panel.notices:
        page.paragraph(f"Notice: {notice}")
    page.y_in += 0.1


def _before_after_table(page: _Page, panel: Panel, loads: Loads, result: BalanceResult) -> None:
    """Each line's load and current in each state (before and after; as it stands, with the
    additions and after when there are new circuits), and the neutral's: one row a line."""
    shown = states(result)
    header = ["Line"]
    # three states' titles do not fit beside each other: each unit on a line of its own
    unit = "\n" if len(shown) > 2 else " "
    for state in shown:
        header += [f"{state.title}{unit}(VA)", f"{state.title}{unit}(A)"]
    rows: list[list[Any]] = []
    for line in panel.lines:
        row: list[Any] = [line]
        for state in shown:
            row += [_va(state.loads.phase_va[line]), _amps(state.loads.line_amps[line])]
        rows.append(row)
    if panel.system.neutral:
        neutral: list[Any] = ["Neutral"]
        for state in shown:
            neutral += [None, _amps(state.loads.neutral_amps)]
        rows.append(neutral)
    # three states take the page's width, so neighbouring titles keep apart
    usable = page.width_in - 2 * MARGIN_IN
    column = 1.15 if len(shown) == 2 else (usable - 0.7) / (2 * len(shown))
    widths = [0.8 if len(shown) == 2 else 0.7, *[column] * (2 * len(shown))]
    page.table(header, rows, widths, align=["left"] + ["right"] * (len(header) - 1))
    if result.new_circuits:  # say what each state holds, so none is read as another
        for state in shown:
            page.paragraph(f"{state.title}: {state.detail}.", size=7.5)
        page.y_in += 0.08


def _line_table(page: _Page, panel: Panel, loads: Loads) -> None:
    """Each line's load, current and deviation from the average, and the neutral's current."""
    header = ["Line", "Load (VA)", "Current (A RMS)", "Deviation from average"]
    average = loads.total_va / len(panel.lines)
    rows: list[list[Any]] = [
        [
            line,
            _va(loads.phase_va[line]),
            _amps(loads.line_amps[line]),
            _signed_pct((loads.phase_va[line] - average) / average * 100 if average else 0.0),
        ]
        for line in panel.lines
    ]
    if panel.system.neutral:
        rows.append(["Neutral", None, _amps(loads.neutral_amps), ""])
    widths = [0.9, 1.2, 1.1, 1.8]
    page.table(header, rows, widths, align=["left"] + ["right"] * (len(header) - 1))


def _panel_figures(
    panel: Panel, loads: Loads, result: BalanceResult | None
) -> list[tuple[str, str]]:
    """The whole panel's figures, and how the balancing ended when there was one."""
    figures: list[tuple[str, str]] = []
    if result is None:
        figures = [(label, value) for label, value, _ in _whole_panel(panel, loads)]
    if result is not None:
        from balancer.report.text import proof_sentence

        figures += [
            ("Result", proof_sentence(result)),
            ("Breakers to move", str(len(result.moves))),
        ]
        if result.first_goal in ("peak", "peak-line"):
            figures.append(
                (
                    "Balanced for",
                    "the load over time (its own page); the per-line figures above are the "
                    "connected loads, which are not the goal here",
                )
            )
    return figures


def _whole_panel(panel: Panel, loads: Loads) -> list[tuple[str, str, str]]:
    """(figure, value with its unit, key) for the whole panel."""
    figures = [
        ("Total load", f"{loads.total_va:,.0f} VA", "total"),
        ("Spread (heaviest - lightest line)", f"{loads.spread_va:,.0f} VA", "spread"),
        ("Imbalance (NEMA MG 1 definition)", f"{loads.imbalance_pct:.1f} %", "imbalance"),
    ]
    if loads.unbalance_factor_pct is not None:
        figures.append(
            ("Current unbalance |I2|/|I1|", f"{loads.unbalance_factor_pct:.1f} %", "unbalance")
        )
    if panel.system.neutral:
        figures.append(("Neutral current (RMS)", f"{loads.neutral_amps:,.1f} A", "neutral"))
        if abs(loads.neutral_amps - loads.neutral_a) > 0.05:
            figures.append(("Neutral at the fundamental only", f"{loads.neutral_a:,.1f} A", "n1"))
    return figures


def _before_after_figures(page: _Page, panel: Panel, loads: Loads, result: BalanceResult) -> None:
    """The whole panel's figures in each state, side by side."""
    shown = states(result)
    figures = [{key: value for _, value, key in _whole_panel(panel, s.loads)} for s in shown]
    rows = [
        [label, *[f.get(key, "") for f in figures]]
        for label, _, key in _whole_panel(panel, loads)
        if key != "neutral"  # the per-line table above has the neutral in each state
    ]
    page.table(
        ["Whole panel", *[s.title for s in shown]],
        rows,
        [2.8, *[1.3] * len(shown)],
        align=["left", *["right"] * len(shown)],
    )


def _figure_lines(page: _Page, figures: list[tuple[str, str]]) -> None:
    """Label and value pairs, one a line; a long value wraps under itself, never past the
    margin."""
    room = page.width_in - 2 * MARGIN_IN - 2.8
    for label, value in figures:
        page.text(MARGIN_IN, page.y_in, label, size=9)
        for n, part in enumerate(wrap_to_width(value, 9, room) or [""]):
            page.text(MARGIN_IN + 2.8, page.y_in + n * 0.15, part, size=9)
        page.y_in += 0.19 + 0.15 * (max(1, len(wrap_to_width(value, 9, room))) - 1)


def _bar_chart(
    page: _Page, panel: Panel, loads: Loads, result: BalanceResult | None, height_in: float = 2.3
) -> None:
    width_in = page.width_in - 2 * MARGIN_IN
    bottom = 1.0 - (page.y_in + height_in) / page.height_in
    ax = page.fig.add_axes(
        (
            (MARGIN_IN + 0.6) / page.width_in,
            bottom,
            (width_in - 0.8) / page.width_in,
            (height_in - 0.2) / page.height_in,
        )
    )
    lines = list(panel.lines)
    x = list(range(len(lines)))
    after = [loads.phase_va[line] for line in lines]
    if result is not None:
        shown = states(result)
        step = 0.8 / len(shown)
        looks = [
            {"color": "white", "hatch": "//"},
            {"color": "#B8C4CE"},
            {"color": "#4A5A6A"},
        ]
        looks = [looks[0], looks[-1]] if len(shown) == 2 else looks
        for k, (state, look) in enumerate(zip(shown, looks, strict=True)):
            offset = -0.4 + step * (k + 0.5)
            values = [state.loads.phase_va[line] for line in lines]
            ax.bar(
                [i + offset for i in x],
                values,
                step,
                label=state.title.lower(),
                edgecolor="black",
                **look,  # type: ignore[arg-type]
            )
    else:
        ax.bar(x, after, 0.5, label="as placed", color="#4A5A6A", edgecolor="black")
    average = loads.total_va / len(lines)
    ax.axhline(average, color="black", ls="--", lw=1, label=f"average {average:,.0f} VA")
    from matplotlib.ticker import StrMethodFormatter

    ax.set_xticks(x, [f"Line {line}" for line in lines])
    ax.set_ylabel("Load (VA)", fontsize=8)
    ax.yaxis.set_major_formatter(StrMethodFormatter("{x:,.0f}"))
    ax.tick_params(labelsize=8)
    ax.legend(fontsize=7, loc="lower center", bbox_to_anchor=(0.5, 1.0), ncols=4, frameon=False)
    title = "Load per line"
    if result is not None:
        title += " in each state" if result.new_circuits else " before and after balancing"
    page.text(MARGIN_IN, page.y_in - 0.3, f"{title} (VA)", size=9, weight="bold", color=_HEAD)
    page.y_in += height_in


def _cautions(page: _Page) -> None:
    """The caution on a summary page; the full list goes with the work order."""
    page.heading("Caution", size=11)
    page.paragraph(CAUTION)


BULLET_IN = 0.14  # a caution's text starts this far right of its bullet


def _full_cautions(page: _Page, cautions: Sequence[str] = CAUTIONS) -> None:
    """The cautions as a bulleted list, each wrapped under its own first word. The bullet is
    drawn, not typed: a character outside Latin-1 makes the PDF embed the font once more, which
    costs a tenth of a second or more to write."""
    from matplotlib.lines import Line2D

    page.heading("Before any work at the panel", size=11)
    size = 8.0
    for note in cautions:
        x, y = page._xy(MARGIN_IN + 0.05, page.y_in + size / _POINTS * 0.5)
        dot = Line2D([x], [y], marker="o", markersize=size * 0.3, color="black", linestyle="")
        page.fig.add_artist(dot)
        page.paragraph(note, size=size, indent_in=BULLET_IN)
        page.y_in += 0.02


def _directory_rows(panel: Panel, new: frozenset[str] = frozenset()) -> list[list[Any]]:
    """Two spaces a row as the panel is built; a new breaker's description says ``new``."""
    geometry = panel.geometry
    by_space = {s: c for c in panel.circuits for s in c.spaces}
    out: list[list[Any]] = []

    def side(space: int) -> tuple[str, str, str]:
        circuit = by_space.get(space)
        if space > panel.spaces:
            return "", "", ""
        if circuit is None:
            return "(space)", "", ""
        share = _va(share_by_line(panel, circuit).get(geometry.line_of(space), 0.0))
        if space != circuit.first_space:
            return f"(pole of {circuit.first_space})", "", share
        trip = f"{circuit.trip_a:g} A" if circuit.trip_a else ""
        description = circuit.description
        if circuit.id in new and "new" not in description.lower():
            description += " (new)"
        return description, f"{circuit.poles}P {trip}".strip(), share

    for pair in range(geometry.rows()):
        left, right = 2 * pair + 1, 2 * pair + 2
        ld, lb, lva = side(left)
        rd, rb, rva = side(right)
        out.append(
            [
                ld,
                lb,
                lva,
                left,
                geometry.line_of(left),
                right if right <= panel.spaces else "",
                rva,
                rb,
                rd,
            ]
        )
    return out


def _directory_pages(
    pages: list[_Page], make: Any, panel: Panel, new: frozenset[str] = frozenset()
) -> None:
    rows = _directory_rows(panel, new)
    header = [
        "Description",
        "Breaker",
        "VA",
        "Space",
        "Line",
        "Space",
        "VA",
        "Breaker",
        "Description",
    ]
    width = pages[0].width_in - 2 * MARGIN_IN
    # the breaker columns as wide as their widest rating ("3P 100 A" on one line)
    breaker_in = max(
        [0.58, *(text_width_in(str(r[i]), 8.0) + 0.14 for r in rows for i in (1, 7) if r[i])]
    )
    fixed = [breaker_in, 0.5, 0.48, 0.4, 0.48, 0.5, breaker_in]
    description_in = (width - sum(fixed)) / 2
    widths = [description_in, *fixed[:3], fixed[3], *fixed[4:], description_in]
    # The directory must stay legible (NEC 408.4): a smaller type before any description is cut.
    longest = max((str(r[i]) for r in rows for i in (0, 8)), key=len, default="")
    size = 8.0
    while size > DIRECTORY_MIN_PT and text_width_in(longest, size) > description_in - 0.1:
        size -= 0.5
    align = ["left", "center", "right", "center", "center", "center", "right", "center", "left"]
    chunks = [
        rows[i : i + DIRECTORY_ROWS_PER_PAGE] for i in range(0, len(rows), DIRECTORY_ROWS_PER_PAGE)
    ]
    for number, chunk in enumerate(chunks, start=1):
        page = make()
        more = f" ({number} of {len(chunks)})" if len(chunks) > 1 else ""
        page.heading(f"Circuit directory, panel {panel.name}{more}")
        page.paragraph(
            f"{panel.system.label()}. Laid out as the panel is built: odd spaces left, even right; "
            "VA is the circuit's share on that row's line. Keep a legible copy at the panel "
            "(NEC 408.4)."
        )
        if panel.system.high_leg:
            page.paragraph(panel.system.high_leg_note(), size=8.5)
        page.y_in += 0.05
        page.table(header, chunk, widths, size=size, align=align)
        pages.append(page)


WORK_HEADER = ("Step", "Action", "Circuit", "Description", "From", "To", "Done")


def _work_order_pages(pages: list[_Page], make: Any, panel_name: str, order: WorkOrder) -> None:
    _work_pages(pages, make, panel_name, work_rows(order), order.cautions)


DETAIL_PT = 7.5


def _work_pages(
    pages: list[_Page],
    make: Any,
    panel_name: str,
    rows: Sequence[Sequence[Any]],
    cautions: Sequence[str] = CAUTIONS,
) -> None:
    """Work-order pages: rows in the columns of ``WORK_HEADER``; a row may carry, after them,
    the lines to print under it (a new breaker's rating and conductor, a multiwire handle tie,
    a load that must not lose power), wrapped across the page. A new page when one fills."""
    width = pages[0].width_in - 2 * MARGIN_IN
    fixed = [0.45, 1.9, 0.6, 1.0, 1.0, 0.6]
    widths = [fixed[0], fixed[1], fixed[2], width - sum(fixed), fixed[3], fixed[4], fixed[5]]
    align = ["left"] * len(WORK_HEADER)
    page = make()
    page.heading(f"Work order, panel {panel_name}")
    _full_cautions(page, cautions)
    page.y_in += 0.1
    page.paragraph(
        "Do the steps in order. Before each: de-energise the panel or the circuit, lock out, "
        "verify dead with a meter (for a load marked MUST NOT LOSE POWER, first arrange its "
        "temporary power or scheduled outage). After each: re-label the directory; initial the "
        "Done column."
    )
    page.y_in += 0.05
    page.header_band(WORK_HEADER, widths, size=8, align=align)
    step = 8 / _POINTS * 1.55
    for row in rows:
        details = (
            [str(d) for d in row[len(WORK_HEADER)] or ()] if len(row) > len(WORK_HEADER) else []
        )
        if page.y_in + step * (1 + len(details)) > page.height_in - MARGIN_IN - 0.5:
            pages.append(page)
            page = make()
            page.heading(f"Work order, panel {panel_name} (continued)")
            page.header_band(WORK_HEADER, widths, size=8, align=align)
        page.data_row(row[: len(WORK_HEADER)], widths, size=8, align=align)
        for detail in details:
            _detail(page, detail, MARGIN_IN + fixed[0] + 0.05, width - fixed[0] - 0.1)
    pages.append(page)


def _detail(page: _Page, text: str, x_in: float, width_in: float) -> None:
    """A wrapped line of detail under a work-order row (measured, never cut short)."""
    urgent = text.startswith("MUST NOT LOSE POWER")  # the one line that must not be missed
    look = {"color": "#8B1A1A", "weight": "bold"} if urgent else {"color": _HEAD}
    room = width_in / (1.2 if urgent else 1.0)  # bold type runs wider
    for part in _wrap_cell(text, room, DETAIL_PT):
        page.text(x_in, page.y_in - 0.02, part, size=DETAIL_PT, **look)
        page.y_in += DETAIL_PT / _POINTS * 1.35
    page.line(MARGIN_IN, x_in + width_in, page.y_in - 0.02)


def work_rows(order: WorkOrder) -> list[list[Any]]:
    """A work order's breaker steps as printed rows, in the columns of ``WORK_HEADER``, each
    followed by the lines to print under it (see :func:`_work_pages`)."""
    from balancer.field.workorder import ACTION_TEXT

    rows: list[list[Any]] = []
    for step in order.steps:
        for index, item in enumerate(step.items):
            details = list(item.details)
            if step.remark and index == len(step.items) - 1:
                details.append(step.remark)
            rows.append(
                [
                    step.number,
                    ACTION_TEXT[step.action],
                    item.circuit_id,
                    item.description,
                    place_text(item.from_spaces, item.from_lines),
                    place_text(item.to_spaces, item.to_lines),
                    "____",
                    details,
                ]
            )
    return rows


def place_text(spaces: Sequence[int], lines: Sequence[str]) -> str:
    if not spaces:
        return "not in panel"
    return f"{', '.join(map(str, spaces))} ({'-'.join(lines)})"


def _block_widths(
    rows: Sequence[Sequence[Any]], start: int, usable_in: float, size: float
) -> list[float]:
    """Column widths for the table that starts at ``rows[start]``: each column as wide as its
    widest cell (up to the next blank, title or header row). A table under a header spreads to
    the page width; too wide a table has its widest columns capped until it fits."""
    columns: list[float] = []
    for index in range(start, len(rows)):
        values = rows[index]
        if index > start and row_role(values) != "data":
            break
        bold = 1.1 if index == start and row_role(values) == "header" else 1.0
        for c, value in enumerate(values):
            while len(columns) <= c:
                columns.append(0.5)
            columns[c] = max(columns[c], text_width_in(_fmt(value), size) * bold + 0.15)
    if row_role(rows[start]) != "header":
        columns[0] = max(columns[0], 1.6)
    total = sum(columns)
    if total <= usable_in:
        if row_role(rows[start]) != "header":
            return columns
        return [w + (usable_in - total) / len(columns) for w in columns]
    low, high = 0.0, max(columns)
    for _ in range(40):  # the cap at which the capped columns just fill the page
        cap = (low + high) / 2
        low, high = (cap, high) if sum(min(w, cap) for w in columns) < usable_in else (low, cap)
    return [min(w, low) for w in columns]


def _block_align(rows: Sequence[Sequence[Any]], start: int, count: int) -> list[str]:
    """Right for a column whose cells in the block are all numbers, else left."""
    numeric = [True] * count
    seen = [False] * count
    for index in range(start, len(rows)):
        values = rows[index]
        role = row_role(values)
        if index > start and role != "data":
            break
        if role != "data":
            continue
        for c, value in enumerate(values[:count]):
            if value is None or value == "":
                continue
            seen[c] = True
            numeric[c] = (
                numeric[c] and isinstance(value, (int, float)) and not isinstance(value, bool)
            )
    return ["right" if c > 0 and numeric[c] and seen[c] else "left" for c in range(count)]


def _section_pages(pages: list[_Page], make: Any, sections: Sequence[ExtraSheet]) -> None:
    """Free-form rows, read as the workbook reads them (see :func:`row_role`): titles, table
    headers, key/value pairs (long text wrapped) and table rows; a new page when one fills."""
    size = 8.0
    for title, rows in sections:
        if not rows:
            continue
        page = make()
        page.heading(title)
        usable = page.width_in - 2 * MARGIN_IN
        widths: list[float] = []
        align: list[str] = []
        previous = "blank"
        for index, values in enumerate(rows):
            if page.full:
                pages.append(page)
                page = make()
                page.heading(f"{title} (continued)")
            role = row_role(values)
            long_text = len(values) == 2 and isinstance(values[1], str) and len(values[1]) > 60
            if role == "header" or (role == "data" and previous != "data" and not long_text):
                widths = _block_widths(rows, index, usable, size)
                align = _block_align(rows, index, len(widths))
            if role == "blank":
                page.y_in += 0.08
            elif role == "title":
                page.heading(str(values[0]), size=10.5)
            elif role == "header":
                page.header_band([str(v) for v in values], widths, size=size, align=align)
            elif long_text:
                page.paragraph(f"{values[0]}: {values[1]}", size=size)
            else:
                if row_has_tenths(values):  # one place of decimals across the row
                    values = [f"{v:,.1f}" if isinstance(v, float) else v for v in values]
                page.data_row(values, widths, size=size, align=align)
            previous = "data" if role == "header" else role
        pages.append(page)


def _numbered(pages: Sequence[_Page]) -> list[Figure]:
    """The pages' figures, each with "page n of N" in its corner."""
    for number, page in enumerate(pages, start=1):
        page.text(
            page.width_in - MARGIN_IN,
            page.height_in - 0.3,
            f"page {number} of {len(pages)}",
            size=7,
            color=_GREY,
            ha="right",
        )
    return [page.fig for page in pages]


def pdf_pages(
    panel: Panel,
    loads: Loads,
    *,
    result: BalanceResult | None = None,
    paper: Paper = "letter",
    sections: Sequence[ExtraSheet] = (),
    demand: DemandResult | None = None,
    order: WorkOrder | None = None,
    peak: PeakFigures | None = None,
) -> list[Figure]:
    """The PDF's pages as figures: summary, directory, work order (when given, with steps),
    load over time (when given), demand and feeder check (when given), extra sections."""
    pages: list[_Page] = []

    def make() -> _Page:
        return _new_page(paper, panel)

    first = make()
    pages.append(first)
    if not _summary_page(first, panel, loads, result, demand):
        chart = make()  # notices took the room: the chart on a page of its own
        chart.heading(f"Panel {panel.name} (continued)")
        chart.y_in += 0.45
        _bar_chart(chart, panel, loads, result)
        pages.append(chart)
    _directory_pages(pages, make, panel, frozenset(result.new_circuits) if result else frozenset())
    if order is not None and order.steps:
        _work_order_pages(pages, make, panel.name, order)
    if peak is not None:
        from balancer.io.overtime import over_time_page

        page = make()
        over_time_page(page, peak)
        pages.append(page)
    extra = list(sections)
    if demand is not None:
        from balancer.code.demand import demand_sheet_rows

        extra.insert(0, ("Demand load and feeder check", demand_sheet_rows(demand)))
    _section_pages(pages, make, extra)
    return _numbered(pages)


def write_pdf(
    path: Path | str,
    panel: Panel,
    loads: Loads,
    *,
    result: BalanceResult | None = None,
    paper: Paper = "letter",
    sections: Sequence[ExtraSheet] = (),
    demand: DemandResult | None = None,
    input_path: Path | str | None = None,
    order: WorkOrder | None = None,
    balanced_on: str | None = None,
    peak: PeakFigures | None = None,
) -> Path:
    """Write the panel's PDF to ``path`` (atomically) and return the path.

    Parameters
    ----------
    path
        The PDF to write; refused when it is the input schedule.
    panel, loads
        The panel to describe and its figures: the revised panel after ``balance``, the panel
        as read for ``check``.
    result
        The balancing result, for before/after figures and the proof status.
    paper
        ``"letter"`` (8.5 × 11 in) or ``"a4"`` (210 × 297 mm).
    sections
        Extra ``(title, rows)`` tables, free-form rows as the workbook's extra sheets take them.
    demand
        Demand loads and feeder check (:func:`balancer.code.demand.compute_demand`): a few lines on
        the summary and a page of their own.
    input_path
        The schedule that was read, when known.
    order
        The work order planned for the result (printed when it has steps).
    balanced_on
        With ``result``: the date the revision is said to be balanced on (today when not
        given).
    peak
        The load over time (:func:`balancer.report.peak.peak_figures`): a page of its own.
    """
    from matplotlib import rc_context
    from matplotlib.backends.backend_pdf import PdfPages

    if paper not in PAPER_IN:
        raise ValueError(f"paper must be one of {', '.join(PAPER_IN)}, not {paper!r}")
    path = Path(path)
    refuse_input_path(path, input_path, panel.source or None)
    if result is not None:  # the revised schedule: its revision carries the balancing date
        panel = replace(panel, header=revised_header(panel, balanced_on))

    def write(tmp: Path) -> None:
        # the fonts embedded; no text parsed as math (labels and legends too)
        with rc_context(
            {"pdf.fonttype": 42, "font.family": "DejaVu Sans", "text.parse_math": False}
        ):
            figures = pdf_pages(
                panel,
                loads,
                result=result,
                paper=paper,
                sections=sections,
                demand=demand,
                order=order,
                peak=peak,
            )
            with PdfPages(
                tmp, metadata={"Title": f"Panel {panel.name}", "Creator": "balancer"}
            ) as pdf:
                for fig in figures:
                    pdf.savefig(fig)

    return atomic(path, write)


def write_building_pdf(
    path: Path | str,
    title: str,
    summary: Sequence[str],
    panels: Sequence[Panel],
    work: Mapping[str, Sequence[Sequence[Any]]],
    *,
    paper: Paper = "letter",
    inputs: Sequence[str | Path] = (),
    tables: Sequence[ExtraSheet] = (),
    panel_pages: Mapping[str, Sequence[Sequence[Any]]] | None = None,
    cautions: Mapping[str, Sequence[str]] | None = None,
) -> Path:
    """A building's printout, written atomically: a summary page (the summary lines, the
    ``tables`` — each a title and rows whose first row is the header — and the caution), then
    for every panel its summary (``panel_pages``: rows, the first the header), its circuit
    directory and, when it changes, its work order (rows in the columns of ``WORK_HEADER``, from
    :func:`balancer.building.report.pdf_work_rows`, with ``cautions`` for that panel).

    ``panels`` are as they should be posted: the revised layout after balancing. ``inputs``
    are refused as ``path``.
    """
    from matplotlib import rc_context
    from matplotlib.backends.backend_pdf import PdfPages

    if paper not in PAPER_IN:
        raise ValueError(f"paper must be one of {', '.join(PAPER_IN)}, not {paper!r}")
    path = Path(path)
    refuse_input_path(path, *inputs)

    def figures() -> list[Figure]:
        pages: list[_Page] = []
        first = _new_page(paper, panels[0])
        first.heading(title)
        for line in summary:
            first.paragraph(line)
            first.y_in += 0.02
        first.y_in += 0.1
        for table_title, rows in tables:
            first = _titled_rows(
                pages, lambda: _new_page(paper, panels[0]), first, table_title, rows
            )
        first.y_in += 0.1
        _cautions(first)
        pages.append(first)
        for panel in panels:

            def make(panel: Panel = panel) -> _Page:
                return _new_page(paper, panel)

            figures_rows = (panel_pages or {}).get(panel.name)
            start: Any = make
            if figures_rows:
                page = make()
                page.heading(f"Panel {panel.name}")
                _facts_block(page, panel)
                page = _titled_rows(pages, make, page, "Figures, with all it feeds", figures_rows)
                if panel.spaces > SUMMARY_WITH_DIRECTORY_SPACES:
                    pages.append(page)  # a long directory starts on a page of its own
                else:
                    start = _handing_over(page, make)
            _directory_pages(pages, start, panel)
            work_rows_of = work.get(panel.name, ())
            if work_rows_of:
                given = (cautions or {}).get(panel.name, CAUTIONS)
                _work_pages(pages, make, panel.name, work_rows_of, given)
        return _numbered(pages)

    def write(tmp: Path) -> None:
        metadata = {"Title": title, "Creator": "balancer"}
        fonts = rc_context(
            {"pdf.fonttype": 42, "font.family": "DejaVu Sans", "text.parse_math": False}
        )
        with fonts, PdfPages(tmp, metadata=metadata) as pdf:
            for fig in figures():
                pdf.savefig(fig)

    return atomic(path, write)


SUMMARY_WITH_DIRECTORY_SPACES = 42  # up to this many spaces the directory fits under the summary


def _handing_over(page: _Page, make: Any) -> Any:
    """A page maker that hands out ``page`` (already begun) once, then new pages."""
    given = [page]

    def next_page() -> _Page:
        if given:
            begun = given.pop()
            begun.y_in += 0.15
            return begun
        return make()

    return next_page


def _titled_rows(
    pages: list[_Page], make: Any, page: _Page, title: str, rows: Sequence[Sequence[Any]]
) -> _Page:
    """A small titled table on ``page`` (the first row its header), columns as wide as their
    cells and every cell wrapped within its column, never cut; a new page (added to ``pages``)
    when it would not fit. Returns the page drawn on."""
    size = 7.5
    usable = page.width_in - 2 * MARGIN_IN
    widths = _natural_widths(rows, usable, size)
    figures = re.compile(r"^[\d.,/ →%+−-]*$")
    align = [
        "right" if c and all(figures.match(_fmt(r[c])) for r in rows[1:] if c < len(r)) else "left"
        for c in range(len(widths))
    ]
    wrapped = [
        [_wrap_cell(_fmt(v), w - 0.1, size) for v, w in zip(r, widths, strict=False)] for r in rows
    ]
    step = size / _POINTS * 1.3
    height = sum(step * max(len(c) for c in r) + 0.06 for r in wrapped)
    if page.y_in + height + 0.4 > page.height_in - MARGIN_IN - 0.5:
        pages.append(page)
        page = make()
    page.heading(title, size=11)
    for index, cells in enumerate(wrapped):
        tall = step * max(len(c) for c in cells) + 0.06
        if index == 0:
            page.rect(MARGIN_IN, page.y_in - 0.03, sum(widths), tall, _HEAD)
        x = MARGIN_IN
        for lines, w, how in zip(cells, widths, align, strict=False):
            look: dict[str, Any] = {"color": "white", "weight": "bold"} if index == 0 else {}
            for k, line in enumerate(lines):
                y = page.y_in + k * step
                if how == "right" and index:
                    page.text(x + w - 0.05, y, line, size=size, ha="right", **look)
                else:
                    page.text(x + 0.05, y, line, size=size, **look)
            x += w
        page.y_in += tall
        if index:
            page.line(MARGIN_IN, MARGIN_IN + sum(widths), page.y_in - 0.05)
    page.y_in += 0.12
    return page


def _natural_widths(rows: Sequence[Sequence[Any]], usable_in: float, size: float) -> list[float]:
    """Each column as wide as its widest data cell and its header's longest word; the room left
    shared out, or the widest columns capped until the table fits ``usable_in``."""
    count = max(len(r) for r in rows)
    natural = [0.4] * count
    for index, values in enumerate(rows):
        for c, value in enumerate(values):
            text = _fmt(value)
            if index == 0:  # a header wraps between words
                longest = max(text.split(" "), key=lambda w: text_width_in(w, size), default="")
                natural[c] = max(natural[c], text_width_in(longest, size) * 1.15 + 0.15)
            else:
                natural[c] = max(natural[c], text_width_in(text, size) * 1.03 + 0.15)
    total = sum(natural)
    if total <= usable_in:
        return [w + (usable_in - total) / count for w in natural]
    low, high = 0.0, max(natural)
    for _ in range(40):
        cap = (low + high) / 2
        low, high = (cap, high) if sum(min(w, cap) for w in natural) < usable_in else (low, cap)
    return [min(w, low) for w in natural]


def _wrap_cell(text: str, width_in: float, size: float) -> list[str]:
    """``text`` in lines no wider than ``width_in`` (measured), broken between words; a word
    wider than the column keeps a line of its own."""
    lines: list[str] = []
    for word in text.split(" "):
        if lines and not wider_than(f"{lines[-1]} {word}", size, width_in / 1.03):
            lines[-1] = f"{lines[-1]} {word}"
        else:
            lines.append(word)
    return lines or [""]

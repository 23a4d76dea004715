"""Charts of a balancing run: native workbook charts (openpyxl) and the phasor diagram (matplotlib).

The phasor diagram is split in two so it can be tested without looking at pixels:
:func:`phasor_arrows` computes the arrows from a panel, :func:`draw_phasor_diagram` only draws
them. Meaning never rests on colour alone: each line has its own line style and every arrow is
labelled with its name and magnitude.
"""

from __future__ import annotations

import cmath
import io
import math
from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from pathlib import Path
from typing import TYPE_CHECKING, Literal

from openpyxl.chart import BarChart, LineChart, Reference
from openpyxl.chart.shapes import GraphicalProperties
from openpyxl.drawing.line import LineProperties

from balancer.domain.panel import Panel
from balancer.physics.harmonics import Profile, spectrum_for
from balancer.physics.phasors import circuit_harmonic_currents

if TYPE_CHECKING:
    from matplotlib.figure import Figure
    from openpyxl.worksheet.worksheet import Worksheet

# --- native workbook charts -------------------------------------------------------------------


def phase_load_chart(
    ws: Worksheet,
    *,
    header_row: int,
    first_row: int,
    last_row: int,
    line_col: int,
    before_col: int,
    after_col: int,
    average_col: int,
    unit: str = "VA",
    middle_col: int | None = None,
) -> BarChart:
    """Clustered bars of each line's load before and after, with the average as a line.

    The table is read from ``ws``: categories (line letters) in ``line_col`` and series headed
    in ``header_row``. The caller places the chart with ``ws.add_chart``.
    """
    bars = BarChart()
    bars.type = "col"
    bars.grouping = "clustered"
    bars.title = f"Load per line ({unit})"
    bars.y_axis.title = unit
    bars.x_axis.title = "Line"
    categories = Reference(ws, min_col=line_col, min_row=first_row, max_row=last_row)
    columns = (before_col, after_col) if middle_col is None else (before_col, middle_col, after_col)
    for col in columns:
        bars.add_data(
            Reference(ws, min_col=col, min_row=header_row, max_row=last_row), titles_from_data=True
        )
    bars.set_categories(categories)
    # Before hatched-light, after solid-dark: the two stay apart in greyscale print; a middle
    # state (the panel with its additions) in between.
    bars.series[0].graphicalProperties = GraphicalProperties(solidFill="B8C4CE")
    bars.series[0].graphicalProperties.line = LineProperties(solidFill="3C4A57")
    if middle_col is not None:
        bars.series[1].graphicalProperties = GraphicalProperties(solidFill="7D8B99")
        bars.series[1].graphicalProperties.line = LineProperties(solidFill="3C4A57")
    bars.series[-1].graphicalProperties = GraphicalProperties(solidFill="3C4A57")
    average = LineChart()
    average.add_data(
        Reference(ws, min_col=average_col, min_row=header_row, max_row=last_row),
        titles_from_data=True,
    )
    average.set_categories(categories)
    line = average.series[0]
    line.graphicalProperties.line = LineProperties(solidFill="000000", prstDash="dash", w=22000)
    line.smooth = False
    bars.x_axis.delete = False
    bars.y_axis.delete = False
    bars += average
    bars.legend.position = "b"
    bars.height = 7.5
    bars.width = 15.0
    return bars


def tradeoff_chart(
    ws: Worksheet,
    *,
    header_row: int,
    first_row: int,
    last_row: int,
    moves_col: int,
    imbalance_col: int,
) -> LineChart:
    """Imbalance reachable against the number of moves allowed, one marker per row."""
    chart = LineChart()
    chart.title = "Imbalance against moves allowed"
    chart.y_axis.title = "Imbalance %"
    chart.x_axis.title = "Moves allowed"
    chart.add_data(
        Reference(ws, min_col=imbalance_col, min_row=header_row, max_row=last_row),
        titles_from_data=True,
    )
    chart.set_categories(Reference(ws, min_col=moves_col, min_row=first_row, max_row=last_row))
    series = chart.series[0]
    series.marker.symbol = "circle"
    series.marker.size = 7
    series.graphicalProperties.line = LineProperties(solidFill="3C4A57", w=19050)
    series.smooth = False
    chart.x_axis.delete = False
    chart.y_axis.delete = False
    chart.legend = None
    chart.height = 7.5
    chart.width = 15.0
    return chart


# --- phasor diagram ---------------------------------------------------------------------------


@dataclass(frozen=True, slots=True)
class Arrow:
    """One current phasor to draw: a line current or the neutral current, RMS amperes."""

    label: str
    current_a: complex
    kind: Literal["line", "neutral"]

    @property
    def magnitude_a(self) -> float:
        return abs(self.current_a)

    @property
    def angle_deg(self) -> float:
        return math.degrees(cmath.phase(self.current_a)) if self.current_a else 0.0


def phasor_arrows(panel: Panel, profiles: Mapping[str, Profile] | None = None) -> tuple[Arrow, ...]:
    """Fundamental line current phasors of the panel as placed, then the neutral (if any).

    Built from the same per-circuit currents as :func:`balancer.physics.analysis.analyze`, so the
    magnitudes equal ``Loads.line_a`` and ``Loads.neutral_a``; the neutral is what the lines
    carry out and does not return on them (Kirchhoff's current law).
    """
    totals = dict.fromkeys(panel.lines, 0j)
    for circuit in panel.circuits:
        lines = panel.lines_of(circuit)
        if not lines or circuit.basis_va == 0:
            continue
        by_order = circuit_harmonic_currents(
            panel.system,
            lines,
            circuit.basis_va,
            circuit.power_factor,
            spectrum=spectrum_for(circuit, profiles),
            voltage_v=circuit.voltage_v,
            neutral_va=circuit.neutral_va,
        )
        for line, current in by_order[1].lines.items():
            totals[line] += current
    arrows = [Arrow(line, totals[line], "line") for line in panel.lines]
    if panel.system.neutral:
        arrows.append(Arrow("N", sum(totals.values(), 0j), "neutral"))
    return tuple(arrows)


# Line styles carry identity; colours (Okabe & Ito's colour-blind safe set) only add to it.
_STYLE = {
    "A": ("-", "#0072B2"),
    "B": ("--", "#D55E00"),
    "C": ("-.", "#009E73"),
    "N": (":", "#000000"),
}


def _draw_one(ax: object, arrows: Sequence[Arrow], title: str, reach_a: float) -> None:
    from matplotlib.axes import Axes

    assert isinstance(ax, Axes)
    ax.set_aspect("equal")
    limit = reach_a * 1.35 if reach_a > 0 else 1.0
    ax.set_xlim(-limit, limit)
    ax.set_ylim(-limit, limit)
    ax.axhline(0, color="#BBBBBB", lw=0.6)
    ax.axvline(0, color="#BBBBBB", lw=0.6)
    for arrow in arrows:
        style, colour = _STYLE.get(arrow.label, ("-", "#444444"))
        tip = arrow.current_a
        width = 2.6 if arrow.kind == "neutral" else 1.8
        ax.annotate(
            "",
            xy=(tip.real, tip.imag),
            xytext=(0, 0),
            arrowprops={
                "arrowstyle": "-|>",
                "linestyle": style,
                "color": colour,
                "lw": width,
                "shrinkA": 0,
                "shrinkB": 0,
                "mutation_scale": 14,
            },
        )
        name = "Neutral" if arrow.kind == "neutral" else f"Line {arrow.label}"
        offset = tip / abs(tip) * limit * 0.13 if abs(tip) > 0 else complex(0, limit * 0.13)
        where = tip + offset
        ax.text(
            where.real,
            where.imag,
            f"{name}\n{arrow.magnitude_a:.1f} A",
            fontsize=8,
            ha="center",
            va="center",
            bbox={"boxstyle": "round,pad=0.2", "fc": "white", "ec": colour, "ls": style},
        )
    ax.set_title(title, fontsize=10)
    ax.set_xlabel("real part (A)", fontsize=8)
    ax.set_ylabel("imaginary part (A)", fontsize=8)
    ax.tick_params(labelsize=7)


def draw_phasor_diagram(
    before: Sequence[Arrow],
    after: Sequence[Arrow] | None = None,
    *,
    harmonic_neutral_rms_a: Sequence[float | None] | None = None,
    title: str = "",
) -> Figure:
    """Draw the arrows (before and after side by side, one scale), plus an optional bar panel of
    the neutral's fundamental and RMS-with-harmonics currents."""
    from matplotlib.figure import Figure

    panels = [("Before" if after is not None else "As placed", before)]
    if after is not None:
        panels.append(("After", after))
    extra = harmonic_neutral_rms_a is not None and any(
        v is not None for v in harmonic_neutral_rms_a
    )
    count = len(panels) + (1 if extra else 0)
    fig = Figure(figsize=(4.2 * count, 4.6), layout="constrained")
    axes = fig.subplots(1, count, squeeze=False)[0]
    reach = max((a.magnitude_a for _, group in panels for a in group), default=0.0)
    for ax, (name, group) in zip(axes, panels, strict=False):
        _draw_one(ax, group, name, reach)
    if extra and harmonic_neutral_rms_a is not None:
        ax = axes[-1]
        names, fundamental, rms = [], [], []
        for (name, group), value in zip(panels, harmonic_neutral_rms_a, strict=False):
            neutral = next((a for a in group if a.kind == "neutral"), None)
            names.append(name)
            fundamental.append(neutral.magnitude_a if neutral else 0.0)
            rms.append(value or 0.0)
        x = list(range(len(names)))
        ax.bar(
            [i - 0.2 for i in x],
            fundamental,
            0.4,
            label="fundamental",
            color="white",
            edgecolor="black",
            hatch="//",
        )
        ax.bar(
            [i + 0.2 for i in x],
            rms,
            0.4,
            label="RMS with harmonics",
            color="#555555",
            edgecolor="black",
        )
        for i in x:
            ax.text(
                i - 0.2,
                fundamental[i],
                f"{fundamental[i]:.1f}",
                ha="center",
                va="bottom",
                fontsize=8,
            )
            ax.text(i + 0.2, rms[i], f"{rms[i]:.1f}", ha="center", va="bottom", fontsize=8)
        ax.set_xticks(x, names)
        ax.set_ylabel("neutral current (A)", fontsize=8)
        ax.set_title("Neutral current", fontsize=10)
        ax.legend(fontsize=7, loc="upper right")
    if title:
        fig.suptitle(title, fontsize=11, parse_math=False)  # a panel name is not math
    return fig


def phasor_figure_bytes(fig: Figure, fmt: Literal["png", "svg"] = "png", dpi: int = 110) -> bytes:
    """The figure rendered with the Agg/SVG backends (no display needed)."""
    buffer = io.BytesIO()
    fig.savefig(buffer, format=fmt, dpi=dpi)
    return buffer.getvalue()


def save_phasor_diagram(fig: Figure, stem: Path) -> tuple[Path, Path]:
    """Write ``<stem>.png`` and ``<stem>.svg`` atomically; return both paths."""
    from balancer.io.files import atomic_write_bytes

    png = atomic_write_bytes(stem.with_suffix(".png"), phasor_figure_bytes(fig, "png"))
    svg = atomic_write_bytes(stem.with_suffix(".svg"), phasor_figure_bytes(fig, "svg"))
    return png, svg

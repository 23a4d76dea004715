"""Text bars of the per-line loads for the terminal summaries of ``check`` and ``balance``.

Every bar carries its meaning in plain characters and numbers (the bar length, the ``|`` mark
at the average, the VA, amperes and deviation figures, the ``heaviest`` tag); colour is only an
extra for a terminal that asks for it, so a pipe, a log file or a greyscale screen loses nothing.
"""

from __future__ import annotations

import math
import os
from collections.abc import Mapping, Sequence
from typing import TextIO

from balancer.domain.systems import Line
from balancer.physics.analysis import Loads

_FILL = "#"
_EMPTY = "."
_AVERAGE = "|"
_BOLD = "\033[1m"
_YELLOW = "\033[33m"
_RESET = "\033[0m"


def use_color(stream: TextIO, no_color: bool = False) -> bool:
    """Whether to colour output on ``stream``.

    Colour only on a terminal, never with ``--no-color`` or the ``NO_COLOR`` environment
    variable (the convention published at no-color.org).
    """
    if no_color or os.environ.get("NO_COLOR"):
        return False
    return is_terminal(stream)


def is_terminal(stream: TextIO) -> bool:
    """Whether ``stream`` is a terminal (a stream without ``isatty`` is not)."""
    isatty = getattr(stream, "isatty", None)
    return bool(isatty and isatty())


TIE_A = 0.05  # currents that round to the same tenth of an ampere are a tie


def heaviest_lines(amps: Mapping[Line, float]) -> tuple[Line, ...]:
    """The line carrying the most current, or every line tied for it; none when all carry the
    same (a balanced panel has no heaviest line)."""
    if not amps:
        return ()
    top = max(amps.values())
    tied = tuple(line for line, value in amps.items() if top - value < TIE_A)
    return () if len(tied) == len(amps) else tied


def _bar(value: float, scale_max: float, average: float, width: int) -> str:
    filled = 0 if scale_max <= 0 else round(value / scale_max * width)
    mark = None if scale_max <= 0 else min(width - 1, round(average / scale_max * width))
    cells = [_FILL if i < filled else _EMPTY for i in range(width)]
    if mark is not None and average > 0:
        cells[mark] = _AVERAGE
    return "".join(cells)


def phase_bars(
    loads: Loads,
    *,
    title: str = "",
    width: int = 40,
    color: bool = False,
    scale_max_va: float | None = None,
    show_neutral: bool = True,
) -> list[str]:
    """Lines of text, one bar per line (phase), scaled to the heaviest line.

    Parameters
    ----------
    loads
        The figures to draw.
    title
        A heading line, left out when empty.
    width
        Characters in a full-length bar.
    color
        Add ANSI colour (the heaviest line, by current, in bold yellow). The text is the same
        without it.
    scale_max_va
        VA of a full bar; give the same value to draw "before" and "after" on one scale.
    show_neutral
        Add the neutral current line (leave out for a system without a neutral).

    Returns
    -------
    list of str
        ``A  ######|####....  12,340 VA  102.8 A  +3.1 %`` and so on, then a legend line.
    """
    phase_va: Mapping[Line, float] = loads.phase_va
    values = list(phase_va.values())
    average = math.fsum(values) / len(values) if values else 0.0
    top = scale_max_va if scale_max_va is not None else max(values, default=0.0)
    amps_by_line = loads.line_rms_a or loads.line_a  # RMS heats conductors
    heaviest = heaviest_lines(amps_by_line)
    out = [title] if title else []
    for line, va in phase_va.items():
        deviation = 0.0 if average == 0 else (va - average) / average * 100.0
        deviation = round(deviation, 1) + 0.0  # no "-0.0 %"
        amps = amps_by_line.get(line, 0.0)
        text = (
            f"{line}  {_bar(va, top, average, width)}  {va:>9,.0f} VA  {amps:>7.1f} A"
            f"  {deviation:+6.1f} %"
        )
        if line in heaviest:
            text += "  heaviest (tie)" if len(heaviest) > 1 else "  heaviest"
            if color:
                text = f"{_BOLD}{_YELLOW}{text}{_RESET}"
        out.append(text)
    if show_neutral:
        out.append(f"N  neutral {loads.neutral_rms_a or loads.neutral_a:.1f} A RMS")
    out.append(
        f"   '{_AVERAGE}' = average {average:,.0f} VA; spread {loads.spread_va:,.0f} VA;"
        f" imbalance {loads.imbalance_pct:.1f} %"
    )
    return out


def before_after_bars(
    before: Loads,
    after: Loads,
    *,
    width: int = 40,
    color: bool = False,
    show_neutral: bool = True,
) -> list[str]:
    """Bars before and after a balancing run, drawn on one scale so lengths compare."""
    top = max([*before.phase_va.values(), *after.phase_va.values(), 0.0])
    common = {"width": width, "color": color, "scale_max_va": top, "show_neutral": show_neutral}
    return [
        *phase_bars(before, title="Before", **common),  # type: ignore[arg-type]
        "",
        *phase_bars(after, title="After", **common),  # type: ignore[arg-type]
    ]


def state_bars(
    series: Sequence[tuple[str, Loads]],
    *,
    width: int = 40,
    color: bool = False,
    show_neutral: bool = True,
) -> list[str]:
    """Bars for each (title, figures) state, all on one scale so lengths compare (the panel as
    it stands, with its additions, after)."""
    top = max([v for _, loads in series for v in loads.phase_va.values()] + [0.0])
    out: list[str] = []
    for index, (title, loads) in enumerate(series):
        if index:
            out.append("")
        out += phase_bars(
            loads,
            title=title,
            width=width,
            color=color,
            scale_max_va=top,
            show_neutral=show_neutral,
        )
    return out

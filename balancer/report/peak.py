"""Figures of a load series for the reports: line loads per interval before and after, the
worst interval, loading by hour, and the existing load from the data (NEC 220.87).

Every output (terminal, JSON, workbook, PDF, web page) reads these figures from here.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass
from typing import Any

import numpy as np

from balancer.domain.panel import Panel
from balancer.domain.result import BalanceResult
from balancer.domain.systems import Line
from balancer.intervals.figures import line_loads, spreads_va
from balancer.intervals.series import LoadSeries

__all__ = [
    "ExistingLoad",
    "PeakFigures",
    "existing_load",
    "peak_figures",
    "peak_json",
    "peak_lines",
]

DEMAND_WINDOW_MIN = 15  # NEC 220.87: the highest average over a 15-minute interval
EXISTING_FACTOR = 1.25  # NEC 220.87: the maximum demand at 125 percent
RECORDING_DAYS = 30  # NEC 220.87: a recording of at least 30 days when a year of data is lacking
WEEK_H = 7 * 24


@dataclass(frozen=True, slots=True)
class ExistingLoad:
    """NEC 220.87 from the data: the heaviest line's maximum 15-minute demand, at 125 %."""

    line: Line
    demand_va: float  # the highest 15-minute average on that line
    demand_a: float
    existing_a: float  # 125 % of it
    window_min: int  # the averaging window used (15, or the data's interval when longer)
    days: float  # the span the data covers
    enough: bool  # a year of data, or a recording of at least 30 days at 15 minutes or finer
    remark: str


@dataclass(frozen=True, slots=True, eq=False)
class PeakFigures:
    """Line VA in every interval of a series, before and after balancing."""

    series: LoadSeries
    lines: tuple[Line, ...]
    before_va: np.ndarray  # (intervals, lines): the panel as it stands
    after_va: np.ndarray | None  # the arrangement returned; None when nothing was balanced
    existing: ExistingLoad | None

    @property
    def before_spread_va(self) -> np.ndarray:
        return spreads_va(self.before_va)

    @property
    def after_spread_va(self) -> np.ndarray | None:
        return None if self.after_va is None else spreads_va(self.after_va)

    def worst(self, after: bool) -> int:
        """The interval with the widest spread (the first of equals)."""
        spread = self.after_spread_va if after else self.before_spread_va
        assert spread is not None
        return int(np.argmax(spread))

    def heaviest(self, after: bool) -> int:
        """The interval whose heaviest line carries the most (the first of equals)."""
        va = self.after_va if after else self.before_va
        assert va is not None
        return int(np.argmax(va.max(axis=1)))

    def window(self, weeks: int = 1) -> slice:
        """The intervals of the weeks around the widest one (after balancing when there is an
        after), kept inside the horizon."""
        per_hour = max(1, 60 // self.series.interval_min)
        count = weeks * WEEK_H * per_hour
        total = len(self.series.starts)
        centre = self.worst(after=self.after_va is not None)
        first = max(0, min(centre - count // 2, total - count))
        return slice(first, min(total, first + count))

    def stamp(self, index: int) -> str:
        return str(self.series.starts[index]).replace("T", " ")[:16]

    def by_hour(self, after: bool) -> np.ndarray:
        """Mean VA per line for each hour of the day, shape (24, lines); NaN for an hour the
        series never covers."""
        va = self.after_va if after else self.before_va
        assert va is not None
        hours = self.series.starts.astype("datetime64[h]").astype(np.int64) % 24
        out = np.full((24, len(self.lines)), np.nan)
        for hour in range(24):
            rows = hours == hour
            if rows.any():
                out[hour] = va[rows].mean(axis=0)
        return out


def existing_load(panel: Panel, series: LoadSeries, per_line_va: np.ndarray) -> ExistingLoad:
    """NEC 220.87 from measured data: 15-minute averages of each line (the data's own interval
    when it is longer, which the remark says understates the peak), the heaviest, at 125 %."""
    step = series.interval_min
    starts = series.starts.astype("datetime64[m]").astype(np.int64)
    window = max(DEMAND_WINDOW_MIN, step)
    bins = starts // window
    unique, inverse = np.unique(bins, return_inverse=True)
    sums = np.zeros((len(unique), per_line_va.shape[1]))
    counts = np.zeros(len(unique))
    np.add.at(sums, inverse, per_line_va)
    np.add.at(counts, inverse, 1.0)
    full = counts >= window // step  # a window with an interval missing is not averaged
    averages = sums[full] / counts[full, None] if full.any() else sums / counts[:, None]
    peak = averages.max(axis=0)
    j = int(np.argmax(peak))
    volts = panel.system.line_to_neutral_v[j]
    days = (float(starts[-1] - starts[0]) + step) / (60 * 24) if len(starts) else 0.0
    enough = days >= RECORDING_DAYS and step <= DEMAND_WINDOW_MIN
    if step > DEMAND_WINDOW_MIN:
        remark = (
            f"readings every {step} min: a {DEMAND_WINDOW_MIN}-minute peak inside them is not "
            "seen, so this understates the demand"
        )
    elif days < RECORDING_DAYS:
        remark = (
            f"the data covers {days:.1f} days; NEC 220.87 asks for a year of demand data or a "
            f"recording of at least {RECORDING_DAYS} days"
        )
    else:
        remark = f"{days:,.0f} days of data, {DEMAND_WINDOW_MIN}-minute averages"
    demand_a = float(peak[j]) / volts
    return ExistingLoad(
        panel.lines[j],
        float(peak[j]),
        demand_a,
        EXISTING_FACTOR * demand_a,
        window,
        days,
        enough,
        remark,
    )


def peak_figures(series: LoadSeries, before: Panel, result: BalanceResult | None) -> PeakFigures:
    """The figures of ``series`` for the panel as it stands and, with a result, as rearranged.

    Per-line data gives the panel as it stands only: its lines are taken as read.
    """
    if series.line_va is not None and not series.circuit_ids:
        before_va = series.line_va
        after_va = None
    else:
        before_va = line_loads(before, series)
        after_va = None if result is None else line_loads(result.after_panel, series)
    existing = existing_load(before, series, before_va) if series.kind == "measured" else None
    return PeakFigures(series, before.lines, before_va, after_va, existing)


def _line_text(lines: Sequence[Line], va: np.ndarray) -> str:
    return ", ".join(f"{line} {v:,.0f}" for line, v in zip(lines, va, strict=True)) + " VA"


def peak_lines(figures: PeakFigures) -> list[str]:
    """The terminal section: where the data came from, the worst interval before and after,
    and NEC 220.87 from the data."""
    series = figures.series
    count = len(series.starts)
    basis = f"measured, from {series.source}" if series.kind == "measured" else series.source
    out = [f"Load over time: {count:,} intervals of {series.interval_min} min, {basis}"]
    b = figures.worst(after=False)
    out.append(
        f"  widest interval as it stands: {figures.stamp(b)}, spread "
        f"{figures.before_spread_va[b]:,.0f} VA ({_line_text(figures.lines, figures.before_va[b])})"
    )
    if figures.after_va is not None:
        a = figures.worst(after=True)
        spread = figures.after_spread_va
        assert spread is not None
        out.append(
            f"  widest interval after balancing: {figures.stamp(a)}, spread {spread[a]:,.0f} VA "
            f"({_line_text(figures.lines, figures.after_va[a])})"
        )
    for after, va in ((False, figures.before_va), (True, figures.after_va)):
        if va is None:
            continue
        t = figures.heaviest(after)
        j = int(np.argmax(va[t]))
        out.append(
            f"  heaviest line {'after balancing' if after else 'as it stands'}: "
            f"{figures.stamp(t)}, line {figures.lines[j]} {va[t, j]:,.0f} VA"
        )
    existing = figures.existing
    if existing is not None:
        out.append(
            f"  NEC 220.87 from the data: line {existing.line} peaks at {existing.demand_a:,.1f} A "
            f"({existing.window_min}-minute average); at 125 % {existing.existing_a:,.1f} A "
            f"({existing.remark})"
        )
    out += [f"  note: {n}" for n in series.notices]
    return out


def _finite(value: float) -> float | None:
    return value if math.isfinite(value) else None


def peak_json(figures: PeakFigures) -> dict[str, Any]:
    """The JSON block: the series, the worst interval before and after, loading by hour, and
    NEC 220.87 from the data. Per-interval figures are left to the workbook (a year of
    15-minute data is 35,040 rows)."""
    series = figures.series

    def interval(index: int, va: np.ndarray) -> dict[str, Any]:
        return {
            "start": figures.stamp(index),
            "line_va": {line: float(v) for line, v in zip(figures.lines, va[index], strict=True)},
            "spread_va": float(va[index].max() - va[index].min()),
        }

    data: dict[str, Any] = {
        "source": series.source,
        "kind": series.kind,
        "intervals": len(series.starts),
        "interval_min": series.interval_min,
        "first_start": figures.stamp(0),
        "last_start": figures.stamp(len(series.starts) - 1),
        "notices": list(series.notices),
        "widest_before": interval(figures.worst(after=False), figures.before_va),
        "widest_after": None,
        "heaviest_before": interval(figures.heaviest(after=False), figures.before_va),
        "heaviest_after": None,
        "by_hour_before_va": _hours(figures.by_hour(after=False)),
        "by_hour_after_va": None,
        "existing_load": None,
    }
    if figures.after_va is not None:
        data["widest_after"] = interval(figures.worst(after=True), figures.after_va)
        data["heaviest_after"] = interval(figures.heaviest(after=True), figures.after_va)
        data["by_hour_after_va"] = _hours(figures.by_hour(after=True))
    existing = figures.existing
    if existing is not None:
        data["existing_load"] = {
            "rule": "NEC 220.87",
            "line": existing.line,
            "demand_va": existing.demand_va,
            "demand_a": existing.demand_a,
            "existing_a": existing.existing_a,
            "window_min": existing.window_min,
            "days": existing.days,
            "enough_data": existing.enough,
            "remark": existing.remark,
        }
    return data


def _hours(table: np.ndarray) -> list[list[float | None]]:
    return [[_finite(float(v)) for v in row] for row in table]

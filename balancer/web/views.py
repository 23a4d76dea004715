"""What the page shows, as JSON: the reports' own JSON (:mod:`balancer.report.json`) and beside
it the panel drawn as built and the charts. Nothing here computes a figure; it only arranges
what the reports carry."""

from __future__ import annotations

from typing import Any

import numpy as np

from balancer.api import BalanceReport, CheckReport
from balancer.domain.panel import Panel
from balancer.field.tradeoff import _status_text
from balancer.field.workorder import ACTION_TEXT
from balancer.optimize.goals import goal_for
from balancer.report.json import balance_json, check_json
from balancer.report.peak import PeakFigures
from balancer.report.safety import CAUTIONS
from balancer.report.states import states
from balancer.web import svg


def panel_facts(panel: Panel) -> dict[str, Any]:
    """The system's high leg, if any, and its voltage to neutral (NEC 110.15)."""
    system = panel.system
    high = system.high_leg
    facts: dict[str, Any] = {
        "lines": list(system.lines),
        "high_leg": high,
        "neutral": system.neutral,
    }
    if high is not None:
        facts["high_leg_v"] = system.line_to_neutral_v[system.lines.index(high)]
    return facts


def layout(panel: Panel, before: Panel | None = None) -> dict[str, Any]:
    """The panel as it is built: rows of two spaces (odd left, even right) with their line, and
    each breaker with the spaces it spans; against ``before``, which breakers moved or are new."""
    geometry = panel.geometry
    rows = []
    for row in range(geometry.rows()):
        left, right = 2 * row + 1, 2 * row + 2
        rows.append(
            {
                "left": left,
                "right": right if right <= panel.spaces else None,
                "line": geometry.line_of(left),
            }
        )
    was = {c.id: c.spaces for c in before.circuits} if before is not None else {}
    breakers: list[dict[str, Any]] = []
    unplaced: list[dict[str, Any]] = []
    for c in panel.circuits:
        entry = {
            "id": c.id,
            "description": c.description,
            "poles": c.poles,
            "load_va": c.load_va,
            "trip_a": c.trip_a,
            "spaces": list(c.spaces),
            "lines": list(panel.lines_of(c)),
            "locked": c.locked,
            "spare": c.is_spare,
            "group": c.group,
            "from": list(was.get(c.id, ())),
            "moved": before is not None and bool(was.get(c.id)) and was.get(c.id) != c.spaces,
            "new": before is not None and not was.get(c.id) and c.placed,
        }
        (breakers if c.placed else unplaced).append(entry)
    return {"spaces": panel.spaces, "rows": rows, "breakers": breakers, "unplaced": unplaced}


CHART_POINTS = 1_400  # a week of 1-minute readings is 10,080: drawn as the widest of each group


def _thinned(values: np.ndarray, group: int) -> list[float]:
    """The widest spread of each ``group`` intervals, so no peak is lost in the drawing."""
    if group <= 1:
        return [float(v) for v in values]
    padded = np.pad(values, (0, -len(values) % group), constant_values=-np.inf)
    return [float(v) for v in padded.reshape(-1, group).max(axis=1)]


def _hours(table: np.ndarray) -> list[list[float | None]]:
    return [[None if np.isnan(v) else float(v) for v in row] for row in table]


def peak_view(figures: PeakFigures | None, high_leg: str | None) -> dict[str, Any] | None:
    """What the page draws of the load over time (its figures are in the JSON report's
    ``load_over_time`` block): the load basis in words, the spread per interval over the week
    around the widest interval, and the mean loading by hour of day."""
    if figures is None:
        return None
    series = figures.series
    measured = series.kind == "measured"
    window = figures.window()
    group = max(1, -(-(window.stop - window.start) // CHART_POINTS))
    stamps = [figures.stamp(i) for i in range(window.start, window.stop, group)]
    after = figures.after_spread_va

    def mark(spread: np.ndarray, index: int) -> svg.Widest | None:
        if not window.start <= index < window.stop:
            return None
        place = (index - window.start) // group
        return svg.Widest(place, figures.stamp(index), float(spread[index]))

    widest_before = mark(figures.before_spread_va, figures.worst(after=False))
    widest_after = None if after is None else mark(after, figures.worst(after=True))
    tables = [("As it stands", _hours(figures.by_hour(after=False)))]
    if figures.after_va is not None:
        tables.append(("Arranged", _hours(figures.by_hour(after=True))))
    return {
        "measured": measured,
        "basis": f"measured, from {series.source}" if measured else "typical load shapes, invented",
        "window": {"first": figures.stamp(window.start), "last": figures.stamp(window.stop - 1)},
        "whole_horizon": window.stop - window.start == len(series.starts),
        "chart": svg.spread_chart(
            stamps,
            _thinned(figures.before_spread_va[window], group),
            None if after is None else _thinned(after[window], group),
            widest_after,
            widest_before,
        ),
        "heat": svg.hour_heat_map(figures.lines, tables, high_leg),
    }


def check_view(report: CheckReport, name: str) -> dict[str, Any]:
    data = check_json(report)
    data["panel"]["source"] = name
    panel = report.panel
    facts = panel_facts(panel)
    return {
        "name": name,
        "check": data,
        "facts": facts,
        "layout": layout(panel),
        "bars": svg.line_bars(
            [("as it stands", report.loads.phase_va)], panel.lines, facts["high_leg"]
        ),
        "over_time": peak_view(report.peak, facts["high_leg"]),
    }


def _same_layout(first: Panel, second: Panel) -> bool:
    return {c.id: c.spaces for c in first.circuits} == {c.id: c.spaces for c in second.circuits}


def recommended_row(report: BalanceReport) -> int | None:
    """The trade-off row whose arrangement is the recommended one, if any."""
    table = report.field.table
    if table is None:
        return None
    for index, candidate in enumerate(table.results):
        if _same_layout(candidate.after_panel, report.result.after_panel):
            return index
    return None


def table_view(report: BalanceReport, selected: int | None) -> dict[str, Any]:
    """The trade-off table, the recommendation and the chart, with ``selected`` marked."""
    table = report.field.table
    field = report.field.to_json()
    rows = field["tradeoff"]
    for row, source in zip(rows, table.rows if table else (), strict=True):
        row["status_text"] = _status_text(source.status)
    recommended = recommended_row(report)
    result = report.result
    return {
        "rows": rows,
        "notes": list(table.notes) if table else [],
        "recommended_row": recommended,
        "recommendation": field["recommendation"],
        "target": field["target"],
        "goal": result.first_goal,
        "over_time": report.peak is not None,
        "recommended": {
            "moves": len(result.moves),
            "goal_value": result.goal_value,
            "spread_va": result.after.spread_va,
            "imbalance_pct": result.after.imbalance_pct,
            "neutral_fundamental_a": result.after.neutral_a,
            "status": result.status.value,
            "status_text": _status_text(result.status),
        },
        "chart": svg.tradeoff_chart(
            table.rows if table else (),
            recommended if selected is None else selected,
            recommended,
        ),
    }


def _bar_label(key: str, title: str) -> str:
    """The page's words for a state: "as it stands", "with additions", "arranged"."""
    return {"as_it_stands": "as it stands", "after": "arranged"}.get(key, title.lower())


def arrangement_view(
    original: BalanceReport, report: BalanceReport, name: str, row: int | None
) -> dict[str, Any]:
    """One arrangement (``report``, from :func:`balancer.api.balance_row` on ``original``): its
    JSON report, the panel drawn with the moves marked, the bars before and after, the cautions
    and the trade-off table with this row marked."""
    data = balance_json(report)
    data["panel"]["source"] = name
    result = report.result
    order = report.field.order
    facts = panel_facts(result.after_panel)
    return {
        "row": row,
        "balance": data,
        "status_text": _status_text(result.status),
        "goal_phrase": goal_for(result.first_goal).phrase,
        "actions": dict(ACTION_TEXT),
        "facts": facts,
        "layout": layout(result.after_panel, result.before_panel),
        "bars": svg.line_bars(
            [(_bar_label(s.key, s.title), s.loads.phase_va) for s in states(result)],
            result.after_panel.lines,
            facts["high_leg"],
        ),
        "cautions": list(order.cautions if order is not None else CAUTIONS),
        "table": table_view(original, row),
        "over_time": peak_view(report.peak, facts["high_leg"]),
    }

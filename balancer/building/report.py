"""Building figures for people: tables, terminal text and the figures workbook."""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from dataclasses import replace
from pathlib import Path
from typing import TYPE_CHECKING

from balancer.building.tree import (
    Building,
    BuildingResult,
    Feed,
    RollUp,
)
from balancer.domain.panel import Panel
from balancer.domain.result import SolveStatus
from balancer.domain.systems import Line
from balancer.optimize.goals import goal_for
from balancer.report.safety import CAUTION, CAUTIONS

if TYPE_CHECKING:
    from openpyxl.worksheet.worksheet import Worksheet


def _lines_text(values: Mapping[Line, float], digits: int = 0) -> str:
    return " / ".join(f"{v:,.{digits}f}" for v in values.values())


def panel_rows(
    building: Building,
    before: RollUp,
    result: BuildingResult | None = None,
    demand: tuple[RollUp, RollUp | None] | None = None,
) -> list[dict[str, object]]:
    """One row per panel, service first: figures before and (when balanced) after."""
    rows: list[dict[str, object]] = []
    for name in reversed(building.order()):
        panel = building.panel(name)
        fig = before.panels[name]
        row: dict[str, object] = {
            "panel": name,
            "system": panel.system.designation,
            "fed_from": _fed_from(building, name, result),
            "total_va": fig.total_va,
            "phase_va_before": _lines_text(fig.phase_va),
            "imbalance_before_pct": fig.imbalance_pct,
            "spread_before_va": fig.spread_va,
            "line_a_before": _lines_text(fig.line_a, 1),
            "neutral_before_a": fig.neutral_a,
        }
        if demand is not None:
            row["demand_va"] = demand[0].panels[name].total_va
            row["demand_phase_va_before"] = _lines_text(demand[0].panels[name].phase_va)
            if demand[1] is not None:
                row["demand_phase_va_after"] = _lines_text(demand[1].panels[name].phase_va)
        if result is not None:
            after = result.after_figures.panels[name]
            outcome = result.outcomes[name]
            row |= {
                "phase_va_after": _lines_text(after.phase_va),
                "imbalance_after_pct": after.imbalance_pct,
                "spread_after_va": after.spread_va,
                "line_a_after": _lines_text(after.line_a, 1),
                "neutral_after_a": after.neutral_a,
                "status": outcome.status.value,
                "first_goal": goal_for(outcome.first_goal).phrase,
                "moves": len(outcome.moves),
                "moved": ", ".join(outcome.moves),
                "re_landed": ", ".join(outcome.swapped_feeds),
            }
        rows.append(row)
    return rows


def feeder_rows(
    building: Building, before: RollUp, result: BuildingResult | None = None
) -> list[dict[str, object]]:
    """One row per feed: what the subpanel puts on its feeder circuit upstream."""
    rows: list[dict[str, object]] = []
    for name in reversed(building.order()):
        feed = building.feed_of(name)
        if feed is None:
            continue
        fig = before.feeders[name]
        row: dict[str, object] = {
            "panel": name,
            "fed_from": feed.source,
            "circuit": _feeder_number(building, feed, result),
            "transformer": (
                f"{feed.transformer.name} {feed.transformer.kva:g} kVA "
                f"{feed.transformer.connection}"
            )
            if feed.transformer
            else "",
            "lines_before": "-".join(fig.lines),
            "upstream_va_before": _lines_text({k: fig.phase_va[k] for k in fig.lines}),
            "upstream_a_before": _lines_text(fig.line_a, 1),
            "transformer_loading_before_pct": fig.transformer_loading_pct,
        }
        if result is not None:
            after = result.after_figures.feeders[name]
            row |= {
                "lines_after": "-".join(after.lines),
                "upstream_va_after": _lines_text({k: after.phase_va[k] for k in after.lines}),
                "upstream_a_after": _lines_text(after.line_a, 1),
                "transformer_loading_after_pct": after.transformer_loading_pct,
            }
        rows.append(row)
    return rows


def _fed_from(building: Building, name: str, result: BuildingResult | None) -> str:
    """Where panel ``name`` is fed from, by the feeder's number in the layout shown: the revised
    one (with the number as found beside it when it moved) after balancing."""
    feed = building.feed_of(name)
    if feed is None:
        return "service"
    if result is None:
        return building.feeder_text(feed)
    return result.after.feeder_text(feed, was=building)


def _feeder_number(building: Building, feed: Feed, result: BuildingResult | None) -> str:
    """The feeder's number in the layout shown, as :func:`_fed_from` gives it."""
    old = building.feeder_number(feed)
    if result is None:
        return old
    new = result.after.feeder_number(feed)
    return new if new == old else f"{new} (was {old})"


def move_rows(result: BuildingResult) -> list[dict[str, object]]:
    """One row per breaker that moves and per feeder to re-land, service first."""
    rows: list[dict[str, object]] = []
    for name in reversed(result.before.order()):
        outcome = result.outcomes[name]
        before = result.before.panel(name)
        after = result.after.panel(name)
        for circuit_id in outcome.moves:
            old, new = before.circuit(circuit_id), after.circuit(circuit_id)
            rows.append(
                {
                    "panel": name,
                    "circuit": circuit_id,
                    "description": old.description,
                    "from_spaces": ", ".join(str(s) for s in old.spaces),
                    "to_spaces": ", ".join(str(s) for s in new.spaces),
                    "from_lines": "-".join(before.lines_of(old)),
                    "to_lines": "-".join(after.lines_of(new)),
                }
            )
        for fed in outcome.swapped_feeds:
            feed = result.after.feed_of(fed)
            assert feed is not None
            rows.append(
                {
                    "panel": name,
                    "circuit": feed.circuit_id,
                    "description": f"re-land the feeder conductors of {fed}: its line A to the "
                    + ("second" if feed.swapped else "first")
                    + " pole",
                    "from_spaces": "",
                    "to_spaces": "",
                    "from_lines": "",
                    "to_lines": "",
                }
            )
    return rows


def summary_lines(
    building: Building, before: RollUp, result: BuildingResult | None = None
) -> list[str]:
    out = []
    figures = result.after_figures if result else before
    for service in building.services():
        fig = figures.panels[service]
        out.append(
            f"Service {service}: {fig.total_va / 1000:,.1f} kVA connected over "
            f"{sum(1 for n in building.order() if _root_of(building, n) == service)} panels; "
            f"lines {_lines_text(fig.line_a, 1)} A, neutral {fig.neutral_a:.1f} A"
        )
    worst_before = max(before.panels.values(), key=lambda f: f.imbalance_pct)
    out.append(
        f"Most unbalanced panel as found: {worst_before.name} at {worst_before.imbalance_pct:.1f} %"
    )
    if result is not None:
        worst_after = max(result.after_figures.panels.values(), key=lambda f: f.imbalance_pct)
        proven = sum(1 for o in result.outcomes.values() if o.status is SolveStatus.OPTIMAL)
        goal_proven = sum(1 for o in result.outcomes.values() if o.goal_proven)
        moves = sum(len(o.moves) for o in result.outcomes.values())
        relands = sum(len(o.swapped_feeds) for o in result.outcomes.values())
        out.append(
            f"Most unbalanced panel after balancing: {worst_after.name} at "
            f"{worst_after.imbalance_pct:.1f} %"
        )
        out.append(
            f"{proven} of {len(result.outcomes)} panels proven best on every goal, "
            f"{goal_proven} on their first goal; "
            f"{moves} breaker moves, {relands} feeders re-landed"
        )
        for name, outcome in result.outcomes.items():
            if outcome.first_goal == "transformer":
                found = before.feeders[name].transformer_loading_pct or 0.0
                now = result.after_figures.feeders[name].transformer_loading_pct or 0.0
                out.append(
                    f"{name} is behind a delta-secondary transformer: balanced first for its "
                    f"heaviest winding ({found:.1f} % → {now:.1f} % of rating), then moves, "
                    "then phase spread"
                )
    for name, feeder in figures.feeders.items():
        loading = feeder.transformer_loading_pct
        if loading is not None and loading > 100.0:
            out.append(
                f"WARNING: the transformer feeding {name} is loaded to "
                f"{loading:.0f} % of one winding's rating"
            )
    return out


def spare_capacity(building: Building, figures: RollUp, name: str) -> str:
    """Room left on what limits panel ``name``, on the connected basis with all it feeds: its
    main breaker, else the transformer feeding it (its heaviest winding), else the feeder
    breaker upstream, else its bus; "rating not given" when the schedules give none."""
    panel = building.panel(name)
    heaviest = max(figures.panels[name].line_a.values(), default=0.0)
    feed = building.feed_of(name)

    def left(rating: float, what: str) -> str:
        if heaviest > rating:
            return f"none: {heaviest - rating:,.0f} A over the {rating:g} A {what}"
        return f"{rating - heaviest:,.0f} A of {rating:g} A {what}"

    if panel.main_a:
        return left(panel.main_a, "main")
    if feed is not None and feed.transformer is not None:
        loading = figures.feeders[name].transformer_loading_pct
        if loading is not None:
            t = feed.transformer
            named = f"{t.name or 'transformer'} {t.kva:g} kVA"
            if loading > 100.0:
                return f"none: {named} at {loading:.0f} % on its heaviest winding"
            return f"{100.0 - loading:.0f} % of {named}"
    if feed is not None:
        trip = building.feeder_circuit(feed).trip_a
        if trip:
            return left(trip, "feeder")
    if panel.bus_a:
        return left(panel.bus_a, "bus")
    return "rating not given"


def _change(before: float, after: float | None, digits: int = 1) -> str:
    """``"34.0"`` as found; ``"34.0 → 1.0"`` when revised."""
    text = f"{before:,.{digits}f}"
    return text if after is None else f"{text} → {after:,.{digits}f}"


def printout_tables(
    building: Building,
    before: RollUp,
    result: BuildingResult | None = None,
    demand: tuple[RollUp, RollUp | None] | None = None,
) -> list[tuple[str, list[list[object]]]]:
    """The printout's summary-page tables, as (title, rows) with a header row: every panel
    (system, where it is fed from, connected and demand kVA, amps per line, imbalance, spare
    capacity), then every feeder and the transformer on it. Revised figures after balancing,
    with the figure as found beside the imbalance and the loading."""
    figures = result.after_figures if result else before
    after = result.after if result else building
    revised = " (revised)" if result else ""
    panels: list[list[object]] = [
        [
            "Panel",
            "System",
            "Fed from",
            "Connected kVA",
            "Demand kVA",
            f"Amps per line{revised}",
            "Imbalance %" + (" found → revised" if result else ""),
            "Spare capacity (connected)",
        ]
    ]
    for name in reversed(building.order()):
        fig = figures.panels[name]
        demand_fig = None
        if demand is not None:
            demand_fig = (demand[1] if result and demand[1] is not None else demand[0]).panels[name]
        panels.append(
            [
                name,
                building.panel(name).system.designation,
                _fed_from(building, name, result),
                f"{fig.total_va / 1000:,.1f}",
                f"{demand_fig.total_va / 1000:,.1f}" if demand_fig else "not worked out",
                _lines_text(fig.line_a, 1),
                _change(
                    before.panels[name].imbalance_pct,
                    fig.imbalance_pct if result else None,
                ),
                spare_capacity(after, figures, name),
            ]
        )
    feeders: list[list[object]] = [
        [
            "Panel fed",
            "From",
            "Feeder circuit",
            "Transformer",
            f"Lines{revised}",
            f"Amps upstream{revised}",
            "Transformer loading %" + (" found → revised" if result else ""),
        ]
    ]
    for name in reversed(building.order()):
        feed = building.feed_of(name)
        if feed is None:
            continue
        on_feeder = figures.feeders[name]
        t = feed.transformer
        found = before.feeders[name].transformer_loading_pct
        feeders.append(
            [
                name,
                feed.source,
                _feeder_number(building, feed, result),
                f"{t.name} {t.kva:g} kVA {t.connection}".strip() if t else "none",
                "-".join(on_feeder.lines),
                _lines_text(on_feeder.line_a, 1),
                ""
                if found is None
                else _change(found, on_feeder.transformer_loading_pct if result else None),
            ]
        )
    tables = [("Panels", panels)]
    if len(feeders) > 1:
        tables.append(("Feeders and transformers", feeders))
    return tables


def panel_summaries(
    building: Building,
    before: RollUp,
    result: BuildingResult | None = None,
    demand: tuple[RollUp, RollUp | None] | None = None,
) -> dict[str, list[list[object]]]:
    """Each panel's summary for its own page of the printout, as rows: a header (figure, as
    found and, after balancing, revised), then one row per figure (with all it feeds)."""
    out: dict[str, list[list[object]]] = {}
    for name in reversed(building.order()):
        found = before.panels[name]
        now = result.after_figures.panels[name] if result else None
        header: list[object] = ["Figure", "As found", *(["Revised"] if result else [])]
        figs = [found] if now is None else [found, now]
        rows: list[list[object]] = [header]
        fed = [_fed_from(building, name, None)] + (
            [_fed_from(building, name, result)] if result else []
        )
        rows.append(["Fed from", *fed])
        rows.append(["Connected kVA", *[f"{f.total_va / 1000:,.1f}" for f in figs]])
        if demand is not None:
            ds = [demand[0]] if not result or demand[1] is None else [demand[0], demand[1]]
            rows.append(["Demand kVA", *[f"{d.panels[name].total_va / 1000:,.1f}" for d in ds]])
        rows.append(["VA per line", *[_lines_text(f.phase_va) for f in figs]])
        rows.append(["Amps per line", *[_lines_text(f.line_a, 1) for f in figs]])
        rows.append(["Imbalance %", *[f"{f.imbalance_pct:.1f}" for f in figs]])
        if building.panel(name).system.neutral:
            rows.append(["Neutral A", *[f"{f.neutral_a:.1f}" for f in figs]])
        figures = result.after_figures if result else before
        rows.append(
            [
                "Spare capacity",
                spare_capacity(building, before, name),
                *([spare_capacity(result.after, figures, name)] if result else []),
            ]
        )
        if result is not None:
            outcome = result.outcomes[name]
            rows.append(["Breakers to move", "", str(len(outcome.moves))])
            if outcome.swapped_feeds:
                rows.append(["Feeders to re-land", "", ", ".join(outcome.swapped_feeds)])
            rows.append(["Result", "", outcome.status.value])
        out[name] = rows
    return out


def _root_of(building: Building, name: str) -> str:
    feed = building.feed_of(name)
    while feed is not None:
        name = feed.source
        feed = building.feed_of(name)
    return name


TABLE_WIDTH = 100  # the terminal's columns (balancer.report.text.WIDTH)


def _table(rows: list[dict[str, object]], columns: Sequence[tuple[str, str]]) -> list[str]:
    """Rows as aligned text columns within :data:`TABLE_WIDTH`; a table too wide goes on in a
    second one under it, which repeats the first column (the panel) so each row reads alone."""

    def text(value: object) -> str:
        if value is None:
            return "-"
        if isinstance(value, float):
            return f"{value:,.1f}"
        return str(value)

    cells = [[title for _, title in columns]] + [[text(r.get(k)) for k, _ in columns] for r in rows]
    widths = [max(len(row[i]) for row in cells) for i in range(len(columns))]
    used = widths[0]
    for count in range(1, len(columns)):
        used += 2 + widths[count]
        if used > TABLE_WIDTH:
            first = [columns[0], *columns[count:]]
            return [*_table(rows, columns[:count]), "", *_table(rows, first)]
    return [
        "  ".join(c.ljust(w) for c, w in zip(row, widths, strict=True)).rstrip() for row in cells
    ]


def _feeder_tables(feeds: list[dict[str, object]], balanced: bool) -> list[str]:
    """The feeders as found and, when balanced, after: two tables that fit 100 columns."""
    if not feeds:
        return []
    lines: list[str] = []
    feeder_cols = [
        ("panel", "Feeds"),
        ("fed_from", "From"),
        ("circuit", "Circuit"),
        ("transformer", "Transformer"),
        ("lines_before", "Lines"),
        ("upstream_a_before", "Amps upstream"),
        ("transformer_loading_before_pct", "Loading %"),
    ]
    lines += ["", "Feeders as found:", *_table(feeds, feeder_cols)]
    if balanced:
        after_cols = [
            ("panel", "Feeds"),
            ("lines_after", "Lines"),
            ("upstream_a_after", "Amps upstream"),
            ("transformer_loading_after_pct", "Loading %"),
        ]
        lines += ["", "Feeders after balancing:", *_table(feeds, after_cols)]
    return lines


def building_text(
    building: Building,
    before: RollUp,
    result: BuildingResult | None = None,
    demand: tuple[RollUp, RollUp | None] | None = None,
    *,
    color: bool = False,
    verbose: bool = False,
) -> str:
    """The terminal report: panels as found (and after balancing), demand, feeders, summary,
    caution; within 100 columns, warnings marked (and coloured when ``color``); with
    ``verbose`` each panel's solver figures and every note."""
    from balancer.report.text import WARNING_MARK, fit, warning_lines, wrap

    basis = "connected basis" + ("; demand per the rule set where shown" if demand else "")
    lines = [f"Building {building.name}: {len(building.panels)} panels ({basis})", ""]
    rows = panel_rows(building, before, result, demand)
    found = [
        ("panel", "Panel"),
        ("system", "System"),
        ("fed_from", "Fed from"),
        ("phase_va_before", "VA per line"),
        ("imbalance_before_pct", "Imbalance %"),
        ("line_a_before", "Amps per line"),
        ("neutral_before_a", "Neutral A"),
    ]
    lines += ["As found:", *_table(rows, found)]
    if result is not None:
        balanced = [
            ("panel", "Panel"),
            ("phase_va_after", "VA per line"),
            ("imbalance_after_pct", "Imbalance %"),
            ("line_a_after", "Amps per line"),
            ("status", "Status"),
            ("moves", "Moves"),
        ]
        lines += ["", "After balancing:", *_table(rows, balanced)]
    if demand is not None:
        demand_cols = [
            ("panel", "Panel"),
            ("demand_va", "Demand VA"),
            ("demand_phase_va_before", "Demand VA per line"),
        ]
        if demand[1] is not None:
            demand_cols.append(("demand_phase_va_after", "Demand per line after"))
        lines += ["", "Demand:", *_table(rows, demand_cols)]
    lines += _feeder_tables(feeder_rows(building, before, result), result is not None)
    lines.append("")
    for line in summary_lines(building, before, result):
        if line.startswith(WARNING_MARK):
            lines += warning_lines([line.removeprefix(WARNING_MARK).strip()], color)
        else:
            lines.append(line)
    if result is not None:
        for name, outcome in result.outcomes.items():
            if outcome.swapped_feeds:
                lines.append(
                    f"{name}: re-land the feeder conductors of {', '.join(outcome.swapped_feeds)} "
                    "(line A of the subpanel to the other pole)"
                )
            if verbose:
                lines.append(
                    f"{name}: solver status {outcome.status.value}, gap {outcome.gap_va:,.1f} VA, "
                    f"{outcome.solve_seconds:.1f} s"
                )
                lines += [f"{name}: {n}" for n in outcome.notes]
            elif not outcome.exact or outcome.status is SolveStatus.FEASIBLE:
                lines += [f"{name}: {n}" for n in outcome.notes if "proven" in n or "exactly" in n]
    lines += ["", *wrap(CAUTION)]
    return "\n".join(fit(lines))


# Column titles of the figures workbook; any key not listed is shown with spaces for "_".
SHEET_TITLES: dict[str, str] = {
    "panel": "Panel",
    "system": "System",
    "fed_from": "Fed from",
    "total_va": "Total VA",
    "phase_va_before": "VA per line before",
    "phase_va_after": "VA per line after",
    "spread_before_va": "Spread VA before",
    "spread_after_va": "Spread VA after",
    "imbalance_before_pct": "Imbalance % before",
    "imbalance_after_pct": "Imbalance % after",
    "line_a_before": "Amps per line before",
    "line_a_after": "Amps per line after",
    "neutral_before_a": "Neutral A before",
    "neutral_after_a": "Neutral A after",
    "status": "Status",
    "first_goal": "Balanced for",
    "moves": "Moves",
    "moved": "Moved",
    "re_landed": "Re-landed",
    "circuit": "Circuit",
    "description": "Description",
    "transformer": "Transformer",
    "lines_before": "Lines before",
    "lines_after": "Lines after",
    "upstream_va_before": "VA upstream before",
    "upstream_va_after": "VA upstream after",
    "upstream_a_before": "Amps upstream before",
    "upstream_a_after": "Amps upstream after",
    "transformer_loading_before_pct": "Transformer loading % before",
    "transformer_loading_after_pct": "Transformer loading % after",
    "from_spaces": "From spaces",
    "to_spaces": "To spaces",
    "from_lines": "From lines",
    "to_lines": "To lines",
}


def work_order_rows(result: BuildingResult) -> list[list[object]]:
    """The field steps of every panel that changes, service first: the cautions, then per panel
    its breaker steps (one free space at a time), the feeder conductors to re-land and the
    currents to expect afterwards (fundamental, with everything the panel feeds)."""
    from balancer.field.workorder import STEP_HEADER, breaker_text, step_rows, work_order

    rows: list[list[object]] = [[f"Work order — building {result.before.name}"], []]
    rows += [["Caution", c] for c in CAUTIONS]
    changed = [
        name
        for name in reversed(result.before.order())
        if result.outcomes[name].moves or result.outcomes[name].swapped_feeds
    ]
    if not changed:
        return [*rows, [], ["No breaker moves and no feeder is re-landed."]]
    for name in changed:
        outcome = result.outcomes[name]
        order = work_order(result.before.panel(name), result.after.panel(name))
        rows += [[], [f"Panel {name}"]]
        rows += [["Caution", c] for c in order.cautions if c not in CAUTIONS]
        rows += [list(STEP_HEADER), *step_rows(order)]
        step = len(order.steps)
        for fed in outcome.swapped_feeds:
            feed = result.after.feed_of(fed)
            assert feed is not None
            step += 1
            circuit = result.after.panel(name).circuit(feed.circuit_id)
            spaces = ", ".join(str(s) for s in circuit.spaces)
            lines = "-".join(result.after.panel(name).lines_of(circuit))
            rows.append(
                [
                    step,
                    "re-land",
                    feed.circuit_id,
                    f"feeder to {fed}: exchange its two line conductors on the breaker",
                    spaces,
                    lines,
                    spaces,
                    lines,
                    breaker_text(circuit),
                    "",
                    f"{fed} line A then lands on the "
                    + ("second" if feed.swapped else "first")
                    + " pole; mark both ends",
                    "",
                ]
            )
        figures = result.after_figures.panels[name]
        rows.append(["Expected after the work", "A, fundamental, with all it feeds"])
        rows += [[f"Line {k}", round(a, 1)] for k, a in figures.line_a.items()]
        if result.after.panel(name).system.neutral:
            rows.append(["Neutral", round(figures.neutral_a, 1)])
    return rows


def pdf_work_rows(result: BuildingResult) -> dict[str, list[list[object]]]:
    """Per panel that changes, its work-order rows for the printout (the columns of
    :data:`balancer.io.pdf.WORK_HEADER`): breaker steps, then feeder conductors to re-land."""
    from balancer.field.workorder import work_order
    from balancer.io.pdf import place_text, work_rows

    out: dict[str, list[list[object]]] = {}
    for name in reversed(result.before.order()):
        outcome = result.outcomes[name]
        if not (outcome.moves or outcome.swapped_feeds):
            continue
        order = work_order(result.before.panel(name), result.after.panel(name))
        rows: list[list[object]] = work_rows(order)
        after = result.after.panel(name)
        for number, fed in enumerate(outcome.swapped_feeds, start=len(order.steps) + 1):
            feed = result.after.feed_of(fed)
            assert feed is not None
            circuit = after.circuit(feed.circuit_id)
            where = place_text(circuit.spaces, after.lines_of(circuit))
            text = f"feeder to {fed}: exchange its two line conductors"
            rows.append([number, "Re-land conductors", feed.circuit_id, text, where, where, "____"])
        out[name] = rows
    return out


def work_cautions(result: BuildingResult) -> dict[str, tuple[str, ...]]:
    """Per panel that changes, the cautions its printed work order carries (with a line for
    the loads that must not lose power when some move)."""
    from balancer.field.workorder import work_order

    return {
        name: work_order(result.before.panel(name), result.after.panel(name)).cautions
        for name in reversed(result.before.order())
        if result.outcomes[name].moves or result.outcomes[name].swapped_feeds
    }


def printed_panels(building: Building, figures: RollUp) -> list[Panel]:
    """The panels for a printed directory, service first: each feeder breaker shows the load
    of everything it feeds (split evenly over its poles), not the schedule's own figure."""
    out = []
    for name in reversed(building.order()):
        panel = building.panel(name)
        fed = {f.circuit_id: f.panel for f in building.fed_from(name)}
        circuits = [
            replace(c, load_va=figures.panels[fed[c.id]].tree_branch_va) if c.id in fed else c
            for c in panel.circuits
        ]
        out.append(panel.with_circuits(circuits))
    return out


def write_building_workbook(
    path: str | Path,
    building: Building,
    before: RollUp,
    result: BuildingResult | None = None,
    demand: tuple[RollUp, RollUp | None] | None = None,
) -> Path:
    """The figures as a workbook, written atomically: Summary, Panels, Feeders and, when
    balanced, Moves, a Work order and the revised building itself (a ``Building`` index sheet
    and one schedule sheet per panel, breakers that move shaded), which ``balancer building``
    reads again."""

    from openpyxl import Workbook

    from balancer.building.files import write_building_sheets
    from balancer.io.files import save_workbook
    from balancer.io.writer import write_rows_sheet

    book = Workbook()
    summary = book.active
    assert summary is not None
    _summary_sheet(summary, building, before, result)
    tables = [
        ("Panels", panel_rows(building, before, result, demand)),
        ("Feeders", feeder_rows(building, before, result)),
    ]
    if result is not None:
        tables.append(("Moves", move_rows(result)))
    for title, rows in tables:
        _table_sheet(book.create_sheet(title), rows)
    if result is not None:
        write_rows_sheet(book.create_sheet(), "Work order", work_order_rows(result))
        shaded = {
            name: frozenset(o.moves) | _feeder_ids(result, name)
            for name, o in result.outcomes.items()
        }
        write_building_sheets(book, result.after, f"{building.name}, revised", shaded, building)
    return save_workbook(book, path)


def _summary_sheet(
    summary: Worksheet, building: Building, before: RollUp, result: BuildingResult | None
) -> None:
    """The Summary sheet: the building's summary lines and the caution, wrapped in column A."""
    from openpyxl.styles import Alignment, Font

    from balancer.io.writer import print_setup

    summary.title = "Summary"
    summary.append([f"Building {building.name}"])
    summary["A1"].font = Font(bold=True, size=14)
    for line in ["", *summary_lines(building, before, result), "", CAUTION]:
        summary.append([line])
    if result is not None:
        summary.append([])
        summary.append(
            [
                "The revised building is in this workbook: the Building sheet and one sheet per "
                "panel. `balancer building` reads it again."
            ]
        )
    summary.column_dimensions["A"].width = 84
    for (cell,) in summary.iter_rows(min_row=2, max_col=1):
        cell.alignment = Alignment(wrap_text=True, vertical="top")
        # the row height is not worked out when the file is opened: give wrapped text room
        lines = -(-len(str(cell.value or "")) // 80)
        if lines > 1:
            summary.row_dimensions[cell.row].height = 15 * lines + 2
    print_setup(summary, landscape=False, title_rows=None)


def _table_sheet(sheet: Worksheet, rows: Sequence[Mapping[str, object]]) -> None:
    """One table of rows (the keys of the first its columns), headers wrapped to fit."""
    from openpyxl.styles import Alignment, Font

    from balancer.io.writer import print_setup

    keys = list(rows[0]) if rows else ["panel"]
    sheet.append([SHEET_TITLES.get(k, k.replace("_", " ")) for k in keys])
    for cell in sheet[1]:
        cell.font = Font(bold=True)
    for row in rows:
        sheet.append([row.get(k) for k in keys])
    for col, key in enumerate(keys, start=1):
        fmt = _number_format(key)
        for (cell,) in sheet.iter_rows(min_row=2, min_col=col, max_col=col):
            if fmt:
                cell.number_format = fmt
            # figures (numbers, and "a / b / c" per line) to the right with a gap before
            # the next column, words to the left
            figures = not isinstance(cell.value, str) or " / " in cell.value
            cell.alignment = Alignment(horizontal="right" if figures else "left", indent=1)
    for col, key in enumerate(keys, start=1):
        header = sheet.cell(row=1, column=col)
        header.alignment = Alignment(wrap_text=True, vertical="top")
        longest = max([len(_shown(r.get(key))) for r in rows] + [9])
        words = max(len(w) for w in str(header.value).split())
        width = min(36, max(words, longest) + 2)
        sheet.column_dimensions[header.column_letter].width = width
    # room for the longest header wrapped in its column
    wrapped = max(
        -(
            -len(str(cell.value))
            // max(1, int(sheet.column_dimensions[cell.column_letter].width) - 2)
        )
        for cell in sheet[1]
    )
    sheet.row_dimensions[1].height = 14 * max(1, wrapped) + 4
    sheet.freeze_panes = "B2"
    print_setup(sheet, landscape=True, title_rows="1:1")


def _shown(value: object) -> str:
    """About what a cell shows, for its column width."""
    if value is None:
        return ""
    return f"{value:,.1f}" if isinstance(value, float) else str(value)


def _number_format(key: str) -> str | None:
    """Cell format by the unit a key ends in: one decimal for % and A, whole VA."""
    if key.endswith("_pct") or key.endswith("_a"):
        return "0.0"
    if key.endswith("_va"):
        return "#,##0"
    return None


def _feeder_ids(result: BuildingResult, name: str) -> frozenset[str]:
    """Feeder breakers of ``name`` whose conductors are re-landed."""
    outcome = result.outcomes[name]
    ids = set()
    for fed in outcome.swapped_feeds:
        feed = result.after.feed_of(fed)
        if feed is not None:
            ids.add(feed.circuit_id)
    return frozenset(ids)

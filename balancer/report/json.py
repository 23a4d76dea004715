"""The JSON each command prints, built from the pipeline's reports (nothing is computed here).

One shape for one figure in every command: per-line figures are objects keyed by line
(``{"A": …, "B": …, "C": …}``), numbers are numbers rounded to the precision the terminal shows
(by the unit the key ends in, :data:`UNIT_DIGITS`), and a figure keeps its key name wherever it
appears (``phase_va``, ``spread_va``, ``imbalance_pct``, ``line_rms_a``, ``line_fundamental_a``,
``neutral_rms_a``, ``neutral_fundamental_a``). The schemas in ``docs/schemas/`` describe each
command's object; ``docs/output.md`` explains them.
"""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence
from pathlib import Path
from typing import TYPE_CHECKING, Any

from balancer.code.demand import demand_to_dict
from balancer.report.peak import peak_json
from balancer.report.safety import CAUTION
from balancer.report.states import states
from balancer.report.text import circuits_to_list, clean, panel_to_dict, title_block_to_dict

if TYPE_CHECKING:
    from balancer.api import BalanceReport, BuildingReport, CheckReport
    from balancer.batch import Row
    from balancer.building.tree import FeederFigures, PanelFigures
    from balancer.domain.result import BalanceResult
    from balancer.errors import BalancerError
    from balancer.physics.analysis import Loads

# Decimals by the unit a key ends in (the terminal's own precision); a key without a unit takes
# its parent's (a line of ``phase_va``), and the top level DEFAULT_DIGITS.
UNIT_DIGITS: tuple[tuple[str, int], ...] = (
    ("_kva", 2),
    ("_kvar", 2),
    ("_kw", 2),
    ("_va", 1),
    ("_pct", 2),
    ("_a", 1),
    ("_v", 1),
    ("_pf", 2),
    ("power_factor", 2),
    ("_hz", 2),
    ("_ft", 1),
    ("_c", 1),
    ("seconds", 2),
)
DEFAULT_DIGITS = 3
# Inputs echoed as given: rounding a tolerance of 0.5 VA to 1 VA would misreport the run.
EXACT_KEYS = frozenset({"tolerance_va", "target_pct", "within_pct"})


def digits_for(key: str, inherited: int | None) -> int | None:
    """Decimals for a value under ``key`` (None: as it is)."""
    if key in EXACT_KEYS:
        return None
    for suffix, digits in UNIT_DIGITS:
        if key.endswith(suffix):
            return digits
    return inherited


def rounded(value: Any, digits: int | None = DEFAULT_DIGITS) -> Any:
    """``value`` with every float rounded by its key's unit; NaN and infinity become None."""
    if isinstance(value, float):
        if not math.isfinite(value):
            return None
        if digits is None:
            return value
        out = round(value, digits)
        return 0.0 if out == 0 else out
    if isinstance(value, Mapping):
        return {str(k): rounded(v, digits_for(str(k), digits)) for k, v in value.items()}
    if isinstance(value, list | tuple):
        return [rounded(v, digits) for v in value]
    return value


def _finish(data: dict[str, Any]) -> dict[str, Any]:
    out: dict[str, Any] = rounded(clean(data))
    return out


def loads_json(loads: Loads) -> dict[str, Any]:
    """One arrangement's figures: the ``loads`` of ``check``, ``before``/``after`` of
    ``balance``. Currents are given both as true RMS (with the circuits' harmonics) and at the
    fundamental, each named for which it is."""
    return {
        "phase_va": dict(loads.phase_va),
        "total_va": loads.total_va,
        "spread_va": loads.spread_va,
        "imbalance_pct": loads.imbalance_pct,
        "line_rms_a": dict(loads.line_amps),
        "line_fundamental_a": dict(loads.line_a),
        "neutral_rms_a": loads.neutral_amps,
        "neutral_fundamental_a": loads.neutral_a,
        "neutral_without_harmonics_a": loads.neutral_without_harmonics_a,
        "neutral_exceeds_phase": loads.neutral_exceeds_phase,
        "unbalance_factor_pct": loads.unbalance_factor_pct,
        "phase_kw": dict(loads.phase_kw),
        "phase_kvar": dict(loads.phase_kvar),
        "phase_pf": dict(loads.phase_pf),
        "unplaced": list(loads.unplaced),
    }


def check_json(report: CheckReport) -> dict[str, Any]:
    """``balancer check --json``."""
    data = {
        "command": "check",
        "panel": panel_to_dict(report.panel),
        "loads": loads_json(report.loads),
        "circuits": circuits_to_list(report.panel),
        "demand": demand_to_dict(report.demand) if report.demand else None,
        "warnings": list(report.warnings),
        "basis": report.field.to_json()["basis"],
        "load_over_time": peak_json(report.peak) if report.peak else None,
    }
    return _finish(data)


def proof_json(result: Any) -> dict[str, Any]:
    """How far the result is proven, in figures (the words are in ``notes``)."""
    return {
        "status": result.status.value,
        "first_goal": result.first_goal,
        "goal_value": result.goal_value,
        "goal_bound": result.goal_bound,
        "goal_proven": result.goal_proven,
        "engine": result.engine,
        "tolerance_va": result.tolerance_va,
        "lower_bound_spread_va": result.lower_bound_spread_va,
        "gap_va": result.gap_va,
        "solve_seconds": result.solve_seconds,
    }


def balance_json(report: BalanceReport) -> dict[str, Any]:
    """``balancer balance --json``: the result, the trade-off and the recommended row, the work
    order, the revised panel's demand and the files written."""
    result = report.result
    workbook = next((p for p in report.written if p.suffix == ".xlsx"), None)
    pdf = next((p for p in report.written if p.suffix == ".pdf"), None)
    data: dict[str, Any] = {
        "command": "balance",
        "panel": panel_to_dict(result.after_panel),
        **proof_json(result),
        "before": loads_json(result.before),
        "after": loads_json(result.after),
        # the panel as it stands plus its new circuits landed with no move (the 0-move row)
        "with_additions": (
            loads_json(result.with_additions) if result.with_additions is not None else None
        ),
        "states": [{"key": s.key, "title": s.title, "detail": s.detail} for s in states(result)],
        "new_circuits": [_new_breaker(result, cid) for cid in result.new_circuits],
        "moves": [
            {
                "id": m.circuit_id,
                "description": m.description,
                "from_spaces": list(m.from_spaces),
                "to_spaces": list(m.to_spaces),
                "from_lines": list(m.from_lines),
                "to_lines": list(m.to_lines),
            }
            for m in result.moves
        ],
        "circuits": circuits_to_list(result.after_panel),
        "notes": list(result.notes),
        "warnings": list(report.warnings),
        "output": _path(workbook),
        "pdf": _path(pdf),
        "demand": demand_to_dict(report.demand) if report.demand else None,
        "load_over_time": peak_json(report.peak) if report.peak else None,
        **report.field.to_json(),
    }
    return _finish(data)


def batch_json(rows: Sequence[Row], mode: str, summary: Path | None) -> dict[str, Any]:
    """``balancer check|balance --json`` over many files: one entry per file, in order."""
    files = []
    for row in rows:
        after = None
        if row.imbalance_after_pct is not None:
            after = {"spread_va": row.spread_after_va, "imbalance_pct": row.imbalance_after_pct}
        demand = None
        if row.demand_va is not None:
            demand = {
                "total_demand_va": row.demand_va,
                "feeder": {
                    "required_a": row.feeder_required_a,
                    "min_ocpd_a": row.min_ocpd_a,
                    "rating_a": row.rating_a,
                    "spare_pct": row.spare_pct,
                },
            }
        before = None
        if row.imbalance_before_pct is not None:
            before = {"spread_va": row.spread_before_va, "imbalance_pct": row.imbalance_before_pct}
        files.append(
            {
                "file": row.file,
                "panel": row.panel,
                "status": row.status,
                "before": before,
                "after": after,
                "move_count": row.moves,
                "demand": demand,
                "output": row.output or None,
                "error": row.error or None,
                "exit_status": row.exit_status,
                "seconds": row.seconds,
            }
        )
    data = {"command": f"{mode} (batch)", "files": files, "summary_workbook": _path(summary)}
    return _finish(data)


def _figures(fig: PanelFigures) -> dict[str, Any]:
    """A building panel's rolled-up figures (connected basis, fundamental currents)."""
    return {
        "phase_va": dict(fig.phase_va),
        "total_va": fig.total_va,
        "spread_va": fig.spread_va,
        "imbalance_pct": fig.imbalance_pct,
        "line_fundamental_a": fig.line_a,
        "neutral_fundamental_a": fig.neutral_a,
    }


def _feeder_figures(fig: FeederFigures) -> dict[str, Any]:
    return {
        "lines": list(fig.lines),
        "phase_va": {line: fig.phase_va[line] for line in fig.lines},
        "line_fundamental_a": fig.line_a,
        "transformer_loading_pct": fig.transformer_loading_pct,
    }


# long: one object per panel, feeder and move, each read straight off the report's fields
def building_json(report: BuildingReport) -> dict[str, Any]:
    """``balancer building --json`` (and with ``--balance``)."""
    from balancer.building.report import summary_lines

    building, before, result = report.building, report.before, report.result
    panels: list[dict[str, Any]] = []
    feeders: list[dict[str, Any]] = []
    for name in reversed(building.order()):
        panel, feed = building.panel(name), building.feed_of(name)
        entry: dict[str, Any] = {
            "panel": name,
            "system": panel.system.designation,
            "title_block": title_block_to_dict(panel.header),
            "fed_from": None
            if feed is None
            else {"panel": feed.source, "circuit": feed.circuit_id},
            "before": _figures(before.panels[name]),
            "after": None,
        }
        if report.demand is not None:
            demand_before, demand_after = report.demand
            entry["demand"] = {
                "total_demand_va": demand_before.panels[name].total_va,
                "phase_demand_va": dict(demand_before.panels[name].phase_va),
                "phase_demand_va_after": None
                if demand_after is None
                else dict(demand_after.panels[name].phase_va),
            }
        if result is not None:
            outcome = result.outcomes[name]
            entry |= {
                "after": _figures(result.after_figures.panels[name]),
                "status": outcome.status.value,
                "first_goal": outcome.first_goal,
                "goal_proven": outcome.goal_proven,
                "move_count": len(outcome.moves),
                "moved": list(outcome.moves),
                "re_landed": list(outcome.swapped_feeds),
                "solve_seconds": outcome.solve_seconds,
                "notes": list(outcome.notes),
            }
        panels.append(entry)
        if feed is not None:
            transformer = None
            if feed.transformer is not None:
                t = feed.transformer
                transformer = {"name": t.name, "kva": t.kva, "connection": t.connection}
            feeders.append(
                {
                    "panel": name,
                    "fed_from": feed.source,
                    "circuit": feed.circuit_id,
                    "transformer": transformer,
                    "before": _feeder_figures(before.feeders[name]),
                    "after": None
                    if result is None
                    else _feeder_figures(result.after_figures.feeders[name]),
                }
            )
    data: dict[str, Any] = {
        "command": "building",
        "building": building.name,
        "balanced": result is not None,
        "panels": panels,
        "feeders": feeders,
        "moves": [] if result is None else _building_moves(report),
        "summary": summary_lines(building, before, result),
        "caution": CAUTION,
        "written": [str(p) for p in report.written],
    }
    return _finish(data)


def _building_moves(report: BuildingReport) -> list[dict[str, Any]]:
    """One entry per breaker that moves and per feeder to re-land, service first."""
    result = report.result
    assert result is not None
    rows: list[dict[str, Any]] = []
    for name in reversed(result.before.order()):
        outcome = result.outcomes[name]
        before, after = result.before.panel(name), result.after.panel(name)
        for circuit_id in outcome.moves:
            old, new = before.circuit(circuit_id), after.circuit(circuit_id)
            rows.append(
                {
                    "panel": name,
                    "action": "move",
                    "id": circuit_id,
                    "description": old.description,
                    "from_spaces": list(old.spaces),
                    "to_spaces": list(new.spaces),
                    "from_lines": list(before.lines_of(old)),
                    "to_lines": list(after.lines_of(new)),
                }
            )
        for fed in outcome.swapped_feeds:
            feed = result.after.feed_of(fed)
            assert feed is not None
            circuit = after.circuit(feed.circuit_id)
            rows.append(
                {
                    "panel": name,
                    "action": "re-land",
                    "id": feed.circuit_id,
                    "description": f"re-land the feeder conductors of {fed}: its line A to the "
                    + ("second" if feed.swapped else "first")
                    + " pole",
                    "from_spaces": list(circuit.spaces),
                    "to_spaces": list(circuit.spaces),
                    "from_lines": list(after.lines_of(circuit)),
                    "to_lines": list(after.lines_of(circuit)),
                }
            )
    return rows


def error_json(exc: BalancerError) -> dict[str, Any]:
    """What ``--json`` prints when a command fails: the message, the exit status and every
    located problem."""
    problems = [{"where": p.where, "what": p.what} for p in getattr(exc, "problems", ())]
    return {"error": str(exc), "exit_status": exc.exit_status, "problems": problems}


def _new_breaker(result: BalanceResult, circuit_id: str) -> dict[str, Any]:
    """A new circuit and where its breaker goes."""
    circuit = result.after_panel.circuit(circuit_id)
    return {
        "id": circuit.id,
        "description": circuit.description,
        "poles": circuit.poles,
        "trip_a": circuit.trip_a,
        "to_spaces": list(circuit.spaces),
        "to_lines": list(result.after_panel.lines_of(circuit)),
    }


def _path(path: Path | None) -> str | None:
    return None if path is None else str(path)

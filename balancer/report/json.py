"""The JSON each command prints, built from the pipeline's reports (nothing is computed here)."""

from __future__ import annotations

from pathlib import Path
from typing import Any

from balancer.api import BalanceReport, CheckReport
from balancer.code.demand import demand_to_dict
from balancer.report.text import circuits_to_list, clean, loads_to_dict, panel_to_dict


def check_json(report: CheckReport) -> dict[str, Any]:
    """``balancer check --json``."""
    data = {
        "panel": panel_to_dict(report.panel),
        "loads": loads_to_dict(report.loads),
        "circuits": circuits_to_list(report.panel),
        "demand": demand_to_dict(report.demand) if report.demand else None,
        "warnings": list(report.warnings),
        "basis": report.field.to_json()["basis"],
    }
    cleaned: dict[str, Any] = clean(data)
    return cleaned


def balance_json(report: BalanceReport) -> dict[str, Any]:
    """``balancer balance --json``: the result, the trade-off and the recommended row, the work
    order, the revised panel's demand and the files written."""
    result = report.result
    workbook = next((p for p in report.written if p.suffix == ".xlsx"), None)
    pdf = next((p for p in report.written if p.suffix == ".pdf"), None)
    data: dict[str, Any] = {
        "panel": panel_to_dict(result.after_panel),
        "status": result.status.value,
        "first_goal": result.first_goal,
        "goal_value": result.goal_value,
        "goal_proven": result.goal_proven,
        "engine": result.engine,
        "tolerance_va": result.tolerance_va,
        "lower_bound_spread_va": result.lower_bound_spread_va,
        "gap_va": result.gap_va,
        "solve_seconds": result.solve_seconds,
        "before": loads_to_dict(result.before),
        "after": loads_to_dict(result.after),
        "moves": [
            {
                "id": m.circuit_id,
                "description": m.description,
                "from": list(m.from_spaces),
                "to": list(m.to_spaces),
                "from_phases": list(m.from_lines),
                "to_phases": list(m.to_lines),
            }
            for m in result.moves
        ],
        "circuits": circuits_to_list(result.after_panel),
        "notes": list(result.notes),
        "warnings": list(report.warnings),
        "output": _path(workbook),
        "demand": demand_to_dict(report.demand) if report.demand else None,
        **report.field.to_json(),
    }
    if pdf is not None:
        data["pdf"] = _path(pdf)
    cleaned: dict[str, Any] = clean(data)
    return cleaned


def _path(path: Path | None) -> str | None:
    return None if path is None else str(path)

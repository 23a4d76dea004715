"""balancer: spread a panelboard's branch circuits across its phases, provably well.

The pipeline, in order: :func:`read_schedule` → :func:`analyze` → :func:`balance` (model, solve,
verify) → the writer. Heavier parts (the optimiser, the writer) load on first use, so
``balancer check`` starts quickly.
"""

from __future__ import annotations

from importlib import import_module
from typing import Any

from balancer.domain.panel import Circuit, Panel
from balancer.domain.systems import System, get_system
from balancer.io.reader import PanelOverrides, read_schedule
from balancer.physics.analysis import Loads, analyze

__version__ = "0.1.0"

_LAZY = {
    "balance": ("balancer.optimize", "balance"),
    "BalanceOptions": ("balancer.domain.result", "BalanceOptions"),
    "BalanceResult": ("balancer.domain.result", "BalanceResult"),
    "write_schedule": ("balancer.io.writer", "write_workbook"),
    "write_pdf": ("balancer.io.pdf", "write_pdf"),
    "read_building": ("balancer.building.files", "read_building"),
    "roll_up": ("balancer.building.tree", "roll_up"),
    "balance_building": ("balancer.building.tree", "balance_building"),
}

__all__ = [
    "BalanceOptions",
    "BalanceResult",
    "Circuit",
    "Loads",
    "Panel",
    "PanelOverrides",
    "System",
    "analyze",
    "balance",
    "balance_building",
    "get_system",
    "read_building",
    "read_schedule",
    "roll_up",
    "write_pdf",
    "write_schedule",
]


def __getattr__(name: str) -> Any:
    if name in _LAZY:
        module, attribute = _LAZY[name]
        return getattr(import_module(module), attribute)
    raise AttributeError(f"module 'balancer' has no attribute {name!r}")

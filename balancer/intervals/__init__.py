"""Loads per time interval, for balancing the peak that really happens: logger files
(:func:`read_logger`) and typical class shapes (:func:`typical_series`) become a
:class:`LoadSeries`.

The readers (and pandas under them) are imported when first asked for: every run imports
:class:`LoadSeries` through the balancing options, few read a logger file.
"""

from __future__ import annotations

from typing import TYPE_CHECKING, Any

from balancer.intervals.series import LoadSeries, column_of, hours_of_day

if TYPE_CHECKING:
    from balancer.intervals.logger import read_logger
    from balancer.intervals.typical import load_shapes, typical_series

__all__ = [
    "LoadSeries",
    "column_of",
    "hours_of_day",
    "load_shapes",
    "read_logger",
    "typical_series",
]

_LAZY = {
    "read_logger": "balancer.intervals.logger",
    "load_shapes": "balancer.intervals.typical",
    "typical_series": "balancer.intervals.typical",
}


def __getattr__(name: str) -> Any:
    if name in _LAZY:
        import importlib

        return getattr(importlib.import_module(_LAZY[name]), name)
    raise AttributeError(f"module {__name__!r} has no attribute {name!r}")

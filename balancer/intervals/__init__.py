"""Loads per time interval, for balancing the peak that really happens: logger files
(:func:`read_logger`) and typical class shapes (:func:`typical_series`) become a
:class:`LoadSeries`."""

from balancer.intervals.logger import read_logger
from balancer.intervals.series import LoadSeries, column_of, hours_of_day
from balancer.intervals.typical import load_shapes, typical_series

__all__ = [
    "LoadSeries",
    "column_of",
    "hours_of_day",
    "load_shapes",
    "read_logger",
    "typical_series",
]

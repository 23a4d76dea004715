"""Loads per time interval: the :class:`LoadSeries` a logger file or the typical class shapes
become, and the small look-ups made on it."""

from __future__ import annotations

from dataclasses import dataclass
from typing import Literal

import numpy as np

SeriesKind = Literal["measured", "typical"]
MAX_INTERVAL_MIN = 60


@dataclass(frozen=True, slots=True, eq=False)
class LoadSeries:
    """Loads per interval: row t is the interval starting at ``starts[t]``.

    ``starts`` are ``datetime64[m]`` wall-clock times, strictly increasing; holes are allowed
    (a long gap in a logger file is left out rather than invented). ``va[:, k]`` is the load of
    circuit ``circuit_ids[k]`` in VA. A file that gives one column per line of the panel instead
    leaves ``va`` with no columns (and ``circuit_ids`` empty) and fills ``line_va``, one column
    per line of the panel in ``panel.lines`` order. ``notices`` say what the reader did that a
    user must know. The arrays are made read-only.
    """

    source: str
    kind: SeriesKind
    starts: np.ndarray
    interval_min: int
    circuit_ids: tuple[str, ...]
    va: np.ndarray
    line_va: np.ndarray | None = None
    notices: tuple[str, ...] = ()

    def __post_init__(self) -> None:
        if self.starts.dtype != np.dtype("datetime64[m]") or self.starts.ndim != 1:
            raise ValueError("starts must be a 1-D datetime64[m] array")
        if self.starts.size > 1 and not bool(np.all(np.diff(self.starts) > np.timedelta64(0))):
            raise ValueError("starts must be strictly increasing")
        steps = np.diff(self.starts).astype(np.int64)
        if not 1 <= self.interval_min <= MAX_INTERVAL_MIN:
            raise ValueError(f"interval_min must be 1 to 60, not {self.interval_min}")
        if bool(np.any(steps % self.interval_min)):
            raise ValueError("starts must lie on the grid of interval_min")
        arrays = [("va", self.va, len(self.circuit_ids))]
        if self.line_va is not None:
            arrays.append(("line_va", self.line_va, self.line_va.shape[-1]))
        for name, values, columns in arrays:
            if values.dtype != np.float64 or values.shape != (self.starts.size, columns):
                raise ValueError(
                    f"{name} must be float64 of shape {(self.starts.size, columns)}, "
                    f"not {values.dtype} {values.shape}"
                )
            if not bool(np.all(np.isfinite(values))) or bool(np.any(values < 0)):
                raise ValueError(f"{name} must be finite and not negative")
            values.setflags(write=False)
        if len(set(self.circuit_ids)) != len(self.circuit_ids):
            raise ValueError("circuit_ids must not repeat")
        self.starts.setflags(write=False)

    @property
    def intervals(self) -> int:
        return int(self.starts.size)


def column_of(series: LoadSeries) -> dict[str, int]:
    """Circuit id → its column in ``series.va``."""
    return {circuit_id: k for k, circuit_id in enumerate(series.circuit_ids)}


def hours_of_day(series: LoadSeries) -> np.ndarray:
    """Hour of the day (0–23) each interval starts in, on the series' own clock.

    Examples
    --------
    >>> starts = np.array(["2026-01-05T00:45", "2026-01-05T13:00"], dtype="datetime64[m]")
    >>> s = LoadSeries("demo", "typical", starts, 15, ("1",), np.zeros((2, 1)))
    >>> hours_of_day(s).tolist()
    [0, 13]
    """
    hours = series.starts.astype("datetime64[h]") - series.starts.astype("datetime64[D]")
    return hours.astype(np.int64)

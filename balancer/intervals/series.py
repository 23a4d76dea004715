"""Loads per time interval, one column per circuit (or per line)."""

from __future__ import annotations

from dataclasses import dataclass
from typing import Literal

import numpy as np


@dataclass(frozen=True, slots=True, eq=False)
class LoadSeries:
    """Loads per interval: row t is the interval starting at starts[t]."""

    source: str
    kind: Literal["measured", "typical"]
    starts: np.ndarray
    interval_min: int
    circuit_ids: tuple[str, ...]
    va: np.ndarray
    line_va: np.ndarray | None = None
    notices: tuple[str, ...] = ()


def column_of(series: LoadSeries) -> dict[str, int]:
    return {cid: k for k, cid in enumerate(series.circuit_ids)}

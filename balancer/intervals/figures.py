"""Figures of an arrangement over a load series: VA per circuit and line in every interval, and
the phase spread of each interval."""

from __future__ import annotations

import math
from collections.abc import Sequence
from typing import Literal

import numpy as np

from balancer.domain.panel import Circuit, Panel
from balancer.errors import SolverError
from balancer.intervals.series import LoadSeries, column_of

__all__ = [
    "PeakMeasure",
    "circuit_loads",
    "interval_figures",
    "line_loads",
    "peak_spread_va",
    "peak_va",
    "share_weights",
    "spreads_va",
]

# What the peak goal keeps low at the worst interval: the phase spread (heaviest minus lightest
# line) or the heaviest line's load.
PeakMeasure = Literal["spread", "line"]


def circuit_loads(panel: Panel, series: LoadSeries) -> np.ndarray:
    """VA of every panel circuit in every interval, shape (intervals, circuits).

    A circuit the series has no column for keeps its connected load flat over the horizon
    (the reader says which); spares carry nothing.
    """
    if series.line_va is not None and not series.circuit_ids:
        raise SolverError(
            "the load series gives per-line readings only: they show the panel as it stands but "
            "not which circuit draws what, so they cannot choose an arrangement; give one column "
            "per circuit, or use typical load shapes"
        )
    columns = column_of(series)
    out = np.empty((len(series.starts), len(panel.circuits)), dtype=np.float64)
    for i, circuit in enumerate(panel.circuits):
        k = columns.get(circuit.id)
        if k is not None:
            out[:, i] = series.va[:, k]
        else:
            out[:, i] = 0.0 if circuit.is_spare else circuit.basis_va
    return out


def share_weights(panel: Panel, circuit: Circuit, lines: Sequence[str]) -> np.ndarray:
    """The share of a circuit's load each line carries (1/poles per pole on it)."""
    row = np.zeros(len(panel.lines))
    for line in lines:
        row[panel.lines.index(line)] += 1.0 / circuit.poles
    return row


def _incidence(panel: Panel) -> np.ndarray:
    """Shares per circuit and line for the panel as placed, shape (circuits, lines)."""
    out = np.zeros((len(panel.circuits), len(panel.lines)))
    for i, circuit in enumerate(panel.circuits):
        if circuit.placed:
            out[i] = share_weights(panel, circuit, panel.lines_of(circuit))
    return out


def line_loads(panel: Panel, series: LoadSeries) -> np.ndarray:
    """VA on each line in each interval for the panel as placed, shape (intervals, lines)."""
    result: np.ndarray = circuit_loads(panel, series) @ _incidence(panel)
    return result


def spreads_va(per_line_va: np.ndarray) -> np.ndarray:
    """Phase spread (heaviest minus lightest line) of each interval."""
    result: np.ndarray = per_line_va.max(axis=1) - per_line_va.min(axis=1)
    return result


def interval_figures(per_line_va: np.ndarray, measure: PeakMeasure) -> np.ndarray:
    """Each interval's figure (the last axis is the lines): its spread or its heaviest line."""
    high = per_line_va.max(axis=-1)
    result: np.ndarray = high - per_line_va.min(axis=-1) if measure == "spread" else high
    return result


def peak_va(panel: Panel, series: LoadSeries, measure: PeakMeasure = "spread") -> float:
    """The worst interval's figure over the horizon for the panel as placed."""
    if len(series.starts) == 0:
        return math.nan
    return float(interval_figures(line_loads(panel, series), measure).max())


def peak_spread_va(panel: Panel, series: LoadSeries) -> float:
    """The widest phase spread over the horizon for the panel as placed."""
    return peak_va(panel, series, "spread")

"""Builders for the interval tests: an invented 208Y/120 panel (demo data) and small logger CSV
files written to a temporary folder."""

from __future__ import annotations

from collections.abc import Sequence
from pathlib import Path

import numpy as np
import pandas as pd

from balancer.domain.panel import Circuit, Panel
from balancer.domain.systems import get_system


def logger_panel(system: str = "208Y/120") -> Panel:
    """Demo panel: a 1-pole lighting circuit on A, a 2-pole on A-B, a 3-pole on B-C-A, a spare,
    and a 1-pole receptacle circuit at power factor 0.8 on C."""
    return Panel(
        "LG1",
        get_system(system),
        12,
        (
            Circuit("1", "demo lights", 1, 1200.0, (1,), load_class="lighting"),
            Circuit("2", "demo 208 V heater", 2, 2500.0, (2, 4), load_class="heating"),
            Circuit("3", "demo rooftop unit", 3, 9000.0, (3, 5, 7), load_class="ac"),
            Circuit("9", "SPARE", 1, 0.0, (9,), load_class="spare"),
            Circuit("11", "demo receptacles", 1, 900.0, (11,), load_class="rcpt", power_factor=0.8),
        ),
    )


def stamps(start: str, count: int, step_min: int = 15) -> list[str]:
    """``count`` naive ISO timestamps ``step_min`` minutes apart."""
    times = pd.date_range(start, periods=count, freq=f"{step_min}min")
    return list(times.strftime("%Y-%m-%d %H:%M"))


def write_logger(
    path: Path, header: Sequence[str], times: Sequence[str], values: Sequence[Sequence[object]]
) -> Path:
    """A logger CSV: ``header`` then one row per time, ``values[i]`` after ``times[i]``."""
    lines = [",".join(header)]
    lines += [",".join([t, *(str(v) for v in row)]) for t, row in zip(times, values, strict=True)]
    path.write_text("\n".join(lines) + "\n", encoding="utf-8")
    return path


def constant_rows(count: int, *row: object) -> list[tuple[object, ...]]:
    return [tuple(row)] * count


def ramp(count: int) -> np.ndarray:
    """0, 1, 2, … as readings that show where each one went."""
    return np.arange(count, dtype=np.float64)

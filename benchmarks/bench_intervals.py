"""Benchmark: reading a year of logger readings with balancer.intervals.read_logger.

The file is invented (seeded random currents, demo data): a 42-circuit 208Y/120 V panel of
1-pole circuits, one column per circuit in amperes, 15-minute readings for the 365 days from
2026-01-01 (35,040 rows × 43 columns). A second case gives the stamps with UTC offsets across
both 2026 daylight-saving changes of America/Chicago, and a third names the zone instead.
Each case is read ``--repeat`` times in this process; the table gives the median.

Run:  python benchmarks/bench_intervals.py [--repeat 7]
"""

from __future__ import annotations

import argparse
import statistics
import sys
import tempfile
import time
from pathlib import Path

import numpy as np
import pandas as pd

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))

from balancer.domain.panel import Circuit, Panel
from balancer.domain.systems import get_system
from balancer.intervals import read_logger

CIRCUITS = 42
ROWS = 365 * 96


def demo_panel() -> Panel:
    circuits = tuple(
        Circuit(str(s), f"demo load {s}", 1, 1000.0, (s,)) for s in range(1, CIRCUITS + 1)
    )
    return Panel("BENCH", get_system("208Y/120"), CIRCUITS, circuits)


def write_year(path: Path, stamps: list[str]) -> Path:
    rng = np.random.default_rng(1)
    frame = pd.DataFrame(
        rng.uniform(0, 20, (len(stamps), CIRCUITS)).round(2),
        columns=[f"{s} (A)" for s in range(1, CIRCUITS + 1)],
    )
    frame.insert(0, "Time", stamps)
    frame.to_csv(path, index=False)
    return path


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--repeat", type=int, default=7)
    args = parser.parse_args()
    utc = pd.date_range("2026-01-01 06:00", periods=ROWS, freq="15min", tz="UTC")
    local = utc.tz_convert("America/Chicago")
    cases = {
        "naive stamps": (list(utc.tz_localize(None).strftime("%Y-%m-%d %H:%M")), None),
        "UTC offsets": (list(local.strftime("%Y-%m-%dT%H:%M:%S%z")), None),
        "zone America/Chicago": (list(local.strftime("%Y-%m-%d %H:%M")), "America/Chicago"),
    }
    panel = demo_panel()
    print("| stamps | rows × columns | MB | median s | runs |\n|---|---|---|---|---|")
    with tempfile.TemporaryDirectory() as folder:
        for name, (stamps, tz) in cases.items():
            path = write_year(Path(folder) / "year.csv", stamps)
            times = []
            for _ in range(args.repeat):
                start = time.perf_counter()
                series = read_logger(path, panel, tz=tz)
                times.append(time.perf_counter() - start)
            assert series.va.shape == (ROWS, CIRCUITS)
            size = path.stat().st_size / 1e6
            print(
                f"| {name} | {ROWS:,} × {CIRCUITS + 1} | {size:.1f} | "
                f"{statistics.median(times):.2f} | {args.repeat} |"
            )


if __name__ == "__main__":
    main()

"""Benchmark of peak balancing: a year of 15-minute logger readings for a 42-space panel.

DEMO DATA: the panel and the readings are invented (seeded; daily shapes of our own per load
class with 8 % noise). Writes them to a temporary folder, then measures

* reading the logger file alone (in-process, median of the runs);
* reading and balancing, in-process: ``api.run_balance`` with the logger, no trade-off table,
  a 6 s time limit (reading both files, the load over time, solving, checking; nothing
  written), median of the runs;
* the whole command ``balancer balance SCHEDULE --profile CSV --json --no-tradeoff
  --time-limit 6`` in a new process (start-up, reading both files, solving, checking, writing
  the workbook with its "Intervals" sheet), median of the runs;

and compares the peak-interval spread with the panel as it stands and with the arrangement a
connected-VA balance chooses. Run ``python benchmarks/bench_peak.py [--repeat N]``; it prints a
Markdown table for benchmarks/README.md.
"""

from __future__ import annotations

import argparse
import csv
import json
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import numpy as np
from openpyxl import Workbook

DAYS = 365
STEP_MIN = 15
SEED = 7
CLASSES = ("lighting", "receptacle", "air conditioning", "heating", "ev", "kitchen")
SIZES = (720, 900, 1200, 1440, 1500, 1800, 2400)


def _shape(kind: str, hour: np.ndarray, weekday: np.ndarray) -> np.ndarray:
    open_hours = np.where(weekday, (hour >= 7) & (hour < 19), (hour >= 9) & (hour < 16))
    if kind == "lighting":
        return np.where(open_hours, 0.9, 0.1)
    if kind == "receptacle":
        return np.where(open_hours, 0.6, 0.15)
    if kind == "air conditioning":
        return np.clip(np.sin((hour - 8) / 14 * np.pi), 0.05, 1.0) * 0.9
    if kind == "heating":
        return np.where((hour >= 3) & (hour < 8), 0.85, 0.1)
    if kind == "ev":
        return np.where((hour >= 21) | (hour < 5), 0.9, 0.05)
    meal = ((hour >= 11) & (hour < 14)) | ((hour >= 17) & (hour < 20))
    return np.where(meal & open_hours, 0.8, 0.1)


def write_files(folder: Path) -> tuple[Path, Path]:
    """A 42-space 208Y/120 V panel (36 one-pole and 3 two-pole circuits) and its year of
    readings; both invented."""
    rng = np.random.default_rng(SEED)
    rows = []
    for i in range(39):
        poles = 2 if i >= 36 else 1
        kind = CLASSES[i % len(CLASSES)]
        load = int(rng.choice(SIZES)) * poles
        rows.append((f"Demo load {i + 1}", kind, poles, 20 if poles == 1 else 30, load))
    # fill the two sides in order: odd spaces down the left, then even down the right
    placed = []
    left, right = 1, 2
    for name, kind, poles, trip, load in rows:
        if left + 2 * (poles - 1) <= 41:
            placed.append((left, name, kind, poles, trip, load))
            left += 2 * poles
        else:
            placed.append((right, name, kind, poles, trip, load))
            right += 2 * poles
    schedule = folder / "bench-42-year.xlsx"
    book = Workbook()
    sheet = book.active
    assert sheet is not None
    sheet.title = "Circuits"
    sheet.append(["Benchmark panel (demo data)"])
    sheet.append(["Ckt", "Load Description", "Type", "Poles", "Trip (A)", "Load (VA)"])
    for row in placed:
        sheet.append(list(row))
    info = book.create_sheet("Panel")
    for key, value in {"Name": "BENCH", "System": "208Y/120", "Spaces": 42}.items():
        info.append([key, value])
    book.save(schedule)
    count = DAYS * 24 * 60 // STEP_MIN
    minutes = np.arange(count) * STEP_MIN
    hour = (minutes // 60) % 24 + (minutes % 60) / 60
    weekday = ((minutes // (24 * 60)) % 7) < 5
    stamps = (np.datetime64("2026-01-05T00:00") + minutes.astype("timedelta64[m]")).astype(str)
    columns = []
    for _, _, kind, poles, _, load in placed:
        va = load * _shape(kind, hour, weekday) * np.clip(rng.normal(1, 0.08, count), 0.6, 1.4)
        columns.append(va / (120.0 if poles == 1 else 208.0))
    logger = folder / "bench-42-year-logger.csv"
    with logger.open("w", newline="") as handle:
        out = csv.writer(handle)
        out.writerow(["Time", *[f"{row[0]} (A)" for row in placed]])
        data = np.column_stack(columns).round(2)
        for stamp, values in zip(stamps, data.tolist(), strict=True):
            out.writerow([stamp.replace("T", " "), *values])
    return schedule, logger


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__)
    parser.add_argument("--repeat", type=int, default=3)
    args = parser.parse_args()
    from balancer.intervals.figures import peak_spread_va
    from balancer.intervals.logger import read_logger
    from balancer.io.reader import read_schedule
    from balancer.optimize.engine import balance

    with tempfile.TemporaryDirectory() as name:
        folder = Path(name)
        schedule, logger = write_files(folder)
        panel = read_schedule(schedule)
        reads = []
        for _ in range(args.repeat):
            begin = time.perf_counter()
            series = read_logger(logger, panel)
            reads.append(time.perf_counter() - begin)
        from balancer.api import FieldChoices, LoadOverTime, run_balance
        from balancer.domain.result import BalanceOptions

        solved = []
        for _ in range(args.repeat):
            begin = time.perf_counter()
            run_balance(
                schedule,
                BalanceOptions(time_limit_s=6.0),
                choices=FieldChoices(tradeoff=False),
                over_time=LoadOverTime(logger=logger),
            )
            solved.append(time.perf_counter() - begin)
        runs, last = [], {}
        for k in range(args.repeat):
            out = folder / f"out-{k}.xlsx"
            command = [sys.executable, "-m", "balancer", "balance", str(schedule)]
            command += ["--profile", str(logger), "--json", "--no-tradeoff", "--time-limit", "6"]
            command += ["-o", str(out)]
            begin = time.perf_counter()
            done = subprocess.run(command, capture_output=True, text=True, check=True)
            runs.append(time.perf_counter() - begin)
            last = json.loads(done.stdout)
        connected = balance(panel)
        print(
            "| rows | circuits | read logger s | read + balance s (target < 10) "
            "| whole command s | runs |"
        )
        print("|---|---|---|---|---|---|")
        print(
            f"| {len(series.starts):,} | {len(panel.circuits)} | {statistics.median(reads):.2f} | "
            f"{statistics.median(solved):.2f} | {statistics.median(runs):.2f} | {args.repeat} |"
        )
        print()
        print("| arrangement | peak-interval spread VA | connected spread VA | status |")
        print("|---|---|---|---|")
        print(
            f"| as it stands | {peak_spread_va(panel, series):,.0f} | "
            f"{connected.before.spread_va:,.0f} | - |"
        )
        print(
            f"| connected-VA balance (default goal) | "
            f"{peak_spread_va(connected.after_panel, series):,.0f} | "
            f"{connected.after.spread_va:,.0f} | {connected.status.value} |"
        )
        bound = last["goal_bound"]
        print(
            f"| peak balance (`--profile`, 6 s limit) | {last['goal_value']:,.0f} | "
            f"{last['after']['spread_va']:,.0f} | {last['status']} (bound {bound:,.0f} VA, "
            f"tolerance {last['tolerance_va']:,.0f} VA) |"
        )


if __name__ == "__main__":
    main()

"""Write the load-over-time sample: a panel schedule and a month of 15-minute logger readings.
DEMO DATA: the workshop, its panel, every load and every reading are invented.

Run ``python sample_schedules/make_logger_sample.py`` to regenerate
``bike-workshop-cafe-208y120.xlsx`` beside this script and ``loggers/bike-workshop-cafe-logger.csv``.
The readings are drawn from daily shapes of our own with a fixed random seed, so the files are
the same on every run. The month runs across the end of daylight saving time (2026-11-01 in
the United States), and the time stamps carry their UTC offset.
"""

from __future__ import annotations

import csv
import datetime as dt
import os
import tempfile
from pathlib import Path

import numpy as np
from openpyxl import Workbook
from openpyxl.styles import Font

HERE = Path(__file__).resolve().parent
SCHEDULE = "bike-workshop-cafe-208y120.xlsx"
LOGGER = "loggers/bike-workshop-cafe-logger.csv"
DEMO = "DEMO DATA - invented for balancer's samples; not a real building or real readings."
TITLE = "Quayside Bike Workshop and Cafe - Panel LP-1 (demo data)"
HEADER = ["Ckt", "Load Description", "Type", "Poles", "Trip (A)", "Load (VA)", "Wire", "Notes"]

# Space, description, class, poles, trip, connected VA. As found, the daytime loads crowd
# line A and the overnight chargers and heaters lines B and C: the connected sums look fair,
# the afternoon does not.
ROWS: list[tuple[int, str, str, int, int, int]] = [
    (1, "Workshop lighting", "lighting", 1, 20, 1200),
    (2, "Cafe lighting", "lighting", 1, 20, 900),
    (3, "Van charger", "ev", 2, 40, 5760),
    (4, "Storeroom heater", "heating", 2, 20, 3000),
    (7, "Espresso machine", "kitchen", 1, 20, 1800),
    (8, "Workbench receptacles", "receptacle", 1, 20, 1440),
    (9, "Rooftop unit RTU-1", "air conditioning", 3, 30, 6000),
    (10, "Display refrigerator", "other", 1, 20, 720),
    (12, "E-bike charging rack", "other", 1, 20, 1440),
    (17, "Cafe counter receptacles", "receptacle", 1, 20, 1080),
    (14, "Panini grill", "kitchen", 1, 20, 1800),
    (15, "Wheel truing station", "receptacle", 1, 20, 900),
    (16, "Water heater", "water heater", 2, 30, 4500),
    (19, "Compressor", "motor", 1, 20, 1200),
    (20, "Sign and window lighting", "lighting", 1, 20, 480),
    (21, "Washdown pump", "motor", 1, 20, 960),
    (22, "Cafe seating receptacles", "receptacle", 1, 20, 720),
    (23, "Battery storage cabinet charger", "other", 1, 20, 1200),
    (24, "Office receptacles", "receptacle", 1, 20, 540),
]
SPACES = 30
VOLTS_1P, VOLTS_2P = 120.0, 208.0
KW_CIRCUITS = {9}  # the rooftop unit has a power meter (kW); the rest are clamp loggers (A)

START = dt.datetime(2026, 10, 12, 0, 0)  # a Monday, local wall-clock time
DAYS = 31
STEP_MIN = 15
ZONE_OFFSETS = (-5, -6)  # Central daylight time, then Central standard time
FALL_BACK = dt.datetime(2026, 11, 1, 2, 0)  # clocks go back at 02:00 CDT (common practice)
SEED = 20261203


def _shape(kind: str, hour: float, weekday: bool) -> float:
    """Our own daily shape per class: the share of the connected load at this hour."""
    open_hours = 7 <= hour < 19 if weekday else 9 <= hour < 16
    if kind == "lighting":
        return 0.95 if open_hours else 0.08
    if kind == "receptacle":
        return 0.6 if open_hours else 0.1
    if kind == "kitchen":
        meal = 7 <= hour < 10 or 11.5 <= hour < 14
        return (0.85 if meal else 0.25) if open_hours else 0.0
    if kind == "air conditioning":  # cooling in the early afternoon
        return max(0.1, 0.9 * np.sin((hour - 8) / 14 * np.pi)) if 8 <= hour < 22 else 0.1
    if kind == "ev":  # the van and the batteries charge overnight, the rack by day
        return 0.9 if hour >= 21 or hour < 5 else 0.05
    if kind == "heating":
        return 0.9 if 3 <= hour < 8 else 0.15
    if kind == "water heater":
        return 0.8 if 5 <= hour < 7 or 17 <= hour < 19 else 0.05
    if kind == "motor":
        return 0.5 if open_hours else 0.0
    return 0.55  # refrigerator: cycles all day


def _kinds() -> dict[int, str]:
    kinds = {space: kind for space, _, kind, *_ in ROWS}
    kinds[12] = "daytime ev"
    kinds[23] = "ev"
    return kinds


def _readings() -> tuple[list[str], np.ndarray]:
    """Time stamps (ISO 8601 with offset) and VA per circuit for every interval."""
    rng = np.random.default_rng(SEED)
    count = DAYS * 24 * 60 // STEP_MIN
    kinds = _kinds()
    stamps: list[str] = []
    va = np.zeros((count, len(ROWS)))
    utc_start = START - dt.timedelta(hours=ZONE_OFFSETS[0])
    for t in range(count):
        utc = utc_start + dt.timedelta(minutes=STEP_MIN * t)
        offset = ZONE_OFFSETS[0] if utc < FALL_BACK - dt.timedelta(hours=ZONE_OFFSETS[0]) else (
            ZONE_OFFSETS[1]
        )
        local = utc + dt.timedelta(hours=offset)
        stamps.append(local.isoformat(timespec="minutes") + f"{offset:+03d}:00")
        hour = local.hour + local.minute / 60
        weekday = local.weekday() < 5
        for k, (_, _, kind, _, _, load) in enumerate(ROWS):
            kind = kinds[ROWS[k][0]]
            share = (
                (0.7 if 9 <= hour < 17 else 0.05)
                if kind == "daytime ev"
                else _shape(kind, hour, weekday)
            )
            va[t, k] = load * share
    noise = np.clip(rng.normal(1.0, 0.08, va.shape), 0.6, 1.4)
    return stamps, va * noise


def _write_atomic(path: Path, write: object) -> None:
    fd, tmp = tempfile.mkstemp(dir=path.parent, prefix=f".{path.name}.", suffix=path.suffix)
    os.close(fd)
    try:
        write(Path(tmp))  # type: ignore[operator]
        os.replace(tmp, path)
    finally:
        if os.path.exists(tmp):
            os.unlink(tmp)


def _schedule(path: Path) -> None:
    book = Workbook()
    sheet = book.active
    assert sheet is not None
    sheet.title = "Circuits"
    sheet.append([TITLE])
    sheet["A1"].font = Font(bold=True, size=13)
    sheet.append([DEMO])
    sheet.append([])
    sheet.append(HEADER)
    for cell in sheet[4]:
        cell.font = Font(bold=True)
    for space, name, kind, poles, trip, load in ROWS:
        wire = {20: "12 AWG Cu", 30: "10 AWG Cu", 40: "8 AWG Cu"}[trip]
        sheet.append([space, name, kind, poles, trip, load, wire, None])
    for column, width in zip("ABCDEFGH", (6, 32, 14, 6, 8, 10, 12, 20), strict=True):
        sheet.column_dimensions[column].width = width
    info = book.create_sheet("Panel")
    for key, value in {
        "Name": "LP-1",
        "System": "208Y/120",
        "Spaces": SPACES,
        "Bus": 125,
        "Main": 100,
        "Location": "Workshop rear wall, beside the roller door",
        "Fed from": "Utility meter MC-1",
        "Feeder": "4 #3 AWG Cu + #8 AWG Cu ground, 1-1/4 in EMT",
        "Mounting": "surface",
        "Enclosure": "NEMA 1",
        "SCCR (kA)": 10,
        "Neutral bus": "100 %",
        "Ground bus": "yes",
        "Project": "Quayside workshop: load study before the cafe extension (demo)",
        "Date": "2026-11-16",
        "Revision": "1",
        "Note": DEMO,
    }.items():
        info.append([key, value])
    info.column_dimensions["A"].width = 16
    info.column_dimensions["B"].width = 60
    book.save(path)


def _logger(path: Path) -> None:
    stamps, va = _readings()
    header = ["Time"]
    for space, _, _, poles, _, _ in ROWS:
        header.append(f"{space} (kW)" if space in KW_CIRCUITS else f"{space} (A)")
    with path.open("w", newline="", encoding="utf-8") as handle:
        out = csv.writer(handle)
        out.writerow(header)
        for stamp, row in zip(stamps, va, strict=True):
            cells: list[str] = [stamp]
            for (space, _, _, poles, _, _), value in zip(ROWS, row, strict=True):
                if space in KW_CIRCUITS:
                    cells.append(f"{value / 1000:.3f}")  # unity power factor: kW = kVA
                else:
                    volts = VOLTS_1P if poles == 1 else VOLTS_2P
                    # one clamp: VA = A × V (a 3-pole circuit would be A × √3 × V)
                    cells.append(f"{value / volts:.2f}")
            out.writerow(cells)


def main() -> None:
    _write_atomic(HERE / SCHEDULE, _schedule)
    _write_atomic(HERE / LOGGER, _logger)


if __name__ == "__main__":
    main()

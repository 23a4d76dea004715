"""Write the sample building workbook. DEMO DATA: the building, its panels and loads are invented.

Kestrel Row community centre (an imagined site): a 480Y/277 V main distribution panel feeding a
480 V mechanical panel, a 45 kVA delta-wye transformer to a 208Y/120 V lighting and receptacle
panel (which feeds an upstairs panel), a 25 kVA single-phase transformer to a 120/240 V
kitchen annex panel, and a 30 kVA delta-delta transformer to a 240/120 V high-leg workshop
panel. Run ``python sample_schedules/building-demo/make_building_demo.py`` to
regenerate ``building-demo.xlsx`` beside this script.
"""

from __future__ import annotations

import os
import tempfile
from pathlib import Path

from openpyxl import Workbook
from openpyxl.styles import Font

HERE = Path(__file__).resolve().parent
DEMO = "DEMO DATA - invented for balancer's samples; not a real building."
HEADER = ["Ckt", "Load Description", "Type", "Poles", "Trip (A)", "Load (VA)", "PF"]

# panel name → (system, spaces, rows of Ckt, description, type, poles, trip, VA, PF)
PANELS: dict[str, tuple[str, int, list[list[object]]]] = {
    "MDP": (
        "480Y/277",
        42,
        [
            [1, "Feeder to H1 (mechanical)", "feeder", 3, 100, 0, None],
            [2, "Feeder to T1 45 kVA", "feeder", 3, 70, 0, None],
            [7, "Feeder to T2 25 kVA", "feeder", 2, 60, 0, None],
            [8, "Parking lot lighting", "lighting", 1, 20, 3600, None],
            [14, "Hall lighting", "lighting", 1, 20, 4200, None],
            [10, "Gym lighting", "lighting", 1, 20, 2900, None],
            [11, "Stair lighting", "lighting", 1, 20, 800, None],
            [12, "Exterior signage", "lighting", 1, 20, 1500, None],
            [13, "Rooftop unit RTU-1", "motor", 3, 40, 18000, 0.85],
            [19, "Feeder to T3 30 kVA", "feeder", 3, 45, 0, None],
        ],
    ),
    "H1": (
        "480Y/277",
        30,
        [
            [1, "Air handler AHU-1", "motor", 3, 30, 14000, 0.85],
            [2, "Water heater WH-1", "heating", 2, 30, 9000, None],
            [7, "Exhaust fan EF-1", "motor", 1, 20, 1100, 0.8],
            [8, "Exhaust fan EF-2", "motor", 1, 20, 900, 0.8],
            [9, "Boiler controls", "other", 1, 20, 600, None],
        ],
    ),
    "L1": (
        "208Y/120",
        42,
        [
            [1, "Feeder to L2 (upstairs)", "feeder", 3, 60, 0, None],
            [2, "Reception receptacles", "receptacle", 1, 20, 1440, None],
            [4, "Office receptacles", "receptacle", 1, 20, 1620, None],
            [6, "Meeting room receptacles", "receptacle", 1, 20, 1080, None],
            [7, "Copier", "receptacle", 1, 20, 1500, None],
            [8, "Server closet", "receptacle", 1, 20, 1800, None],
            [9, "Lobby lighting", "lighting", 1, 20, 900, None],
            [10, "Corridor lighting", "lighting", 1, 20, 700, None],
            [11, "Vending machines", "receptacle", 1, 20, 1600, None],
            [12, "Water cooler", "receptacle", 1, 20, 600, None],
            [13, "Hand dryers", "other", 2, 30, 3600, None],
        ],
    ),
    "L2": (
        "208Y/120",
        30,
        [
            [1, "Classroom 201 receptacles", "receptacle", 1, 20, 1260, None],
            [2, "Classroom 202 receptacles", "receptacle", 1, 20, 1440, None],
            [3, "Classroom lighting", "lighting", 1, 20, 1100, None],
            [4, "Craft room kiln", "other", 2, 30, 4800, None],
            [5, "Library receptacles", "receptacle", 1, 20, 900, None],
            [8, "Corridor lighting", "lighting", 1, 20, 650, None],
        ],
    ),
    # 240/120 V high-leg delta: B is the high leg, so 1-pole loads sit on A or C only
    "W1": (
        "240/120",
        30,
        [
            [1, "Air compressor", "motor", 3, 30, 7500, 0.85],
            [2, "Workbench receptacles", "receptacle", 1, 20, 1440, None],
            [6, "Tool room receptacles", "receptacle", 1, 20, 1080, None],
            [7, "Welding receptacle (240 V)", "other", 2, 50, 9600, None],
            [8, "Shop lighting", "lighting", 1, 20, 1200, None],
            [11, "Bench grinder", "motor", 1, 20, 1200, 0.8],
            [12, "Overhead door opener", "motor", 1, 20, 600, 0.8],
            [14, "Battery chargers (240 V)", "other", 2, 20, 2000, None],
        ],
    ),
    "K1": (
        "120/240",
        24,
        [
            [1, "Range", "cooking", 2, 50, 8000, None],
            [2, "Dishwasher", "kitchen", 1, 20, 1500, None],
            [4, "Refrigerator", "kitchen", 1, 20, 800, None],
            [5, "Counter receptacles", "receptacle", 1, 20, 1800, None],
            [6, "Microwave", "kitchen", 1, 20, 1500, None],
            [7, "Kitchen lighting", "lighting", 1, 15, 400, None],
        ],
    ),
}

# Each panel's title block (invented): location, fed from, feeder, mounting, enclosure, SCCR,
# neutral bus, ground bus. "Fed from" names the source without its circuit number, which the
# Building sheet gives (and a revised building may change).
TITLE_BLOCKS: dict[str, tuple[str, str, str, str, str, str, str, str]] = {
    "MDP": (
        "Main electrical room 101",
        "Utility transformer, pad-mounted",
        "4 sets 4 #500 kcmil Cu + #3/0 AWG Cu ground, 4 in PVC",
        "surface",
        "NEMA 1",
        "65 kA",
        "100 %",
        "yes",
    ),
    "H1": (
        "Mechanical room 104",
        "MDP",
        "4 #3 AWG Cu + #8 AWG Cu ground, 1-1/4 in EMT",
        "surface",
        "NEMA 1",
        "35 kA",
        "100 %",
        "yes",
    ),
    "L1": (
        "Main electrical room 101",
        "MDP through transformer T1, 45 kVA",
        "4 #1/0 AWG Cu + #6 AWG Cu ground, 2 in EMT",
        "surface",
        "NEMA 1",
        "10 kA",
        "200 %",
        "yes",
    ),
    "L2": (
        "Upstairs corridor, closet 204",
        "L1",
        "4 #4 AWG Cu + #10 AWG Cu ground, 1-1/4 in EMT",
        "flush",
        "NEMA 1",
        "10 kA",
        "100 %",
        "yes",
    ),
    "K1": (
        "Kitchen annex, back wall",
        "MDP through transformer T2, 25 kVA",
        "3 #2 AWG Cu + #8 AWG Cu ground, 1-1/4 in EMT",
        "flush",
        "NEMA 1",
        "10 kA",
        "100 %",
        "yes",
    ),
    "W1": (
        "Workshop, east wall",
        "MDP through transformer T3, 30 kVA delta-delta",
        "4 #3 AWG Cu + #8 AWG Cu ground, 1-1/4 in EMT",
        "surface",
        "NEMA 12",
        "10 kA",
        "100 %",
        "yes",
    ),
}
# bus rating (A) of each panel, and the service panel's main breaker (invented)
BUS_A = {"MDP": 400, "H1": 100, "L1": 225, "L2": 100, "K1": 125, "W1": 125}
MAIN_A = {"MDP": 400}
PROJECT = ("Kestrel Row community centre electrical survey (demo)", "2026-11-30", "1")

# panel, schedule sheet, fed from, feeder circuit, transformer, kVA, connection
INDEX = [
    ["MDP", "MDP", None, None, None, None, None],
    ["H1", "H1", "MDP", 1, None, None, None],
    ["L1", "L1", "MDP", 2, "T1", 45, "delta-wye"],
    ["L2", "L2", "L1", 1, None, None, None],
    ["K1", "K1", "MDP", 7, "T2", 25, "single-phase"],
    ["W1", "W1", "MDP", 19, "T3", 30, "delta-delta"],
]


def build_workbook() -> Workbook:
    book = Workbook()
    index = book.active
    index.title = "Building"
    index.append(["Kestrel Row community centre"])
    index.append([DEMO])
    index.append(
        ["Panel", "Schedule", "Fed from", "Feeder circuit", "Transformer", "kVA", "Connection"]
    )
    for cell in index[3]:
        cell.font = Font(bold=True)
    for row in INDEX:
        index.append(row)
    for name, (system, spaces, rows) in PANELS.items():
        sheet = book.create_sheet(name)
        sheet.append(["Panel", name])
        sheet.append(["System", system])
        sheet.append(["Spaces", spaces])
        sheet.append(["Bus", BUS_A[name]])
        if name in MAIN_A:
            sheet.append(["Main", MAIN_A[name]])
        labels = ("Location", "Fed from", "Feeder", "Mounting", "Enclosure", "SCCR", "Neutral bus")
        for label, value in zip((*labels, "Ground bus"), TITLE_BLOCKS[name], strict=True):
            sheet.append([label, value])
        for label, value in zip(("Project", "Date", "Revision"), PROJECT, strict=True):
            sheet.append([label, value])
        sheet.append([DEMO])
        sheet.append(HEADER)
        for cell in sheet[sheet.max_row]:
            cell.font = Font(bold=True)
        for row in rows:
            sheet.append(row)
    return book


def main() -> None:
    target = HERE / "building-demo.xlsx"
    handle, temp = tempfile.mkstemp(dir=HERE, suffix=".xlsx")
    os.close(handle)
    try:
        build_workbook().save(temp)
        os.replace(temp, target)
    finally:
        if os.path.exists(temp):
            os.unlink(temp)
    print(f"wrote {target} (demo data)")


if __name__ == "__main__":
    main()

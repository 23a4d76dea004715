"""Write the bundled sample schedules. DEMO DATA: every panel, site and load here is invented.

Run ``python sample_schedules/make_samples.py`` to regenerate the files beside this script.
"""

from __future__ import annotations

import csv
from pathlib import Path

from openpyxl import Workbook
from openpyxl.styles import Font

HERE = Path(__file__).resolve().parent
DEMO = "DEMO DATA - invented for balancer's samples; not a real building."
HEADER = ["Ckt", "Load Description", "Type", "Poles", "Trip (A)", "Load (VA)", "PF", "Locked",
          "MWBC", "Wire", "Room", "Notes"]


def _write_xlsx(path: Path, title: str, panel: dict[str, object], rows: list[list[object]]) -> None:
    book = Workbook()
    sheet = book.active
    sheet.title = "Circuits"
    sheet.append([title])
    sheet["A1"].font = Font(bold=True, size=13)
    sheet.append([DEMO])
    sheet.append([])
    sheet.append(HEADER)
    for cell in sheet[4]:
        cell.font = Font(bold=True)
    for row in rows:
        sheet.append(row)
    total = sum(float(r[5] or 0) for r in rows)
    sheet.append([None, "TOTAL CONNECTED", None, None, None, total])
    for column, width in zip("ABCDEFGHIJKL", (6, 30, 12, 6, 8, 10, 6, 8, 7, 14, 14, 30), strict=True):
        sheet.column_dimensions[column].width = width
    info = book.create_sheet("Panel")
    for key, value in panel.items():
        info.append([key, value])
    info.append(["Note", DEMO])
    info.column_dimensions["A"].width = 12
    info.column_dimensions["B"].width = 40
    book.save(path)


# Harbourview Offices, level 3: a 208Y/120 V lighting and appliance panel after years of
# tenant fit-outs; most of the heavy plug load ended up on line A.
OFFICE = [
    [1, "Open office lighting N", "lighting", 1, 20, 1440, None, None, None, "12 AWG Cu", "3.10", None],
    [2, "Open office receptacles N", "receptacle", 1, 20, 1440, None, None, None, "12 AWG Cu", "3.10", "8 duplex"],
    [3, "Open office lighting S", "lighting", 1, 20, 1260, None, None, None, "12 AWG Cu", "3.12", None],
    [4, "Conference receptacles", "receptacle", 1, 20, 900, None, None, None, "12 AWG Cu", "3.20", None],
    [5, "Corridor lighting", "lighting", 1, 20, 680, None, None, None, "12 AWG Cu", "corridor", None],
    [6, "Copier / printer", "receptacle", 1, 20, 1500, None, None, None, "12 AWG Cu", "3.05", "dedicated"],
    [7, "Workstations row 1", "computer", 1, 20, 1440, None, None, "W1", "12 AWG Cu", "3.10", "shared neutral with 9, 11"],
    [8, "Break room refrigerator", "receptacle", 1, 20, 800, 0.9, None, None, "12 AWG Cu", "3.30", None],
    [9, "Workstations row 2", "computer", 1, 20, 1260, None, None, "W1", "12 AWG Cu", "3.10", "shared neutral with 7, 11"],
    [10, "Break room microwave", "receptacle", 1, 20, 1500, None, None, None, "12 AWG Cu", "3.30", None],
    [11, "Workstations row 3", "computer", 1, 20, 1620, None, None, "W1", "12 AWG Cu", "3.10", "shared neutral with 7, 9"],
    [12, "Coffee machine", "receptacle", 1, 20, 1200, None, None, None, "12 AWG Cu", "3.30", None],
    [13, "RTU-3 rooftop unit", "ac", 3, 40, 9800, 0.85, "yes", None, "8 AWG Cu", "roof", "locked: crane-lifted feeder, do not re-land"],
    [14, "Water heater EWH-1", "water heater", 2, 30, 4500, None, None, None, "10 AWG Cu", "3.30", None],
    [18, "Comms room UPS", "computer", 2, 30, 3600, 0.95, "yes", None, "10 AWG Cu", "3.02", "UPS input, keep"],
    [19, "IT receptacles", "receptacle", 1, 20, 1440, None, None, None, "12 AWG Cu", "3.02", None],
    [21, "Lighting west offices", "lighting", 1, 20, 1100, None, None, None, "12 AWG Cu", "3.40", None],
    [22, "Washroom hand dryer", "receptacle", 1, 20, 1500, None, None, None, "12 AWG Cu", "wc", None],
    [23, "Exterior signage", "lighting", 1, 20, 1200, None, None, None, "12 AWG Cu", "facade", "on time clock"],
    [24, "SPARE", "spare", 1, 20, None, None, None, None, None, None, None],
    [25, "Print room receptacles", "receptacle", 1, 20, 720, None, None, None, "12 AWG Cu", "3.05", None],
    [26, "Entry unit heater UH-1", "heating", 2, 20, 3000, None, None, None, "12 AWG Cu", "lobby", None],
    [27, "Lighting private offices", "lighting", 1, 20, 960, None, None, None, "12 AWG Cu", "3.41", None],
    [29, "SPARE", "spare", 1, 20, None, None, None, None, None, None, None],
    [31, "Receptacles private offices", "receptacle", 1, 20, 1080, None, None, None, "12 AWG Cu", "3.41", None],
    [32, "Dishwasher", "receptacle", 1, 20, 1400, None, None, None, "12 AWG Cu", "3.30", None],
    [33, "SPACE", None, None, None, None, None, None, None, None, None, None],
]

# Ridgeline Fabrication: a 480Y/277 V shop panel with 277 V high-bay lighting and 480 V motors.
SHOP = [
    [1, "High-bay lighting bay 1", "lighting", 1, 20, 3600, None, None, None, "12 AWG Cu", "bay 1", None],
    [2, "Air compressor AC-1", "motor", 3, 40, 18700, 0.86, None, None, "8 AWG Cu", "mezz", "15 hp"],
    [3, "High-bay lighting bay 2", "lighting", 1, 20, 3600, None, None, None, "12 AWG Cu", "bay 2", None],
    [5, "High-bay lighting bay 3", "lighting", 1, 20, 2900, None, None, None, "12 AWG Cu", "bay 3", None],
    [7, "Welder receptacle W-1", "welder", 2, 50, 14400, 0.7, None, None, "6 AWG Cu", "bay 1", None],
    [8, "Dust collector DC-1", "motor", 3, 30, 12500, 0.85, None, None, "10 AWG Cu", "bay 2", "10 hp"],
    [11, "Exterior wall packs", "lighting", 1, 20, 1200, None, None, None, "12 AWG Cu", "site", "photocell"],
    [13, "Transformer T-1 (to 208Y/120 panel)", "transformer", 3, 60, 22500, None, "yes", None, "6 AWG Cu", "elec", "feeds panel LA"],
    [14, "Welder receptacle W-2", "welder", 2, 50, 14400, 0.7, None, None, "6 AWG Cu", "bay 3", None],
    [19, "Office lighting", "lighting", 1, 20, 1800, None, None, None, "12 AWG Cu", "office", None],
    [20, "Paint booth exhaust fan", "motor", 3, 20, 6200, 0.82, None, None, "12 AWG Cu", "booth", "5 hp"],
    [21, "Bay 1 unit heater UH-1", "heating", 2, 30, 10000, None, None, None, "10 AWG Cu", "bay 1", None],
    [26, "SPARE", "spare", 3, 20, None, None, None, None, None, None, None],
]

# Corner bakery unit: a 120/240 V single-phase 3-wire tenant panel.
BAKERY = [
    [1, "Deck oven", "kitchen", 2, 50, 9600, None, None, None, "6 AWG Cu", "kitchen", None],
    [2, "Sales floor lighting", "lighting", 1, 20, 1100, None, None, None, "12 AWG Cu", "front", None],
    [4, "Display case refrigerator", "kitchen", 1, 20, 1150, 0.85, None, None, "12 AWG Cu", "front", None],
    [5, "Walk-in cooler condensing unit", "ac", 2, 30, 4300, 0.88, None, None, "10 AWG Cu", "back", None],
    [6, "Spiral mixer", "kitchen", 1, 20, 1400, 0.8, None, None, "12 AWG Cu", "kitchen", None],
    [18, "Proofer", "kitchen", 1, 20, 1800, None, None, None, "12 AWG Cu", "kitchen", None],
    [9, "Kitchen lighting", "lighting", 1, 20, 900, None, None, None, "12 AWG Cu", "kitchen", None],
    [10, "Espresso machine", "kitchen", 1, 20, 1800, None, None, None, "12 AWG Cu", "front", None],
    [11, "Receptacles front counter", "receptacle", 1, 20, 720, None, None, None, "12 AWG Cu", "front", None],
    [12, "Dishwasher booster heater", "water heater", 2, 40, 5800, None, None, None, "8 AWG Cu", "back", None],
    [13, "Sign and window lighting", "lighting", 1, 20, 600, None, None, None, "12 AWG Cu", "front", None],
    [15, "Exhaust hood fan", "motor", 1, 20, 1100, 0.78, None, None, "12 AWG Cu", "kitchen", None],
    [16, "Receptacles office", "receptacle", 1, 20, 540, None, None, None, "12 AWG Cu", "office", None],
    [17, "SPARE", "spare", 1, 20, None, None, None, None, None, None, None],
]

# Pine Street barber and beauty: a bare CSV a contractor exported, 208Y/120 V, no panel sheet.
SALON_CSV = [
    ["Circuit", "Description", "Pole", "Breaker", "VA"],
    ["1", "Styling stations 1-2", "1", "20", "1800"],
    ["3", "Styling stations 3-4", "1", "20", "1800"],
    ["5", "Shampoo bowl heater", "2", "30", "4800"],
    ["2", "Lighting", "1", "20", "1250"],
    ["4", "Towel washer", "1", "20", "1440"],
    ["6", "Dryer chairs", "1", "20", "1600"],
    ["8", "Front counter receptacles", "1", "20", "540"],
    ["10", "Rooftop unit", "3", "30", "7500"],
    ["9", "Tankless water heater", "2", "40", "7200"],
    ["13", "Sign", "1", "20", "360"],
]


def main() -> None:
    _write_xlsx(
        HERE / "office-208y120.xlsx",
        "Harbourview Offices - Level 3 - Panel L3A (demo data)",
        {"Name": "L3A", "System": "208Y/120", "Spaces": 42, "Bus": 225, "Main": "MLO"},
        OFFICE,
    )
    _write_xlsx(
        HERE / "workshop-480y277.xlsx",
        "Ridgeline Fabrication - Shop panel H1 (demo data)",
        {"Name": "H1", "System": "480Y/277", "Spaces": 30, "Bus": 400, "Main": 250},
        SHOP,
    )
    _write_xlsx(
        HERE / "bakery-120-240.xlsx",
        "Corner bakery unit - Tenant panel T2 (demo data)",
        {"Name": "T2", "System": "120/240", "Spaces": 24, "Bus": 200, "Main": 150},
        BAKERY,
    )
    with (HERE / "salon-208y120.csv").open("w", newline="", encoding="utf-8") as handle:
        csv.writer(handle).writerows(SALON_CSV)


if __name__ == "__main__":
    main()

"""Write the small .xlsx test inputs beside this script (run it after changing them)."""

from __future__ import annotations

from pathlib import Path

from openpyxl import Workbook

HERE = Path(__file__).resolve().parent


def formula_without_saved_value() -> None:
    # openpyxl stores the formula but no calculated value, like a file never opened in a
    # spreadsheet program.
    book = Workbook()
    sheet = book.active
    sheet.title = "Circuits"
    sheet.append(["Circuit", "Description", "Poles", "Amps", "Load (VA)"])
    sheet.append([1, "Lighting", 1, 10, "=D2*120"])
    sheet.append([3, "Receptacles", 1, 5, 600])
    book.save(HERE / "bad" / "formula_without_saved_value.xlsx")


def titled_and_merged() -> None:
    book = Workbook()
    info = book.active
    info.title = "Panel"
    for row in (
        ["Name", "LP-7"],
        ["Voltage", "480Y/277 V"],
        ["Spaces", 30],
        ["Bus", "225 A"],
        ["Main", "MLO"],
    ):
        info.append(row)
    sheet = book.create_sheet("Circuits")
    sheet.append(["Test panel with a merged title"])
    sheet.merge_cells("A1:F1")
    sheet.append([])
    sheet.append(["CKT #", "Load Description", "P", "OCP", "kVA", "Room"])
    sheet.append([1, "High-bay lighting", "1P", "20A", 2.4, "Bay 1"])
    sheet.append([3, "Exhaust fan", 3, 20, 6.0, "Roof"])
    sheet.append([])
    sheet.append([2, "Office lighting", 1, 20, "1,100 VA", "Office"])
    sheet.append([4, "Sign lighting", 1, 20, 0.5, "Front"])
    sheet.append([None, "Subtotal", None, None, 10.0])
    book.save(HERE / "good" / "titled_and_merged.xlsx")


def per_line_columns() -> None:
    book = Workbook()
    sheet = book.active
    sheet.title = "Schedule"
    sheet.append(["Space", "Name", "Poles", "Trip (A)", "A", "B", "C", "Notes"])
    sheet.append([1, "Lights", 1, 20, 1000, None, None, "east"])
    sheet.append([3, "Receptacles", 1, 20, None, 720, None, None])
    sheet.append([5, "Heater", 2, 30, None, None, 1500, "C-A"])
    sheet.append([None, None, None, None, None, None, None, None])
    book.save(HERE / "good" / "per_line_columns.xlsx")


if __name__ == "__main__":
    formula_without_saved_value()
    titled_and_merged()
    per_line_columns()

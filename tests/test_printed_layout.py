"""What a printout must not do to its reader: a deviation that rounds to zero printed as
"-0.0 %", a breaker rating split over two lines in the circuit directory, a number run into
the text beside it on a sheet, a size without its unit, a terminal table wrapped in the middle
of a row. Panels here are invented (demo data)."""

from __future__ import annotations

from pathlib import Path

import pypdf
from conftest import demo_panel
from openpyxl import load_workbook

from balancer.building.report import TABLE_WIDTH, _table
from balancer.domain.panel import Circuit
from balancer.io.pdf import write_pdf
from balancer.io.writer import write_workbook
from balancer.optimize.engine import balance
from balancer.physics.analysis import analyze


def _lines(pdf: Path) -> list[str]:
    pages = pypdf.PdfReader(pdf).pages
    return [line for page in pages for line in page.extract_text().splitlines()]


def test_a_deviation_that_rounds_to_zero_has_no_minus_sign(tmp_path: Path) -> None:
    # A 10,000 VA, B and C 10,004 VA: A is 0.03 % below the average, shown as +0.0 %
    panel = demo_panel(
        Circuit("1", "demo A", 1, 10_000.0, (1,)),
        Circuit("3", "demo B", 1, 10_004.0, (3,)),
        Circuit("5", "demo C", 1, 10_004.0, (5,)),
    )
    pdf = write_pdf(tmp_path / "p.pdf", panel, analyze(panel))
    text = " ".join(_lines(pdf))
    assert "-0.0 %" not in text
    assert "+0.0 %" in text


def test_directory_keeps_a_breaker_rating_on_one_line(tmp_path: Path) -> None:
    panel = demo_panel(
        Circuit("1", "Feeder to H1", 3, 9000.0, (1, 3, 5), trip_a=100),
        Circuit("2", "Lighting", 1, 900.0, (2,), trip_a=20),
        spaces=12,
    )
    pdf = write_pdf(tmp_path / "p.pdf", panel, analyze(panel))
    directory = [line for line in _lines(pdf) if "3P 100" in line]
    assert directory
    assert all("3P 100 A" in line for line in directory)


def test_text_right_after_a_number_is_set_in(tmp_path: Path) -> None:
    panel = demo_panel(
        Circuit("1", "Reception receptacles", 1, 1080.0, (1,), load_class="receptacle"),
        Circuit("2", "Copier", 1, 1500.0, (2,), load_class="receptacle", locked=True),
        Circuit("3", "Lighting", 1, 900.0, (3,), load_class="lighting"),
    )
    book = load_workbook(write_workbook(balance(panel), tmp_path / "p.xlsx"))
    layout = book["Layout"]
    right = next(c.column for c in layout[3] if c.value == "Description" and c.column > 3)
    after_numbers = [
        layout.cell(r, right)
        for r in range(4, layout.max_row + 1)
        if isinstance(layout.cell(r, right - 1).value, (int, float))
        and isinstance(layout.cell(r, right).value, str)
    ]
    assert after_numbers  # the even side: each description right after its Load VA
    assert all(cell.alignment.indent == 1 for cell in after_numbers)
    circuits = book["Circuits"]
    header = {c.value: c.column for c in circuits[1]}
    typed = circuits.cell(2, header["Type"])  # text right after Load (VA)
    assert typed.value in ("receptacle", "lighting")
    assert typed.alignment.indent == 1
    assert circuits.cell(2, header["Description"]).alignment.indent in (0, None)


def test_demand_sheet_gives_the_conductor_with_its_unit(tmp_path: Path) -> None:
    from balancer.code.demand import DemandOptions, compute_demand

    panel = demo_panel(
        Circuit("1", "Heater", 2, 9600.0, (1, 3), load_class="heating", trip_a=50),
        Circuit("5", "Lighting", 1, 1200.0, (5,), load_class="lighting", trip_a=20),
    )
    demand = compute_demand(panel, DemandOptions())
    book = load_workbook(write_workbook(balance(panel), tmp_path / "p.xlsx", demand=demand))
    rows = {r[0]: r for r in book["Demand"].iter_rows(values_only=True) if r and r[0]}
    assert str(rows["Conductor Cu"][1]).endswith(("AWG Cu", "kcmil Cu"))
    assert str(rows["Conductor Al"][1]).endswith(("AWG Al", "kcmil Al"))


def test_a_table_too_wide_for_the_terminal_goes_on_below_it() -> None:
    rows = [
        {"panel": f"P{k}", "wide": "x" * 44, "wider": "y" * 44, "last": f"{k}.5"} for k in range(3)
    ]
    columns = [("panel", "Panel"), ("wide", "Wide"), ("wider", "Wider"), ("last", "Last A")]
    lines = _table(rows, columns)
    assert all(len(line) <= TABLE_WIDTH for line in lines)
    first, second = "\n".join(lines).split("\n\n")
    assert first.splitlines()[0].split() == ["Panel", "Wide", "Wider"]
    assert second.splitlines()[0].split() == ["Panel", "Last", "A"]
    for k in range(3):  # every row names its panel in both halves
        assert any(line.startswith(f"P{k} ") for line in first.splitlines())
        ends = [line for line in second.splitlines() if line.startswith(f"P{k} ")]
        assert ends
        assert ends[0].endswith(f"{k}.5")


def test_a_column_of_figures_keeps_one_decimal_throughout() -> None:
    from openpyxl import Workbook

    from balancer.io.writer import write_rows_sheet

    rows = [
        ["Expected after the work", "Current (A, true RMS)"],
        ["Line A", 113.4],
        ["Line B", 138.0],  # a whole number among tenths: shown 138.0, not 138
        [],
        ["Spaces", 42.0],  # another run, all whole: no decimal
    ]
    ws = Workbook().active
    assert ws is not None
    write_rows_sheet(ws, "Work order", rows)
    assert ws["B2"].number_format == "#,##0.0"
    assert ws["B3"].number_format == "#,##0.0"
    assert ws["B5"].number_format == "#,##0"

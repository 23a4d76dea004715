"""The revised workbook: sheets, figures, number formats, print setup, round trip, safety."""

from __future__ import annotations

import math
from pathlib import Path

import pytest
from openpyxl import load_workbook
from writer_demo import DEMO_NOTICE, demo_panel, demo_result

from balancer.errors import BalancerError, OutputError
from balancer.field.workorder import work_order_for
from balancer.io.reader import read_schedule
from balancer.io.writer import row_role, write_workbook
from balancer.physics.analysis import analyze
from balancer.report.safety import CAUTIONS

ATOL_VA = 1e-6


@pytest.fixture
def written(tmp_path: Path) -> Path:
    result = demo_result()
    return write_workbook(result, tmp_path / "demo-lp1-balanced.xlsx", order=work_order_for(result))


def _find(ws: object, text: str) -> tuple[int, int]:
    for row in ws.iter_rows():  # type: ignore[attr-defined]
        for cell in row:
            if cell.value == text:
                return cell.row, cell.column
    raise AssertionError(f"{text!r} not on sheet")


def test_sheet_names_are_plain_english(written: Path) -> None:
    wb = load_workbook(written)
    assert wb.sheetnames == [
        "Summary",
        "Layout",
        "Changes",
        "Circuits",
        "Panel",
        "Trade-off",
        "Phasors",
        "Work order",
        "Notes",
    ]


def test_summary_per_line_figures_are_numbers_with_formats(written: Path) -> None:
    result = demo_result()
    ws = load_workbook(written)["Summary"]
    head_row, _ = _find(ws, "Before VA")
    for offset, line in enumerate("ABC", start=1):
        row = head_row + offset
        assert ws.cell(row, 1).value == line
        before, after = ws.cell(row, 2), ws.cell(row, 3)
        assert isinstance(before.value, (int, float))  # a number, not text
        assert before.value == pytest.approx(result.before.phase_va[line], abs=ATOL_VA)
        assert after.value == pytest.approx(result.after.phase_va[line], abs=ATOL_VA)
        assert before.number_format == "#,##0"
        assert ws.cell(row, 6).value == pytest.approx(result.after.line_a[line])
        assert ws.cell(row, 6).number_format == "0.0"
    # The average column is the mean line load (total is unchanged by moving breakers).
    assert ws.cell(head_row + 1, 4).value == pytest.approx(result.after.total_va / 3)


def test_summary_states_spread_imbalance_neutral_and_bound(written: Path) -> None:
    result = demo_result()
    ws = load_workbook(written)["Summary"]
    row, _ = _find(ws, "Imbalance % (NEMA MG 1 definition)")
    assert ws.cell(row, 2).value == pytest.approx(result.before.imbalance_pct)
    assert ws.cell(row, 3).value == pytest.approx(result.after.imbalance_pct)
    row, _ = _find(ws, "Neutral current A RMS")
    assert ws.cell(row, 3).value == pytest.approx(result.after.neutral_a)
    # how good, in plain words with the figures: the floor no arrangement beats and this one's
    row, _ = _find(ws, "How good")
    sentence = str(ws.cell(row, 2).value)
    assert sentence.startswith("Within 1 VA of the best possible (proven)")
    assert f"below {result.lower_bound_spread_va:,.0f} VA" in sentence
    assert f"this one has {result.after.spread_va:,.0f} VA" in sentence
    row, _ = _find(ws, "Status")
    assert str(ws.cell(row, 2).value).startswith("optimal")
    _find(ws, DEMO_NOTICE)


def test_safety_notes_on_summary_and_notes(written: Path) -> None:
    wb = load_workbook(written)
    for name in ("Summary", "Notes"):
        texts = {c.value for row in wb[name].iter_rows() for c in row if isinstance(c.value, str)}
        for note in CAUTIONS:
            assert note in texts, (name, note)
    joined = " ".join(CAUTIONS)
    for phrase in ("qualified persons", "De-energise", "meter", "authority having jurisdiction"):
        assert phrase in joined


def test_layout_is_built_like_the_panel(written: Path) -> None:
    """Odd spaces left, even right, rows on A, B, C in turn (common practice numbering)."""
    ws = load_workbook(written)["Layout"]
    assert [ws.cell(3, c).value for c in (6, 7, 8)] == ["Space", "Line", "Space"]
    rows = [(ws.cell(r, 6).value, ws.cell(r, 7).value, ws.cell(r, 8).value) for r in range(4, 16)]
    assert rows[0] == (1, "A", 2)
    assert rows[1] == (3, "B", 4)
    assert rows[2] == (5, "C", 6)
    assert rows[11] == (23, "C", 24)
    # Space 5 now holds the moved lighting circuit; its old space is given beside it.
    assert ws.cell(6, 2).value == "Demo lighting west"
    assert ws.cell(6, 1).value == "15"
    # A 3-pole breaker at 7 takes 7, 9, 11: later poles point back to the first space.
    assert ws.cell(7, 2).value == "Demo rooftop unit"
    assert ws.cell(8, 2).value == "(pole of space 7)"
    assert ws.cell(7, 3).value == pytest.approx(3000.0)
    assert ws.cell(12, 12).value == "(space)"  # space 18 is empty


def test_layout_line_totals_match_analysis(written: Path) -> None:
    result = demo_result()
    ws = load_workbook(written)["Layout"]
    row, _ = _find(ws, "Line totals")
    for offset, line in enumerate("ABC", start=2):
        assert ws.cell(row + offset, 2).value == line
        assert ws.cell(row + offset, 3).value == pytest.approx(result.after.phase_va[line])


def test_changes_sheet_lists_every_circuit_old_and_new(written: Path) -> None:
    ws = load_workbook(written)["Changes"]
    header = [c.value for c in ws[2]]
    assert header[:9] == [
        "Circuit",
        "Description",
        "Poles",
        "Load VA",
        "Old spaces",
        "Old lines",
        "New spaces",
        "New lines",
        "Moved",
    ]
    rows = {r[1]: r for r in ws.iter_rows(min_row=3, values_only=True)}
    assert len(rows) == len(demo_panel().circuits)
    assert rows["Demo lighting west"][4:9] == ("15", "B", "5", "C", "moved")
    assert rows["Demo receptacles office"][4:9] == ("16", "B", "8", "A", "moved")
    assert rows["Demo rooftop unit"][4:9] == ("7, 9, 11", "A-B-C", "7, 9, 11", "A-B-C", None)


def test_round_trip_through_the_reader(written: Path) -> None:
    result = demo_result()
    back = read_schedule(written)
    assert back.name == "DEMO-LP1"
    assert back.system.designation == "208Y/120"
    assert back.spaces == 24
    assert back.main_a == 100.0
    loads = analyze(back)
    for line in "ABC":
        assert loads.phase_va[line] == pytest.approx(result.after.phase_va[line], abs=ATOL_VA)
        assert loads.line_a[line] == pytest.approx(result.after.line_a[line])
    assert loads.neutral_a == pytest.approx(result.after.neutral_a)
    by_description = {c.description: c for c in back.circuits}
    for circuit in result.after_panel.circuits:
        again = by_description[circuit.description]
        assert again.spaces == circuit.spaces
        assert again.poles == circuit.poles
        assert again.extra == circuit.extra  # unknown columns come back, in order, unchanged
    assert by_description["Demo spare"].is_spare


def test_unknown_columns_keep_their_order_and_types(written: Path) -> None:
    ws = load_workbook(written)["Circuits"]
    header = [c.value for c in ws[1]]
    assert header[-2:] == ["Room", "Tag"]
    tags = [r[-1] for r in ws.iter_rows(min_row=2, values_only=True)]
    assert tags[0] == 7
    assert tags[2] == "X-1"
    assert tags[4] == pytest.approx(3.5)


def test_print_setup(written: Path) -> None:
    wb = load_workbook(written)
    for ws in wb.worksheets:
        assert ws.page_setup.fitToWidth == 1, ws.title
        assert ws.sheet_properties.pageSetUpPr.fitToPage, ws.title
    assert wb["Layout"].print_title_rows == "$1:$3"
    assert wb["Layout"].page_setup.orientation == "landscape"
    assert wb["Circuits"].print_title_rows == "$1:$1"


def test_extra_sheets_are_added_before_notes(tmp_path: Path) -> None:
    rows = [("Item", "VA"), ("General lighting", 7500.0), ("Receptacles", 3600.0)]
    out = write_workbook(demo_result(), tmp_path / "x.xlsx", extra_sheets=[("Demand", rows)])
    wb = load_workbook(out)
    assert wb.sheetnames[-2:] == ["Demand", "Notes"]
    assert [c.value for c in wb["Demand"][2]] == ["General lighting", 7500.0]


def test_row_roles() -> None:
    assert row_role([]) == "blank"
    assert row_role([None, ""]) == "blank"
    assert row_role(["Work order - panel X"]) == "title"
    assert row_role(["Step", "Action", "Circuit", "Description"]) == "header"
    assert row_role(["Caution", "Work only de-energised."]) == "data"
    assert row_role(["Total", 3, 2400.0, 2400.0]) == "data"


def test_work_order_sheet_follows_the_planner(written: Path) -> None:
    ws = load_workbook(written)["Work order"]
    rows = [r for r in ws.iter_rows(values_only=True)]
    header = next(i for i, r in enumerate(rows) if r[0] == "Step")
    steps = [r for r in rows[header + 1 :] if isinstance(r[0], int)]
    assert {r[3] for r in steps} == {"Demo lighting west", "Demo receptacles office"}
    assert ws.cell(header + 1, 1).fill.fgColor.rgb.endswith("33475B")  # styled as a header


def test_demand_sheet_when_demand_is_given(tmp_path: Path) -> None:
    from balancer.code.demand import compute_demand

    result = demo_result()
    demand = compute_demand(result.after_panel)
    out = write_workbook(result, tmp_path / "d.xlsx", demand=demand, order=work_order_for(result))
    wb = load_workbook(out)
    assert wb.sheetnames[-3:] == ["Work order", "Demand", "Notes"]
    values = [r for r in wb["Demand"].iter_rows(values_only=True)]
    total = next(r for r in values if r[0] == "Total")
    assert total[3] == pytest.approx(round(demand.total_demand_va))


def test_extra_sheet_name_clash_is_refused(tmp_path: Path) -> None:
    with pytest.raises(ValueError, match="repeat a sheet name"):
        write_workbook(demo_result(), tmp_path / "x.xlsx", extra_sheets=[("Summary", [("a",)])])


def test_input_is_never_written(tmp_path: Path) -> None:
    source = tmp_path / "schedule.xlsx"
    source.write_bytes(b"original bytes")
    with pytest.raises(BalancerError, match="never overwrites its input"):
        write_workbook(demo_result(), source, input_path=source)
    assert source.read_bytes() == b"original bytes"
    assert list(tmp_path.iterdir()) == [source]  # no temporary file left behind


def test_atomic_write_replaces_and_leaves_no_temporary(tmp_path: Path) -> None:
    target = tmp_path / "out.xlsx"
    target.write_bytes(b"old")
    write_workbook(demo_result(), target)
    assert load_workbook(target).sheetnames[0] == "Summary"
    assert [p.name for p in tmp_path.iterdir()] == ["out.xlsx"]


def test_unchanged_result_has_no_tradeoff_sheet(tmp_path: Path) -> None:
    out = write_workbook(demo_result(moves=False), tmp_path / "same.xlsx")
    wb = load_workbook(out)
    assert "Trade-off" not in wb.sheetnames
    row, _ = _find(wb["Summary"], "Moves")
    assert wb["Summary"].cell(row, 2).value == 0


def test_phasor_table_matches_analysis(written: Path) -> None:
    result = demo_result()
    ws = load_workbook(written)["Phasors"]
    rows = {r[0]: r for r in ws.iter_rows(min_row=3, max_row=6, values_only=True)}
    for line in "ABC":
        assert rows[f"Line {line}"][1] == pytest.approx(result.before.line_a[line])
        assert rows[f"Line {line}"][3] == pytest.approx(result.after.line_a[line])
    assert rows["Neutral"][3] == pytest.approx(result.after.neutral_a)
    assert len(ws._images) == 1  # the diagram is embedded


def test_unity_pf_neutral_closed_form(written: Path) -> None:
    """The neutral the sheet states agrees with the closed form for unity-PF loads 120° apart
    (|I_N| = √(Ia² + Ib² + Ic² − IaIb − IbIc − IcIa), C from the phasor sum;
    docs/references.md), using the 1-pole currents only: the 2- and 3-pole loads put nothing on
    the neutral."""
    panel = demo_result().after_panel
    amps = dict.fromkeys("ABC", 0.0)
    for c in panel.circuits:
        if c.poles == 1 and c.load_va:
            amps[panel.lines_of(c)[0]] += c.load_va / 120.0
    ia, ib, ic = amps["A"], amps["B"], amps["C"]
    expected = math.sqrt(ia * ia + ib * ib + ic * ic - ia * ib - ib * ic - ic * ia)
    ws = load_workbook(written)["Summary"]
    row, _ = _find(ws, "Neutral current A RMS")
    assert ws.cell(row, 3).value == pytest.approx(expected, rel=1e-9)


def test_circuit_list_shows_lines_beside_spaces(written: Path) -> None:
    ws = load_workbook(written)["Circuits"]
    header = [c.value for c in ws[1]]
    assert header[:3] == ["Space", "Phase", "Description"]
    rows = {r[2]: r for r in ws.iter_rows(min_row=2, values_only=True)}
    assert rows["Demo rooftop unit"][:2] == (7, "A-B-C")
    assert rows["Demo water heater"][:2] == (4, "B-C")
    assert rows["Demo lighting west"][:2] == (5, "C")


def test_failed_save_keeps_the_old_file_and_no_temporary(
    tmp_path: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    from openpyxl import Workbook

    target = tmp_path / "out.xlsx"
    target.write_bytes(b"previous run")

    def broken_save(self: Workbook, filename: str) -> None:
        Path(filename).write_bytes(b"half a workbook")
        raise OSError("disk full")

    monkeypatch.setattr(Workbook, "save", broken_save)
    with pytest.raises(OutputError, match=r"out\.xlsx: cannot write the file: disk full"):
        write_workbook(demo_result(), target)
    assert target.read_bytes() == b"previous run"
    assert [p.name for p in tmp_path.iterdir()] == ["out.xlsx"]

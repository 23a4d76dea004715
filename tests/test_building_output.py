"""The building workbook as output: the revised building reads back as a building with the same
figures, and the work order takes every panel from its old layout to its new one.

Panels here are invented test data built in code or the bundled demo building.
"""

from __future__ import annotations

import functools
import json
from dataclasses import replace
from pathlib import Path

import pytest
from openpyxl import Workbook, load_workbook

from balancer.building.files import panel_sheet_names, read_building, write_building_sheets
from balancer.building.report import work_order_rows, write_building_workbook
from balancer.building.tree import (
    Building,
    BuildingResult,
    Feed,
    balance_building,
    make_building,
    roll_up,
)
from balancer.cli.main import main
from balancer.domain.panel import Circuit, Panel
from balancer.domain.result import BalanceOptions
from balancer.domain.systems import get_system
from balancer.field.workorder import replay, work_order
from balancer.physics.transformer import make_transformer

ROOT = Path(__file__).resolve().parents[1]
DEMO_BOOK = ROOT / "sample_schedules" / "building-demo" / "building-demo.xlsx"
ATOL_VA = 1e-6

S480 = get_system("480Y/277")
S208 = get_system("208Y/120")
S208_1PH = get_system("120/208 network")


def _circuit(space: int, poles: int, load_va: float, description: str = "") -> Circuit:
    return Circuit(
        id=str(space),
        description=description or f"load {space}",
        poles=poles,
        load_va=load_va,
        spaces=tuple(space + 2 * k for k in range(poles)),
    )


def _odd_names_building() -> Building:
    """A tree whose panel names clash with the figure sheets or are not sheet names at all,
    with a transformer and a single-phase subpanel whose feeder conductors are swapped."""
    service = Panel(
        "Summary",
        S480,
        30,
        (_circuit(1, 3, 0.0, "feeder to T1"), _circuit(2, 1, 2770.0), _circuit(4, 1, 1385.0)),
        bus_a=400.0,
        main_a=400.0,
    )
    lighting = Panel(
        "LP/2.A",
        S208,
        42,
        (
            _circuit(1, 2, 0.0, "feeder to apartment"),
            _circuit(2, 1, 1800.0),
            _circuit(5, 1, 900.0),
            _circuit(6, 3, 4500.0),
        ),
        bus_a=225.0,
    )
    apartment = Panel(
        "Apt 1",
        S208_1PH,
        24,
        (_circuit(1, 1, 1500.0), _circuit(2, 1, 600.0), _circuit(4, 1, 700.0)),
    )
    t1 = make_transformer("T1", 45, S480, S208, "delta-wye")
    return make_building(
        "odd names",
        [service, lighting, apartment],
        [Feed("LP/2.A", "Summary", "1", t1), Feed("Apt 1", "LP/2.A", "1", swapped=True)],
    )


def _same_figures(first: Building, second: Building) -> None:
    a, b = roll_up(first), roll_up(second)
    assert a.panels.keys() == b.panels.keys()
    for name, figures in a.panels.items():
        again = b.panels[name]
        for line, va in figures.phase_va.items():
            assert again.phase_va[line] == pytest.approx(va, abs=ATOL_VA), (name, line)
        assert again.neutral_a == pytest.approx(figures.neutral_a, abs=1e-9)
    for name, feeder in a.feeders.items():
        assert b.feeders[name].lines == feeder.lines
        assert b.feeders[name].transformer_loading_pct == feeder.transformer_loading_pct


def test_sheet_names_avoid_clashes_and_characters_excel_refuses() -> None:
    names = panel_sheet_names(_odd_names_building(), ["Summary", "Panels"])
    assert names["Summary"] == "Summary (2)"  # "Summary" is a figures sheet already
    assert names["LP/2.A"] == "LP-2-A"  # '/' is refused by Excel, '.' would read as a file
    assert names["Apt 1"] == "Apt 1"
    long = make_building("long", [Panel("P" * 40, S208, 12, (_circuit(1, 1, 100.0),))], [])
    assert len(panel_sheet_names(long)["P" * 40]) == 31


def test_written_building_reads_back_with_its_feeds_transformers_and_swaps(
    tmp_path: Path,
) -> None:
    building = _odd_names_building()
    book = Workbook()
    book.active.title = "Summary"  # type: ignore[union-attr]
    write_building_sheets(book, building, "odd names, as written")
    path = tmp_path / "again.xlsx"
    book.save(path)
    again = read_building(path)
    assert [p.name for p in again.panels] == [p.name for p in building.panels]
    for panel in building.panels:
        read = again.panel(panel.name)
        assert read.system is panel.system
        assert read.spaces == panel.spaces
        assert read.bus_a == panel.bus_a
        assert read.main_a == panel.main_a
        assert sorted((c.spaces, c.poles, c.load_va, c.description) for c in read.circuits) == (
            sorted((c.spaces, c.poles, c.load_va, c.description) for c in panel.circuits)
        )
    feed = again.feed_of("Apt 1")
    assert feed is not None
    assert feed.swapped
    assert feed.source == "LP/2.A"
    through = again.feed_of("LP/2.A")
    assert through is not None
    assert through.transformer is not None
    assert through.transformer.kva == 45.0
    assert through.transformer.connection == "delta-wye"
    _same_figures(building, again)


@functools.cache
def _balanced_demo() -> tuple[Building, BuildingResult]:
    """The demo building and its balancing, worked out once for the tests that only read them."""
    building = read_building(DEMO_BOOK)
    return building, balance_building(building, BalanceOptions(time_limit_s=20.0))


def test_revised_demo_building_reads_back_with_the_balanced_figures(tmp_path: Path) -> None:
    building, result = _balanced_demo()
    out = tmp_path / "revised.xlsx"
    write_building_workbook(out, building, result.before_figures, result)
    again = read_building(out)
    _same_figures(result.after, again)
    # the breakers really moved: the revised layout is not the one read
    moved = sum(len(o.moves) for o in result.outcomes.values())
    assert moved > 0
    for name, outcome in result.outcomes.items():
        read = again.panel(name)
        spaces = {c.description: c.spaces for c in read.circuits}
        for circuit_id in outcome.moves:
            circuit = result.after.panel(name).circuit(circuit_id)
            assert spaces[circuit.description] == circuit.spaces
    # the high-leg panel's sheet says which line is the high leg
    notes = [str(r[0]) for r in load_workbook(out)["W1"].iter_rows(max_row=25, values_only=True)]
    assert any(n.startswith("High leg: line B, 208 V to neutral") for n in notes)
    # shaded rows are the breakers that move
    sheet = load_workbook(out)["MDP"]
    shaded = {
        str(row[2].value)
        for row in sheet.iter_rows()
        if row[0].fill is not None
        and row[0].fill.fgColor.rgb not in (None, "00000000")
        and isinstance(row[0].value, int)
    }
    moved_descriptions = {
        result.before.panel("MDP").circuit(c).description for c in result.outcomes["MDP"].moves
    }
    assert shaded == moved_descriptions


def test_work_order_rows_replay_to_the_revised_layout_and_expect_the_rolled_up_amps() -> None:
    _, result = _balanced_demo()
    rows = work_order_rows(result)
    assert any("qualified persons" in str(r[1]) for r in rows if len(r) > 1)
    titles = [r[0] for r in rows if len(r) == 1]
    changed = [n for n, o in result.outcomes.items() if o.moves or o.swapped_feeds]
    assert {f"Panel {n}" for n in changed} <= set(titles)
    for name in changed:
        order = work_order(result.before.panel(name), result.after.panel(name))
        final = replay(result.before.panel(name), order)
        assert final == {c.id: c.spaces for c in result.after.panel(name).circuits}
        # the expected currents follow the panel's title and include what it feeds
        start = rows.index([f"Panel {name}"])
        expected = next(i for i in range(start, len(rows)) if rows[i][:1] == ["Line A"])
        figures = result.after_figures.panels[name]
        assert rows[expected][1] == pytest.approx(figures.line_a["A"], abs=0.05)


def test_swapped_feeder_is_a_re_land_step() -> None:
    """Everything is locked but the feeder breaker's two conductors: the only way to balance
    the lighting panel is to exchange the apartment's lines on that breaker."""

    def locked(space: int, load_va: float) -> Circuit:
        return replace(_circuit(space, 1, load_va), locked=True)

    # 208Y/120 rows: spaces 1-2 on A, 3-4 on B, 5-6 on C, 7-8 on A, ...
    lighting = Panel(
        "LP",
        S208,
        12,
        (
            _circuit(1, 2, 0.0, "feeder to Apt 1"),  # spaces 1 and 3: lines A and B
            *(locked(s, 800.0) for s in (2, 7, 8)),  # 2,400 VA on A
            locked(4, 400.0),
            locked(9, 300.0),
            locked(10, 300.0),  # 1,000 VA on B
            *(locked(s, va) for s, va in ((5, 800.0), (6, 800.0), (11, 800.0), (12, 700.0))),
        ),
    )
    # the apartment as locked: 2,100 VA on its line A, 700 VA on B
    apartment = Panel(
        "Apt 1", S208_1PH, 12, (locked(1, 1500.0), locked(2, 600.0), locked(4, 700.0))
    )
    building = make_building("one swap", [lighting, apartment], [Feed("Apt 1", "LP", "1")])
    result = balance_building(building, BalanceOptions(time_limit_s=20.0))
    assert result.outcomes["LP"].swapped_feeds == ("Apt 1",)
    assert result.outcomes["LP"].moves == ()
    after = result.after_figures.panels["LP"].phase_va
    assert after == pytest.approx({"A": 3100.0, "B": 3100.0, "C": 3100.0}, abs=ATOL_VA)
    rows = work_order_rows(result)
    swaps = [r for r in rows if len(r) > 1 and r[1] == "re-land"]
    assert len(swaps) == 1
    assert "feeder to Apt 1" in str(swaps[0][3])
    assert swaps[0][4] == "1, 3"


def test_building_command_output_reads_back_with_the_figures_after(
    tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    again_path = tmp_path / "again.xlsx"
    args = ["building", str(DEMO_BOOK), "--balance", "--json", "-o", str(again_path)]
    assert main([*args, "--time-limit", "20"]) == 0
    balanced = json.loads(capsys.readouterr().out)
    assert balanced["moves"]
    # the figures read back from the revised building are those the same run reported after
    assert main(["building", str(again_path), "--json"]) == 0
    again = json.loads(capsys.readouterr().out)
    assert not again["balanced"]  # figures only: nothing was balanced
    assert again["moves"] == []
    after = {p["panel"]: p["after"]["phase_va"] for p in balanced["panels"]}
    assert {p["panel"]: p["before"]["phase_va"] for p in again["panels"]} == after


def test_building_balance_writes_beside_the_index_by_default(
    tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    book = tmp_path / "site.xlsx"
    book.write_bytes(DEMO_BOOK.read_bytes())
    assert main(["building", str(book), "--time-limit", "20"]) == 0  # figures only: no file
    assert sorted(p.name for p in tmp_path.iterdir()) == ["site.xlsx"]
    assert main(["building", str(book), "--balance", "--time-limit", "20"]) == 0
    written = tmp_path / "site-balanced.xlsx"
    # (the line wraps before a long path to stay within 100 columns)
    assert f"written to {written}" in " ".join(capsys.readouterr().out.split())
    assert read_building(written).panel("MDP").spaces == 42


@pytest.mark.slow  # the demo building end to end: balanced, then printed, 6 s here
def test_building_printout_has_every_directory_and_the_work_orders(
    tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    from pypdf import PdfReader

    out = tmp_path / "site.xlsx"
    args = ["building", str(DEMO_BOOK), "--balance", "-o", str(out), "--time-limit", "20"]
    assert main([*args, "--pdf", "--paper", "a4"]) == 0
    pdf = tmp_path / "site.pdf"
    assert f"Printout written to {pdf}" in capsys.readouterr().out
    reader = PdfReader(pdf)
    text = "\n".join(page.extract_text() for page in reader.pages)
    for name in ("MDP", "H1", "L1", "L2", "K1", "W1"):
        assert f"Circuit directory, panel {name}" in text
    assert "Work order, panel MDP" in text
    assert "Work order, panel L2" not in text  # L2 keeps its layout
    assert "qualified persons" in text
    width, height = reader.pages[0].mediabox.width, reader.pages[0].mediabox.height
    assert (round(float(width)), round(float(height))) == (595, 842)  # A4 in points
    # the feeder breakers in the directory carry what they feed
    building = read_building(out)
    feeder = building.panel("MDP").circuit(building.feed_of("W1").circuit_id)  # type: ignore[union-attr]
    assert feeder.load_va == 0.0  # the schedule keeps its own figure ...
    total = roll_up(building).panels["W1"].tree_branch_va
    assert f"{total / 3:,.0f}" in text  # ... the printout shows a third of W1 on each pole


def test_building_printout_refuses_an_input(
    tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    assert main(["building", str(DEMO_BOOK), "--pdf", str(DEMO_BOOK)]) == 2
    assert "input" in capsys.readouterr().err


def test_a_folder_holding_one_building_workbook_is_read(
    tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    (tmp_path / "site.xlsx").write_bytes(DEMO_BOOK.read_bytes())
    (tmp_path / "notes.xlsx").write_bytes(b"not a workbook")  # ignored: no building sheet
    assert main(["building", str(tmp_path)]) == 0
    assert "Building site:" in capsys.readouterr().out
    (tmp_path / "copy.xlsx").write_bytes(DEMO_BOOK.read_bytes())
    assert main(["building", str(tmp_path)]) == 2  # two candidates: the user must name one
    assert "more than one building workbook" in capsys.readouterr().err

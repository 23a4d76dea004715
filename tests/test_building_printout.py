"""The building printout and one number per feeder.

A feeder breaker is known by its identity (the number it had when read), but after balancing
it may sit in other spaces, and the revised schedule numbers it by them. The tables used the
identity ("MDP ckt 7") while the revised sheets used the new space ("circuit 9"); every output
now names the breaker by its space in the layout it shows, with the number as found beside it
when it moved.
"""

from __future__ import annotations

import re
from pathlib import Path

import pypdf
import pytest
from openpyxl import load_workbook

from balancer import api
from balancer.building.report import feeder_rows, panel_rows, printout_tables, spare_capacity
from balancer.domain.result import BalanceOptions

DEMO = Path(__file__).resolve().parents[1] / "sample_schedules" / "building-demo"  # demo data


@pytest.fixture(scope="module")
def balanced(tmp_path_factory: pytest.TempPathFactory) -> tuple[api.BuildingReport, Path, Path]:
    folder = tmp_path_factory.mktemp("building")
    workbook, pdf = folder / "b.xlsx", folder / "b.pdf"
    report = api.run_building(DEMO, BalanceOptions(time_limit_s=10), jobs=1)
    report = api.write_building(report, workbook, pdf)
    return report, workbook, pdf


def _pdf_text(pdf: Path) -> list[str]:
    return [" ".join(page.extract_text().split()) for page in pypdf.PdfReader(pdf).pages]


def test_one_number_per_feeder_everywhere(balanced: tuple[api.BuildingReport, Path, Path]) -> None:
    report, workbook, pdf = balanced
    building, result = report.building, report.result
    assert result is not None
    moved = []
    for feed in building.feeds:
        old = str(building.feeder_circuit(feed).first_space)
        new = str(result.after.feeder_circuit(feed).first_space)
        expected = f"{feed.source} circuit {new}" + ("" if new == old else f" (was {old})")
        if new != old:
            moved.append(feed.panel)
        row = next(
            r for r in panel_rows(building, report.before, result) if r["panel"] == feed.panel
        )
        assert row["fed_from"] == expected
        feeder = next(
            r for r in feeder_rows(building, report.before, result) if r["panel"] == feed.panel
        )
        assert feeder["circuit"] == expected.split(" circuit ")[1]
        book = load_workbook(workbook)
        index = [list(r) for r in book["Building"].iter_rows(values_only=True)]
        entry = next(r for r in index if r[0] == feed.panel)
        assert str(entry[3]) == new  # the revised building reads again with the new number
        sheet = [r[0] for r in book[feed.panel].iter_rows(values_only=True) if r[0]]
        assert f"Fed from {expected}" in sheet
    assert moved, "the demo's balanced main panel moves a feeder breaker (K1's)"
    text = " ".join(_pdf_text(pdf))
    assert " ckt " not in text
    for name in moved:
        feed = building.feed_of(name)
        assert feed is not None
        assert result.after.feeder_text(feed, was=building) in text


def test_as_found_names_the_feeder_by_its_space(tmp_path: Path) -> None:
    report = api.run_building(DEMO)
    k1 = next(r for r in panel_rows(report.building, report.before) if r["panel"] == "K1")
    assert k1["fed_from"] == "MDP circuit 7"  # demo data: K1's transformer on MDP spaces 7, 9


def test_summary_page_has_the_panel_and_feeder_tables(
    balanced: tuple[api.BuildingReport, Path, Path],
) -> None:
    report, _, pdf = balanced
    first = _pdf_text(pdf)[0]
    for phrase in ("Panels", "Feeders and transformers", "Connected kVA", "Demand kVA",
                   "Spare capacity", "Transformer loading %", "Caution"):  # fmt: skip
        assert phrase in first
    for panel in report.building.panels:
        assert re.search(rf"\b{panel.name}\b", first)
    # each panel's figures precede its directory
    pages = _pdf_text(pdf)
    for panel in report.building.panels:
        page = next(p for p in pages if f"Circuit directory, panel {panel.name}" in p)
        assert "Figures, with all it feeds" in page


def test_spare_capacity_against_what_limits_the_panel(
    balanced: tuple[api.BuildingReport, Path, Path],
) -> None:
    report, _, _ = balanced
    building, before = report.building, report.before
    # H1 (demo data) hangs on a 100 A feeder breaker in MDP and has no main: the room left is
    # 100 A less its heaviest line current, with all it feeds.
    heaviest = max(before.panels["H1"].line_a.values())
    assert spare_capacity(building, before, "H1") == f"{100 - heaviest:,.0f} A of 100 A feeder"
    # K1 is behind T2 (25 kVA): what is left of the transformer's heaviest winding
    loading = before.feeders["K1"].transformer_loading_pct
    assert loading is not None
    assert spare_capacity(building, before, "K1") == f"{100 - loading:.0f} % of T2 25 kVA"
    # W1's T3 (30 kVA) is loaded beyond its rating as found: no room, said in words
    over = before.feeders["W1"].transformer_loading_pct
    assert over is not None
    assert over > 100
    assert spare_capacity(building, before, "W1") == (
        f"none: T3 30 kVA at {over:.0f} % on its heaviest winding"
    )
    tables = dict(printout_tables(building, before, report.result, report.demand))
    header = tables["Panels"][0]
    assert header[:5] == ["Panel", "System", "Fed from", "Connected kVA", "Demand kVA"]
    assert len(tables["Panels"]) == 1 + len(building.panels)


def test_demo_panels_carry_their_title_blocks_to_the_printout(
    balanced: tuple[api.BuildingReport, Path, Path],
) -> None:
    """Every demo panel's schedule has a title block (demo data) and its page of the printout
    shows it, with the project, date and revision at the head of the page."""
    report, _, pdf = balanced
    pages = _pdf_text(pdf)
    for panel in report.building.panels:
        header = panel.header
        assert all((header.location, header.fed_from, header.feeder, header.enclosure))
        assert header.sccr_ka is not None
        assert all((header.project, header.date, header.revision))
        page = next(p for p in pages if f"Circuit directory, panel {panel.name}" in p)
        for shown in (header.location, header.fed_from, f"{header.sccr_ka:g} kA"):
            assert shown in page, (panel.name, shown)
        assert f"Project: {header.project}" in page
        assert f"Revision: {header.revision}" in page


def test_panel_sheets_keep_their_title_block_labels_whole(
    balanced: tuple[api.BuildingReport, Path, Path],
) -> None:
    _, workbook, _ = balanced
    book = load_workbook(workbook)
    for panel in ("MDP", "W1"):
        ws = book[panel]
        labels = [str(r[0]) for r in ws.iter_rows(max_row=20, values_only=True) if r[0] and r[1]]
        assert "Neutral bus (%)" in labels
        width = ws.column_dimensions["A"].width
        assert all(len(label) * 1.1 <= width for label in labels), (panel, width)

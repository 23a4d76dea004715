"""The panel's title block: read from a Panel sheet or title rows, checked with the cell named,
written back on the revised workbook's Panel sheet and read again unchanged, and shown in full
in the PDF (wrapped, never cut)."""

from __future__ import annotations

import dataclasses
import datetime
import re
import zipfile
from pathlib import Path

import pytest
from conftest import write_schedule
from openpyxl import load_workbook
from pypdf import PdfReader

from balancer.domain.panel import PanelHeader
from balancer.errors import ScheduleError
from balancer.io.pdf import text_width_in, wrap_to_width, write_pdf
from balancer.io.reader import read_schedule
from balancer.io.writer import write_workbook
from balancer.optimize.engine import balance

ROWS = [
    (1, "Lighting", 1, 1200),
    (3, "Receptacles", 1, 1800),
    (5, "Copier", 1, 1500),
    (2, "Rooftop unit RTU-1 on the north roof, crane-lifted feeder, do not re-land", 3, 9000),
    (7, "Unit heater", 2, 3000),
]
TITLE_BLOCK: dict[str, object] = {
    "Name": "LP-9",
    "System": "208Y/120",
    "Spaces": 24,
    "Location": "Electrical room 2.04",
    "Fed from": "MDP, circuit 9",
    "Feeder": "4 #1/0 AWG Cu + #6 AWG Cu ground",
    "Mounting": "Surface",
    "Enclosure": "3R",
    "AIC": "22,000 AIC",
    "Neutral bus": "200%",
    "Ground bus": "yes",
    "IG bar": "yes",
    "Project": "Demo job & sons",  # '&' is a code in a printed page header: it must survive
    "Date": datetime.datetime(2026, 11, 20),
    "Rev": 4,
}
EXPECTED = PanelHeader(
    location="Electrical room 2.04",
    fed_from="MDP, circuit 9",
    feeder="4 #1/0 AWG Cu + #6 AWG Cu ground",
    mounting="surface",
    enclosure="NEMA 3R",
    sccr_ka=22.0,
    neutral_pct=200.0,
    ground_bus="yes",
    isolated_ground=True,
    project="Demo job & sons",
    date="2026-11-20",
    revision="4",
)


def test_title_block_read_from_the_panel_sheet(tmp_path: Path) -> None:
    panel = read_schedule(write_schedule(tmp_path / "p.xlsx", ROWS, panel=TITLE_BLOCK))
    assert panel.header == EXPECTED


def test_title_block_read_from_title_rows(tmp_path: Path) -> None:
    path = tmp_path / "p.csv"
    path.write_text(
        "Project: Title-row job\nFed from: DP-2\nSCCR: 65 kA\nNEMA: type 12\nRevision: B\n"
        "Circuit,Description,Poles,Load (VA)\n1,Lighting,1,900\n",
        encoding="utf-8",
    )
    header = read_schedule(path).header
    assert (header.project, header.fed_from, header.sccr_ka) == ("Title-row job", "DP-2", 65.0)
    assert (header.enclosure, header.revision) == ("NEMA 12", "B")


@pytest.mark.parametrize(
    ("key", "value", "words"),
    [
        ("SCCR", "abc", "SCCR 'abc' should be a rating in kA"),
        ("SCCR", "500 kA", "SCCR '500 kA' should be a rating in kA"),
        ("Mounting", "on the wall", "Mounting 'on the wall' should be surface, flush"),
        ("Enclosure", "NEMA 9", "Enclosure 'NEMA 9' should be a NEMA enclosure type"),
        ("Neutral bus", "double", "Neutral bus 'double' should be a percentage"),
        ("Isolated ground bar", "maybe", "Isolated ground bar 'maybe' should be yes or no"),
    ],
)
def test_bad_title_block_value_names_its_cell(
    tmp_path: Path, key: str, value: str, words: str
) -> None:
    block = {"Name": "LP-9", "Spaces": 24, key: value}
    with pytest.raises(ScheduleError) as caught:
        read_schedule(write_schedule(tmp_path / "p.xlsx", ROWS, panel=block))
    problems = [(p.where, p.what) for p in caught.value.problems]
    assert ("Panel!B3", problems[0][1]) in problems  # the third row of the Panel sheet
    assert words in problems[0][1]


def test_revised_workbook_reads_back_with_title_block_and_design_loads(tmp_path: Path) -> None:
    source = write_schedule(tmp_path / "p.xlsx", ROWS, panel=TITLE_BLOCK)
    panel = read_schedule(source)
    result = balance(panel)
    out = write_workbook(result, tmp_path / "p-balanced.xlsx", balanced_on="2026-12-02")
    again = read_schedule(out)
    assert again.header == dataclasses.replace(EXPECTED, balanced="2026-12-02")
    assert (again.name, again.system, again.spaces) == (panel.name, panel.system, panel.spaces)
    loads = {c.description: (c.load_va, c.poles) for c in panel.circuits}
    assert {c.description: (c.load_va, c.poles) for c in again.circuits} == loads
    # read again and written again, the title block still holds (the Balanced date renewed)
    twice = write_workbook(balance(again), tmp_path / "p-twice.xlsx", balanced_on="2026-12-09")
    assert read_schedule(twice).header == dataclasses.replace(EXPECTED, balanced="2026-12-09")
    book = load_workbook(out)
    summary = [c.value for row in book["Summary"].iter_rows() for c in row if c.value]
    assert "4, balanced 2026-12-02" in summary
    assert "22 kA" in summary
    assert "200 %" in summary
    header = book["Layout"].oddHeader
    assert "Demo job && sons" in header.left.text  # printed as one '&'
    assert "Revision: 4, balanced 2026-12-02" in header.right.text


def test_page_header_line_breaks_are_written_as_line_breaks(tmp_path: Path) -> None:
    """Two lines a side in every sheet's page header, the break written as a newline in the
    file: openpyxl's own escape (_x000a_) is printed as it stands by LibreOffice."""
    source = write_schedule(tmp_path / "p.xlsx", ROWS, panel=TITLE_BLOCK)
    out = write_workbook(balance(read_schedule(source)), tmp_path / "out.xlsx")
    with zipfile.ZipFile(out) as book:
        sheets = [n for n in book.namelist() if n.startswith("xl/worksheets/sheet")]
        assert len(sheets) >= 5
        for name in sheets:
            xml = book.read(name).decode("utf-8")
            header = re.search(r"<oddHeader>(.*?)</oddHeader>", xml, re.DOTALL)
            assert header is not None, name
            assert "_x00" not in xml, name
            assert header.group(1).count("\n") == 2, name  # one break on each side
    for ws in load_workbook(out).worksheets:
        left, right = ws.oddHeader.left.text, ws.oddHeader.right.text
        lines = [line.strip() for line in left.split("\n")]
        assert lines == ["Project: Demo job && sons", "Panel LP-9: 208Y/120 V, 3-phase 4-wire"]
        assert right.split("\n")[0].startswith("Date: ")


def test_pdf_shows_the_title_block_and_cuts_nothing(tmp_path: Path) -> None:
    panel = read_schedule(write_schedule(tmp_path / "p.xlsx", ROWS, panel=TITLE_BLOCK))
    result = balance(panel)
    pdf = write_pdf(
        tmp_path / "p.pdf",
        result.after_panel,
        result.after,
        result=result,
        balanced_on="2026-12-02",
    )
    pages = [" ".join(p.extract_text().split()) for p in PdfReader(pdf).pages]
    first = pages[0]
    for shown in ("Electrical room 2.04", "MDP, circuit 9", "NEMA 3R", "22 kA", "200 %"):
        assert shown in first
    assert "with isolated ground bar" in first
    for text in pages:
        assert "Project: Demo job & sons" in text
        assert "Date: 2026-11-20 Revision: 4, balanced 2026-12-02" in text
        assert "…" not in text
    # the long description is in the directory whole, each of its words
    for word in ROWS[3][1].split():
        assert word in pages[1]


def test_wrapping_keeps_every_character_within_the_width() -> None:
    text = "Rooftop unit RTU-1/north-roof, a_very_long_unbroken_identifier_without_spaces_at_all"
    lines = wrap_to_width(text, 8.0, 1.0)
    assert len(lines) > 1
    assert "".join(lines).replace(" ", "") == text.replace(" ", "")
    assert all(text_width_in(line, 8.0) <= 1.0 for line in lines)


def test_crowded_summary_keeps_the_caution_and_moves_the_chart(tmp_path: Path) -> None:
    # a dozen skipped total rows make a dozen notices: the chart goes to a page of its own
    rows = [(i, f"Circuit {i}", 1, 500 + 10 * i) for i in range(1, 30)]
    rows += [(None, f"TOTAL {i}", None, 100) for i in range(14)]
    panel = read_schedule(write_schedule(tmp_path / "p.xlsx", rows, panel={"Spaces": 42}))
    result = balance(panel)
    pdf = write_pdf(tmp_path / "p.pdf", result.after_panel, result.after, result=result)
    reader = PdfReader(pdf)
    first, second = (" ".join(reader.pages[i].extract_text().split()) for i in (0, 1))
    assert "Caution" in first
    assert "authority having jurisdiction" in first
    assert "Load per line before and after balancing (VA)" in second
    assert "(continued)" in second


def test_terminal_shows_the_title_block_under_the_heading(
    tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    """check and balance print the title block as a compact block under the panel's heading,
    only the fields given, within 100 columns."""
    from balancer.cli.main import main

    source = write_schedule(tmp_path / "p.xlsx", ROWS, panel=TITLE_BLOCK)
    for argv in (
        ["check", str(source), "--no-color"],
        ["balance", str(source), "-o", str(tmp_path / "o.xlsx"), "--no-tradeoff", "--no-color"],
    ):
        assert main(argv) == 0
        lines = capsys.readouterr().out.splitlines()
        assert lines[0].startswith("Panel LP-9 | 208Y/120 V")
        block = lines[1 : next(i for i, line in enumerate(lines) if not line.strip())]
        if argv[0] == "check":
            block = block[:-1]  # the "read from" line
        assert 1 <= len(block) <= 3, block
        text = " | ".join(line.strip() for line in block)
        for shown in (
            "Location: Electrical room 2.04",
            "fed from MDP, circuit 9",
            "feeder 4 #1/0 AWG Cu + #6 AWG Cu ground",
            "Surface, NEMA 3R",
            "SCCR 22 kA",
            "neutral bus 200 %",
            "ground bus yes, with isolated ground bar",
            "Project: Demo job & sons",
            "dated 2026-11-20",
            "revision 4",
        ):
            assert shown in text, shown
        assert all(len(line) <= 100 for line in lines)


def test_terminal_leaves_out_what_the_schedule_does_not_give(
    tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    from balancer.cli.main import main

    panel = {"Name": "LP-9", "System": "208Y/120", "Spaces": 24, "Project": "Demo job"}
    source = write_schedule(tmp_path / "p.xlsx", ROWS, panel=panel)
    assert main(["check", str(source), "--no-color"]) == 0
    lines = capsys.readouterr().out.splitlines()
    assert lines[1] == "  Project: Demo job"
    assert lines[2].startswith("  read from ")
    assert "not given" not in "\n".join(lines[:3])

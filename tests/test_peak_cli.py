"""``--profile`` and ``--profiles`` from the command line, on the bundled logger sample (demo
data): the peak goal proven, every output carrying the load over time, and the refusals."""

from __future__ import annotations

import contextlib
import io
import json
from pathlib import Path
from typing import Any

import pytest
from jsonschema import Draft202012Validator
from openpyxl import load_workbook
from pypdf import PdfReader
from referencing import Registry, Resource

from balancer.cli.main import main

ROOT = Path(__file__).resolve().parents[1]
SAMPLES = ROOT / "sample_schedules"
SCHEDULE = SAMPLES / "bike-workshop-cafe-208y120.xlsx"
LOGGER = SAMPLES / "loggers" / "bike-workshop-cafe-logger.csv"
SCHEMAS = ROOT / "docs" / "schemas"
INTERVALS = 31 * 96  # 31 days of 15-minute readings


def _validator(name: str) -> Draft202012Validator:
    schemas = {p.name: json.loads(p.read_text()) for p in SCHEMAS.glob("*.schema.json")}
    registry: Registry = Registry().with_resources(
        (file, Resource.from_contents(schema)) for file, schema in schemas.items()
    )
    return Draft202012Validator(schemas[f"{name}.schema.json"], registry=registry)


def _run(argv: list[str]) -> tuple[int, str]:
    out = io.StringIO()
    with contextlib.redirect_stdout(out):
        status = main(argv)
    return status, out.getvalue()


@pytest.fixture(scope="module")
def balanced(tmp_path_factory: pytest.TempPathFactory) -> tuple[dict[str, Any], Path, Path]:
    folder = tmp_path_factory.mktemp("peak")
    workbook, pdf = folder / "revised.xlsx", folder / "revised.pdf"
    argv = ["balance", str(SCHEDULE), "--profile", str(LOGGER), "--json"]
    status, out = _run([*argv, "-o", str(workbook), "--pdf", str(pdf)])
    assert status == 0, out
    return json.loads(out), workbook, pdf


def test_peak_goal_proven_and_better_than_as_found(balanced: Any) -> None:
    data, _, _ = balanced
    _validator("balance").validate(data)
    assert data["first_goal"] == "peak"
    assert data["status"] == "optimal"
    block = data["load_over_time"]
    assert block["intervals"] == INTERVALS
    assert block["interval_min"] == 15
    before = block["widest_before"]["spread_va"]
    after = block["widest_after"]["spread_va"]
    assert after == pytest.approx(data["goal_value"], abs=0.5)
    assert after < 0.5 * before  # the sample's daytime loads crowd line A as found
    assert data["goal_bound"] <= data["goal_value"] <= data["goal_bound"] + data["tolerance_va"]
    # the connected-VA figures are reported beside the peak
    assert data["after"]["spread_va"] >= 0


def test_existing_load_from_the_data(balanced: Any) -> None:
    """NEC 220.87 from 31 days of 15-minute data: the heaviest line's peak 15-minute average,
    at 125 % (the rule's factor; docs/references.md)."""
    block = balanced[0]["load_over_time"]["existing_load"]
    assert block["rule"] == "NEC 220.87"
    assert block["enough_data"] is True
    assert block["window_min"] == 15
    assert block["existing_a"] == pytest.approx(1.25 * block["demand_a"], abs=0.1)  # JSON: 0.1 A
    assert block["days"] == pytest.approx(31.0)


def test_workbook_has_the_load_over_time(balanced: Any) -> None:
    _, workbook, _ = balanced
    book = load_workbook(workbook)
    assert {"Load over time", "Intervals"} <= set(book.sheetnames)
    sheet = book["Intervals"]
    assert sheet.max_row == INTERVALS + 1
    assert sheet["A1"].value == "Interval start"
    marked = [r for r in sheet.iter_rows(min_row=2, values_only=True) if r[-1] is not None]
    assert len(marked) == 1  # the widest interval, marked for the chart
    summary = book["Load over time"]
    assert summary._charts, "the spread chart is missing"
    assert summary.conditional_formatting, "the hour-by-line colour scale is missing"
    text = " ".join(str(c.value) for row in summary.iter_rows() for c in row if c.value)
    assert "NEC 220.87" in text
    assert "measured" in text


def test_pdf_has_a_load_over_time_page(balanced: Any) -> None:
    _, _, pdf = balanced
    pages = [p.extract_text() for p in PdfReader(pdf).pages]
    page = next(t for t in pages if "Load over time" in t and "Widest interval" in t)
    assert "NEC 220.87" in page
    assert "Mean load per line by hour of day" in page
    summary = " ".join(pages[0].split())  # the first page says what was balanced for
    assert "the load over time" in summary
    assert "connected loads" in summary


def test_check_reports_the_data_as_it_stands() -> None:
    status, out = _run(["check", str(SCHEDULE), "--profile", str(LOGGER)])
    assert status == 0, out
    assert "Load over time: 2,976 intervals of 15 min, measured" in out
    assert "widest interval as it stands" in out
    assert "NEC 220.87 from the data" in out
    status, raw = _run(["check", str(SCHEDULE), "--profile", str(LOGGER), "--json"])
    data = json.loads(raw)
    _validator("check").validate(data)
    assert data["load_over_time"]["widest_after"] is None


def test_typical_shapes_say_they_are_invented(tmp_path: Path) -> None:
    argv = ["balance", str(SCHEDULE), "--profiles", "typical", "--json"]
    status, out = _run([*argv, "-o", str(tmp_path / "typical.xlsx")])
    assert status == 0, out
    data = json.loads(out)
    _validator("balance").validate(data)
    block = data["load_over_time"]
    assert block["kind"] == "typical"
    assert block["existing_load"] is None  # NEC 220.87 needs measurements
    assert any("invented" in n for n in block["notices"])


@pytest.mark.parametrize(
    ("extra", "where"),
    [
        (["--tz", "America/Chicago"], "--tz"),
        (["--profile", str(LOGGER), "--profiles", "typical"], "--profiles"),
        (["--profile", str(LOGGER), "--objective", "neutral"], "--objective"),
    ],
)
def test_refused_with_a_reason(extra: list[str], where: str, tmp_path: Path) -> None:
    status, out = _run(["balance", str(SCHEDULE), "--json", "-o", str(tmp_path / "x.xlsx"), *extra])
    assert status == 2
    assert where in out
    assert not (tmp_path / "x.xlsx").exists()


def test_many_schedules_refuse_a_logger(tmp_path: Path) -> None:
    status, out = _run(["check", str(SCHEDULE), str(SCHEDULE), "--profile", str(LOGGER), "--json"])
    assert status == 2
    assert "one schedule at a time" in out


def test_heaviest_line_goal_from_the_command_line(tmp_path: Path) -> None:
    """``--objective line`` with a logger: the heaviest line at its worst interval, proven, and
    the JSON's heaviest interval after balancing carries that figure."""
    argv = ["balance", str(SCHEDULE), "--profile", str(LOGGER), "--objective", "line", "--json"]
    status, out = _run([*argv, "--no-tradeoff", "-o", str(tmp_path / "line.xlsx")])
    assert status == 0, out
    data = json.loads(out)
    _validator("balance").validate(data)
    assert data["first_goal"] == "peak-line"
    assert data["status"] == "optimal"
    block = data["load_over_time"]
    heaviest = max(block["heaviest_after"]["line_va"].values())
    assert heaviest == pytest.approx(data["goal_value"], abs=0.5)
    assert heaviest < max(block["heaviest_before"]["line_va"].values())

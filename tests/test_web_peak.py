"""The load over time on the web page: the page's choices become the pipeline's
:class:`~balancer.api.LoadOverTime`, the views carry the report's own figures and draw them
(chart, heat map) as escaped SVG, and through the HTTP API a logger file is bounded, kept in
the session's folder under the server's name, read with located problems, and balanced on."""

from __future__ import annotations

import io
import itertools
import json
import time
import xml.etree.ElementTree as ET
from collections.abc import Iterator
from pathlib import Path
from typing import Any

import numpy as np
import openpyxl
import pytest
from conftest import SAMPLES
from logger_files import stamps, write_logger
from starlette.testclient import TestClient

from balancer import api
from balancer.domain.result import BalanceOptions
from balancer.errors import ScheduleError
from balancer.report.json import check_json
from balancer.web import svg, views
from balancer.web.app import SESSION_HEADER, create_app
from balancer.web.choices import balance_choices, check_choices

SVG_NS = "{http://www.w3.org/2000/svg}"
BIKE = SAMPLES / "bike-workshop-cafe-208y120.xlsx"
BIKE_LOGGER = SAMPLES / "loggers" / "bike-workshop-cafe-logger.csv"
DAYS = 8  # more than the week the chart shows
SCHEDULE = (
    "Circuit,Description,Poles,Trip,Load (VA)\n"
    "1,demo day heater,1,20,1500\n"
    "2,demo day lights,1,20,1500\n"
    "3,demo night charger,1,20,1500\n"
    "4,demo fridge,1,20,600\n"
    "5,demo night pump,1,20,1500\n"
    "6,demo receptacles,1,20,600\n"
)


def _logger(path: Path) -> Path:
    """Demo readings in VA over eight days: circuits 1 and 2 (both on line A) draw in the day
    (08:00 to 18:00), 3 and 5 at night, 4 and 6 a steady 600 VA."""
    times = stamps("2026-03-02 00:00", DAYS * 96)
    rows = []
    for t in times:
        day = 8 <= int(t[11:13]) < 18
        rows.append((1500 if day else 50, 1400 if day else 0, 0 if day else 1300, 600,
                     0 if day else 1200, 600))  # fmt: skip
    header = ["Time", *[f"{c} (VA)" for c in range(1, 7)]]
    return write_logger(path, header, times, rows)


@pytest.fixture
def schedule(tmp_path: Path) -> Path:
    path = tmp_path / "demo-day-night.csv"
    path.write_text(SCHEDULE, encoding="utf-8")
    return path


@pytest.fixture
def logger(tmp_path: Path) -> Path:
    return _logger(tmp_path / "demo-day-night-logger.csv")


# ------------------------------------------------------------------ choices


def test_no_load_over_time_by_default() -> None:
    assert check_choices({}).over_time.load_over_time(Path("unused.csv")) is None
    chosen = balance_choices({})
    assert chosen.over_time.load_over_time(None) is None
    assert chosen.field.tradeoff is None


def test_typical_shapes_need_no_file() -> None:
    chosen = check_choices({"load": "typical"})
    assert chosen.over_time.load_over_time(None) == api.LoadOverTime(shapes="typical")


def test_the_logger_is_the_sessions_upload_with_its_zone(tmp_path: Path) -> None:
    stored = tmp_path / "upload-1" / "logger" / "readings.csv"
    chosen = balance_choices({"load": "logger", "tz": " America/Chicago "})
    assert chosen.over_time.load_over_time(stored) == api.LoadOverTime(
        logger=stored, tz="America/Chicago"
    )


def test_a_logger_choice_without_an_upload_says_so() -> None:
    with pytest.raises(ScheduleError) as caught:
        check_choices({"load": "logger"}).over_time.load_over_time(None)
    assert [p.where for p in caught.value.problems] == ["Logger file"]


@pytest.mark.parametrize(
    ("data", "where", "words"),
    [
        ({"load": "file:/etc/passwd"}, "Load over time", "is not one of logger, typical"),
        ({"load": "logger", "tz": "Mars/Olympus"}, "Logger time zone", "not a known time zone"),
        ({"load": "logger", "tz": "../../etc/passwd"}, "Logger time zone", "not a known"),
        ({"load": "logger", "tz": "A" * 65}, "Logger time zone", "longer than 64"),
        ({"load": "logger", "tz": 5}, "Logger time zone", "is not text"),
        ({"load": "typical", "tz": "America/Chicago"}, "Logger time zone", "logger file only"),
        ({"tz": "America/Chicago"}, "Logger time zone", "logger file only"),
    ],
)
def test_wrong_load_over_time_options_are_named(
    data: dict[str, Any], where: str, words: str
) -> None:
    for read in (check_choices, balance_choices):
        with pytest.raises(ScheduleError) as caught:
            read(data)
        problems = caught.value.problems
        assert [p.where for p in problems] == [where]
        assert words in problems[0].what


def test_the_load_over_time_sets_the_goal() -> None:
    with pytest.raises(ScheduleError) as caught:
        balance_choices({"load": "typical", "goal": "neutral"})
    assert [p.where for p in caught.value.problems] == ["Goal"]
    assert balance_choices({"load": "typical", "goal": "spread"}).options.objective == "spread"


def test_the_trade_off_table_over_a_series_only_on_request() -> None:
    assert balance_choices({"load": "typical"}).field.tradeoff is None  # the pipeline: off
    assert balance_choices({"load": "typical", "peak_table": True}).field.tradeoff is True
    assert balance_choices({"peak_table": True}).field.tradeoff is None  # no series: as before


# ------------------------------------------------------------------ views and drawings


def _parsed(drawing: str) -> ET.Element:
    root = ET.fromstring(drawing)  # well-formed XML, or this raises
    assert root.tag == f"{SVG_NS}svg"
    return root


def test_check_view_without_a_series_has_no_load_over_time(schedule: Path) -> None:
    assert views.check_view(api.run_check(schedule), "x.csv")["over_time"] is None


def test_check_view_draws_the_series_as_it_stands(schedule: Path, logger: Path) -> None:
    report = api.run_check(schedule, over_time=api.LoadOverTime(logger=logger))
    view = views.check_view(report, "demo.csv")
    peak = report.peak
    assert peak is not None
    shown = view["over_time"]
    assert shown["measured"] is True
    assert shown["basis"] == f"measured, from {logger.name}"
    expected = check_json(report)["load_over_time"]
    assert expected["widest_before"]["spread_va"] > 0
    assert view["check"]["load_over_time"] == expected
    widest = peak.worst(after=False)
    # by hand: spaces 1, 2 are line A, 3, 4 line B, 5, 6 line C; in the day A carries
    # 1,500 + 1,400 = 2,900 VA, B and C 600 each: a spread of 2,300 VA (at night 1,850)
    assert peak.before_spread_va[widest] == pytest.approx(2300.0)
    window = peak.window()
    assert window.stop - window.start == 7 * 96  # the week around the widest interval
    assert shown["window"] == {
        "first": peak.stamp(window.start),
        "last": peak.stamp(window.stop - 1),
    }
    chart = _parsed(shown["chart"])
    label = chart.get("aria-label", "")
    assert f"widest as it stands: {peak.stamp(widest)}, 2,300 VA" in label
    assert "arranged" not in label  # nothing was balanced
    assert len(chart.findall(f"{SVG_NS}polyline")) == 1
    heat = _parsed(shown["heat"])
    rows = [t.text for t in heat.iter(f"{SVG_NS}text") if t.text and " · line " in t.text]
    assert rows == ["As it stands · line A", "As it stands · line B", "As it stands · line C"]
    assert len([r for r in heat.iter(f"{SVG_NS}rect") if r.get("height") == "26"]) == 3 * 24


def test_typical_shapes_say_they_are_invented() -> None:
    report = api.run_check(
        SAMPLES / "office-208y120.xlsx", over_time=api.LoadOverTime(shapes="typical")
    )
    shown = views.check_view(report, "office.xlsx")["over_time"]
    assert shown["measured"] is False
    assert shown["basis"] == "typical load shapes, invented"
    assert report.peak is not None
    assert report.peak.existing is None  # no NEC 220.87 from shapes


def test_arrangement_view_draws_before_and_after(schedule: Path, logger: Path) -> None:
    report = api.run_balance(
        schedule,
        BalanceOptions(time_limit_s=20),
        over_time=api.LoadOverTime(logger=logger),
    )
    peak = report.peak
    assert peak is not None
    assert peak.after_spread_va is not None
    view = views.arrangement_view(report, report, "demo.csv", None)
    block = view["balance"]["load_over_time"]
    assert block["widest_after"]["spread_va"] == pytest.approx(report.result.goal_value)
    assert block["widest_after"]["spread_va"] < block["widest_before"]["spread_va"]
    assert view["table"]["goal"] == "peak"
    assert view["table"]["over_time"] is True
    assert view["table"]["rows"] == []  # off by default with a series
    assert view["table"]["recommended"]["goal_value"] == pytest.approx(report.result.goal_value)
    chart = _parsed(view["over_time"]["chart"])
    assert len(chart.findall(f"{SVG_NS}polyline")) == 2  # as it stands and arranged
    after = peak.worst(after=True)
    spread = peak.after_spread_va[after]
    assert f"widest arranged: {peak.stamp(after)}, {spread:,.0f} VA" in chart.get("aria-label", "")
    heat = _parsed(view["over_time"]["heat"])
    rows = [t.text for t in heat.iter(f"{SVG_NS}text") if t.text and " · line " in t.text]
    assert rows[3:] == ["Arranged · line A", "Arranged · line B", "Arranged · line C"]


def test_user_text_in_a_drawing_stays_text() -> None:
    hostile = '<script>alert("x")</script> & "quoted"'
    chart = svg.spread_chart(
        ["2026-03-02 00:00", "2026-03-02 00:15"],
        [1.0, 2.0],
        None,
        None,
        svg.Widest(1, hostile, 2.0),
    )
    heat = svg.hour_heat_map(["A"], [(hostile, [[1.0]] * 24)])
    for drawing in (chart, heat):
        root = _parsed(drawing)
        assert not [e for e in root.iter() if e.tag.endswith("script")]
        assert any(hostile in (t.text or "") for t in root.iter(f"{SVG_NS}text"))


def test_the_heat_scale_runs_light_to_dark() -> None:
    def luminance(colour: str) -> float:
        r, g, b = (int(colour[i : i + 2], 16) for i in (1, 3, 5))
        return 0.2126 * r + 0.7152 * g + 0.0722 * b

    shades = [luminance(svg.heat_colour(f)) for f in np.linspace(0, 1, 11)]
    assert svg.heat_colour(0.0) == svg.HEAT_STOPS[0]
    assert svg.heat_colour(1.0) == svg.HEAT_STOPS[-1]
    assert all(a > b for a, b in itertools.pairwise(shades))


def test_an_hour_with_no_data_is_drawn_hollow_and_said() -> None:
    table: list[list[float | None]] = [[100.0 * h] for h in range(24)]
    table[3] = [None]
    heat = svg.hour_heat_map(["A"], [("As it stands", table)])
    root = _parsed(heat)
    assert len([r for r in root.iter(f"{SVG_NS}rect") if r.get("fill") == "url(#hollow)"]) == 2
    assert any(t.text == "no data" for t in root.iter(f"{SVG_NS}text"))
    assert "scale 0 to 2,300 VA" in root.get("aria-label", "")


def test_a_thinned_chart_keeps_every_peak() -> None:
    values = np.array([1.0, 9.0, 2.0, 3.0, 8.0, 1.0, 7.0])
    assert views._thinned(values, 3) == [9.0, 8.0, 7.0]
    assert views._thinned(values, 1) == list(values)


# ------------------------------------------------------------------ through the HTTP API


class Tab:
    def __init__(self, client: TestClient) -> None:
        self.client = client
        self.headers = {SESSION_HEADER: client.post("/api/session").json()["session"]}

    def send(self, url: str, path: Path, name: str | None = None) -> Any:
        headers = {**self.headers, "X-Filename": name or path.name}
        return self.client.post(url, content=path.read_bytes(), headers=headers)

    def post(self, url: str, data: Any = None) -> Any:
        return self.client.post(url, json=data or {}, headers=self.headers)

    def get(self, url: str) -> Any:
        return self.client.get(url, headers=self.headers)

    def balance(self, options: dict[str, Any]) -> tuple[str, dict[str, Any]]:
        started = self.post("/api/balance", options)
        assert started.status_code == 200, started.text
        job = started.json()["job"]
        deadline = time.monotonic() + 120
        while time.monotonic() < deadline:
            status = self.get(f"/api/jobs/{job}").json()
            if status["state"] != "running":
                return job, dict(status)
            time.sleep(0.2)
        raise AssertionError("the balance did not finish")


@pytest.fixture
def client() -> Iterator[TestClient]:
    with TestClient(create_app(allowed_hosts=["testserver"])) as test_client:
        yield test_client


def test_a_logger_needs_its_schedule_first(client: TestClient, logger: Path) -> None:
    assert Tab(client).send("/api/logger", logger).status_code == 409


def test_a_logger_is_a_csv_file(client: TestClient, schedule: Path, logger: Path) -> None:
    tab = Tab(client)
    assert tab.send("/api/schedule", schedule).status_code == 200
    answer = tab.send("/api/logger", logger, "readings.xlsx")
    assert answer.status_code == 415
    assert ".csv" in answer.json()["error"]


def test_the_logger_upload_is_bounded(schedule: Path, logger: Path) -> None:
    with TestClient(create_app(allowed_hosts=["testserver"], logger_limit=1000)) as small:
        tab = Tab(small)
        assert tab.send("/api/schedule", schedule).status_code == 200
        answer = tab.send("/api/logger", logger)
        assert answer.status_code == 413
        assert "larger than" in answer.json()["error"]
        again = tab.post("/api/check", {"load": "logger"})  # nothing was kept
        assert again.status_code == 422
        assert again.json()["problems"][0]["where"] == "Logger file"


def test_the_logger_limit_is_the_readers(client: TestClient) -> None:
    from balancer.intervals.logger import MAX_FILE_BYTES

    assert client.post("/api/session").json()["logger_limit_bytes"] == MAX_FILE_BYTES


def test_a_wrong_logger_gives_located_problems_and_is_not_kept(
    client: TestClient, schedule: Path, tmp_path: Path
) -> None:
    bad = write_logger(
        tmp_path / "clamp.csv",
        ["Time", "1 (VA)", "77 (A)"],
        stamps("2026-03-02 00:00", 3),
        [(100, 2), ("lots", 2), (100, 2)],
    )
    tab = Tab(client)
    assert tab.send("/api/schedule", schedule).status_code == 200
    answer = tab.send("/api/logger", bad)
    assert answer.status_code == 422
    body = answer.json()
    assert "clamp.csv" in body["error"]
    wheres = [p["where"] for p in body["problems"]]
    assert 'file row 1, column "77 (A)"' in wheres
    assert str(tmp_path) not in json.dumps(body)
    assert "Traceback" not in json.dumps(body)
    assert tab.post("/api/check", {"load": "logger"}).json()["problems"][0]["where"] == (
        "Logger file"
    )


def test_the_logger_stays_in_the_session_under_the_servers_name(
    client: TestClient, schedule: Path, logger: Path
) -> None:
    tab = Tab(client)
    assert tab.send("/api/schedule", schedule).status_code == 200
    answer = tab.send("/api/logger", logger, "../../outside/<b>readings</b>.csv")
    assert answer.status_code == 200, answer.text
    root = client.app.state.web.sessions.root  # type: ignore[attr-defined]
    stored = [p for p in root.rglob("*.csv") if "logger" in p.parts]
    assert len(stored) == 1
    assert stored[0].read_bytes() == logger.read_bytes()
    assert not (root.parent / "outside").exists()
    assert stored[0].name == "b_.csv"  # the name after its last slash, kept to plain characters
    assert stored[0].is_relative_to(root)
    assert answer.json()["over_time"]["basis"] == "measured, from b_.csv"
    assert tab.client.delete("/api/logger", headers=tab.headers).status_code == 200
    assert not [p for p in root.rglob("*.csv") if "logger" in p.parts]


def test_the_check_with_a_logger_has_the_command_lines_figures(client: TestClient) -> None:
    tab = Tab(client)
    assert tab.send("/api/schedule", BIKE).status_code == 200
    answer = tab.send("/api/logger", BIKE_LOGGER)
    assert answer.status_code == 200, answer.text
    shown = answer.json()["check"]["load_over_time"]
    expected = check_json(api.run_check(BIKE, over_time=api.LoadOverTime(logger=BIKE_LOGGER)))
    assert shown == expected["load_over_time"]
    assert shown["existing_load"]["rule"] == "NEC 220.87"
    # the time zone and the rule set go with the upload; a new schedule drops the logger
    zoned = tab.post("/api/check", {"load": "logger", "tz": "America/Chicago"})
    assert zoned.status_code == 200
    notices = zoned.json()["check"]["load_over_time"]["notices"]
    assert any("America/Chicago not needed" in n for n in notices)
    assert tab.send("/api/schedule", BIKE).status_code == 200
    assert tab.post("/api/check", {"load": "logger"}).status_code == 422


def test_balance_with_a_logger_and_its_downloads(
    client: TestClient, schedule: Path, logger: Path
) -> None:
    tab = Tab(client)
    assert tab.send("/api/schedule", schedule).status_code == 200
    assert tab.send("/api/logger", logger).status_code == 200
    refused = tab.post("/api/balance", {"load": "logger", "goal": "line"})
    assert refused.status_code == 422
    assert refused.json()["problems"][0]["where"] == "Goal"
    job, status = tab.balance({"load": "logger", "time_limit_s": 20})
    assert status["state"] == "done", status
    assert status["table"]["goal"] == "peak"
    assert status["table"]["rows"] == []
    view = tab.get(f"/api/jobs/{job}/rows/recommended").json()
    block = view["balance"]["load_over_time"]
    assert block["widest_after"]["spread_va"] < block["widest_before"]["spread_va"]
    assert block["source"] == logger.name
    assert view["over_time"]["chart"].startswith("<svg")
    book = openpyxl.load_workbook(
        io.BytesIO(tab.get(f"/api/jobs/{job}/rows/recommended/xlsx").content)
    )
    assert {"Load over time", "Intervals"} <= set(book.sheetnames)
    intervals = book["Intervals"]
    assert intervals.max_row == 1 + DAYS * 96
    figures = json.loads(tab.get(f"/api/jobs/{job}/rows/recommended/json").content)
    assert figures["load_over_time"] == block
    from pypdf import PdfReader

    pdf = PdfReader(io.BytesIO(tab.get(f"/api/jobs/{job}/rows/recommended/pdf").content))
    assert any("Load over time" in (p.extract_text() or "") for p in pdf.pages)


def test_balance_with_typical_shapes(client: TestClient) -> None:
    tab = Tab(client)
    assert tab.send("/api/schedule", SAMPLES / "salon-208y120.csv").status_code == 200
    job, status = tab.balance({"load": "typical", "time_limit_s": 20})
    assert status["state"] == "done", status
    view = tab.get(f"/api/jobs/{job}/rows/recommended").json()
    assert view["over_time"]["basis"] == "typical load shapes, invented"
    block = view["balance"]["load_over_time"]
    assert block["kind"] == "typical"
    assert block["existing_load"] is None  # NEC 220.87 needs measured data
    assert block["widest_after"]["spread_va"] <= block["widest_before"]["spread_va"]

"""``balancer serve``'s HTTP API, through Starlette's TestClient: the figures are the command
line's, bad files give located problems, uploads are bounded, sessions do not mix, nothing
names a file on disk, and the headers keep the page to itself."""

from __future__ import annotations

import json
import stat
import threading
import time
from collections.abc import Iterator
from io import BytesIO
from pathlib import Path
from typing import Any

import openpyxl
import pytest
from conftest import ROOT, SAMPLES, Cli
from starlette.routing import Mount, Route
from starlette.testclient import TestClient

from balancer import api
from balancer.domain.result import BalanceOptions
from balancer.errors import ScheduleError
from balancer.field.workorder import replay
from balancer.io.reader import read_schedule
from balancer.report.json import balance_json
from balancer.web.app import SESSION_HEADER, create_app

CLINIC = SAMPLES / "clinic-after-additions-208y120.xlsx"
BAKERY = SAMPLES / "bakery-120-240.xlsx"
BAD = ROOT / "tests" / "data" / "bad"
SCHEDULES = sorted([*SAMPLES.glob("*.xlsx"), *SAMPLES.glob("*.csv")])


class Tab:
    """One browser tab: its own session."""

    def __init__(self, client: TestClient) -> None:
        self.client = client
        self.id = client.post("/api/session").json()["session"]
        self.headers = {SESSION_HEADER: self.id}

    def upload(self, path: Path, name: str | None = None) -> Any:
        return self.client.post(
            "/api/schedule",
            content=path.read_bytes(),
            headers={**self.headers, "X-Filename": name or path.name},
        )

    def get(self, url: str) -> Any:
        return self.client.get(url, headers=self.headers)

    def post(self, url: str, data: Any = None) -> Any:
        return self.client.post(url, json=data or {}, headers=self.headers)

    def balance(self, options: dict[str, Any], timeout_s: float = 120) -> dict[str, Any]:
        started = self.post("/api/balance", options)
        assert started.status_code == 200, started.text
        job = started.json()["job"]
        deadline = time.monotonic() + timeout_s
        while time.monotonic() < deadline:
            status = self.get(f"/api/jobs/{job}").json()
            if status["state"] != "running":
                return dict(status)
            time.sleep(0.2)
        raise AssertionError(f"job {job} still running after {timeout_s} s")


@pytest.fixture
def client() -> Iterator[TestClient]:
    with TestClient(create_app(allowed_hosts=["testserver"])) as test_client:
        yield test_client


def _without_source(data: dict[str, Any]) -> dict[str, Any]:
    data = json.loads(json.dumps(data))
    data["panel"].pop("source")
    return data


@pytest.mark.parametrize("schedule", SCHEDULES, ids=lambda p: p.name)
def test_each_sample_shows_the_figures_of_check_json(
    client: TestClient, cli: Cli, schedule: Path
) -> None:
    answer = Tab(client).upload(schedule)
    assert answer.status_code == 200, answer.text
    shown = answer.json()["check"]
    assert shown["panel"]["source"] == schedule.name  # no server path
    assert _without_source(shown) == _without_source(cli.json("check", str(schedule)))


def test_basis_and_rule_set_change_the_check_as_on_the_command_line(
    client: TestClient, cli: Cli
) -> None:
    tab = Tab(client)
    tab.upload(CLINIC)
    shown = tab.post("/api/check", {"basis": "measured", "rules": "nec2020"}).json()["check"]
    expected = cli.json("check", str(CLINIC), "--basis", "measured", "--rules", "nec2020")
    assert _without_source(shown) == _without_source(expected)
    assert shown["loads"] != tab.post("/api/check", {}).json()["check"]["loads"]


def _cli_problems(path: Path) -> list[dict[str, str]]:
    with pytest.raises(ScheduleError) as caught:
        read_schedule(path)
    return [
        {"where": p.where.replace(str(path), path.name), "what": p.what.replace(str(path), "")}
        for p in caught.value.problems
    ]


@pytest.mark.parametrize("name", ["not_a_workbook.xlsx", "load_not_a_number.csv"])
def test_a_bad_file_gives_the_located_problems(client: TestClient, name: str) -> None:
    answer = Tab(client).upload(BAD / name)
    assert answer.status_code == 422
    body = answer.json()
    assert body["problems"] == _cli_problems(BAD / name)
    text = json.dumps(body)
    assert "Traceback" not in text
    assert "/tmp" not in text
    assert str(BAD) not in text


def test_a_non_number_load_names_its_cell(client: TestClient) -> None:
    problems = Tab(client).upload(BAD / "load_not_a_number.csv").json()["problems"]
    assert problems == [
        {"where": "load_not_a_number.csv!E3", "what": "load 'approx 1.2' is not a number"}
    ]


def test_an_unexpected_failure_is_logged_not_shown(
    client: TestClient, monkeypatch: pytest.MonkeyPatch, caplog: pytest.LogCaptureFixture
) -> None:
    def broken(*args: Any, **kwargs: Any) -> Any:
        raise RuntimeError("secret internals /srv/thing")

    monkeypatch.setattr(api, "check_panel", broken)
    answer = Tab(client).upload(CLINIC)
    assert answer.status_code == 500
    assert "secret" not in answer.text
    assert "Traceback" not in answer.text
    assert "server's log" in answer.json()["error"]
    assert "secret internals" in caplog.text


def test_an_oversized_upload_is_refused(client: TestClient) -> None:
    tab = Tab(client)
    big = b"x" * (20 * 1024 * 1024 + 1)
    answer = client.post(
        "/api/schedule", content=big, headers={**tab.headers, "X-Filename": "big.csv"}
    )
    assert answer.status_code == 413
    assert "larger than 20 MB" in answer.json()["error"]
    assert tab.post("/api/check").status_code == 409  # nothing was kept


def test_the_limit_holds_without_a_content_length() -> None:
    with TestClient(create_app(allowed_hosts=["testserver"], upload_limit=1000)) as client:
        tab = Tab(client)

        def chunks() -> Iterator[bytes]:  # sent chunked: no Content-Length to trust
            for _ in range(50):
                yield b"Circuit,Load\n" * 10

        answer = client.post(
            "/api/schedule", content=chunks(), headers={**tab.headers, "X-Filename": "a.csv"}
        )
        assert answer.status_code == 413
        assert "content-length" not in {k.lower() for k in answer.request.headers}


def test_only_xlsx_and_csv_are_taken(client: TestClient) -> None:
    answer = Tab(client).upload(CLINIC, name="clinic.exe")
    assert answer.status_code == 415


def test_two_sessions_at_once_do_not_mix(client: TestClient) -> None:
    first, second = Tab(client), Tab(client)
    answers: dict[str, Any] = {}

    def upload(tab: Tab, path: Path) -> None:
        answers[tab.id] = tab.upload(path).json()

    threads = [
        threading.Thread(target=upload, args=(first, CLINIC)),
        threading.Thread(target=upload, args=(second, BAKERY)),
    ]
    for thread in threads:
        thread.start()
    for thread in threads:
        thread.join(60)
    assert answers[first.id]["check"]["panel"]["name"] == read_schedule(CLINIC).name
    assert answers[second.id]["check"]["panel"]["name"] == read_schedule(BAKERY).name
    assert first.post("/api/check").json()["name"] == CLINIC.name
    assert second.post("/api/check").json()["name"] == BAKERY.name
    job = second.post("/api/balance", {"tradeoff_moves": 1}).json()["job"]
    assert first.get(f"/api/jobs/{job}").status_code == 404  # another tab's job is not found
    second.post(f"/api/jobs/{job}/cancel")


def test_a_request_without_its_session_is_refused(client: TestClient) -> None:
    assert client.post("/api/check").status_code == 401
    answer = client.post("/api/check", headers={SESSION_HEADER: "guessed"})
    assert answer.status_code == 401
    assert "reload" in answer.json()["error"]


def test_no_endpoint_takes_a_file_path(client: TestClient, tmp_path: Path) -> None:
    app = client.app
    params = set()
    for route in app.routes:  # type: ignore[attr-defined]
        if isinstance(route, Route):
            params |= set(route.param_convertors)
        else:
            assert isinstance(route, Mount)
            assert route.path == "/static"
    assert params == {"job", "row", "kind"}
    tab = Tab(client)
    answer = tab.upload(SAMPLES / "salon-208y120.csv", name="../../../etc/salon-208y120.csv")
    assert answer.status_code == 200
    assert answer.json()["name"] == "salon-208y120.csv"
    rule_file = tmp_path / "rules.toml"
    rule_file.write_text("not read", encoding="utf-8")
    for options in ({"rules": str(rule_file)}, {"rules": "/etc/passwd"}):
        refused = tab.post("/api/check", options)
        assert refused.status_code == 422
        assert refused.json()["problems"][0]["where"] == "Demand rule set"
    assert client.get("/static/../pyproject.toml").status_code == 404
    assert client.get("/static/%2e%2e/app.py").status_code == 404


def test_options_are_checked_and_named(client: TestClient) -> None:
    tab = Tab(client)
    tab.upload(BAKERY)
    answer = tab.post(
        "/api/balance", {"goal": "cheapest", "within_pct": 500, "max_moves": 1.5, "locks": []}
    )
    assert answer.status_code == 422
    where = {p["where"] for p in answer.json()["problems"]}
    assert where == {"Goal", "Margin (points)", "Most moves", "locks"}
    transformer = tab.post("/api/balance", {"goal": "transformer"})
    assert transformer.json()["problems"][0]["where"] == "Transformer kVA"
    unknown = tab.balance({"locks": {"no-such-circuit": True}})
    assert unknown["state"] == "failed"
    assert unknown["problems"] == [
        {"where": "circuit no-such-circuit", "what": "is not in the schedule"}
    ]


def test_security_headers(client: TestClient) -> None:
    page = client.get("/")
    policy = page.headers["content-security-policy"]
    assert "default-src 'self'" in policy
    assert "script-src 'self'" in policy
    assert "unsafe-inline" not in policy
    assert "unsafe-eval" not in policy
    assert page.headers["x-content-type-options"] == "nosniff"
    assert page.headers["x-frame-options"] == "DENY"
    assert client.post("/api/session").headers["cache-control"] == "no-store"
    assert "{{caution}}" not in page.text
    assert "qualified persons" in page.text


def test_another_host_name_is_refused() -> None:
    with TestClient(create_app()) as client:  # the default: loopback names only
        assert client.get("/", headers={"host": "attacker.example"}).status_code == 400
        assert client.get("/", headers={"host": "127.0.0.1:8765"}).status_code == 200


def test_the_page_and_its_assets_are_local() -> None:
    static = ROOT / "balancer" / "web" / "static"
    for path in static.iterdir():
        # an SVG's namespace name is an identifier, not something fetched
        text = path.read_text(encoding="utf-8").replace('xmlns="http://www.w3.org/2000/svg"', "")
        assert "http://" not in text
        assert "https://" not in text
        assert "//cdn" not in text
    script = (static / "app.js").read_text(encoding="utf-8")
    for markup in ("innerHTML", "outerHTML", "insertAdjacentHTML", "document.write", "eval("):
        assert markup not in script
    assert "<script>" not in (static / "index.html").read_text(encoding="utf-8")


def test_uploads_live_in_a_private_folder_removed_at_stop() -> None:
    app = create_app(allowed_hosts=["testserver"])
    with TestClient(app) as client:
        Tab(client).upload(CLINIC)
        root = app.state.web.sessions.root
        assert stat.S_IMODE(root.stat().st_mode) == 0o700
        stored = list(root.rglob(CLINIC.name))
        assert len(stored) == 1
        assert stored[0].read_bytes() == CLINIC.read_bytes()
        for folder in [p for p in root.rglob("*") if p.is_dir()]:
            assert stat.S_IMODE(folder.stat().st_mode) == 0o700
    assert not root.exists()


def test_balance_rows_downloads_and_locks(client: TestClient) -> None:
    tab = Tab(client)
    tab.upload(BAKERY)
    options = {"tradeoff_moves": 3, "time_limit_s": 10}
    status = tab.balance(options)
    assert status["state"] == "done", status
    table = status["table"]
    expected = api.run_balance(
        BAKERY,
        BalanceOptions(time_limit_s=10),
        choices=api.FieldChoices(tradeoff_moves=3),
        demand=api.DemandOptions(),
    )
    wanted = balance_json(expected)
    assert [(r["moves"], r["spread_va"], r["status"]) for r in table["rows"]] == [
        (r["moves"], r["spread_va"], r["status"]) for r in wanted["tradeoff"]
    ]
    assert table["recommendation"]["message"] == wanted["recommendation"]["message"]
    job = status["job"]
    shown = tab.get(f"/api/jobs/{job}/rows/recommended").json()
    assert shown["balance"]["after"] == wanted["after"]
    assert shown["balance"]["status"] == wanted["status"]
    assert shown["cautions"]
    assert "qualified persons" in shown["cautions"][0]

    last = len(table["rows"]) - 1
    row = tab.get(f"/api/jobs/{job}/rows/{last}").json()
    assert len(row["balance"]["moves"]) <= table["rows"][last]["moves"]
    assert row["balance"]["after"]["spread_va"] == table["rows"][last]["spread_va"]
    moved = {b["id"] for b in row["layout"]["breakers"] if b["moved"]}
    assert moved == {m["id"] for m in row["balance"]["moves"]}

    book = tab.get(f"/api/jobs/{job}/rows/{last}/xlsx")
    assert book.status_code == 200
    assert f"-{table['rows'][last]['moves']}-moves.xlsx" in book.headers["content-disposition"]
    workbook = openpyxl.load_workbook(BytesIO(book.content))
    assert "Work order" in workbook.sheetnames or not row["balance"]["work_order"]
    pdf = tab.get(f"/api/jobs/{job}/rows/{last}/pdf")
    assert pdf.content.startswith(b"%PDF")
    figures = tab.get(f"/api/jobs/{job}/rows/{last}/json").json()
    assert figures["after"] == row["balance"]["after"]
    assert figures["panel"]["source"] == BAKERY.name
    assert tab.get(f"/api/jobs/{job}/rows/99").status_code == 422
    assert tab.get(f"/api/jobs/{job}/rows/1/exe").status_code == 404

    if row["balance"]["moves"]:
        held = row["balance"]["moves"][0]["id"]
        locked = tab.balance({**options, "locks": {held: True}})
        assert locked["state"] == "done"
        again = tab.get(f"/api/jobs/{locked['job']}/rows/recommended").json()
        assert held not in {m["id"] for m in again["balance"]["moves"]}
        assert next(b for b in again["layout"]["breakers"] if b["id"] == held)["locked"]


def test_cancel_stops_the_worker_and_discards_its_result(client: TestClient) -> None:
    tab = Tab(client)
    tab.upload(CLINIC)
    job_id = tab.post("/api/balance", {"within_pct": 0}).json()["job"]
    session = next(iter(client.app.state.web.sessions._sessions.values()))  # type: ignore[attr-defined]
    job = session.jobs[job_id]
    assert tab.post(f"/api/jobs/{job_id}/cancel").json()["state"] == "cancelled"
    assert not job.alive()
    time.sleep(0.5)
    status = tab.get(f"/api/jobs/{job_id}").json()
    assert status["state"] == "cancelled"
    assert "table" not in status
    assert tab.get(f"/api/jobs/{job_id}/rows/recommended").status_code == 409


def test_balance_row_plans_the_rows_own_work_order() -> None:
    report = api.run_balance(
        BAKERY, BalanceOptions(time_limit_s=10), choices=api.FieldChoices(tradeoff_moves=3)
    )
    table = report.field.table
    assert table is not None
    assert table.rows
    for index, row in enumerate(table.rows):
        chosen = api.balance_row(report, index)
        assert chosen.result.after_panel == table.results[index].after_panel
        assert chosen.result.status is row.status
        assert chosen.field.order is not None
        final = replay(chosen.result.before_panel, chosen.field.order)
        assert final == {c.id: c.spaces for c in chosen.result.after_panel.circuits}
    assert api.balance_row(report, None) is report
    with pytest.raises(ScheduleError):
        api.balance_row(report, len(table.rows))


def test_lock_circuits() -> None:
    panel = read_schedule(BAKERY)
    first = panel.circuits[0]
    locked = api.lock_circuits(panel, {first.id: not first.locked})
    assert locked.circuit(first.id).locked is not first.locked
    assert locked.circuits[1:] == panel.circuits[1:]
    with pytest.raises(ScheduleError, match="not in the schedule"):
        api.lock_circuits(panel, {"nope": True})

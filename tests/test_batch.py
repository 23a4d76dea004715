"""Batch runs: many schedules in parallel, one bad file reported without stopping the rest.

Schedules are the bundled demo samples (invented data) copied into a temporary folder.
"""

from __future__ import annotations

import io
import shutil
from pathlib import Path

import pytest
from openpyxl import load_workbook

from balancer.batch import (
    SUMMARY_NAME,
    Row,
    Task,
    exit_status,
    find_schedules,
    make_tasks,
    run_batch,
    summary_text,
    write_summary,
)
from balancer.cli.batch import Progress
from balancer.domain.result import BalanceOptions
from balancer.io.reader import PanelOverrides

SAMPLES = Path(__file__).resolve().parents[1] / "sample_schedules"
GOOD = ["office-208y120.xlsx", "salon-208y120.csv", "bakery-120-240.xlsx"]


@pytest.fixture
def folder(tmp_path: Path) -> Path:
    for name in GOOD:
        shutil.copy(SAMPLES / name, tmp_path / name)
    # a workbook that is not a zip file at all: the reader must name it and say why
    (tmp_path / "corrupt.xlsx").write_bytes(b"PK\x03\x04 this is not really a workbook" * 20)
    # what balancer writes itself, and a spreadsheet lock file: never read as inputs
    (tmp_path / "office-208y120-balanced.xlsx").write_bytes(b"")
    (tmp_path / "~$office-208y120.xlsx").write_bytes(b"")
    (tmp_path / SUMMARY_NAME).write_bytes(b"")
    return tmp_path


def test_find_schedules_skips_outputs_and_lock_files(folder: Path) -> None:
    names = [p.name for p in find_schedules([folder])]
    assert names == sorted([*GOOD, "corrupt.xlsx"])


def _tasks(folder: Path, mode: str, out: Path | None = None) -> list[Task]:
    return make_tasks(
        [folder],
        mode,  # type: ignore[arg-type]
        BalanceOptions(time_limit_s=5),
        PanelOverrides(),
        out,
    )


def test_check_batch_finishes_the_good_files_and_names_the_corrupt_one(folder: Path) -> None:
    rows = run_batch(_tasks(folder, "check"), jobs=2)
    by_name = {Path(r.file).name: r for r in rows}
    assert set(by_name) == {*GOOD, "corrupt.xlsx"}
    for name in GOOD:
        assert by_name[name].status == "checked", by_name[name].error
        assert by_name[name].imbalance_before_pct is not None
    bad = by_name["corrupt.xlsx"]
    assert bad.failed
    assert "corrupt.xlsx" in bad.error
    assert "not a readable Excel workbook" in bad.error
    assert exit_status(rows) == 2  # every failure was bad input
    text = summary_text(rows, "check")
    assert "3 of 4 files done, 1 failed" in text
    assert "corrupt.xlsx" in text


@pytest.mark.slow
def test_balance_batch_writes_revised_workbooks_and_a_summary(folder: Path, tmp_path: Path) -> None:
    out = tmp_path / "revised"
    out.mkdir()
    rows = run_batch(_tasks(folder, "balance", out), jobs=2)
    done = [r for r in rows if not r.failed]
    assert len(done) == len(GOOD)
    for r in done:
        # proven or not depends on the time limit; either way a checked arrangement is written
        assert r.status in ("optimal", "feasible"), r.error
        assert Path(r.output).is_file()
        assert Path(r.output).parent == out
        assert r.imbalance_after_pct is not None
        assert r.imbalance_before_pct is not None
        assert r.spread_after_va is not None
        assert r.spread_before_va is not None
        assert r.spread_after_va <= r.spread_before_va + 1.0
    summary = write_summary(tmp_path / "summary.xlsx", rows, "balance")
    sheet = load_workbook(summary)["Summary"]
    values = list(sheet.iter_rows(values_only=True))
    assert values[0][:3] == ("File", "Panel", "Status")
    statuses = {Path(str(v[0])).name: v[2] for v in values[1 : 1 + len(rows)]}
    assert statuses["corrupt.xlsx"] == "error"
    assert statuses["office-208y120.xlsx"] in ("optimal", "feasible")
    assert not list(tmp_path.glob(".summary-*"))  # no temporary file left behind
    assert exit_status(rows) != 0


def test_one_job_runs_in_process_and_keeps_order(folder: Path) -> None:
    tasks = _tasks(folder, "check")
    rows = run_batch(tasks, jobs=1)
    assert [r.file for r in rows] == [str(t.path) for t in tasks]


def test_an_unexpected_exception_becomes_a_row() -> None:
    def explode(task: Task) -> Row:
        raise RuntimeError("boom")

    task = Task(Path("x.csv"), "check", BalanceOptions(), PanelOverrides())
    with pytest.raises(RuntimeError):
        run_batch([task], jobs=1, runner=explode)  # the runner's own contract: never raise
    from balancer.batch import run_task

    row = run_task(Task(Path("/nonexistent/x.csv"), "check", BalanceOptions(), PanelOverrides()))
    assert row.failed
    assert "no such file" in row.error


def test_mixed_failures_give_exit_status_one() -> None:
    rows = [Row("a", status="error", exit_status=2), Row("b", status="error", exit_status=3)]
    assert exit_status(rows) == 1
    assert exit_status([Row("a", status="checked")]) == 0


class _Terminal(io.StringIO):
    def isatty(self) -> bool:
        return True


def test_progress_bar_only_on_a_terminal() -> None:
    quiet = io.StringIO()
    bar = Progress(3, quiet)
    for _ in range(3):
        bar.step("file.csv")
    assert quiet.getvalue() == ""
    terminal = _Terminal()
    bar = Progress(2, terminal, width=10)
    bar.step("a.csv")
    bar.step("b.csv")
    text = terminal.getvalue()
    assert "[#####.....] 1/2 a.csv" in text
    assert "[##########] 2/2 b.csv" in text
    assert text.endswith("\n")


def test_cli_check_over_a_folder_reports_the_corrupt_file_and_fails(
    folder: Path, tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    from balancer.cli.main import main

    summary = tmp_path / "out" / "summary.xlsx"
    summary.parent.mkdir()
    status = main(["check", str(folder), "--jobs", "2", "--summary", str(summary)])
    out = capsys.readouterr().out
    assert status == 2
    assert "3 of 4 files done, 1 failed" in out
    assert "corrupt.xlsx" in out
    rows = list(load_workbook(summary)["Summary"].iter_rows(values_only=True))
    assert sum(1 for r in rows[1:] if r[2] == "error") == 1


def test_cli_batch_never_writes_the_summary_over_an_input(
    folder: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    from balancer.cli.main import main

    target = folder / "salon-208y120.csv"
    before = target.read_bytes()
    status = main(["check", str(folder), "--summary", str(target)])
    assert status == 2
    assert "never writes its input" in capsys.readouterr().err
    assert target.read_bytes() == before


def test_cli_batch_json(folder: Path, tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    import json

    from balancer.cli.main import main

    summary = tmp_path / "s.xlsx"
    status = main(
        [
            "check",
            str(folder / "salon-208y120.csv"),
            str(folder / "corrupt.xlsx"),
            "--json",
            "--summary",
            str(summary),
        ]
    )
    data = json.loads(capsys.readouterr().out)
    assert status == 2
    assert [Path(f["file"]).name for f in data["files"]] == ["salon-208y120.csv", "corrupt.xlsx"]
    assert data["files"][1]["status"] == "error"
    assert data["summary_workbook"] == str(summary)


def test_batch_reports_each_panels_demand_and_feeder_check(folder: Path, tmp_path: Path) -> None:
    from balancer.code.demand import DemandOptions, compute_demand
    from balancer.io.reader import read_schedule

    summary = tmp_path / "out" / "summary.xlsx"
    summary.parent.mkdir()
    for rules in ("nec2023", "connected"):
        choice = DemandOptions(rules=rules)
        tasks = make_tasks([folder], "check", BalanceOptions(), PanelOverrides(), demand=choice)
        rows = {Path(r.file).name: r for r in run_batch(tasks, jobs=1)}
        for name in GOOD:
            panel = read_schedule(folder / name)
            expected = compute_demand(panel, choice)
            row = rows[name]
            assert row.demand_va == pytest.approx(expected.total_demand_va)
            assert row.feeder_required_a == pytest.approx(expected.feeder.required_a)
            assert row.min_ocpd_a == expected.feeder.min_ocpd_a
            if rules == "connected":  # no demand factors: the demand is the connected load
                connected = sum(c.load_va for c in panel.circuits)
                assert row.demand_va == pytest.approx(connected)
        assert rows["corrupt.xlsx"].demand_va is None
        text = summary_text(list(rows.values()), "check")
        assert "Demand kVA" in text
        assert "Min OCPD A" in text
    written = write_summary(summary, list(rows.values()), "check")
    header = [c.value for c in load_workbook(written)["Summary"][1]]
    assert {"Demand VA", "Feeder sizing A", "Min OCPD A", "Rating A", "Spare %"} <= set(header)

"""Many schedules at once: ``check`` or ``balance`` over folders and file lists, in parallel.

Each file is handled in its own worker process (the optimiser is CPU-bound); a file that fails
is reported with its error and the rest carry on. The summary is printed as a table and written
as a workbook (atomically).
"""

from __future__ import annotations

import argparse
import json
import os
import sys
import time
from collections.abc import Callable, Iterable, Sequence
from dataclasses import dataclass, replace
from pathlib import Path
from typing import TYPE_CHECKING, Any, Literal, TextIO

from balancer.domain.result import BalanceOptions
from balancer.errors import BalancerError
from balancer.io.reader import PanelOverrides

if TYPE_CHECKING:
    from concurrent.futures import Future

    from balancer.code.demand import DemandOptions
    from balancer.domain.panel import Panel

Mode = Literal["check", "balance"]
SCHEDULE_SUFFIXES = (".xlsx", ".xlsm", ".csv")
SUMMARY_NAME = "balancer-summary.xlsx"
OUTPUT_SUFFIX = "-balanced"
UNEXPECTED_EXIT = 1


@dataclass(frozen=True, slots=True)
class Task:
    """One file to handle; picklable, so it can cross to a worker process."""

    path: Path
    mode: Mode
    options: BalanceOptions
    overrides: PanelOverrides
    output: Path | None = None  # revised workbook (balance mode)
    demand: DemandOptions | None = None  # demand load and feeder check of the (revised) panel


@dataclass(frozen=True, slots=True)
class Row:
    """One line of the summary."""

    file: str
    panel: str = ""
    status: str = ""  # checked, optimal, feasible, unchanged, or error
    imbalance_before_pct: float | None = None
    imbalance_after_pct: float | None = None
    spread_before_va: float | None = None
    spread_after_va: float | None = None
    moves: int | None = None
    demand_va: float | None = None
    feeder_required_a: float | None = None  # the heaviest line's sizing current
    min_ocpd_a: int | None = None
    rating_a: float | None = None  # main or bus rating the feeder is checked against
    spare_pct: float | None = None
    output: str = ""
    error: str = ""
    exit_status: int = 0
    seconds: float = 0.0

    @property
    def failed(self) -> bool:
        return self.status == "error"


def find_schedules(paths: Iterable[Path]) -> list[Path]:
    """Schedule files among ``paths``; folders are searched (not recursively).

    Skips what balancer writes itself (``*-balanced.xlsx``, the summary workbook), spreadsheet
    lock files (``~$…``) and hidden files, so a second run over the same folder reads the same
    inputs.
    """
    found: list[Path] = []
    for path in paths:
        if path.is_dir():
            found += sorted(
                p
                for p in path.iterdir()
                if p.is_file()
                and p.suffix.lower() in SCHEDULE_SUFFIXES
                and not p.name.startswith(("~$", "."))
                and not p.stem.endswith(OUTPUT_SUFFIX)
                and p.name != SUMMARY_NAME
            )
        else:
            found.append(path)  # named explicitly: read it, and report it if it is not a schedule
    unique: dict[Path, None] = {}
    for p in found:
        unique.setdefault(p, None)
    return list(unique)


def run_task(task: Task) -> Row:
    """Read, then check or balance, one file; every failure becomes a row, never an exception."""
    from balancer.io.reader import read_schedule
    from balancer.physics.analysis import analyze

    start = time.perf_counter()
    name = str(task.path)
    try:
        panel = read_schedule(task.path, task.overrides)
        if task.mode == "check":
            loads = analyze(panel)
            return replace(
                Row(
                    name,
                    panel.name,
                    "checked",
                    imbalance_before_pct=loads.imbalance_pct,
                    spread_before_va=loads.spread_va,
                ),
                **_demand_fields(panel, task.demand),
                seconds=time.perf_counter() - start,
            )
        from balancer.io.writer import write_workbook
        from balancer.optimize import balance

        result = balance(panel, task.options)
        output = task.output or task.path.with_name(f"{task.path.stem}{OUTPUT_SUFFIX}.xlsx")
        if output.resolve() == task.path.resolve():
            from balancer.errors import Problem, ScheduleError

            raise ScheduleError(
                Problem(str(output), "is the input; balancer never writes its input")
            )
        demand = None
        if task.demand is not None:
            from balancer.code.demand import compute_demand

            demand = compute_demand(result.after_panel, task.demand)
        written = write_workbook(result, output, demand=demand)
        return replace(
            Row(
                name,
                panel.name,
                result.status.value,
                imbalance_before_pct=result.before.imbalance_pct,
                imbalance_after_pct=result.after.imbalance_pct,
                spread_before_va=result.before.spread_va,
                spread_after_va=result.after.spread_va,
                moves=len(result.moves),
                output=str(written),
            ),
            **_demand_fields(result.after_panel, task.demand, demand),
            seconds=time.perf_counter() - start,
        )
    except BalancerError as exc:
        return Row(
            name,
            status="error",
            error=str(exc),
            exit_status=exc.exit_status,
            seconds=time.perf_counter() - start,
        )
    except Exception as exc:  # one broken file must not stop the others; say what happened
        return Row(
            name,
            status="error",
            error=f"unexpected {type(exc).__name__}: {exc}",
            exit_status=UNEXPECTED_EXIT,
            seconds=time.perf_counter() - start,
        )


def _demand_fields(
    panel: Panel, options: DemandOptions | None, known: Any = None
) -> dict[str, Any]:
    """The summary's demand and feeder figures for ``panel`` (none without ``options``)."""
    if options is None:
        return {}
    from balancer.code.demand import compute_demand

    demand = known if known is not None else compute_demand(panel, options)
    feeder = demand.feeder
    return {
        "demand_va": demand.total_demand_va,
        "feeder_required_a": feeder.required_a,
        "min_ocpd_a": feeder.min_ocpd_a,
        "rating_a": feeder.rating_a,
        "spare_pct": feeder.spare_pct,
    }


class Progress:
    """A one-line progress bar on a terminal; silent when the stream is not a terminal."""

    def __init__(self, total: int, stream: TextIO | None = None, width: int = 30) -> None:
        self.total = total
        self.stream = stream or sys.stderr
        self.width = width
        self.done = 0
        self.enabled = total > 1 and self.stream.isatty()

    def step(self, label: str = "") -> None:
        self.done += 1
        if not self.enabled:
            return
        filled = round(self.width * self.done / self.total)
        bar = "#" * filled + "." * (self.width - filled)
        self.stream.write(f"\r[{bar}] {self.done}/{self.total} {label[-40:]:<40}")
        if self.done == self.total:
            self.stream.write("\n")
        self.stream.flush()


def run_batch(
    tasks: Sequence[Task],
    jobs: int | None = None,
    progress: Progress | None = None,
    runner: Callable[[Task], Row] = run_task,
) -> list[Row]:
    """Run every task, ``jobs`` worker processes at a time (default: one per core).

    Rows come back in the order of ``tasks``. With one job (or one task) nothing is spawned.
    """
    progress = progress or Progress(len(tasks))
    workers = max(1, min(jobs or os.cpu_count() or 1, len(tasks)))
    rows: list[Row | None] = [None] * len(tasks)
    if workers == 1:
        for i, task in enumerate(tasks):
            rows[i] = runner(task)
            progress.step(task.path.name)
        return [r for r in rows if r is not None]
    from concurrent.futures import FIRST_COMPLETED, ProcessPoolExecutor, wait

    with ProcessPoolExecutor(max_workers=workers) as pool:
        pending: dict[Future[Row], int] = {pool.submit(runner, t): i for i, t in enumerate(tasks)}
        while pending:
            finished, _ = wait(pending, return_when=FIRST_COMPLETED)
            for future in finished:
                i = pending.pop(future)
                try:
                    rows[i] = future.result()
                except Exception as exc:  # a worker that died (out of memory, killed)
                    rows[i] = Row(
                        str(tasks[i].path),
                        status="error",
                        error=f"the worker handling this file stopped: {exc}",
                        exit_status=UNEXPECTED_EXIT,
                    )
                progress.step(tasks[i].path.name)
    return [r for r in rows if r is not None]


def exit_status(rows: Sequence[Row]) -> int:
    """0 when every file succeeded; the failures' exit status when all failed alike; else 1."""
    statuses = {r.exit_status for r in rows if r.failed}
    if not statuses:
        return 0
    return statuses.pop() if len(statuses) == 1 else UNEXPECTED_EXIT


def _number(value: float | None, digits: int = 1) -> str:
    return "-" if value is None else f"{value:,.{digits}f}"


def summary_text(rows: Sequence[Row], mode: Mode) -> str:
    """The summary table, then each failure's full message."""
    header = ["File", "Panel", "Imbalance % before"]
    if mode == "balance":
        header += ["after", "Moves"]
    with_demand = any(r.demand_va is not None for r in rows)
    if with_demand:
        header += ["Demand kVA", "Feeder A", "Min OCPD A", "Rating A", "Spare %"]
    header += ["Status", "Error"]
    table = [header]
    for r in rows:
        cells = [Path(r.file).name, r.panel or "-", _number(r.imbalance_before_pct)]
        if mode == "balance":
            cells += [_number(r.imbalance_after_pct), "-" if r.moves is None else str(r.moves)]
        if with_demand:
            kva = None if r.demand_va is None else r.demand_va / 1000.0
            cells += [
                _number(kva),
                _number(r.feeder_required_a),
                "-" if r.min_ocpd_a is None else str(r.min_ocpd_a),
                _number(r.rating_a, 0),
                _number(r.spare_pct, 0),
            ]
        first_error = r.error.splitlines()[0] if r.error else ""
        cells += [r.status, first_error[:60]]
        table.append(cells)
    widths = [max(len(row[i]) for row in table) for i in range(len(header))]
    lines = [
        "  ".join(c.ljust(w) for c, w in zip(row, widths, strict=True)).rstrip() for row in table
    ]
    failed = [r for r in rows if r.failed]
    lines.append("")
    lines.append(f"{len(rows) - len(failed)} of {len(rows)} files done, {len(failed)} failed")
    for r in failed:
        lines += ["", f"{r.file}:", *(f"  {line}" for line in r.error.splitlines())]
    return "\n".join(lines)


def write_summary(path: Path, rows: Sequence[Row], mode: Mode) -> Path:
    """The summary as a workbook (one row per file), written atomically."""
    from openpyxl import Workbook
    from openpyxl.styles import Font

    from balancer.io.writer import save_workbook

    book = Workbook()
    sheet = book.active
    sheet.title = "Summary"
    header = [
        "File",
        "Panel",
        "Status",
        "Imbalance % before",
        "Imbalance % after",
        "Spread VA before",
        "Spread VA after",
        "Moves",
        "Demand VA",
        "Feeder sizing A",
        "Min OCPD A",
        "Rating A",
        "Spare %",
        "Revised workbook",
        "Error",
        "Seconds",
    ]
    sheet.append(header)
    for cell in sheet[1]:
        cell.font = Font(bold=True)
    for r in rows:
        sheet.append(
            [
                r.file,
                r.panel,
                r.status,
                r.imbalance_before_pct,
                r.imbalance_after_pct,
                r.spread_before_va,
                r.spread_after_va,
                r.moves,
                r.demand_va,
                r.feeder_required_a,
                r.min_ocpd_a,
                r.rating_a,
                r.spare_pct,
                r.output,
                r.error,
                round(r.seconds, 3),
            ]
        )
    sheet.append([])
    sheet.append([f"check/balance over {len(rows)} files ({mode})"])
    return save_workbook(book, path)


def make_tasks(
    paths: Sequence[Path],
    mode: Mode,
    options: BalanceOptions,
    overrides: PanelOverrides,
    output_dir: Path | None = None,
    demand: DemandOptions | None = None,
) -> list[Task]:
    """One task per schedule found; revised workbooks go to ``output_dir`` when given."""
    # a name override would give every panel the same name; the rest apply to all files alike
    overrides = replace(overrides, name=None)
    tasks = []
    for path in find_schedules(paths):
        output = None
        if output_dir is not None:
            output = output_dir / f"{path.stem}{OUTPUT_SUFFIX}.xlsx"
        tasks.append(Task(path, mode, options, overrides, output, demand))
    return tasks


def command(
    paths: Sequence[Path],
    mode: Mode,
    options: BalanceOptions,
    overrides: PanelOverrides,
    jobs: int | None = None,
    summary: Path | None = None,
    output_dir: Path | None = None,
    json_output: bool = False,
    demand: DemandOptions | None = None,
) -> int:
    """``balancer check|balance`` over many files: run, print the summary, write the workbook."""
    from balancer.errors import Problem, ScheduleError

    if jobs is not None and jobs < 1:
        raise ScheduleError(Problem("--jobs", f"{jobs} must be 1 or more"))
    if output_dir is not None:
        output_dir.mkdir(parents=True, exist_ok=True)
    tasks = make_tasks(paths, mode, options, overrides, output_dir, demand)
    if not tasks:
        raise ScheduleError(
            Problem(", ".join(str(p) for p in paths), "no .xlsx or .csv schedules found")
        )
    inputs = {t.path.resolve() for t in tasks}
    summary = summary or Path.cwd() / SUMMARY_NAME
    if summary.resolve() in inputs:
        raise ScheduleError(
            Problem("--summary", f"{summary} is one of the inputs; balancer never writes its input")
        )
    rows = run_batch(tasks, jobs)
    written = write_summary(summary, rows, mode)
    if json_output:
        files = [{k: getattr(r, k) for k in Row.__dataclass_fields__} for r in rows]
        print(json.dumps({"files": files, "summary_workbook": str(written)}, indent=2))
    else:
        print(summary_text(rows, mode))
        print(f"\nSummary workbook: {written}")
    return exit_status(rows)


def add_arguments(parser: argparse.ArgumentParser) -> None:
    """Arguments that turn ``check``/``balance`` into a batch over many files."""
    group = parser.add_argument_group("many files (a folder, or more than one schedule)")
    group.add_argument(
        "more", nargs="*", type=Path, metavar="SCHEDULE", help="further schedules or folders"
    )
    group.add_argument(
        "--jobs", type=int, metavar="N", help="files handled at once (default: one per core)"
    )
    group.add_argument(
        "--summary",
        type=Path,
        metavar="XLSX",
        help=f"summary workbook to write (default: ./{SUMMARY_NAME})",
    )


def wanted(args: argparse.Namespace) -> bool:
    """Whether the command line names more than one file or a folder."""
    return bool(args.more) or Path(args.schedule).is_dir()

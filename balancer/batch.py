"""Many schedules at once: ``check`` or ``balance`` over folders and file lists, in parallel.

Each file goes through the same pipeline as a single schedule (:mod:`balancer.api`), in its own
worker process (the optimiser is CPU-bound); a file that fails is reported with its error and
the rest carry on. The summary is a table and a workbook (written atomically).
"""

from __future__ import annotations

import os
import time
from collections.abc import Callable, Iterable, Sequence
from dataclasses import dataclass, field, replace
from pathlib import Path
from typing import TYPE_CHECKING, Any, Literal

from balancer import api
from balancer.api import FieldChoices
from balancer.domain.result import BalanceOptions
from balancer.errors import BalancerError
from balancer.io.reader import PanelOverrides

if TYPE_CHECKING:
    from concurrent.futures import Future

    from balancer.code.demand import DemandOptions, DemandResult

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
    choices: FieldChoices = field(default_factory=FieldChoices)  # basis, trade-off, pick


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
    """Read, then check or balance, one file through the pipeline (:mod:`balancer.api`); every
    failure becomes a row, never an exception."""
    start = time.perf_counter()
    name = str(task.path)
    try:
        if task.mode == "check":
            checked = api.run_check(task.path, task.overrides, task.choices.basis, task.demand)
            return replace(
                Row(
                    name,
                    checked.panel.name,
                    "checked",
                    imbalance_before_pct=checked.loads.imbalance_pct,
                    spread_before_va=checked.loads.spread_va,
                ),
                **_demand_fields(checked.demand),
                seconds=time.perf_counter() - start,
            )
        output = task.output or api.default_output(task.path, OUTPUT_SUFFIX)
        api.refuse_inputs([output], [task.path])
        report = api.run_balance(task.path, task.options, task.overrides, task.choices, task.demand)
        report = api.write_balance(report, output, schedule=task.path)
        result = report.result
        return replace(
            Row(
                name,
                result.after_panel.name,
                result.status.value,
                imbalance_before_pct=result.before.imbalance_pct,
                imbalance_after_pct=result.after.imbalance_pct,
                spread_before_va=result.before.spread_va,
                spread_after_va=result.after.spread_va,
                moves=len(result.moves),
                output=str(report.written[0]),
            ),
            **_demand_fields(report.demand),
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


def _demand_fields(demand: DemandResult | None) -> dict[str, Any]:
    """The summary's demand and feeder figures (none when no demand was computed)."""
    if demand is None:
        return {}
    feeder = demand.feeder
    return {
        "demand_va": demand.total_demand_va,
        "feeder_required_a": feeder.required_a,
        "min_ocpd_a": feeder.min_ocpd_a,
        "rating_a": feeder.rating_a,
        "spare_pct": feeder.spare_pct,
    }


def run_batch(
    tasks: Sequence[Task],
    jobs: int | None = None,
    on_done: Callable[[str], object] | None = None,
    runner: Callable[[Task], Row] = run_task,
) -> list[Row]:
    """Run every task, ``jobs`` worker processes at a time (default: one per core).

    Rows come back in the order of ``tasks``; ``on_done`` is told each file's name as it is
    done. With one job (or one task) nothing is spawned.
    """
    step = on_done or (lambda name: None)
    workers = max(1, min(jobs or os.cpu_count() or 1, len(tasks)))
    rows: list[Row | None] = [None] * len(tasks)
    if workers == 1:
        for i, task in enumerate(tasks):
            rows[i] = runner(task)
            step(task.path.name)
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
                step(tasks[i].path.name)
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

    from balancer.io.files import save_workbook

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
    choices: FieldChoices | None = None,
) -> list[Task]:
    """One task per schedule found; revised workbooks go to ``output_dir`` when given."""
    # a name override would give every panel the same name; the rest apply to all files alike
    overrides = replace(overrides, name=None)
    tasks = []
    for path in find_schedules(paths):
        output = None
        if output_dir is not None:
            output = output_dir / f"{path.stem}{OUTPUT_SUFFIX}.xlsx"
        tasks.append(
            Task(path, mode, options, overrides, output, demand, choices or FieldChoices())
        )
    return tasks

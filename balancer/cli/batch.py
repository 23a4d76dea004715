"""``balancer check|balance`` over a folder or many files: the batch runner
(:mod:`balancer.batch`) with a progress line, the summary table and the summary workbook."""

from __future__ import annotations

import argparse
import json
import sys
from pathlib import Path
from typing import TYPE_CHECKING, TextIO

from balancer.cli import options
from balancer.errors import OutputError, Problem, ScheduleError

if TYPE_CHECKING:
    from balancer.batch import Mode


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


def wanted(args: argparse.Namespace) -> bool:
    """Whether the command line names more than one file or a folder."""
    return bool(args.more) or Path(args.schedule).is_dir()


def run(args: argparse.Namespace, mode: Mode) -> int:
    """The batch over every schedule named: run, print the summary, write the workbook."""
    # loaded here, not at start-up: a single schedule (the usual run) needs none of it
    from balancer.api import FieldChoices, refuse_outputs
    from balancer.batch import (
        SUMMARY_NAME,
        exit_status,
        make_tasks,
        run_batch,
        summary_text,
        write_summary,
    )
    from balancer.domain.result import BalanceOptions
    from balancer.report.json import batch_json

    if args.jobs is not None and args.jobs < 1:
        raise ScheduleError(Problem("--jobs", f"{args.jobs} must be 1 or more"))
    options.over_time(args, batch=True)  # refused with a reason: a logger is one panel's
    paths = [args.schedule, *args.more]
    output_dir = args.output if mode == "balance" else None
    if mode == "balance":
        balance_options = options.balance(args)
        options.supply(args, batch=True)  # refused with a reason: each panel has its own supply
        choices = options.field(args)
    else:
        balance_options, choices = BalanceOptions(), FieldChoices(basis=args.basis)
    demand = options.demand(args)
    if output_dir is not None:
        try:
            output_dir.mkdir(parents=True, exist_ok=True)
        except OSError as exc:
            reason = (exc.strerror or str(exc)).lower()
            raise OutputError(f"{output_dir}: cannot make the output folder: {reason}") from exc
    tasks = make_tasks(
        paths, mode, balance_options, options.overrides(args), output_dir, demand, choices
    )
    if not tasks:
        raise ScheduleError(
            Problem(", ".join(str(p) for p in paths), "no .xlsx or .csv schedules found")
        )
    # check writes nothing unless asked; balance writes revised workbooks, and so a summary
    summary = args.summary
    if summary is None and mode == "balance":
        summary = Path.cwd() / SUMMARY_NAME
    # the summary, and the one folder every revised workbook goes to, checked before the runs
    first_output = tasks[0].output if output_dir is not None else None
    refuse_outputs([summary, first_output], [t.path for t in tasks])
    rows = run_batch(tasks, args.jobs, Progress(len(tasks)).step)
    written = write_summary(summary, rows, mode) if summary is not None else None
    if args.json:
        print(json.dumps(batch_json(rows, mode, written), indent=2, ensure_ascii=False))
    else:
        print(summary_text(rows, mode))
        if written is not None:
            print(f"\nSummary workbook: {written}")
    return exit_status(rows)

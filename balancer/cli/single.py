"""``balancer check``, ``balance`` and ``demo`` on one schedule: options in, the pipeline
(:mod:`balancer.api`), text or JSON out."""

from __future__ import annotations

import argparse
import json
import sys
from importlib import resources
from pathlib import Path
from typing import Any

from balancer import api
from balancer.cli import options
from balancer.cli.progress import progress, wanted
from balancer.code.demand import loads_section_lines
from balancer.errors import Problem, ScheduleError
from balancer.physics.analysis import Loads
from balancer.report import text
from balancer.report.json import balance_json, check_json
from balancer.report.peak import peak_lines
from balancer.report.states import states
from balancer.report.textbars import before_after_bars, phase_bars, state_bars, use_color

DEMO_SAMPLE = "office-208y120.xlsx"


def print_json(data: dict[str, Any]) -> None:
    print(json.dumps(data, indent=2, ensure_ascii=False))


def _bars(args: argparse.Namespace, before: Loads, after: Loads | None, neutral: bool) -> list[str]:
    color = use_color(sys.stdout, args.no_color)
    if after is None:
        return phase_bars(before, color=color, show_neutral=neutral)
    return before_after_bars(before, after, color=color, show_neutral=neutral)


def run_check(args: argparse.Namespace) -> int:
    pdf = options.pdf_path(args, args.schedule, "")
    api.refuse_outputs([pdf], [args.schedule])  # before reading
    report = api.run_check(
        args.schedule,
        options.overrides(args),
        args.basis,
        options.demand(args),
        options.over_time(args),
    )
    if args.json:
        print_json(check_json(report))
    else:
        panel, loads = report.panel, report.loads
        bars = _bars(args, loads, None, panel.system.neutral)
        demand = loads_section_lines(report.demand) if report.demand else []
        over_time = peak_lines(report.peak) if report.peak else []
        sections = [report.field.text_lines(), over_time, demand]
        color = use_color(sys.stdout, args.no_color)
        print(
            text.check_text(
                panel, loads, list(report.warnings), bars=bars, sections=sections, color=color
            )
        )
    if pdf is not None:
        written = api.write_check_pdf(report, pdf, schedule=args.schedule, paper=args.paper)
        print(f"Wrote {written}", file=sys.stderr if args.json else sys.stdout)
    return 0


def run_balance(args: argparse.Namespace) -> int:
    workbook = args.output or api.default_output(args.schedule)
    pdf = options.pdf_path(args, args.schedule, "-balanced")
    api.refuse_outputs([workbook, pdf], [args.schedule])  # before reading and the long solve
    choices = (
        options.balance(args),
        options.overrides(args),
        options.field(args),
        options.demand(args),
        options.supply(args, batch=False),
        options.over_time(args),
    )
    with progress(f"balancing {args.schedule.stem}", enabled=wanted(sys.stderr, args.json)):
        report = api.run_balance(args.schedule, *choices)
        report = api.write_balance(report, workbook, pdf, schedule=args.schedule, paper=args.paper)
    if args.json:
        print_json(balance_json(report))
        return 0
    result = report.result
    color = use_color(sys.stdout, args.no_color)
    bars = state_bars(
        [(s.heading, s.loads) for s in states(result)],
        color=color,
        show_neutral=result.after_panel.system.neutral,
    )
    sections = [
        peak_lines(report.peak) if report.peak else [],
        report.field.text_lines(args.work_order),
        ["After balancing:", *loads_section_lines(report.demand)] if report.demand else [],
    ]
    print(
        text.balance_text(
            result,
            list(report.written),
            bars=bars,
            sections=sections,
            warnings=report.warnings,
            color=use_color(sys.stdout, args.no_color),
            verbose=args.verbose,
        )
    )
    return 0


def sample_folder() -> Path:
    """The bundled samples (package data, so an installed balancer has them too)."""
    folder = Path(str(resources.files("balancer.samples")))
    if not (folder / DEMO_SAMPLE).exists():
        raise ScheduleError(Problem("demo", "the bundled samples are missing from this install"))
    return folder


def run_demo(args: argparse.Namespace, parser: argparse.ArgumentParser) -> int:
    """``balance`` on the bundled office sample, with every default, into ``--output-dir``."""
    schedule = sample_folder() / DEMO_SAMPLE
    args.output_dir.mkdir(parents=True, exist_ok=True)
    stem = api.default_output(schedule).stem
    print(f"Demo: balancing {schedule} (demo data)\n")
    workbook, pdf = args.output_dir / f"{stem}.xlsx", args.output_dir / f"{stem}.pdf"
    argv = ["balance", str(schedule), "-o", str(workbook), "--pdf", str(pdf)]
    argv += ["--no-color"] * args.no_color + ["--verbose"] * args.verbose
    status = run_balance(parser.parse_args(argv))
    closing = (
        f"Open {workbook} (the revised schedule, its Work order sheet and the trade-off table) "
        f"or {pdf} (the printout). Try next: balancer check YOUR-SCHEDULE.xlsx; balancer "
        f"balance {schedule.parent / 'clinic-after-additions-208y120.xlsx'} --basis measured; "
        f"balancer balance {schedule.parent / 'bike-workshop-cafe-208y120.xlsx'} --profile "
        f"{schedule.parent / 'loggers' / 'bike-workshop-cafe-logger.csv'} for the peak that "
        "really happens; or balancer serve --open for the same in a browser."
    )
    print("\n" + "\n".join(text.wrap(closing)))
    return status

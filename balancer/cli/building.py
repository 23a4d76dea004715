"""``balancer building``: the building pipeline (:func:`balancer.api.run_building`) with text or
JSON out and the workbook and printout written."""

from __future__ import annotations

import argparse
import json
import os
import sys
from pathlib import Path

from balancer.cli import options


def add_command(commands: argparse._SubParsersAction[argparse.ArgumentParser]) -> None:
    """The ``building`` subcommand's arguments."""
    parser = commands.add_parser(
        "building",
        help="roll up and balance a whole building: panels feeding panels",
        description="Read a building (a workbook with a 'Building' sheet and one sheet per "
        "panel, or a building.xlsx/building.csv index naming one schedule file per panel), roll "
        "every subpanel's per-line loads up to its feeder circuit, and with --balance balance "
        "every panel, subpanels first (a panel behind a delta-secondary transformer for that "
        "transformer's heaviest winding). The inputs are never changed.",
    )
    parser.add_argument("index", type=Path, help="the building workbook, index file or folder")
    parser.add_argument(
        "--balance", action="store_true", help="balance every panel (default: figures only)"
    )
    parser.add_argument(
        "-o",
        "--output",
        type=Path,
        help="workbook to write (.xlsx): the figures, and with --balance the moves, work order "
        "and revised building (default with --balance: <index>-balanced.xlsx beside the index)",
    )
    options.add_pdf(
        parser,
        "a printout: summary and cautions, every panel's circuit directory and, with "
        "--balance, its work order (default: beside the workbook or the index)",
    )
    parser.add_argument("--json", action="store_true", help="print one JSON object instead")
    options.add_engine(parser, "per panel (default 60)")
    parser.add_argument(
        "--demand",
        action="store_true",
        help="also roll up code demand loads (each feeder over all the loads it serves)",
    )
    options.add_rules(parser)
    options.add_terminal(parser)
    parser.add_argument(
        "--jobs",
        type=int,
        default=os.cpu_count() or 1,
        metavar="N",
        help="panels balanced at once (default: one per core)",
    )


def run_command(args: argparse.Namespace) -> int:
    """``balancer building``: returns the exit status (0 done; errors raise)."""
    # loaded here, not at start-up: the other commands need none of the building's modules
    from balancer import api
    from balancer.building.files import index_file
    from balancer.building.report import building_text
    from balancer.cli.progress import progress, wanted
    from balancer.code.demand import DemandOptions
    from balancer.report.json import building_json
    from balancer.report.text import WIDTH, wrap
    from balancer.report.textbars import use_color

    balance_options = options.engine(args) if args.balance else None
    index = index_file(args.index)
    workbook = args.output
    if workbook is None and args.balance:
        workbook = index.with_name(f"{index.stem}-balanced.xlsx")
    pdf = None
    if args.pdf is not None:
        pdf = Path(args.pdf) if args.pdf is not True else (workbook or index).with_suffix(".pdf")
    demand = DemandOptions(rules=args.rules, occupancy=args.occupancy) if args.demand else None
    doing = "balancing" if args.balance else "rolling up"
    with progress(f"{doing} {index.stem}", enabled=wanted(sys.stderr, args.json)):
        report = api.run_building(
            args.index, balance_options, demand, jobs=args.jobs, outputs=[workbook, pdf]
        )
    building, before, result = report.building, report.before, report.result
    if not args.json:
        color = use_color(sys.stdout, args.no_color)
        print(
            building_text(
                building, before, result, report.demand, color=color, verbose=args.verbose
            )
        )
    with progress(f"writing {index.stem}", enabled=wanted(sys.stderr, args.json)):
        report = api.write_building(report, workbook, pdf, paper=args.paper)
    if args.json:
        print(json.dumps(building_json(report), indent=2, ensure_ascii=False))
        return 0
    for path in report.written:
        if path.suffix == ".pdf":
            print("\n".join(wrap(f"Printout written to {path}", WIDTH)))
        else:
            what = "Figures, work order and revised schedules" if result else "Figures"
            print("\n" + "\n".join(wrap(f"{what} written to {path}", WIDTH)))
    return 0

"""``balancer``: the argument parser, the commands it runs, and the one place where errors
become exit statuses."""

from __future__ import annotations

import argparse
import json
import sys
from collections.abc import Sequence
from pathlib import Path

from balancer import __version__
from balancer.cli import batch, building, options, serve, single
from balancer.errors import BalancerError
from balancer.report.json import error_json

EXIT_OK, EXIT_BAD_INPUT, EXIT_SOLVER, EXIT_INFEASIBLE = 0, 2, 3, 4

DESCRIPTION = """\
Spread a panelboard's branch circuits across its phases.

  check    read a panel schedule and report per-line loads, imbalance and currents
  balance  find the best arrangement of circuits in spaces and write a revised schedule
  demo     run balance on a bundled sample schedule (demo data)
  building roll up and balance a whole building of panels feeding panels
  serve    the whole job in a browser on this machine

check and balance take a folder or several schedules too: a batch run in parallel
with a summary table and workbook.
"""
EPILOG = """\
exit status: 0 done, 2 bad input (every problem is listed with its cell),
3 solver failure, 4 no arrangement satisfies the panel's rules.

An engineering aid: work inside panelboards is for qualified persons with the
equipment de-energised and absence of voltage verified with a meter. The adopted
code, local amendments and the authority having jurisdiction govern.
"""


def _check_parser(commands: argparse._SubParsersAction[argparse.ArgumentParser]) -> None:
    check = commands.add_parser(
        "check",
        help="report per-line loads, imbalance and currents of a schedule",
        description="Read a schedule (.xlsx or .csv) and report per-line loads, imbalance, "
        "line and neutral currents. Nothing is written unless --pdf is given.",
    )
    check.add_argument(
        "schedule", type=Path, nargs="?", help="the panel schedule (.xlsx or .csv), or a folder"
    )
    options.add_batch(check)
    check.add_argument("--json", action="store_true", help="print one JSON object instead of text")
    options.add_basis(check)
    options.add_over_time(check)
    options.add_panel(check)
    options.add_demand(check)
    options.add_output(check)


def _balance_parser(commands: argparse._SubParsersAction[argparse.ArgumentParser]) -> None:
    balance = commands.add_parser(
        "balance",
        help="find the best arrangement and write a revised schedule",
        description="Find the arrangement of circuits in spaces that is best for the chosen "
        "goal (the phase spread by default; then the fewest moves, then the smallest neutral "
        "current), prove how good it is, and write a revised schedule workbook. On a panel in "
        "service the recommended arrangement is the fewest moves within --within-pct points of "
        "the best imbalance. The input file is never changed.",
    )
    balance.add_argument(
        "schedule", type=Path, nargs="?", help="the panel schedule (.xlsx or .csv), or a folder"
    )
    options.add_batch(balance)
    balance.add_argument(
        "-o",
        "--output",
        type=Path,
        help="workbook to write (default: <schedule>-balanced.xlsx beside it); "
        "for many files, the folder to write them to",
    )
    balance.add_argument(
        "--json", action="store_true", help="print one JSON object instead of text"
    )
    balance.add_argument(
        "--fresh", action="store_true", help="ignore existing space numbers: lay the panel out anew"
    )
    balance.add_argument(
        "--max-moves",
        type=int,
        metavar="N",
        help="best balance reachable by moving at most N circuits",
    )
    balance.add_argument(
        "--move-spares",
        action="store_true",
        help="let spare breakers move too (default: they stay)",
    )
    options.add_engine(balance)
    balance.add_argument(
        "--objective",
        choices=("spread", "line", "neutral", "transformer"),
        default="spread",
        help="first goal: phase VA spread (default), worst line current, neutral current, or "
        "the heaviest winding of the supply transformer (needs --bank-kva); the others break "
        "ties. With --profile/--profiles: spread or line at the worst interval",
    )
    balance.add_argument(
        "--bank-kva",
        type=options.finite_float,
        metavar="KVA",
        help="with --objective transformer: the supply transformer's rating (a bank: the sum "
        "of its units); delta-wye for a wye panel, a delta bank for a delta or high-leg panel, "
        "single-phase for 120/240 V",
    )
    balance.add_argument(
        "--open-delta",
        action="store_true",
        help="with --objective transformer: the delta bank is open (two units)",
    )
    options.add_verbose(balance)
    options.add_over_time(balance)
    options.add_field(balance)
    options.add_panel(balance)
    options.add_demand(balance)
    options.add_output(balance)


def build_parser() -> argparse.ArgumentParser:
    parser = argparse.ArgumentParser(
        prog="balancer",
        description=DESCRIPTION,
        epilog=EPILOG,
        formatter_class=argparse.RawDescriptionHelpFormatter,
    )
    parser.add_argument("--version", action="version", version=f"balancer {__version__}")
    commands = parser.add_subparsers(dest="command", metavar="COMMAND", required=True)
    _check_parser(commands)
    _balance_parser(commands)
    building.add_command(commands)
    serve.add_command(commands)
    demo = commands.add_parser(
        "demo",
        help="balance a bundled sample schedule (demo data)",
        description="Run balance on a bundled sample schedule (demo data) and say where the "
        "revised workbook was written.",
    )
    demo.add_argument(
        "--output-dir",
        type=Path,
        default=Path("balancer-demo"),
        help="folder for the revised workbook (default: ./balancer-demo)",
    )
    options.add_terminal(demo)
    return parser


def _run(args: argparse.Namespace, parser: argparse.ArgumentParser) -> int:
    if args.command in ("check", "balance") and batch.wanted(args):
        return batch.run(args, args.command)
    if args.command == "check":
        return single.run_check(args)
    if args.command == "balance":
        return single.run_balance(args)
    if args.command == "demo":
        return single.run_demo(args, parser)
    if args.command == "serve":
        return serve.run(args)
    return building.run_command(args)


SCHEDULE_SUFFIXES = (".xlsx", ".xlsm", ".csv")


def _parse(parser: argparse.ArgumentParser, argv: Sequence[str] | None) -> argparse.Namespace:
    """Parse, and give ``--pdf`` back the schedule it took: ``check --pdf office.xlsx`` means
    the schedule office.xlsx with a PDF beside it, not a PDF named office.xlsx."""
    args = parser.parse_args(argv)
    pdf = getattr(args, "pdf", None)
    schedule_taken = isinstance(pdf, str) and pdf.lower().endswith(SCHEDULE_SUFFIXES)
    if schedule_taken and hasattr(args, "schedule") and args.schedule is None:
        args.schedule, args.pdf = Path(str(pdf)), True
    if hasattr(args, "schedule") and args.schedule is None:
        parser.error(f"{args.command}: name the schedule to read (.xlsx or .csv), or a folder")
    return args


def _error_json(exc: BalancerError) -> str:
    return json.dumps(error_json(exc), indent=2, ensure_ascii=False)


def main(argv: Sequence[str] | None = None) -> int:
    parser = build_parser()
    args = _parse(parser, argv)
    try:
        return _run(args, parser)
    except BalancerError as exc:
        if getattr(args, "json", False):
            print(_error_json(exc))  # scripts read stdout; the exit status is the same
        print(f"balancer: {exc}", file=sys.stderr)
        return exc.exit_status
    except BrokenPipeError:  # output piped into head or a pager that closed early
        sys.stderr.close()
        return EXIT_OK
    except KeyboardInterrupt:
        print("balancer: interrupted", file=sys.stderr)
        return 130


if __name__ == "__main__":
    raise SystemExit(main())

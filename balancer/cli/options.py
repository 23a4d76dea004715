"""Command-line options shared by the commands, each defined once, and their conversion into the
pipeline's choices (:mod:`balancer.api`)."""

from __future__ import annotations

import argparse
import math
from dataclasses import replace
from pathlib import Path
from typing import Any

from balancer.api import FieldChoices, LoadOverTime, Supply
from balancer.batch import SUMMARY_NAME
from balancer.code.demand import DemandOptions, check_choices
from balancer.domain.result import BalanceOptions
from balancer.errors import Problem, ScheduleError
from balancer.io.reader import PanelOverrides


def finite_float(text: str) -> float:
    """An option's number: finite (argparse says which option when this raises)."""
    value = float(text)
    if not math.isfinite(value):
        raise ValueError(text)
    return value


finite_float.__name__ = "finite number"  # argparse: "invalid finite number value: 'nan'"


def add_batch(parser: argparse.ArgumentParser) -> None:
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
        help=f"summary workbook to write (balance: default ./{SUMMARY_NAME}; check writes "
        "one only when this is given)",
    )


def add_basis(parser: argparse.ArgumentParser | Any) -> None:
    parser.add_argument(
        "--basis",
        choices=("nameplate", "measured", "larger"),
        default="nameplate",
        help="load of each circuit: schedule VA, clamp-meter reading where given, or the "
        "larger of the two (default: nameplate; see docs/field.md)",
    )


def add_over_time(parser: argparse.ArgumentParser) -> None:
    group = parser.add_argument_group("load over time (see docs/peak.md)")
    group.add_argument(
        "--profile",
        type=Path,
        metavar="CSV",
        help="logger file of interval readings (a time column, then one column per circuit in "
        "A, kW or kVA, or one per line): balance the worst interval, not the connected sums",
    )
    group.add_argument(
        "--profiles",
        metavar="typical|TOML",
        help="no readings yet: give each load class a daily shape, 'typical' for the packaged "
        "shapes (invented, typical of a small commercial building) or your own shapes file",
    )
    group.add_argument(
        "--tz",
        metavar="ZONE",
        help="with --profile: the logger's time zone (e.g. America/Chicago), so a clock change "
        "in naive time stamps is neither a gap nor a duplicate",
    )


def over_time(args: argparse.Namespace, batch: bool = False) -> LoadOverTime | None:
    """The load over time asked for; one of --profile and --profiles, for one schedule."""
    logger, shapes = getattr(args, "profile", None), getattr(args, "profiles", None)
    if logger is None and shapes is None:
        if getattr(args, "tz", None):
            raise ScheduleError(Problem("--tz", "applies to a logger file (--profile)"))
        return None
    if logger is not None and shapes is not None:
        raise ScheduleError(Problem("--profiles", "give either --profile or --profiles"))
    if batch:
        raise ScheduleError(
            Problem("--profile", "load over time applies to one schedule at a time")
        )
    if shapes is not None and args.tz:
        raise ScheduleError(Problem("--tz", "applies to a logger file (--profile)"))
    if logger is not None:
        return LoadOverTime(logger=logger, tz=args.tz)
    return LoadOverTime(shapes="typical" if shapes == "typical" else Path(str(shapes)))


def add_field(parser: argparse.ArgumentParser) -> None:
    group = parser.add_argument_group("panels in service (see docs/field.md)")
    add_basis(group)
    group.add_argument(
        "--target-imbalance",
        type=finite_float,
        metavar="PCT",
        help="fewest moves that bring the imbalance to PCT %% or below",
    )
    group.add_argument(
        "--within-pct",
        type=finite_float,
        metavar="P",
        help="on a placed panel, recommend the fewest moves whose imbalance is within P "
        "points of the best possible (default 1; 0 = the best balance whatever the moves)",
    )
    group.add_argument(
        "--tradeoff",
        action=argparse.BooleanOptionalAction,
        default=None,
        help="table of the best balance for 0, 1, 2, ... moves (default: on for a placed panel)",
    )
    group.add_argument(
        "--tradeoff-moves",
        type=int,
        metavar="N",
        help="stop the trade-off table at N moves (default 12; each row solves for at most 10 s)",
    )
    group.add_argument(
        "--work-order", action="store_true", help="print the work order (steps) in the terminal"
    )


def add_panel(parser: argparse.ArgumentParser) -> None:
    group = parser.add_argument_group("panel (these win over the schedule's Panel sheet)")
    group.add_argument("--name", help="panel name")
    group.add_argument(
        "--system",
        help="supply system, e.g. 208Y/120, 480Y/277, 400Y/230, 120/240, 240/120 (high leg), "
        "'480 delta' (default when the file says nothing: 208Y/120)",
    )
    group.add_argument("--spaces", type=int, help="number of spaces (pole positions) in the panel")
    group.add_argument("--bus", type=finite_float, metavar="AMPS", help="bus rating in amperes")
    group.add_argument(
        "--main", metavar="AMPS|MLO", help="main breaker rating, or MLO for main lugs only"
    )


def add_rules(parser: argparse.ArgumentParser | Any) -> None:
    parser.add_argument(
        "--rules",
        metavar="SET|FILE",
        help="nec2023, nec2020, connected, or a rule file "
        "(default: nec2023 on 60 Hz systems, connected otherwise)",
    )
    parser.add_argument(
        "--occupancy",
        default="other",
        help="dwelling, hotel, warehouse or other (default: other)",
    )


def add_demand(parser: argparse.ArgumentParser) -> None:
    group = parser.add_argument_group("demand loads and feeder check (see docs/demand.md)")
    add_rules(group)
    group.add_argument(
        "--feeder-length", type=finite_float, metavar="FT", help="one-way feeder length in feet"
    )
    group.add_argument(
        "--feeder-conductor", metavar="SIZE", help="feeder size for the voltage drop, e.g. '3/0 Al'"
    )
    group.add_argument(
        "--ambient", type=finite_float, metavar="DEG_C", help="ambient temperature in °C"
    )
    group.add_argument(
        "--conductors", type=int, metavar="N", help="current-carrying conductors together"
    )
    group.add_argument(
        "--nonlinear-classes",
        metavar="CLASSES",
        help="load classes whose neutral load is non-linear, e.g. 'other,receptacle': not "
        "reduced on a 4-wire wye (220.61(C)(2)); circuits with a non-linear harmonic profile "
        "count without it",
    )
    group.add_argument(
        "--terminations-75c",
        action="store_true",
        help="terminations listed for 75 °C conductors; otherwise circuits of 100 A or less "
        "and 14-1 AWG conductors are taken at 60 °C (110.14(C)(1))",
    )


def add_engine(parser: argparse.ArgumentParser, time_help: str = "(default 60)") -> None:
    parser.add_argument(
        "--engine", choices=("highs", "cbc"), default="highs", help="MILP engine (default: highs)"
    )
    parser.add_argument(
        "--time-limit",
        type=finite_float,
        default=60.0,
        metavar="S",
        help=f"solver time limit in seconds {time_help}",
    )
    parser.add_argument(
        "--tolerance",
        type=finite_float,
        default=1.0,
        metavar="VA",
        help="absolute tolerance on the phase spread in VA (default 1)",
    )


def add_pdf(parser: argparse.ArgumentParser | Any, what: str) -> None:
    """``--pdf [PATH]`` and ``--paper``; ``what`` says what the printout holds and where it goes
    by default."""
    parser.add_argument(
        "--pdf", nargs="?", const=True, default=None, metavar="PATH", help=f"also write {what}"
    )
    parser.add_argument(
        "--paper", choices=("letter", "a4"), default="letter", help="PDF page size (default letter)"
    )


def add_output(parser: argparse.ArgumentParser) -> None:
    group = parser.add_argument_group("printout and terminal")
    add_pdf(
        group,
        "a PDF (summary, circuit directory, work order, cautions); default name beside the "
        "schedule",
    )
    add_color(group)


def add_color(parser: argparse.ArgumentParser | Any) -> None:
    parser.add_argument(
        "--no-color", action="store_true", help="plain text only, even on a colour terminal"
    )


def add_terminal(parser: argparse.ArgumentParser | Any) -> None:
    """``--no-color`` and ``--verbose``: how the terminal text of a solving command looks."""
    add_color(parser)
    add_verbose(parser)


def add_verbose(parser: argparse.ArgumentParser | Any) -> None:
    parser.add_argument(
        "-v",
        "--verbose",
        action="store_true",
        help="also show the solver's own figures (status, bounds, gap, time) and every note",
    )


# ---------------------------------------------------------------- conversions


def overrides(args: argparse.Namespace) -> PanelOverrides:
    return PanelOverrides(
        name=args.name, system=args.system, spaces=args.spaces, bus_a=args.bus, main=args.main
    )


def demand(args: argparse.Namespace) -> DemandOptions:
    if args.feeder_length is not None and args.feeder_length <= 0:
        raise ScheduleError(Problem("--feeder-length", "must be more than 0 feet"))
    nonlinear = (args.nonlinear_classes,) if args.nonlinear_classes else ()
    check_choices(args.rules, args.occupancy, nonlinear)
    return DemandOptions(
        rules=args.rules,
        occupancy=args.occupancy,
        feeder_length_ft=args.feeder_length,
        feeder_conductor=args.feeder_conductor,
        ambient_c=args.ambient,
        current_carrying=args.conductors,
        nonlinear_classes=nonlinear,
        terminations_75c=args.terminations_75c,
    )


def engine(args: argparse.Namespace) -> BalanceOptions:
    if args.time_limit <= 0:
        raise ScheduleError(Problem("--time-limit", "must be more than 0 seconds"))
    if args.tolerance < 0:
        raise ScheduleError(Problem("--tolerance", "must be 0 VA or more"))
    return BalanceOptions(
        engine=args.engine, time_limit_s=args.time_limit, tolerance_va=args.tolerance
    )


def balance(args: argparse.Namespace) -> BalanceOptions:
    if args.max_moves is not None and args.max_moves < 0:
        raise ScheduleError(Problem("--max-moves", f"{args.max_moves} must be 0 or more"))
    return replace(
        engine(args),
        fresh=args.fresh,
        max_moves=args.max_moves,
        move_spares=args.move_spares,
        objective=args.objective,
    )


def field(args: argparse.Namespace) -> FieldChoices:
    if args.target_imbalance is not None and args.target_imbalance < 0:
        raise ScheduleError(Problem("--target-imbalance", "must be 0 % or more"))
    if args.within_pct is not None and not 0 <= args.within_pct <= 100:
        raise ScheduleError(Problem("--within-pct", "must be from 0 to 100 points"))
    if args.tradeoff_moves is not None and args.tradeoff_moves < 0:
        raise ScheduleError(Problem("--tradeoff-moves", "must be 0 or more"))
    return FieldChoices(
        basis=args.basis,
        tradeoff=args.tradeoff,
        tradeoff_moves=args.tradeoff_moves,
        target_imbalance_pct=args.target_imbalance,
        within_pct=args.within_pct,
    )


def supply(args: argparse.Namespace, batch: bool) -> Supply | None:
    """The supply transformer asked for, checked against the objective."""
    if args.objective != "transformer":
        if args.bank_kva is not None or args.open_delta:
            raise ScheduleError(
                Problem("--bank-kva", "the supply transformer is used by --objective transformer")
            )
        return None
    if args.bank_kva is None:
        raise ScheduleError(
            Problem("--bank-kva", "--objective transformer needs the transformer's kVA rating")
        )
    if batch:
        raise ScheduleError(
            Problem(
                "--objective",
                "transformer applies to one schedule at a time (each panel has its own supply); "
                "for panels fed from panels use `balancer building`",
            )
        )
    return Supply(float(args.bank_kva), bool(args.open_delta))


def pdf_path(args: argparse.Namespace, beside: Path, suffix: str) -> Path | None:
    """The PDF asked for: ``--pdf PATH``, or ``--pdf`` alone for one beside ``beside``."""
    if args.pdf is None:
        return None
    if args.pdf is True:
        return beside.with_name(f"{beside.stem}{suffix}.pdf")
    return Path(args.pdf)

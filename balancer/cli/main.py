"""Command line: ``balancer check|balance|demo``. The only place errors become exit statuses."""

from __future__ import annotations

import argparse
import json
import math
import sys
from collections.abc import Callable, Sequence
from pathlib import Path
from typing import Any

from balancer import batch
from balancer.building import report as building_report
from balancer.domain.panel import Panel
from balancer.errors import BalancerError, Problem, ScheduleError
from balancer.io.pdf import add_pdf_arguments
from balancer.io.reader import PanelOverrides, read_schedule
from balancer.physics.analysis import analyze
from balancer.report import text as report

EXIT_OK, EXIT_BAD_INPUT, EXIT_SOLVER, EXIT_INFEASIBLE = 0, 2, 3, 4


def finite_float(text: str) -> float:
    """An option's number: finite (argparse says which option when this raises)."""
    value = float(text)
    if not math.isfinite(value):
        raise ValueError(text)
    return value


finite_float.__name__ = "finite number"  # argparse: "invalid finite number value: 'nan'"

DESCRIPTION = """\
Spread a panelboard's branch circuits across its phases.

  check    read a panel schedule and report per-line loads, imbalance and currents
  balance  find the best arrangement of circuits in spaces and write a revised schedule
  demo     run balance on a bundled sample schedule (demo data)
  building roll up and balance a whole building of panels feeding panels

check and balance take a folder or several schedules too: a batch run in parallel
with a summary table and workbook.
"""
EPILOG = """\
exit status: 0 done, 2 bad input (every problem is listed with its cell),
3 solver failure, 4 no arrangement satisfies the panel's rules.

An engineering aid: work inside panelboards is for qualified persons with the
equipment de-energised; verify with a meter. The adopted code, local amendments
and the authority having jurisdiction govern.
"""


def _field_options(parser: argparse.ArgumentParser) -> None:
    group = parser.add_argument_group("panels in service (see docs/field.md)")
    group.add_argument(
        "--basis",
        choices=("nameplate", "measured", "larger"),
        default="nameplate",
        help="load of each circuit: schedule VA, clamp-meter reading where given, or the "
        "larger of the two (default: nameplate)",
    )
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


def _field_run(args: argparse.Namespace) -> Any:
    from balancer.field.run import FieldRun

    if args.target_imbalance is not None and args.target_imbalance < 0:
        raise ScheduleError(Problem("--target-imbalance", "must be 0 % or more"))
    if args.within_pct is not None and not 0 <= args.within_pct <= 100:
        raise ScheduleError(Problem("--within-pct", "must be from 0 to 100 points"))
    if args.tradeoff_moves is not None and args.tradeoff_moves < 0:
        raise ScheduleError(Problem("--tradeoff-moves", "must be 0 or more"))
    return FieldRun(
        basis=args.basis,
        tradeoff=args.tradeoff,
        tradeoff_moves=args.tradeoff_moves,
        target_imbalance_pct=args.target_imbalance,
        within_pct=args.within_pct,
    )


def _panel_options(parser: argparse.ArgumentParser) -> None:
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


def _demand_options(parser: argparse.ArgumentParser) -> None:
    group = parser.add_argument_group("demand loads and feeder check (see docs/demand.md)")
    group.add_argument(
        "--rules",
        metavar="SET|FILE",
        help="nec2023, nec2020, connected, or a rule file "
        "(default: nec2023 on 60 Hz systems, connected otherwise)",
    )
    group.add_argument(
        "--occupancy",
        default="other",
        help="dwelling, hotel, warehouse or other (default: other)",
    )
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


def _output_options(parser: argparse.ArgumentParser) -> None:
    group = parser.add_argument_group("printout and terminal")
    add_pdf_arguments(
        group,
        "a PDF (summary, circuit directory, work order, cautions); default name beside the "
        "schedule",
    )
    group.add_argument(
        "--no-color", action="store_true", help="plain text only, even on a colour terminal"
    )


def _pdf_path(args: argparse.Namespace, suffix: str) -> Path | None:
    if args.pdf is None:
        return None
    if args.pdf is True:
        return args.schedule.with_name(f"{args.schedule.stem}{suffix}.pdf")
    return Path(args.pdf)


def _bars(args: argparse.Namespace, before: Any, after: Any = None, neutral: bool = True) -> str:
    from balancer.report.textbars import before_after_bars, phase_bars, use_color

    color = use_color(sys.stdout, args.no_color)
    if after is None:
        return "\n".join(phase_bars(before, color=color, show_neutral=neutral))
    return "\n".join(before_after_bars(before, after, color=color, show_neutral=neutral))


def _demand_choices(args: argparse.Namespace) -> Any:
    from balancer.code.demand import DemandOptions, check_choices

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


def _demand(args: argparse.Namespace, panel: Panel) -> Any:
    from balancer.code.demand import compute_demand

    try:
        return compute_demand(panel, _demand_choices(args))
    except ValueError as exc:  # ambient or conductor count out of the tables' range
        raise ScheduleError(Problem("--ambient/--conductors", str(exc))) from exc


def build_parser() -> argparse.ArgumentParser:
    parser = argparse.ArgumentParser(
        prog="balancer",
        description=DESCRIPTION,
        epilog=EPILOG,
        formatter_class=argparse.RawDescriptionHelpFormatter,
    )
    parser.add_argument("--version", action="version", version="balancer 0.1.0")
    commands = parser.add_subparsers(dest="command", metavar="COMMAND", required=True)

    check = commands.add_parser(
        "check",
        help="report per-line loads, imbalance and currents of a schedule",
        description="Read a schedule (.xlsx or .csv) and report per-line loads, imbalance, "
        "line and neutral currents. Nothing is written unless --pdf is given.",
    )
    check.add_argument("schedule", type=Path, help="the panel schedule (.xlsx or .csv)")
    batch.add_arguments(check)
    check.add_argument("--json", action="store_true", help="print one JSON object instead of text")
    check.add_argument(
        "--basis",
        choices=("nameplate", "measured", "larger"),
        default="nameplate",
        help="load of each circuit: schedule VA, clamp-meter reading where given, or the "
        "larger of the two (default: nameplate; see docs/field.md)",
    )
    _panel_options(check)
    _demand_options(check)
    _output_options(check)

    balance = commands.add_parser(
        "balance",
        help="find the best arrangement and write a revised schedule",
        description="Find the arrangement of circuits in spaces with the smallest phase spread "
        "(then the fewest moves, then the smallest neutral current), prove how good it is, and "
        "write a revised schedule workbook. The input file is never changed.",
    )
    balance.add_argument("schedule", type=Path, help="the panel schedule (.xlsx or .csv)")
    batch.add_arguments(balance)
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
    balance.add_argument(
        "--engine", choices=("highs", "cbc"), default="highs", help="MILP engine (default: highs)"
    )
    balance.add_argument(
        "--time-limit",
        type=finite_float,
        default=60.0,
        metavar="S",
        help="solver time limit in seconds (default 60)",
    )
    balance.add_argument(
        "--tolerance",
        type=finite_float,
        default=1.0,
        metavar="VA",
        help="absolute tolerance on the phase spread in VA (default 1)",
    )
    balance.add_argument(
        "--objective",
        choices=("spread", "line", "neutral", "transformer"),
        default="spread",
        help="first goal: phase VA spread (default), worst line current, neutral current, or "
        "the heaviest winding of the supply transformer (needs --bank-kva); the others break "
        "ties",
    )
    balance.add_argument(
        "--bank-kva",
        type=finite_float,
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
    _field_options(balance)
    _panel_options(balance)
    _demand_options(balance)
    _output_options(balance)

    building_report.add_command(commands)

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
    return parser


def _overrides(args: argparse.Namespace) -> PanelOverrides:
    return PanelOverrides(
        name=args.name, system=args.system, spaces=args.spaces, bus_a=args.bus, main=args.main
    )


def _warnings(panel: Panel) -> list[str]:
    return list(panel.notices)


def _print_json(data: dict[str, Any]) -> None:
    print(json.dumps(report.clean(data), indent=2, ensure_ascii=False))


def run_check(args: argparse.Namespace) -> int:
    if batch.wanted(args):
        from balancer.domain.result import BalanceOptions

        files = [args.schedule, *args.more]
        return batch.command(
            files,
            "check",
            BalanceOptions(),
            _overrides(args),
            args.jobs,
            args.summary,
            json_output=args.json,
            demand=_demand_choices(args),
        )
    from balancer.field.run import FieldRun

    field_run = FieldRun(basis=args.basis)
    panel = field_run.prepare(read_schedule(args.schedule, _overrides(args)))
    loads = analyze(panel)
    warnings = _warnings(panel)
    demand = _demand(args, panel)
    from balancer.code.demand import demand_to_dict, loads_section_lines

    if args.json:
        _print_json(
            {
                "panel": report.panel_to_dict(panel),
                "loads": report.loads_to_dict(loads),
                "circuits": report.circuits_to_list(panel),
                "demand": demand_to_dict(demand),
                "warnings": warnings,
                "basis": field_run.to_json()["basis"],
            }
        )
    else:
        bars = _bars(args, loads, neutral=panel.system.neutral).splitlines()
        sections = [field_run.text_lines(), loads_section_lines(demand)]
        print(report.check_text(panel, loads, warnings, bars=bars, sections=sections))
    pdf = _pdf_path(args, "")
    if pdf is not None:
        from balancer.io.pdf import write_pdf

        if _same_file(args.schedule, pdf):
            raise ScheduleError(Problem("--pdf", f"{pdf} is the input schedule"))
        written = write_pdf(
            pdf, panel, loads, paper=args.paper, demand=demand, input_path=args.schedule
        )
        print(f"Wrote {written}", file=sys.stderr if args.json else sys.stdout)
    return EXIT_OK


def default_output(schedule: Path) -> Path:
    return schedule.with_name(f"{schedule.stem}-balanced.xlsx")


def _same_file(first: Path, second: Path) -> bool:
    try:
        return first.resolve() == second.resolve() or (second.exists() and first.samefile(second))
    except OSError:
        return False


def balance_file(
    schedule: Path,
    output: Path | None,
    options: Any,
    overrides: PanelOverrides,
    demand_for: Callable[[Panel], Any] | None = None,
    field_run: Any = None,
    bank: tuple[float, bool] | None = None,
) -> tuple[Any, Path, Any]:
    """Read → balance → write; returns the result, the workbook written and the demand (None
    without ``demand_for``).

    ``demand_for`` computes the demand and feeder check of the revised panel for the workbook.
    ``bank`` (kVA, open delta) describes the supply transformer for objective ``transformer``.
    """
    output = output or default_output(schedule)
    if _same_file(schedule, output):
        raise ScheduleError(
            Problem(
                "--output", f"{output} is the input schedule; balancer never overwrites its input"
            )
        )
    panel = read_schedule(schedule, overrides)
    if field_run is not None:
        panel = field_run.prepare(panel)
    if bank is not None:
        from dataclasses import replace

        from balancer.physics.transformer import loading_terms, supply_bank

        supply = supply_bank(panel.system, bank[0], bank[1], "--bank-kva")
        options = replace(options, transformer_terms=loading_terms(supply))
    # the optimiser and writer load only once the schedule is known to be good
    from balancer.io.writer import write_workbook
    from balancer.optimize import balance

    result = balance(panel, options)
    if field_run is not None:
        result = field_run.finish(panel, result, options, balance)
    demand = demand_for(result.after_panel) if demand_for is not None else None
    written = write_workbook(result, output, input_path=schedule, demand=demand)
    return result, written, demand


def balance_json(result: Any, written: Path) -> dict[str, Any]:
    return {
        "panel": report.panel_to_dict(result.after_panel),
        "status": result.status.value,
        "first_goal": result.first_goal,
        "engine": result.engine,
        "tolerance_va": result.tolerance_va,
        "lower_bound_spread_va": result.lower_bound_spread_va,
        "gap_va": result.gap_va,
        "solve_seconds": result.solve_seconds,
        "before": report.loads_to_dict(result.before),
        "after": report.loads_to_dict(result.after),
        "moves": [
            {
                "id": m.circuit_id,
                "description": m.description,
                "from": list(m.from_spaces),
                "to": list(m.to_spaces),
                "from_phases": list(m.from_lines),
                "to_phases": list(m.to_lines),
            }
            for m in result.moves
        ],
        "circuits": report.circuits_to_list(result.after_panel),
        "notes": list(result.notes),
        "warnings": _warnings(result.before_panel),
        "output": str(written),
    }


def balance_text(
    result: Any,
    written: Path | list[Path],
    *,
    bars: list[str] | None = None,
    sections: list[list[str]] | None = None,
) -> str:
    """The ``balance`` summary: bars, before and after, proof, moves, extra sections, files."""
    before, after = result.before, result.after
    lines = [report.panel_heading(result.before_panel)]
    if bars:
        lines += ["", *bars]
    lines += ["", *report.loads_table(before, title="Before")]
    lines += ["", *report.loads_table(after, title="After")]
    status = result.status.value
    if result.first_goal == "spread":
        lines += [
            "",
            f"Result: {status} ({result.engine}); spread {after.spread_va:,.1f} VA, lower bound "
            f"{result.lower_bound_spread_va:,.1f} VA, tolerance {result.tolerance_va:g} VA"
            + (f", gap {result.gap_va:,.1f} VA" if status != "optimal" else ""),
        ]
    else:
        goal = report.GOAL_NAMES.get(result.first_goal, result.first_goal)
        lines += [
            "",
            f"Result: {status} ({result.engine}) on the first goal, {goal} (see the notes); "
            f"spread {after.spread_va:,.1f} VA, a tie-breaker here",
        ]
    if result.after_panel.system.high_leg and result.first_goal == "spread":
        lines += report.wrap(
            f"High leg: the 120 V loads on A and C share one winding of the supply bank "
            f"(neutral after: {after.neutral_a:.1f} A); --objective transformer --bank-kva KVA "
            "balances for that winding instead."
        )
    if result.moves:
        lines += ["", f"Moves ({len(result.moves)}):"]
        for m in result.moves:
            origin = ",".join(map(str, m.from_spaces)) or "new"
            lines.append(
                f"  {m.description:<32} {origin:>8} ({''.join(m.from_lines) or '-'}) -> "
                f"{','.join(map(str, m.to_spaces)):>8} ({''.join(m.to_lines)})"
            )
    else:
        lines += ["", "Moves: none needed."]
    for section in sections or []:
        if section:
            lines += ["", *section]
    notes = list(result.notes) + _warnings(result.before_panel)
    if notes:
        lines += ["", "Notes:"] + [f"  - {n}" for n in notes]
    files = written if isinstance(written, list) else [written]
    lines += [""] + [f"Wrote {path}" for path in files]
    lines += ["", *report.wrap(report.SAFETY_NOTE)]
    return "\n".join(lines)


def _options(args: argparse.Namespace) -> Any:
    from balancer.domain.result import BalanceOptions

    if args.max_moves is not None and args.max_moves < 0:
        raise ScheduleError(Problem("--max-moves", f"{args.max_moves} must be 0 or more"))
    if args.time_limit <= 0:
        raise ScheduleError(Problem("--time-limit", "must be more than 0 seconds"))
    return BalanceOptions(
        fresh=args.fresh,
        max_moves=args.max_moves,
        engine=args.engine,
        time_limit_s=args.time_limit,
        tolerance_va=args.tolerance,
        move_spares=args.move_spares,
        objective=args.objective,
    )


def _bank(args: argparse.Namespace) -> tuple[float, bool] | None:
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
    if batch.wanted(args):
        raise ScheduleError(
            Problem(
                "--objective",
                "transformer applies to one schedule at a time (each panel has its own supply); "
                "for panels fed from panels use `balancer building`",
            )
        )
    return float(args.bank_kva), bool(args.open_delta)


def run_balance(args: argparse.Namespace) -> int:
    bank = _bank(args)
    if batch.wanted(args):
        files = [args.schedule, *args.more]
        return batch.command(
            files,
            "balance",
            _options(args),
            _overrides(args),
            args.jobs,
            args.summary,
            args.output,
            json_output=args.json,
            demand=_demand_choices(args),
        )
    from balancer.code.demand import demand_to_dict, loads_section_lines

    _demand_choices(args)  # a wrong rule set or occupancy is reported before any work
    field_run = _field_run(args)
    result, written, demand = balance_file(
        args.schedule,
        args.output,
        _options(args),
        _overrides(args),
        demand_for=lambda panel: _demand(args, panel),
        field_run=field_run,
        bank=bank,
    )
    pdf = _pdf_path(args, "-balanced")
    if pdf is not None:
        from balancer.io.pdf import write_pdf

        if _same_file(args.schedule, pdf) or _same_file(written, pdf):
            raise ScheduleError(Problem("--pdf", f"{pdf} is the input schedule or the workbook"))
        pdf = write_pdf(
            pdf,
            result.after_panel,
            result.after,
            result=result,
            paper=args.paper,
            demand=demand,
            input_path=args.schedule,
        )
    if args.json:
        data = {
            **balance_json(result, written),
            "demand": demand_to_dict(demand),
            **field_run.to_json(),
        }
        if pdf is not None:
            data["pdf"] = str(pdf)
        _print_json(data)
    else:
        neutral = result.after_panel.system.neutral
        bars = _bars(args, result.before, result.after, neutral=neutral).splitlines()
        sections = [
            field_run.text_lines(args.work_order),
            ["After balancing:", *loads_section_lines(demand)],
        ]
        written_files = [written] + ([pdf] if pdf is not None else [])
        print(balance_text(result, written_files, bars=bars, sections=sections))
    return EXIT_OK


def sample_folder() -> Path:
    """The bundled samples: ./sample_schedules, else the one beside the installed source tree."""
    for candidate in (
        Path.cwd() / "sample_schedules",
        Path(__file__).resolve().parents[2] / "sample_schedules",
    ):
        if (candidate / DEMO_SAMPLE).exists():
            return candidate
    raise ScheduleError(
        Problem(
            "demo",
            "the bundled samples were not found; run from a clone of the project "
            "(installed with pip install -e .)",
        )
    )


DEMO_SAMPLE = "office-208y120.xlsx"


def run_demo(args: argparse.Namespace) -> int:
    """``balance`` on the bundled office sample, with every default, into ``--output-dir``."""
    schedule = sample_folder() / DEMO_SAMPLE
    args.output_dir.mkdir(parents=True, exist_ok=True)
    stem = default_output(schedule).stem
    print(f"Demo: balancing {schedule} (demo data)\n")
    argv = [
        "balance",
        str(schedule),
        "-o",
        str(args.output_dir / f"{stem}.xlsx"),
        "--pdf",
        str(args.output_dir / f"{stem}.pdf"),
    ]
    return run_balance(build_parser().parse_args(argv))


def main(argv: Sequence[str] | None = None) -> int:
    parser = build_parser()
    args = parser.parse_args(argv)
    handlers = {
        "check": run_check,
        "balance": run_balance,
        "demo": run_demo,
        "building": building_report.run_command,
    }
    try:
        return handlers[args.command](args)
    except BalancerError as exc:
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

"""The pipeline every runner calls: the command line, the batch runner, the building command and
a web page. Each job reads top to bottom here; the stages live in their own packages.

    read → load basis → analyse / balance → trade-off and recommended row → work order → demand

Nothing here parses arguments or prints; errors are raised (see :mod:`balancer.errors`).
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from dataclasses import dataclass, fields, replace
from pathlib import Path
from typing import TYPE_CHECKING, Literal

from balancer.code.demand import (
    DemandOptions,
    DemandResult,
    RuleSet,
    check_choices,
    compute_demand,
)
from balancer.domain.panel import Panel
from balancer.domain.result import BalanceOptions, BalanceResult, Objective
from balancer.errors import BalancerError, OutputError, Problem, ScheduleError
from balancer.field.basis import Basis
from balancer.field.run import FieldRun
from balancer.io.files import check_writable, same_file
from balancer.io.pdf import Paper
from balancer.io.reader import PanelOverrides, read_schedule
from balancer.physics.analysis import Loads, analyze

if TYPE_CHECKING:
    from balancer.building.tree import Building, BuildingResult, RollUp
    from balancer.intervals.series import LoadSeries
    from balancer.report.peak import PeakFigures

__all__ = [
    "BalanceReport",
    "BuildingReport",
    "CheckReport",
    "FieldChoices",
    "LoadOverTime",
    "Supply",
    "balance_panel",
    "balance_row",
    "check_panel",
    "default_output",
    "lock_circuits",
    "refuse_inputs",
    "refuse_outputs",
    "run_balance",
    "run_building",
    "run_check",
    "write_balance",
    "write_building",
    "write_check_pdf",
]


@dataclass(frozen=True, slots=True)
class FieldChoices:
    """Choices for a panel in service (see docs/field.md)."""

    basis: Basis = "nameplate"
    tradeoff: bool | None = None  # None: on for a placed panel that is not laid out afresh
    tradeoff_moves: int | None = None
    target_imbalance_pct: float | None = None
    within_pct: float | None = None  # None: 1 point on a placed panel balanced for the spread

    def field_run(self) -> FieldRun:
        """A fresh record for one run with these choices (it collects what the run finds)."""
        return FieldRun(**{f.name: getattr(self, f.name) for f in fields(self)})


# With a load series, the goal the user chose becomes its worst-interval form.
PEAK_GOALS: dict[str, Objective] = {"spread": "peak", "line": "peak-line"}


@dataclass(frozen=True, slots=True)
class LoadOverTime:
    """Loads per time interval, for the peak goal (see docs/peak.md): a logger file of
    interval readings, or load shapes per class (``"typical"``: the packaged, invented ones)."""

    logger: Path | None = None
    shapes: Literal["typical"] | Path | None = None
    tz: str | None = None  # the logger's time zone, for naive time stamps across a clock change

    def series(self, panel: Panel) -> LoadSeries:
        """The loads of ``panel``'s circuits in every interval."""
        if self.logger is not None:
            from balancer.intervals.logger import read_logger

            return read_logger(self.logger, panel, tz=self.tz)
        from balancer.intervals.typical import typical_series

        return typical_series(panel, None if self.shapes == "typical" else self.shapes)


@dataclass(frozen=True, slots=True)
class Supply:
    """The transformer that feeds the panel, for the transformer goal."""

    kva: float
    open_delta: bool = False


@dataclass(frozen=True, slots=True)
class CheckReport:
    """A schedule's figures: the panel on the chosen basis, its loads and its demand."""

    panel: Panel
    loads: Loads
    demand: DemandResult | None
    field: FieldRun  # the load basis, circuit by circuit
    warnings: tuple[str, ...] = ()
    peak: PeakFigures | None = None  # the load over time, when a series was given


@dataclass(frozen=True, slots=True)
class BalanceReport:
    """A balancing run: the recommended arrangement, how it was chosen, the trade-off table, the
    work order and the revised panel's demand."""

    result: BalanceResult
    field: FieldRun
    demand: DemandResult | None
    warnings: tuple[str, ...] = ()
    written: tuple[Path, ...] = ()
    peak: PeakFigures | None = None  # the load over time, when a series was given


def run_check(
    schedule: Path,
    overrides: PanelOverrides | None = None,
    basis: Basis = "nameplate",
    demand: DemandOptions | None = None,
    over_time: LoadOverTime | None = None,
) -> CheckReport:
    """Read a schedule and report its figures."""
    panel = read_schedule(schedule, overrides or PanelOverrides())
    return check_panel(panel, basis, demand, over_time)


def check_panel(
    panel: Panel,
    basis: Basis = "nameplate",
    demand: DemandOptions | None = None,
    over_time: LoadOverTime | None = None,
) -> CheckReport:
    """The figures of a panel already read."""
    run = FieldRun(basis=basis)
    prepared = run.prepare(panel)
    loads = analyze(prepared)
    peak = None
    if over_time is not None:
        from balancer.report.peak import peak_figures

        peak = peak_figures(over_time.series(prepared), prepared, None)
    return CheckReport(prepared, loads, _demand(prepared, demand), run, tuple(panel.notices), peak)


def run_balance(
    schedule: Path,
    options: BalanceOptions | None = None,
    overrides: PanelOverrides | None = None,
    choices: FieldChoices | None = None,
    demand: DemandOptions | None = None,
    supply: Supply | None = None,
    over_time: LoadOverTime | None = None,
) -> BalanceReport:
    """Read a schedule and find its recommended arrangement (nothing is written)."""
    panel = read_schedule(schedule, overrides or PanelOverrides())
    return balance_panel(panel, options, choices, demand, supply, over_time)


def balance_panel(
    panel: Panel,
    options: BalanceOptions | None = None,
    choices: FieldChoices | None = None,
    demand: DemandOptions | None = None,
    supply: Supply | None = None,
    over_time: LoadOverTime | None = None,
) -> BalanceReport:
    """Balance a panel already read: basis, load over time, solve, trade-off and recommended
    row, work order.

    With ``over_time`` given per circuit, the goal is the worst interval's phase spread; per-line
    data cannot say which circuit draws what, so the panel is then balanced on its connected
    loads and the data gives the figures as it stands (and NEC 220.87).
    """
    from balancer.optimize import balance

    options = options or BalanceOptions()
    if demand is not None and not isinstance(demand.rules, RuleSet):
        # a wrong rule set, occupancy or class is reported before the long solve
        check_choices(demand.rules, demand.occupancy, demand.nonlinear_classes)
    run = (choices or FieldChoices()).field_run()
    prepared = run.prepare(panel)
    options = _with_supply(prepared, options, supply)
    warnings = list(panel.notices)
    series = over_time.series(prepared) if over_time is not None else None
    if series is not None and series.circuit_ids:
        if options.objective not in PEAK_GOALS:
            raise ScheduleError(
                Problem(
                    "--objective",
                    "with the load over time the goal is the worst interval's phase spread "
                    "(spread) or its heaviest line (line)",
                )
            )
        options = replace(options, objective=PEAK_GOALS[options.objective], intervals=series)
    elif series is not None:
        warnings.append(
            "the logger file gives per-line readings: they show the panel as it stands but not "
            "which circuit draws what, so the panel is balanced on its connected loads"
        )
    result = run.finish(prepared, balance(prepared, options), options, balance)
    peak = None
    if series is not None:
        from balancer.report.peak import peak_figures

        peak = peak_figures(series, prepared, result)
    demand_result = _demand(result.after_panel, demand)
    return BalanceReport(result, run, demand_result, tuple(warnings), peak=peak)


def write_balance(
    report: BalanceReport,
    workbook: Path,
    pdf: Path | None = None,
    *,
    schedule: Path | None = None,
    paper: Paper = "letter",
) -> BalanceReport:
    """Write the revised workbook (and the PDF); the report comes back naming the files."""
    from balancer.io.pdf import write_pdf
    from balancer.io.writer import write_workbook

    refuse_inputs([workbook, *([pdf] if pdf else [])], [schedule])
    if pdf is not None and same_file(workbook, pdf):
        raise OutputError(Problem(str(pdf), "is the workbook too; give the PDF another name"))
    result = report.result
    written = [
        write_workbook(
            result,
            workbook,
            input_path=schedule,
            demand=report.demand,
            order=report.field.order,
            peak=report.peak,
        )
    ]
    if pdf is not None:
        written.append(
            write_pdf(
                pdf,
                result.after_panel,
                result.after,
                result=result,
                paper=paper,
                demand=report.demand,
                input_path=schedule,
                order=report.field.order,
                peak=report.peak,
            )
        )
    return replace(report, written=tuple(written))


def write_check_pdf(
    report: CheckReport, pdf: Path, *, schedule: Path | None = None, paper: Paper = "letter"
) -> Path:
    """The printout of a checked schedule."""
    from balancer.io.pdf import write_pdf

    refuse_inputs([pdf], [schedule])
    return write_pdf(
        pdf,
        report.panel,
        report.loads,
        paper=paper,
        demand=report.demand,
        input_path=schedule,
        peak=report.peak,
    )


def default_output(schedule: Path, suffix: str = "-balanced", extension: str = ".xlsx") -> Path:
    """Where an output goes when none is named: beside the schedule, ``<stem><suffix>``."""
    return schedule.with_name(f"{schedule.stem}{suffix}{extension}")


def refuse_inputs(outputs: Sequence[Path | None], inputs: Sequence[Path | str | None]) -> None:
    """Raise OutputError when an output would be one of the inputs: balancer never writes one."""
    for output in outputs:
        for source in inputs:
            if output is not None and source is not None and same_file(Path(source), output):
                raise OutputError(
                    Problem(str(output), "is an input; balancer never writes its input")
                )


def refuse_outputs(outputs: Sequence[Path | None], inputs: Sequence[Path | str | None]) -> None:
    """Raise OutputError, before any reading or solving, when an output is one of the inputs
    or cannot be written where it is asked for (no such folder, not a folder, no permission)."""
    refuse_inputs(outputs, inputs)
    for output in outputs:
        if output is not None:
            check_writable(output)


def _demand(panel: Panel, options: DemandOptions | None) -> DemandResult | None:
    if options is None:
        return None
    try:
        return compute_demand(panel, options)
    except ValueError as exc:  # ambient or conductor count out of the tables' range
        raise ScheduleError(Problem("--ambient/--conductors", str(exc))) from exc


def _with_supply(panel: Panel, options: BalanceOptions, supply: Supply | None) -> BalanceOptions:
    if supply is None:
        return options
    from balancer.physics.transformer import loading_terms, supply_bank

    bank = supply_bank(panel.system, supply.kva, supply.open_delta, "--bank-kva")
    return replace(options, transformer_terms=loading_terms(bank))


@dataclass(frozen=True, slots=True)
class BuildingReport:
    """A building's figures as found, and with balancing the revised building."""

    building: Building
    before: RollUp
    result: BuildingResult | None
    demand: tuple[RollUp, RollUp | None] | None
    sources: frozenset[Path]  # every file read: the index and each panel's schedule
    written: tuple[Path, ...] = ()


def run_building(
    index: Path,
    options: BalanceOptions | None = None,
    demand: DemandOptions | None = None,
    jobs: int = 1,
    outputs: Sequence[Path | None] = (),
) -> BuildingReport:
    """Read a building and roll its loads up to the service; with ``options``, balance every
    panel too (subpanels first). ``outputs`` are refused, before any balancing, when one is a
    file the building was read from."""
    from balancer.building.files import index_file, read_building
    from balancer.building.tree import balance_building, demand_roll_up, roll_up

    if demand is not None and not isinstance(demand.rules, RuleSet):
        check_choices(demand.rules, demand.occupancy)
    for output in outputs:  # an output that cannot be written fails before the long work
        if output is not None:
            check_writable(output)
    building = read_building(index)
    sources = {Path(p.source).resolve() for p in building.panels if p.source}
    sources.add(index_file(index).resolve())
    refuse_inputs(outputs, list(sources))
    result = None if options is None else balance_building(building, options, jobs=max(1, jobs))
    demands = None
    if demand is not None:
        after = demand_roll_up(result.after, demand) if result else None
        demands = (demand_roll_up(building, demand), after)
    return BuildingReport(building, roll_up(building), result, demands, frozenset(sources))


def write_building(
    report: BuildingReport,
    workbook: Path | None,
    pdf: Path | None = None,
    *,
    paper: Paper = "letter",
) -> BuildingReport:
    """Write the building workbook (figures; with balancing the moves, work order and revised
    schedules) and the printout."""
    from balancer.building.report import (
        panel_summaries,
        pdf_work_rows,
        printed_panels,
        printout_tables,
        summary_lines,
        work_cautions,
        write_building_workbook,
    )
    from balancer.io.pdf import write_building_pdf

    refuse_inputs([workbook, pdf], list(report.sources))
    if workbook is not None and pdf is not None and same_file(workbook, pdf):
        raise OutputError(Problem(str(pdf), "is the workbook too; give the PDF another name"))
    building, before, result = report.building, report.before, report.result
    written: list[Path] = []
    if workbook is not None:
        written.append(write_building_workbook(workbook, building, before, result, report.demand))
    if pdf is not None:
        panels = printed_panels(
            result.after if result else building, result.after_figures if result else before
        )
        demand = report.demand or _building_demand(report)
        written.append(
            write_building_pdf(
                pdf,
                f"Building {building.name}" + (", revised" if result else ""),
                summary_lines(building, before, result),
                panels,
                pdf_work_rows(result) if result else {},
                paper=paper,
                inputs=[*report.sources, *written],
                tables=printout_tables(building, before, result, demand),
                panel_pages=panel_summaries(building, before, result, demand),
                cautions=work_cautions(result) if result else {},
            )
        )
    return replace(report, written=tuple(written))


def _building_demand(report: BuildingReport) -> tuple[RollUp, RollUp | None] | None:
    """The demand roll-up for a printout when none was asked for: each system's default rule
    set (a printout's panel table gives demand beside connected kVA); None when the rules
    cannot be worked out for this building."""
    from balancer.building.tree import demand_roll_up

    options = DemandOptions()
    try:
        after = demand_roll_up(report.result.after, options) if report.result else None
        return demand_roll_up(report.building, options), after
    except (BalancerError, ValueError):
        return None


def lock_circuits(panel: Panel, locks: Mapping[str, bool]) -> Panel:
    """The panel with the circuits named in ``locks`` held in their spaces (True) or free to
    move (False); the others as read. An id the panel does not have is a ScheduleError."""
    known = {c.id for c in panel.circuits}
    unknown = [cid for cid in locks if cid not in known]
    if unknown:
        raise ScheduleError(
            [Problem(f"circuit {cid}", "is not in the schedule") for cid in unknown]
        )
    return panel.with_circuits(
        [replace(c, locked=bool(locks[c.id])) if c.id in locks else c for c in panel.circuits]
    )


def balance_row(
    report: BalanceReport, row: int | None, demand: DemandOptions | None = None
) -> BalanceReport:
    """The report for one arrangement of the trade-off table (``row`` indexes its rows; None is
    the recommended arrangement itself): that arrangement with the row's status, its work order
    and its revised panel's demand, the table and the recommendation kept beside it, so its
    workbook, PDF and JSON are written as for the recommended one."""
    from balancer.domain.result import SolveStatus
    from balancer.field.workorder import work_order_for

    if row is None:
        return report
    table = report.field.table
    if table is None or not 0 <= row < len(table.rows):
        raise ScheduleError(Problem("row", f"the trade-off table has no row {row}"))
    status = table.rows[row].status
    chosen = table.results[row]
    result = replace(
        chosen,
        status=status,  # an unproven row keeps a smaller budget's arrangement: not proven here
        goal_proven=chosen.goal_proven and status is SolveStatus.OPTIMAL,
        tradeoff=report.result.tradeoff,
        recommendation=report.result.recommendation,
        with_additions_panel=report.result.with_additions_panel,
        with_additions=report.result.with_additions,
    )
    field = replace(report.field, order=work_order_for(result))
    peak = report.peak
    if peak is not None:
        from balancer.report.peak import peak_figures

        peak = peak_figures(peak.series, result.before_panel, result)
    return replace(
        report,
        result=result,
        field=field,
        demand=_demand(result.after_panel, demand),
        written=(),
        peak=peak,
    )

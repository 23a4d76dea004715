"""Turn results into what people read: terminal text and JSON-ready dictionaries."""

from __future__ import annotations

import dataclasses
import math
import textwrap
from pathlib import Path
from typing import Any

from balancer.domain.panel import Panel, PanelHeader
from balancer.optimize.goals import goal_for
from balancer.physics.analysis import Loads
from balancer.report.safety import CAUTION
from balancer.report.states import states

IMBALANCE_DEFINITION = (
    "imbalance: NEMA MG 1 definition applied to phase loads, "
    "largest deviation from the average ÷ average"
)


WIDTH = 100  # the terminal text fits this many columns
WARNING_MARK = "WARNING:"  # the one plain marker of a warning, on every line that starts one
_WARN_ON = "\033[1;33m"  # bold yellow, only on a colour terminal
_WARN_OFF = "\033[0m"


def warning_lines(items: list[str] | tuple[str, ...], color: bool = False) -> list[str]:
    """Each item as ``WARNING: …`` wrapped within :data:`WIDTH`, in bold yellow when ``color``.

    The marker is there with or without colour, so a log file or a pipe keeps the meaning.
    """
    out: list[str] = []
    for item in items:
        wrapped = textwrap.wrap(
            f"{WARNING_MARK} {item}",
            WIDTH,
            subsequent_indent=" " * (len(WARNING_MARK) + 1),
            break_long_words=False,
            break_on_hyphens=False,
        )
        out += [f"{_WARN_ON}{line}{_WARN_OFF}" if color else line for line in wrapped]
    return out


def fit(lines: list[str], width: int = WIDTH) -> list[str]:
    """Lines longer than ``width`` wrapped under their own indent (two more for the rest), a
    path or a hyphenated name never split."""
    out: list[str] = []
    for line in lines:
        if len(line) <= width or "\033[" in line:
            out.append(line)
            continue
        indent = line[: len(line) - len(line.lstrip())]
        out += textwrap.wrap(
            line.strip(),
            width,
            initial_indent=indent,
            subsequent_indent=indent + "  ",
            break_long_words=False,
            break_on_hyphens=False,
        ) or [line]
    return out


def _clean(value: Any) -> Any:
    """JSON-friendly: round floats to 0.001, enums to their value, tuples to lists."""
    if isinstance(value, float):
        if math.isnan(value) or math.isinf(value):
            return None
        rounded = round(value, 3)
        return 0.0 if rounded == 0 else rounded
    if isinstance(value, dict):
        return {str(k): _clean(v) for k, v in value.items()}
    if isinstance(value, list | tuple):
        return [_clean(v) for v in value]
    if hasattr(value, "value") and not isinstance(value, int | str):
        return value.value
    return value


def clean(value: Any) -> Any:
    return _clean(value)


def panel_to_dict(panel: Panel) -> dict[str, Any]:
    return {
        "name": panel.name,
        "system": panel.system.designation,
        "system_label": panel.system.label(),
        "frequency_hz": panel.system.frequency_hz,
        "spaces": panel.spaces,
        "bus_a": panel.bus_a,
        "main_a": panel.main_a,
        "source": panel.source,
        "title_block": title_block_to_dict(panel.header),
    }


def title_block_to_dict(header: PanelHeader) -> dict[str, Any]:
    """The schedule's title block, every field present: text as the schedule writes it, null
    where it says nothing."""
    return {
        f.name: (getattr(header, f.name) if getattr(header, f.name) != "" else None)
        for f in dataclasses.fields(header)
    }


def title_block_lines(header: PanelHeader, width: int = WIDTH) -> list[str]:
    """The title block, compact, only the fields given: where the panel is and what feeds it,
    then its enclosure and ratings, then the project, date and revision; each group on a line
    of its own within ``width`` (a long feeder or location takes a second), a field never
    split."""
    ground = f"ground bus {header.ground_bus}" if header.ground_bus else ""
    if header.isolated_ground is not None:
        bar = "with isolated ground bar" if header.isolated_ground else "no isolated ground bar"
        ground = f"{ground}, {bar}" if ground else bar
    enclosure = ", ".join(part for part in (header.mounting, header.enclosure) if part)
    groups = [
        [
            f"Location: {header.location}" if header.location else "",
            f"fed from {header.fed_from}" if header.fed_from else "",
            f"feeder {header.feeder}" if header.feeder else "",
        ],
        [
            enclosure,
            f"SCCR {header.sccr_ka:,.4g} kA" if header.sccr_ka else "",
            f"neutral bus {header.neutral_pct:g} %" if header.neutral_pct else "",
            ground,
        ],
        [
            f"Project: {header.project}" if header.project else "",
            f"dated {header.date}" if header.date else "",
            f"revision {header.revision}" if header.revision else "",
            f"balanced {header.balanced}" if header.balanced else "",
        ],
    ]
    lines: list[str] = []
    for group in groups:
        start = len(lines)
        for piece in (" ".join(p.split()) for p in group if p):
            if len(lines) > start and len(lines[-1]) + 3 + len(piece) <= width:
                lines[-1] += f" | {piece}"
            else:
                lines.append(f"  {piece}")
        if len(lines) > start:  # a group reads as a sentence: it starts with a capital
            lines[start] = "  " + lines[start][2].upper() + lines[start][3:]
    return lines


def heading_lines(panel: Panel) -> list[str]:
    """The panel's heading (name, system, ratings) and under it its title block."""
    return [*panel_heading(panel).split("\n"), *title_block_lines(panel.header)]


def loads_to_dict(loads: Loads) -> dict[str, Any]:
    """Every field of :class:`Loads`, so new figures reach JSON without changes here."""
    out = {f.name: getattr(loads, f.name) for f in dataclasses.fields(loads)}
    cleaned: dict[str, Any] = _clean(out)
    return cleaned


def circuits_to_list(panel: Panel) -> list[dict[str, Any]]:
    rows = []
    for c in panel.circuits:
        rows.append(
            {
                "id": c.id,
                "description": c.description,
                "poles": c.poles,
                "load_va": c.load_va,  # design (schedule) load, whatever the basis
                "balance_va": c.basis_va,  # the load balanced and analysed on
                "measured_a": c.measured_a,
                "measured_line_a": c.measured_line_a.as_dict(),
                "spaces": list(c.spaces),
                "phases": list(panel.lines_of(c)),
                "trip_a": c.trip_a,
                "load_class": c.load_class,
                "power_factor": c.power_factor,
                "locked": c.locked,
                "group": c.group,
            }
        )
    cleaned: list[dict[str, Any]] = _clean(rows)
    return cleaned


def panel_heading(panel: Panel) -> str:
    parts = [f"Panel {panel.name}", panel.system.label(), f"{panel.spaces} spaces"]
    if panel.system.frequency_hz != 60:
        parts.insert(2, f"{panel.system.frequency_hz:g} Hz")
    if panel.bus_a:
        parts.append(f"bus {panel.bus_a:g} A")
    if panel.main_a:
        parts.append(f"main {panel.main_a:g} A")
    elif panel.main_lugs_only:
        parts.append("main lugs only")
    line = " | ".join(parts)
    if len(line) <= 100:
        return line
    # a long system label (a high-leg delta names its high leg): the ratings go on a second line
    return " | ".join(parts[:2]) + "\n  " + " | ".join(parts[2:])


def loads_table(loads: Loads, *, title: str = "", color: bool = False) -> list[str]:
    """Per-line figures as aligned text lines.

    Currents are true RMS (with each load class's harmonics); where harmonics change them the
    fundamental is shown beside, since the two size conductors and breakers differently.
    """
    lines = [title] if title else []
    rms = loads.line_rms_a or loads.line_a
    with_harmonics = any(abs(rms[x] - loads.line_a[x]) > 0.05 for x in loads.line_a)
    head = f"  {'line':<6}{'load kVA':>9}{'kW':>9}{'kvar':>9}{'PF':>7}{'amps RMS':>10}"
    lines.append(head + (f"{'fundamental':>13}" if with_harmonics else ""))
    for line, va in loads.phase_va.items():
        pf = loads.phase_pf.get(line)
        pf_text = "" if pf is None else f"{pf:.2f}"
        row = (
            f"  {line:<6}{va / 1000:>9.2f}{loads.phase_kw[line]:>9.2f}"
            f"{loads.phase_kvar[line]:>9.2f}{pf_text:>7}{rms[line]:>10.1f}"
        )
        lines.append(row + (f"{loads.line_a[line]:>13.1f}" if with_harmonics else ""))
    lines.append(f"  {'total':<6}{loads.total_va / 1000:>9.2f}")
    neutral = loads.neutral_rms_a or loads.neutral_a
    summary = (
        f"  spread {loads.spread_va / 1000:.2f} kVA (max − min) | imbalance "
        f"{loads.imbalance_pct:.1f} % | neutral {neutral:.1f} A RMS"
    )
    if with_harmonics or abs(neutral - loads.neutral_a) > 0.05:
        summary += f" ({loads.neutral_a:.1f} A fundamental)"
    lines.append(summary)
    if loads.unbalance_factor_pct is not None:
        lines.append(
            f"  current unbalance |I2|/|I1| {loads.unbalance_factor_pct:.1f} % "
            "(negative sequence of the fundamental line currents)"
        )
    if loads.neutral_exceeds_phase:
        lines += warning_lines(
            [
                "the neutral carries more current than any line: it counts as a "
                "current-carrying conductor (NEC 310.15(E)) and gets no demand reduction for its "
                "non-linear part (NEC 220.61(C))"
            ],
            color,
        )
    return lines


def check_text(
    panel: Panel,
    loads: Loads,
    warnings: list[str],
    *,
    bars: list[str] = (),  # type: ignore[assignment]
    sections: list[list[str]] = (),  # type: ignore[assignment]
    color: bool = False,
) -> str:
    """The ``check`` summary: heading, bars, per-line table, then each extra section; the
    schedule's warnings marked (and coloured when ``color``)."""
    lines = [*heading_lines(panel), f"  read from {panel.source} ({len(panel.circuits)} circuits)"]
    if bars:
        lines += ["", *bars]
    lines += ["", *loads_table(loads, color=color)]
    lines += textwrap.wrap(
        f"({IMBALANCE_DEFINITION})", 98, initial_indent="  ", subsequent_indent="   "
    )
    if loads.unplaced:
        lines.append(
            f"  not counted: {len(loads.unplaced)} circuit(s) without a space number "
            f"({', '.join(loads.unplaced)})"
        )
    for section in sections:
        if section:
            lines += ["", *section]
    if warnings:
        lines += ["", *warning_lines(warnings, color)]
    lines += ["", *wrap(CAUTION)]
    return "\n".join(fit(lines))


def _new_breakers(result: Any) -> list[str]:
    """Where each new breaker (a circuit with no space before) is to be installed."""
    before, after = result.before_panel, result.after_panel
    new = [
        (old, placed)
        for old, placed in zip(before.circuits, after.circuits, strict=True)
        if not old.placed and placed.placed
    ]
    if not new:
        return []
    out = ["", f"New breakers to install ({len(new)}):"]
    for old, placed in new:
        spaces = ",".join(map(str, placed.spaces))
        out.append(
            f"  {old.description:<32} {'new':>8}     -> {spaces:>8} "
            f"({''.join(after.lines_of(placed))}, {placed.poles}-pole)"
        )
    return out


def bullets(items: list[str] | tuple[str, ...], width: int = 100) -> list[str]:
    """``  - item`` lines, each item wrapped within ``width`` under its own first word."""
    out: list[str] = []
    for item in items:
        out += textwrap.wrap(item, width, initial_indent="  - ", subsequent_indent="    ") or [
            "  -"
        ]
    return out


def wrap(text: str, width: int = 88) -> list[str]:
    """Lines of at most ``width``; a path or a hyphenated name is never split."""
    return textwrap.wrap(text, width, break_long_words=False, break_on_hyphens=False)


def proof_text(result: Any) -> str:
    """How good the first goal's figure is, in the words a practitioner uses."""
    from balancer.domain.result import BalanceOptions, SolveStatus

    goal = goal_for(result.first_goal)
    value, bound = result.goal_value, result.goal_bound
    if result.status is SolveStatus.UNCHANGED:
        return "nothing to rearrange: every circuit keeps its spaces"
    shown = 0.5 * 10.0 ** (-goal.digits)
    if result.goal_proven:
        if math.isfinite(bound) and value - bound < shown:
            return "proven the best possible"
        margin = goal.tolerance(value, BalanceOptions(tolerance_va=result.tolerance_va))
        return f"proven within {goal.text(margin)} of the best possible"
    if math.isfinite(bound):
        return f"not proven: could be up to {goal.text(max(0.0, value - bound))} better"
    return "not proven: the time limit ended the search before any limit was found"


def proof_sentence(result: Any) -> str:
    """How good the arrangement is, as a designer reads it on a printout or the Summary sheet:
    how low no arrangement can go, what this one reaches, and whether that is proven. No solver
    terms; the exact figures are in the JSON and ``--verbose``."""
    from balancer.domain.result import BalanceOptions, SolveStatus

    if result.status is SolveStatus.UNCHANGED:
        return "Nothing to rearrange: every circuit keeps its spaces."
    goal = goal_for(result.first_goal)
    what = goal.phrase
    value, floor = result.goal_value, result.goal_bound
    if result.first_goal == "spread":  # both are proven floors; the higher says more
        value, floor = result.after.spread_va, max(floor, result.lower_bound_spread_va)
    # an optimal status proves every key goal, the first among them
    proven = result.goal_proven or result.status is SolveStatus.OPTIMAL
    budget = result.move_budget
    scope = "" if budget is None else f" moving at most {budget} breaker{'s' * (budget != 1)}"
    this = goal.text(value)
    floor_known = math.isfinite(floor)
    shown = 0.5 * 10.0 ** (-goal.digits)
    if proven and floor_known and value - floor < shown:
        text = f"Proven the best possible: no arrangement{scope} brings {what} below {this}."
    elif proven:
        margin = goal.tolerance(value, BalanceOptions(tolerance_va=result.tolerance_va))
        text = f"Within {goal.text(margin)} of the best possible (proven)"
        if floor_known:
            text += f": no arrangement{scope} brings {what} below {goal.text(floor)}"
        text += f"; this one has {this}."
    elif floor_known:
        text = (
            f"Not proven the best: no arrangement{scope} brings {what} below "
            f"{goal.text(floor)}; this one has {this}, so up to "
            f"{goal.text(max(0.0, value - floor))} might still be gained."
        )
    else:
        text = (
            f"Not proven the best: this one has {this}; the time limit ended the search "
            "before it could say how much lower another arrangement could go."
        )
    if result.status is SolveStatus.FEASIBLE and result.goal_proven:
        later = (
            "fewest moves"
            if result.first_goal in ("peak", "peak-line")
            else "fewest moves, then the neutral current"
        )
        text += f" The later aims ({later}) are not all proven."
    return text


def result_lines(result: Any, verbose: bool = False) -> list[str]:
    """The ``Result:`` line, and with ``verbose`` the solver's own figures."""
    from balancer.domain.result import SolveStatus

    after = result.after
    goal = goal_for(result.first_goal)
    line = (
        f"Result: {goal.phrase.removeprefix('the ')} {goal.text(result.goal_value)}, "
        f"{proof_text(result)}"
    )
    if result.first_goal in ("peak", "peak-line"):
        line += f"; connected-VA spread {after.spread_va:,.0f} VA, not a goal here"
    elif result.first_goal != "spread":
        line += f"; phase spread {after.spread_va:,.0f} VA, a tie-breaker here"
    if result.status is SolveStatus.FEASIBLE and result.goal_proven:
        line += "; the later goals are not all proven (see the notes)"
    lines = [line]
    if verbose:
        lines += [
            f"Solver: {result.engine}, status {result.status.value}, {result.solve_seconds:.1f} s; "
            f"first goal {result.first_goal} {goal.text(result.goal_value)}, best bound "
            f"{goal.text(result.goal_bound)}",
            f"  spread {after.spread_va:,.1f} VA, lower bound {result.lower_bound_spread_va:,.1f} "
            f"VA, gap {result.gap_va:,.1f} VA, tolerance {result.tolerance_va:g} VA",
        ]
    return lines


def move_lines(result: Any) -> list[str]:
    """``Moves (n):`` and one line per breaker that changes spaces."""
    if not result.moves:
        return ["Moves: none needed."]
    out = [f"Moves ({len(result.moves)}):"]
    for m in result.moves:
        origin = ",".join(map(str, m.from_spaces)) or "new"
        out.append(
            f"  {m.description:<32} {origin:>8} ({''.join(m.from_lines) or '-'}) -> "
            f"{','.join(map(str, m.to_spaces)):>8} ({''.join(m.to_lines)})"
        )
    return out


# Solver words kept out of the default notes (``--verbose`` shows every note as it is).
SOLVER_NOTE_WORDS = ("bound", "relaxation", "polygon", "incumbent", "exact model", "node")


def plain_notes(notes: list[str], verbose: bool) -> list[str]:
    """The notes for the terminal: every one with ``verbose``; otherwise solver detail left to
    ``--verbose`` (each goal's own note already says how far it is proven)."""
    if verbose:
        return notes
    return [n for n in notes if not any(word in n for word in SOLVER_NOTE_WORDS)]


def balance_text(
    result: Any,
    written: Path | list[Path],
    *,
    bars: list[str] | None = None,
    sections: list[list[str]] | None = None,
    warnings: list[str] | tuple[str, ...] = (),
    color: bool = False,
    verbose: bool = False,
) -> str:
    """The ``balance`` summary: bars, the states (as it stands, with any additions, after),
    proof, moves, new breakers, extra sections, notes, the schedule's warnings (marked, and
    coloured when ``color``), files; within :data:`WIDTH` columns."""
    after = result.after
    lines = heading_lines(result.before_panel)
    if bars:
        lines += ["", *bars]
    for state in states(result):
        lines += ["", *loads_table(state.loads, title=state.title, color=color)]
        if state.title not in ("Before", "After") or result.new_circuits:
            lines += textwrap.wrap(
                f"({state.detail})", WIDTH - 2, initial_indent="  ", subsequent_indent="   "
            )
    lines += ["", *result_lines(result, verbose)]
    if result.after_panel.system.high_leg and result.first_goal == "spread":
        lines += wrap(
            f"High leg: the 120 V loads on A and C share one winding of the supply bank "
            f"(neutral after: {after.neutral_a:.1f} A); --objective transformer --bank-kva KVA "
            "balances for that winding instead.",
            WIDTH,
        )
    lines += ["", *move_lines(result)]
    lines += _new_breakers(result)
    for section in sections or []:
        if section:
            lines += ["", *section]
    notes = plain_notes(list(result.notes), verbose)
    if notes:
        lines += ["", "Notes:", *bullets(notes)]
    marked = list(warnings) or list(result.before_panel.notices)
    if marked:
        lines += ["", *warning_lines(marked, color)]
    files = written if isinstance(written, list) else [written]
    lines += [""] + [f"Wrote {path}" for path in files]
    lines += ["", *wrap(CAUTION)]
    return "\n".join(fit(lines))

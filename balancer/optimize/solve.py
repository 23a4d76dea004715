"""Run a model on an engine and say how far the answer is proven.

Proof is read from the engine itself (HiGHS model status and ``mip_dual_bound``; CBC's
``sol_status``), never from PuLP's ``LpStatus``, which calls a time-limited incumbent "Optimal".
"""

from __future__ import annotations

import contextlib
import math
import os
import sys
import tempfile
import threading
import time
from collections.abc import Iterator, Sequence
from dataclasses import dataclass

import highspy
import pulp
from pulp.apis.coin_api import PULP_CBC_CMD

from balancer.errors import InfeasibleError, SolverError
from balancer.optimize.model import Model

_STDOUT_LOCK = threading.Lock()
BOUND_SLACK = 1e-6  # numerical slack when comparing an objective with its bound


@dataclass(frozen=True, slots=True)
class StageResult:
    """One lexicographic stage: value reached, best bound, and whether the gap is closed."""

    goal: str
    value: float
    bound: float
    proven: bool
    picks: tuple[int, ...]
    seconds: float
    engine_status: str


@contextlib.contextmanager
def quiet_stdout() -> Iterator[None]:
    """Send file descriptor 1 to the null device: HiGHS prints its banner there even when quiet."""
    # One redirect at a time: two threads swapping fd 1 could leave it on the null device.
    with _STDOUT_LOCK:
        sys.stdout.flush()
        saved = os.dup(1)
        null = os.open(os.devnull, os.O_WRONLY)
        try:
            os.dup2(null, 1)
            yield
        finally:
            sys.stdout.flush()
            os.dup2(saved, 1)
            os.close(saved)
            os.close(null)


class _SeededHighs(pulp.HiGHS):
    """In-process HiGHS that hands the variables' initial values to highspy as a start."""

    def __init__(self, start: dict[str, float] | None, **kwargs: object) -> None:
        super().__init__(**kwargs)
        self.start = start

    def callSolver(self, lp: pulp.LpProblem) -> None:
        if self.start:
            index = [v.index for v in lp.variables() if v.name in self.start]
            value = [float(self.start[v.name]) for v in lp.variables() if v.name in self.start]
            lp.solverModel.setSolution(len(index), index, value)
        lp.solverModel.run()

    def findSolutionValues(self, lp: pulp.LpProblem) -> tuple[int, int]:
        try:
            found: tuple[int, int] = super().findSolutionValues(lp)
        except KeyError:
            # PuLP 3.3.2 has no entry for a node limit (kSolutionLimit); the values are already
            # assigned, and the proof is read from HiGHS itself in solve_goal
            info = lp.solverModel.getInfo()
            feasible = int(info.primal_solution_status) == int(
                highspy.SolutionStatus.kSolutionStatusFeasible
            )
            if not feasible:
                return pulp.LpStatusNotSolved, pulp.LpSolutionNoSolutionFound
            return pulp.LpStatusOptimal, pulp.LpSolutionIntegerFeasible
        return found


def _run_highs(
    model: Model,
    values: dict[str, float] | None,
    limit: float,
    gap_abs: float,
    node_limit: int | None = None,
) -> highspy.Highs:
    extra: dict[str, object] = {} if node_limit is None else {"mip_max_nodes": node_limit}
    solver = _SeededHighs(
        values, msg=False, timeLimit=limit, gapAbs=gap_abs, gapRel=0.0, threads=1, **extra
    )
    with quiet_stdout():
        model.prob.solve(solver)
    highs: highspy.Highs = model.prob.solverModel
    return highs


def cbc_available() -> bool:
    path = PULP_CBC_CMD.pulp_cbc_path
    return os.path.isfile(path) and os.access(path, os.X_OK)


def _start_values(model: Model, picks: Sequence[int] | None) -> dict[str, float] | None:
    if picks is None or any(p < 0 for p in picks):
        return None
    start = {}
    for (u, k), var in model.choice.items():
        start[var.name] = 1.0 if picks[u] == k else 0.0
    return start


def solve_goal(
    model: Model,
    goal: str,
    engine: str,
    time_limit_s: float,
    gap_abs: float,
    start: Sequence[int] | None = None,
    node_limit: int | None = None,
) -> StageResult:
    """Minimise ``model.goals[goal]``; the problem's existing constraints stay.

    ``node_limit`` bounds the branch-and-bound work (HiGHS), so that a stage stopped by it
    gives the same answer on every run; the time limit is then only a safety net.
    """
    expr = model.goals[goal]
    model.prob.setObjective(expr)
    limit = max(0.05, time_limit_s)
    begin = time.perf_counter()
    values = _start_values(model, start)
    if engine == "highs":
        run = _solve_highs(model, expr, values, limit, gap_abs, node_limit, begin)
    elif engine == "cbc":
        run = _solve_cbc(model, values, limit, gap_abs)
    else:
        raise SolverError(f"unknown engine {engine!r}; use 'highs' or 'cbc'")
    seconds = time.perf_counter() - begin
    if run.infeasible:
        raise InfeasibleError(f"no arrangement satisfies the panel's rules ({goal} stage)")
    if not run.has_solution:
        raise SolverError(
            f"{engine} found no arrangement within {limit:.1f} s ({run.text}); raise the time limit"
        )
    picks = tuple(model.chosen())
    if any(p < 0 for p in picks):
        raise SolverError(f"{engine} returned a fractional choice; the answer was discarded")
    value = evaluate(expr)
    bound = run.bound
    if goal == "moves" and math.isfinite(bound):
        bound = math.ceil(bound - 1e-6)  # whole numbers of moves: the bound rounds up
    if engine == "cbc":
        proven = run.optimal
        bound = value - gap_abs if proven else -math.inf
    else:
        proven = run.optimal and value - bound <= gap_abs + BOUND_SLACK * max(1.0, abs(value))
    return StageResult(goal, value, bound, proven, picks, seconds, run.text)


@dataclass(frozen=True, slots=True)
class _EngineRun:
    """What an engine said about one solve, before the answer is checked."""

    text: str  # the engine's own status, for the notes
    bound: float  # its dual bound on the objective (-inf when it gives none)
    has_solution: bool
    infeasible: bool
    optimal: bool  # the engine's claim of optimality, not yet compared with the gap


def _solve_highs(
    model: Model,
    expr: pulp.LpAffineExpression,
    values: dict[str, float] | None,
    limit: float,
    gap_abs: float,
    node_limit: int | None,
    begin: float,
) -> _EngineRun:
    highs = _run_highs(model, values, limit, gap_abs, node_limit)
    claimed = float(highs.getInfo().objective_function_value) + float(expr.constant)
    if values and abs(claimed - evaluate(expr)) > 1e-6 * max(1.0, abs(claimed)):
        # Seen with highspy 1.16: after a start, the reported objective (and so the bound)
        # need not belong to the solution returned. Solve again without the start.
        highs = _run_highs(
            model, None, max(0.05, limit - (time.perf_counter() - begin)), gap_abs, node_limit
        )
    info = highs.getInfo()
    status = highs.getModelStatus()
    return _EngineRun(
        text=highs.modelStatusToString(status),
        bound=float(info.mip_dual_bound) + float(expr.constant),
        has_solution=int(info.primal_solution_status)
        == int(highspy.SolutionStatus.kSolutionStatusFeasible),
        infeasible=status == highspy.HighsModelStatus.kInfeasible,
        optimal=status == highspy.HighsModelStatus.kOptimal,
    )


def _solve_cbc(
    model: Model, values: dict[str, float] | None, limit: float, gap_abs: float
) -> _EngineRun:
    if not cbc_available():
        raise SolverError("the CBC engine is not available in this installation")
    with tempfile.TemporaryDirectory() as folder:
        if values:
            for var in model.prob.variables():
                if var.name in values:
                    var.setInitialValue(values[var.name])
        solver = pulp.COIN_CMD(
            path=PULP_CBC_CMD.pulp_cbc_path,
            msg=False,
            timeLimit=limit,
            gapAbs=gap_abs,
            gapRel=0.0,
            warmStart=bool(values),
        )
        solver.tmpDir = folder
        with quiet_stdout():
            model.prob.solve(solver)
    return _EngineRun(
        text=pulp.LpStatus[model.prob.status],
        # PuLP gives no dual bound from CBC; a proven answer is within gap_abs of the optimum.
        bound=-math.inf,
        has_solution=model.prob.sol_status
        in (pulp.LpSolutionOptimal, pulp.LpSolutionIntegerFeasible),
        infeasible=model.prob.status == pulp.LpStatusInfeasible,
        optimal=model.prob.sol_status == pulp.LpSolutionOptimal,
    )


def evaluate(expr: pulp.LpAffineExpression) -> float:
    """Value of an expression at the solution; a variable the engine left out counts as 0."""
    return float(expr.constant) + math.fsum(
        coefficient * float(var.varValue or 0.0) for var, coefficient in expr.items()
    )


def cap(model: Model, goal: str, limit: float, name: str) -> None:
    """Keep ``goal`` at or below ``limit`` in later stages."""
    model.prob += (model.goals[goal] <= limit, name)

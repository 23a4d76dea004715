"""The engine's best spread against an independent model solved by scipy.optimize.milp.

scipy wraps its own copy of HiGHS behind a different interface; the model here is written from
the definition of the problem (each circuit on one line or line pair, minimise max − min of the
schedule phase VA), not from balancer's model code. Panels have room to spare, so the space
geometry never binds and the two problems are the same.
"""

from __future__ import annotations

import random

import numpy as np
import pytest
from scipy.optimize import Bounds, LinearConstraint, milp

from balancer.domain.panel import Circuit, Panel
from balancer.domain.result import BalanceOptions, SolveStatus
from balancer.domain.systems import get_system
from balancer.optimize import balance

LINES = ("A", "B", "C")
PAIRS = (("A", "B"), ("B", "C"), ("C", "A"))  # the pairs two adjacent rows give (common practice)
TOLERANCE_VA = 1.0


def _scipy_best_spread(circuits: list[Circuit]) -> float:
    options = [[(x,) for x in LINES] if c.poles == 1 else list(PAIRS) for c in circuits]
    n_pick = sum(len(o) for o in options)
    n = n_pick + 2  # picks, then the largest and the smallest line load
    cost = np.zeros(n)
    cost[-2], cost[-1] = 1.0, -1.0
    rows, lower, upper = [], [], []
    column = 0
    for opts in options:  # each circuit takes exactly one of its options
        row = np.zeros(n)
        row[column : column + len(opts)] = 1.0
        rows.append(row)
        lower.append(1.0)
        upper.append(1.0)
        column += len(opts)
    for line in LINES:
        load = np.zeros(n)
        column = 0
        for circuit, opts in zip(circuits, options, strict=True):
            for option in opts:
                if line in option:
                    load[column] = circuit.load_va / len(option)
                column += 1
        below_max = load.copy()
        below_max[-2] = -1.0
        above_min = load.copy()
        above_min[-1] = -1.0
        rows += [below_max, above_min]
        lower += [-np.inf, 0.0]
        upper += [0.0, np.inf]
    integrality = np.ones(n)
    integrality[-2:] = 0
    bounds = Bounds(
        np.r_[np.zeros(n_pick), -np.inf, -np.inf], np.r_[np.ones(n_pick), np.inf, np.inf]
    )
    result = milp(
        cost,
        constraints=LinearConstraint(np.array(rows), lower, upper),
        integrality=integrality,
        bounds=bounds,
        options={"mip_rel_gap": 0.0, "time_limit": 60.0},
    )
    assert result.status == 0, result.message  # 0: proven optimal
    return float(result.fun)


@pytest.mark.parametrize("seed", range(6))
def test_engine_spread_equals_scipy_milp(seed: int) -> None:
    rng = random.Random(seed)
    circuits = [
        Circuit(
            id=f"R{i}",
            description=f"load {i}",
            poles=rng.choice((1, 1, 1, 2)),
            load_va=float(rng.randrange(150, 4000, 10)),
        )
        for i in range(rng.randint(6, 11))
    ]
    panel = Panel("cross-check", get_system("208Y/120"), 42, tuple(circuits))
    expected = _scipy_best_spread(circuits)
    result = balance(panel, BalanceOptions(fresh=True, tolerance_va=TOLERANCE_VA, time_limit_s=30))
    assert result.status is SolveStatus.OPTIMAL
    assert expected - 1e-6 <= result.after.spread_va <= expected + TOLERANCE_VA + 1e-6
    assert result.lower_bound_spread_va <= expected + 1e-6

"""How good an arrangement is, said the way a designer reads it on the printout and the Summary
sheet: how low no arrangement can go, what this one reaches, proven or not; no solver terms
(the exact figures stay in --verbose and the JSON)."""

from __future__ import annotations

import dataclasses
import math
import re

import pytest
from writer_demo import demo_result

from balancer.domain.result import SolveStatus
from balancer.report.text import proof_sentence

SOLVER_WORDS = re.compile(r"\b(bounds?|gap|tolerance|polygon|relaxation|incumbent)\b", re.I)


def test_proven_exactly_says_no_arrangement_goes_lower() -> None:
    result = demo_result()
    spread = result.after.spread_va
    exact = dataclasses.replace(result, lower_bound_spread_va=spread, goal_proven=True)
    text = proof_sentence(exact)
    assert text == (
        f"Proven the best possible: no arrangement brings the phase spread below {spread:,.0f} VA."
    )


def test_proven_within_the_margin_gives_both_figures() -> None:
    result = demo_result()
    spread = result.after.spread_va
    near = dataclasses.replace(result, lower_bound_spread_va=spread - 1, goal_proven=True)
    assert proof_sentence(near) == (
        "Within 1 VA of the best possible (proven): no arrangement brings the phase spread "
        f"below {spread - 1:,.0f} VA; this one has {spread:,.0f} VA."
    )


def test_a_move_budget_is_named() -> None:
    result = demo_result()
    spread = result.after.spread_va
    limited = dataclasses.replace(
        result, lower_bound_spread_va=spread, goal_proven=True, move_budget=1
    )
    assert "no arrangement moving at most 1 breaker brings" in proof_sentence(limited)
    two = dataclasses.replace(limited, move_budget=2)
    assert "moving at most 2 breakers" in proof_sentence(two)


def test_not_proven_says_how_much_might_still_be_gained() -> None:
    result = demo_result()
    spread = result.after.spread_va
    open_ = dataclasses.replace(
        result, status=SolveStatus.FEASIBLE, lower_bound_spread_va=spread - 40, goal_proven=False
    )
    text = proof_sentence(open_)
    assert text.startswith("Not proven the best")
    assert f"below {spread - 40:,.0f} VA; this one has {spread:,.0f} VA" in text
    assert "up to 40 VA might still be gained" in text


def test_no_floor_found_in_time() -> None:
    result = demo_result()
    current = dataclasses.replace(
        result,
        status=SolveStatus.FEASIBLE,
        first_goal="neutral",
        goal_value=12.5,
        goal_bound=-math.inf,
        goal_proven=False,
    )
    text = proof_sentence(current)
    assert text.startswith("Not proven the best: this one has 12.50 A")
    assert "time limit" in text


@pytest.mark.parametrize("status", [SolveStatus.OPTIMAL, SolveStatus.FEASIBLE])
def test_later_aims_unproven_are_said(status: SolveStatus) -> None:
    result = dataclasses.replace(demo_result(), status=status, goal_proven=True)
    text = proof_sentence(result)
    assert ("later aims" in text) == (status is SolveStatus.FEASIBLE)


def test_nothing_to_rearrange() -> None:
    assert proof_sentence(demo_result(moves=False)).startswith("Nothing to rearrange")


@pytest.mark.parametrize(
    "changes",
    [
        {"goal_proven": True},
        {"status": SolveStatus.FEASIBLE, "goal_proven": False},
        {"status": SolveStatus.FEASIBLE, "lower_bound_spread_va": -math.inf},
        {"first_goal": "transformer", "goal_value": 61.2, "goal_bound": 60.0},
        {"first_goal": "line", "goal_value": 80.0, "goal_bound": 79.99, "goal_proven": True},
    ],
)
def test_no_solver_terms_in_any_sentence(changes: dict[str, object]) -> None:
    text = proof_sentence(dataclasses.replace(demo_result(), **changes))  # type: ignore[arg-type]
    assert not SOLVER_WORDS.search(text), text

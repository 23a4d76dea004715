"""The engine against exhaustive search on small invented panels (demo data, made up here).

The reference enumerates every legal placement by dynamic programming over occupied spaces, with
its own reading of the rules (written apart from the engine): odd left / even right, row r on
line r mod n (common practice), k-pole spans n, n+2, …, multiwire members adjacent on one side
on different lines (NEC 2023 210.4), no 1-pole load on a high leg (NEC 408.3(E) puts it on B); F,
docs/references.md.
"""

from __future__ import annotations

import functools
import itertools
import math
import random

import pytest
from conftest import slow_cases

from balancer.domain.panel import Circuit, Panel
from balancer.domain.result import BalanceOptions, SolveStatus
from balancer.domain.systems import get_system
from balancer.optimize import balance

TOL_VA = 0.1  # below the 0.5 VA grid of whole-VA loads split over two poles: the optimum is exact
ATOL_VA = 1e-6


def _line(panel: Panel, space: int) -> str:
    return panel.lines[((space - 1) // 2) % len(panel.lines)]


def _positions(
    panel: Panel, circuits: list[Circuit], keep: list[bool]
) -> list[tuple[tuple[int, ...], ...]]:
    """Every legal (spans per member) for one circuit or one multiwire group."""
    total = sum(c.poles for c in circuits)
    out = set()
    for order in itertools.permutations(range(len(circuits))):
        for first in range(1, panel.spaces + 1):
            block = [first + 2 * k for k in range(total)]
            if block[-1] > panel.spaces:
                continue
            spans: list[tuple[int, ...]] = [()] * len(circuits)
            at = 0
            for k in order:
                spans[k] = tuple(block[at : at + circuits[k].poles])
                at += circuits[k].poles
            if len({_line(panel, s) for s in block}) != len(block):
                continue
            if any(keep[k] and spans[k] != circuits[k].spaces for k in range(len(circuits))):
                continue
            if any(
                c.poles == 1 and not panel.system.serves_line_to_neutral(_line(panel, s[0]))
                for c, s in zip(circuits, spans, strict=True)
            ):
                continue
            out.add(tuple(spans))
    return sorted(out)


def brute_force(panel: Panel, fresh: bool) -> dict[tuple[float, ...], int]:
    """Every reachable phase-VA vector (rounded) → fewest moves reaching it."""
    keep = [c.locked or (c.is_spare and c.placed) for c in panel.circuits]
    base = dict.fromkeys(panel.lines, 0.0)
    taken = 0
    for c, k in zip(panel.circuits, keep, strict=True):
        if k and not c.group:
            for s in c.spaces:
                base[_line(panel, s)] += c.load_va / c.poles
                taken |= 1 << s
    pieces: list[list[int]] = [
        [i] for i, c in enumerate(panel.circuits) if not keep[i] and not c.group
    ]
    for name in sorted({c.group for c in panel.circuits if c.group}):
        pieces.append([i for i, c in enumerate(panel.circuits) if c.group == name])
    states: dict[tuple[int, tuple[float, ...]], int] = {
        (taken, tuple(base[x] for x in panel.lines)): 0
    }
    for piece in pieces:
        circuits = [panel.circuits[i] for i in piece]
        options = _positions(panel, circuits, [keep[i] for i in piece])
        nxt: dict[tuple[int, tuple[float, ...]], int] = {}
        for (mask, phase), moves in states.items():
            for spans in options:
                bits = sum(1 << s for span in spans for s in span)
                if mask & bits:
                    continue
                new = list(phase)
                cost = moves
                for c, span in zip(circuits, spans, strict=True):
                    for s in span:
                        new[panel.lines.index(_line(panel, s))] += c.load_va / c.poles
                    if not fresh and c.placed and c.spaces != span:
                        cost += 1
                key = (mask | bits, tuple(round(v, 6) for v in new))
                if cost < nxt.get(key, math.inf):
                    nxt[key] = cost
        states = nxt
    out: dict[tuple[float, ...], int] = {}
    for (_, phase), moves in states.items():
        out[phase] = min(moves, out.get(phase, math.inf))  # type: ignore[arg-type]
    return out


def random_panel(seed: int) -> Panel:
    """An invented 12-space panel: 5 to 8 circuits, some placed, some locked, maybe a group."""
    rng = random.Random(seed)
    system = get_system(rng.choice(["208Y/120", "208Y/120", "120/240", "240/120"]))
    spaces = 12
    n = len(system.lines)
    circuits: list[Circuit] = []
    occupied: set[int] = set()
    poles_used = 0
    for i in range(rng.randint(5, 8)):
        poles = rng.choice([1, 1, 1, 2, 3][: 5 if n == 3 else 4])
        if poles_used + poles > spaces - 1:
            break
        poles_used += poles
        load = float(
            rng.choice([0, 180, 360, 500, 720, 900, 1000, 1440, 1500, 2000]) + rng.randint(0, 9)
        )
        circuit = Circuit(
            f"c{i}", "demo load", poles, load, power_factor=rng.choice([1.0, 0.9, 0.8])
        )
        if rng.random() < 0.7:  # place it where it fits legally
            firsts = [
                f
                for f in range(1, spaces + 1)
                if f + 2 * (poles - 1) <= spaces
                and not {f + 2 * k for k in range(poles)} & occupied
                and (poles > 1 or system.serves_line_to_neutral(system.lines[((f - 1) // 2) % n]))
            ]
            if firsts:
                f = rng.choice(firsts)
                span = tuple(f + 2 * k for k in range(poles))
                occupied |= set(span)
                circuit = circuit.moved_to(span)
                if rng.random() < 0.15:
                    circuit = Circuit(**{**_fields(circuit), "locked": True})
        circuits.append(circuit)
    if rng.random() < 0.4 and system.neutral:
        singles = [i for i, c in enumerate(circuits) if c.poles == 1 and not c.locked]
        if len(singles) >= 2:
            for i in rng.sample(singles, 2):
                circuits[i] = Circuit(**{**_fields(circuits[i]), "group": "mw1"})
    return Panel("demo", system, spaces, tuple(circuits))


def _fields(c: Circuit) -> dict[str, object]:
    return {f: getattr(c, f) for f in Circuit.__slots__}  # type: ignore[attr-defined]


def _spread(phase: tuple[float, ...]) -> float:
    return max(phase) - min(phase)


@functools.cache
def _reachable(seed: int, fresh: bool) -> dict[tuple[float, ...], int]:
    """``brute_force`` of ``random_panel(seed)``, enumerated once for the tests that share it."""
    return brute_force(random_panel(seed), fresh)


# seeds whose enumeration takes about a second or more run in the whole suite only
@pytest.mark.parametrize("seed", slow_cases(range(40), slow={6, 10, 16, 20}))
def test_spread_matches_exhaustive_search(seed: int) -> None:
    panel = random_panel(seed)
    for fresh in (True, False):
        reachable = _reachable(seed, fresh)
        if not reachable:
            pytest.skip("the invented panel has no legal arrangement")
        best = min(_spread(p) for p in reachable)
        result = balance(panel, BalanceOptions(fresh=fresh, tolerance_va=TOL_VA))
        assert result.status is SolveStatus.OPTIMAL
        assert result.after.spread_va == pytest.approx(best, abs=ATOL_VA)
        assert result.lower_bound_spread_va <= best + ATOL_VA
        if not fresh:
            fewest = min(m for p, m in reachable.items() if _spread(p) <= best + ATOL_VA)
            assert len(result.moves) == fewest


@pytest.mark.parametrize("seed", slow_cases(range(0, 40, 3), slow={6}))
def test_move_budget_matches_exhaustive_search_and_is_monotone(seed: int) -> None:
    panel = random_panel(seed)
    reachable = _reachable(seed, fresh=False)
    if not reachable:
        pytest.skip("the invented panel has no legal arrangement")
    fewest_possible = min(reachable.values())
    previous = math.inf
    for budget in range(fewest_possible, fewest_possible + 4):
        best = min(_spread(p) for p, m in reachable.items() if m <= budget)
        result = balance(panel, BalanceOptions(max_moves=budget, tolerance_va=TOL_VA))
        assert len(result.moves) <= budget
        assert result.after.spread_va == pytest.approx(best, abs=ATOL_VA)
        assert result.after.spread_va <= previous + ATOL_VA
        previous = result.after.spread_va


@pytest.mark.parametrize("seed", range(12))
def test_step_bound_is_valid_on_coarse_loads(seed: int) -> None:
    # Movable loads in steps of 250 VA and a locked load off that step: every line keeps its
    # fixed load plus whole steps, so the spread cannot fall below the water-filling bound;
    # exhaustive search is the referee.
    from balancer.optimize.model import build_layout, spread_lower_bound

    rng = random.Random(1000 + seed)
    system = get_system(rng.choice(["208Y/120", "120/240"]))
    circuits = [
        Circuit("fixed", "locked demo load", 1, float(rng.randint(1, 249)), (1,), locked=True)
    ]
    for i in range(rng.randint(3, 5)):
        poles = rng.choice([1, 1, 2])
        circuits.append(Circuit(f"m{i}", "demo load", poles, 250.0 * poles * rng.randint(1, 8)))
    panel = Panel("residue", system, 12, tuple(circuits))
    reachable = brute_force(panel, fresh=True)
    best = min(_spread(p) for p in reachable)
    bound = spread_lower_bound(build_layout(panel, BalanceOptions(fresh=True)))
    assert bound <= best + ATOL_VA
    assert bound > 0  # the locked load's residue keeps the lines apart
    result = balance(panel, BalanceOptions(fresh=True, tolerance_va=TOL_VA))
    assert result.after.spread_va == pytest.approx(best, abs=ATOL_VA)
    assert result.lower_bound_spread_va <= best + ATOL_VA


@pytest.mark.parametrize("seed", range(15))
def test_step_bound_never_exceeds_the_optimum_with_one_step_loads(seed: int) -> None:
    # Movable 1-pole loads all equal to the step: the relaxation behind the bound differs from
    # the problem only by the spaces each line has, so the bound is a true floor (and often
    # the optimum itself); exhaustive search is the referee.
    from balancer.optimize.model import build_layout, spread_lower_bound

    rng = random.Random(2000 + seed)
    system = get_system(rng.choice(["208Y/120", "120/240"]))
    step = float(rng.choice([100, 250, 360]))
    circuits = [
        Circuit(f"f{s}", "locked demo load", 1, float(rng.randint(0, 1500)), (s,), locked=True)
        for s in (1, 3, 5)[: len(system.lines)]
    ]
    circuits += [Circuit(f"m{i}", "demo load", 1, step) for i in range(rng.randint(1, 6))]
    panel = Panel("steps", system, 12, tuple(circuits))
    best = min(_spread(p) for p in brute_force(panel, fresh=True))
    bound = spread_lower_bound(build_layout(panel, BalanceOptions(fresh=True)))
    assert bound <= best + ATOL_VA

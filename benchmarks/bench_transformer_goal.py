"""Benchmark: balancing 240/120 V high-leg panels for their supply bank's heaviest winding.

Panels are invented (seeded random loads): 42 spaces, about 80 % used, 1-pole loads on A and
C only (B is the high leg), a quarter 2-pole 240 V loads, on a 75 kVA closed delta bank. For
each panel, fresh and as placed, the spread goal and the transformer goal are run in-process;
the table gives seconds, status, moves, the bank's heaviest winding and the neutral.

Run:  python benchmarks/bench_transformer_goal.py [--panels 3] [--time-limit 20]
"""

from __future__ import annotations

import argparse
import random
import sys
import time
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))

from balancer.building.tree import Building, Feed, make_building, roll_up
from balancer.domain.panel import Circuit, Panel
from balancer.domain.result import BalanceOptions
from balancer.domain.systems import get_system
from balancer.optimize import balance
from balancer.physics.transformer import loading_terms, supply_bank

HIGH_LEG = get_system("240/120")
SPACES = 42
BANK_KVA = 75.0


def demo_panel(seed: int) -> Panel:
    rng = random.Random(seed)
    circuits: list[Circuit] = []
    used: set[int] = set()
    for space in range(1, SPACES + 1):
        if space in used or rng.random() > 0.8:
            continue
        line = HIGH_LEG.lines[((space - 1) // 2) % 3]
        if rng.random() < 0.25 and space + 2 <= SPACES and space + 2 not in used:
            load = rng.choice([1800.0, 2400.0, 3600.0, 4800.0])
            circuits.append(Circuit(str(space), f"240 V load {space}", 2, load, (space, space + 2)))
            used |= {space, space + 2}
        elif line != "B":
            load = rng.choice([180.0, 360.0, 540.0, 720.0, 900.0, 1200.0, 1500.0])
            pf = rng.choice([1.0, 0.9])
            circuits.append(
                Circuit(str(space), f"120 V load {space}", 1, load, (space,), power_factor=pf)
            )
            used.add(space)
    return Panel(f"HL{seed}", HIGH_LEG, SPACES, tuple(circuits))


def _bank_figures(panel: Panel) -> tuple[float, float]:
    """(heaviest winding %, neutral A) of ``panel`` on the bank, through the roll-up."""
    bank = supply_bank(HIGH_LEG, BANK_KVA)
    service = Panel("S", get_system("480 delta"), 6, (Circuit("1", "feeder", 3, 0.0, (1, 3, 5)),))
    building: Building = make_building("b", [service, panel], [Feed(panel.name, "S", "1", bank)])
    figures = roll_up(building)
    loading = figures.feeders[panel.name].transformer_loading_pct or 0.0
    return loading, figures.panels[panel.name].neutral_a


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--panels", type=int, default=3)
    parser.add_argument("--time-limit", type=float, default=20.0)
    args = parser.parse_args()
    terms = loading_terms(supply_bank(HIGH_LEG, BANK_KVA))
    print(
        "| panel | circuits | layout | goal | s | status | moves | heaviest winding % | neutral A |"
    )
    print("|---|---:|---|---|---:|---|---:|---:|---:|")
    for seed in range(1, args.panels + 1):
        panel = demo_panel(seed)
        found = _bank_figures(panel)
        print(
            f"| HL{seed} | {len(panel.circuits)} | as found | - | - | - | - | "
            f"{found[0]:.1f} | {found[1]:.1f} |"
        )
        for fresh in (True, False):
            for goal in ("spread", "transformer"):
                options = BalanceOptions(
                    fresh=fresh,
                    time_limit_s=args.time_limit,
                    objective=goal,  # type: ignore[arg-type]
                    transformer_terms=terms,
                )
                start = time.perf_counter()
                result = balance(panel, options)
                seconds = time.perf_counter() - start
                loading, neutral = _bank_figures(result.after_panel)
                layout = "fresh" if fresh else "as placed"
                print(
                    f"| HL{seed} | {len(panel.circuits)} | {layout} | {goal} | {seconds:.2f} | "
                    f"{result.status.value} | {len(result.moves)} | {loading:.1f} | {neutral:.1f} |"
                )


if __name__ == "__main__":
    main()

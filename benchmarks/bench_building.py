"""Benchmark: balance a generated building of panels of 42 spaces, subpanels first.

The building is invented (seeded random loads): a 480Y/277 V service feeding 480Y/277 V
distribution panels, delta-wye transformers down to 208Y/120 V panels, and below those
three-phase and single-phase 3-wire (two lines of the wye) subpanels. Every panel has three
feeder positions (3-pole at spaces 1, 2 and 7) and is otherwise filled with 1- and 2-pole loads
placed at random, so every panel starts unbalanced.

Run:  python benchmarks/bench_building.py [--panels 100] [--repeat 3] [--sizes 25,50,100]

``--sizes`` runs each size in a fresh process and reports its peak resident memory, to show
whether memory grows with the number of panels.
"""

from __future__ import annotations

import argparse
import random
import resource
import statistics
import subprocess
import sys
import time
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))

from balancer.building.tree import Building, Feed, balance_building, make_building
from balancer.domain.panel import Circuit, Panel
from balancer.domain.result import BalanceOptions, SolveStatus
from balancer.domain.systems import System, get_system
from balancer.physics.transformer import make_transformer

SPACES = 42
ODD_LOADS = "--odd-loads" in sys.argv
FEEDER_SPACES = (1, 2, 7)  # 3-pole feeders there take 1-3-5, 2-4-6 and 7-9-11
S480 = get_system("480Y/277")
S208 = get_system("208Y/120")
S208_1PH = get_system("120/208 network")


def _loads(rng: random.Random, system: System, taken: set[int], fill: float) -> list[Circuit]:
    """1- and 2-pole loads at random in the free spaces, about ``fill`` of them used."""
    circuits: list[Circuit] = []
    free = [s for s in range(1, SPACES + 1) if s not in taken]
    rng.shuffle(free)
    used = set(taken)
    # 480Y/277 panels carry 277 V lighting and 480 V equipment in round figures; odd values
    # (a 120 V list scaled by 277/120) make the proofs much slower: see --odd-loads
    scale = 277.0 / 120.0 if system is S480 and ODD_LOADS else 1.0
    heavy = system is S480 and not ODD_LOADS
    for space in free:
        if space in used or rng.random() > fill:
            continue
        two_pole = rng.random() < 0.15 and space + 2 <= SPACES and space + 2 not in used
        if two_pole:
            spaces: tuple[int, ...] = (space, space + 2)
            load = rng.choice([1800.0, 2400.0, 3600.0, 4800.0])
            if heavy:
                load = rng.choice([5000.0, 7500.0, 10000.0, 12500.0])
        else:
            spaces = (space,)
            load = rng.choice([180.0, 360.0, 540.0, 720.0, 900.0, 1200.0, 1500.0, 1800.0])
            if heavy:
                load = rng.choice([500.0, 750.0, 1000.0, 1250.0, 1500.0, 2000.0, 2500.0, 3000.0])
        used.update(spaces)
        circuits.append(
            Circuit(
                id=str(space),
                description=f"load {space}",
                poles=len(spaces),
                load_va=round(load * scale),
                spaces=spaces,
                power_factor=rng.choice([1.0, 1.0, 0.95, 0.9]),
            )
        )
    return circuits


def generate(panel_count: int, seed: int = 1) -> Building:
    """A tree of ``panel_count`` panels: breadth first, three feeder positions per panel."""
    rng = random.Random(seed)
    kinds: list[str] = ["service"]
    parents: list[int] = [-1]
    slots: dict[int, list[int]] = {0: list(FEEDER_SPACES)}
    queue = [0]
    while len(kinds) < panel_count:
        parent = queue[0]
        if not slots[parent]:
            queue.pop(0)
            continue
        slots[parent].pop(0)
        parent_kind = kinds[parent]
        if parent_kind == "service":
            kind = "distribution"
        elif parent_kind == "distribution":
            kind = "lighting"  # through a delta-wye transformer
        elif parent_kind == "lighting":
            kind = rng.choice(["lighting", "apartment"])
        else:
            raise AssertionError("apartment panels feed nothing")
        index = len(kinds)
        kinds.append(kind)
        parents.append(parent)
        slots[index] = list(FEEDER_SPACES) if kind != "apartment" else []
        queue.append(index)
    names = [f"{k[0].upper()}{i:03d}" for i, k in enumerate(kinds)]
    children: dict[int, list[int]] = {i: [] for i in range(panel_count)}
    for i, p in enumerate(parents):
        if p >= 0:
            children[p].append(i)
    panels: list[Panel] = []
    feeds: list[Feed] = []
    for i, kind in enumerate(kinds):
        system = S480 if kind in ("service", "distribution") else S208
        if kind == "apartment":
            system = S208_1PH
        feeders: list[Circuit] = []
        for position, child in zip(FEEDER_SPACES, children[i], strict=False):
            poles = 2 if kinds[child] == "apartment" else 3
            spaces = tuple(position + 2 * k for k in range(poles))
            feeders.append(
                Circuit(
                    id=str(position),
                    description=f"feeder to {names[child]}",
                    poles=poles,
                    load_va=0.0,
                    spaces=spaces,
                )
            )
            transformer = None
            if kind == "distribution":
                transformer = make_transformer(f"T{child:03d}", 75, S480, S208, "delta-wye")
            feeds.append(Feed(names[child], names[i], str(position), transformer))
        taken = {s for c in feeders for s in c.spaces}
        fill = 0.7 if kind != "apartment" else 0.5
        circuits = feeders + _loads(rng, system, taken, fill)
        panels.append(Panel(names[i], system, SPACES, tuple(circuits)))
    return make_building(f"generated-{panel_count}", panels, feeds)


def run_once(panel_count: int, options: BalanceOptions, jobs: int) -> dict[str, float]:
    building = generate(panel_count)
    start = time.perf_counter()
    result = balance_building(building, options, jobs=jobs)
    seconds = time.perf_counter() - start
    statuses = [o.status for o in result.outcomes.values()]
    worst_before = max(f.imbalance_pct for f in result.before_figures.panels.values())
    worst_after = max(f.imbalance_pct for f in result.after_figures.panels.values())
    service = result.after_figures.panels[building.services()[0]]
    return {
        "panels": float(len(building.panels)),
        "circuits": float(sum(len(p.circuits) for p in building.panels)),
        "seconds": seconds,
        "proven": float(sum(s is SolveStatus.OPTIMAL for s in statuses)),
        "spread_proven": float(sum(o.spread_proven for o in result.outcomes.values())),
        "exact": float(sum(o.exact for o in result.outcomes.values())),
        "worst_before_pct": worst_before,
        "worst_after_pct": worst_after,
        "service_imbalance_pct": service.imbalance_pct,
        "peak_rss_mib": resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024.0,
    }


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--panels", type=int, default=100)
    parser.add_argument("--repeat", type=int, default=3)
    parser.add_argument("--time-limit", type=float, default=10.0, help="per panel, seconds")
    parser.add_argument("--tolerance", type=float, default=1.0, help="VA")
    parser.add_argument("--sizes", default="", help="comma list: one fresh process per size")
    parser.add_argument("--jobs", type=int, default=2, help="worker processes per tree level")
    parser.add_argument("--fresh", action="store_true", help="lay panels out anew (no moves goal)")
    parser.add_argument("--one", action="store_true", help=argparse.SUPPRESS)
    parser.add_argument(
        "--odd-loads", action="store_true", help="480Y/277 loads as a 120 V list scaled by 277/120"
    )
    args = parser.parse_args()
    options = BalanceOptions(
        time_limit_s=args.time_limit, tolerance_va=args.tolerance, fresh=args.fresh
    )
    if args.one:
        figures = run_once(args.panels, options, args.jobs)
        print(" ".join(f"{k}={v:.3f}" for k, v in figures.items()))
        return
    if args.sizes:
        print(
            "| panels | circuits | seconds | spread proven | peak RSS MiB | MiB per extra panel |"
        )
        print("|---:|---:|---:|---:|---:|---:|")
        base = None
        for size in [int(s) for s in args.sizes.split(",")]:
            out = subprocess.run(
                [
                    sys.executable,
                    __file__,
                    "--one",
                    "--panels",
                    str(size),
                    "--time-limit",
                    str(args.time_limit),
                    "--jobs",
                    str(args.jobs),
                    *(["--fresh"] if args.fresh else []),
                    *(["--odd-loads"] if args.odd_loads else []),
                ],
                check=True,
                capture_output=True,
                text=True,
            ).stdout.split()
            f = {k: float(v) for k, v in (item.split("=") for item in out)}
            base = base or (f["panels"], f["peak_rss_mib"])
            slope = (f["peak_rss_mib"] - base[1]) / max(1.0, f["panels"] - base[0])
            print(
                f"| {f['panels']:.0f} | {f['circuits']:.0f} | {f['seconds']:.1f} | "
                f"{f['spread_proven']:.0f}/{f['panels']:.0f} | {f['peak_rss_mib']:.0f} | "
                f"{slope:.2f} |"
            )
        return
    runs = [run_once(args.panels, options, args.jobs) for _ in range(args.repeat)]
    seconds = [r["seconds"] for r in runs]
    last = runs[-1]
    print(
        f"building of {last['panels']:.0f} panels, {last['circuits']:.0f} circuits, "
        f"{SPACES} spaces each"
    )
    print(
        f"balance_building: median {statistics.median(seconds):.1f} s over {len(runs)} runs "
        f"(min {min(seconds):.1f}, max {max(seconds):.1f}); target under 90 s"
    )
    worst = min(runs, key=lambda r: (r["spread_proven"], r["proven"]))
    print(
        f"phase spread proven best within {args.tolerance:g} VA, worst of the runs: "
        f"{worst['spread_proven']:.0f}/{worst['panels']:.0f} panels; every goal (spread, moves, "
        f"neutral) proven: {worst['proven']:.0f}; subpanel loads seen exactly: {worst['exact']:.0f}"
    )
    print(
        f"worst panel imbalance {last['worst_before_pct']:.1f} % before, "
        f"{last['worst_after_pct']:.2f} % after; service {last['service_imbalance_pct']:.3f} %"
    )
    print(f"peak RSS {last['peak_rss_mib']:.0f} MiB")


if __name__ == "__main__":
    main()

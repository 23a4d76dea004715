"""Benchmark the balancing engine against greedy, Karmarkar–Karp and a plain space-level model.

Panels are invented demo data (seeded random, so every run builds the same ones): 208Y/120 V
panels of 42 and 84 spaces about 90 % full of 1-, 2- and 3-pole circuits, either with
trade-typical round loads (multiples of 180 VA and common appliance ratings) or with odd loads
(whole VA, any value), which make a split within 1 VA much harder to find.

The engine is timed as the whole command, ``balancer balance FILE --json`` in a fresh process
(median of ``--repeat`` runs); peak memory is the largest resident set of those processes.
Baselines run in this process: greedy and Karmarkar–Karp choose lines only (their spread is the
phase spread of that choice); the plain model places every breaker in every space at once and
is solved by HiGHS with its default relative gap, to show why the engine decides lines first.

Run:  python benchmarks/run_benchmarks.py [--repeat 3] [--quick]
It rewrites the results table in benchmarks/README.md between the two marker lines.
"""

from __future__ import annotations

import argparse
import json
import os
import platform
import random
import resource
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))

from balancer.domain.panel import Circuit, Panel
from balancer.domain.result import BalanceOptions
from balancer.domain.systems import get_system
from balancer.optimize.model import build_layout, build_model
from balancer.optimize.search.baselines import greedy_lines, karmarkar_karp_lines
from balancer.optimize.search.lines import pattern_spread_va
from balancer.optimize.solve import solve_goal

HERE = Path(__file__).resolve().parent
START = "<!-- results: start -->"
END = "<!-- results: end -->"
ROUND_LOADS = (180, 360, 540, 720, 900, 1080, 1200, 1440, 1500, 1800)  # common practice sizes
PLAIN_TIME_LIMIT_S = 20.0


def demo_panel(spaces: int, seed: int, odd: bool) -> Panel:
    """An invented panel, about 90 % full, circuits placed in the order drawn."""
    rng = random.Random(seed * 1000 + spaces + (1 if odd else 0))
    system = get_system("208Y/120")
    geometry = Panel("demo", system, spaces, ()).geometry
    circuits: list[Circuit] = []
    taken: set[int] = set()
    budget = int(spaces * 0.9)
    i = 0
    while budget > 0:
        poles = min(rng.choice([1, 1, 1, 1, 1, 2, 2, 3]), budget)
        if odd:
            load = float(rng.randint(150, 1900) * poles)
        else:
            load = float(rng.choice(ROUND_LOADS) * poles)
        circuit = Circuit(
            f"c{i}", f"demo load {i}", poles, load, power_factor=rng.choice([1.0, 0.95, 0.85])
        )
        for first in range(1, spaces + 1):
            span = geometry.span(first, poles)
            if geometry.fits(first, poles) and not set(span) & taken:
                taken |= set(span)
                circuit = circuit.moved_to(span)
                break
        circuits.append(circuit)
        budget -= poles
        i += 1
    return Panel(f"demo-{spaces}-{seed}", system, spaces, tuple(circuits))


def write_csv(panel: Panel, folder: Path) -> Path:
    path = folder / f"{panel.name}.csv"
    rows = [f"System:,{panel.system.designation}", f"Spaces:,{panel.spaces}"]
    rows.append("Ckt,Description,Poles,VA,PF")
    for c in panel.circuits:
        spaces = ",".join(str(s) for s in c.spaces)
        rows.append(f'"{spaces}",{c.description},{c.poles},{c.load_va:g},{c.power_factor:g}')
    path.write_text("\n".join(rows) + "\n", encoding="utf-8")
    return path


def run_cli(path: Path, args: list[str]) -> tuple[float, dict[str, object]]:
    out = path.with_suffix(".out.xlsx")
    command = [sys.executable, "-m", "balancer", "balance", str(path), "--json", "-o", str(out)]
    begin = time.perf_counter()
    done = subprocess.run(command + args, capture_output=True, text=True, check=False)
    seconds = time.perf_counter() - begin
    if done.returncode != 0:
        raise RuntimeError(f"balancer failed ({done.returncode}): {done.stderr[-500:]}")
    return seconds, json.loads(done.stdout)


def baselines(panel: Panel, plain_model: bool) -> dict[str, tuple[float, float, str]]:
    """name → (seconds, spread VA, status)."""
    options = BalanceOptions(fresh=True)
    layout = build_layout(panel, options)
    out: dict[str, tuple[float, float, str]] = {}
    for name, method in (("greedy", greedy_lines), ("Karmarkar–Karp", karmarkar_karp_lines)):
        begin = time.perf_counter()
        picks = method(layout)
        seconds = time.perf_counter() - begin
        spread = pattern_spread_va(layout, picks) if picks is not None else float("nan")
        out[name] = (seconds, spread, "heuristic")
    if not plain_model:
        return out
    begin = time.perf_counter()
    plain = build_model(layout, "space", options, include=())
    stage = solve_goal(plain, "spread", "highs", PLAIN_TIME_LIMIT_S, 0.0)
    seconds = time.perf_counter() - begin
    status = "proven" if stage.proven else f"not proven, bound {stage.bound:.1f} VA"
    out["plain space model"] = (seconds, stage.value, status)
    return out


def main() -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--repeat", type=int, default=3)
    parser.add_argument("--quick", action="store_true", help="one seed per case")
    args = parser.parse_args()
    seeds = [1] if args.quick else [1, 2, 3]
    lines = [
        START,
        "",
        f"Machine: {platform.machine()}, {os.cpu_count()} cores, Python "
        f"{platform.python_version()}; shared with other work, so times are noisy. "
        f"Run on {time.strftime('%Y-%m-%d %H:%M UTC', time.gmtime())}.",
        "",
        "### Engine, whole command (`balancer balance FILE --json --fresh --no-tradeoff`)",
        "",
        "| panel | loads | seed | median s | of which solving s | runs | spread VA | bound VA "
        "| status |",
        "|---|---|---|---|---|---|---|---|---|",
    ]
    base_rows = [
        "",
        "### Baselines on the same panels (in-process, lines only for the heuristics)",
        "",
        "| panel | loads | seed | method | s | spread VA | status |",
        "|---|---|---|---|---|---|---|",
    ]
    placed_rows = [
        "",
        "### Rebalancing the panel as placed (`--time-limit 10 --no-tradeoff`, one run)",
        "",
        "| panel | loads | seed | s | spread before → after VA | moves | status | notes |",
        "|---|---|---|---|---|---|---|---|",
    ]
    with tempfile.TemporaryDirectory() as folder:
        for spaces in (42, 84):
            for odd in (False, True):
                kind = "odd" if odd else "round"
                for seed in seeds:
                    panel = demo_panel(spaces, seed, odd)
                    path = write_csv(panel, Path(folder))
                    times = []
                    solving = []
                    for _ in range(args.repeat):
                        seconds, report = run_cli(path, ["--fresh", "--no-tradeoff"])
                        times.append(seconds)
                        solving.append(float(report["solve_seconds"]))  # type: ignore[arg-type]
                    after = report["after"]["spread_va"]  # type: ignore[index]
                    lines.append(
                        f"| {spaces} spaces | {kind} | {seed} | {statistics.median(times):.2f} | "
                        f"{statistics.median(solving):.2f} | {len(times)} | {after:.1f} | "
                        f"{report['lower_bound_spread_va']:.1f} | {report['status']} |"
                    )
                    for name, (seconds, spread, status) in baselines(
                        panel, seed == seeds[0]
                    ).items():
                        base_rows.append(
                            f"| {spaces} spaces | {kind} | {seed} | {name} | {seconds:.3f} | "
                            f"{spread:.1f} | {status} |"
                        )
                    if seed == seeds[0]:
                        seconds, report = run_cli(path, ["--time-limit", "10", "--no-tradeoff"])
                        found = report.get("notes", [])
                        notes = [n for n in found if n.startswith("moves")]  # type: ignore[union-attr]
                        placed_rows.append(
                            f"| {spaces} spaces | {kind} | {seed} | {seconds:.2f} | "
                            f"{report['before']['spread_va']:.1f} → "  # type: ignore[index]
                            f"{report['after']['spread_va']:.1f} | "  # type: ignore[index]
                            f"{len(report['moves'])} | {report['status']} | "  # type: ignore[arg-type]
                            f"{'; '.join(notes)} |"
                        )
                    print(lines[-1], flush=True)
    peak_mb = resource.getrusage(resource.RUSAGE_CHILDREN).ru_maxrss / 1024
    lines += base_rows + placed_rows
    lines += [
        "",
        f"Peak resident memory of one `balancer balance` process: {peak_mb:.0f} MB.",
        "",
        END,
    ]
    readme = HERE / "README.md"
    text = readme.read_text("utf-8") if readme.exists() else f"{START}\n{END}\n"
    head, _, rest = text.partition(START)
    _, _, tail = rest.partition(END)
    new = head + "\n".join(lines) + tail
    temp = readme.with_suffix(".md.tmp")
    temp.write_text(new, encoding="utf-8")
    os.replace(temp, readme)
    print("\n".join(lines))
    return 0


if __name__ == "__main__":
    raise SystemExit(main())

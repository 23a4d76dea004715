"""Record the figures balancer gives on every sample and benchmark panel, or compare them with a
recording: a refactoring must leave every figure as it was.

    python benchmarks/compare_figures.py record figures.json
    python benchmarks/compare_figures.py compare figures.json

Each sample is run through ``check --json`` and ``balance --json`` (default options, and fresh
with ``--no-tradeoff``); the benchmark panels (invented demo data, as in run_benchmarks.py)
through ``balance --fresh --no-tradeoff``. Timings, file names and other run-dependent fields
are left out; numbers are compared to 1e-6 relative.
"""

from __future__ import annotations

import argparse
import json
import math
import subprocess
import sys
import tempfile
from pathlib import Path
from typing import Any

HERE = Path(__file__).resolve().parent
ROOT = HERE.parent
SAMPLES = ROOT / "sample_schedules"
RUN_DEPENDENT = ("seconds", "output", "pdf", "path", "file")
REL_TOL = 1e-6


def _strip(data: Any) -> Any:
    if isinstance(data, dict):
        return {
            k: _strip(v) for k, v in data.items() if not any(word in k for word in RUN_DEPENDENT)
        }
    if isinstance(data, list):
        return [_strip(v) for v in data]
    return data


def _run(args: list[str], folder: Path) -> Any:
    command = [sys.executable, "-m", "balancer", *args, "--json"]
    if args[0] == "balance":
        command += ["-o", str(folder / "out.xlsx")]
    done = subprocess.run(command, capture_output=True, text=True, check=False, cwd=ROOT)
    try:
        data = json.loads(done.stdout)
    except json.JSONDecodeError:
        data = {"stdout": done.stdout[-2000:]}
    return {"exit": done.returncode, "json": _strip(data)}


def _cases(folder: Path) -> dict[str, list[str]]:
    sys.path.insert(0, str(HERE))
    from run_benchmarks import demo_panel, write_csv

    cases: dict[str, list[str]] = {}
    for sample in sorted(SAMPLES.glob("*.xlsx")) + sorted(SAMPLES.glob("*.csv")):
        cases[f"check {sample.name}"] = ["check", str(sample)]
        cases[f"balance {sample.name}"] = ["balance", str(sample)]
        cases[f"balance --fresh {sample.name}"] = ["balance", str(sample), "--fresh"]
    for spaces in (42, 84):
        for odd in (False, True):
            for seed in (1, 2, 3):
                path = write_csv(demo_panel(spaces, seed, odd), folder)
                name = f"bench {spaces} {'odd' if odd else 'round'} {seed}"
                cases[name] = ["balance", str(path), "--fresh", "--no-tradeoff"]
    return cases


def record() -> dict[str, Any]:
    with tempfile.TemporaryDirectory() as name:
        folder = Path(name)
        out = {}
        for case, args in _cases(folder).items():
            print(case, file=sys.stderr, flush=True)
            out[case] = _run(args, folder)
        return out


def _differences(old: Any, new: Any, where: str) -> list[str]:
    if isinstance(old, dict) and isinstance(new, dict):
        found = []
        for key in sorted(set(old) | set(new)):
            if key not in old or key not in new:
                found.append(f"{where}.{key}: only in {'new' if key in new else 'recorded'}")
            else:
                found += _differences(old[key], new[key], f"{where}.{key}")
        return found
    if isinstance(old, list) and isinstance(new, list):
        if len(old) != len(new):
            return [f"{where}: {len(old)} items recorded, {len(new)} now"]
        return [
            d
            for i, (a, b) in enumerate(zip(old, new, strict=True))
            for d in _differences(a, b, f"{where}[{i}]")
        ]
    if isinstance(old, (int, float)) and isinstance(new, (int, float)):
        if math.isclose(old, new, rel_tol=REL_TOL, abs_tol=1e-9):
            return []
        return [f"{where}: {old} recorded, {new} now"]
    return [] if old == new else [f"{where}: {old!r} recorded, {new!r} now"]


def main() -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("action", choices=("record", "compare"))
    parser.add_argument("file", type=Path)
    args = parser.parse_args()
    figures = record()
    if args.action == "record":
        args.file.write_text(json.dumps(figures, indent=1, sort_keys=True), encoding="utf-8")
        print(f"recorded {len(figures)} cases in {args.file}")
        return 0
    recorded = json.loads(args.file.read_text(encoding="utf-8"))
    differences = _differences(recorded, figures, "")
    for line in differences:
        print(line)
    print(f"{len(figures)} cases, {len(differences)} differences")
    return 1 if differences else 0


if __name__ == "__main__":
    raise SystemExit(main())

"""Shared test helpers: where the data files are, small invented panels (demo data), schedules
written to a temporary folder, and the command line run in-process."""

from __future__ import annotations

import csv
import json
from collections.abc import Collection, Iterable, Sequence
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import pytest
from openpyxl import Workbook

from balancer.domain.panel import Circuit, Panel
from balancer.domain.systems import System, get_system

ROOT = Path(__file__).resolve().parents[1]
DATA = Path(__file__).resolve().parent / "data"
SAMPLES = ROOT / "sample_schedules"

# The columns most invented schedules need; docs/format.md lists every accepted spelling.
SCHEDULE_HEADER = ("Circuit", "Description", "Poles", "Load (VA)")

Load = tuple[int, float, Sequence[int]]  # poles, VA, spaces (empty: not placed yet)


@pytest.fixture
def data_dir() -> Path:
    return DATA


@pytest.fixture
def samples_dir() -> Path:
    return SAMPLES


# ---------------------------------------------------------------- panels


def demo_panel(
    *circuits: Circuit, system: str | System = "208Y/120", spaces: int = 12, name: str = "demo"
) -> Panel:
    """An invented panel of the given system holding ``circuits``."""
    chosen = get_system(system) if isinstance(system, str) else system
    return Panel(name, chosen, spaces, tuple(circuits))


def panel_from(
    loads: Iterable[Load], system: str | System = "208Y/120", spaces: int = 12, name: str = "demo"
) -> Panel:
    """An invented panel from (poles, VA, spaces) triples; circuit k is named ``c<k>``."""
    circuits = (
        Circuit(f"c{k}", f"demo load {k}", poles, float(va), tuple(at))
        for k, (poles, va, at) in enumerate(loads, start=1)
    )
    return demo_panel(*circuits, system=system, spaces=spaces, name=name)


# ---------------------------------------------------------------- schedules on disk


def write_schedule(
    path: Path,
    rows: Iterable[Sequence[object]],
    header: Sequence[str] = SCHEDULE_HEADER,
    panel: dict[str, object] | None = None,
) -> Path:
    """A schedule at ``path``: CSV for a ``.csv`` name, else a workbook whose circuits are on a
    "Circuits" sheet and whose ``panel`` attributes, if any, are key/value rows of "Panel"."""
    if path.suffix.lower() == ".csv":
        with path.open("w", newline="", encoding="utf-8") as out:
            writer = csv.writer(out)
            writer.writerows([*(panel or {}).items()])
            writer.writerow(header)
            writer.writerows(rows)
        return path
    book = Workbook()
    sheet = book.active
    assert sheet is not None
    sheet.title = "Circuits"
    sheet.append(list(header))
    for row in rows:
        sheet.append(list(row))
    if panel:
        attributes = book.create_sheet("Panel")
        for key, value in panel.items():
            attributes.append([key, value])
    book.save(path)
    return path


# ---------------------------------------------------------------- the command line


@dataclass(frozen=True)
class CliRun:
    code: int
    out: str
    err: str

    def json(self) -> Any:
        return json.loads(self.out)


class Cli:
    """``balancer`` run in-process through ``balancer.cli.main.main``, its output captured."""

    def __init__(self, capsys: pytest.CaptureFixture[str]) -> None:
        self._capsys = capsys

    def __call__(self, *argv: str | Path) -> CliRun:
        # imported here so a test that never runs the command line does not load it
        from balancer.cli.main import main

        code = main([str(a) for a in argv])
        captured = self._capsys.readouterr()
        return CliRun(code, captured.out, captured.err)

    def json(self, *argv: str | Path) -> Any:
        """The JSON a run printed, asserting it ended with exit status 0."""
        run = self(*argv, "--json")
        assert run.code == 0, run.err or run.out
        return run.json()


@pytest.fixture
def cli(capsys: pytest.CaptureFixture[str]) -> Cli:
    return Cli(capsys)


# ---------------------------------------------------------------- long cases


def slow_cases(values: Iterable[Any], slow: Collection[Any]) -> list[Any]:
    """``values`` as parameters, those in ``slow`` marked slow: cases whose exhaustive reference
    takes seconds run in the whole suite, the rest in the quick one too. A tuple value gives
    one argument per name, as in ``parametrize(("make", "seed"), ...)``."""
    return [
        pytest.param(*(v if isinstance(v, tuple) else (v,)), marks=pytest.mark.slow)
        if v in slow
        else v
        for v in values
    ]

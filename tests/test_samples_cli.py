"""The bundled samples run end to end through the command line."""

from __future__ import annotations

import json
import math
from pathlib import Path

import pandas as pd
import pytest

from balancer.cli.main import main

SAMPLES = Path(__file__).resolve().parents[1] / "sample_schedules"
SAMPLE_FILES = sorted(p.name for p in SAMPLES.glob("*.xlsx")) + sorted(
    p.name for p in SAMPLES.glob("*.csv")
)


@pytest.mark.parametrize("name", SAMPLE_FILES)
def test_check_json_on_each_sample(name: str, capsys: pytest.CaptureFixture[str]) -> None:
    assert main(["check", "--json", str(SAMPLES / name)]) == 0
    data = json.loads(capsys.readouterr().out)
    loads = data["loads"]
    phase_va = loads["phase_va"]
    # JSON gives VA to 0.1 VA, each figure rounded on its own
    assert math.isclose(sum(phase_va.values()), loads["total_va"], abs_tol=0.15)
    assert math.isclose(
        max(phase_va.values()) - min(phase_va.values()), loads["spread_va"], abs_tol=0.15
    )
    assert loads["imbalance_pct"] > 1.0  # the samples are built with a visible imbalance
    placed = [c for c in data["circuits"] if c["spaces"]]
    assert sum(c["load_va"] for c in placed) == pytest.approx(loads["total_va"], abs=0.01)
    assert {c["id"] for c in data["circuits"] if not c["spaces"]} == set(loads["unplaced"])
    for circuit in placed:
        assert len(circuit["spaces"]) == circuit["poles"] == len(circuit["phases"])


def test_office_sample_phase_loads_by_independent_reading(
    capsys: pytest.CaptureFixture[str],
) -> None:
    # Re-derive the per-line loads with pandas and the common-practice numbering (row r of the
    # panel on line "ABC"[r % 3], a k-pole breaker at n taking n, n+2, ...), independently of the
    # tool's reader and geometry code.
    path = SAMPLES / "office-208y120.xlsx"
    frame = pd.read_excel(path, sheet_name="Circuits", header=3)
    frame = frame[pd.to_numeric(frame["Ckt"], errors="coerce").notna()]
    expected = {"A": 0.0, "B": 0.0, "C": 0.0}
    for _, row in frame.iterrows():
        poles = int(row["Poles"]) if not pd.isna(row["Poles"]) else 1
        load = 0.0 if pd.isna(row["Load (VA)"]) else float(row["Load (VA)"])
        for k in range(poles):
            space = int(row["Ckt"]) + 2 * k
            expected["ABC"[((space - 1) // 2) % 3]] += load / poles
    assert main(["check", "--json", str(path)]) == 0
    got = json.loads(capsys.readouterr().out)["loads"]["phase_va"]
    assert got == pytest.approx(expected, abs=0.05)  # JSON gives VA to 0.1 VA


def test_check_text_names_the_figures(capsys: pytest.CaptureFixture[str]) -> None:
    assert main(["check", str(SAMPLES / "office-208y120.xlsx")]) == 0
    out = capsys.readouterr().out
    for words in (
        "Panel L3A",
        "208Y/120 V",
        "imbalance",
        "neutral",
        "NEMA MG 1",
        "qualified",
        "de-energise",
    ):
        assert words in out


@pytest.mark.slow
def test_demo_writes_workbook_and_pdf(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    assert main(["demo", "--output-dir", str(tmp_path)]) == 0
    out = capsys.readouterr().out
    assert "demo data" in out
    assert "Result: phase spread" in out
    assert "proven" in out
    for name in ("office-208y120-balanced.xlsx", "office-208y120-balanced.pdf"):
        assert (tmp_path / name).stat().st_size > 0
        assert f"Wrote {tmp_path / name}" in out
    # it ends by saying what to open and what to try next
    closing = " ".join(out.rstrip().split("\n\n")[-1].split())
    assert closing.startswith(f"Open {tmp_path / 'office-208y120-balanced.xlsx'}")
    assert "Try next: balancer check" in closing
    assert closing.endswith("balancer serve --open for the same in a browser.")


@pytest.mark.parametrize(
    "sample",
    [p.name for p in sorted(SAMPLES.glob("*.xlsx"))] + ["salon-208y120.csv"],
)
def test_check_text_fits_a_terminal(sample: str, capsys: pytest.CaptureFixture[str]) -> None:
    assert main(["check", str(SAMPLES / sample), "--no-color"]) == 0
    wide = [line for line in capsys.readouterr().out.splitlines() if len(line) > 100]
    assert wide == []


def test_new_breakers_are_listed_where_they_go(
    capsys: pytest.CaptureFixture[str], tmp_path: Path
) -> None:
    clinic = SAMPLES / "clinic-after-additions-208y120.xlsx"  # four circuits with no space yet
    out = tmp_path / "clinic-balanced.xlsx"
    assert (
        main(["balance", str(clinic), "-o", str(out), "--no-tradeoff", "--time-limit", "10"]) == 0
    )
    text = capsys.readouterr().out
    listed = text.split("New breakers to install (4):")[1].split("\n\n")[0].splitlines()
    assert len([line for line in listed if line.strip()]) == 4
    assert all("new" in line and "->" in line and "-pole)" in line for line in listed if line)
    # and the revised workbook calls them new, where they were, in the Changes sheet
    from openpyxl import load_workbook

    changes = load_workbook(out)["Changes"]
    assert sum(1 for row in changes.iter_rows(values_only=True) if "new" in row) == 4

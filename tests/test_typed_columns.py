"""Per-line readings, harmonic profile and conductor are typed fields read and checked with the
schedule; a load basis never replaces the design load, so the revised workbook reads back as
the schedule did."""

from __future__ import annotations

import contextlib
import io
import json
from pathlib import Path
from typing import Any

import pytest
from openpyxl import load_workbook

from balancer.cli.main import main
from balancer.domain.panel import Panel
from balancer.errors import ScheduleError
from balancer.io.reader import read_schedule

ROOT = Path(__file__).resolve().parents[1]
CLINIC = ROOT / "sample_schedules" / "clinic-after-additions-208y120.xlsx"  # demo data
# Figures of the clinic sample on each basis from balancer before this change (the source is
# named in the file): the change must leave every one of them as it was.
BEFORE = json.loads((ROOT / "tests" / "data" / "good" / "clinic-figures-before.json").read_text())
BASES = ("nameplate", "measured", "larger")
REL = 1e-6
# The JSON now names the fundamental currents for what they are and gives every figure to the
# precision the terminal shows (0.1 VA, 0.1 A, 0.01 %): the old figures are compared so.
NEW_NAME = {"line_a": "line_fundamental_a", "neutral_a": "neutral_fundamental_a"}
SHOWN = {"_va": 0.05, "_a": 0.05, "_pct": 0.005}


def _shown(key: str) -> float:
    return next(step for unit, step in SHOWN.items() if key.endswith(unit))


def _balance(basis: str, out: Path) -> dict[str, Any]:
    argv = ["balance", str(CLINIC), "--json", "--work-order", "--basis", basis, "-o", str(out)]
    buffer = io.StringIO()
    with contextlib.redirect_stdout(buffer):
        assert main(argv) == 0
    data: dict[str, Any] = json.loads(buffer.getvalue())
    return data


@pytest.fixture(scope="module")
def runs(tmp_path_factory: pytest.TempPathFactory) -> dict[str, tuple[dict[str, Any], Path]]:
    folder = tmp_path_factory.mktemp("clinic")
    return {
        b: (_balance(b, folder / f"clinic-{b}.xlsx"), folder / f"clinic-{b}.xlsx") for b in BASES
    }


def _typed(panel: Panel) -> dict[str, tuple[Any, ...]]:
    """What a round trip must keep, by description (a balance moves breakers, so not by id)."""
    return {
        c.description: (
            c.load_va,
            c.measured_a,
            c.measured_line_a.as_dict(),
            c.harmonic_profile,
            c.conductor,
            c.extra,
        )
        for c in panel.circuits
    }


# ------------------------------------------------------------------ figures as before


@pytest.mark.parametrize("basis", BASES)
def test_figures_are_those_of_before_the_change(
    runs: dict[str, tuple[dict[str, Any], Path]], basis: str
) -> None:
    data, _ = runs[basis]
    want = BEFORE[basis]
    for side in ("before", "after"):
        for key, value in want[side].items():
            got = data[side][NEW_NAME.get(key, key)]
            assert got == pytest.approx(value, rel=REL, abs=_shown(key)), (side, key)
    moves = [[m["id"], m["from_spaces"], m["to_spaces"]] for m in data["moves"]]
    assert moves == want["moves"]
    assert [r["spread_va"] for r in data["tradeoff"]] == pytest.approx(want["tradeoff_spread_va"])
    assert data["demand"]["total_demand_va"] == pytest.approx(want["demand_va"], rel=REL)
    assert data["demand"]["phase_demand_va"] == pytest.approx(want["phase_demand_va"], rel=REL)
    basis_va = {c["id"]: c["load_va"] for c in data["basis"]["circuits"]}
    assert basis_va == pytest.approx(want["basis_va"], abs=0.05)
    notes = [c["notes"] for s in data["work_order"] for c in s["circuits"]]
    assert notes == want["work_order_notes"]
    # The circuits' own entries: the design load always; what was balanced on beside it (before
    # this change the load field carried the basis figure).
    balanced = {c["id"]: c["balance_va"] for c in data["circuits"]}
    assert balanced == pytest.approx(want["circuit_va"], abs=0.05)
    read = read_schedule(CLINIC)
    assert {c["id"]: c["load_va"] for c in data["circuits"]} == {
        c.id: c.load_va for c in read.circuits
    }


def test_json_circuits_carry_design_load_balanced_load_and_readings(
    runs: dict[str, tuple[dict[str, Any], Path]],
) -> None:
    data, _ = runs["measured"]
    rtu = next(c for c in data["circuits"] if c["measured_line_a"])
    # The rooftop unit: 10,800 VA on the schedule; readings 24.5, 26.0, 25.1 A average 25.2 A,
    # and √3 × 208 V × 25.2 A = 9,078.7 VA (docs/field.md).
    assert rtu["load_va"] == 10800.0
    assert rtu["measured_line_a"] == {"A": 24.5, "B": 26.0, "C": 25.1}
    assert rtu["balance_va"] == pytest.approx(3**0.5 * 208.0 * 25.2, abs=0.05)  # to 0.1 VA
    idle = next(c for c in data["circuits"] if c["id"] == "10")  # the microwave read idle
    assert (idle["load_va"], idle["measured_a"], idle["balance_va"]) == (1500.0, 2.0, 240.0)


# ------------------------------------------------------------------ round trip


@pytest.mark.parametrize("basis", BASES)
def test_revised_workbook_reads_back_with_design_loads_and_readings(
    runs: dict[str, tuple[dict[str, Any], Path]], basis: str
) -> None:
    _, written = runs[basis]
    original, again = read_schedule(CLINIC), read_schedule(written)
    assert _typed(again) == _typed(original)
    assert sum(c.load_va for c in again.circuits) == sum(c.load_va for c in original.circuits)
    assert all(c.balance_va is None for c in again.circuits)  # the basis is chosen again


def test_revised_workbook_shows_readings_and_balanced_load_in_their_own_columns(
    runs: dict[str, tuple[dict[str, Any], Path]],
) -> None:
    data, written = runs["measured"]
    book = load_workbook(written)
    rows = list(book["Circuits"].iter_rows(values_only=True))
    header = list(rows[0])
    for name in ("Load (VA)", "Measured line A (A)", "Measured line C (A)", "Balanced on (VA)"):
        assert name in header
    by_description = {row[header.index("Description")]: row for row in rows[1:]}
    rtu = by_description["RTU-1 rooftop unit"]
    assert rtu[header.index("Load (VA)")] == 10800
    assert rtu[header.index("Measured line B (A)")] == 26.0
    assert rtu[header.index("Balanced on (VA)")] == pytest.approx(9078.7, abs=0.1)
    layout = next(book["Layout"].iter_rows(min_row=3, max_row=3, values_only=True))
    assert layout[2:4] == ("Load VA", "Balanced VA")
    # Line totals on the Layout sheet: the balanced column adds up to the reported figures.
    totals = next(
        i for i, r in enumerate(book["Layout"].iter_rows(values_only=True)) if r[1] == "Line"
    )
    line_rows = list(
        book["Layout"].iter_rows(min_row=totals + 2, max_row=totals + 4, values_only=True)
    )
    sheet_totals = {r[1]: r[3] for r in line_rows}
    assert sheet_totals == pytest.approx(data["after"]["phase_va"], abs=0.05)  # JSON: 0.1 VA
    # Nameplate: no balanced column anywhere, the layout as it always was.
    plain = load_workbook(runs["nameplate"][1])
    assert "Balanced on (VA)" not in next(plain["Circuits"].iter_rows(values_only=True))
    assert len(next(plain["Layout"].iter_rows(min_row=3, max_row=3, values_only=True))) == 13


def test_a_second_run_on_the_revised_workbook_gives_the_same_figures(
    runs: dict[str, tuple[dict[str, Any], Path]], tmp_path: Path
) -> None:
    # Before this change the revised workbook held the readings' VA as schedule loads, so a
    # second run took clamp readings for nameplate loads.
    data, written = runs["measured"]
    argv = ["check", str(written), "--json", "--basis", "measured"]
    buffer = io.StringIO()
    with contextlib.redirect_stdout(buffer):
        assert main(argv) == 0
    again = json.loads(buffer.getvalue())
    assert again["loads"]["phase_va"] == pytest.approx(data["after"]["phase_va"], rel=REL)
    nameplate = {c["id"]: c["nameplate_va"] for c in again["basis"]["circuits"]}
    assert sorted(nameplate.values()) == sorted(c.load_va for c in read_schedule(CLINIC).circuits)


# ------------------------------------------------------------------ located errors when read

HEAD = "Ckt,Description,Poles,Load (VA),Measured line A (A),Measured line B (A),Harmonics,Wire\n"


def _problems(tmp_path: Path, rows: str) -> list[tuple[str, str]]:
    path = tmp_path / "p.csv"
    path.write_text(HEAD + rows, encoding="utf-8")
    with pytest.raises(ScheduleError) as caught:
        read_schedule(path)
    return [(p.where, p.what) for p in caught.value.problems]


def test_bad_reading_is_named_at_its_cell(tmp_path: Path) -> None:
    found = _problems(tmp_path, "1,Oven,2,5000,lots,-3,,\n")
    assert found == [
        ("p.csv!E2", "line A reading 'lots' is not a number"),
        ("p.csv!F2", "line B reading -3 is negative"),
    ]


def test_reading_on_a_line_the_circuit_is_not_on_is_named_at_its_cell(tmp_path: Path) -> None:
    # Spaces 3 and 5 are lines B and C on 208Y/120 (common-practice numbering): no line A.
    found = _problems(tmp_path, "3,Dryer,2,5000,10,11,,\n")
    assert len(found) == 1
    assert found[0][0] == "p.csv!E2"
    assert "on line(s) B, C, not A" in found[0][1]


def test_unknown_harmonic_profile_is_named_with_the_known_ones(tmp_path: Path) -> None:
    found = _problems(tmp_path, "1,PCs,1,500,,,computrs,\n")
    assert found[0][0] == "p.csv!G2"
    assert found[0][1].startswith("unknown harmonic profile 'computrs'; known: ev-charger, led,")
    assert "did you mean 'computers'?" in found[0][1]


def test_conductor_of_no_known_size_is_named(tmp_path: Path) -> None:
    found = _problems(tmp_path, "1,Lights,1,500,,,,see plan\n")
    assert found[0][0] == "p.csv!H2"
    assert "conductor 'see plan' is not a size balancer knows" in found[0][1]


def test_every_bad_typed_value_is_reported_at_once_with_exit_2(
    tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    path = tmp_path / "p.csv"
    path.write_text(HEAD + "1,Oven,2,5000,x,,nope,#99\n", encoding="utf-8")
    assert main(["check", str(path)]) == 2
    err = capsys.readouterr().err
    for cell in ("E2", "G2", "H2"):
        assert f"p.csv!{cell}" in err


def test_good_typed_values_are_parsed_once(tmp_path: Path) -> None:
    path = tmp_path / "p.csv"
    path.write_text(
        HEAD + "1,Oven,2,5000,20.5,19,vfd,2#10 + #10G AL\n2,Lights,1,500,,,,12\n",
        encoding="utf-8",
    )
    oven, lights = read_schedule(path).circuits
    assert oven.measured_line_a.as_dict() == {"A": 20.5, "B": 19.0}
    assert oven.harmonic_profile == "vfd"
    assert oven.conductor is not None
    assert (oven.conductor.size, oven.conductor.material) == ("10", "al")
    assert oven.conductor.as_written == "2#10 + #10G AL"  # the schedule's words, written back
    assert oven.extra == ()
    assert lights.conductor is not None
    assert str(lights.conductor) == "12 AWG Cu"  # a bare number in the cell: copper AWG


def test_measured_basis_is_said_on_every_page_and_sheet(tmp_path: Path) -> None:
    from openpyxl import load_workbook
    from pypdf import PdfReader

    from balancer.cli.main import main
    from balancer.io.writer import LOAD_BASIS_FOOTER

    clinic = (
        Path(__file__).resolve().parents[1]
        / "sample_schedules"
        / ("clinic-after-additions-208y120.xlsx")
    )
    book, pdf = tmp_path / "m.xlsx", tmp_path / "m.pdf"
    args = ["balance", str(clinic), "--basis", "measured", "--no-tradeoff", "--time-limit", "10"]
    assert main([*args, "-o", str(book), "--pdf", str(pdf)]) == 0
    assert all(ws.oddFooter.center.text == LOAD_BASIS_FOOTER for ws in load_workbook(book))
    assert all("Load basis: clamp-meter readings" in p.extract_text() for p in PdfReader(pdf).pages)
    # on the nameplate basis nothing says so
    plain = tmp_path / "n.xlsx"
    assert (
        main(["balance", str(clinic), "--no-tradeoff", "--time-limit", "10", "-o", str(plain)]) == 0
    )
    assert not any(ws.oddFooter.center.text for ws in load_workbook(plain))

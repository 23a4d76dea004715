"""Each bad input gets one clear message naming its place, exit status 2, and the file untouched."""

from __future__ import annotations

import hashlib
from pathlib import Path

import pytest

from balancer.cli.main import main

BAD = Path(__file__).resolve().parent / "data" / "bad"

# file, the place the message must name, words it must contain
CASES = [
    ("load_not_a_number.csv", "load_not_a_number.csv!E3", "'approx 1.2' is not a number"),
    ("load_negative.csv", "load_negative.csv!E3", "negative"),
    ("poles_out_of_range.csv", "poles_out_of_range.csv!C3", "must be 1, 2 or 3"),
    ("three_pole_on_single_phase.csv", "three_pole_on_single_phase.csv!A4", "3-pole"),
    (
        "same_space_twice.csv",
        "same_space_twice.csv!A4",
        "space 3 is already taken by 'Receptacles'",
    ),
    ("past_last_space.csv", "past_last_space.csv!A4", "past the last space 12"),
    (
        "more_poles_than_spaces.csv",
        "more_poles_than_spaces.csv!B1",
        "need 7 poles but the panel has only 6",
    ),
    (
        "missing_load_column.csv",
        "missing_load_column.csv!A1",
        "headers found: 'Circuit', 'Description'",
    ),
    ("header_typo.csv", "header_typo.csv!A1", "did you mean 'Description' for 'Desciption'"),
    ("high_leg_one_pole.csv", "high_leg_one_pole.csv!A4", "high leg B"),
    ("one_pole_on_three_wire_delta.csv", "one_pole_on_three_wire_delta.csv!A4", "no neutral"),
    ("unknown_system.csv", "unknown_system.csv!B1", "'415 volts maybe' is not known"),
    ("empty.csv", "empty.csv", "the file is empty"),
    ("not_a_workbook.xlsx", "not_a_workbook.xlsx", "not a readable Excel workbook"),
    ("formula_without_saved_value.xlsx", "Circuits!E2", "recalculate and save"),
]


def _digest(path: Path) -> str:
    return hashlib.sha256(path.read_bytes()).hexdigest()


@pytest.mark.parametrize(("name", "where", "words"), CASES, ids=[c[0] for c in CASES])
@pytest.mark.parametrize("command", ["check", "balance"])
def test_bad_input_is_located_and_file_untouched(
    name: str,
    where: str,
    words: str,
    command: str,
    capsys: pytest.CaptureFixture[str],
    tmp_path: Path,
) -> None:
    path = BAD / name
    before = _digest(path)
    argv = [command, str(path)] + (
        ["-o", str(tmp_path / "out.xlsx")] if command == "balance" else []
    )
    status = main(argv)
    captured = capsys.readouterr()
    assert status == 2
    assert where in captured.err
    assert words in captured.err
    assert "Traceback" not in captured.err
    assert captured.out == ""
    assert _digest(path) == before
    assert not (tmp_path / "out.xlsx").exists()


def test_every_problem_reported_at_once(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    path = tmp_path / "several.csv"
    path.write_text(
        "Circuit,Description,Poles,Load (VA)\n1,A,1,lots\n3,B,5,100\n5,C,1,-2\n", encoding="utf-8"
    )
    assert main(["check", str(path)]) == 2
    err = capsys.readouterr().err
    assert "3 problems" in err
    for place in ("several.csv!D2", "several.csv!C3", "several.csv!D4"):
        assert place in err


def test_output_naming_the_input_is_refused(
    tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    from openpyxl import Workbook

    path = tmp_path / "panel.xlsx"
    book = Workbook()
    book.active.append(["Circuit", "Description", "Load (VA)"])
    book.active.append([1, "Lights", 500])
    book.save(path)
    before = _digest(path)
    assert main(["balance", str(path), "-o", str(path)]) == 2
    assert "never writes its input" in capsys.readouterr().err
    assert _digest(path) == before


def test_missing_file(capsys: pytest.CaptureFixture[str]) -> None:
    assert main(["check", "no/such/schedule.xlsx"]) == 2
    assert "no such file" in capsys.readouterr().err

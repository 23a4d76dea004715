"""Logger files, the column side: units to VA, per-circuit and per-line files, headers, bad
cells, spares, circuits without a column and the size bounds. The time side (intervals,
duplicates, gaps, clocks) is in test_intervals_clock.py."""

from __future__ import annotations

import math
from dataclasses import replace
from pathlib import Path

import numpy as np
import pytest
from logger_files import constant_rows, logger_panel, stamps, write_logger

from balancer.errors import ScheduleError
from balancer.field.basis import measured_va
from balancer.intervals import column_of, read_logger
from balancer.intervals import logger as logger_module

ATOL_VA = 1e-9
COUNT = 8  # readings in the small files


def _read(tmp_path: Path, header: list[str], *row: object, count: int = COUNT) -> object:
    path = write_logger(
        tmp_path / "log.csv", header, stamps("2026-03-02", count), constant_rows(count, *row)
    )
    return read_logger(path, logger_panel())


def _problems(tmp_path: Path, header: list[str], rows: list[tuple[object, ...]]) -> list[str]:
    path = write_logger(tmp_path / "log.csv", header, stamps("2026-03-02", len(rows)), rows)
    with pytest.raises(ScheduleError) as caught:
        read_logger(path, logger_panel())
    return [str(p) for p in caught.value.problems]


# --------------------------------------------------------------------------- units to VA


# Hand arithmetic on 208Y/120 (VA = V × I per circuit, common practice, as docs/field.md):
# 1 pole on A: 120 V × 10 A = 1,200 VA; 2 poles A-B: 208 V × 10 A = 2,080 VA; 3 poles:
# √3 × 208 V × 10 A = 3,602.5 VA; 1.2 kW at power factor 0.8 = 1,500 VA.
@pytest.mark.parametrize(
    ("header", "reading", "circuit_id", "expected_va"),
    [
        ("1 (A)", 10, "1", 1200.0),
        ("2 (A)", 10, "2", 2080.0),
        ("3 (A)", 10, "3", math.sqrt(3) * 208.0 * 10.0),
        ("1 A", 10, "1", 1200.0),
        ("3 [A]", 2.5, "3", math.sqrt(3) * 208.0 * 2.5),
        ("11 (kW)", 1.2, "11", 1500.0),
        ("11 kW", 1.2, "11", 1500.0),
        ("11 (W)", 600, "11", 750.0),
        ("1 (kW)", 1.2, "1", 1200.0),  # power factor 1
        ("2 (kVA)", 1.5, "2", 1500.0),
        ("2 kVA", 1.5, "2", 1500.0),
        ("3 (VA)", 700, "3", 700.0),
    ],
)
def test_units_become_va_by_hand_arithmetic(
    tmp_path: Path, header: str, reading: float, circuit_id: str, expected_va: float
) -> None:
    series = _read(tmp_path, ["Time", header], reading)
    column = column_of(series)[circuit_id]
    assert series.va[:, column] == pytest.approx(np.full(COUNT, expected_va), abs=ATOL_VA)
    assert series.kind == "measured"
    assert series.line_va is None


def test_amperes_follow_the_clamp_reading_convention_of_the_load_basis(tmp_path: Path) -> None:
    panel = logger_panel()
    series = _read(tmp_path, ["Time", "1 (A)", "2 (A)", "3 (A)", "11 (A)"], 7, 7, 7, 7)
    for circuit in panel.circuits:
        if circuit.is_spare:
            continue
        expected = measured_va(panel, replace(circuit, measured_a=7.0))
        assert series.va[0, column_of(series)[circuit.id]] == pytest.approx(expected)


def test_circuit_voltage_given_in_the_schedule_wins(tmp_path: Path) -> None:
    panel = logger_panel()
    odd = panel.with_circuits(
        [replace(c, voltage_v=240.0) if c.id == "2" else c for c in panel.circuits]
    )
    path = write_logger(
        tmp_path / "log.csv", ["Time", "2 (A)"], stamps("2026-03-02", 4), constant_rows(4, 10)
    )
    series = read_logger(path, odd)
    assert series.va[0, column_of(series)["2"]] == pytest.approx(2400.0)  # 240 V × 10 A


def test_every_circuit_appears_once_in_panel_order(tmp_path: Path) -> None:
    series = _read(tmp_path, ["Time", "3 (A)", "1 (A)"], 1, 1)
    assert series.circuit_ids == ("1", "2", "3", "9", "11")
    assert series.va.shape == (COUNT, 5)
    assert series.va.dtype == np.float64


def test_circuits_without_a_column_keep_their_load_flat_and_are_named(tmp_path: Path) -> None:
    series = _read(tmp_path, ["Time", "1 (A)"], 5)
    columns = column_of(series)
    assert series.va[:, columns["2"]] == pytest.approx(np.full(COUNT, 2500.0))
    assert series.va[:, columns["3"]] == pytest.approx(np.full(COUNT, 9000.0))
    assert series.va[:, columns["9"]] == pytest.approx(np.zeros(COUNT))  # spare: no load
    [notice] = [n for n in series.notices if "no column" in n]
    assert "2 (2,500 VA)" in notice
    assert "3 (9,000 VA)" in notice
    assert "11 (900 VA)" in notice
    assert "9 (" not in notice


def test_a_spare_column_of_zeros_is_allowed(tmp_path: Path) -> None:
    series = _read(tmp_path, ["Time", "1 (A)", "9 (A)"], 5, 0)
    assert series.va[:, column_of(series)["9"]] == pytest.approx(np.zeros(COUNT))


def test_a_spare_column_with_load_is_refused(tmp_path: Path) -> None:
    rows = [(5, 0)] * 3 + [(5, 0.4)] + [(5, 0)] * 4
    problems = _problems(tmp_path, ["Time", "1 (A)", "9 (A)"], rows)
    assert problems == [
        'file row 5, column "9 (A)": circuit 9 is a spare; its column may hold only zeros '
        "(1 reading(s) are not)"
    ]


def test_conversions_are_said_in_the_notices(tmp_path: Path) -> None:
    series = _read(tmp_path, ["Time", "1 (A)", "11 (kW)"], 5, 0.3)
    text = " ".join(series.notices)
    assert "amperes turned into VA" in text
    assert "dividing by each circuit's power factor" in text


# ---------------------------------------------------------------------------- per line


def test_per_line_file_fills_line_va(tmp_path: Path) -> None:
    series = _read(tmp_path, ["Time", "A (A)", "Line B (kVA)", "Phase C (kW)"], 10, 1.5, 2)
    assert series.circuit_ids == ()
    assert series.va.shape == (COUNT, 0)
    assert series.line_va is not None
    # 120 V × 10 A on A; 1.5 kVA on B; 2 kW on C at power factor 1
    assert series.line_va[0] == pytest.approx([1200.0, 1500.0, 2000.0])
    assert any("power factor 1" in n for n in series.notices)


def test_per_line_columns_in_any_order_come_out_in_line_order(tmp_path: Path) -> None:
    series = _read(tmp_path, ["Time", "C (VA)", "A (VA)", "B (VA)"], 3, 1, 2)
    assert series.line_va is not None
    assert series.line_va[0] == pytest.approx([1.0, 2.0, 3.0])


def test_per_line_file_on_single_phase_uses_each_line_to_neutral(tmp_path: Path) -> None:
    path = write_logger(
        tmp_path / "log.csv",
        ["Time", "A (A)", "B (A)"],
        stamps("2026-03-02", 4),
        constant_rows(4, 10, 20),
    )
    series = read_logger(path, logger_panel("120/240"))
    assert series.line_va is not None
    assert series.line_va[0] == pytest.approx([1200.0, 2400.0])  # 120 V × 10 A, 120 V × 20 A


def test_per_line_file_needs_every_line(tmp_path: Path) -> None:
    problems = _problems(tmp_path, ["Time", "A (A)", "B (A)"], [(1, 1)] * 4)
    assert problems == ["file row 1: no column for line C"]


def test_a_line_the_panel_lacks_is_refused(tmp_path: Path) -> None:
    path = write_logger(
        tmp_path / "log.csv",
        ["Time", "A (A)", "B (A)", "C (A)"],
        stamps("2026-03-02", 4),
        constant_rows(4, 1, 1, 1),
    )
    with pytest.raises(ScheduleError) as caught:
        read_logger(path, logger_panel("120/240"))
    assert [str(p) for p in caught.value.problems] == [
        'file row 1, column "C (A)": panel LG1 has no line C'
    ]


def test_a_file_mixing_circuits_and_lines_is_refused(tmp_path: Path) -> None:
    problems = _problems(tmp_path, ["Time", "1 (A)", "A (A)", "B (A)", "C (A)"], [(1,) * 4] * 4)
    assert len(problems) == 1
    assert (
        "mixes per-circuit columns (1 (A)) and per-line columns (A (A), B (A), C (A))"
        in (problems[0])
    )


# ----------------------------------------------------------------------------- headers


def test_unknown_circuit_header_gets_a_did_you_mean(tmp_path: Path) -> None:
    problems = _problems(tmp_path, ["Time", "1 (A)", "111 (A)"], [(1, 1)] * 4)
    assert problems == [
        "file row 1, column \"111 (A)\": '111' is neither a circuit of panel LG1 nor one of its "
        'lines (A, B, C); did you mean "11"?'
    ]


@pytest.mark.parametrize(
    ("header", "expected"),
    [
        ("1", 'file row 1, column "1": no unit: give one of A, VA, kVA, W, kW, e.g. "1 (A)"'),
        (
            "Line A",
            'file row 1, column "Line A": no unit: give one of A, VA, kVA, W, kW, '
            'e.g. "Line A (A)"',
        ),
        (
            "1 (mA)",
            "file row 1, column \"1 (mA)\": unit 'ma' is not one of A, VA, kVA, W, kW, "
            'e.g. "1 (A)"',
        ),
    ],
)
def test_a_header_needs_a_known_unit(tmp_path: Path, header: str, expected: str) -> None:
    assert _problems(tmp_path, ["Time", header], [(1,)] * 4) == [expected]


def test_two_columns_for_one_circuit_are_refused(tmp_path: Path) -> None:
    problems = _problems(tmp_path, ["Time", "1 (A)", "1 (kW)"], [(1, 1)] * 4)
    assert problems == ['file row 1, column "1 (kW)": circuit 1 already has column "1 (A)"']


def test_a_file_without_a_timestamp_column_is_refused(tmp_path: Path) -> None:
    path = tmp_path / "log.csv"
    path.write_text("When,1 (A)\n2026-03-02 00:00,1\n", encoding="utf-8")
    with pytest.raises(ScheduleError) as caught:
        read_logger(path, logger_panel())
    text = str(caught.value)
    assert "no timestamp column" in text
    assert "'When' is neither a circuit" in text


@pytest.mark.parametrize("stamp_header", ["Time", "TIMESTAMP", "Date/Time", "Interval start"])
def test_timestamp_headers_are_matched_without_case(tmp_path: Path, stamp_header: str) -> None:
    series = _read(tmp_path, [stamp_header, "1 (A)"], 1)
    assert series.intervals == COUNT


def test_separate_date_and_time_columns(tmp_path: Path) -> None:
    path = tmp_path / "log.csv"
    path.write_text(
        "Date,Time,1 (A)\n2026-03-02,7:00,1\n2026-03-02,7:15,2\n2026-03-02,07:30,3\n",
        encoding="utf-8",
    )
    series = read_logger(path, logger_panel())
    assert [str(s) for s in series.starts] == [
        "2026-03-02T07:00",
        "2026-03-02T07:15",
        "2026-03-02T07:30",
    ]
    assert series.va[:, 0] == pytest.approx([120.0, 240.0, 360.0])


def test_semicolon_separated_file(tmp_path: Path) -> None:
    path = tmp_path / "log.csv"
    path.write_text("Time;1 (A)\n2026-03-02 00:00;1\n2026-03-02 00:15;2\n", encoding="utf-8")
    assert read_logger(path, logger_panel()).va[:, 0] == pytest.approx([120.0, 240.0])


# ------------------------------------------------------------------------------- cells


def test_bad_cells_are_each_named_with_row_and_column(tmp_path: Path) -> None:
    rows: list[tuple[object, ...]] = [(1, 1)] * 6
    rows[1] = ("abc", 1)
    rows[2] = (1, -2)
    rows[3] = ("NaN", 1)
    rows[4] = ("", "inf")
    problems = _problems(tmp_path, ["Time", "1 (A)", "2 (kW)"], rows)
    assert problems == [
        "file row 3, column \"1 (A)\": 'abc' is not a number",
        "file row 4, column \"2 (kW)\": '-2' is negative; a reading is 0 or more",
        'file row 5, column "1 (A)": NaN is not a reading',
        'file row 6, column "1 (A)": empty: every interval needs a reading',
        "file row 6, column \"2 (kW)\": 'inf' is not a finite number",
    ]


def test_bad_timestamps_and_bad_cells_are_reported_together(tmp_path: Path) -> None:
    path = tmp_path / "log.csv"
    path.write_text(
        "Time,1 (A)\n2026-03-02 00:00,1\n03/02/2026 00:15,1\n2026-03-02 00:30,x\n",
        encoding="utf-8",
    )
    with pytest.raises(ScheduleError) as caught:
        read_logger(path, logger_panel())
    text = [str(p) for p in caught.value.problems]
    assert "file row 3, column \"Time\": '03/02/2026 00:15' is not a date and time" in text
    assert "file row 4, column \"1 (A)\": 'x' is not a number" in text
    assert caught.value.source == "log.csv"


def test_blank_lines_do_not_shift_row_numbers(tmp_path: Path) -> None:
    path = tmp_path / "log.csv"
    path.write_text(
        "Time,1 (A)\n2026-03-02 00:00,1\n\n2026-03-02 00:15,oops\n,\n", encoding="utf-8"
    )
    with pytest.raises(ScheduleError) as caught:
        read_logger(path, logger_panel())
    assert [str(p) for p in caught.value.problems] == [
        "file row 4, column \"1 (A)\": 'oops' is not a number"
    ]


def test_nothing_is_evaluated(tmp_path: Path) -> None:
    problems = _problems(tmp_path, ["Time", "1 (A)"], [("=1+1",), ("__import__('os')",)])
    assert problems == [
        "file row 2, column \"1 (A)\": '=1+1' is not a number",
        'file row 3, column "1 (A)": "__import__(\'os\')" is not a number',
    ]


# ------------------------------------------------------------------------------ bounds


def test_a_file_over_40_mb_is_refused_before_it_is_read(tmp_path: Path) -> None:
    path = tmp_path / "huge.csv"
    with path.open("wb") as out:
        out.truncate(logger_module.MAX_FILE_BYTES + 1)  # sparse: the size is all it has
    with pytest.raises(ScheduleError, match=r"40\.0 MB is more than the 40 MB"):
        read_logger(path, logger_panel())


def test_more_than_600000_rows_are_refused(tmp_path: Path) -> None:
    path = tmp_path / "long.csv"
    path.write_bytes(b"Time,1 (A)\n" + b"x\n" * 600_001)
    with pytest.raises(ScheduleError, match=r"600,001 rows under the header is more than"):
        read_logger(path, logger_panel())


def test_more_than_200_columns_are_refused(tmp_path: Path) -> None:
    path = tmp_path / "wide.csv"
    path.write_text("Time," + ",".join(f"{k} (A)" for k in range(200)) + "\n", encoding="utf-8")
    with pytest.raises(ScheduleError, match="201 columns is more than the 200"):
        read_logger(path, logger_panel())


def test_a_file_that_is_not_utf8_names_its_row(tmp_path: Path) -> None:
    path = tmp_path / "log.csv"
    path.write_bytes(b"Time,1 (A)\n2026-03-02 00:00,1\n2026-03-02 00:15,\xff\n")
    with pytest.raises(ScheduleError, match="file row 3: not UTF-8"):
        read_logger(path, logger_panel())


def test_a_ragged_row_is_refused(tmp_path: Path) -> None:
    path = tmp_path / "log.csv"
    path.write_text("Time,1 (A)\n2026-03-02 00:00,1\n2026-03-02 00:15,1,2\n", encoding="utf-8")
    with pytest.raises(ScheduleError, match="not a readable CSV table"):
        read_logger(path, logger_panel())


def test_the_input_file_is_not_written(tmp_path: Path) -> None:
    path = write_logger(
        tmp_path / "log.csv", ["Time", "1 (A)"], stamps("2026-03-02", 4), constant_rows(4, 1)
    )
    before = path.read_bytes(), path.stat().st_mtime_ns
    read_logger(path, logger_panel())
    assert (path.read_bytes(), path.stat().st_mtime_ns) == before

"""Fuzzing the reader through the command line: mutated CSV and .xlsx schedules (flipped bytes,
cut files, odd cells) end in a known exit status, never an uncaught exception, and the input
file is never changed."""

from __future__ import annotations

import contextlib
import io
import tempfile
import zipfile
from datetime import timedelta
from pathlib import Path

from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
from openpyxl import Workbook
from openpyxl.utils.exceptions import IllegalCharacterError

from balancer.cli.main import main

KNOWN_STATUSES = {0, 2, 3, 4}
# Few examples, a deadline far above the second or so one run takes, no example database in
# the work tree: the suite shares two cores with other work.
FUZZ = settings(
    max_examples=40,
    deadline=timedelta(seconds=20),
    database=None,
    suppress_health_check=[HealthCheck.too_slow],
)

CSV = (
    b"Panel,LP-1\nSystem,208Y/120\nCircuit,Description,Poles,Trip,Load (VA),PF,Notes\n"
    b"1,Lighting,1,20,1200,0.9,office\n3,Receptacles,1,20,900,,\n5,Water heater,2,30,4500,1,\n"
    b"2,Copier,1,20,1500,0.95,\n4,Spare,1,20,,,\n"
)

ODD_TEXT = st.one_of(
    st.sampled_from(
        [
            "NaN",
            "inf",
            "-inf",
            "1e400",
            "9" * 400,
            "-5",
            "1,2,3",
            '=HYPERLINK("http://example.invalid","x")',
            "=cmd|' /C calc'!A0",
            "@SUM(1)",
            "$\\frac{a}{b}$",
            "\x00\x01\x1b[2J",
            "SPACE",
            "spare",
            "3P",
            "20A",
            "1.2 kVA",
            "",
        ]
    ),
    st.text(max_size=30),
)
ODD_CELL = st.one_of(
    ODD_TEXT,
    st.integers(min_value=-(10**20), max_value=10**20),
    st.floats(allow_nan=True, allow_infinity=True),
    st.booleans(),
    st.none(),
)


def _run(path: Path, argv: list[str]) -> int:
    before = path.read_bytes()
    out, err = io.StringIO(), io.StringIO()
    with contextlib.redirect_stdout(out), contextlib.redirect_stderr(err):
        status = main(argv)
    assert status in KNOWN_STATUSES, err.getvalue()
    assert "Traceback" not in err.getvalue()
    assert path.read_bytes() == before
    return status


def _check_and_maybe_balance(data: bytes, suffix: str, balance: bool) -> None:
    with tempfile.TemporaryDirectory() as folder:
        path = Path(folder) / f"fuzzed{suffix}"
        path.write_bytes(data)
        status = _run(path, ["check", str(path)])
        if balance and status == 0:
            output = Path(folder) / "out.xlsx"
            _run(path, ["balance", str(path), "-o", str(output), "--time-limit", "1"])
        leftovers = {p.name for p in Path(folder).iterdir()} - {path.name, "out.xlsx"}
        assert leftovers == set()


@st.composite
def _mutated(draw: st.DrawFn, base: bytes) -> bytes:
    data = bytearray(base)
    for _ in range(draw(st.integers(0, 4))):
        kind = draw(st.sampled_from(["flip", "cut", "insert", "delete"]))
        at = draw(st.integers(0, max(0, len(data) - 1)))
        if kind == "flip" and data:
            data[at] ^= draw(st.integers(1, 255))
        elif kind == "cut":
            del data[at:]
        elif kind == "insert":
            data[at:at] = draw(st.binary(min_size=1, max_size=8))
        elif data:
            del data[at : at + draw(st.integers(1, 16))]
    return bytes(data)


@FUZZ
@given(data=_mutated(CSV), balance=st.booleans())
def test_mutated_csv_ends_in_a_known_status(data: bytes, balance: bool) -> None:
    _check_and_maybe_balance(data, ".csv", balance and len(data) % 4 == 0)


@FUZZ
@given(
    cells=st.lists(
        st.tuples(st.integers(0, 5), st.integers(0, 6), ODD_TEXT), min_size=1, max_size=6
    )
)
def test_csv_with_odd_cells_ends_in_a_known_status(cells: list[tuple[int, int, str]]) -> None:
    rows = [line.split(",") for line in CSV.decode().splitlines()]
    for r, c, text in cells:
        row = rows[3 + r] if 3 + r < len(rows) else rows[-1]
        row[c] = '"' + text.replace('"', '""') + '"'
    _check_and_maybe_balance("\n".join(",".join(r) for r in rows).encode(), ".csv", False)


def _workbook_bytes(cells: list[tuple[int, int, object]]) -> bytes:
    book = Workbook()
    sheet = book.active
    assert sheet is not None
    sheet.title = "Circuits"
    for line in CSV.decode().splitlines()[2:]:
        sheet.append([int(v) if v.isdigit() else (v or None) for v in line.split(",")])
    for r, c, value in cells:
        cell = sheet.cell(row=2 + r, column=1 + c)
        try:
            cell.value = value
        except (IllegalCharacterError, ValueError, TypeError):  # a value openpyxl will not hold
            cell.value = None  # openpyxl has already changed the cell's type
    buffer = io.BytesIO()
    try:
        book.save(buffer)
    except (ValueError, OverflowError):  # a number openpyxl cannot write
        return _workbook_bytes([])
    return buffer.getvalue()


BASE_XLSX = _workbook_bytes([])


@FUZZ
@given(
    cells=st.lists(
        st.tuples(st.integers(0, 5), st.integers(0, 6), ODD_CELL), min_size=1, max_size=6
    ),
    balance=st.booleans(),
)
def test_xlsx_with_odd_cells_ends_in_a_known_status(
    cells: list[tuple[int, int, object]], balance: bool
) -> None:
    _check_and_maybe_balance(_workbook_bytes(cells), ".xlsx", balance and len(cells) == 1)


@FUZZ
@given(data=_mutated(BASE_XLSX))
def test_mutated_xlsx_bytes_end_in_a_known_status(data: bytes) -> None:
    _check_and_maybe_balance(data, ".xlsx", False)


@FUZZ
@given(
    part=st.sampled_from(
        ["xl/worksheets/sheet1.xml", "xl/workbook.xml", "xl/styles.xml", "[Content_Types].xml"]
    ),
    data=st.data(),
)
def test_mutated_xlsx_part_ends_in_a_known_status(part: str, data: st.DataObject) -> None:
    # the zip stays sound, the XML inside it does not: the parser is reached
    with zipfile.ZipFile(io.BytesIO(BASE_XLSX)) as source:
        parts = {info.filename: source.read(info) for info in source.infolist()}
    parts[part] = data.draw(_mutated(parts[part]))
    buffer = io.BytesIO()
    with zipfile.ZipFile(buffer, "w", zipfile.ZIP_DEFLATED) as target:
        for name, content in parts.items():
            target.writestr(name, content)
    _check_and_maybe_balance(buffer.getvalue(), ".xlsx", False)

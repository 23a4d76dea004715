"""Crafted and broken inputs: each gives exit status 2 with a message naming the file and the
place (or, where it can be read safely, a notice saying what was done), never a traceback; the
input is unchanged and nothing is left beside it. The files are made here, at test time."""

from __future__ import annotations

import json
import zipfile
from collections.abc import Callable
from pathlib import Path

import pytest
from conftest import write_schedule
from openpyxl import load_workbook

from balancer.cli.main import main

SHEET = "xl/worksheets/sheet1.xml"
STRINGS = "xl/sharedStrings.xml"
HEADER = "Circuit,Description,Poles,Load (VA)\n"
LAUGHS = (
    b'<?xml version="1.0"?><!DOCTYPE lolz [<!ENTITY lol "lol">'
    b'<!ENTITY lol2 "&lol;&lol;&lol;&lol;&lol;&lol;&lol;&lol;&lol;&lol;">'
    b'<!ENTITY lol3 "&lol2;&lol2;&lol2;&lol2;&lol2;&lol2;&lol2;&lol2;&lol2;&lol2;">]>'
)
EXTERNAL = b'<?xml version="1.0"?><!DOCTYPE x [<!ENTITY xxe SYSTEM "file:///etc/passwd">]>'


# ---------------------------------------------------------------- makers


def _workbook(path: Path, rows: list[list[object]] | None = None) -> Path:
    return write_schedule(path, rows or [[1, "Lighting", 1, 1200], [3, "Receptacles", 1, 900]])


def _rewrite(path: Path, part: str, change: Callable[[bytes], bytes]) -> Path:
    """The workbook at ``path`` with one part's bytes changed (added when missing)."""
    with zipfile.ZipFile(path) as source:
        parts = {info.filename: source.read(info) for info in source.infolist()}
    parts[part] = change(parts.get(part, b""))
    with zipfile.ZipFile(path, "w", zipfile.ZIP_DEFLATED) as target:
        for name, data in parts.items():
            target.writestr(name, data)
    return path


def _body(xml: bytes) -> bytes:
    """The XML without its declaration, to put a DTD in front."""
    return xml.split(b"?>", 1)[1] if xml.startswith(b"<?xml") else xml


def _with_shared_strings(path: Path, strings_xml: bytes) -> Path:
    """The first description read from a shared-strings part holding ``strings_xml``."""
    _rewrite(
        path,
        SHEET,
        lambda x: x.replace(
            b'<c r="B2" t="inlineStr"><is><t>Lighting</t></is></c>', b'<c r="B2" t="s"><v>0</v></c>'
        ),
    )
    _rewrite(
        path,
        "[Content_Types].xml",
        lambda x: x.replace(
            b"</Types>",
            b'<Override PartName="/xl/sharedStrings.xml" ContentType="application/'
            b'vnd.openxmlformats-officedocument.spreadsheetml.sharedStrings+xml"/></Types>',
        ),
    )
    return _rewrite(path, STRINGS, lambda _: strings_xml)


def _sst(text: bytes) -> bytes:
    return (
        b'<sst xmlns="http://schemas.openxmlformats.org/spreadsheetml/2006/main" count="1" '
        b'uniqueCount="1"><si><t>' + text + b"</t></si></sst>"
    )


def _csv(path: Path, body: str | bytes) -> Path:
    if isinstance(body, str):
        path.write_text(HEADER + body, encoding="utf-8")
    else:
        path.write_bytes(HEADER.encode() + body)
    return path


# ---------------------------------------------------------------- running


def _run(
    argv_head: list[str], path: Path, capsys: pytest.CaptureFixture[str], *extra: str
) -> tuple[int, str, str]:
    before = path.read_bytes()
    around = sorted(p.name for p in path.parent.iterdir())
    status = main([*argv_head, str(path), *extra])
    captured = capsys.readouterr()
    assert "Traceback" not in captured.err
    assert path.read_bytes() == before
    if status != 0:
        assert sorted(p.name for p in path.parent.iterdir()) == around
    return status, captured.out, captured.err


def _refused(path: Path, capsys: pytest.CaptureFixture[str], *where_and_words: str) -> None:
    """``check`` and ``balance`` both refuse ``path`` with exit status 2, naming the place."""
    for command in (["check"], ["balance", "--no-tradeoff", "--time-limit", "2"]):
        status, out, err = _run(command, path, capsys)
        assert status == 2, err
        assert out == ""
        for words in where_and_words:
            assert words in err


# ---------------------------------------------------------------- xlsx parts


def test_xlsx_entity_expansion_in_a_sheet_is_refused(
    tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    path = _rewrite(
        _workbook(tmp_path / "laughs.xlsx"),
        SHEET,
        lambda x: LAUGHS + _body(x).replace(b"Lighting", b"&lol3;"),
    )
    _refused(path, capsys, str(path), f"part {SHEET} declares XML entities")


def test_xlsx_entity_expansion_in_shared_strings_is_refused(
    tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    path = _with_shared_strings(_workbook(tmp_path / "laughs.xlsx"), LAUGHS + _sst(b"&lol3;"))
    _refused(path, capsys, str(path), f"part {STRINGS} declares XML entities")


def test_xlsx_external_entity_in_a_sheet_is_refused(
    tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    path = _rewrite(
        _workbook(tmp_path / "external.xlsx"),
        SHEET,
        lambda x: EXTERNAL + _body(x).replace(b"Lighting", b"&xxe;"),
    )
    _refused(path, capsys, str(path), f"part {SHEET} declares XML entities")


def test_xlsx_external_entity_in_shared_strings_is_refused(
    tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    path = _with_shared_strings(_workbook(tmp_path / "external.xlsx"), EXTERNAL + _sst(b"&xxe;"))
    _refused(path, capsys, str(path), f"part {STRINGS} declares XML entities")


def test_shared_strings_without_entities_are_read(
    tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    # the maker above is sound: the same workbook with plain shared strings is read
    path = _with_shared_strings(_workbook(tmp_path / "plain.xlsx"), _sst(b"Shared lighting"))
    status, out, _ = _run(["check", "--json"], path, capsys)
    assert status == 0
    assert json.loads(out)["circuits"][0]["description"] == "Shared lighting"


def test_xlsx_invalid_xml_in_a_sheet_is_refused(
    tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    path = _rewrite(_workbook(tmp_path / "cut.xlsx"), SHEET, lambda x: x[: len(x) * 2 // 3])
    _refused(path, capsys, str(path), "Circuits: the sheet's XML is damaged (", "line 1, column")


def test_xlsx_invalid_xml_in_the_workbook_part_is_refused(
    tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    path = _rewrite(_workbook(tmp_path / "cut.xlsx"), "xl/workbook.xml", lambda x: x[:-20])
    _refused(path, capsys, str(path), "part xl/workbook.xml is not well-formed XML")


def test_xlsx_corrupt_part_is_refused(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    path = _workbook(tmp_path / "corrupt.xlsx")
    raw = bytearray(path.read_bytes())
    with zipfile.ZipFile(path) as archive:
        info = archive.getinfo(SHEET)
    start = info.header_offset + 30 + len(info.filename.encode()) + len(info.extra) + 10
    for k in range(start, start + 20):  # scramble the packed data, keep the zip's directory
        raw[k] ^= 0x5A
    path.write_bytes(bytes(raw))
    _refused(path, capsys, str(path), f"part {SHEET} is damaged")


def test_xlsx_huge_part_is_refused(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    # 40 MB of blanks pack into some 40 kB: a zip bomb in small
    padding = b" " * (40 * 2**20)
    path = _rewrite(
        _workbook(tmp_path / "bomb.xlsx"),
        SHEET,
        lambda x: x.replace(b"<sheetData>", b"<sheetData>" + padding),
    )
    assert path.stat().st_size < 2**20
    _refused(path, capsys, str(path), f"part {SHEET} unpacks to 40 MB")


def test_xlsx_nan_number_is_refused(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    path = _rewrite(
        _workbook(tmp_path / "nan.xlsx"), SHEET, lambda x: x.replace(b"<v>1200</v>", b"<v>NaN</v>")
    )
    _refused(path, capsys, str(path), "Circuits row 2: a cell cannot be read", "'NaN'")


def test_xlsx_infinite_number_is_refused(
    tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    path = _rewrite(
        _workbook(tmp_path / "inf.xlsx"),
        SHEET,
        lambda x: x.replace(b"<v>1200</v>", b"<v>1e400</v>"),
    )
    _refused(path, capsys, "Circuits!D2: load 'inf' is more than 10,000,000 VA")


def test_text_nan_and_inf_loads_are_refused(
    tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    path = _csv(tmp_path / "nan.csv", "1,Lights,1,NaN\n3,Fan,1,INF\n5,Heater,1,-inf\n")
    _refused(
        path,
        capsys,
        "nan.csv!D2: load 'NaN' is not a number",
        "nan.csv!D3: load 'INF' is not a number",
        "nan.csv!D4: load '-inf' is not a number",
    )


def test_xlsx_far_cell_is_read_within_bounds_and_said(
    tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    path = _workbook(tmp_path / "far.xlsx")
    book = load_workbook(path)
    book.active.cell(row=1_048_576, column=16_384, value="far away")  # type: ignore[union-attr]
    book.save(path)
    status, out, _ = _run(["check"], path, capsys)
    assert status == 0
    assert "the used range reaches XFD1048576; only rows 1 to 1000 and columns A to BL" in out


def test_xlsx_ten_megabyte_cell_is_refused(
    tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    # a spreadsheet program (and openpyxl) cuts a cell at 32,767 characters: write the part
    path = _rewrite(
        _workbook(tmp_path / "big.xlsx"),
        SHEET,
        lambda x: x.replace(b"<t>Lighting</t>", b"<t>" + b"L" * 10_000_000 + b"</t>"),
    )
    _refused(path, capsys, "Circuits!B2: text of 10,000,000 characters")


def test_csv_ten_megabyte_cell_is_refused(
    tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    path = _csv(tmp_path / "big.csv", "1," + "L" * 10_000_000 + ",1,100\n")
    _refused(path, capsys, "big.csv line 2: field larger than field limit")


# ---------------------------------------------------------------- CSV text


def test_csv_in_windows_1252_is_read_with_a_notice(
    tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    path = _csv(tmp_path / "cp1252.csv", "1,Caf\xe9 lights,1,1200\n".encode("cp1252"))
    status, out, _ = _run(["check"], path, capsys)
    assert status == 0
    assert "cp1252.csv: not UTF-8 text (line 2); read as Windows-1252" in out


def test_csv_neither_utf8_nor_windows_1252_is_refused(
    tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    # a DOS code page: 0x81 is ü in code page 437 and no character in Windows-1252
    path = _csv(tmp_path / "dos.csv", "1,Lights,1,1200\n3,Men\xfc,1,900\n".encode("cp437"))
    _refused(path, capsys, "dos.csv line 3: byte 0x81 is neither UTF-8 nor Windows-1252")


def test_control_characters_and_nul_are_removed_with_a_notice(
    tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    # past the first 4 kB, where a NUL no longer means "a binary file"
    filler = "".join(f"{2 * k + 1},Load {k} {'x' * 60},1,100\n" for k in range(60))
    path = _csv(tmp_path / "control.csv", filler + "121,Li\x00gh\x07ts\x1b[2J,1,1200\n")
    output = tmp_path / "out.xlsx"
    status, out, _ = _run(
        ["balance", "--no-tradeoff", "--time-limit", "2", "-o", str(output)], path, capsys
    )
    assert status == 0
    assert "control.csv!B62: removed control characters from the text" in out
    book = load_workbook(output, read_only=True)
    texts = [v for row in book["Circuits"].iter_rows(values_only=True) for v in row]
    book.close()
    assert "Lights[2J" in texts


# ---------------------------------------------------------------- numbers


def test_load_above_ten_mva_is_refused(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    path = _workbook(tmp_path / "huge.xlsx", [[1, "Lights", 1, 1e15], [3, "Fan", 1, 500]])
    _refused(
        path,
        capsys,
        "Circuits!D2: load '1000000000000000' is more than 10,000,000 VA, the most balancer "
        "takes for one branch circuit",
    )


def test_load_of_400_digits_is_refused(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    path = _csv(tmp_path / "digits.csv", "1,Lights,1," + "9" * 400 + "\n3,Fan,1,500\n")
    _refused(path, capsys, "digits.csv!D2: load '9999", "is more than 10,000,000 VA")


def test_space_number_of_400_digits_is_refused(
    tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    path = _csv(tmp_path / "space.csv", "9" * 400 + ",Lights,1,100\n3,Fan,1,500\n")
    _refused(path, capsys, "space.csv!A2: space '9999", "is past 200")


def test_space_count_past_the_limit_is_refused(
    tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    path = tmp_path / "spaces.csv"
    path.write_text("Spaces,1000000000\n" + HEADER + "1,Lights,1,100\n", encoding="utf-8")
    _refused(path, capsys, "spaces.csv!B1: space count 1e+09 must be a whole number from 1 to 200")


# ---------------------------------------------------------------- PDF text


def test_math_like_description_prints_as_given_in_the_pdf(
    tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    from pypdf import PdfReader

    text = r"Sign $\nosuchmacro{x}$ and $5 or $6"
    path = _csv(tmp_path / "math.csv", f"1,{text},1,1200\n3,Fan,1,500\n")
    pdf = tmp_path / "math.pdf"
    status, _, _ = _run(["check", "--pdf", str(pdf)], path, capsys)
    assert status == 0
    printed = "".join(page.extract_text() for page in PdfReader(pdf).pages)
    assert r"$\nosuchmacro{x}$" in printed


# ---------------------------------------------------------------- buildings


def test_building_index_not_utf8_is_refused(
    tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    index = tmp_path / "building.csv"
    index.write_bytes(
        "Panel,Schedule,Fed from,Feeder circuit\nMDP,mdp.csv,,\nCaf\xe9,c.csv,MDP,1\n".encode(
            "cp1252"
        )
    )
    status, _, err = _run(["building"], index, capsys)
    assert status == 2
    assert "building.csv line 3: byte 0xE9 is not UTF-8 text" in err


def test_building_2000_panels_deep_is_refused(
    tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    rows = ["Panel,Schedule,Fed from,Feeder circuit", "P0,p0.csv,,"]
    rows += [f"P{k},p{k}.csv,P{k - 1},1" for k in range(1, 2000)]
    index = tmp_path / "building.csv"
    index.write_text("\n".join(rows) + "\n", encoding="utf-8")
    status, _, err = _run(["building"], index, capsys)
    assert status == 2
    assert "building.csv!C2001: panel 'P1999' is 2,000 levels down from its service" in err
    assert "at most 20 levels" in err


def test_xlsx_whose_sheet_list_is_unreadable_is_refused(
    tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    # a wrong namespace: openpyxl warns and drops the sheet, leaving no worksheet at all
    path = _rewrite(
        _workbook(tmp_path / "nosheet.xlsx"),
        "xl/workbook.xml",
        lambda x: x.replace(b'xmlns:r="http', b'xmlns:r="ittp'),
    )
    _refused(path, capsys, str(path), "it holds no worksheet")


def test_control_characters_in_the_panel_name_option_are_removed(tmp_path: Path) -> None:
    from balancer.io.reader import PanelOverrides, read_schedule

    schedule = tmp_path / "p.csv"
    schedule.write_text("Circuit,Description,Poles,VA\n1,lights,1,1200\n", encoding="utf-8")
    panel = read_schedule(schedule, PanelOverrides(name="LP\x00-1\x1b"))
    assert panel.name == "LP-1"  # a workbook cannot hold NUL or ESC: it would refuse to save

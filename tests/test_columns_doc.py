"""Every header spelling docs/format.md documents is one the reader recognises.

The table in docs/format.md is generated from balancer/io/columns.py; this test reads the
document, not the code, so a spelling the document promises cannot be lost again (a header
whose unit is stripped, such as ``Neutral (VA)``, must still leave a known name).
"""

from __future__ import annotations

import re
from pathlib import Path

import pytest

from balancer.io.columns import COLUMNS, match

DOC = Path(__file__).resolve().parents[1] / "docs" / "format.md"


def _documented() -> list[tuple[str, list[str], str]]:
    """(header, accepted spellings, unit) for each row of the generated column table."""
    text = DOC.read_text(encoding="utf-8")
    table = text.split("<!-- columns:start -->")[1].split("<!-- columns:end -->")[0]
    rows = []
    for line in table.strip().splitlines()[2:]:
        cells = [cell.strip() for cell in line.strip().strip("|").split("|")]
        rows.append((cells[0], re.findall(r"`([^`]+)`", cells[1]), cells[2]))
    return rows


ROWS = _documented()


def _meaning(key: str, scale: float) -> tuple[str, float]:
    # The kVA column and the load column with a kVA unit fill the same figure.
    return ("load_va", scale) if key in ("load_va", "load_kva") else (key, scale)


def _cases() -> list[tuple[str, str, str]]:
    """(header as a schedule might write it, documented column, its unit)."""
    cases = []
    for header, spellings, unit in ROWS:
        bare = re.sub(r"\s*\(.*\)\s*$", "", header)
        names = [header, *spellings]
        if unit.lower() != "kva":
            # Without its unit a kVA header is the VA column, documented in that row.
            names.append(bare)
        for name in dict.fromkeys(names):
            cases.append((name, header, unit))
            if unit and name != header:
                cases.append((f"{name} ({unit})", header, unit))
                cases.append((f"{name} [{unit}]", header, unit))
    return list(dict.fromkeys(cases))


def test_the_document_lists_columns() -> None:
    # The parsing above found every column, so the cases below cover the whole table.
    assert [header for header, _, _ in ROWS] == [column.header for column in COLUMNS]
    assert all(spellings for _, spellings, _ in ROWS)


@pytest.mark.parametrize(("written", "header", "unit"), _cases())
def test_documented_header_is_recognised(written: str, header: str, unit: str) -> None:
    spec = {column.header: column for column in COLUMNS}[header]
    found = match(written)
    assert found is not None, f"{written!r} (documented for {header!r}) is not recognised"
    assert _meaning(found[0].key, found[1]) == _meaning(spec.key, spec.scale)
    assert _meaning(found[0].key, found[1])[1] == (1000.0 if unit.lower() == "kva" else 1.0)


def _documented_panel_keys() -> list[tuple[str, list[str]]]:
    text = DOC.read_text(encoding="utf-8")
    table = text.split("<!-- panel:start -->")[1].split("<!-- panel:end -->")[0]
    rows = []
    for line in table.strip().splitlines()[2:]:
        cells = [cell.strip() for cell in line.strip().strip("|").split("|")]
        rows.append((cells[0], re.findall(r"`([^`]+)`", cells[1])))
    return rows


def test_the_document_lists_panel_keys() -> None:
    from balancer.io.columns import PANEL_KEYS, format_panel_table_markdown

    rows = _documented_panel_keys()
    assert [label for label, _ in rows] == [spec.label for spec in PANEL_KEYS]
    table = DOC.read_text(encoding="utf-8").split("<!-- panel:start -->")[1]
    assert table.split("<!-- panel:end -->")[0].strip() == format_panel_table_markdown().strip()


@pytest.mark.parametrize(
    ("written", "label"),
    [
        (name, label)
        for label, spellings in _documented_panel_keys()
        for name in dict.fromkeys([label, f"{label}:", *spellings])
    ],
)
def test_documented_panel_key_is_recognised(written: str, label: str) -> None:
    from balancer.io.columns import panel_key

    found = panel_key(written.rstrip(":"))
    assert found is not None, f"{written!r} (documented for {label!r}) is not recognised"
    assert found.label == label

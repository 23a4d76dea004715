"""Reading real-world schedule shapes: header spellings, titles, units, panel attributes."""

from __future__ import annotations

from pathlib import Path

import pytest

from balancer.io.columns import match, normalise
from balancer.io.reader import PanelOverrides, read_schedule

GOOD = Path(__file__).resolve().parent / "data" / "good"


@pytest.mark.parametrize(
    ("header", "key", "scale"),
    [
        ("Circuit", "space", 1),
        ("Ckt", "space", 1),
        ("Circuit No.", "space", 1),
        ("Space", "space", 1),
        ("Slot", "space", 1),
        ("#", "space", 1),
        ("CKT #", "space", 1),
        ("Description", "description", 1),
        ("Load Description", "description", 1),
        ("Name", "description", 1),
        ("Poles", "poles", 1),
        ("Pole", "poles", 1),
        ("P", "poles", 1),
        ("Load (VA)", "load_va", 1),
        ("VA", "load_va", 1),
        ("Load VA", "load_va", 1),
        ("Connected VA", "load_va", 1),
        ("kVA", "load_kva", 1000),
        ("Load (kVA)", "load_va", 1000),
        ("Trip", "trip_a", 1),
        ("Breaker", "trip_a", 1),
        ("Trip (A)", "trip_a", 1),
        ("OCP", "trip_a", 1),
        ("Type", "load_class", 1),
        ("Class", "load_class", 1),
        ("PF", "power_factor", 1),
        ("Power Factor", "power_factor", 1),
        ("Locked", "locked", 1),
        ("Fixed", "locked", 1),
        ("Group", "group", 1),
        ("MWBC", "group", 1),
        ("Measured (A)", "measured_a", 1),
        ("Measured line A (A)", "measured_line_a", 1),
        ("measured phase B", "measured_line_b", 1),
        ("Measured leg C amps", "measured_line_c", 1),
        ("Harmonics", "harmonic_profile", 1),
        ("Harmonic profile", "harmonic_profile", 1),
        ("Wire", "conductor", 1),
        ("Conductor size", "conductor", 1),
        ("Balanced on (VA)", "balance_va", 1),
        ("Notes", "notes", 1),
        ("  load  description ", "description", 1),
    ],
)
def test_header_spellings(header: str, key: str, scale: float) -> None:
    found = match(header)
    assert found is not None
    spec, got_scale = found
    assert (spec.key, got_scale) == (key, scale)


def test_normalise_keeps_unit_apart() -> None:
    assert normalise("Load (kVA)") == ("load", "kva")
    assert normalise("Trip [A]") == ("trip", "a")


def test_titles_panel_sheet_units_and_subtotals() -> None:
    panel = read_schedule(GOOD / "titled_and_merged.xlsx")
    assert (panel.name, panel.system.designation, panel.spaces, panel.bus_a) == (
        "LP-7",
        "480Y/277",
        30,
        225,
    )
    assert panel.main_a is None
    assert panel.main_lugs_only
    by_id = {c.id: c for c in panel.circuits}
    assert by_id["1"].load_va == 2400  # 2.4 in a kVA column
    assert (by_id["1"].poles, by_id["1"].trip_a) == (1, 20)  # "1P", "20A"
    assert by_id["3"].spaces == (3, 5, 7)
    assert by_id["2"].load_va == 1100  # "1,100 VA" in a kVA column: the cell's own unit wins
    assert by_id["4"].load_va == 500
    assert len(panel.circuits) == 4
    assert any("skipped the total row" in n for n in panel.notices)
    assert by_id["1"].extra == (("Room", "Bay 1"),)


def test_per_line_columns_and_default_panel() -> None:
    panel = read_schedule(GOOD / "per_line_columns.xlsx")
    assert [c.load_va for c in panel.circuits] == [1000, 720, 1500]
    assert panel.system.designation == "208Y/120"
    assert panel.spaces == 18
    assert any("assumed 208Y/120" in n for n in panel.notices)
    assert any("assumed 18" in n for n in panel.notices)
    assert panel.circuits[0].notes == "east"


def test_overrides_win(tmp_path: Path) -> None:
    path = tmp_path / "p.csv"
    path.write_text("System:,480Y/277\nCkt,Description,VA\n1,Lights,100\n", encoding="utf-8")
    panel = read_schedule(path, PanelOverrides(system="120/240", spaces=12, name="X", main="100"))
    assert (panel.system.designation, panel.spaces, panel.name, panel.main_a) == (
        "120/240",
        12,
        "X",
        100,
    )


def test_spares_spaces_and_unknown_columns_kept(tmp_path: Path) -> None:
    path = tmp_path / "p.csv"
    path.write_text(
        "Ckt,Description,Poles,VA,Wire,Room\n"
        "1,Lights,1,100,12 AWG,101\n"
        "3,SPARE,1,,,\n"
        "5,SPACE,,,,\n"
        "7,,,,,\n"
        "2,Heater,2,3000,10 AWG,\n",
        encoding="utf-8",
    )
    panel = read_schedule(path)
    assert [c.id for c in panel.circuits] == ["1", "3", "2"]
    spare = panel.circuit("3")
    assert spare.is_spare
    assert spare.load_va == 0
    assert panel.circuit("1").extra == (("Room", "101"),)  # the wire is a column balancer reads
    assert panel.circuit("1").conductor is not None
    assert (panel.circuit("1").conductor.size, panel.circuit("1").conductor.as_written) == (
        "12",
        "12 AWG",
    )
    assert panel.circuit("2").spaces == (2, 4)


def test_unplaced_circuits_get_row_ids(tmp_path: Path) -> None:
    path = tmp_path / "p.csv"
    path.write_text("Description,Poles,VA\nLights,1,100\nOven,2,5000\n", encoding="utf-8")
    panel = read_schedule(path)
    assert [c.id for c in panel.circuits] == ["R2", "R3"]
    assert all(not c.placed for c in panel.circuits)


def test_multipole_space_list(tmp_path: Path) -> None:
    path = tmp_path / "p.csv"
    path.write_text('Ckt,Description,Poles,VA\n"1,3,5",Pump,3,6000\n', encoding="utf-8")
    assert read_schedule(path).circuits[0].spaces == (1, 3, 5)
    path.write_text('Ckt,Description,Poles,VA\n"1,2",Pump,2,6000\n', encoding="utf-8")
    with pytest.raises(Exception, match="do not fit a 2-pole breaker"):
        read_schedule(path)


def test_shared_neutral_on_one_line_is_flagged(tmp_path: Path) -> None:
    path = tmp_path / "p.csv"
    path.write_text("Ckt,Description,VA,MWBC\n1,Desk 1,900,W\n7,Desk 2,900,W\n", encoding="utf-8")
    panel = read_schedule(path)
    assert any("multiwire group 'W'" in n for n in panel.notices)


def test_format_doc_lists_every_column() -> None:
    # docs/format.md carries the generated column table; keep it in step with the schema.
    from balancer.io.columns import format_table_markdown

    doc = (Path(__file__).resolve().parents[1] / "docs" / "format.md").read_text(encoding="utf-8")
    table = doc.split("<!-- columns:start -->")[1].split("<!-- columns:end -->")[0].strip()
    assert table == format_table_markdown().strip()

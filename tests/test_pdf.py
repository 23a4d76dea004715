"""The PDF: pages, paper size, and searchable text with the panel, its circuits and figures.

Text is read back with pypdf (a test-only dependency), so no poppler install is needed.
"""

from __future__ import annotations

import dataclasses
from pathlib import Path

import pypdf
import pytest
from writer_demo import demo_panel, demo_result

from balancer.domain.panel import Circuit
from balancer.errors import BalancerError
from balancer.field.workorder import work_order_for
from balancer.io.pdf import PAPER_IN, write_pdf
from balancer.physics.analysis import analyze

POINTS_PER_IN = 72.0


def _text(path: Path) -> list[str]:
    return [page.extract_text() for page in pypdf.PdfReader(path).pages]


def _flat(text: str) -> str:
    return " ".join(text.split())


def test_balance_pdf_pages_and_contents(tmp_path: Path) -> None:
    result = demo_result()
    out = write_pdf(
        tmp_path / "lp1.pdf",
        result.after_panel,
        result.after,
        result=result,
        order=work_order_for(result),
    )
    pages = _text(out)
    assert len(pages) == 3  # summary, circuit directory, work order
    summary, directory, work = (_flat(p) for p in pages)
    assert "Panel DEMO-LP1" in summary
    for line in "ABC":
        assert f"{result.after.phase_va[line]:,.0f}" in summary
        assert f"{result.before.phase_va[line]:,.0f}" in summary
    assert f"{result.after.neutral_a:.1f}" in summary
    # how good, in plain words with the figures, no solver terms
    assert "Within 1 VA of the best possible (proven)" in summary
    assert f"below {result.lower_bound_spread_va:,.0f} VA" in summary
    for word in ("bound", "gap", "tolerance"):
        assert word not in summary.lower()
    assert "qualified persons" in summary
    assert "authority having jurisdiction" in summary
    for circuit in result.after_panel.circuits:
        assert circuit.description in directory
    assert "408.4" in directory
    assert "Work order" in work
    assert "Demo lighting west" in work
    assert "15 (B)" in work
    assert "5 (C)" in work


def test_check_pdf_has_no_work_order_and_is_a4(tmp_path: Path) -> None:
    panel = demo_panel()
    loads = analyze(panel)
    out = write_pdf(tmp_path / "check.pdf", panel, loads, paper="a4")
    reader = pypdf.PdfReader(out)
    assert len(reader.pages) == 2
    box = reader.pages[0].mediabox
    width_in, height_in = PAPER_IN["a4"]
    assert float(box.width) == pytest.approx(width_in * POINTS_PER_IN, abs=1)
    assert float(box.height) == pytest.approx(height_in * POINTS_PER_IN, abs=1)
    text = _flat(" ".join(_text(out)))
    assert "Work order" not in text
    assert f"{loads.phase_va['B']:,.0f}" in text


def test_letter_page_size(tmp_path: Path) -> None:
    panel = demo_panel()
    out = write_pdf(tmp_path / "l.pdf", panel, analyze(panel))
    box = pypdf.PdfReader(out).pages[0].mediabox
    assert (float(box.width), float(box.height)) == pytest.approx((612.0, 792.0), abs=1)


def test_long_panel_directory_continues_on_a_second_page(tmp_path: Path) -> None:
    base = demo_panel()
    circuits = tuple(
        Circuit(id=str(s), description=f"Demo load {s}", poles=1, load_va=500.0, spaces=(s,))
        for s in range(1, 85)
    )
    panel = dataclasses.replace(base, circuits=circuits, spaces=84)
    out = write_pdf(tmp_path / "big.pdf", panel, analyze(panel))
    pages = [_flat(t) for t in _text(out)]
    assert len(pages) == 3  # summary + 42 rows of directory over two pages
    assert "(1 of 2)" in pages[1]
    assert "(2 of 2)" in pages[2]
    joined = " ".join(pages[1:])
    for s in range(1, 85):
        assert f"Demo load {s} " in joined + " "


def test_extra_sections_get_their_own_page(tmp_path: Path) -> None:
    panel = demo_panel()
    rows = [("Class", "Connected VA", "Demand VA"), ("Lighting", 4200.0, 4200.0)]
    out = write_pdf(tmp_path / "d.pdf", panel, analyze(panel), sections=[("Demand load", rows)])
    pages = [_flat(t) for t in _text(out)]
    assert len(pages) == 3
    assert "Demand load" in pages[2]
    assert "4,200" in pages[2]


def test_pdf_refuses_the_input_and_bad_paper(tmp_path: Path) -> None:
    panel = demo_panel()
    source = tmp_path / "s.xlsx"
    source.write_bytes(b"keep")
    with pytest.raises(BalancerError):
        write_pdf(source, panel, analyze(panel), input_path=source)
    assert source.read_bytes() == b"keep"
    with pytest.raises(ValueError, match="paper"):
        write_pdf(tmp_path / "x.pdf", panel, analyze(panel), paper="legal")  # type: ignore[arg-type]
    assert sorted(p.name for p in tmp_path.iterdir()) == ["s.xlsx"]


def test_demand_summary_and_page(tmp_path: Path) -> None:
    from balancer.code.demand import compute_demand

    result = demo_result()
    demand = compute_demand(result.after_panel)
    out = write_pdf(
        tmp_path / "dm.pdf",
        result.after_panel,
        result.after,
        result=result,
        demand=demand,
        order=work_order_for(result),
    )
    pages = [_flat(t) for t in _text(out)]
    assert len(pages) == 4  # summary, directory, work order, demand and feeder check
    assert f"{demand.total_demand_va:,.0f} VA" in pages[0]
    assert "Demand load and feeder check" in pages[3]
    assert demand.feeder.min_ocpd_a is not None
    assert f"Minimum feeder OCPD {demand.feeder.min_ocpd_a} A" in pages[0]


def test_long_descriptions_shrink_before_they_are_cut(tmp_path: Path) -> None:
    """The directory must stay legible and complete (NEC 408.4, from memory): a 36-character
    description is set in smaller type rather than cut."""
    base = demo_panel()
    long_name = "Demo receptacles, north open office"
    assert len(long_name) >= 35
    circuits = (
        *base.circuits,
        Circuit(id="17", description=long_name, poles=1, load_va=720.0, spaces=(17,)),
    )
    panel = dataclasses.replace(base, circuits=circuits)
    for paper in ("letter", "a4"):
        out = write_pdf(tmp_path / f"{paper}.pdf", panel, analyze(panel), paper=paper)
        assert long_name in _flat(_text(out)[1])


def _embedded_fonts(path: Path) -> list[str]:
    """The base names of the fonts embedded in a PDF (a subset's ``ABCDEF+`` prefix kept)."""
    names: set[str] = set()
    for page in pypdf.PdfReader(path).pages:
        fonts = page["/Resources"].get_object().get("/Font", {})
        for ref in fonts.values():
            names.add(str(ref.get_object()["/BaseFont"]))
    return sorted(names)


def test_each_typeface_is_embedded_once(tmp_path: Path) -> None:
    """One subset per face (regular, bold) for the whole document: a ligature or an alternate
    glyph would make the PDF embed and subset the font a second time, which costs time every
    write. Text with 'fi', 'fl' and 'ff' (ligatures in DejaVu Sans) is on every page."""
    result = demo_result()
    out = write_pdf(
        tmp_path / "lp1.pdf",
        result.after_panel,
        result.after,
        result=result,
        order=work_order_for(result),
    )
    faces = [name.split("+", 1)[1] for name in _embedded_fonts(out)]
    assert sorted(faces) == ["DejaVuSans", "DejaVuSans-Bold"]
    text = " ".join(_text(out))
    for word in ("office", "qualified", "first", "affected", "figures"):
        if word in text:
            break
    else:
        pytest.fail("no word with a ligature pair to check")


def test_wrapping_decides_as_the_measured_width() -> None:
    """The fast width test (glyph advances, measured near the limit) gives the measured answer
    on every string of a varied corpus (invented text)."""
    import random

    from balancer.io.pdf import text_width_in, wider_than

    rng = random.Random(7)
    letters = "abcdefghijklmnopqrstuvwxyz ABCDEFGHIJKLMNOPQRSTUVWXYZ 0123456789 ,.-/()%#+&'°×é"
    corpus = ["".join(rng.choice(letters) for _ in range(rng.randint(1, 90))) for _ in range(300)]
    corpus += ["fluffy office fine", "WWWWWWWWWW", "iiiiiiiiiiiiiiii", "AV To Ty", "3P 100 A"]
    for text in corpus:
        for size in (6.5, 8.0, 9.0):
            width = text_width_in(text, size)
            for room in (width - 0.02, width + 0.02, width * 0.9, width * 1.1):
                assert wider_than(text, size, room) == (width > room), (text, size, room)

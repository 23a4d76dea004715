"""``balancer serve`` in a real browser: Debian's chromium driven by Playwright. The clinic
sample goes in through the file input, the figures shown are the check's, a balance runs, a
trade-off row is chosen by keyboard, its workbook is downloaded and read back, a circuit is
locked and the panel re-balanced; the bike-workshop sample is balanced on its logger file. A
screenshot of each step is saved in a folder the run names (BALANCER_WEB_SHOTS, else a
temporary folder), for a person to look at.

Without /usr/bin/chromium the tests are skipped, or fail when the environment variable CI is
set (install it with .ci/browser-deps)."""

from __future__ import annotations

import os
import subprocess
import sys
from collections.abc import Iterator
from pathlib import Path
from typing import Any

import openpyxl
import pytest
from conftest import SAMPLES

from balancer import api
from balancer.code.demand import DemandOptions
from balancer.report.json import check_json
from balancer.report.safety import CAUTIONS

CHROMIUM = Path("/usr/bin/chromium")
CLINIC = SAMPLES / "clinic-after-additions-208y120.xlsx"
BIKE = SAMPLES / "bike-workshop-cafe-208y120.xlsx"
BIKE_LOGGER = SAMPLES / "loggers" / "bike-workshop-cafe-logger.csv"
STEP_MS = 90_000  # one balance on a shared machine; the solve itself takes seconds


def _need_browser() -> Any:
    missing = None
    if not CHROMIUM.exists():
        missing = f"{CHROMIUM} is not installed (bash .ci/browser-deps installs it)"
    try:
        from playwright.sync_api import sync_playwright
    except ImportError:
        missing = missing or "playwright is not installed (pip install -e '.[test]')"
    if missing:
        if os.environ.get("CI"):
            pytest.fail(missing)
        pytest.skip(missing)
    return sync_playwright


@pytest.fixture(scope="module")
def server() -> Iterator[str]:
    command = [sys.executable, "-m", "balancer", "serve", "--port", "0"]
    env = {**os.environ, "PYTHONUNBUFFERED": "1"}
    with subprocess.Popen(command, stdout=subprocess.PIPE, text=True, env=env) as process:
        try:
            assert process.stdout is not None
            line = process.stdout.readline()
            assert line.startswith("balancer serve: http://127.0.0.1:"), line
            yield line.split()[2]
        finally:
            process.terminate()
            process.wait(20)


@pytest.fixture(scope="module")
def shots(tmp_path_factory: pytest.TempPathFactory) -> Path:
    named = os.environ.get("BALANCER_WEB_SHOTS")
    folder = Path(named) if named else tmp_path_factory.mktemp("web-shots")
    folder.mkdir(parents=True, exist_ok=True)
    print(f"\nscreenshots in {folder}")
    return folder


@pytest.fixture(scope="module")
def browser() -> Iterator[Any]:
    sync_playwright = _need_browser()
    with sync_playwright() as playwright:
        launched = playwright.chromium.launch(executable_path=str(CHROMIUM))
        try:
            yield launched
        finally:
            launched.close()


@pytest.fixture
def page(browser: Any, server: str) -> Iterator[Any]:
    context = browser.new_context(viewport={"width": 1280, "height": 900}, accept_downloads=True)
    page = context.new_page()
    errors: list[str] = []
    page.on("pageerror", lambda error: errors.append(str(error)))
    page.on("console", lambda m: errors.append(m.text) if m.type == "error" else None)
    expected = "the server responded with a status of 422"  # a bad schedule, shown on the page
    page.goto(server)
    page.wait_for_selector("#file-hint:has-text('20 MB')")
    yield page
    context.close()
    assert [e for e in errors if expected not in e] == []  # no script error, nothing refused


def _text(page: Any, figure: str) -> str:
    return str(page.locator(f"#step-check [data-figure='{figure}']").inner_text()).strip()


def test_from_the_clinic_sample_to_its_work_order(page: Any, shots: Path) -> None:
    page.screenshot(path=shots / "01-start.png")
    page.set_input_files("#file", str(CLINIC))
    page.wait_for_selector("#step-check:not([hidden])")

    expected = check_json(api.run_check(CLINIC, None, "nameplate", DemandOptions()))
    loads = expected["loads"]
    assert _text(page, "panel-name") == f"Panel {expected['panel']['name']}"
    assert _text(page, "imbalance") == f"{loads['imbalance_pct']:.2f} %"
    assert _text(page, "spread") == f"{loads['spread_va']:,.0f} VA"
    assert _text(page, "neutral") == f"{loads['neutral_rms_a']:.1f} A"
    for line in "ABC":
        assert _text(page, f"va-{line}") == f"{loads['phase_va'][line]:,.0f} VA"
        assert _text(page, f"amps-{line}") == f"{loads['line_rms_a'][line]:.1f} A"
    demand = expected["demand"]
    assert (
        _text(page, "demand") == f"{demand['total_demand_va']:,.0f} VA ({demand['rule_set_title']})"
    )
    feeder = demand["feeder"]
    assert _text(page, "feeder") == f"{feeder['design_a']:.1f} A on line {feeder['design_line']}"
    breakers = page.locator("#layout-now .breaker")
    assert breakers.count() == sum(1 for c in expected["circuits"] if c["spaces"])
    page.screenshot(path=shots / "02-check.png", full_page=True)

    page.fill("#tradeoff_moves", "2")
    page.fill("#time_limit_s", "5")
    page.click("#run")
    page.wait_for_selector("#step-row:not([hidden])", timeout=STEP_MS)
    assert "Recommended" in page.inner_text("#recommendation")
    rows = page.locator("#table tbody tr")
    assert rows.count() == 3
    assert page.locator("#table tbody tr[aria-selected='true']").count() == 1
    statuses = [str(t) for t in page.locator("#table tbody tr td:last-child").all_inner_texts()]
    assert all(s in ("optimal (proven)", "best found, not proven") for s in statuses)
    page.screenshot(path=shots / "03-arrangements.png", full_page=True)

    one_move = page.locator("#table tbody tr").nth(1)  # by keyboard: focus the row, Enter
    one_move.focus()
    page.keyboard.press("Enter")
    page.wait_for_selector("#row-title:has-text('at most 1 move')")
    assert one_move.get_attribute("aria-selected") == "true"
    moved = page.locator("#layout-row .breaker.moved")
    move_rows = page.locator("#moves tbody tr")
    assert moved.count() == move_rows.count() == 1
    assert "moved from" in moved.first.inner_text().lower()
    cautions, order = page.locator("#cautions"), page.locator("#work-order")
    assert CAUTIONS[0] in cautions.inner_text()
    assert cautions.bounding_box()["y"] < order.bounding_box()["y"]  # cautions come first
    steps = page.locator("#work-order ol.steps > li").count()
    assert steps >= 1
    # each step reads as words: a new breaker's rating and wire under its line
    written = order.inner_text()
    assert "[object" not in written
    assert "new breaker: 1-pole, 20 A; conductor 12 AWG Cu (from the schedule)" in written
    page.screenshot(path=shots / "04-one-move-row.png", full_page=True)

    with page.expect_download() as download:
        page.click(".downloads [data-kind='xlsx']")
    saved = shots / download.value.suggested_filename
    download.value.save_as(saved)
    assert saved.name.endswith("-balanced-1-moves.xlsx")
    book = openpyxl.load_workbook(saved)
    assert "Work order" in book.sheetnames
    numbered = [
        r[0] for r in book["Work order"].iter_rows(values_only=True) if isinstance(r[0], int)
    ]
    assert numbered == list(range(1, steps + 1))

    circuit = str(moved.first.get_attribute("data-circuit"))
    moved.first.click()
    locked = page.locator(f"#layout-now [data-circuit='{circuit}']")
    assert locked.get_attribute("aria-pressed") == "true"
    assert "locked" in locked.inner_text().lower()
    assert page.locator("#locks-note").is_visible()
    assert page.inner_text("#run") == "Re-balance"
    page.screenshot(path=shots / "05-locked.png", full_page=True)

    page.click("#run")
    page.wait_for_selector("#progress:has-text('Done')", timeout=STEP_MS)
    page.wait_for_selector("#step-row:not([hidden])")
    held = page.locator(f"#layout-row [data-circuit='{circuit}']")
    assert "locked" in str(held.get_attribute("class"))
    assert "moved" not in str(held.get_attribute("class")).split()
    assert circuit not in page.locator("#moves").inner_text().split()
    assert not page.locator("#locks-note").is_visible()
    page.screenshot(path=shots / "06-rebalanced.png", full_page=True)


def test_schedule_text_is_shown_as_text(page: Any, shots: Path, tmp_path: Path) -> None:
    hostile = '<img src=x onerror="window.pwned=1">Lights & <b>bold</b>'
    schedule = tmp_path / "hostile.csv"
    schedule.write_text(
        "Circuit,Description,Poles,Trip,Load (VA)\n"
        f'1,"{hostile.replace(chr(34), chr(34) * 2)}",1,20,1200\n'
        "3,Receptacles,1,20,900\n",
        encoding="utf-8",
    )
    page.set_input_files("#file", str(schedule))
    page.wait_for_selector("#step-check:not([hidden])")
    shown = page.locator("#layout-now [data-circuit='1'] .desc")
    assert shown.inner_text() == hostile
    assert page.locator("#layout-now img").count() == 0
    assert page.evaluate("window.pwned") is None


def test_a_bad_file_shows_its_located_problem(page: Any, shots: Path, tmp_path: Path) -> None:
    schedule = tmp_path / "loads.csv"
    schedule.write_text(
        "Circuit,Description,Poles,Trip,Load (VA)\n1,Lighting,1,20,about 5\n", encoding="utf-8"
    )
    page.set_input_files("#file", str(schedule))
    page.wait_for_selector("#file-problems:not([hidden])")
    text = page.inner_text("#file-problems")
    assert "loads.csv!E2" in text
    assert "not a number" in text
    assert "Traceback" not in text
    assert page.locator("#step-check").is_hidden()
    page.screenshot(path=shots / "07-bad-file.png")


def test_a_tablet_sees_one_column(browser: Any, server: str, shots: Path) -> None:
    context = browser.new_context(viewport={"width": 768, "height": 1024})
    page = context.new_page()
    page.goto(server)
    page.wait_for_selector("#file-hint:has-text('20 MB')")
    page.set_input_files("#file", str(CLINIC))
    page.wait_for_selector("#step-check:not([hidden])")
    width = page.evaluate("document.documentElement.scrollWidth")
    assert width <= 768  # nothing runs off the side
    page.screenshot(path=shots / "08-tablet.png", full_page=True)
    context.close()


def test_the_high_leg_is_named(page: Any, shots: Path) -> None:
    page.set_input_files("#file", str(SAMPLES / "machine-shop-240-120-high-leg.xlsx"))
    page.wait_for_selector("#step-check:not([hidden])")
    banner = page.locator("#high-leg")
    assert banner.is_visible()
    text = banner.inner_text()
    assert "line b" in text.lower()
    assert "208 V to neutral" in text
    assert "110.15" in text
    assert page.locator("#layout-now .bus.high").count() >= 1
    assert "HIGH LEG" in page.locator("#layout-now .bus.high").first.inner_text()
    page.screenshot(path=shots / "09-high-leg.png", full_page=True)


def _drawn(page: Any, selector: str) -> dict[str, Any]:
    image = page.locator(selector)
    assert image.is_visible()
    size = page.evaluate(
        "(s) => { const i = document.querySelector(s); return [i.naturalWidth, i.width]; }",
        selector,
    )
    assert size[0] > 300  # the SVG was decoded and drawn, not a broken image
    return {"alt": str(image.get_attribute("alt")), "width": size[1]}


def test_the_load_over_time_from_the_bundled_logger(page: Any, shots: Path) -> None:
    page.set_input_files("#file", str(BIKE))
    page.wait_for_selector("#step-check:not([hidden])")
    page.set_input_files("#logger-file", str(BIKE_LOGGER))
    page.wait_for_selector("#check-peak:not([hidden])")
    report = api.run_check(BIKE, over_time=api.LoadOverTime(logger=BIKE_LOGGER))
    expected = check_json(report)["load_over_time"]
    section = page.locator("#check-peak")
    assert page.inner_text("#check-peak [data-figure='peak-basis']") == (
        f"measured, from {BIKE_LOGGER.name}"
    )
    before = expected["widest_before"]
    assert page.inner_text("#check-peak [data-figure='peak-before-spread']") == (
        f"{before['spread_va']:,.0f} VA"
    )
    assert before["start"] in section.inner_text()
    existing = expected["existing_load"]
    assert f"at 125 % {existing['existing_a']:.1f} A" in page.inner_text(
        "#check-peak [data-figure='peak-existing']"
    )
    assert "widest as it stands" in _drawn(page, "#check-peak-chart img")["alt"]
    _drawn(page, "#check-peak-heat img")
    assert page.locator("#goal").is_hidden()  # the load over time sets the goal
    assert page.locator("#goal-note").is_visible()

    page.fill("#time_limit_s", "20")
    page.click("#run")
    page.wait_for_selector("#row-peak:not([hidden])", timeout=STEP_MS)
    assert "No trade-off table" in page.inner_text("#table")
    row = page.locator("#row-peak")
    assert "Load over time" in row.inner_text()
    after = page.inner_text("#row-peak [data-figure='peak-after-spread']")
    assert page.inner_text("#table [data-figure='peak-goal']") == after
    assert float(after.removesuffix(" VA").replace(",", "")) < before["spread_va"]
    assert after in page.inner_text("#row-peak-note")
    chart = _drawn(page, "#row-peak-chart img")
    assert "widest arranged" in chart["alt"]
    assert "as it stands dashed, arranged solid" in chart["alt"]
    heat = _drawn(page, "#row-peak-heat img")
    assert "Arranged line A" in heat["alt"]
    width = page.evaluate("document.documentElement.scrollWidth")
    assert width <= 1280  # nothing runs off the side
    page.screenshot(path=shots / "10-load-over-time.png", full_page=True)
    row.screenshot(path=shots / "11-load-over-time-section.png")

    with page.expect_download() as download:
        page.click(".downloads [data-kind='xlsx']")
    saved = shots / download.value.suggested_filename
    download.value.save_as(saved)
    assert {"Load over time", "Intervals"} <= set(openpyxl.load_workbook(saved).sheetnames)


def test_a_wrong_logger_shows_its_located_problem(page: Any, shots: Path, tmp_path: Path) -> None:
    page.set_input_files("#file", str(BIKE))
    page.wait_for_selector("#step-check:not([hidden])")
    logger = tmp_path / "clamp.csv"
    logger.write_text("Time,1 (A),77 (A)\n2026-10-12 00:00,1.0,2.0\n", encoding="utf-8")
    page.set_input_files("#logger-file", str(logger))
    page.wait_for_selector("#logger-problems:not([hidden])")
    text = page.inner_text("#logger-problems")
    assert "clamp.csv" in text
    assert 'file row 1, column "77 (A)"' in text
    assert "Traceback" not in text
    assert page.locator("#check-peak").is_hidden()
    assert page.locator("#goal").is_visible()  # no load over time: the goals are back
    page.locator("#over-time").screenshot(path=shots / "12-bad-logger.png")

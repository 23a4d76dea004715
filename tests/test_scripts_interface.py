"""What scripts and people read: every command's ``--json`` against its schema in docs/schemas/
(checked with the ``jsonschema`` package, draft 2020-12), on every sample and on failures; and
the terminal text of ``balance`` and ``building`` on every sample within 100 columns, free of
solver words unless ``--verbose``, with warnings marked (coloured only on a terminal)."""

from __future__ import annotations

import contextlib
import io
import json
import re
from pathlib import Path
from typing import Any

import pytest
from jsonschema import Draft202012Validator
from jsonschema.exceptions import ValidationError
from referencing import Registry, Resource

from balancer.cli.main import main

ROOT = Path(__file__).resolve().parents[1]
SAMPLES = ROOT / "sample_schedules"
SCHEMAS = ROOT / "docs" / "schemas"
BUILDING = SAMPLES / "building-demo" / "building-demo.xlsx"
BAD = ROOT / "tests" / "data" / "bad"
SAMPLE_FILES = sorted(p.name for p in SAMPLES.glob("*.xlsx")) + sorted(
    p.name for p in SAMPLES.glob("*.csv")
)
QUICK = ("salon-208y120.csv", "bakery-120-240.xlsx")  # the rest run with the slow marker
WIDTH = 100
# Solver words a practitioner should not have to read (``--verbose`` may show them).
JARGON = re.compile(
    r"64-sided|polygon|\bbounds?\b|\bnodes?\b|\bMIP\b|incumbent|relaxation|\bgap\b", re.I
)


def _validator(name: str) -> Draft202012Validator:
    schemas = {p.name: json.loads(p.read_text()) for p in SCHEMAS.glob("*.schema.json")}
    registry: Registry = Registry().with_resources(
        (file, Resource.from_contents(schema)) for file, schema in schemas.items()
    )
    schema = schemas[f"{name}.schema.json"]
    Draft202012Validator.check_schema(schema)
    return Draft202012Validator(schema, registry=registry)


def _run(argv: list[str]) -> tuple[int, str]:
    out = io.StringIO()
    with contextlib.redirect_stdout(out):
        status = main(argv)
    return status, out.getvalue()


def _json(argv: list[str], expect: int = 0) -> Any:
    status, out = _run(argv)
    assert status == expect, out
    return json.loads(out)


def _samples() -> list[Any]:
    return [
        name if name in QUICK else pytest.param(name, marks=pytest.mark.slow)
        for name in SAMPLE_FILES
    ]


FIGURE_KEY = re.compile(r".*(_va|_a|_pct|_kw|_kvar|_spaces)$")


def _numbers_shown(data: Any, key: str = "") -> None:
    """No figure as text: under a key named for a unit (or spaces) only numbers, per-line
    objects of numbers, lists of numbers or null."""
    if isinstance(data, dict):
        for k, v in data.items():
            _numbers_shown(v, k if FIGURE_KEY.match(k) or not FIGURE_KEY.match(key) else key)
    elif isinstance(data, list):
        for v in data:
            _numbers_shown(v, key)
    elif FIGURE_KEY.match(key) and key != "design_line":
        assert data is None or isinstance(data, int | float), (key, data)


# ------------------------------------------------------------------ JSON against the schemas


@pytest.mark.parametrize("name", SAMPLE_FILES)
def test_check_json_matches_its_schema(name: str) -> None:
    data = _json(["check", "--json", str(SAMPLES / name)])
    _validator("check").validate(data)
    _numbers_shown(data)
    # per-line figures keyed by line; two lines on a single-phase 3-wire panel
    lines = set(data["loads"]["phase_va"])
    assert lines == ({"A", "B"} if name.startswith("bakery") else {"A", "B", "C"})
    for key in ("line_rms_a", "line_fundamental_a", "phase_kw"):
        assert set(data["loads"][key]) == lines


@pytest.mark.parametrize("name", _samples())
def test_balance_json_matches_its_schema(name: str, tmp_path: Path) -> None:
    out = tmp_path / "revised.xlsx"
    data = _json(["balance", "--json", str(SAMPLES / name), "-o", str(out), "--pdf"])
    _validator("balance").validate(data)
    _numbers_shown(data)
    assert data["output"] == str(out)
    assert data["pdf"] is not None
    for side in ("before", "after"):
        loads = data[side]
        # both neutral figures, each named for what it is (RMS includes the harmonics)
        assert loads["neutral_rms_a"] >= loads["neutral_fundamental_a"] - 0.1
        assert loads["phase_va"]["A"] == round(loads["phase_va"]["A"], 1)
    # the trade-off rows use the same names as the loads
    for row in data["tradeoff"]:
        assert {"spread_va", "imbalance_pct", "neutral_rms_a", "neutral_fundamental_a"} <= set(row)


def test_batch_json_matches_its_schema(tmp_path: Path) -> None:
    for mode, extra in (("check", []), ("balance", ["--no-tradeoff", "--time-limit", "10"])):
        argv = [mode, str(SAMPLES / "salon-208y120.csv"), str(SAMPLES / "bakery-120-240.xlsx")]
        argv += [str(BAD / "empty.csv"), "--json", "--jobs", "1"]
        argv += ["--summary", str(tmp_path / f"{mode}.xlsx"), *extra]
        if mode == "balance":
            argv += ["-o", str(tmp_path / "out")]
        data = _json(argv, expect=2)  # the empty schedule is an error, the others go on
        _validator("batch").validate(data)
        assert [f["status"] == "error" for f in data["files"]] == [False, False, True]
        if mode == "balance":
            assert all(f["after"] is not None for f in data["files"][:2])
            assert data["files"][0]["move_count"] >= 0


@pytest.mark.slow  # the demo building balanced: about 10 s here
def test_building_json_matches_its_schema(tmp_path: Path) -> None:
    validator = _validator("building")
    figures = _json(["building", str(BUILDING), "--json"])
    validator.validate(figures)
    assert not figures["balanced"]
    assert figures["moves"] == []
    out = tmp_path / "b.xlsx"
    balanced = _json(["building", str(BUILDING), "--balance", "--json", "-o", str(out)])
    validator.validate(balanced)
    _numbers_shown(balanced)
    assert balanced["written"] == [str(out)]
    # the same names for the same figures as check and balance
    mdp = balanced["panels"][0]
    assert set(mdp["before"]) <= set(_loads_keys())
    assert isinstance(mdp["before"]["phase_va"]["A"], float)
    assert all(isinstance(s, int) for m in balanced["moves"] for s in m["from_spaces"])
    assert mdp["first_goal"] == "spread"
    # a regression the schema catches: a figure back as text
    broken = json.loads(json.dumps(balanced))
    broken["panels"][0]["before"]["phase_va"] = "52,232 / 41,517 / 26,462"
    with pytest.raises(ValidationError):
        validator.validate(broken)


def test_building_figures_with_demand_match_the_schema() -> None:
    data = _json(["building", str(BUILDING), "--demand", "--json"])
    _validator("building").validate(data)
    assert all(p["demand"]["total_demand_va"] > 0 for p in data["panels"])
    assert data["panels"][0]["demand"]["phase_demand_va_after"] is None  # nothing balanced


def _loads_keys() -> list[str]:
    schema = json.loads((SCHEMAS / "common.schema.json").read_text())
    return list(schema["$defs"]["loads"]["properties"])


@pytest.mark.parametrize(
    "argv",
    [
        ["check", str(BAD / "header_typo.csv")],
        ["check", str(BAD / "not_a_workbook.xlsx")],
        ["balance", str(BAD / "same_space_twice.csv")],
        ["check", "no-such-schedule.xlsx"],
        ["building", str(BAD / "empty.csv")],
    ],
)
def test_error_json_matches_its_schema(argv: list[str], tmp_path: Path) -> None:
    if argv[0] == "balance":
        argv = [*argv, "-o", str(tmp_path / "x.xlsx")]
    data = _json([*argv, "--json"], expect=2)
    _validator("error").validate(data)
    assert data["exit_status"] == 2


def test_json_panel_carries_the_title_block() -> None:
    """The schedule's title block in the ``panel`` object (sample values: demo data); null
    where the schedule says nothing (the bare CSV)."""
    shop = _json(["check", "--json", str(SAMPLES / "machine-shop-240-120-high-leg.xlsx")])
    block = shop["panel"]["title_block"]
    assert block["location"] == "Machine shop, north wall"
    assert block["fed_from"] == "Utility service, 240/120 V delta bank"
    assert block["sccr_ka"] == 22.0
    assert block["neutral_pct"] == 100.0
    assert block["mounting"] == "surface"
    assert block["isolated_ground"] is False
    assert (block["project"], block["date"], block["revision"]) == (
        "Old Mill machine shop survey (demo)",
        "2026-11-02",
        "0",
    )
    bare = _json(["check", "--json", str(SAMPLES / "salon-208y120.csv")])
    assert set(bare["panel"]["title_block"].values()) == {None}


def test_schemas_refuse_what_they_should() -> None:
    """The schemas are strict: a missing key, a stray key and a wrong type each fail."""
    data = _json(["check", "--json", str(SAMPLES / "salon-208y120.csv")])
    validator = _validator("check")
    for change in (
        lambda d: d["loads"].pop("neutral_fundamental_a"),
        lambda d: d["loads"].__setitem__("neutral_a", 1.0),
        lambda d: d["loads"].__setitem__("spread_va", "1,250"),
        lambda d: d["loads"]["phase_va"].__setitem__("N", 1.0),
        lambda d: d.__setitem__("extra", True),
        lambda d: d["panel"].pop("title_block"),
        lambda d: d["panel"]["title_block"].pop("project"),
        lambda d: d["panel"]["title_block"].__setitem__("sccr_ka", "22 kA"),
        lambda d: d["panel"]["title_block"].__setitem__("colour", "grey"),
    ):
        broken = json.loads(json.dumps(data))
        change(broken)
        with pytest.raises(ValidationError):
            validator.validate(broken)


# ------------------------------------------------------------------ terminal text


@pytest.mark.parametrize("name", _samples())
def test_balance_text_fits_a_terminal_and_speaks_plainly(name: str, tmp_path: Path) -> None:
    out = tmp_path / "revised.xlsx"
    status, text = _run(["balance", str(SAMPLES / name), "-o", str(out), "--no-color"])
    assert status == 0
    wide = [line for line in text.splitlines() if len(line) > WIDTH]
    assert wide == []
    assert JARGON.findall(text) == [], [ln for ln in text.splitlines() if JARGON.search(ln)]
    assert "\033[" not in text  # no colour codes in a pipe
    result = next(line for line in text.splitlines() if line.startswith("Result: "))
    assert (
        "proven the best possible" in result
        or "of the best possible" in result
        or ("not proven: could be up to" in result)
    )


def test_verbose_shows_the_solver_detail(tmp_path: Path) -> None:
    sample = str(SAMPLES / "salon-208y120.csv")
    _, plain = _run(["balance", sample, "-o", str(tmp_path / "a.xlsx"), "--no-tradeoff"])
    _, verbose = _run(["balance", sample, "-o", str(tmp_path / "b.xlsx"), "--no-tradeoff", "-v"])
    solver = verbose.split("Solver: ")[1].split("\n\n")[0]
    assert "status optimal" in solver
    assert "lower bound" in solver
    assert "gap" in solver
    assert "Solver: " not in plain
    assert all(len(line) <= WIDTH for line in verbose.splitlines())


@pytest.mark.slow  # the demo building balanced: about 10 s here
def test_building_text_fits_a_terminal(tmp_path: Path) -> None:
    for extra in ([], ["--balance", "-o", str(tmp_path / "b.xlsx")]):
        status, text = _run(["building", str(BUILDING), "--no-color", *extra])
        assert status == 0
        assert [line for line in text.splitlines() if len(line) > WIDTH] == []
        assert JARGON.findall(text) == []
    status, text = _run(
        ["building", str(BUILDING), "--balance", "-v", "-o", str(tmp_path / "v.xlsx")]
    )
    assert status == 0
    assert "MDP: solver status optimal, gap" in text


def test_warnings_are_marked_in_a_pipe_and_coloured_on_a_terminal(
    monkeypatch: pytest.MonkeyPatch,
) -> None:
    from balancer.report.text import WARNING_MARK, warning_lines

    # the office sample has a total row the reader skips: a warning the user should see
    office = str(SAMPLES / "office-208y120.xlsx")
    _, piped = _run(["check", office])
    marked = [line for line in piped.splitlines() if line.startswith(WARNING_MARK)]
    assert any("skipped the total row" in line for line in marked)
    assert "\033[" not in piped

    class Terminal(io.StringIO):
        def isatty(self) -> bool:
            return True

    screen = Terminal()
    monkeypatch.delenv("NO_COLOR", raising=False)
    with contextlib.redirect_stdout(screen):
        assert main(["check", office]) == 0
    coloured = [line for line in screen.getvalue().splitlines() if WARNING_MARK in line]
    assert coloured
    assert all(line.startswith("\033[1;33m") for line in coloured)
    # NO_COLOR (no-color.org) and --no-color turn the colour off, the marker stays
    for env, flag in (("1", []), ("", ["--no-color"])):
        monkeypatch.setenv("NO_COLOR", env)
        screen = Terminal()
        with contextlib.redirect_stdout(screen):
            assert main(["check", office, *flag]) == 0
        assert "\033[" not in screen.getvalue()
        assert WARNING_MARK in screen.getvalue()
    # a long warning wraps under its marker
    long = warning_lines(["word " * 40])
    assert long[0].startswith(WARNING_MARK)
    assert all(len(line) <= WIDTH for line in long)
    assert long[1].startswith(" " * (len(WARNING_MARK) + 1))


# ------------------------------------------------------------------ progress line


class _Terminal(io.StringIO):
    def isatty(self) -> bool:
        return True


def test_progress_line_on_a_terminal_only_and_cleared() -> None:
    import time

    from balancer.cli.progress import progress, wanted

    screen = _Terminal()
    with progress("balancing office-208y120", stream=screen, delay_s=0.05, tick_s=0.02):
        time.sleep(0.3)
        assert "balancing office-208y120… 0 s" in screen.getvalue()
    shown = screen.getvalue()
    assert shown.endswith("\r")  # wiped: the next output starts on a clean line
    last = shown.rstrip("\r").rsplit("\r", 1)[-1]
    assert last.strip() == ""
    # a quick step shows nothing; a pipe and --json never get it
    quick = _Terminal()
    with progress("quick", stream=quick, delay_s=5.0):
        pass
    assert quick.getvalue() == ""
    piped = io.StringIO()
    with progress("piped", stream=piped, delay_s=0.0, tick_s=0.01):
        time.sleep(0.05)
    assert piped.getvalue() == ""
    assert wanted(_Terminal()) is True
    assert wanted(_Terminal(), json_output=True) is False
    assert wanted(io.StringIO()) is False


def test_balance_shows_progress_on_a_terminal_stderr_only(
    monkeypatch: pytest.MonkeyPatch, tmp_path: Path
) -> None:
    import sys

    import balancer.cli.progress as progress_module

    monkeypatch.setattr(progress_module, "DELAY_S", 0.0)
    monkeypatch.setattr(progress_module, "TICK_S", 0.01)
    sample = SAMPLES / "salon-208y120.csv"
    for json_flag, expect in (([], True), (["--json"], False)):
        err = _Terminal()
        monkeypatch.setattr(sys, "stderr", err)
        status, out = _run(["balance", str(sample), "-o", str(tmp_path / "s.xlsx"), *json_flag])
        assert status == 0
        assert ("balancing salon-208y120…" in err.getvalue()) is expect
        assert "balancing salon-208y120…" not in out  # never on standard output

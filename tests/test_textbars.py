"""Terminal bars carry their meaning in plain text; colour is only an extra."""

from __future__ import annotations

import io
import re

import pytest
from writer_demo import demo_result

from balancer.report.textbars import before_after_bars, phase_bars, use_color

ANSI = re.compile(r"\033\[[0-9;]*m")


def test_bars_are_ascii_and_scaled() -> None:
    loads = demo_result().before
    lines = phase_bars(loads, width=40)
    assert all(line.isascii() for line in lines)
    bars = {line[0]: line for line in lines if line[:1] in "ABC" and line[1:3] == "  "}
    assert set(bars) == {"A", "B", "C"}
    filled = {k: v[3:43].count("#") + v[3:43].count("|") for k, v in bars.items()}
    assert filled["B"] == 40  # the heaviest line fills the bar
    # Lengths follow the loads: 6,840 / 12,050 of 40 characters, rounded (the '|' average
    # mark may sit inside or beyond the filled part).
    assert abs(bars["A"][3:43].count("#") - round(6840 / 12050 * 40)) <= 1
    assert "heaviest" in bars["B"]
    assert "12,050 VA" in bars["B"]
    assert any("imbalance 49.8 %" in line for line in lines)
    assert any(line.startswith("N  neutral") for line in lines)


def test_colour_adds_codes_but_not_meaning() -> None:
    loads = demo_result().before
    plain = phase_bars(loads)
    coloured = phase_bars(loads, color=True)
    assert coloured != plain
    assert [ANSI.sub("", line) for line in coloured] == plain


def test_before_and_after_share_a_scale() -> None:
    result = demo_result()
    lines = before_after_bars(result.before, result.after, width=20)
    assert lines[0] == "Before"
    after_start = lines.index("After")
    after_b = next(x for x in lines[after_start:] if x.startswith("B  "))
    # After, B carries 8,750 of the 12,050 VA full scale: about 15 of 20 characters.
    assert after_b[3:23].count("#") + after_b[3:23].count("|") == pytest.approx(15, abs=1)


def test_use_color_only_on_a_terminal(monkeypatch: pytest.MonkeyPatch) -> None:
    class Tty(io.StringIO):
        def isatty(self) -> bool:
            return True

    monkeypatch.delenv("NO_COLOR", raising=False)
    assert use_color(Tty()) is True
    assert use_color(io.StringIO()) is False
    assert use_color(Tty(), no_color=True) is False
    monkeypatch.setenv("NO_COLOR", "1")
    assert use_color(Tty()) is False


def test_heaviest_line_is_the_one_carrying_most_current() -> None:
    from balancer.report.textbars import heaviest_lines

    # by VA line A leads, but line B carries more current (a lower power factor, common
    # practice: amperes, not VA, heat the conductors and trip the breaker)
    assert heaviest_lines({"A": 113.4, "B": 118.8, "C": 116.0}) == ("B",)
    assert heaviest_lines({"A": 120.0, "B": 120.02, "C": 80.0}) == ("A", "B")  # a tie
    assert heaviest_lines({"A": 50.0, "B": 50.0, "C": 50.0}) == ()  # balanced: none


def test_no_negative_zero_deviation() -> None:
    from dataclasses import replace

    loads = demo_result().after
    # a line a hair below the average prints as +0.0 %, never -0.0 %
    average = sum(loads.phase_va.values()) / 3
    nearly = replace(loads, phase_va={"A": average - 0.001, "B": average + 0.001, "C": average})
    text = "\n".join(phase_bars(nearly))
    assert "-0.0 %" not in text
    assert text.count("+0.0 %") == 3

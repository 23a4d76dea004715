"""Voltage systems from a user's file, and which connections each system allows."""

from __future__ import annotations

from pathlib import Path

import pytest

from balancer.domain.systems import (
    all_systems,
    builtin_systems,
    check_connection,
    circuit_wiring,
    find_system,
    get_system,
    load_systems,
)
from balancer.errors import ScheduleError

# 600Y/347 V is the CSA C235 / ANSI-style 3-phase 4-wire system of Canadian commercial
# buildings (common practice); 347 ≈ 600/√3.
CANADA_600Y_347 = """
[[system]]
designation = "600Y/347"
description = "3-phase 4-wire wye, 600 V line to line, 347 V line to neutral"
lines = ["A", "B", "C"]
line_to_line_v = 600.0
neutral = true
line_to_neutral_v = [347.0, 347.0, 347.0]
angle_deg = [0.0, -120.0, 120.0]
frequency_hz = 60.0
aliases = ["347/600"]

[[system]]
designation = "415Y/240"
description = "3-phase 4-wire wye at 50 Hz, 415 V line to line, 240 V line to neutral"
lines = ["A", "B", "C"]
line_to_line_v = 415.0
neutral = true
line_to_neutral_v = [240.0, 240.0, 240.0]
angle_deg = [0.0, -120.0, 120.0]
frequency_hz = 50.0
"""


def write(tmp_path: Path, text: str) -> Path:
    path = tmp_path / "systems.toml"
    path.write_text(text, "utf-8")
    return path


def test_user_file_adds_systems(tmp_path: Path) -> None:
    path = write(tmp_path, CANADA_600Y_347)
    mine = load_systems(path)
    assert set(mine) == {"600Y/347", "415Y/240"}
    canada = mine["600Y/347"]
    # 347 V to neutral at 120° spacing puts 347·√3 = 601 V between lines (C).
    assert abs(canada.voltage_phasor("A") - canada.voltage_phasor("B")) == pytest.approx(
        601.0, 1e-3
    )
    assert mine["415Y/240"].frequency_hz == 50.0
    merged = all_systems(path)
    assert set(builtin_systems()) < set(merged)
    assert find_system("347/600 V", mine) is canada
    assert check_connection(canada, ["C"], 1, 347.0) is None
    assert check_connection(canada, ["A", "B", "C"], 3, 575.0) is None  # 575 V motor rating


def test_user_file_with_inconsistent_angles_is_refused(tmp_path: Path) -> None:
    bad = CANADA_600Y_347.replace(
        "angle_deg = [0.0, -120.0, 120.0]", "angle_deg = [0.0, -90.0, 120.0]", 1
    )
    with pytest.raises(
        ScheduleError, match=r"system 1: .* between A and B, not the line_to_line_v"
    ):
        load_systems(write(tmp_path, bad))


@pytest.mark.parametrize(
    ("text", "message"),
    [
        ("[[system]\n", "not valid TOML"),
        ("title = 'x'\n", r"no \[\[system\]\] tables"),
        ('[[system]]\ndesignation = "X"\n', "incomplete or malformed"),
        (CANADA_600Y_347.replace('"415Y/240"', '"600Y/347"'), "already used by system 1"),
        (
            CANADA_600Y_347.replace('aliases = ["347/600"]', 'high_leg = "D"'),
            "not one of the lines",
        ),
        (CANADA_600Y_347.replace("frequency_hz = 50.0", "frequency_hz = 0.0"), "frequency_hz"),
    ],
)
def test_malformed_user_file_names_the_problem(tmp_path: Path, text: str, message: str) -> None:
    with pytest.raises(ScheduleError, match=message):
        load_systems(write(tmp_path, text))


def test_bundled_systems_are_consistent() -> None:
    # Nominal figures from ANSI C84.1 / IEC 60038 (F; docs/references.md): the loader checks that
    # line-to-neutral phasors reproduce the line-to-line voltage within 2 %.
    systems = builtin_systems()
    assert len(systems) == 8
    high_leg = systems["240/120"]
    # High leg ≈ 120·√3 = 208 V to neutral (C; NEC 408.3(E) puts it on B, F; docs/references.md).
    assert abs(high_leg.voltage_phasor("B")) == pytest.approx(120 * 3**0.5, rel=1e-5)
    for pair in (("A", "B"), ("B", "C"), ("C", "A")):
        assert abs(high_leg.voltage_phasor(pair[0]) - high_leg.voltage_phasor(pair[1])) == (
            pytest.approx(240.0, rel=1e-4)
        )


def test_high_leg_refuses_line_to_neutral_load_with_reason() -> None:
    system = get_system("240/120")
    message = check_connection(system, ["B"], 1, 120.0)
    assert message is not None
    assert "high leg" in message
    assert "110.15" in message
    assert "408.3(E)" in message
    assert "A or C" in message
    assert check_connection(system, ["B"], 1, None) == message
    assert check_connection(system, ["A"], 1, 120.0) is None
    assert check_connection(system, ["C"], 1, None) is None
    # Line-to-line loads may use the high leg.
    assert check_connection(system, ["A", "B"], 2, 240.0) is None
    assert check_connection(system, ["A", "B", "C"], 3, None) is None
    # The 120 V part of a 2-pole load sits on the first line: not on the high leg.
    assert "high leg" in (check_connection(system, ["B", "C"], 2, 240.0, neutral_va=500.0) or "")
    assert check_connection(system, ["C", "B"], 2, 240.0, neutral_va=500.0) is None
    # A 120 V multiwire circuit cannot take the high leg either; A with C is fine.
    assert "high leg" in (check_connection(system, ["A", "B"], 2, 120.0) or "")
    assert circuit_wiring(system, ["A", "C"], 120.0).kind == "multiwire"


@pytest.mark.parametrize("designation", ["480 delta", "240 delta"])
def test_three_wire_delta_has_no_line_to_neutral_loads(designation: str) -> None:
    system = get_system(designation)
    message = check_connection(system, ["A"], 1, None)
    assert message is not None
    assert "no neutral" in message
    assert check_connection(system, ["A", "B"], 2, None) is None
    assert "no neutral" in (check_connection(system, ["A", "B"], 2, None, neutral_va=100.0) or "")


@pytest.mark.parametrize(
    ("designation", "lines", "voltage_v", "kind", "element_v"),
    [
        ("208Y/120", ["A"], None, "line-to-neutral", 120.0),
        ("208Y/120", ["A", "B"], None, "line-to-line", 208.0),  # a 2-pole on 208Y/120 is 208 V
        ("208Y/120", ["A", "B"], 200.0, "line-to-line", 208.0),  # 200 V motor rating
        ("208Y/120", ["A", "B", "C"], 208.0, "line-to-line", 208.0),
        ("208Y/120", ["A", "B"], 120.0, "multiwire", 120.0),  # two 120 V circuits, one neutral
        ("480Y/277", ["A"], 277.0, "line-to-neutral", 277.0),
        ("480Y/277", ["A", "B", "C"], 460.0, "line-to-line", 480.0),
        ("480Y/277", ["A", "B", "C"], 277.0, "multiwire", 277.0),
        ("120/240", ["A", "B"], 240.0, "line-to-line", 240.0),
        ("120/240", ["B"], 115.0, "line-to-neutral", 120.0),
        ("400Y/230", ["C"], 230.0, "line-to-neutral", 230.0),
        ("480 delta", ["B", "C"], None, "line-to-line", 480.0),
    ],
)
def test_wiring_follows_poles_and_stated_voltage(
    designation: str, lines: list[str], voltage_v: float | None, kind: str, element_v: float
) -> None:
    wiring = circuit_wiring(get_system(designation), lines, voltage_v)
    assert wiring.kind == kind
    assert wiring.element_voltage_v == pytest.approx(element_v)


@pytest.mark.parametrize(
    ("designation", "lines", "voltage_v", "message"),
    [
        ("208Y/120", ["A", "B"], 240.0, "runs at 208 V"),
        ("208Y/120", ["A"], 208.0, "needs 2 poles"),
        ("208Y/120", ["A"], 277.0, "does not fit a 1-pole circuit on line A"),
        ("480Y/277", ["A", "B"], 120.0, "does not fit a 2-pole circuit"),
        ("120/240", ["A", "B", "A"], None, "1 to 2 poles"),
        ("208Y/120", ["A", "A"], None, "different lines"),
        ("208Y/120", ["A", "D"], None, "'D' is not one of"),
    ],
)
def test_voltage_that_does_not_fit_is_explained(
    designation: str, lines: list[str], voltage_v: float | None, message: str
) -> None:
    found = check_connection(get_system(designation), lines, len(lines), voltage_v)
    assert found is not None
    assert message in found


def test_pole_count_must_match_lines() -> None:
    found = check_connection(get_system("208Y/120"), ["A"], 2, None)
    assert found is not None
    assert "needs 2 line(s)" in found


def test_neutral_share_needs_a_load_between_lines() -> None:
    system = get_system("120/240")
    assert check_connection(system, ["A", "B"], 2, 240.0, neutral_va=600.0) is None
    assert "between lines" in (check_connection(system, ["A"], 1, 120.0, neutral_va=600.0) or "")
    assert "negative" in (check_connection(system, ["A", "B"], 2, None, neutral_va=-1.0) or "")

"""Typical class shapes: the bundled (invented) shapes per class, the series they make, a
user's shapes file and its located errors; and the LoadSeries type's own checks."""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest
from logger_files import logger_panel

from balancer.domain.panel import Circuit, Panel
from balancer.domain.systems import get_system
from balancer.errors import ScheduleError
from balancer.intervals import (
    LoadSeries,
    column_of,
    hours_of_day,
    load_shapes,
    read_logger,
    typical_series,
)
from balancer.intervals.typical import CLASS_NAMES

# One demo circuit per class, written as a schedule's Type column would write it.
TYPES = {
    "general_lighting": "lighting",
    "general_receptacles": "rcpt",
    "motors": "motor",
    "space_heating": "heating",
    "air_conditioning": "a/c",
    "kitchen": "kitchen",
    "water_heating": "wh",
    "ev": "evse",
    "spare": "spare",
    "other": "misc",
}
LOAD_VA = 2000.0
MONDAY, SATURDAY = 0, 5


def _panel(extra: tuple[Circuit, ...] = ()) -> Panel:
    circuits = tuple(
        Circuit(
            str(k), f"demo {name}", 1, 0.0 if name == "spare" else LOAD_VA, (k,), load_class=text
        )
        for k, (name, text) in enumerate(TYPES.items(), start=1)
    )
    return Panel("TY1", get_system("208Y/120"), 24, circuits + extra)


def _day(series: LoadSeries, circuit_id: str, day: int) -> np.ndarray:
    """The 24 hourly fractions of connected load of one circuit on day ``day`` (0 = Monday)."""
    column = series.va[:, column_of(series)[circuit_id]]
    return column[day * 24 : (day + 1) * 24] / LOAD_VA


def _by_class(series: LoadSeries) -> dict[str, tuple[np.ndarray, np.ndarray]]:
    ids = {name: str(k) for k, name in enumerate(TYPES, start=1)}
    return {name: (_day(series, i, MONDAY), _day(series, i, SATURDAY)) for name, i in ids.items()}


def test_the_week_starts_on_a_monday_and_runs_hourly() -> None:
    series = typical_series(_panel())
    assert series.kind == "typical"
    assert series.interval_min == 60
    assert series.intervals == 7 * 24
    assert str(series.starts[0]) == "2026-01-05T00:00"
    # 1970-01-01 was a Thursday (common practice): day number + 3 mod 7 is 0 on a Monday
    assert (int(series.starts[0].astype("datetime64[D]").astype(np.int64)) + 3) % 7 == 0
    assert set(np.diff(series.starts).astype(np.int64).tolist()) == {60}
    assert hours_of_day(series)[:26].tolist() == [*range(24), 0, 1]


def test_the_bundled_shapes_say_they_are_invented() -> None:
    series = typical_series(_panel())
    assert "invented" in series.source
    assert any("invented typical shapes, replace with your own" in n for n in series.notices)
    text = Path(__file__).resolve().parents[1].joinpath("balancer/data/load_shapes.toml")
    assert "INVENTED TYPICAL LOAD SHAPES" in text.read_text(encoding="utf-8")


def test_the_bundled_file_has_every_class() -> None:
    table = load_shapes()
    assert set(table.by_class) == set(CLASS_NAMES)
    for shape in table.by_class.values():
        assert shape.shape == (2, 24)
        assert ((shape >= 0) & (shape <= 1)).all()


def test_each_circuit_is_its_connected_load_times_its_class_shape() -> None:
    series = typical_series(_panel(), days=14)
    table = load_shapes()
    weekday = [d % 7 < 5 for d in range(14)]
    for name, circuit_id in ((n, str(k)) for k, n in enumerate(TYPES, start=1)):
        for day in range(14):
            expected = table.by_class[name][0 if weekday[day] else 1]
            load = 0.0 if name == "spare" else 1.0
            assert _day(series, circuit_id, day) == pytest.approx(expected * load)


# The bundled shapes are ours (invented); these are the features docs/format.md promises.
def test_lighting_is_high_in_working_hours_and_low_at_weekends() -> None:
    monday, saturday = _by_class(typical_series(_panel()))["general_lighting"]
    assert monday[8:18].min() >= 0.9
    assert monday[:6].max() <= 0.15
    assert saturday.max() <= 0.3


def test_receptacles_have_a_night_base_below_the_lighting_day() -> None:
    shapes = _by_class(typical_series(_panel()))
    receptacles, lighting = shapes["general_receptacles"][0], shapes["general_lighting"][0]
    assert receptacles[2] > lighting[2]
    assert receptacles[8:18].max() < lighting[8:18].max()


def test_air_conditioning_peaks_mid_afternoon_and_rises_with_the_day() -> None:
    monday, _ = _by_class(typical_series(_panel()))["air_conditioning"]
    assert 13 <= int(np.argmax(monday)) <= 16
    assert (np.diff(monday[6:16]) > 0).all()


def test_space_heating_peaks_early_in_the_morning() -> None:
    monday, _ = _by_class(typical_series(_panel()))["space_heating"]
    assert 5 <= int(np.argmax(monday)) <= 8


def test_kitchen_peaks_at_meals_and_water_heating_morning_and_evening() -> None:
    shapes = _by_class(typical_series(_panel()))
    kitchen, water = shapes["kitchen"][0], shapes["water_heating"][0]
    assert 11 <= int(np.argmax(kitchen)) <= 13
    assert kitchen[17:20].max() > kitchen[14:16].max()
    assert 6 <= int(np.argmax(water[:12])) <= 8
    assert 17 <= int(np.argmax(water[12:])) + 12 <= 19
    assert water[11:16].max() < min(water[:12].max(), water[12:].max())


def test_ev_charges_at_work_and_motors_run_in_working_hours() -> None:
    shapes = _by_class(typical_series(_panel()))
    assert 8 <= int(np.argmax(shapes["ev"][0])) <= 10
    motors = shapes["motors"][0]
    assert motors[8:17].min() > 2 * motors[:5].max()


def test_other_is_flat_ish_and_spare_zero() -> None:
    shapes = _by_class(typical_series(_panel()))
    other = np.concatenate(shapes["other"])
    assert other.max() / other.min() <= 1.5
    assert np.concatenate(shapes["spare"]).max() == 0.0


def test_a_circuit_without_a_known_type_takes_the_other_shape() -> None:
    odd = Circuit("30", "demo sign", 1, 1000.0, (13,), load_class="neon")
    series = typical_series(_panel((odd,)))
    other = load_shapes().by_class["other"][0]
    assert series.va[:24, column_of(series)["30"]] == pytest.approx(other * 1000.0)
    assert any("30 have no known Type" in n for n in series.notices)


def test_the_basis_load_is_what_is_shaped() -> None:
    measured = Circuit("30", "demo lights", 1, 1000.0, (13,), load_class="ltg", balance_va=600.0)
    series = typical_series(_panel((measured,)), days=1)
    lighting = load_shapes().by_class["general_lighting"][0]
    assert series.va[:, column_of(series)["30"]] == pytest.approx(lighting * 600.0)


@pytest.mark.parametrize("days", [0, 367, 2.5, True])
def test_days_out_of_range_are_refused(days: object) -> None:
    with pytest.raises(ScheduleError, match="days"):
        typical_series(_panel(), days=days)  # type: ignore[arg-type]


# --------------------------------------------------------------------- user shapes files

HOURS_HALF = ", ".join(["0.5"] * 24)


def _shapes(tmp_path: Path, text: str) -> Path:
    path = tmp_path / "shapes.toml"
    path.write_text(text, encoding="utf-8")
    return path


def _shape_problems(tmp_path: Path, text: str) -> list[str]:
    path = _shapes(tmp_path, text)
    with pytest.raises(ScheduleError) as caught:
        load_shapes(path)
    return [str(p).replace(str(path), "shapes.toml") for p in caught.value.problems]


def test_a_users_file_is_used_and_missing_classes_are_flat(tmp_path: Path) -> None:
    path = _shapes(
        tmp_path,
        f'title = "demo shapes"\n[classes.general_lighting]\nweekday = [{HOURS_HALF}]\n'
        f"weekend = [{HOURS_HALF}]\n",
    )
    series = typical_series(_panel(), shapes=path, days=2)
    shapes = {name: _day(series, str(k), MONDAY) for k, name in enumerate(TYPES, start=1)}
    assert shapes["general_lighting"] == pytest.approx(np.full(24, 0.5))
    assert shapes["motors"] == pytest.approx(np.ones(24))  # no shape: flat at 1
    assert "shapes.toml" in series.source
    assert "invented" not in series.source
    assert any("has no shape for class motors: circuits 3" in n for n in series.notices)


def test_shape_errors_are_located(tmp_path: Path) -> None:
    short = ", ".join(["0.1"] * 23)
    problems = _shape_problems(
        tmp_path,
        f"[classes.ev]\nweekday = [{short}]\nweekend = [{HOURS_HALF}]\n"
        f"[classes.motors]\nweekday = [1.2, {', '.join(['0.5'] * 23)}]\n"
        f"weekend = [{HOURS_HALF}]\n"
        f"[classes.kitchen]\nweekday = [{HOURS_HALF}]\n",
    )
    assert problems == [
        "shapes.toml: [classes.ev] weekday: 23 values, need 24",
        "shapes.toml: [classes.motors] weekday: hour 0: 1.2 is not a fraction from 0 to 1",
        "shapes.toml: [classes.kitchen] weekend: missing: give 24 values, hours 0 to 23",
    ]


def test_unknown_names_get_a_did_you_mean(tmp_path: Path) -> None:
    problems = _shape_problems(
        tmp_path,
        f"colour = 1\n[classes.lighting]\nweekday = [{HOURS_HALF}]\nweekend = [{HOURS_HALF}]\n"
        f"[classes.evv]\nweekday = [{HOURS_HALF}]\nweekend = [{HOURS_HALF}]\n"
        f"[classes.other]\nweekdays = [{HOURS_HALF}]\nweekday = [{HOURS_HALF}]\n"
        f"weekend = [{HOURS_HALF}]\n",
    )
    assert problems == [
        "shapes.toml: unknown key 'colour' (known: title, classes)",
        "shapes.toml: [classes.lighting]: 'lighting' is not a load class; did you mean "
        "general_lighting?",
        "shapes.toml: [classes.evv]: 'evv' is not a load class; did you mean ev?",
        "shapes.toml: [classes.other]: unknown key 'weekdays'; did you mean weekday?",
    ]


def test_values_that_are_not_numbers_are_refused(tmp_path: Path) -> None:
    hours = ", ".join(["0.5"] * 22)
    problems = _shape_problems(
        tmp_path,
        f'[classes.ev]\nweekday = [true, "x", {hours}]\nweekend = "flat"\n',
    )
    assert problems == [
        "shapes.toml: [classes.ev] weekday: hour 0: True is not a fraction from 0 to 1",
        "shapes.toml: [classes.ev] weekday: hour 1: 'x' is not a fraction from 0 to 1",
        "shapes.toml: [classes.ev] weekend: should be a list of 24 values, not 'flat'",
    ]


def test_a_file_with_no_classes_or_bad_toml_is_refused(tmp_path: Path) -> None:
    assert _shape_problems(tmp_path, 'title = "x"\n') == [
        "shapes.toml: no [classes.<name>] tables found"
    ]
    assert "not valid TOML" in _shape_problems(tmp_path, "[classes\n")[0]


# ---------------------------------------------------------------------- the series type


def _tiny(**changes: object) -> LoadSeries:
    fields: dict[str, object] = {
        "source": "demo",
        "kind": "measured",
        "starts": np.array(["2026-01-05T00:00", "2026-01-05T00:15"], dtype="datetime64[m]"),
        "interval_min": 15,
        "circuit_ids": ("1", "2"),
        "va": np.array([[1.0, 2.0], [3.0, 4.0]]),
    }
    fields.update(changes)
    return LoadSeries(**fields)  # type: ignore[arg-type]


def test_column_of_maps_ids_to_columns() -> None:
    series = _tiny()
    assert column_of(series) == {"1": 0, "2": 1}
    assert series.va[:, column_of(series)["2"]].tolist() == [2.0, 4.0]


def test_the_arrays_are_read_only() -> None:
    series = _tiny()
    with pytest.raises(ValueError, match="read-only"):
        series.va[0, 0] = 5.0


@pytest.mark.parametrize(
    ("changes", "message"),
    [
        ({"va": np.array([[1.0, -2.0], [3.0, 4.0]])}, "not negative"),
        ({"va": np.array([[1.0, np.nan], [3.0, 4.0]])}, "finite"),
        ({"va": np.ones((2, 3))}, "shape"),
        ({"starts": np.array(["2026-01-05T00:15", "2026-01-05T00:00"], "datetime64[m]")},
         "increasing"),
        ({"starts": np.array(["2026-01-05T00:00", "2026-01-05T00:20"], "datetime64[m]")},
         "grid"),
        ({"interval_min": 90}, "1 to 60"),
        ({"circuit_ids": ("1", "1")}, "repeat"),
        ({"line_va": np.ones((3, 3))}, "line_va"),
    ],
)  # fmt: skip
def test_the_series_checks_itself(changes: dict[str, object], message: str) -> None:
    with pytest.raises(ValueError, match=message):
        _tiny(**changes)


# ------------------------------------------------------------------- the format reference

FORMAT_DOC = Path(__file__).resolve().parents[1] / "docs" / "format.md"


def _doc_block(section: str, fence: str) -> str:
    text = FORMAT_DOC.read_text(encoding="utf-8")
    after = text[text.index(section) :]
    start = after.index(fence) + len(fence)
    return after[start : after.index("```", start)].lstrip("\n")


def test_the_documented_logger_example_reads(tmp_path: Path) -> None:
    path = tmp_path / "example.csv"
    path.write_text(_doc_block("## Logger files", "```\n"), encoding="utf-8")
    series = read_logger(path, logger_panel())
    assert series.intervals == 3
    assert series.va[0, column_of(series)["1"]] == pytest.approx(8.2 * 120.0)
    assert series.va[0, column_of(series)["11"]] == pytest.approx(420.0)


def test_the_documented_shapes_example_loads(tmp_path: Path) -> None:
    path = _shapes(tmp_path, _doc_block("## Typical load shapes", "```toml\n"))
    assert load_shapes(path).by_class["general_lighting"][0][8] == 1.0

"""Logger files, the time side: the interval, duplicates, gaps, UTC offsets, time zones and
daylight-saving changes.

Daylight-saving dates used (US rule, common practice: second Sunday of March and first Sunday
of November since the Energy Policy Act of 2005; docs/references.md): in 2026 clocks in
America/Chicago go from 02:00 CST to 03:00 CDT on 2026-03-08 and from 02:00 CDT back to
01:00 CST on 2026-11-01.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest
from logger_files import logger_panel, ramp, stamps, write_logger

from balancer.errors import ScheduleError
from balancer.intervals import LoadSeries, read_logger

HEADER = ["Time", "1 (A)"]
VA_PER_A = 120.0  # circuit 1: 1 pole on line A of 208Y/120


def _file(tmp_path: Path, times: list[str], amps: list[float] | np.ndarray) -> Path:
    return write_logger(tmp_path / "log.csv", HEADER, times, [(a,) for a in amps])


def _read(
    tmp_path: Path, times: list[str], amps: list[float] | np.ndarray, tz: str | None = None
) -> LoadSeries:
    return read_logger(_file(tmp_path, times, amps), logger_panel(), tz=tz)


def _refused(
    tmp_path: Path, times: list[str], amps: list[float] | np.ndarray, tz: str | None = None
) -> str:
    with pytest.raises(ScheduleError) as caught:
        read_logger(_file(tmp_path, times, amps), logger_panel(), tz=tz)
    return str(caught.value)


def _steps(series: LoadSeries) -> set[int]:
    return set(np.diff(series.starts).astype(np.int64).tolist())


def _notice(series: LoadSeries, word: str) -> str:
    found = [n for n in series.notices if word in n]
    assert len(found) == 1, series.notices
    return found[0]


# ---------------------------------------------------------------------------- interval


@pytest.mark.parametrize("step", [1, 5, 15, 60])
def test_the_interval_is_inferred(tmp_path: Path, step: int) -> None:
    series = _read(tmp_path, stamps("2026-03-02", 50, step), ramp(50))
    assert series.interval_min == step
    assert _steps(series) == {step}
    assert series.va[:, 0] == pytest.approx(ramp(50) * VA_PER_A)
    assert str(series.starts[0]) == "2026-03-02T00:00"


def test_the_most_common_step_wins(tmp_path: Path) -> None:
    times = stamps("2026-03-02", 40, 15)
    del times[10:12]  # one gap of 2 intervals: the steps are mostly 15 min
    assert _read(tmp_path, times, ramp(38)).interval_min == 15


@pytest.mark.parametrize("step", [7, 90])
def test_an_interval_that_does_not_divide_an_hour_is_refused(tmp_path: Path, step: int) -> None:
    text = _refused(tmp_path, stamps("2026-03-02", 30, step), ramp(30))
    assert f"the readings are mostly {step} minute(s) apart" in text


def test_an_irregular_finer_record_is_refused_naming_the_row(tmp_path: Path) -> None:
    times = stamps("2026-03-02", 30, 15)
    times[6] = "2026-03-02 01:22"  # 7 min after 01:15
    text = _refused(tmp_path, times, ramp(30))
    assert 'file row 8, column "Time": 2026-03-02 01:22 is 7 minute(s) after the reading' in text
    assert "resample it to a fixed interval" in text


def test_one_reading_cannot_tell_the_interval(tmp_path: Path) -> None:
    assert "at least two readings" in _refused(tmp_path, ["2026-03-02 00:00"], [1])


def test_readings_out_of_order_are_sorted_with_a_notice(tmp_path: Path) -> None:
    times = stamps("2026-03-02", 6)
    series = _read(tmp_path, [times[i] for i in (0, 2, 1, 3, 5, 4)], [0, 2, 1, 3, 5, 4])
    assert series.va[:, 0] == pytest.approx(np.arange(6) * VA_PER_A)
    assert "not in time order" in _notice(series, "sorted")


def test_seconds_are_rounded_to_the_minute_with_a_notice(tmp_path: Path) -> None:
    times = [t + ":00" for t in stamps("2026-03-02", 6)]
    times[3] = "2026-03-02 00:44:59"
    series = _read(tmp_path, times, ramp(6))
    assert str(series.starts[3]) == "2026-03-02T00:45"
    assert "1 timestamp(s) not on a whole minute" in _notice(series, "rounded")


# -------------------------------------------------------------------------- duplicates


def test_identical_duplicates_are_dropped_and_named_by_file_row(tmp_path: Path) -> None:
    times = stamps("2026-03-02", 200)
    amps = list(ramp(200))
    times.insert(4, times[3])  # 00:45 twice, same reading: file rows 5 and 6
    amps.insert(4, amps[3])
    series = _read(tmp_path, times, amps)
    assert series.intervals == 200
    assert series.va[:, 0] == pytest.approx(ramp(200) * VA_PER_A)
    notice = _notice(series, "duplicate timestamps")
    assert "2026-03-02 00:45 at file rows 5, 6 (identical, one kept)" in notice


def test_differing_duplicates_are_averaged_and_said(tmp_path: Path) -> None:
    times = stamps("2026-03-02", 200)
    amps = [10.0] * 200
    times.insert(8, times[7])  # 01:45 read as 10 A and 14 A: file rows 9 and 10
    amps.insert(8, 14.0)
    series = _read(tmp_path, times, amps)
    assert series.va[7, 0] == pytest.approx(12.0 * VA_PER_A)  # (10 + 14) / 2 A
    notice = _notice(series, "duplicate timestamps")
    assert "2026-03-02 01:45 at file rows 9, 10 (different readings, averaged)" in notice


def test_more_than_one_percent_duplicates_is_refused(tmp_path: Path) -> None:
    times = stamps("2026-03-02", 100)
    times = times + times[:2]  # 2 of 102 readings repeat: more than 1 %
    text = _refused(tmp_path, times, [1.0] * 102)
    assert "2 of 102 readings repeat a timestamp (more than 1%)" in text


# -------------------------------------------------------------------------------- gaps


def test_a_short_gap_is_filled_by_linear_interpolation(tmp_path: Path) -> None:
    times = stamps("2026-03-02", 100)
    amps = list(ramp(100))
    del times[10:12], amps[10:12]  # 02:30 and 02:45 missing: rows after file row 11
    series = _read(tmp_path, times, amps)
    assert series.intervals == 100
    assert _steps(series) == {15}
    assert series.va[:, 0] == pytest.approx(ramp(100) * VA_PER_A)  # a ramp interpolates exactly
    notice = _notice(series, "missing in all")
    assert "after file row 11 (2026-03-02 02:15): 2 interval(s) missing, filled by linear" in notice


def test_a_long_gap_is_left_out(tmp_path: Path) -> None:
    times = stamps("2026-03-02", 100)
    amps = list(ramp(100))
    del times[20:26], amps[20:26]  # six intervals missing
    series = _read(tmp_path, times, amps)
    assert series.intervals == 94
    assert _steps(series) == {15, 7 * 15}
    assert str(series.starts[19]) == "2026-03-02T04:45"
    assert str(series.starts[20]) == "2026-03-02T06:30"
    notice = _notice(series, "missing in all")
    assert "after file row 21 (2026-03-02 04:45): 6 interval(s) missing, left out" in notice
    assert "the series has holes there" in notice


def test_more_than_ten_percent_missing_is_refused(tmp_path: Path) -> None:
    times = stamps("2026-03-02", 100)
    del times[40:51]  # 11 of the 100 intervals
    text = _refused(tmp_path, times, [1.0] * 89)
    assert "11 of the 100 15-minute intervals" in text
    assert "more than 10%" in text


def test_ten_percent_missing_is_still_read(tmp_path: Path) -> None:
    times = stamps("2026-03-02", 100)
    del times[40:50]
    assert _read(tmp_path, times, [1.0] * 90).intervals == 90


# ------------------------------------------------------------------ offsets, time zones


def test_offsets_order_in_utc_and_show_the_first_readings_clock(tmp_path: Path) -> None:
    # the spring change as a logger with offsets writes it: 01:45 CST is followed by 03:00 CDT
    times = [
        "2026-03-08T01:30:00-06:00",
        "2026-03-08T01:45:00-06:00",
        "2026-03-08T03:00:00-05:00",
        "2026-03-08T03:15:00-05:00",
    ]
    series = _read(tmp_path, times, [1, 2, 3, 4])
    assert [str(s) for s in series.starts] == [
        "2026-03-08T01:30",
        "2026-03-08T01:45",
        "2026-03-08T02:00",
        "2026-03-08T02:15",
    ]
    assert not any("missing in all" in n for n in series.notices)
    assert "changes from -06:00 to -05:00 at file row 4" in _notice(series, "offset changes")


def test_z_stamps_are_utc(tmp_path: Path) -> None:
    times = ["2026-01-05T06:00:00Z", "2026-01-05T06:15:00Z", "2026-01-05T06:30:00Z"]
    series = _read(tmp_path, times, [1, 2, 3])
    assert str(series.starts[0]) == "2026-01-05T06:00"
    assert "UTC+00:00" in _notice(series, "UTC offsets")


def test_offsets_put_readings_of_two_zones_in_one_order(tmp_path: Path) -> None:
    times = ["2026-01-05T12:00:00+01:00", "2026-01-05T06:15:00-05:00", "2026-01-05T11:30Z"]
    series = _read(tmp_path, times, [1, 2, 3])
    assert [str(s) for s in series.starts] == [
        "2026-01-05T12:00",
        "2026-01-05T12:15",
        "2026-01-05T12:30",
    ]  # 11:00, 11:15, 11:30 UTC on the +01:00 clock of the first row
    assert series.va[:, 0] == pytest.approx([120.0, 240.0, 360.0])


def test_offsets_on_some_stamps_only_are_refused(tmp_path: Path) -> None:
    times = ["2026-01-05T06:00:00-06:00", "2026-01-05 06:15", "2026-01-05T06:30:00-06:00"]
    text = _refused(tmp_path, times, [1, 2, 3])
    assert 'file row 3, column "Time"' in text
    assert "some timestamps give a UTC offset and others do not" in text


def _spring_times() -> list[str]:
    """Chicago wall clock, 15 min, 2026-03-07 20:00 to 2026-03-08 06:00: 02:00-02:45 absent."""
    return [t for t in stamps("2026-03-07 20:00", 41) if not t.startswith("2026-03-08 02:")]


def test_spring_forward_with_a_time_zone_is_no_gap(tmp_path: Path) -> None:
    times = _spring_times()
    series = _read(tmp_path, times, ramp(len(times)), tz="America/Chicago")
    assert series.intervals == len(times) == 37
    assert _steps(series) == {15}
    assert not any("missing in all" in n for n in series.notices)
    # after the change the readings are shown on the CST clock of the first reading
    assert str(series.starts[-1]) == "2026-03-08T05:00"
    assert "UTC-06:00" in _notice(series, "America/Chicago")


def test_spring_forward_without_a_time_zone_is_a_gap_with_a_hint(tmp_path: Path) -> None:
    times = _spring_times()
    series = _read(tmp_path, times, ramp(len(times)))
    notice = _notice(series, "missing in all")
    assert "4 interval(s) missing, filled" in notice
    assert "daylight-saving time starts" in notice


def test_a_time_that_does_not_exist_in_the_zone_is_refused(tmp_path: Path) -> None:
    times = stamps("2026-03-08 01:00", 8)  # runs through 02:00-02:45, skipped in Chicago
    text = _refused(tmp_path, times, ramp(8), tz="America/Chicago")
    assert 'file row 6, column "Time": 2026-03-08 02:00 does not exist in America/Chicago' in text


def _fall_times() -> list[str]:
    """Chicago wall clock, 15 min, from 2026-10-28 to 2026-11-03 with 01:00-01:45 on
    2026-11-01 written twice (first CDT, then CST)."""
    times = stamps("2026-10-28", 6 * 96 + 4)
    at = times.index("2026-11-01 02:00")
    return times[:at] + times[at - 4 : at] + times[at:]


def test_fall_back_with_a_time_zone_is_no_duplicate(tmp_path: Path) -> None:
    times = _fall_times()
    series = _read(tmp_path, times, ramp(len(times)), tz="America/Chicago")
    assert series.intervals == len(times)
    assert _steps(series) == {15}
    assert series.va[:, 0] == pytest.approx(ramp(len(times)) * VA_PER_A)  # each kept, in order
    assert not any("duplicate timestamps" in n for n in series.notices)
    # shown on the CDT clock of the first reading: the last, 2026-11-03 00:45 CST, is 01:45
    assert str(series.starts[-1]) == "2026-11-03T01:45"
    assert "neither gaps nor duplicates" in _notice(series, "America/Chicago")


def test_fall_back_without_a_time_zone_is_duplicates_with_a_hint(tmp_path: Path) -> None:
    times = _fall_times()
    series = _read(tmp_path, times, ramp(len(times)))
    notice = _notice(series, "duplicate timestamps")
    assert "2026-11-01 01:00 at file rows" in notice
    assert "different readings, averaged" in notice
    assert "give the logger's time zone" in notice
    assert series.intervals == len(times) - 4


def test_an_unknown_time_zone_gets_a_did_you_mean(tmp_path: Path) -> None:
    text = _refused(tmp_path, stamps("2026-03-02", 4), ramp(4), tz="America/Chicgo")
    assert "'America/Chicgo' is not a known time zone; did you mean America/Chicago?" in text


def test_a_misspelt_zone_is_refused_even_where_offsets_make_it_unneeded(tmp_path: Path) -> None:
    times = ["2026-01-05T06:00:00Z", "2026-01-05T06:15:00Z"]
    assert "did you mean America/Chicago?" in _refused(tmp_path, times, [1, 2], tz="America/Chicgo")


def test_a_weekday_hour_gap_gets_no_daylight_saving_hint(tmp_path: Path) -> None:
    times = [t for t in stamps("2026-03-04 00:00", 60) if not t.startswith("2026-03-04 02:")]
    notice = _notice(_read(tmp_path, times, ramp(56)), "missing in all")
    assert "4 interval(s) missing, filled" in notice
    assert "daylight-saving" not in notice


def test_a_fixed_zone_keeps_standard_time_all_year(tmp_path: Path) -> None:
    times = stamps("2026-03-08 01:00", 12)  # 02:xx exists on a clock with no daylight time
    series = _read(tmp_path, times, ramp(12), tz="Etc/GMT+6")
    assert series.intervals == 12
    assert _steps(series) == {15}

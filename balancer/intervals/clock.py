"""The time side of a logger file: timestamps to one clock, then duplicates, the interval and
gaps, all on whole arrays.

Two clocks are kept apart. The *ordering* clock is what sorting, duplicates and gaps are judged
on: UTC when the stamps carry offsets (``-05:00``, ``Z``) or a time zone is given, the stamps as
written otherwise. The *shown* clock is what ``LoadSeries.starts`` holds: the ordering clock
moved by one fixed offset, that of the first reading. So a file that runs across a change of
daylight-saving time has neither a missing nor a repeated hour in ``starts``; readings after the
change are shown on the first reading's clock (an hour off the wall clock for that season).
"""

from __future__ import annotations

import re
import zoneinfo
from dataclasses import dataclass
from difflib import get_close_matches
from functools import cache

import numpy as np
import pandas as pd

from balancer.errors import Problem, ScheduleError

MAX_FILLED_INTERVALS = 4  # a gap this short is filled by linear interpolation
MAX_DUPLICATE_SHARE = 0.01  # more duplicate readings than this refuses the file
MAX_MISSING_SHARE = 0.10  # more of the horizon missing than this refuses the file
SUNDAY = 6
LISTED = 10  # duplicates, gaps or bad stamps named one by one in a message

# An offset after a time of day: Z, +05:30, -0500, -05 (a bare -08 after a date is the day).
_OFFSET = re.compile(r"\d\d:\d\d(?::\d\d(?:\.\d+)?)?\s*(?:Z|[+-]\d\d(?::?\d\d)?)$", re.IGNORECASE)
_ISO_HINT = "write it as ISO 8601, e.g. 2026-03-08 14:15 or 2026-03-08T14:15:00-06:00"


@dataclass(frozen=True, slots=True)
class Stamps:
    """Timestamps read: minutes on the ordering clock, the offset to the shown clock, and
    whether the ordering clock is the file's own wall clock (no offsets, no time zone)."""

    order_min: np.ndarray  # int64
    shown_offset_min: int
    naive: bool
    notices: tuple[str, ...] = ()


@dataclass(frozen=True, slots=True)
class Timeline:
    """Readings on a regular grid: ``starts`` (datetime64[m], shown clock), one row of
    ``values`` per start."""

    starts: np.ndarray
    values: np.ndarray
    interval_min: int
    notices: tuple[str, ...]


def parse_stamps(texts: pd.Series, rows: np.ndarray, column: str, tz: str | None) -> Stamps:
    """Minutes of each timestamp on the ordering clock; every unreadable stamp in one error.

    ``texts`` are the cells as written, ``rows`` their file rows (header = row 1).
    """
    if tz is not None:
        _zone(tz)  # a misspelt zone is an error even where the stamps do not need it
    texts = texts.str.strip()
    with_offset = texts.str.contains(_OFFSET, regex=True).to_numpy(dtype=bool)
    if with_offset.any() and not with_offset.all():
        odd = np.flatnonzero(~with_offset if with_offset.sum() > len(texts) / 2 else with_offset)
        raise ScheduleError(
            [
                Problem(
                    _where(rows[i], column),
                    f"{texts.iloc[i]!r}: some timestamps give a UTC offset and others do not; "
                    "give it on all or none",
                )
                for i in odd[:LISTED]
            ]
        )
    parsed = pd.to_datetime(texts, format="ISO8601", errors="coerce", utc=bool(with_offset.any()))
    bad = np.flatnonzero(parsed.isna().to_numpy())
    if bad.size:
        raise ScheduleError(_bad_stamps(texts, rows, bad, column))
    if with_offset.any():
        return _from_offsets(parsed, texts, rows, column, tz)
    if tz is not None:
        return _from_zone(parsed, rows, column, tz)
    minutes, notices = _whole_minutes(_seconds(parsed))
    return Stamps(minutes, 0, naive=True, notices=notices)


def arrange(stamps: Stamps, rows: np.ndarray, values: np.ndarray, column: str) -> Timeline:
    """Sort, merge duplicates, infer the interval and fill or leave out gaps."""
    notices = list(stamps.notices)
    order = np.argsort(stamps.order_min, kind="stable")
    if bool(np.any(np.diff(order) != 1)):
        notices.append("readings were not in time order; sorted by time")
    times, rows, values = stamps.order_min[order], rows[order], values[order]
    shown = stamps.shown_offset_min
    times, rows, values = _merge_duplicates(times, rows, values, shown, stamps.naive, notices)
    if times.size < 2:
        raise ScheduleError(
            Problem(f'column "{column}"', "at least two readings are needed to tell the interval")
        )
    step = _interval(times, rows, column)
    times, values = _gaps(times, rows, values, step, shown, stamps.naive, notices)
    starts = (times + shown).astype("datetime64[m]")
    return Timeline(starts, values, step, tuple(notices))


# ---------------------------------------------------------------------------------- clocks


def _from_offsets(
    parsed: pd.Series, texts: pd.Series, rows: np.ndarray, column: str, tz: str | None
) -> Stamps:
    minutes, notices = _whole_minutes(_seconds(parsed.dt.tz_localize(None)))
    # the offset each stamp gives, in minutes: its own wall clock minus UTC
    wall = texts.str.replace(r"\s*(?:Z|[+-]\d\d(?::?\d\d)?)$", "", regex=True, flags=re.I)
    own = _whole_minutes(_seconds(pd.to_datetime(wall, format="ISO8601")))[0] - minutes
    offset = int(own[0])
    changes = np.flatnonzero(np.diff(own) != 0)
    notes = [
        f"timestamps carry UTC offsets: ordered in UTC, shown on the clock of the first reading "
        f"(UTC{_offset_text(offset)})"
    ]
    if changes.size:
        at = changes[0] + 1
        notes.append(
            f"the UTC offset changes from {_offset_text(int(own[at - 1]))} to "
            f"{_offset_text(int(own[at]))} at {_where(rows[at], column)} "
            f"({changes.size} change(s)): no hour is missing or repeated on the shown clock"
        )
    if tz is not None:
        notes.append(f"time zone {tz} not needed: the timestamps give their own offsets")
    return Stamps(minutes, offset, naive=False, notices=(*notices, *notes))


def _from_zone(parsed: pd.Series, rows: np.ndarray, column: str, tz: str) -> Stamps:
    zone = _zone(tz)
    wall = pd.DatetimeIndex(parsed)
    count = len(wall)
    early = wall.tz_localize(zone, ambiguous=np.ones(count, bool), nonexistent="NaT")
    late = wall.tz_localize(zone, ambiguous=np.zeros(count, bool), nonexistent="NaT")
    missing = np.flatnonzero(early.isna())
    if missing.size:
        raise ScheduleError(
            [
                Problem(
                    _where(rows[i], column),
                    f"{_text(wall[i])} does not exist in {tz} (clocks go forward then); if the "
                    "logger keeps standard time all year, give a fixed zone such as Etc/GMT+6 "
                    "(6 h behind UTC) or none",
                )
                for i in missing[:LISTED]
            ]
        )
    # A wall time of the repeated hour: its first reading is the daylight-time one.
    ambiguous = np.asarray(early != late, dtype=bool)
    first_time = ~pd.Series(wall).duplicated().to_numpy()
    chosen = wall.tz_localize(zone, ambiguous=~ambiguous | first_time, nonexistent="NaT")
    utc = chosen.tz_convert("UTC").tz_localize(None)
    minutes, notices = _whole_minutes(_seconds(utc))
    own = _whole_minutes(_seconds(wall))[0] - minutes
    note = (
        f"time zone {tz}: ordered in UTC, shown on the clock of the first reading "
        f"(UTC{_offset_text(int(own[0]))})"
    )
    if bool(np.any(np.diff(own))):
        note += (
            "; the daylight-saving change(s) in the file are neither gaps nor duplicates, and "
            "readings after a change are shown on that first clock"
        )
    return Stamps(minutes, int(own[0]), naive=False, notices=(*notices, note))


def _seconds(stamps: pd.Series | pd.DatetimeIndex) -> np.ndarray:
    """Naive timestamps as int64 seconds since 1970-01-01 on their own clock."""
    return np.asarray(stamps.to_numpy()).astype("datetime64[s]").astype(np.int64)


@cache
def _zone_names() -> tuple[str, ...]:
    return tuple(sorted(zoneinfo.available_timezones()))


def _zone(tz: str) -> zoneinfo.ZoneInfo:
    try:
        return zoneinfo.ZoneInfo(tz)
    except (zoneinfo.ZoneInfoNotFoundError, ValueError) as exc:
        near = get_close_matches(tz, _zone_names(), n=1)
        hint = f"; did you mean {near[0]}?" if near else " (an IANA name such as America/Chicago)"
        raise ScheduleError(Problem("time zone", f"{tz!r} is not a known time zone{hint}")) from exc


def _whole_minutes(seconds: np.ndarray) -> tuple[np.ndarray, tuple[str, ...]]:
    """Seconds → minutes, rounding stamps such as 10:14:59 to the nearest minute (said)."""
    odd = int(np.count_nonzero(seconds % 60))
    minutes = (seconds + 30) // 60
    if not odd:
        return minutes, ()
    return minutes, (f"{odd} timestamp(s) not on a whole minute were rounded to the nearest one",)


# ------------------------------------------------------------------------- duplicates, gaps


def _merge_duplicates(
    times: np.ndarray,
    rows: np.ndarray,
    values: np.ndarray,
    shown: int,
    naive: bool,
    notices: list[str],
) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    unique, first, inverse, counts = np.unique(
        times, return_index=True, return_inverse=True, return_counts=True
    )
    extra = times.size - unique.size
    if not extra:
        return times, rows, values
    groups = np.flatnonzero(counts > 1)
    listing = _duplicate_listing(times, rows, values, unique, inverse, groups, shown)
    hint = _repeated_hour_hint(unique[groups], shown) if naive else ""
    if extra > MAX_DUPLICATE_SHARE * times.size:
        raise ScheduleError(
            Problem(
                "timestamps",
                f"{extra:,} of {times.size:,} readings repeat a timestamp (more than "
                f"{MAX_DUPLICATE_SHARE:.0%}): {listing}{hint}",
            )
        )
    sums = np.zeros((unique.size, values.shape[1]))
    np.add.at(sums, inverse, values)
    notices.append(
        f"duplicate timestamps ({extra} extra reading(s)): {listing}; identical repeats are "
        f"dropped, differing ones averaged{hint}"
    )
    return unique, rows[first], sums / counts[:, None]


def _duplicate_listing(
    times: np.ndarray,
    rows: np.ndarray,
    values: np.ndarray,
    unique: np.ndarray,
    inverse: np.ndarray,
    groups: np.ndarray,
    shown: int,
) -> str:
    high = np.full((unique.size, values.shape[1]), -np.inf)
    low = np.full((unique.size, values.shape[1]), np.inf)
    np.maximum.at(high, inverse, values)
    np.minimum.at(low, inverse, values)
    identical = np.all(high == low, axis=1) if values.shape[1] else np.ones(unique.size, bool)
    parts = []
    for g in groups[:LISTED]:
        at = ", ".join(str(r) for r in rows[inverse == g])
        how = "identical, one kept" if identical[g] else "different readings, averaged"
        parts.append(f"{_clock(unique[g] + shown)} at file rows {at} ({how})")
    more = f"; and {groups.size - LISTED} more" if groups.size > LISTED else ""
    return "; ".join(parts) + more


def _repeated_hour_hint(repeated: np.ndarray, shown: int) -> str:
    """A hint when every repeated stamp falls in one clock hour of a Sunday: the hour clocks
    repeat when daylight-saving time ends (on a Sunday in North America and Europe: common
    practice)."""
    hours = np.unique((repeated + shown) // 60)
    if hours.size != 1 or _weekday(int(hours[0]) * 60) != SUNDAY:
        return ""
    start = _clock(int(hours[0]) * 60)
    return (
        f". All fall within the hour from {start}, as when daylight-saving time ends and clocks "
        "repeat an hour: give the logger's time zone (an IANA name such as America/Chicago) so "
        "the two hours are told apart"
    )


def _interval(times: np.ndarray, rows: np.ndarray, column: str) -> int:
    steps = np.diff(times)
    values, counts = np.unique(steps, return_counts=True)
    step = int(values[np.argmax(counts)])
    if not 1 <= step <= 60 or 60 % step:
        raise ScheduleError(
            Problem(
                column,
                f"the readings are mostly {step} minute(s) apart; balancer takes intervals of "
                "1 to 60 minutes that divide an hour (1, 2, 3, 4, 5, 6, 10, 12, 15, 20, 30, 60)",
            )
        )
    off_grid = np.flatnonzero(steps % step)
    if off_grid.size:
        raise ScheduleError(
            [
                Problem(
                    _where(rows[i + 1], column),
                    f"{_clock(times[i + 1])} is {steps[i]} minute(s) after the reading before; "
                    f"the readings are on a {step}-minute interval, so this is off its grid "
                    "(an irregular or finer record: resample it to a fixed interval first)",
                )
                for i in off_grid[:LISTED]
            ]
            + _more(off_grid.size)
        )
    return step


# long: one pass over the gaps: count, refuse, fill the short ones, say what was done
def _gaps(
    times: np.ndarray,
    rows: np.ndarray,
    values: np.ndarray,
    step: int,
    shown: int,
    naive: bool,
    notices: list[str],
) -> tuple[np.ndarray, np.ndarray]:
    missing = np.diff(times) // step - 1
    horizon = int((times[-1] - times[0]) // step + 1)
    total = int(missing.sum())
    notices.append(
        f"{step}-minute readings from {_clock(times[0] + shown)} to "
        f"{_clock(times[-1] + shown)}: {horizon:,} intervals, {times.size:,} with a reading"
    )
    if total > MAX_MISSING_SHARE * horizon:
        raise ScheduleError(
            Problem(
                "timestamps",
                f"{total:,} of the {horizon:,} {step}-minute intervals from "
                f"{_clock(times[0] + shown)} to {_clock(times[-1] + shown)} have no reading "
                f"(more than {MAX_MISSING_SHARE:.0%})",
            )
        )
    gaps = np.flatnonzero(missing)
    if not gaps.size:
        return times, values
    short = gaps[missing[gaps] <= MAX_FILLED_INTERVALS]
    counts = missing[short]
    offsets = np.arange(counts.sum()) - np.repeat(np.cumsum(counts) - counts, counts) + 1
    added = np.repeat(times[short], counts) + step * offsets
    filled = np.sort(np.concatenate([times, added]))
    columns = [np.interp(filled, times, values[:, k]) for k in range(values.shape[1])]
    new_values = np.column_stack(columns) if columns else np.zeros((filled.size, 0))
    parts = []
    for i in gaps[:LISTED]:
        fate = (
            "filled by linear interpolation"
            if missing[i] <= MAX_FILLED_INTERVALS
            else "left out (no intervals are invented for them)"
        )
        parts.append(
            f"after file row {rows[i]} ({_clock(times[i] + shown)}): {missing[i]} interval(s) "
            f"missing, {fate}"
        )
    more = f"; and {gaps.size - LISTED} more" if gaps.size > LISTED else ""
    sunday = np.array([_weekday(int(times[i] + shown)) == SUNDAY for i in gaps[:LISTED]])
    hour = naive and bool(np.any((missing[gaps[:LISTED]] * step == 60) & sunday))
    dst = (
        " (a gap of exactly one hour on a Sunday may be the hour clocks skip when "
        "daylight-saving time starts: give the logger's time zone)"
        if hour
        else ""
    )
    notices.append(
        f"{gaps.size} gap(s), {total} interval(s) missing in all: {'; '.join(parts)}{more}. "
        f"Gaps of up to {MAX_FILLED_INTERVALS} intervals are filled; longer ones are left out, "
        f"so the series has holes there{dst}"
    )
    return filled, new_values


# ---------------------------------------------------------------------------------- wording


def _weekday(minutes: int) -> int:
    """0 for Monday … 6 for Sunday (1970-01-01 was a Thursday)."""
    return (minutes // (24 * 60) + 3) % 7


def _where(row: int | np.integer, column: str) -> str:
    return f'file row {int(row)}, column "{column}"'


def _clock(minutes: int | np.integer) -> str:
    return str(np.datetime64(int(minutes), "m")).replace("T", " ")


def _text(stamp: pd.Timestamp) -> str:
    return stamp.strftime("%Y-%m-%d %H:%M")


def _offset_text(minutes: int) -> str:
    sign = "+" if minutes >= 0 else "-"
    hours, rest = divmod(abs(minutes), 60)
    return f"{sign}{hours:02d}:{rest:02d}"


def _bad_stamps(texts: pd.Series, rows: np.ndarray, bad: np.ndarray, column: str) -> list[Problem]:
    problems = [
        Problem(
            _where(rows[i], column),
            "no timestamp" if not texts.iloc[i] else f"{texts.iloc[i]!r} is not a date and time",
        )
        for i in bad[:LISTED]
    ]
    problems.append(Problem("", _ISO_HINT))
    return problems + _more(bad.size)


def _more(count: int) -> list[Problem]:
    return [Problem("", f"… and {count - LISTED} more like these")] if count > LISTED else []

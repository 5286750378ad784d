"""Moments and lengths of time are read and shown one way; checked against the standard library."""

from __future__ import annotations

import time
from datetime import UTC, datetime, timedelta

import pytest

from linewatch.domain.clock import iso_time, local_time, parse_moment, parse_since, time_of_day
from linewatch.domain.durations import format_duration, format_span
from linewatch.domain.errors import LinewatchError


@pytest.fixture(autouse=True)
def berlin(monkeypatch: pytest.MonkeyPatch):
    monkeypatch.setenv("TZ", "Europe/Berlin")
    time.tzset()
    yield
    monkeypatch.undo()
    time.tzset()


def test_a_moment_with_an_offset_is_that_instant():
    # reference: datetime.fromisoformat (standard library)
    text = "2026-03-02T06:15:00+01:00"
    assert parse_moment(text, "--from") == datetime.fromisoformat(text).timestamp()


def test_a_moment_without_an_offset_is_local_time():
    # 2026-03-02 is winter time in Berlin: UTC+1 (the tz database)
    expected = datetime(2026, 3, 2, 5, 15, tzinfo=UTC).timestamp()
    assert parse_moment("2026-03-02T06:15", "--from") == expected


def test_a_bad_moment_names_its_option():
    with pytest.raises(LinewatchError, match="--to"):
        parse_moment("yesterday", "--to")


def test_since_takes_a_duration_back_from_now_or_a_moment():
    now = 1_800_000_000.0
    assert parse_since("8h", now=now) == now - 8 * 3600
    assert parse_since("2026-03-02T06:15:00+01:00", now=now) == datetime.fromisoformat(
        "2026-03-02T06:15:00+01:00").timestamp()
    with pytest.raises(LinewatchError, match="--since"):
        parse_since("soon", now=now)


def test_every_shown_time_is_cut_to_the_second_not_rounded_up():
    t = datetime(2026, 7, 1, 9, 30, 15, tzinfo=UTC).timestamp() + 0.999
    # summer time in Berlin: UTC+2
    assert local_time(t) == "2026-07-01 11:30:15 +02:00"
    assert iso_time(t) == "2026-07-01T11:30:15+02:00"
    assert time_of_day(t) == "11:30:15"


@pytest.mark.parametrize("seconds", [0.4, 0.6, 59.5, 61.49, 599.5, 3599.6, 3600.4, 7384.5])
def test_every_length_of_time_uses_one_rounding(seconds: float):
    whole = round(seconds)  # nearest second (Python's round, half to even)
    td = timedelta(seconds=whole)
    minutes, secs = divmod(int(td.total_seconds()), 60)
    hours, minutes = divmod(minutes, 60)
    if whole < 60:
        assert format_span(seconds) == format_duration(seconds) == f"{whole}s"
    elif whole < 3600:
        assert format_span(seconds) == f"{minutes}m{secs:02d}s"
        assert format_duration(seconds).startswith(f"{minutes}m")
    else:
        assert format_span(seconds) == format_duration(seconds) == f"{hours}h{minutes:02d}m"

"""The HTML report (and its SVG charts) shows control characters from outside text visibly, as
the terminal does, and HTML-escaped: a browser, a mail client or a terminal that `cat`s the file
gets no escape sequence, no bell, no C1 control and no element from the data."""

from __future__ import annotations

import re
from pathlib import Path

import numpy as np
import pytest

from linewatch.alarms.book import AlarmBook
from linewatch.config.loading import parse_config
from linewatch.domain.records import FeedEvent, Limits
from linewatch.report.as_html import render_html
from linewatch.report.build import ChartTrace, build_report
from linewatch.report.svg_charts import control_chart_svg
from linewatch.store.actor import Actor
from linewatch.store.db import Store

T0 = 1_780_000_000.0
SHIFT = 8 * 3600.0
# ESC sequences that clear the screen, retitle the window (OSC 0 ended by BEL) and write the
# clipboard (OSC 52), a C1 CSI (U+009B) and NEL (U+0085), DEL, a bare CR, and an HTML element.
NAME = "od\x1b[2J\x1b]0;PWNED\x07\x9b31m\x85<script>alert(1)</script>"
FILE = "\x1b]52;c;aGVsbG8=\x07feed\x7f.csv"
REASON = "wear\x1b[5m<script>x</script>"
NOTE = "seen\rforged line\x9d0;t\x9c <script>alert(2)</script>"
ACTOR = "op\x1b[8m"
# Control characters no report may carry: C0 except tab and line feed, DEL, C1.
CONTROL = re.compile("[\x00-\x08\x0b-\x1f\x7f-\x9f]")


def toml_string(text: str) -> str:
    """`text` as a TOML basic string, every character escaped as \\uXXXX (TOML 1.0)."""
    return '"' + "".join(f"\\u{ord(ch):04x}" for ch in text) + '"'


@pytest.fixture()
def hostile_report(tmp_path: Path) -> str:
    config = parse_config(
        "[[characteristic]]\n"
        f"name = {toml_string(NAME)}\n"
        'column = "od"\nlsl = 11.9\nusl = 12.1\n'
        f"reasons = [{toml_string(REASON)}]\n"
    )
    assert config.characteristics[0].name == NAME
    store = Store(tmp_path / "state")
    try:
        book = AlarmBook(store, config)
        values = (12.0 + 0.01 * np.random.default_rng(7).standard_normal(60)).tolist()
        store.history.add_points(NAME, 0, values, list(range(2, 62)), FILE,
                                 received_at=T0 + 600)
        store.history.record_limits(Limits(NAME, "individuals", 12.0, 12.03, 11.97, 0.01),
                                    reason=REASON, now=T0 + 60, actor=ACTOR)
        book.observe_chart(NAME, "individuals", 10, 12, {"we1": [11]}, now=T0 + 1800)
        alarm = store.alarms.all()[0]
        book.acknowledge([alarm.id], REASON, NOTE, now=T0 + 1900, actor=Actor(ACTOR, ""))
        store.history.add_feed_event(FeedEvent("rotated", FILE, NOTE), at=T0 + 900)
        report = build_report(store, T0, T0 + SHIFT, config, now=T0 + SHIFT + 60)
    finally:
        store.close()
    return render_html(report)


def test_the_html_report_carries_no_control_character_and_no_element_from_the_data(
    hostile_report: str,
) -> None:
    raw = hostile_report.encode("utf-8")
    assert CONTROL.search(hostile_report) is None, CONTROL.findall(hostile_report)
    assert not re.search(rb"[\x00-\x08\x0b-\x1f\x7f]", raw)
    assert "<script" not in hostile_report.lower()
    # shown the way the terminal shows them (\xNN), then HTML-escaped
    assert "od\\x1b[2J\\x1b]0;PWNED\\x07\\x9b31m\\x85&lt;script&gt;" in hostile_report
    assert "\\x1b]52;c;aGVsbG8=\\x07feed\\x7f.csv" in hostile_report
    assert "wear\\x1b[5m&lt;script&gt;" in hostile_report
    assert "seen\\x0dforged line\\x9d0;t\\x9c &lt;script&gt;" in hostile_report
    assert "op\\x1b[8m" in hostile_report
    assert "<svg" in hostile_report  # the chart was drawn, its title escaped too


def test_the_svg_chart_title_is_escaped_and_made_visible() -> None:
    trace = ChartTrace("individuals", [1, 2, 3], [1.0, 2.0, 1.5], [1.5] * 3, [3.0] * 3,
                       [0.0] * 3, {2})
    svg = control_chart_svg(trace, title=NAME)
    assert CONTROL.search(svg) is None and "<script" not in svg
    assert 'aria-label="od\\x1b[2J\\x1b]0;PWNED\\x07\\x9b31m\\x85&lt;script&gt;' in svg

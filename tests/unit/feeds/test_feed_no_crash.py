"""No line, however broken, stops a feed: the parser rejects it and goes on.

Property: for arbitrary bytes and arbitrary near-JSON text, in every layout, parsing never
raises; each line is a point, a rejection or skipped. Plus the cases that once escaped as
exceptions from the standard library (csv field size limit, Python's integer digit limit,
integers too large for a float).
"""

from __future__ import annotations

import json

from hypothesis import given, settings
from hypothesis import strategies as st

from linewatch.config.model import FeedConfig
from linewatch.feeds.row_parser import RowParser

LAYOUTS = st.sampled_from(["wide", "long", "jsonl"])
JSONISH = st.recursive(
    st.none() | st.booleans() | st.floats() | st.integers() | st.text(max_size=8),
    lambda inner: st.lists(inner, max_size=3) | st.dictionaries(st.text(max_size=6), inner,
                                                                  max_size=3),
    max_leaves=8,
).map(lambda v: json.dumps(v).encode())


@settings(max_examples=300, deadline=None)
@given(LAYOUTS, st.lists(st.binary(max_size=40) | JSONISH, max_size=12),
       st.sampled_from(["utf-8", "cp1252", "latin-1"]))
def test_no_line_makes_the_parser_raise(layout: str, lines: list[bytes], encoding: str) -> None:
    feed = FeedConfig(paths=[], layout=layout, encoding=encoding)
    parser = RowParser(feed, "log", None)
    batch = parser.parse([b"time,characteristic,value,od", *lines], 1)
    accounted = {r.line for r in batch.rejected}
    for name in batch.values:
        accounted |= set(batch.lines[name])
    assert accounted <= set(range(1, len(lines) + 2))


def test_lines_that_once_escaped_as_exceptions_are_rejected() -> None:
    digits = b"1" * 5000
    cases = {
        "jsonl": [b'{"od": ' + digits + b"}", b'{"od": 1' + b"0" * 400 + b"}",
                  b'{"characteristic": "od", "value": ' + digits + b"}"],
        "long": [b'06:00,od,"' + b"9" * 200_000 + b'"'],
    }
    for layout, lines in cases.items():
        parser = RowParser(FeedConfig(paths=[], layout=layout), "log", None)
        head = [b"time,characteristic,value"] if layout == "long" else []
        batch = parser.parse(head + lines, 1)
        assert batch.values == {}
        assert [r.line for r in batch.rejected] == list(range(len(head) + 1,
                                                               len(head) + len(lines) + 1))

"""The whole-file reader gives exactly what the per-line parser gives, on any mix of rows.

The per-line parser is the definition; the fast reader converts plain rows with numpy. The
property is checked on generated files that mix plain and odd rows (quotes, BOM, CRLF, blank
and comment lines, repeated headers, junk, binary noise, bad encodings) and on numbers written
every way Python's float() reads them (the reference for the values).
"""

from __future__ import annotations

import numpy as np
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from linewatch.config.model import FeedConfig
from linewatch.feeds.batch import Batch
from linewatch.feeds.row_parser import RowParser
from linewatch.feeds.whole_buffer import read_buffer
from linewatch.feeds.whole_file import parse_log_bytes

NUMBERS = st.one_of(
    st.floats(allow_nan=False, allow_infinity=False, width=64).map(repr),
    st.builds(lambda v, k: f"{v:.{k}f}", st.floats(-1e6, 1e6), st.integers(0, 17)),
    st.integers(-10**18, 10**18).map(str),
    st.sampled_from(["+.5", "-.5", "1.", "00", "-0", "0.1e1", "1E-3", " 2.5 ", "\t3"]),
)
# finite but out of range (rejected alike by both paths), next to the bound itself
HUGE = st.sampled_from(["1e308", "-1e308", "1.7976931348623157e308", "1e101", "-1e100",
                        "1e100", "99999999999999999999", "1" + "0" * 101])
IN_RANGE = NUMBERS.filter(lambda t: abs(float(t.replace(",", "."))) <= 1e100)
JUNK = st.sampled_from(
    ["", "abc", "nan", "inf", "-inf", "1_0", "1.2.3", "--1", "+-1", "1-2", ".", "+", "e5",
     '"4.5"', '"1,5"', "1,5", "0x10", "١٢", "\u00a012"]
)
FIELD = st.one_of(NUMBERS, JUNK, HUGE, st.text("abcXYZ:- T0123456789", max_size=12))


@st.composite
def log_files(draw: st.DrawFn) -> tuple[bytes, str]:
    delim = draw(st.sampled_from([",", ";", "\t"]))
    ncols = draw(st.integers(1, 4))
    names = draw(st.sampled_from([["time", "od", "wall", "part"], ["t", "a", "b", "c"],
                                  ["Zeit", "Ø", "wall", "id"],
                                  ["time", "od", "od", "wall"]]))[:ncols]
    header = delim.join(names)
    eol = draw(st.sampled_from(["\n", "\r\n"]))
    out: list[bytes] = []
    if draw(st.booleans()):
        out.append(b"# preamble")
    out.append((b"\xef\xbb\xbf" if draw(st.booleans()) else b"") + header.encode())
    for _ in range(draw(st.integers(0, 25))):
        kind = draw(st.integers(0, 19))
        if kind == 0:
            out.append(header.encode())
        elif kind == 1:
            out.append(draw(st.sampled_from([b"", b"  ", b"# note", b" # note", b"\t"])))
        elif kind == 2:
            out.append(draw(st.binary(max_size=12)).replace(b"\n", b""))
        elif kind == 3 and draw(st.booleans()):
            # a comment that would otherwise look like a good row
            lead = draw(st.sampled_from(["#", " #", "\t#", "  # "]))
            out.append((lead + delim.join(draw(NUMBERS) for _ in range(ncols))).encode())
        elif kind == 3:
            fields = draw(st.lists(FIELD, min_size=0, max_size=ncols + 2))
            out.append(delim.join(fields).encode("utf-8"))
        else:
            fields = [draw(NUMBERS if k else FIELD) for k in range(ncols)]
            if draw(st.integers(0, 5)) == 0:
                fields[draw(st.integers(0, ncols - 1))] = draw(JUNK)
            out.append(delim.join(f.replace(delim, "") for f in fields).encode("utf-8"))
    data = eol.encode().join(out)
    if draw(st.booleans()):
        data += eol.encode()
    return data, draw(st.sampled_from(["utf-8", "cp1252", "latin-1"]))


def per_line(data: bytes, feed: FeedConfig, columns: list[str] | None) -> Batch:
    lines = data.split(b"\n")
    if lines[-1] == b"":
        lines.pop()
    return RowParser(feed, "log.csv", columns, require_columns=True).parse(lines, 1)


def assert_same(fast: Batch, slow: Batch) -> None:
    assert fast.rows == slow.rows
    assert fast.rejected == slow.rejected
    assert fast.notices == slow.notices and fast.unread == slow.unread
    assert list(fast.values) == list(slow.values)
    for c in slow.values:
        assert np.array_equal(np.asarray(fast.values[c]), np.asarray(slow.values[c], dtype=float))
        assert np.asarray(fast.lines[c]).tolist() == list(slow.lines[c])
        assert list(fast.times[c]) == list(slow.times[c])


@settings(max_examples=300, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(log_files(), st.sampled_from(["auto", "given"]))
def test_fast_reader_equals_per_line_parser(case: tuple[bytes, str], mode: str) -> None:
    data, encoding = case
    feed = FeedConfig(paths=[], encoding=encoding)
    columns = None
    if mode == "given":
        try:
            header = per_line(data, feed, None)
        except Exception:
            header = None
        columns = list(header.values)[:1] if header is not None and header.values else None
    try:
        slow = per_line(data, feed, columns)
    except Exception as exc:
        try:
            parse_log_bytes(data, "log.csv", feed, columns)
        except Exception as fast_exc:
            assert type(fast_exc) is type(exc) and str(fast_exc) == str(exc)
            return
        raise AssertionError("the fast reader accepted what the per-line parser refused") from exc
    fast = parse_log_bytes(data, "log.csv", feed, columns)
    assert_same(fast, slow)


@settings(max_examples=150, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(log_files())
def test_reading_without_times_changes_nothing_but_the_times(case: tuple[bytes, str]) -> None:
    data, encoding = case
    feed = FeedConfig(paths=[], encoding=encoding)
    try:
        timed = parse_log_bytes(data, "log.csv", feed, None)
    except Exception:
        return  # refused alike: the other test holds the two readers to the same errors
    untimed = parse_log_bytes(data, "log.csv", feed, None, times=False)
    assert (untimed.rows, untimed.rejected, untimed.notices) == (
        timed.rows, timed.rejected, timed.notices)
    assert list(untimed.values) == list(timed.values)
    for c in timed.values:
        assert np.array_equal(untimed.values[c], timed.values[c])
        assert np.array_equal(untimed.lines[c], timed.lines[c])
        assert list(untimed.times[c]) == [None] * len(timed.values[c])


@settings(max_examples=200, deadline=None)
@given(st.lists(IN_RANGE, min_size=1, max_size=200), st.booleans())
def test_numbers_are_read_as_python_float_reads_them(texts: list[str], semicolon: bool) -> None:
    # reference: Python's float(), which rounds correctly (within the ±1e100 range kept)
    delim = ";" if semicolon else ","
    data = ("time" + delim + "od\n" + "".join(f"t{delim}{t}\n" for t in texts)).encode()
    fast = parse_log_bytes(data, "log.csv", FeedConfig(paths=[]), None)
    expected = [float(t.replace(",", ".")) for t in texts]
    assert fast.values["od"].tolist() == expected
    assert fast.rejected == []


LONG_NAMES = st.sampled_from(["od", "wall", "Ø", " od", "od ", "", "a" * 70, "value", "name",
                              "7", "x-1"])


@st.composite
def long_files(draw: st.DrawFn) -> tuple[bytes, str]:
    """Long-layout logs: time, name, value (in a drawn column order), with odd rows mixed in."""
    delim = draw(st.sampled_from([",", ";", "\t"]))
    cols = draw(st.permutations(["time", "name", "value"]))
    header = delim.join(cols)
    eol = draw(st.sampled_from(["\n", "\r\n"]))
    out: list[bytes] = [(b"\xef\xbb\xbf" if draw(st.booleans()) else b"") + header.encode()]
    for _ in range(draw(st.integers(0, 30))):
        kind = draw(st.integers(0, 14))
        if kind == 0:
            out.append(header.encode())
        elif kind == 1:
            out.append(draw(st.sampled_from([b"", b"# note", b" 1", b"\t"])))
        elif kind == 2:
            out.append(draw(st.binary(max_size=12)).replace(b"\n", b""))
        elif kind == 3:
            out.append(delim.join(draw(st.lists(FIELD, max_size=4))).encode("utf-8"))
        else:
            row = {"time": draw(st.sampled_from(["2026-03-02T06:00:00", "", " t1 ", "06:01"])),
                   "name": draw(LONG_NAMES),
                   "value": draw(NUMBERS) if kind > 5 else draw(st.one_of(NUMBERS, JUNK))}
            fields = [row[c].replace(delim, "") for c in cols]
            out.append(delim.join(fields).encode("utf-8"))
    data = eol.encode().join(out)
    if draw(st.booleans()):
        data += eol.encode()
    return data, draw(st.sampled_from(["utf-8", "cp1252"]))


@settings(max_examples=300, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(long_files(), st.sampled_from([None, ["od"], ["od", "wall"]]))
def test_fast_long_reader_equals_per_line_parser(
    case: tuple[bytes, str], columns: list[str] | None
) -> None:
    data, encoding = case
    feed = FeedConfig(paths=[], encoding=encoding, layout="long", name_column="name",
                      value_column="value")
    by_line = RowParser(feed, "log.csv", columns, require_columns=True)
    whole = RowParser(feed, "log.csv", columns, require_columns=True)
    lines = data.split(b"\n")
    if lines[-1] == b"":
        lines.pop()
    try:
        slow = by_line.parse(lines, 1)
    except Exception as exc:  # the per-line parser refused: the fast reader must say the same
        try:
            read_buffer(data, whole)
        except Exception as fast_exc:
            assert type(fast_exc) is type(exc) and str(fast_exc) == str(exc)
            return
        raise AssertionError("the fast reader accepted what the per-line parser refused") from exc
    fast = read_buffer(data, whole)
    assert_same(fast, slow)
    # the names met, in the order of the file (what an unknown-name message lists)
    assert list(whole.names_seen) == list(by_line.names_seen)

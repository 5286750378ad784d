"""Parsing log rows: layouts, delimiters, decimal comma, encodings and junk.

References: Python's own `float()`, `csv` and `json` modules read the same text as the
expected values; the decimal comma with a semicolon delimiter is common practice on
European line PCs.
"""

from __future__ import annotations

import csv
import io
import json
import subprocess
import sys
from pathlib import Path

import numpy as np
import pytest

from linewatch.config.model import FeedConfig
from linewatch.domain.errors import LinewatchError
from linewatch.feeds.batch import Batch
from linewatch.feeds.row_parser import MAX_LINE_BYTES, RowParser
from linewatch.feeds.whole_file import read_log

WIDE = (
    "time,part,od,wall\n"
    "2026-03-02T06:00:00,T-0001,25.013,1.502\n"
    "2026-03-02T06:00:05,T-0002,24.987,1.497\n"
    "2026-03-02T06:00:10,T-0003,25.020,1.511\n"
)


def rows(text: str | bytes, feed: FeedConfig | None = None, columns=None) -> Batch:
    """Parse a whole text with the per-line parser, as a tail would deliver it."""
    data = text.encode() if isinstance(text, str) else text
    lines = data.split(b"\n")
    if lines[-1] == b"":
        lines.pop()
    return RowParser(feed or FeedConfig(paths=[]), "log.csv", columns).parse(lines, 1)


def both(tmp_path: Path, data: bytes, feed: FeedConfig | None = None, columns=None):
    """The per-line parser and the whole-file reader on the same bytes."""
    p = tmp_path / "log.csv"
    p.write_bytes(data)
    feed = feed or FeedConfig(paths=[])
    lines = data.split(b"\n")
    if lines[-1] == b"":
        lines.pop()
    return RowParser(feed, str(p), columns).parse(lines, 1), read_log(str(p), feed, columns)


def reference_wide(text: str, delimiter: str = ",") -> list[dict[str, str]]:
    """Rows as Python's csv module reads them (the reference for field splitting)."""
    return list(csv.DictReader(io.StringIO(text), delimiter=delimiter))


def test_wide_csv_takes_numeric_columns_and_the_time_column(tmp_path: Path) -> None:
    ref = reference_wide(WIDE)
    for b in both(tmp_path, WIDE.encode()):
        # the part id is text, the time column is recognised by name: neither is a characteristic
        assert list(b.values) == ["od", "wall"]
        assert list(b.values["od"]) == [float(r["od"]) for r in ref]
        assert list(b.values["wall"]) == [float(r["wall"]) for r in ref]
        assert list(b.lines["od"]) == [2, 3, 4]
        assert list(b.times["wall"]) == [r["time"] for r in ref]
        assert b.rows == 3 and b.rejected == []


def test_explicit_columns_pick_only_those(tmp_path: Path) -> None:
    for b in both(tmp_path, WIDE.encode(), columns=["wall"]):
        assert list(b.values) == ["wall"]
        assert list(b.values["wall"]) == [1.502, 1.497, 1.511]


def test_semicolon_delimiter_reads_decimal_comma(tmp_path: Path) -> None:
    text = "Zeit;od;wall\n2026-03-02 06:00:00;25,013;1,502\n2026-03-02 06:00:05;24,987;1,497\n"
    for b in both(tmp_path, text.encode()):
        assert list(b.values["od"]) == [float("25.013"), float("24.987")]
        assert list(b.values["wall"]) == [float("1.502"), float("1.497")]
        assert list(b.times["od"]) == ["2026-03-02 06:00:00", "2026-03-02 06:00:05"]


def test_tab_delimiter_is_detected(tmp_path: Path) -> None:
    text = WIDE.replace(",", "\t")
    for b in both(tmp_path, text.encode()):
        assert list(b.values["od"]) == [25.013, 24.987, 25.020]


def test_decimal_comma_can_be_configured_with_tabs(tmp_path: Path) -> None:
    text = "time\tod\n06:00\t25,5\n06:01\t25,25\n"
    for b in both(tmp_path, text.encode(), FeedConfig(paths=[], decimal=",")):
        assert list(b.values["od"]) == [25.5, 25.25]


def test_crlf_bom_blank_and_comment_lines_change_nothing_but_line_numbers(tmp_path: Path) -> None:
    messy = (
        b"\xef\xbb\xbf# written by the wall gauge\r\n"
        b"time,part,od,wall\r\n"
        b"\r\n"
        b"2026-03-02T06:00:00,T-0001,25.013,1.502\r\n"
        b"   # operator note\r\n"
        b"2026-03-02T06:00:05,T-0002,24.987,1.497\r\n"
        b"2026-03-02T06:00:10,T-0003,25.020,1.511\r\n"
    )
    clean = rows(WIDE)
    for b in both(tmp_path, messy):
        assert b.rejected == []
        for c in ("od", "wall"):
            assert list(b.values[c]) == list(clean.values[c])
            assert list(b.times[c]) == list(clean.times[c])
        assert list(b.lines["od"]) == [4, 6, 7]


def test_quoted_fields_follow_the_csv_module(tmp_path: Path) -> None:
    text = 'time,note,od\n"06:00","cut, then resumed","25.5"\n06:01,"said ""ok""",25.25\n'
    ref = reference_wide(text)
    for b in both(tmp_path, text.encode()):
        assert list(b.values) == ["od"]
        assert list(b.values["od"]) == [float(r["od"]) for r in ref]
        assert b.rejected == []


def test_a_repeated_header_is_a_header_not_a_bad_row(tmp_path: Path) -> None:
    header = WIDE.splitlines(keepends=True)[0]
    text = WIDE + header + "2026-03-02T06:01:00,T-0004,25.001,1.500\n"
    for b in both(tmp_path, text.encode()):
        assert b.rejected == []
        assert list(b.lines["od"]) == [2, 3, 4, 6]


def test_junk_rows_are_rejected_with_line_and_reason_and_reading_goes_on(tmp_path: Path) -> None:
    text = (
        b"time,od,wall\n"
        b"06:00,25.0,1.5\n"
        b"06:01,abc,1.5\n"  # text
        b"06:02,,1.5\n"  # empty value
        b"06:03,25.1\n"  # wrong field count
        b"\x00\x13\x7f\x01binary\x02\n"  # binary noise
        b"06:04,25.2,1.5,9\n"  # wrong field count
        b"06:05,nan,1.5\n"  # not a finite number
        b"06:06,1e999,1.5\n"  # infinite
        b"06:07,25.3,1.6\n"
    )
    for b in both(tmp_path, text):
        assert list(b.values["od"]) == [25.0, 25.3]
        assert list(b.lines["wall"]) == [2, 10]  # a row with one bad value is no point at all
        got = {r.line: r.reason for r in b.rejected}
        assert sorted(got) == [3, 4, 5, 6, 7, 8, 9]
        assert "'abc'" in got[3] and "od" in got[3]
        assert "empty" in got[4]
        assert "expected 3 fields, found 2" in got[5]
        assert "binary" in got[6]
        assert "found 4" in got[7]
        assert "not a number" in got[8] and "not a number" in got[9]
        assert all(r.file.endswith("log.csv") for r in b.rejected)


def test_numbers_read_as_python_float_reads_them(tmp_path: Path) -> None:
    texts = ["25", "-0.5", "+.75", "1.", "1e3", "-2.5E-3", " 7.25 ", "0000012.5000",
             "3.14159265358979"]
    text = "time,od\n" + "".join(f"t{k},{t}\n" for k, t in enumerate(texts))
    for b in both(tmp_path, text.encode()):
        assert list(b.values["od"]) == [float(t) for t in texts]


def test_underscores_are_not_digits(tmp_path: Path) -> None:
    for b in both(tmp_path, b"time,od\n1,1_000\n2,5\n"):
        assert list(b.values["od"]) == [5.0]
        assert [r.line for r in b.rejected] == [2]


def test_cp1252_feed_reads_its_own_bytes(tmp_path: Path) -> None:
    text = "Zeit;Außen-Ø;wall\n06:00;25,5;1,5\n06:01;25,25;1,25\n"
    feed = FeedConfig(paths=[], encoding="cp1252")
    for b in both(tmp_path, text.encode("cp1252"), feed):
        assert list(b.values) == ["Außen-Ø", "wall"]
        assert list(b.values["Außen-Ø"]) == [25.5, 25.25]


def test_invalid_utf8_rejects_the_row_not_the_feed(tmp_path: Path) -> None:
    data = b"time,od\n06:00,25.0\n06:0\xff,25.1\n06:02,25.2\n"
    for b in both(tmp_path, data):
        assert list(b.values["od"]) == [25.0, 25.2]
        assert [r.line for r in b.rejected] == [3]
        assert "utf-8" in b.rejected[0].reason


def test_latin1_accepts_any_byte_but_still_rejects_control_bytes(tmp_path: Path) -> None:
    data = b"time,od\n06:0\xff,25.0\n06:01\x00,25.1\n"
    for b in both(tmp_path, data, FeedConfig(paths=[], encoding="latin-1")):
        assert list(b.times["od"]) == ["06:0\xff"]
        assert [r.line for r in b.rejected] == [3]


def test_an_over_long_line_is_rejected(tmp_path: Path) -> None:
    data = b"time,od\n06:00,25.0\n06:01," + b"9" * (MAX_LINE_BYTES + 10) + b"\n06:02,25.2\n"
    for b in both(tmp_path, data):
        assert list(b.values["od"]) == [25.0, 25.2]
        assert [r.line for r in b.rejected] == [3]
        assert "longer than" in b.rejected[0].reason


def test_columns_are_decided_at_the_first_row_with_a_number(tmp_path: Path) -> None:
    # a junk first row must not hide a column for the rest of the file
    data = b"time,od\n06:00,n/a\n06:01,25.1\n"
    for b in both(tmp_path, data):
        assert list(b.values["od"]) == [25.1]
        assert [r.line for r in b.rejected] == [2]


def test_long_layout_names_are_characteristics(tmp_path: Path) -> None:
    text = (
        "time,characteristic,value\n"
        "06:00,od,25.0\n06:00,wall,1.5\n06:01,od,25.1\n06:01,,1.4\n06:01,wall,x\n06:02,ovality,0.2\n"
    )
    feed = FeedConfig(paths=[], layout="long")
    for b in both(tmp_path, text.encode(), feed):
        assert list(b.values) == ["od", "wall", "ovality"]
        assert list(b.values["od"]) == [25.0, 25.1]
        assert list(b.lines["od"]) == [2, 4]
        assert list(b.times["wall"]) == ["06:00"]
        assert [r.line for r in b.rejected] == [5, 6]
    only = rows(text, feed, columns=["wall"])
    assert list(only.values) == ["wall"] and only.rejected[0].line == 5


def test_long_layout_with_own_column_names(tmp_path: Path) -> None:
    text = "stamp;merkmal;messwert\n06:00;od;25,5\n"
    feed = FeedConfig(paths=[], layout="long", name_column="merkmal", value_column="messwert",
                      time_column="stamp")
    for b in both(tmp_path, text.encode(), feed):
        assert list(b.values["od"]) == [25.5]
        assert list(b.times["od"]) == ["06:00"]


def test_json_lines_wide_and_long_objects(tmp_path: Path) -> None:
    objs = [
        {"time": "06:00", "part": "T-1", "od": 25.0, "wall": 1.5},
        {"time": "06:01", "part": "T-2", "od": 25.1, "wall": "1.4"},
        {"time": "06:02", "characteristic": "ovality", "value": 0.25},
        {"time": "06:03", "part": "T-3", "od": True, "wall": 1.5},
    ]
    text = "\n".join(json.dumps(o) for o in objs) + "\n[1, 2]\n{broken\n\n"
    feed = FeedConfig(paths=[], layout="jsonl")
    for b in both(tmp_path, text.encode(), feed):
        assert list(b.values) == ["od", "wall", "ovality"]
        assert list(b.values["od"]) == [json.loads(text.splitlines()[k])["od"] for k in (0, 1)]
        assert list(b.values["wall"]) == [1.5, 1.4]
        assert list(b.values["ovality"]) == [0.25]
        assert list(b.times["ovality"]) == ["06:02"]
        reasons = {r.line: r.reason for r in b.rejected}
        assert sorted(reasons) == [4, 5, 6]  # a boolean is not a measurement
        assert "not a JSON object" in reasons[5] and "JSON" in reasons[6]


def test_prime_header_resumes_in_the_middle_of_a_file() -> None:
    lines = WIDE.encode().split(b"\n")[:-1]
    whole = RowParser(FeedConfig(paths=[]), "log.csv").parse(lines, 1)
    parser = RowParser(FeedConfig(paths=[]), "log.csv")
    parser.prime(lines[:2])
    tail = parser.parse(lines[2:], 3)
    assert list(tail.values["od"]) == list(whole.values["od"])[1:]
    assert list(tail.lines["od"]) == [3, 4]
    only_header = RowParser(FeedConfig(paths=[]), "log.csv", ["wall"])
    only_header.prime_header(lines[0])
    assert list(only_header.parse(lines[3:], 4).values["wall"]) == [1.511]


def test_live_parser_keeps_going_when_a_column_is_missing() -> None:
    b = rows(WIDE, columns=["od", "ovality"])
    assert list(b.values) == ["od"]
    assert b.rejected == []  # the header is no row: the missing column is a notice
    assert b.notices[0].line == 1 and "ovality" in b.notices[0].text
    assert "time, part, od, wall" in b.notices[0].text


def test_a_header_with_a_control_byte_is_named_as_the_header_not_as_data(tmp_path: Path) -> None:
    """A column name holding a BEL: the message is about line 1, the header, not a later line."""
    p = tmp_path / "log.csv"
    p.write_bytes(b"time,o\x07d\n1,2.0\n2,2.1\n")
    with pytest.raises(LinewatchError, match="line 1: the header line holds control bytes"):
        read_log(str(p), FeedConfig(paths=[]))
    b = RowParser(FeedConfig(paths=[]), str(p)).parse(p.read_bytes().splitlines(True), 1)
    assert b.rejected[0].line == 1 and "header line holds control bytes" in b.rejected[0].reason


def test_user_errors_are_one_line_messages(tmp_path: Path) -> None:
    feed = FeedConfig(paths=[])
    with pytest.raises(LinewatchError, match="no such file"):
        read_log(str(tmp_path / "missing.csv"), feed)
    p = tmp_path / "log.csv"
    p.write_text(WIDE)
    with pytest.raises(LinewatchError) as err:
        read_log(str(p), feed, ["od", "ovality"])
    message = str(err.value)
    assert "ovality" in message and "time, part, od, wall" in message and "\n" not in message
    p.write_text("# only a comment\n\n")
    with pytest.raises(LinewatchError, match="no header"):
        read_log(str(p), feed)
    p.write_text("1.5,2.5\n1.6,2.4\n")
    with pytest.raises(LinewatchError, match="not a header"):
        read_log(str(p), feed)
    long_feed = FeedConfig(paths=[], layout="long")
    p.write_text("time,characteristic,value\n06:00,od,25\n")
    with pytest.raises(LinewatchError, match=r"no characteristic 'wall' \(characteristics: od\)"):
        read_log(str(p), long_feed, ["wall"])


def test_standard_input_is_read_with_a_dash() -> None:
    code = (
        "from linewatch.config.model import FeedConfig\n"
        "from linewatch.feeds.whole_file import read_log\n"
        "b = read_log('-', FeedConfig(paths=[]))\n"
        "print(b.file, list(b.values), [float(v) for v in b.values['od']])\n"
    )
    out = subprocess.run(
        [sys.executable, "-c", code], input=WIDE.encode(), capture_output=True, check=True
    )
    assert out.stdout.decode().split() == ["<stdin>", "['od',", "'wall']", "[25.013,", "24.987,",
                                           "25.02]"]


def test_last_line_without_newline_counts_in_a_finished_file(tmp_path: Path) -> None:
    p = tmp_path / "log.csv"
    p.write_bytes(WIDE.encode()[:-1])
    b = read_log(str(p), FeedConfig(paths=[]))
    assert list(b.lines["od"]) == [2, 3, 4]


def test_fast_reader_on_many_rows_equals_float(tmp_path: Path) -> None:
    rng = np.random.default_rng(7)
    vals = rng.normal(25.0, 0.02, 20_000)
    places = rng.integers(0, 12, 20_000)
    texts = [f"{v:.{k}f}" for v, k in zip(vals.tolist(), places.tolist(), strict=True)]
    data = ("time,od\n" + "".join(f"t{k},{t}\n" for k, t in enumerate(texts))).encode()
    p = tmp_path / "log.csv"
    p.write_bytes(data)
    b = read_log(str(p), FeedConfig(paths=[]))
    assert np.array_equal(b.values["od"], np.array([float(t) for t in texts]))
    assert b.times["od"][19_999] == "t19999"


def test_a_new_file_without_a_header_is_read_under_the_header_the_path_had_before() -> None:
    """A writer that starts a rotated file with data, not a header (common practice on line
    PCs, whose loggers often write the header only once): the rows keep their columns."""
    lines = WIDE.encode().split(b"\n")[:-1]
    parser = RowParser(FeedConfig(paths=[]), "log.csv")
    first = parser.parse(lines, 1)
    parser.reset()  # the file was rotated: a new file starts
    second = parser.parse(lines[1:], 1)
    assert list(second.values["od"]) == list(first.values["od"])
    assert list(second.lines["od"]) == [1, 2, 3] and not second.rejected
    # a differently shaped first row is not forced under the old header
    parser.reset()
    other = parser.parse([b"2026-03-02T06:01:00,25.001"], 1)
    assert not other.values and "not a header" in other.notices[0].text and other.unread == 1


def test_a_first_line_of_data_with_no_header_before_is_rejected_not_taken_for_names() -> None:
    b = rows("2026-03-02T06:00:00,T-0001,25.013,1.502\n2026-03-02T06:00:05,T-0002,24.987,1.497\n")
    assert not b.values  # '25.013' never becomes a characteristic
    assert b.rejected == [] and b.unread == 2  # counted, and said once for the file
    (n,) = b.notices
    assert n.line == 1 and n.kind == "no-header" and "not a header" in n.text
    # column names that happen to hold a digit or two are still a header
    named = rows("time,station 2,od\n2026-03-02T06:00:00,4,25.013\n")
    assert list(named.values) == ["station 2", "od"]


def test_check_says_when_a_log_starts_with_data_instead_of_a_header(tmp_path: Path) -> None:
    log = tmp_path / "log.csv"
    log.write_text("2026-03-02T06:00:00,T-0001,25.013\n")
    out = subprocess.run([sys.executable, "-m", "linewatch", "check", str(log)],
                         capture_output=True, text=True, timeout=60)
    assert out.returncode == 2
    assert "line 1" in out.stderr and "not a header" in out.stderr

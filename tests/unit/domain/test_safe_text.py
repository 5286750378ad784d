"""The one sanitiser: which characters it escapes and how (C0 and C1 control sets as ECMA-48
defines them, DEL; common practice), held against the standard library where it can be."""

from __future__ import annotations

import io
import json
import unicodedata

from hypothesis import given
from hypothesis import strategies as st

from linewatch.domain.safe_text import GuardedStream, is_clean, json_safe, visible, visible_lines

CONTROLS = [chr(c) for c in [*range(0x00, 0x20), *range(0x7F, 0xA0)]]


def test_every_control_but_tab_is_escaped_as_x_and_two_hex_digits() -> None:
    for c in CONTROLS:
        if c == "\t":
            assert visible(c) == "\t"
        else:
            assert visible(c) == f"\\x{ord(c):02x}"


def test_the_probe_key_reads_back_with_every_escape_visible() -> None:
    key = "od\u001b[2J\u001b]0;PWNED\u0007\u001b]52;c;aGk=\u0007"
    assert visible(key) == "od\\x1b[2J\\x1b]0;PWNED\\x07\\x1b]52;c;aGk=\\x07"


def test_printable_text_backslashes_and_non_ascii_pass_unchanged() -> None:
    for text in ("Ø 12.5 mm", "C:\\logs\\a.csv", "[bold red]x", "σ within", "日本"):
        assert visible(text) == text


def test_bidi_overrides_are_escaped_as_u_and_four_hex_digits() -> None:
    # U+202E RIGHT-TO-LEFT OVERRIDE reorders what follows (Unicode bidi format character)
    assert unicodedata.category("\u202e") == "Cf"
    assert visible("a\u202eb") == "a\\u202eb"


def test_documents_keep_line_feeds_and_crlf_but_not_a_bare_cr() -> None:
    assert visible_lines("a\nb\r\nc\td") == "a\nb\r\nc\td"
    assert visible_lines("a\rb\x1b[2J") == "a\\x0db\\x1b[2J"
    assert visible("a\nb") == "a\\x0ab"


@given(st.text())
def test_what_comes_out_is_always_clean(text: str) -> None:
    assert is_clean(visible(text)) and is_clean(visible_lines(text))
    assert "\n" not in visible(text)


@given(st.dictionaries(st.text(), st.text()))
def test_json_safe_keeps_the_json_value_and_holds_no_control(value: dict[str, str]) -> None:
    text = json_safe(json.dumps(value, ensure_ascii=False))
    assert json.loads(text) == value  # the standard library's reader is the reference
    assert is_clean(text) and "\n" not in text


def test_guarded_stream_escapes_across_writes_and_keeps_crlf_split_over_two() -> None:
    inner = io.StringIO()
    out = GuardedStream(inner)
    out.write("row 1\r")
    out.write("\nrow 2 \x1b]0;T\x07\n")
    out.write("bare\r")
    out.flush()
    assert inner.getvalue() == "row 1\r\nrow 2 \\x1b]0;T\\x07\nbare\\x0d"

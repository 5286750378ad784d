"""The one sanitiser for text that came from outside (log keys and values, file names, config
strings, notes, reasons) before it reaches a terminal.

A terminal obeys control characters: ESC starts sequences that clear the screen, retitle the
window (OSC 0) or write the clipboard (OSC 52); a bare CR or a line break forges lines. So every
control character is shown visibly instead, in one convention everywhere: `\\xNN` for C0 (except
tab), DEL and C1, `\\uNNNN` for the invisible bidirectional and line-separator characters that
reorder or break what is shown. Printable text, tab and backslashes pass unchanged.

`visible` is for one field (a name, a reason): it escapes line breaks too. `visible_lines` is
for a whole document of our own making (a report, a command's output): it keeps its line
breaks. `guarded_output` applies `visible_lines` to everything written to stdout and stderr,
the last boundary before the terminal. No textual or rich import: the core and the screen
share it.
"""

from __future__ import annotations

import contextlib
import io
import re
import sys
from collections.abc import Iterator
from typing import Any, TextIO

# C0 except tab, DEL, C1, then the bidi embeddings/overrides/isolates, the Arabic letter mark,
# the left-to-right/right-to-left marks and the Unicode line and paragraph separators.
_FIELD_UNSAFE = re.compile(
    "[\x00-\x08\x0a-\x1f\x7f-\x9f\u061c\u200e\u200f\u2028\u2029\u202a-\u202e\u2066-\u2069]"
)
# The same, but a line feed (and the CR of a CR LF) is kept: our own documents have lines.
_LINES_UNSAFE = re.compile(
    "\r(?!\n)|[\x00-\x08\x0b-\x0c\x0e-\x1f\x7f-\x9f\u061c\u200e\u200f\u2028\u2029"
    "\u202a-\u202e\u2066-\u2069]"
)
# Any character that may need it, CR included: one plain scan finds that a big output needs
# nothing (three times quicker than the pattern above with its look-ahead).
_LINES_SUSPECT = re.compile(
    "[\x00-\x08\x0b-\x1f\x7f-\x9f\u061c\u200e\u200f\u2028\u2029\u202a-\u202e\u2066-\u2069]"
)


def _escape(match: re.Match[str]) -> str:
    code = ord(match.group())
    return f"\\x{code:02x}" if code <= 0xFF else f"\\u{code:04x}"


def visible(text: object) -> str:
    """`text` as a string with every control character shown as an escape (line breaks too),
    so it stays on one line and cannot steer the terminal: ESC becomes `\\x1b`."""
    s = text if isinstance(text, str) else str(text)
    if s.isprintable():  # the common case, checked in C
        return s
    return _FIELD_UNSAFE.sub(_escape, s)


# The ASCII characters of _LINES_SUSPECT, for a check of ASCII text in one C pass.
_ASCII_SUSPECT = bytes(b for b in range(32) if b not in (9, 10)) + b"\x7f"


def visible_lines(text: str) -> str:
    """A whole document with its line breaks (LF, CR LF) and tabs kept and every other control
    character shown as an escape."""
    if text.isprintable():
        return text
    if text.isascii():  # most output (JSON lines): deleting the suspects finds none, quickly
        raw = text.encode("ascii")
        if len(raw.translate(None, _ASCII_SUSPECT)) == len(raw):
            return text
    elif _LINES_SUSPECT.search(text) is None:
        return text
    return _LINES_UNSAFE.sub(_escape, text)


# Characters json.dumps(ensure_ascii=False) leaves raw although a terminal may obey them.
_JSON_UNSAFE = re.compile("[\x7f-\x9f\u061c\u200e\u200f\u2028\u2029\u202a-\u202e\u2066-\u2069]")


def json_safe(json_text: str) -> str:
    """JSON text (from json.dumps with ensure_ascii=False) with DEL, C1 and the invisible
    bidirectional characters written as `\\uNNNN` escapes: the same JSON value, nothing a
    terminal obeys. (json.dumps already escapes C0.)"""
    if json_text.isascii() and "\x7f" not in json_text:
        return json_text
    return _JSON_UNSAFE.sub(lambda m: f"\\u{ord(m.group()):04x}", json_text)


def is_clean(text: str) -> bool:
    """True when `text` holds no control character but tab and line breaks (for tests and
    assertions)."""
    return _LINES_UNSAFE.search(text) is None


class GuardedStream(io.TextIOBase):
    """A text stream that writes through `visible_lines` to another one.

    A CR at the very end of a write is held back until the next write shows whether a line
    feed follows (CR LF is kept, a bare CR is escaped).
    """

    def __init__(self, inner: TextIO) -> None:
        super().__init__()
        self.inner = inner
        self._held_cr = False

    def write(self, text: str) -> int:
        n = len(text)
        if self._held_cr:
            text = "\r" + text
            self._held_cr = False
        if text.endswith("\r"):
            text = text[:-1]
            self._held_cr = True
        self.inner.write(visible_lines(text))
        return n

    def flush(self) -> None:
        if self._held_cr:
            self._held_cr = False
            self.inner.write("\\x0d")
        self.inner.flush()

    def writable(self) -> bool:
        return True

    def isatty(self) -> bool:
        return self.inner.isatty()

    def fileno(self) -> int:
        return self.inner.fileno()

    @property
    def encoding(self) -> str:  # type: ignore[override]
        return getattr(self.inner, "encoding", "utf-8")

    @property
    def errors(self) -> str | None:  # type: ignore[override]
        return getattr(self.inner, "errors", None)

    def __getattr__(self, name: str) -> Any:
        return getattr(self.inner, name)


@contextlib.contextmanager
def guarded_output() -> Iterator[None]:
    """Route sys.stdout and sys.stderr through `GuardedStream` while the block runs, then put
    the original streams back (the screen writes to the terminal through its own handle)."""
    out, err = sys.stdout, sys.stderr
    sys.stdout = GuardedStream(out)
    sys.stderr = GuardedStream(err)
    try:
        yield
    finally:
        for guarded in (sys.stdout, sys.stderr):
            with contextlib.suppress(Exception):
                guarded.flush()
        sys.stdout, sys.stderr = out, err

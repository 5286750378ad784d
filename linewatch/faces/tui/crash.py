"""What a crash of the screen leaves behind: one line on stderr and a file with the traceback.

Textual ends the app on an unhandled error with `App.return_code` 1 ("the app exited with a
fatal error", as that property documents) and prints its own full-screen traceback through
`App.error_console`. The app points that console at memory (`ErrorConsole`), so the traceback
is kept for a bug report instead of covering the terminal, and the caller prints one line: the
error as the traceback's last line states it, and where the whole of it was written.
"""

from __future__ import annotations

import io

from rich.console import Console

FATAL = 1  # App.return_code after an unhandled error
BOX_BOTTOM = ("╰", "+")  # how a traceback's frame box ends (Unicode, ASCII)
LONGEST = 300  # characters of the error kept for the one line


class ErrorConsole(Console):
    """A console that keeps what is printed to it, as plain text (no colours, no markup)."""

    def __init__(self) -> None:
        self.buffer = io.StringIO()
        super().__init__(file=self.buffer, markup=False, highlight=False, color_system=None,
                         width=1000)

    @property
    def text(self) -> str:
        return self.buffer.getvalue()


def error_line(report: str) -> str:
    """`Type: message` of the error a traceback ends with (its lines after the last frame box,
    which rich wrapped to the screen's width, joined again); '' when there is none."""
    lines = report.rstrip().splitlines()
    end = max((k for k, line in enumerate(lines) if line.startswith(BOX_BOTTOM)), default=-1)
    words = " ".join(line.strip() for line in lines[end + 1:] if line.strip())
    return words if len(words) <= LONGEST else words[: LONGEST - 1] + "…"


def kept(report: str) -> str:
    """Write the report to a new temporary file (for a bug report); its name, or '' when it
    cannot be written."""
    import tempfile

    try:
        with tempfile.NamedTemporaryFile("w", prefix="linewatch-crash-", suffix=".txt",
                                         delete=False, encoding="utf-8") as f:
            f.write(report)
    except OSError:
        return ""
    return f.name


def crash_words(report: str) -> str:
    """The error, and where its full traceback was written."""
    words = error_line(report) or "no error text"
    where = kept(report)
    return f"{words} (traceback in {where})" if where else words

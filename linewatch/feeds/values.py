"""What every reading path counts as a readable number and a time column, and how a value that
is not one is described: the per-line, JSON-lines and whole-buffer paths share these so they
accept and reject the same things with the same words."""

from __future__ import annotations

import math

from linewatch.domain.records import MAX_MAGNITUDE

TIME_NAMES = frozenset(
    {"time", "timestamp", "datetime", "date_time", "date", "ts", "time_utc", "timestamp_utc",
     "zeit", "measured_at", "recorded_at"}
)
_SHOWN = 40


def float_of(text: str, decimal_comma: bool) -> float | None:
    """`text` as a float (any magnitude, inf and nan included), None when it is no number."""
    t = text.strip()
    if not t or "_" in t:
        return None
    if decimal_comma:
        t = t.replace(",", ".")
    try:
        return float(t)
    except ValueError:
        return None


def in_range(v: float) -> bool:
    """A finite value whose magnitude is at most MAX_MAGNITUDE (see there for why)."""
    return -MAX_MAGNITUDE <= v <= MAX_MAGNITUDE


def parse_number(text: str, decimal_comma: bool) -> float | None:
    """The one definition of a readable number: None when `text` is not a finite number within
    ±MAX_MAGNITUDE."""
    v = float_of(text, decimal_comma)
    return v if v is not None and in_range(v) else None


def shown(text: str) -> str:
    """`text` quoted for a message, cut after a few dozen characters."""
    return repr(text if len(text) <= _SHOWN else text[:_SHOWN] + "…")


def out_of_range(quoted: str, where: str) -> str:
    """Why a finite number beyond ±MAX_MAGNITUDE is rejected."""
    return f"{quoted} in {where} is out of range (more than {MAX_MAGNITUDE:g} in magnitude)"


def value_problem(text: str, column: str, decimal_comma: bool) -> str:
    """Why the text of a CSV field is no readable number."""
    if not text.strip():
        return f"empty value in column '{column}'"
    v = float_of(text, decimal_comma)
    if v is not None and math.isfinite(v):
        return out_of_range(shown(text.strip()), f"column '{column}'")
    return f"{shown(text.strip())} in column '{column}' is not a number"


def is_time_name(name: str) -> bool:
    """A column or key named like a time (`TIME_NAMES`, any case, blanks ignored)."""
    return name.strip().lower() in TIME_NAMES


def lacking(expected: list[str], names: list[str], word: str = "column") -> list[str]:
    """The problem of a file that lacks columns asked for ("no column 'x'"), saying when
    nothing asked for is there at all; empty when it has them all."""
    missing = [c for c in expected if c not in names]
    if not missing:
        return []
    problem = f"no {word} " + ", ".join(f"'{c}'" for c in missing)
    if len(missing) == len(expected):
        problem += ", so nothing is charted from this file"
    return [problem]

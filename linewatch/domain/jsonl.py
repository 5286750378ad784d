"""The JSON-lines records that `check` and `watch --format jsonl` print, built in one place."""

from __future__ import annotations

import json
import math
from typing import Any, Protocol

from linewatch.domain.records import Rejected
from linewatch.domain.safe_text import json_safe


def _num(x: float | None) -> float | None:
    if x is None:
        return None
    x = float(x)
    return x if math.isfinite(x) else None


class ChartLimitFields(Protocol):
    """What a limits record needs of one chart's limits (the engine's `ChartLimits`)."""

    @property
    def chart(self) -> str: ...
    @property
    def center(self) -> float: ...
    @property
    def ucl(self) -> float: ...
    @property
    def lcl(self) -> float: ...
    @property
    def sigma(self) -> float: ...


def limits_record(characteristic: str, lim: ChartLimitFields) -> dict[str, Any]:
    return {
        "type": "limits",
        "characteristic": characteristic,
        "chart": lim.chart,
        "center": _num(lim.center),
        "ucl": _num(lim.ucl),
        "lcl": _num(lim.lcl),
        "sigma": _num(lim.sigma),
    }


def not_charted_record(characteristic: str, values: int, problem: str) -> dict[str, Any]:
    """A characteristic `check` could not chart (the others are charted)."""
    return {"type": "not-charted", "characteristic": characteristic, "values": values,
            "problem": problem}


def signal_record(
    characteristic: str, chart: str, rule: str, index: int, line: int, value: float,
    side: str | None = None,
) -> dict[str, Any]:
    """A rule fired at a plotted point; a detector's firing also says its `side` (up, down)."""
    record: dict[str, Any] = {
        "type": "signal",
        "characteristic": characteristic,
        "chart": chart,
        "rule": rule,
        "index": index,
        "line": line,
        "value": _num(value),
    }
    if side is not None:
        record["side"] = side
    return record


def detector_limits_record(
    characteristic: str, lim: ChartLimitFields, varies: bool, parameters: dict[str, float]
) -> dict[str, Any]:
    """The limits of a detector's chart (EWMA, CUSUM): a limits record that also says whether
    the limits widen from the start of a phase (`varies`) and the detector's parameters."""
    record = limits_record(characteristic, lim)
    record["varies"] = varies
    record["parameters"] = parameters
    return record


def rejected_record(r: Rejected) -> dict[str, Any]:
    return {"type": "rejected", "file": r.file, "line": r.line, "reason": r.reason}


def dumps(record: dict[str, Any]) -> str:
    """One compact JSON line (NaN and infinities never appear: they become null). Control
    characters of any kind are JSON escapes, so the line is safe on a terminal."""
    return json_safe(json.dumps(record, ensure_ascii=False, separators=(",", ":")))


def stepped_limits_record(characteristic: str, chart: str, center: float | None,
                          sigma: float | None, ucl: float | None, lcl: float | None,
                          varies: bool) -> dict[str, Any]:
    """The limits of a chart whose limits may step with the subgroup size: when they do, UCL
    and LCL are null here (each point record carries its own) and `varies` is true; a centre
    or σ that steps too is null."""
    return {
        "type": "limits",
        "characteristic": characteristic,
        "chart": chart,
        "center": _num(center),
        "ucl": None if varies else _num(ucl),
        "lcl": None if varies else _num(lcl),
        "sigma": _num(sigma),
        "varies": varies,
    }


def point_record(characteristic: str, chart: str, index: int, line: int, value: float,
                 n: float, center: float, ucl: float, lcl: float) -> dict[str, Any]:
    """One plotted point with its subgroup size and its own limits (`check --points`)."""
    return {
        "type": "point",
        "characteristic": characteristic,
        "chart": chart,
        "index": index,
        "line": line,
        "value": _num(value),
        "n": int(n) if float(n).is_integer() else float(n),
        "center": _num(center),
        "ucl": _num(ucl),
        "lcl": _num(lcl),
    }

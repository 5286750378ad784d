"""The --no-ui face: print the monitor's records as JSON lines or readable text."""

from __future__ import annotations

import sys
import threading
from typing import Any, TextIO

from linewatch.domain.jsonl import dumps
from linewatch.domain.safe_text import visible
from linewatch.domain.words import count


def _text(record: dict[str, Any]) -> str:
    """One readable line; every text field (names, files, reasons, details: all from outside)
    is shown through `visible`, so it stays on its line and cannot steer the terminal."""
    record = {k: visible(v) if isinstance(v, str) else v for k, v in record.items()}
    kind = record.get("type")
    if kind == "signal":
        where = f"{record.get('file') or ''}:{record.get('line')}"
        when = f" at {record['time']}" if record.get("time") else ""
        return (f"SIGNAL  {record['characteristic']} {record['chart']} rule {record['rule']} "
                f"point {record['index']} value {record['value']:.6g} ({where}{when})")
    if kind == "limits" and record.get("varies"):
        return (f"LIMITS  {record['characteristic']} {record['chart']}: CL "
                f"{record['center']:.6g}, limits step with each subgroup's size")
    if kind == "limits":
        return (f"LIMITS  {record['characteristic']} {record['chart']}: CL {record['center']:.6g} "
                f"UCL {record['ucl']:.6g} LCL {record['lcl']:.6g}")
    if kind == "rejected":
        return f"REJECT  {record['file']}:{record['line']}: {record['reason']}"
    if kind == "feed":
        detail = f" ({record['detail']})" if record.get("detail") else ""
        return f"FEED    {record['event']}: {record['file']}{detail}"
    if kind == "summary":
        mean = record.get("mean")
        sd = record.get("stdev")
        figures = "" if mean is None else f" mean {mean:.6g}"
        figures += "" if sd is None else f" SD {sd:.4g}"
        cpk = record.get("cpk")
        figures += "" if cpk is None else f" Cpk {cpk:.3g}"
        if record.get("attribute"):
            a = record["attribute"]
            figures = (f" {a['what']} {a['estimate']:.4g} (95% {a['lower']:.4g} to "
                       f"{a['upper']:.4g}; {a['ppm']:,.0f} ppm); Cp/Cpk do not apply")
        read = record.get("read")
        here = "" if read is None or read == record["points"] else f" ({read} read by this run)"
        return (f"SUMMARY {record['characteristic']}: {count(record['points'], 'point')}{here}, "
                f"{count(record['rejected'], 'rejected row')}{figures}")
    if kind == "progress":
        return (f"READING {record['done'] * 100:.0f}% of history, "
                f"{record['rows_per_second']:.0f} rows/s")
    if kind == "alarm":
        span = record["first_index"]
        if record.get("last_index") not in (None, span):
            span = f"{span}-{record['last_index']}"
        where = f" points {span}" if span is not None else ""
        ack = ""
        if record.get("acknowledged_by"):
            ack = f" by {record['acknowledged_by']} ({record.get('reason')})"
        return (f"ALARM   #{record['id']} p{record['priority']} {record['characteristic']} "
                f"{record['chart']} {record['rule']}{where}: {record['state']}{ack}")
    if kind == "plant-link":
        if record["state"] == "up":
            return f"PLANT   {record['line']}: link to the plant database up"
        return (f"PLANT   {record['line']}: link to the plant database down since "
                f"{record['since']}: {record.get('problem', '')} (the line goes on monitoring)")
    if kind == "role":
        return f"ROLE    this instance is the {record['role']}"
    rest = " ".join(f"{k}={visible(v)}" for k, v in record.items() if k != "type")
    return f"{str(kind).upper():<7} {rest}"


class Printer:
    """Writes records to a stream, one per line, flushed at once (a pipe sees them live)."""

    def __init__(self, fmt: str, stream: TextIO | None = None) -> None:
        self.fmt = fmt
        self.stream = stream or sys.stdout
        self._lock = threading.Lock()

    def __call__(self, record: dict[str, Any]) -> None:
        line = dumps(record) if self.fmt == "jsonl" else _text(record)
        with self._lock:
            self.stream.write(line + "\n")
            self.stream.flush()

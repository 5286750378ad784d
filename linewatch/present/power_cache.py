"""A small file cache of the simulated run lengths of the detection-power table.

A set that combines detectors with other rules (or trend rules) has no exact chain, and its
seeded simulation costs a few tenths of a second per table, which `check` would pay on every
run. The simulation is seeded, so its result for a parameter set and shift never changes: it is
kept in `$XDG_CACHE_HOME/linewatch/power-v1.json` (default `~/.cache`) and read back. Exact
figures are not kept (they are quicker to compute than to read). A cache that cannot be read or
written is ignored: the figures are computed as if it were not there."""

from __future__ import annotations

import json
import os
import tempfile
from collections.abc import Sequence
from pathlib import Path

from linewatch.engine.budget.power import ShiftRunLength, detection_power
from linewatch.engine.rulebook import DetectorSpec, RuleSpec

VERSION = 1
_loaded: dict[str, list[object]] | None = None


def cache_file() -> Path:
    base = os.environ.get("XDG_CACHE_HOME") or os.path.join(os.path.expanduser("~"), ".cache")
    return Path(base) / "linewatch" / f"power-v{VERSION}.json"


def _key(rules: Sequence[RuleSpec], detectors: Sequence[DetectorSpec], shift: float) -> str:
    r = sorted({(s.kind, s.length, s.k, s.zone) for s in rules})
    d = sorted(repr(x) for x in set(detectors))
    return json.dumps([r, d, round(float(shift), 9)])


def _load() -> dict[str, list[object]]:
    global _loaded
    if _loaded is None:
        try:
            data = json.loads(cache_file().read_text(encoding="utf-8"))
            _loaded = data if isinstance(data, dict) else {}
        except (OSError, ValueError):
            _loaded = {}
    return _loaded


def _save(entries: dict[str, list[object]]) -> None:
    path = cache_file()
    try:
        path.parent.mkdir(parents=True, exist_ok=True)
        fd, tmp = tempfile.mkstemp(dir=path.parent, prefix=".power-")
        with os.fdopen(fd, "w", encoding="utf-8") as f:
            json.dump(entries, f)
        os.replace(tmp, path)
    except OSError:
        pass


def cached_power(rules: Sequence[RuleSpec], detectors: Sequence[DetectorSpec],
                 shifts: Sequence[float]) -> tuple[ShiftRunLength, ...]:
    """`detection_power(rules, detectors, shifts)`, the simulated figures from the cache."""
    known = _load()
    out: list[ShiftRunLength | None] = []
    for s in shifts:
        hit = known.get(_key(rules, detectors, s))
        ok = isinstance(hit, list) and len(hit) == 3
        out.append(ShiftRunLength(float(s), float(hit[0]), str(hit[1]),  # type: ignore[arg-type,index]
                                  None if hit[2] is None else float(hit[2]))  # type: ignore[arg-type,index]
                   if ok else None)
    missing = [s for s, r in zip(shifts, out, strict=True) if r is None]
    if missing:
        found = dict(zip(missing, detection_power(rules, detectors, missing), strict=True))
        added = False
        for k, s in enumerate(shifts):
            if out[k] is None:
                r = found[s]
                out[k] = r
                if r.std_error is not None:
                    known[_key(rules, detectors, s)] = [r.arl, r.method, r.std_error]
                    added = True
        if added:
            _save(known)
    return tuple(r for r in out if r is not None)

"""One record per line from the central database: what the plant board shows.

Read from the forwarded tables only (the line PCs stay the authority): the alarms waiting for
someone by priority, the most urgent of them, the flood the line is in, feed-health alarms
(stale or stuck gauges), the link (the line's last contact with the central database and the
entries it said were waiting) and the age of its newest data.
"""

from __future__ import annotations

import json
from typing import Any

from linewatch.domain.alarm_states import AlarmKind
from linewatch.plant.schema import SCHEMA

LINK_LATE = 20.0  # seconds without contact after which a line's link counts as down (4 beats)

# state words, worst first, and their glyphs
STATES = {"link down": "✕", "alarm": "▲", "watch": "●", "ok": "✓"}


def line_records(conn: Any, now: float) -> list[dict[str, Any]]:
    """A `plant-line` record for each line the central database knows, by name."""
    lines = conn.execute(
        f"SELECT plant_line, host, last_contact, waiting, newest_data FROM {SCHEMA}.lines "
        "ORDER BY plant_line").fetchall()
    alarms = conn.execute(
        f"SELECT plant_line, id, kind, characteristic, chart, rule, priority, raised_at, "
        f"acknowledged, shelved_until, active FROM {SCHEMA}.alarms WHERE closed_at IS NULL"
    ).fetchall()
    floods = dict(conn.execute(
        f"SELECT plant_line, value FROM {SCHEMA}.meta WHERE key = 'alarm_flood'").fetchall())
    out = []
    for name, host, last_contact, waiting, newest in lines:
        mine = [a for a in alarms if a[0] == name]
        shelved = [a for a in mine if a[9] is not None and a[9] > now]
        calling = [a for a in mine if not a[8] and a not in shelved]
        by_priority: dict[str, int] = {}
        for a in calling:
            by_priority[str(a[6])] = by_priority.get(str(a[6]), 0) + 1
        top = min(calling, key=lambda a: (a[6], -a[7], -a[1]), default=None)
        flood = _flood(floods.get(name, ""))
        link_up = last_contact is not None and now - float(last_contact) <= LINK_LATE
        if not link_up:
            state = "link down"
        elif calling:
            state = "alarm"
        elif len(mine) > len(shelved):
            state = "watch"
        else:
            state = "ok"
        out.append({
            "type": "plant-line", "line": name, "host": host, "state": state,
            "glyph": STATES[state],
            "waiting": dict(sorted(by_priority.items())),
            "acknowledged": sum(1 for a in mine if a[8]), "shelved": len(shelved),
            "most_urgent": None if top is None else {
                "alarm": top[1], "priority": top[6], "characteristic": top[3],
                "kind": top[2], "chart": top[4], "rule": top[5], "raised_at": top[7],
                "active": bool(top[10])},
            "flood": flood,
            "stale_feeds": sum(1 for a in mine if a[2] == AlarmKind.FEED_HEALTH),
            "link": "up" if link_up else "down", "last_contact": last_contact,
            "entries_waiting": int(waiting or 0),
            "newest_data_age": None if newest is None else max(0.0, now - float(newest)),
        })
    return out


def _flood(value: str) -> dict[str, Any] | None:
    """The flood the line is in (its `alarm_flood` meta value), or None."""
    if not value:
        return None
    try:
        flood = json.loads(value)
    except ValueError:
        return None
    return flood if isinstance(flood, dict) else None

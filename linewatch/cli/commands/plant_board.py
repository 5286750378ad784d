"""`linewatch plant board --no-ui`: every line's state from the central database, once."""

from __future__ import annotations

import json
import time
from typing import Any

from linewatch.cli.options import PlantBoardOptions
from linewatch.domain.errors import LinewatchError
from linewatch.domain.safe_text import json_safe, visible


def text_line(r: dict[str, Any]) -> str:
    """One line for people: state, line, waiting by priority, the most urgent, link, age."""
    waiting = " ".join(f"P{p}×{n}" for p, n in r["waiting"].items()) or "none waiting"
    top = r["most_urgent"]
    what = (f"{visible(top['characteristic'])} {visible(top['kind'])} {visible(top['rule'])}"
            if top else "-")
    flood = f" flood {r['flood'].get('count', '?')}" if r["flood"] else ""
    age = "-" if r["newest_data_age"] is None else f"{r['newest_data_age']:.0f} s"
    link = r["link"] + (f" ({r['entries_waiting']} waiting)" if r["entries_waiting"] else "")
    return (f"{r['glyph']} {r['state']:<9} {visible(r['line']):<16} {waiting:<16} {what}"
            f"{flood} | stale feeds {r['stale_feeds']} | link {link} | newest {age}")


def run(options: PlantBoardOptions) -> int:
    from linewatch.plant.central import require_current, session
    from linewatch.plant.overview import line_records
    from linewatch.plant.url import ENV_URL, plant_url

    url = plant_url(options.url) if options.url is None else options.url.strip()
    if not url:
        raise LinewatchError(f"give the central database's URL (--url), or set {ENV_URL}")
    if not options.no_ui:
        from linewatch.faces.tui.plant_board import PlantBoardApp
        from linewatch.present.plant_face import CentralFace

        face = CentralFace(url)
        face.lines()  # a database that cannot be read is told now, in one line
        try:
            return int(PlantBoardApp(face).run() or 0)
        finally:
            face.close()
    with session(url) as conn:
        require_current(conn, url)
        records = line_records(conn, time.time())
    for r in records:
        if options.format == "jsonl":
            print(json_safe(json.dumps(r, ensure_ascii=False)))
        else:
            print(text_line(r))
    return 0

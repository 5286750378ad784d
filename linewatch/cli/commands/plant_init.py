"""`linewatch plant init [URL]`: create the central database's tables, or bring them forward."""

from __future__ import annotations

from linewatch.cli.options import PlantInitOptions
from linewatch.domain.errors import LinewatchError


def run(options: PlantInitOptions) -> int:
    """Migrate the central database; says what it found and what it did (password hidden)."""
    from linewatch.plant.central import migrate, session
    from linewatch.plant.url import ENV_URL, plant_url, redact

    url = plant_url(options.url) if options.url is None else options.url.strip()
    if not url:
        raise LinewatchError(f"give the central database's URL, or set {ENV_URL}")
    with session(url) as conn:
        before, now = migrate(conn)
    where = redact(url)
    if before == now:
        print(f"plant database {where}: schema {now}, up to date (nothing to do)")
    elif before == 0:
        print(f"plant database {where}: created the linewatch schema (version {now})")
    else:
        print(f"plant database {where}: brought forward from schema {before} to {now}")
    return 0

"""SQLite store of one state directory. No UI imports. One module per part:

- db.py          `Store`: the file, permissions, migrations (schema.py), nested transactions,
                 change notice (`data_version`, `change_token`)
- ingest.py      `store.ingest`: file positions and per-characteristic engine state
- points.py      `store.history`: points, limits history, feed events, characteristic settings
- alarm_rows.py  `store.alarms`: alarm rows and their derived ISA-18.2 state
- audit.py       `store.audit`: the hash-chained, append-only audit trail
- lease.py       `Lease`: which instance collects
- actor.py       who acts (OS user, SSH client address)

The alarm lifecycle itself lives in `linewatch.alarms.lifecycle`.
"""

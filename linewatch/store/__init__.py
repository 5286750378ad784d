"""SQLite store of one state directory. No UI imports. One module per part:

- db.py          `Store`: the file, permissions, the connection, nested transactions,
                 migrations (schema.py), change notice (`data_version`, `change_token`)
- ingest.py      `store.ingest`: file positions, per-file counts, per-characteristic engine state
- points.py      `store.history`: points, limits history, feed events, characteristic settings
- alarm_rows.py  `store.alarms`: alarm rows and their derived ISA-18.2 state
- audit.py       `store.audit`: the hash-chained, append-only audit trail
- anchors.py     the trail's head kept outside the store (anchor file, syslog) and checked
- requests.py    `store.requests`: new-baseline requests, asked by anyone, carried out once
- meta.py        `store.meta`: the few single values of the key-value `meta` table
- lease.py       `Lease`: which instance collects
- actor.py       who acts (OS user, SSH client address)

The alarm lifecycle itself lives in `linewatch.alarms.book`.
"""

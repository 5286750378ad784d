"""The store's tables as an ordered list of migrations; version N is MIGRATIONS[N - 1].

A migration is never edited once released: a change to the schema is a new entry at the end, so a
state directory written by an older linewatch is brought forward step by step on open.
"""

from __future__ import annotations

MIGRATIONS: tuple[str, ...] = (
    # 1: ingest state, points, limits, feed events, alarms, audit chain, collector lease.
    """
    CREATE TABLE meta (
        key   TEXT PRIMARY KEY,
        value TEXT NOT NULL
    );
    CREATE TABLE files (
        path        TEXT PRIMARY KEY,
        dev         INTEGER NOT NULL,
        inode       INTEGER NOT NULL,
        fingerprint TEXT NOT NULL,
        offset      INTEGER NOT NULL CHECK (offset >= 0),
        next_line   INTEGER NOT NULL CHECK (next_line >= 1),
        updated_at  REAL NOT NULL
    );
    CREATE TABLE engine_state (
        characteristic TEXT PRIMARY KEY,
        state          TEXT NOT NULL,
        updated_at     REAL NOT NULL
    );
    CREATE TABLE characteristics (
        name           TEXT PRIMARY KEY,
        unit           TEXT NOT NULL DEFAULT '',
        lsl            REAL,
        usl            REAL,
        reasons        TEXT NOT NULL,
        reaction_plan  TEXT NOT NULL DEFAULT '',
        reaction_plans TEXT NOT NULL DEFAULT '{}'
    );
    CREATE TABLE points (
        characteristic TEXT NOT NULL,
        idx            INTEGER NOT NULL,
        value          REAL NOT NULL,
        line           INTEGER NOT NULL,
        file           TEXT NOT NULL,
        time           TEXT,
        received_at    REAL NOT NULL,
        PRIMARY KEY (characteristic, idx)
    ) WITHOUT ROWID;
    CREATE INDEX points_by_time ON points (received_at);
    CREATE TABLE limits (
        id             INTEGER PRIMARY KEY,
        characteristic TEXT NOT NULL,
        chart          TEXT NOT NULL,
        phase          INTEGER NOT NULL,
        start_index    INTEGER NOT NULL,
        center         REAL NOT NULL,
        ucl            REAL NOT NULL,
        lcl            REAL NOT NULL,
        sigma          REAL NOT NULL,
        reason         TEXT NOT NULL DEFAULT '',
        set_at         REAL NOT NULL
    );
    CREATE INDEX limits_by_characteristic ON limits (characteristic, chart, set_at);
    CREATE TABLE feed_events (
        id     INTEGER PRIMARY KEY,
        at     REAL NOT NULL,
        kind   TEXT NOT NULL,
        file   TEXT NOT NULL,
        detail TEXT NOT NULL DEFAULT ''
    );
    CREATE INDEX feed_events_by_time ON feed_events (at);
    CREATE TABLE alarms (
        id                INTEGER PRIMARY KEY,
        kind              TEXT NOT NULL,
        characteristic    TEXT NOT NULL,
        chart             TEXT NOT NULL,
        rule              TEXT NOT NULL,
        first_index       INTEGER,
        last_index        INTEGER,
        priority          INTEGER NOT NULL,
        raised_at         REAL NOT NULL,
        updated_at        REAL NOT NULL,
        active            INTEGER NOT NULL CHECK (active IN (0, 1)),
        acknowledged      INTEGER NOT NULL DEFAULT 0 CHECK (acknowledged IN (0, 1)),
        acknowledged_by   TEXT,
        acknowledged_from TEXT,
        acknowledged_at   REAL,
        reason            TEXT,
        note              TEXT,
        shelved_until     REAL,
        shelved_by        TEXT,
        shelve_reason     TEXT,
        returned_at       REAL,
        closed_at         REAL,
        file              TEXT,
        detail            TEXT NOT NULL DEFAULT ''
    );
    CREATE INDEX alarms_open ON alarms (closed_at, characteristic, chart, rule);
    CREATE INDEX alarms_by_time ON alarms (raised_at);
    CREATE TABLE audit (
        seq       INTEGER PRIMARY KEY,
        at        REAL NOT NULL,
        actor     TEXT NOT NULL,
        action    TEXT NOT NULL,
        subject   TEXT NOT NULL,
        payload   TEXT NOT NULL,
        prev_hash TEXT NOT NULL,
        hash      TEXT NOT NULL
    );
    CREATE INDEX audit_by_time ON audit (at);
    CREATE TRIGGER audit_no_update BEFORE UPDATE ON audit
        BEGIN SELECT RAISE(ABORT, 'the audit trail is append-only'); END;
    CREATE TRIGGER audit_no_delete BEFORE DELETE ON audit
        BEGIN SELECT RAISE(ABORT, 'the audit trail is append-only'); END;
    CREATE TABLE lease (
        id          INTEGER PRIMARY KEY CHECK (id = 1),
        holder      TEXT NOT NULL,
        pid         INTEGER NOT NULL,
        host        TEXT NOT NULL,
        acquired_at REAL NOT NULL,
        expires_at  REAL NOT NULL
    );
    """,
    # 2: period queries per characteristic (report, detail) use one index instead of a scan.
    """
    DROP INDEX points_by_time;
    CREATE INDEX points_by_characteristic_time ON points (characteristic, received_at);
    """,
    # 3: how each characteristic is charted, so readers without the config (report, viewers)
    # need not infer the subgroup size from the limits.
    """
    ALTER TABLE characteristics ADD COLUMN subgroup_size INTEGER;
    ALTER TABLE characteristics ADD COLUMN dispersion TEXT;
    """,
    # 4: the header a file is read under (JSON list), for files that begin without one.
    """
    ALTER TABLE files ADD COLUMN header TEXT;
    """,
    # 5: the feed view asks per file for its newest point, its recent rows and its rejects,
    # and a close-up for the alarms over its shown points; without these each refresh of the
    # screen scanned every point, every event and every alarm ever raised.
    """
    CREATE INDEX points_by_file_time ON points (file, received_at);
    CREATE INDEX feed_events_by_file ON feed_events (file, kind, at);
    CREATE INDEX alarms_by_characteristic ON alarms (characteristic, last_index);
    """,
    # 6: which key (if any) an audit entry's hash is an HMAC with, so keyless entries written
    # before a key was configured stay verifiable beside keyed ones.
    """
    ALTER TABLE audit ADD COLUMN key_id TEXT;
    """,
    # 7: one alarm per condition: an alarm gathers the episodes of one chart (or of one
    # characteristic's nonconforming measurements) and counts what it saw; a flood of alarms
    # and characteristic-wide shelves are remembered across restarts.
    """
    ALTER TABLE alarms ADD COLUMN signals INTEGER NOT NULL DEFAULT 0;
    ALTER TABLE alarms ADD COLUMN episodes INTEGER NOT NULL DEFAULT 1;
    ALTER TABLE alarms ADD COLUMN rules TEXT NOT NULL DEFAULT '{}';
    ALTER TABLE alarms ADD COLUMN below_lsl INTEGER;
    ALTER TABLE alarms ADD COLUMN above_usl INTEGER;
    ALTER TABLE alarms ADD COLUMN escalated_at REAL;
    ALTER TABLE alarms ADD COLUMN episode_first INTEGER;
    CREATE INDEX alarms_by_chart ON alarms (characteristic, chart, closed_at);
    CREATE TABLE shelves (
        characteristic TEXT PRIMARY KEY,
        until          REAL NOT NULL,
        actor          TEXT NOT NULL,
        reason         TEXT NOT NULL
    );
    """,
    # 8: the points at which each rule fired, so a chart marks exactly the signalling points
    # (an alarm spans quiet points between its firings).
    """
    CREATE TABLE signals (
        characteristic TEXT NOT NULL,
        chart          TEXT NOT NULL,
        idx            INTEGER NOT NULL,
        rule           TEXT NOT NULL,
        PRIMARY KEY (characteristic, idx, chart, rule)
    ) WITHOUT ROWID;
    """,
    # 9: new-baseline requests get a table of their own (they were `meta` keys named
    # "baseline-request:<name>" and "phase-request:<name>:<phase>"). Requests not yet taken up
    # are brought over as pending, carried-out ones as done with the phase they started (when
    # they were asked is not known); the old keys go. A characteristic's name is the key
    # between the prefix and, for a phase request, the last ':' (rtrim of the phase's digits).
    """
    CREATE TABLE baseline_requests (
        id             INTEGER PRIMARY KEY,
        characteristic TEXT NOT NULL,
        start_index    INTEGER NOT NULL CHECK (start_index >= 0),
        reason         TEXT NOT NULL,
        actor          TEXT,
        asked_at       REAL,
        state          TEXT NOT NULL DEFAULT 'pending'
                       CHECK (state IN ('pending', 'done', 'failed', 'replaced')),
        phase          INTEGER,
        settled_at     REAL,
        problem        TEXT NOT NULL DEFAULT ''
    );
    CREATE INDEX baseline_requests_by_state ON baseline_requests (state, characteristic);
    CREATE INDEX baseline_requests_by_phase ON baseline_requests (characteristic, phase);
    INSERT INTO baseline_requests (characteristic, start_index, reason, actor, state, phase)
        SELECT substr(rtrim(key, '0123456789'), 15, length(rtrim(key, '0123456789')) - 15),
               json_extract(value, '$.start'), coalesce(json_extract(value, '$.reason'), ''),
               json_extract(value, '$.actor'), 'done',
               CAST(substr(key, length(rtrim(key, '0123456789')) + 1) AS INTEGER)
        FROM meta
        WHERE substr(key, 1, 14) = 'phase-request:' AND json_valid(value)
              AND json_type(value, '$.start') = 'integer' AND json_extract(value, '$.start') >= 0
              AND substr(key, length(rtrim(key, '0123456789')) + 1) != ''
        ORDER BY key;
    INSERT INTO baseline_requests (characteristic, start_index, reason, actor, state)
        SELECT substr(key, 18), json_extract(value, '$.start'),
               coalesce(json_extract(value, '$.reason'), ''), json_extract(value, '$.actor'),
               'pending'
        FROM meta
        WHERE substr(key, 1, 17) = 'baseline-request:' AND json_valid(value)
              AND json_type(value, '$.start') = 'integer' AND json_extract(value, '$.start') >= 0
        ORDER BY key;
    DELETE FROM meta
        WHERE substr(key, 1, 14) = 'phase-request:' OR substr(key, 1, 17) = 'baseline-request:';
    """,
    # 10: the outbox of a line with a plant link: one entry per committed change of a forwarded
    # table (entered by triggers that `store/outbox.py` creates when the link is set up), and
    # the position up to which the central database has confirmed them; requests from the
    # central database carried out here, so each is carried out once.
    """
    CREATE TABLE outbox (
        seq INTEGER PRIMARY KEY AUTOINCREMENT,
        tbl TEXT NOT NULL,
        key TEXT NOT NULL,
        op  TEXT NOT NULL CHECK (op IN ('put', 'drop'))
    );
    CREATE TABLE outbox_position (
        id       INTEGER PRIMARY KEY CHECK (id = 1),
        sent     INTEGER NOT NULL DEFAULT 0,
        armed_at REAL
    );
    INSERT INTO outbox_position (id, sent) VALUES (1, 0);
    CREATE TABLE plant_requests (
        central_id INTEGER PRIMARY KEY,
        action     TEXT NOT NULL,
        state      TEXT NOT NULL CHECK (state IN ('done', 'failed')),
        result     TEXT NOT NULL,
        settled_at REAL NOT NULL,
        reported   INTEGER NOT NULL DEFAULT 0 CHECK (reported IN (0, 1))
    );
    """,
    # 11: points of charts whose limits step (subgroups of varying size, attribute charts):
    # the plotted statistic with its subgroup size and its own limits, which raw readings
    # alone cannot give back; NULL limits while the phase's baseline is forming.
    """
    CREATE TABLE stepped_points (
        characteristic TEXT NOT NULL,
        chart          TEXT NOT NULL,
        idx            INTEGER NOT NULL,
        value          REAL NOT NULL,
        n              REAL NOT NULL,
        center         REAL,
        ucl            REAL,
        lcl            REAL,
        sigma          REAL,
        phase          INTEGER NOT NULL,
        line           INTEGER NOT NULL,
        file           TEXT,
        time           TEXT,
        PRIMARY KEY (characteristic, chart, idx)
    ) WITHOUT ROWID;
    """,
)

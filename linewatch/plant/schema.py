"""The central database's tables, as an ordered list of migrations (version N is
MIGRATIONS[N - 1]), kept in the PostgreSQL schema `linewatch`.

Each forwarded table mirrors the line store's table of the same name column for column (a test
holds them equal), with two more: `plant_line`, the line's name from its config, first in the
primary key, and `fwd_seq`, the line's outbox position of the commit that last wrote the row.
A migration is never edited once released; a change is a new entry at the end, applied by
`linewatch plant init` (idempotent, safe to run from several places at once).
"""

from __future__ import annotations

SCHEMA = "linewatch"
CHANGES_CHANNEL = "linewatch_changes"  # NOTIFY payload: the line whose rows changed
REQUESTS_CHANNEL = "linewatch_requests"  # NOTIFY payload: the line a request waits for

MIGRATIONS: tuple[str, ...] = (
    # 1: every line's forwarded rows, the lines themselves, and requests made centrally.
    """
    CREATE TABLE linewatch.lines (
        plant_line    text PRIMARY KEY,
        host          text NOT NULL DEFAULT '',
        first_seen    double precision NOT NULL,
        last_contact  double precision NOT NULL,
        forwarded_seq bigint NOT NULL DEFAULT 0,
        waiting       bigint NOT NULL DEFAULT 0,
        newest_data   double precision
    );
    CREATE TABLE linewatch.meta (
        plant_line text NOT NULL,
        key        text NOT NULL,
        value      text NOT NULL,
        fwd_seq    bigint NOT NULL,
        PRIMARY KEY (plant_line, key)
    );
    CREATE TABLE linewatch.characteristics (
        plant_line     text NOT NULL,
        name           text NOT NULL,
        unit           text NOT NULL DEFAULT '',
        lsl            double precision,
        usl            double precision,
        reasons        text NOT NULL,
        reaction_plan  text NOT NULL DEFAULT '',
        reaction_plans text NOT NULL DEFAULT '{}',
        subgroup_size  bigint,
        dispersion     text,
        fwd_seq        bigint NOT NULL,
        PRIMARY KEY (plant_line, name)
    );
    CREATE TABLE linewatch.points (
        plant_line     text NOT NULL,
        characteristic text NOT NULL,
        idx            bigint NOT NULL,
        value          double precision NOT NULL,
        line           bigint NOT NULL,
        file           text NOT NULL,
        time           text,
        received_at    double precision NOT NULL,
        fwd_seq        bigint NOT NULL,
        PRIMARY KEY (plant_line, characteristic, idx)
    );
    CREATE INDEX points_by_time ON linewatch.points (plant_line, characteristic, received_at);
    CREATE TABLE linewatch.limits (
        plant_line     text NOT NULL,
        id             bigint NOT NULL,
        characteristic text NOT NULL,
        chart          text NOT NULL,
        phase          bigint NOT NULL,
        start_index    bigint NOT NULL,
        center         double precision NOT NULL,
        ucl            double precision NOT NULL,
        lcl            double precision NOT NULL,
        sigma          double precision NOT NULL,
        reason         text NOT NULL DEFAULT '',
        set_at         double precision NOT NULL,
        fwd_seq        bigint NOT NULL,
        PRIMARY KEY (plant_line, id)
    );
    CREATE INDEX limits_by_characteristic
        ON linewatch.limits (plant_line, characteristic, chart, set_at);
    CREATE TABLE linewatch.feed_events (
        plant_line text NOT NULL,
        id         bigint NOT NULL,
        at         double precision NOT NULL,
        kind       text NOT NULL,
        file       text NOT NULL,
        detail     text NOT NULL DEFAULT '',
        fwd_seq    bigint NOT NULL,
        PRIMARY KEY (plant_line, id)
    );
    CREATE INDEX feed_events_by_time ON linewatch.feed_events (plant_line, at);
    CREATE TABLE linewatch.alarms (
        plant_line        text NOT NULL,
        id                bigint NOT NULL,
        kind              text NOT NULL,
        characteristic    text NOT NULL,
        chart             text NOT NULL,
        rule              text NOT NULL,
        first_index       bigint,
        last_index        bigint,
        priority          bigint NOT NULL,
        raised_at         double precision NOT NULL,
        updated_at        double precision NOT NULL,
        active            bigint NOT NULL,
        acknowledged      bigint NOT NULL DEFAULT 0,
        acknowledged_by   text,
        acknowledged_from text,
        acknowledged_at   double precision,
        reason            text,
        note              text,
        shelved_until     double precision,
        shelved_by        text,
        shelve_reason     text,
        returned_at       double precision,
        closed_at         double precision,
        file              text,
        detail            text NOT NULL DEFAULT '',
        signals           bigint NOT NULL DEFAULT 0,
        episodes          bigint NOT NULL DEFAULT 1,
        rules             text NOT NULL DEFAULT '{}',
        below_lsl         bigint,
        above_usl         bigint,
        escalated_at      double precision,
        episode_first     bigint,
        fwd_seq           bigint NOT NULL,
        PRIMARY KEY (plant_line, id)
    );
    CREATE INDEX alarms_open ON linewatch.alarms (plant_line, closed_at);
    CREATE TABLE linewatch.signals (
        plant_line     text NOT NULL,
        characteristic text NOT NULL,
        chart          text NOT NULL,
        idx            bigint NOT NULL,
        rule           text NOT NULL,
        fwd_seq        bigint NOT NULL,
        PRIMARY KEY (plant_line, characteristic, idx, chart, rule)
    );
    CREATE TABLE linewatch.shelves (
        plant_line     text NOT NULL,
        characteristic text NOT NULL,
        until          double precision NOT NULL,
        actor          text NOT NULL,
        reason         text NOT NULL,
        fwd_seq        bigint NOT NULL,
        PRIMARY KEY (plant_line, characteristic)
    );
    CREATE TABLE linewatch.baseline_requests (
        plant_line     text NOT NULL,
        id             bigint NOT NULL,
        characteristic text NOT NULL,
        start_index    bigint NOT NULL,
        reason         text NOT NULL,
        actor          text,
        asked_at       double precision,
        state          text NOT NULL,
        phase          bigint,
        settled_at     double precision,
        problem        text NOT NULL DEFAULT '',
        fwd_seq        bigint NOT NULL,
        PRIMARY KEY (plant_line, id)
    );
    CREATE TABLE linewatch.audit (
        plant_line text NOT NULL,
        seq        bigint NOT NULL,
        at         double precision NOT NULL,
        actor      text NOT NULL,
        action     text NOT NULL,
        subject    text NOT NULL,
        payload    text NOT NULL,
        prev_hash  text NOT NULL,
        hash       text NOT NULL,
        key_id     text,
        fwd_seq    bigint NOT NULL,
        PRIMARY KEY (plant_line, seq)
    );
    CREATE INDEX audit_by_time ON linewatch.audit (plant_line, at);
    CREATE FUNCTION linewatch.audit_append_only() RETURNS trigger LANGUAGE plpgsql AS $$
    BEGIN
        RAISE EXCEPTION 'the audit trail is append-only';
    END $$;
    CREATE TRIGGER audit_no_change BEFORE UPDATE OR DELETE ON linewatch.audit
        FOR EACH ROW EXECUTE FUNCTION linewatch.audit_append_only();
    CREATE TABLE linewatch.requests (
        id             bigserial PRIMARY KEY,
        plant_line     text NOT NULL,
        action         text NOT NULL
                       CHECK (action IN ('acknowledge', 'shelve', 'unshelve', 'new-baseline')),
        alarm_id       bigint,
        characteristic text,
        reason         text NOT NULL DEFAULT '',
        note           text NOT NULL DEFAULT '',
        seconds        double precision,
        start_index    bigint,
        actor          text NOT NULL,
        host           text NOT NULL,
        asked_at       double precision NOT NULL,
        state          text NOT NULL DEFAULT 'pending'
                       CHECK (state IN ('pending', 'done', 'failed')),
        result         text NOT NULL DEFAULT '',
        settled_at     double precision
    );
    CREATE INDEX requests_waiting ON linewatch.requests (plant_line, state, id);
    CREATE FUNCTION linewatch.request_notify() RETURNS trigger LANGUAGE plpgsql AS $$
    BEGIN
        IF TG_OP = 'INSERT' THEN
            PERFORM pg_notify('linewatch_requests', NEW.plant_line);
        END IF;
        PERFORM pg_notify('linewatch_changes', NEW.plant_line);
        RETURN NULL;
    END $$;
    CREATE TRIGGER requests_notify AFTER INSERT OR UPDATE ON linewatch.requests
        FOR EACH ROW EXECUTE FUNCTION linewatch.request_notify();
    """,
    # 2: which line store feeds a line (a second PC configured with the same line name is
    # refused instead of mixing two stores' rows).
    """
    ALTER TABLE linewatch.lines ADD COLUMN store_id text;
    """,
)

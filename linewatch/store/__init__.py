"""SQLite store: schema, ingest state, alarms, audit chain, collector lease. No UI imports."""

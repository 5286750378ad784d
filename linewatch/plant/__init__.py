"""The plant link: the central PostgreSQL database every line forwards to (its schema and
migrations, the connection, the redaction of its URL, the forwarding of a line's outbox)."""

"""The feeds part of the picture the screen draws, built from a real store."""

from __future__ import annotations

from linewatch.domain.records import FeedEvent, FileState
from linewatch.present.snapshot import feed_views
from linewatch.store.db import Store


def test_a_pattern_that_found_its_file_is_not_listed_as_waiting(tmp_path):
    store = Store(tmp_path / "state")
    with store.transaction():
        store.history.add_feed_event(FeedEvent("waiting", "/logs/wall*.csv", "no file yet"), 1.0)
        store.history.add_feed_event(FeedEvent("waiting", "/other/*.csv", "no file yet"), 1.0)
        store.history.add_feed_event(FeedEvent("appeared", "/logs/wall.csv", "reading"), 2.0)
        store.ingest.save_file(FileState("/logs/wall.csv", 1, 2, "4:ab", 120, 11), 2.0)
        store.history.add_feed_event(FeedEvent("rejected", "/logs/wall.csv", "line 7: junk"), 3.0)
    views = {v.file: v for v in feed_views(store, now=10.0, stale_after=600)}
    assert set(views) == {"/logs/wall.csv", "/other/*.csv"}
    wall = views["/logs/wall.csv"]
    assert wall.rows == 10  # lines read: next line is 11
    assert wall.rejected == 1 and wall.last_rejects == ["line 7: junk"]
    assert views["/other/*.csv"].status == "waiting"
    store.close()

"""Fixtures for the store tests: a fresh store and alarm book in a temporary state directory."""

from __future__ import annotations

from collections.abc import Iterator
from pathlib import Path

import pytest

from linewatch.alarms.book import AlarmBook
from linewatch.store.actor import Actor
from linewatch.store.db import Store


@pytest.fixture
def store(tmp_path: Path) -> Iterator[Store]:
    with Store(tmp_path / "state") as s:
        yield s


@pytest.fixture
def book(store: Store) -> AlarmBook:
    return AlarmBook(store)


@pytest.fixture
def operator() -> Actor:
    return Actor("operator1", "10.1.2.3")


# -- a real PostgreSQL server for the plant tests (see tests/pg_server.py) ---------------------


@pytest.fixture(scope="session")
def pg_server() -> Iterator[str]:
    """The URL of a running PostgreSQL server (superuser, database `postgres`)."""
    import os

    from tests.pg_server import ENV_URL, Cluster, wait_ready

    given = os.environ.get(ENV_URL, "").strip()
    if given:
        wait_ready(given)
        yield given
        return
    cluster = Cluster.create()
    try:
        cluster.start()
        wait_ready(cluster.url)
        yield cluster.url
    finally:
        cluster.remove()


@pytest.fixture
def plant_db(pg_server: str) -> Iterator[str]:
    """The URL of a new, empty database of its own for one test."""
    from tests.pg_server import drop_database, fresh_database

    url = fresh_database(pg_server)
    yield url
    drop_database(pg_server, url)


@pytest.fixture
def own_pg() -> Iterator[object]:
    """A PostgreSQL cluster of this test's own (`tests.pg_server.Cluster`, started), for tests
    that stop or restart the server."""
    from tests.pg_server import Cluster, wait_ready

    cluster = Cluster.create()
    try:
        cluster.start()
        wait_ready(cluster.url)
        yield cluster
    finally:
        cluster.remove()

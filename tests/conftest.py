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

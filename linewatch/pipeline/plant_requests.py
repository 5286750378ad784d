"""Requests made centrally (acknowledge, shelve, unshelve, new baseline), carried out on the
line exactly as the shell commands do them, with the central actor's name and host as the
actor, and recorded in `plant_requests` in the same transaction, so each is carried out once
whatever fails before its result reaches the central database."""

from __future__ import annotations

import time
from typing import TYPE_CHECKING

from linewatch.domain.clock import iso_time
from linewatch.domain.errors import LinewatchError
from linewatch.domain.safe_text import visible
from linewatch.store.actor import Actor

if TYPE_CHECKING:
    from linewatch.alarms.book import AlarmBook
    from linewatch.plant.forward import CentralRequest, LineLink
    from linewatch.store.db import Store

DONE, FAILED = "done", "failed"


def carry_out(store: Store, book: AlarmBook, request: CentralRequest, now: float) -> (
    tuple[str, str]
):
    """Do what `request` asks, once; returns (state, result in words). A request that was
    carried out before (its result did not reach the central database) is not done again."""
    known = store.query("SELECT state, result FROM plant_requests WHERE central_id = ?",
                        (request.id,))
    if known:
        return str(known[0][0]), str(known[0][1])
    actor = Actor(request.actor or "unknown", request.host or None)
    try:
        with store.transaction() as conn:
            result = _perform(store, book, request, actor, now)
            conn.execute(
                "INSERT INTO plant_requests (central_id, action, state, result, settled_at) "
                "VALUES (?, ?, ?, ?, ?)", (request.id, request.action, DONE, result, now))
        return DONE, result
    except LinewatchError as exc:
        problem = str(exc)
        with store.transaction() as conn:
            conn.execute(
                "INSERT INTO plant_requests (central_id, action, state, result, settled_at) "
                "VALUES (?, ?, ?, ?, ?)", (request.id, request.action, FAILED, problem, now))
        return FAILED, problem


def settle_waiting(store: Store, book: AlarmBook, link: LineLink) -> int:
    """Carry out every request waiting for this line and write each result back; returns how
    many were settled."""
    settled = 0
    for request in link.pending():
        now = time.time()
        state, result = carry_out(store, book, request, now)
        link.settle(request.id, state, result, now)
        with store.transaction() as conn:
            conn.execute("UPDATE plant_requests SET reported = 1 WHERE central_id = ?",
                         (request.id,))
        settled += 1
    return settled


def _perform(store: Store, book: AlarmBook, r: CentralRequest, actor: Actor,
             now: float) -> str:
    """The action itself (inside the caller's transaction); its result in words."""
    if r.action == "acknowledge":
        if r.alarm_id is not None:
            events = book.acknowledge([r.alarm_id], r.reason, r.note, now, actor)
            closed = any(e.action == "closed" for e in events)
            return (f"alarm {r.alarm_id} acknowledged"
                    + (" and closed (already back to normal)" if closed else ""))
        name = _known(book, r.characteristic)
        count = book.acknowledge_characteristic(name, r.reason, r.note, now, actor)
        return f"acknowledged {count} alarm{'s' if count != 1 else ''} of {visible(name)}"
    if r.action == "shelve":
        if r.seconds is None or not r.seconds > 0:
            raise LinewatchError("a shelve request needs a duration (seconds) above 0")
        if r.alarm_id is not None:
            events = book.shelve(r.alarm_id, r.seconds, r.reason, now, actor)
            shelved = [e.alarm for e in events if e.action == "shelved" and e.alarm is not None]
            until = shelved[-1].shelved_until if shelved else None
            return f"alarm {r.alarm_id} shelved until {iso_time(until)}"
        name = _known(book, r.characteristic)
        count = book.shelve_characteristic(name, r.seconds, r.reason, now, actor)
        return (f"{visible(name)} shelved ({count} open alarm{'s' if count != 1 else ''}, and "
                "any it raises meanwhile)")
    if r.action == "unshelve":
        if r.alarm_id is None:
            raise LinewatchError("an unshelve request names one alarm")
        book.unshelve(r.alarm_id, now, actor)
        return f"alarm {r.alarm_id} unshelved"
    if r.action == "new-baseline":
        name = _known(book, r.characteristic)
        plotted = _plotted_points(store, name)
        start = plotted if r.start_index is None else int(r.start_index)
        if not 0 <= start <= plotted:
            raise LinewatchError(f"{visible(name)} has plotted points 0..{plotted - 1}; a new "
                                 f"phase can start at 0..{plotted}")
        store.requests.ask(name, start, r.reason, actor=str(actor), now=now)
        return (f"new baseline for {visible(name)} from point {start} asked for; the line's "
                "collector sets it on its next beat")
    raise LinewatchError(f"unknown request {r.action!r}")


def _known(book: AlarmBook, name: str | None) -> str:
    if not name:
        raise LinewatchError("the request names no alarm and no characteristic")
    if name not in book.known_characteristics():
        raise LinewatchError(f"no characteristic {visible(name)} on this line")
    return name


def _plotted_points(store: Store, name: str) -> int:
    """Plotted points of the characteristic so far (readings / subgroup size)."""
    readings = int(store.query("SELECT COUNT(*) FROM points WHERE characteristic = ?",
                               (name,))[0][0])
    settings = store.history.settings(name)
    n = settings.subgroup_size if settings is not None and settings.subgroup_size else 1
    return readings // n

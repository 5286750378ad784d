"""`linewatch alarms list|ack|shelve|unshelve`: the alarm list and its actions from the shell.

Every action is one transaction: bad input (unknown id, empty or unknown reason, bad duration)
changes nothing and exits 2 with a one-line message.
"""

from __future__ import annotations

import sys
from typing import TYPE_CHECKING

from linewatch.cli.options import (
    AckOptions,
    AlarmListOptions,
    AlarmsOptions,
    ShelveOptions,
    UnshelveOptions,
)
from linewatch.domain.errors import LinewatchError
from linewatch.domain.safe_text import visible

if TYPE_CHECKING:
    from linewatch.alarms.book import AlarmBook


def run(options: AlarmsOptions) -> int:
    """Carry out the action `options` is for; returns the exit code."""
    from linewatch.alarms.book import AlarmBook
    from linewatch.cli.commands._store_args import open_existing

    store, config = open_existing(options)
    try:
        book = AlarmBook(store, config)
        match options:
            case AlarmListOptions():
                return _list(book, options)
            case AckOptions():
                return _ack(book, options)
            case ShelveOptions():
                return _shelve(book, options)
            case UnshelveOptions():
                book.unshelve(options.id)
                print(f"alarm {options.id} unshelved")
                return 0
    finally:
        store.close()


def _list(book: AlarmBook, options: AlarmListOptions) -> int:
    import time

    from linewatch.alarms.book import urgency
    from linewatch.domain.clock import iso_time
    from linewatch.domain.jsonl import dumps

    now = time.time()
    records = sorted(book.alarms(include_closed=options.all), key=urgency)
    out = sys.stdout
    if options.format == "jsonl":
        for alarm in records:
            out.write(dumps(book.list_record(alarm, now)) + "\n")
        return 0
    if not records:
        out.write("no alarms\n" if options.all else "no open alarms\n")
        return 0
    from linewatch.alarms.book import rule_summary

    header = ("ID", "PRI", "STATE", "RAISED", "CHARACTERISTIC", "CHART", "FIRST", "POINTS",
              "EPISODES", "SIGNALS", "ACK")
    rows = []
    for a in records:
        points = "" if a.first_index is None else f"{a.first_index}-{a.last_index}"
        ack = f"{a.acknowledged_by}: {a.reason}" if a.acknowledged else ""
        raised = (iso_time(a.raised_at) or "").replace("T", " ")[:19]
        rows.append(tuple(visible(cell) for cell in (  # names and reasons come from outside
            str(a.id), str(a.priority), a.state(now), raised, a.characteristic, a.chart, a.rule,
            points, str(a.episodes), rule_summary(a), ack)))
    widths = [max(len(h), *(len(r[i]) for r in rows)) for i, h in enumerate(header)]
    for line in (header, *rows):
        out.write("  ".join(c.ljust(w) for c, w in zip(line, widths, strict=True)).rstrip() + "\n")
    return 0


def _ack(book: AlarmBook, options: AckOptions) -> int:
    if options.characteristic and options.ids:
        raise LinewatchError("give alarm ids or --characteristic, not both")
    if options.characteristic:
        _known_characteristic(book, options.characteristic)
        count = book.acknowledge_characteristic(
            options.characteristic, options.reason, options.note)
        print(f"acknowledged {count} alarm{'s' if count != 1 else ''} of "
              f"{visible(options.characteristic)}")
        return 0
    if not options.ids:
        raise LinewatchError("give the ids of the alarms to acknowledge, or --characteristic")
    for event in book.acknowledge(options.ids, options.reason, options.note):
        a = event.alarm
        if a is None:
            continue
        if event.action == "acknowledged":
            print(f"alarm {a.id} acknowledged ({visible(a.reason)})")
        elif event.action == "closed":
            print(f"alarm {a.id} closed (already back to normal)")
    return 0


def _shelve(book: AlarmBook, options: ShelveOptions) -> int:
    from linewatch.domain.clock import iso_time
    from linewatch.domain.durations import parse_duration

    try:
        seconds = parse_duration(options.duration, need_unit=True)
    except ValueError as exc:
        raise LinewatchError(f"--for: {exc}") from None
    if options.characteristic and options.id is None:
        name = _known_characteristic(book, options.characteristic)
        count = book.shelve_characteristic(name, seconds, options.reason)
        print(f"{visible(name)} shelved for {options.duration} "
              f"({count} open alarm{'s' if count != 1 else ''}, and any it raises meanwhile)")
        return 0
    if options.characteristic or options.id is None:
        raise LinewatchError("give one alarm id or --characteristic NAME")
    events = book.shelve(options.id, seconds, options.reason)
    shelved = [e.alarm for e in events if e.action == "shelved" and e.alarm is not None]
    print(f"alarm {options.id} shelved until {iso_time(shelved[-1].shelved_until)}")
    return 0


def _known_characteristic(book: AlarmBook, name: str) -> str:
    """`name` when the store knows such a characteristic (or a file with feed alarms); else an
    error listing the known ones (a typo acknowledges or shelves nothing, and says so)."""
    known = book.known_characteristics()
    if name not in known:
        listed = ", ".join(visible(k) for k in known) or "none yet"
        raise LinewatchError(f"no characteristic {visible(name)!s} (known: {listed})")
    return name

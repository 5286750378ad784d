"""Names asked for (`--column`) that no followed file holds, when rows name their
characteristic one by one (long CSV, JSON objects with a name key): no header tells, so it is
said once every file has been read to its end, listing the characteristics there are, and said
again when such a name turns up later (the warning stays: it was true when said). Wide headers
and first JSON objects say what they lack themselves, per file (`RowParser`)."""

from __future__ import annotations

from collections.abc import Iterable

from linewatch.domain.records import FeedEvent


class AskedNames:
    """What the files followed so far have named, against the names asked for.

    `where` is what the warning is about (the patterns of the feeds whose rows name their
    characteristic); `found_before` are names known to be there already (stored points of an
    earlier run, whose rows are not read again).
    """

    def __init__(self, asked: Iterable[str], where: str,
                 found_before: Iterable[str] = ()) -> None:
        self.asked = list(dict.fromkeys(asked))
        self.where = where
        self.seen: dict[str, None] = {}  # every name met, in order of first appearance
        self.before = set(found_before)
        self.rows_named = False  # a file whose rows name their characteristic was read
        self.missing: list[str] | None = None  # None until said (or found needless)

    @property
    def listening(self) -> bool:
        """False once nothing more can be said: nothing asked, or every name was met."""
        return bool(self.asked) and self.missing != []

    def met(self, file: str, names: Iterable[str], rows_named: bool) -> list[FeedEvent]:
        """The names one file holds so far; a name said missing that is among them is said to
        have appeared."""
        self.rows_named = self.rows_named or rows_named
        events = []
        for name in names:
            if name in self.seen:
                continue
            self.seen[name] = None
            if self.missing and name in self.missing:
                self.missing.remove(name)
                events.append(FeedEvent(
                    "found", self.where, f"characteristic '{name}' appeared in {file}"))
        return events

    def read_through(self) -> list[FeedEvent]:
        """Every followed file has been read to its end: the asked names none holds, once."""
        if self.missing is not None or not self.rows_named:
            return []
        self.missing = [n for n in self.asked if n not in self.seen and n not in self.before]
        if not self.missing:
            return []
        names = ", ".join(f"'{n}'" for n in self.missing)
        there = ", ".join(self.seen) or "none yet"
        return [FeedEvent("warning", self.where,
                          f"no characteristic {names} (characteristics: {there})")]

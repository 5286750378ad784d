"""Counted nouns in messages: "1 file", "2 files", never "1 files"."""

from __future__ import annotations


def count(n: int, word: str, plural: str | None = None) -> str:
    """`n` and `word` in the number that `n` takes ("1 new row", "3 new rows"); `plural` for
    a word that does not just take an s ("1 entry", "2 entries")."""
    return f"{n} {word if n == 1 else (plural or word + 's')}"

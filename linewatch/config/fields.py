"""The declared default of a dataclass field, so that readers of a file or of the command line
take their defaults from the one dataclass that declares them instead of repeating them."""

from __future__ import annotations

import dataclasses
from typing import Any


def field_default(cls: type[Any], name: str) -> Any:
    """The default `cls` gives field `name` (a fresh value for a default_factory field).

    Raises LookupError for a field with no default or no such field: a caller asking for it
    has drifted from the dataclass."""
    for f in dataclasses.fields(cls):
        if f.name != name:
            continue
        if f.default is not dataclasses.MISSING:
            return f.default
        if f.default_factory is not dataclasses.MISSING:
            return f.default_factory()
        raise LookupError(f"{cls.__name__}.{name} has no default")
    raise LookupError(f"{cls.__name__} has no field {name!r}")


def field_names(cls: type[Any]) -> set[str]:
    """The names of the fields of dataclass `cls`."""
    return {f.name for f in dataclasses.fields(cls)}

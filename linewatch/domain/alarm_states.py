"""The states an alarm can be in (ISA-18.2 / IEC 62682 wording), shared by every layer."""

from __future__ import annotations

UNACKNOWLEDGED = "unacknowledged"
ACKNOWLEDGED = "acknowledged"
RETURNED_UNACKNOWLEDGED = "returned-unacknowledged"
NORMAL = "normal"
SHELVED = "shelved"
OPEN_STATES = (UNACKNOWLEDGED, ACKNOWLEDGED, RETURNED_UNACKNOWLEDGED, SHELVED)

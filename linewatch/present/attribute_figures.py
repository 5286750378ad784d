"""The capability of an attribute characteristic from its stored points: the overall
proportion nonconforming (p, np, Laney p′) or defects per unit (c, u, Laney u′) with its exact
95% interval and ppm. Cp and Cpk do not apply (`attribute_capability.NOT_APPLICABLE`)."""

from __future__ import annotations

from typing import TYPE_CHECKING, Any

from linewatch.engine.attribute_capability import (
    NOT_APPLICABLE,
    AttributeCapability,
    proportion_capability,
    rate_capability,
)

if TYPE_CHECKING:
    from linewatch.config.model import CharacteristicConfig
    from linewatch.store.db import Store

POINTS_READ = 100_000


def attribute_capability(store: Store, c: CharacteristicConfig) -> AttributeCapability | None:
    """Overall figure over the stored points of `c`'s chart (None: not attribute data, or no
    point yet)."""
    chart = c.effective_chart
    if chart is None:
        return None
    recs = store.stepped.last(c.name, chart, POINTS_READ)
    if not recs:
        return None
    if chart in ("p", "laney-p"):
        events = sum(round(r.value * r.n) for r in recs)
        return proportion_capability(events, int(sum(r.n for r in recs)))
    if chart == "np":
        return proportion_capability(int(sum(r.value for r in recs)),
                                     int(sum(r.n for r in recs)))
    if chart == "c":
        return rate_capability(int(sum(r.value for r in recs)), float(len(recs)))
    events = sum(round(r.value * r.n) for r in recs)
    return rate_capability(int(events), float(sum(r.n for r in recs)))


def capability_record(cap: AttributeCapability) -> dict[str, Any]:
    """A JSON-ready form for summaries: what, estimate, interval, ppm and why no Cpk."""
    what = "proportion nonconforming" if cap.kind == "proportion" else "defects per unit"
    return {"what": what, "estimate": cap.estimate, "lower": cap.lower, "upper": cap.upper,
            "ppm": cap.ppm[0], "events": cap.events, "exposure": cap.exposure,
            "cpk": NOT_APPLICABLE}

"""The saved state of a `SteppedEngine`: a JSON-ready form from which it is rebuilt exactly.

Saved with the file offsets in one transaction, like `live_state`: the subgroup still open (its
values and the rows they came from), the phase, its Phase I figures, the standardised points
the rule counters are rebuilt from and the recent subgroups a new baseline may reach back to. A
state saved under another setup or clock offset starts afresh.
"""

from __future__ import annotations

from typing import Any

from linewatch.engine.attribute_charts import AttributeModel
from linewatch.engine.live_state import signature as fixed_signature
from linewatch.engine.setup import ChartSetup
from linewatch.engine.stepped_live import Model, SteppedEngine, Subgroup
from linewatch.engine.subgroup_collector import SubgroupCollector
from linewatch.engine.variable_limits import SizeModel

STATE_HISTORY = 500  # of the kept subgroups, how many are saved with the state


def signature(setup: ChartSetup) -> str:
    """What a saved state depends on (the clock offset the windows were cut by is saved
    with it and kept, so a change of summer time does not move an open window)."""
    s = setup
    return (f"stepped|{fixed_signature(setup)}|{s.subgroups}|{s.window}|{s.timeout}|"
            f"{s.attribute_chart}")


def _model_to_list(m: Model | None) -> list[Any] | None:
    if m is None:
        return None
    if isinstance(m, SizeModel):
        return ["size", m.center, m.sigma, m.dispersion, m.source]
    return ["attribute", m.chart, m.center, m.source, m.sigma_z, m.size]


def _model_from_list(a: list[Any] | None) -> Model | None:
    if a is None:
        return None
    if a[0] == "size":
        return SizeModel(*a[1:])
    return AttributeModel(*a[1:])


def _sub_to_list(s: Subgroup) -> list[Any]:
    return [s.index, s.n, s.value, s.spread, s.row, s.phase, s.meta, s.judged]


def _collector_to_dict(c: SubgroupCollector) -> dict[str, Any]:
    return {"label": c._label, "open": c._open, "values": c._values, "meta": c._meta,
            "last_time": c._last_time, "rows": c._rows}


def save_stepped(engine: SteppedEngine) -> dict[str, Any]:
    """A JSON-ready snapshot from which `restore_stepped` rebuilds `engine` exactly."""
    hist = list(engine.history)[-STATE_HISTORY:]
    return {
        "signature": signature(engine.setup),
        "offset": engine.offset,
        "rows_seen": engine.rows_seen,
        "next_index": engine.next_index,
        "phase": engine.phase,
        "phase_start": engine.phase_start,
        "phase_baseline": engine.phase_baseline,
        "problem": engine.problem,
        "model": _model_to_list(engine.model),
        "history": [_sub_to_list(s) for s in hist],
        "waiting": [_sub_to_list(s) for s in engine.waiting],  # (whole: a baseline may reach
        # back past the saved history)
        "fed": {k: list(v) for k, v in engine.fed.items()},
        "collector": _collector_to_dict(engine.collector),
    }


def restore_stepped(setup: ChartSetup, state: dict[str, Any], offset: float = 0.0
                    ) -> SteppedEngine:
    """Rebuild an engine saved by `save_stepped`; a state from another setup starts afresh
    (at the clock `offset` given)."""
    if state.get("signature") != signature(setup):
        return SteppedEngine(setup, offset)
    engine = SteppedEngine(setup, float(state["offset"]))
    engine.rows_seen = state["rows_seen"]
    engine.next_index = state["next_index"]
    engine.phase = state["phase"]
    engine.phase_start = state["phase_start"]
    engine.phase_baseline = state["phase_baseline"]
    engine.problem = state["problem"]
    engine.model = _model_from_list(state["model"])
    for a in state["history"]:
        engine.history.append(Subgroup(*a))
    by_index = {s.index: s for s in engine.history}
    engine.waiting = [by_index.get(a[0]) or Subgroup(*a) for a in state["waiting"]]
    engine._reset_rules()
    for chart, recent in state["fed"].items():
        if chart in engine.rules:
            engine.fed[chart].extend(recent)
            engine.rules[chart].replay(list(engine.fed[chart]))
    c = state["collector"]
    col = engine.collector
    col._label, col._open, col._values, col._meta = c["label"], c["open"], c["values"], c["meta"]
    col._last_time, col._rows = c["last_time"], c["rows"]
    return engine

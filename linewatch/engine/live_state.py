"""The live engine's saved state: a JSON-ready form from which an engine is rebuilt exactly.

The collector saves it in the same transaction as the file offsets, so after a crash the engine
continues from the last commit as if it had never stopped: same phase, same limits, same rule
counters, the recent plotted points a new baseline may reach back to. A state saved under
another setup (`signature`) is not reused: the engine then starts afresh.
"""

from __future__ import annotations

from typing import Any

from linewatch.engine.limits import ChartLimits, LimitSet
from linewatch.engine.live import VECTOR_MIN, CharacteristicEngine, PlottedPoint
from linewatch.engine.setup import ChartSetup

STATE_HISTORY = 500  # of the kept plotted points, how many are saved with the state


def signature(setup: ChartSetup) -> str:
    """What a saved state depends on; a state saved under another setup is not reused."""
    rules = ",".join(f"{r.id}:{r.length}" for r in setup.rules)
    s = setup
    return f"{s.subgroup_size}|{s.dispersion}|{rules}|{s.baseline}|{s.center}|{s.sigma}"


def _limits_to_dict(lim: LimitSet) -> dict[str, Any]:
    def chart(c: ChartLimits) -> list[Any]:
        return [c.chart, c.center, c.ucl, c.lcl, c.sigma]

    return {"location": chart(lim.location), "dispersion": chart(lim.dispersion),
            "sigma_within": lim.sigma_within, "source": lim.source}


def _limits_from_dict(d: dict[str, Any]) -> LimitSet:
    return LimitSet(ChartLimits(*d["location"]), ChartLimits(*d["dispersion"]),
                    d["sigma_within"], d["source"])


def _point_to_list(p: PlottedPoint | None) -> list[Any] | None:
    if p is None:
        return None
    return [p.index, p.value, p.row, p.phase, p.judged, p.rules, p.meta]


def _point_from_list(chart: str, a: list[Any]) -> PlottedPoint:
    """A point saved by `_point_to_list` (callers skip the None of a missing dispersion point)."""
    return PlottedPoint(chart, a[0], a[1], a[2], a[3], a[4], list(a[5]), a[6])


def save_state(engine: CharacteristicEngine) -> dict[str, Any]:
    """A JSON-ready snapshot from which `restore_engine` rebuilds `engine` exactly."""
    disp_by_index = {d.index: d for d in engine.disp_history}
    hist = list(engine.loc_history)[-STATE_HISTORY:]
    return {
        "signature": signature(engine.setup),
        "values_seen": engine.values_seen,
        "pending": engine.pending,
        "prev_value": engine.prev_value,
        "phase": engine.phase,
        "phase_start": engine.phase_start,
        "phase_baseline": engine.phase_baseline,
        "next_index": engine.next_index,
        "problem": engine.problem,
        "limits": _limits_to_dict(engine.limits) if engine.limits else None,
        "waiting": [[_point_to_list(p), _point_to_list(d)] for p, d in engine.waiting],
        "history": [[_point_to_list(p), _point_to_list(disp_by_index.get(p.index))]
                    for p in hist],
        "loc_fed": list(engine.loc_fed),
        "disp_fed": list(engine.disp_fed),
    }


def restore_engine(
    setup: ChartSetup, state: dict[str, Any], vector_min: int = VECTOR_MIN
) -> CharacteristicEngine:
    """Rebuild an engine saved by `save_state`; a state from another setup starts afresh."""
    engine = CharacteristicEngine(setup, vector_min)
    if state.get("signature") != signature(setup):
        return engine
    engine.values_seen = state["values_seen"]
    engine.pending = list(state["pending"])
    engine.prev_value = state["prev_value"]
    engine.phase = state["phase"]
    engine.phase_start = state["phase_start"]
    engine.phase_baseline = state["phase_baseline"]
    engine.next_index = state["next_index"]
    engine.problem = state.get("problem")
    loc_c, disp_c = engine.loc_chart, engine.disp_chart
    for p, d in state["history"]:
        engine.loc_history.append(_point_from_list(loc_c, p))
        if d is not None:
            engine.disp_history.append(_point_from_list(disp_c, d))
    by_index = {p.index: p for p in engine.loc_history}
    dby_index = {d.index: d for d in engine.disp_history}
    engine.waiting = []
    for p, d in state["waiting"]:
        lp = by_index.get(p[0]) or _point_from_list(loc_c, p)
        dp = None if d is None else (dby_index.get(d[0]) or _point_from_list(disp_c, d))
        engine.waiting.append((lp, dp))
    if state["limits"] is None:
        engine.limits = engine.loc_rules = engine.disp_rules = None
    else:
        engine.resume(_limits_from_dict(state["limits"]), state["loc_fed"], state["disp_fed"])
    return engine

"""`check --format jsonl`'s records of an investigation: one `phase` record per phase, one
`comparison` per pair compared, one `regression` per characteristic fitted on a setting (keys
in the README). Figures that do not exist are null."""

from __future__ import annotations

import math
from typing import TYPE_CHECKING, Any

if TYPE_CHECKING:
    from linewatch.cli.commands.check import Analysis


def _clean(value: Any) -> Any:
    """JSON-ready: tuples become lists, NaN and infinities null."""
    if isinstance(value, float):
        return value if math.isfinite(value) else None
    if isinstance(value, tuple | list):
        return [_clean(v) for v in value]
    if isinstance(value, dict):
        return {k: _clean(v) for k, v in value.items()}
    return value


def investigation_records(a: Analysis) -> list[dict[str, Any]]:
    from linewatch.engine.phase_compare import sentence, spread_sentence

    name = a.config.name
    out: list[dict[str, Any]] = []
    ph = a.phased
    if ph is not None:
        for p in ph.phases:
            d, c = p.description, p.capability
            lim = p.limits
            line = int(a.column.lines[p.start]) if p.stop > p.start else None
            out.append({
                "type": "phase", "characteristic": name, "phase": p.number, "label": p.label,
                "first_point": p.first_point, "points": p.points, "first_line": line,
                "n": d.points,
                "limits": None if lim is None else ("first" if p.carried else "own"),
                "center": None if lim is None else lim.location.center,
                "ucl": None if lim is None else lim.location.ucl,
                "lcl": None if lim is None else lim.location.lcl,
                "sigma_within": p.own_sigma,
                "mean": d.mean, "stdev": d.stdev, "ci95": d.ci95, "min": d.minimum,
                "q1": d.q1, "median": d.median, "q3": d.q3, "max": d.maximum,
                "outliers": [[i + p.start, v] for i, v in d.outliers],
                "cp": c.cp, "cp_ci95": c.cp_ci95, "cpk": c.cpk, "cpk_ci95": c.cpk_ci95,
                "pp": c.pp, "ppk": c.ppk, "ppm_out": c.ppm_out,
                "signals": p.signals, "signals_by_rule": p.signals_by_rule,
                "problem": p.problem or None,
            })
        for cmp in ph.comparisons:
            out.append({"type": "comparison", "characteristic": name, **cmp.to_dict(),
                        "sentence": sentence(cmp, unit=a.config.unit),
                        "spread_sentence": spread_sentence(cmp)})
    r = a.regression
    if r is not None:
        rec: dict[str, Any] = {"type": "regression", "characteristic": name,
                               "setting": r.setting, "of": r.of, "n": int(r.points.shape[1]),
                               "left_out": r.left_out, "problem": r.problem or None}
        if r.fit is not None:
            rec.update(r.fit.to_dict())
            rec["n"] = r.fit.n
        if r.prediction is not None:
            pr = r.prediction
            rec.update({"at": pr.at, "mean_at": pr.mean, "mean_at_ci95": pr.mean_ci95,
                        "prediction95": pr.prediction95})
        if r.inverse is not None:
            inv = r.inverse
            rec.update({"target": inv.target, "setting_for_target": inv.setting,
                        "setting_for_target_ci95": inv.interval,
                        "setting_for_target_note": inv.reason or None})
        out.append(rec)
    return [_clean(x) for x in out]

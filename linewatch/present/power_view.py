"""The detection-power table as the faces and the text outputs show it: plain figures and
their layout in fixed-width lines (standard library only, so the screen may import it).

A table holds, for one rule set, the expected points to a signal after a sustained mean shift
(0 is in control: points to the first false alarm) at each shift of the plotted statistic and,
where subgroups are charted, at the same shifts of the individual values."""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass

APPROX = "≈"  # marks a run length from the seeded simulation
LABEL_WIDTH = 27
CELL_WIDTH = 8


@dataclass(frozen=True, slots=True)
class PowerRow:
    """Expected points to a signal at each shift; `unit` says whose σ the shifts are in."""

    unit: str  # "points" (the plotted statistic) or "values" (individual values)
    shifts: tuple[float, ...]
    run_lengths: tuple[float, ...]  # math.inf: no rule can fire
    simulated: tuple[bool, ...]


@dataclass(frozen=True, slots=True)
class PowerTable:
    """One rule set's detection power."""

    rule_set: str  # the ids, comma-separated, as the user would type them
    rows: tuple[PowerRow, ...]
    subgroup_size: int = 1
    worst_relative_error: float = 0.0  # of the simulated figures (standard error / ARL)

    @property
    def in_control(self) -> float:
        return self.rows[0].run_lengths[0]

    @property
    def false_alarms_per_1000(self) -> float:
        arl = self.in_control
        return 0.0 if math.isinf(arl) else 1000.0 / arl

    @property
    def simulated(self) -> bool:
        return any(any(r.simulated) for r in self.rows)


def run_length_text(arl: float, simulated: bool = False) -> str:
    """Three significant figures (whole numbers from 100), "never" when nothing can fire."""
    if math.isinf(arl) or math.isnan(arl):
        return "never"
    text = f"{arl:.0f}" if arl >= 99.95 else f"{arl:#.3g}"
    return (APPROX if simulated else "") + text


def _shift_text(shift: float) -> str:
    return f"{shift:g}"


def _unit_words(row: PowerRow, n: int) -> str:
    return "(σ of means)" if row.unit == "points" and n > 1 else (
        "(σ of values)" if row.unit == "values" else "(σ)")


def table_lines(table: PowerTable, indent: str = "   ", label: int = LABEL_WIDTH,
                cell: int = CELL_WIDTH) -> list[str]:
    """The table of one set across (fits 80 columns as it is): shifts, then points to
    detect; `label` and `cell` narrow it for a pane."""
    out = [f"{indent}detection power of {table.rule_set} (known limits):"]
    for row in table.rows:
        words = f"mean shift {_unit_words(row, table.subgroup_size)}"
        cells = "".join(f"{_shift_text(s):>{cell}}" for s in row.shifts)
        out.append(f"{indent}  {words:<{label}}{cells}")
        cells = "".join(f"{run_length_text(a, s):>{cell}}"
                        for a, s in zip(row.run_lengths, row.simulated, strict=True))
        out.append(f"{indent}  {'points to detect':<{label}}{cells}")
    out.append(f"{indent}  false alarms per 1,000 points in control (1,000/ARL₀): "
               f"{table.false_alarms_per_1000:.2f}")
    if table.simulated:
        out.append(f"{indent}  {APPROX}: seeded simulation (standard error within "
                   f"{100 * table.worst_relative_error:.1f}%); others exact")
    return out


def comparison_lines(tables: Sequence[PowerTable], width: int = 80) -> list[str]:
    """Several sets side by side, a column each (letters keyed to the sets above the table),
    as many columns as fit `width`; more sets continue in a second block."""
    out: list[str] = []
    letters = [chr(ord("A") + i) for i in range(len(tables))]
    for letter, t in zip(letters, tables, strict=True):
        out.append(f"{letter}  {t.rule_set}")
    out.append("")
    label = 22
    fit = max(1, (width - label) // (CELL_WIDTH + 2))
    for start in range(0, len(tables), fit):
        block = list(range(start, min(start + fit, len(tables))))
        head = "".join(f"{letters[i]:>{CELL_WIDTH + 2}}" for i in block)
        for r, row in enumerate(tables[block[0]].rows):
            n = tables[block[0]].subgroup_size
            out.append(f"{'mean shift ' + _unit_words(row, n):<{label}}{head}")
            for k, shift in enumerate(row.shifts):
                name = f"{_shift_text(shift)}" + (" (in control)" if shift == 0 else "")
                cells = "".join(
                    f"{run_length_text(tables[i].rows[r].run_lengths[k], tables[i].rows[r].simulated[k]):>{CELL_WIDTH + 2}}"  # noqa: E501
                    for i in block)
                out.append(f"  {name:<{label - 2}}{cells}")
        cells = "".join(f"{tables[i].false_alarms_per_1000:>{CELL_WIDTH + 2}.2f}" for i in block)
        out.append(f"{'false alarms /1,000':<{label}}{cells}")
        out.append("")
    out.append("expected points to a signal after a sustained shift of the mean, known limits")
    if any(t.simulated for t in tables):
        worst = max(t.worst_relative_error for t in tables)
        out.append(f"{APPROX}: seeded simulation (standard error within {100 * worst:.1f}%); "
                   "others exact Markov chains")
    return out

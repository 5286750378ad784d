"""`check`'s investigation of a change: the log split into phases by a column or at plotted
points, each phase charted and described, consecutive phases compared, and the characteristic
regressed on a setting column of the same rows. The statistics are the engine's
(`engine.phases`, `engine.phase_compare`, `engine.setting_regression`); this module finds each
reading's phase label and setting and hands them over."""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import TYPE_CHECKING

import numpy as np

if TYPE_CHECKING:
    from linewatch.cli.commands.check import Analysis, Column
    from linewatch.cli.options import CheckOptions
    from linewatch.config.model import CharacteristicConfig, Config


@dataclass(slots=True)
class SideData:
    """Side columns of every log read: per log, column -> line number -> text."""

    by_file: list[dict[str, dict[int, str]]] = field(default_factory=list)
    decimal_comma: list[bool] = field(default_factory=list)

    def texts(self, column: Column, name: str) -> list[str | None]:
        """The column's text on each reading's own row (None where the row has none)."""
        out: list[str | None] = []
        for f, line in zip(column.file_index.tolist(), column.lines.tolist(), strict=True):
            out.append(self.by_file[f].get(name, {}).get(line))
        return out

    def numbers(self, column: Column, name: str) -> np.ndarray:
        from linewatch.feeds.side_columns import as_numbers

        texts = self.texts(column, name)
        comma = self.decimal_comma
        files = column.file_index.tolist()
        out = [as_numbers([t], comma[f])[0] for t, f in zip(texts, files, strict=True)]
        return np.asarray(out, dtype=float)


def side_names(options: CheckOptions, config: Config) -> list[str]:
    """The columns read beside the characteristics: phase columns and the setting."""
    names = [options.phase_by] if options.phase_by else []
    if not options.phase_at and not options.phase_by:
        names += [c.phase_by for c in config.characteristics if c.phase_by]
    if options.versus:
        names.append(options.versus)
    return list(dict.fromkeys(n for n in names if n))


def wants_investigation(options: CheckOptions, c: CharacteristicConfig) -> bool:
    return bool(options.phase_by or options.phase_at or c.phase_by or options.versus)


def investigate(a: Analysis, options: CheckOptions, side: SideData) -> None:
    """Fill in `a.phased` and `a.regression` (and chart `a` by phase) as the options ask."""
    from linewatch.engine.phases import analyse_phases, starts_from_labels, starts_from_points
    from linewatch.engine.setting_regression import regress_on_setting

    c = a.config
    values = a.column.values
    phase_by = options.phase_by or (None if options.phase_at else c.phase_by)
    starts: list[int] = [0]
    if phase_by:
        texts = side.texts(a.column, phase_by)
        keyed = ["" if t is None else t for t in texts]
        starts = starts_from_labels(keyed)
        labels = [f"{phase_by} {keyed[s] or '(empty)'}" for s in starts]
    elif options.phase_at:
        starts = starts_from_points(options.phase_points(), c.subgroup_size, values.shape[0])
        labels = [f"from point {s // c.subgroup_size}" for s in starts]
    if phase_by or options.phase_at:
        share = (options.practical_percent if options.practical_percent is not None
                 else c.practical_share) / 100.0
        a.phased = analyse_phases(values, a.setup, starts, labels, mode=options.limits,
                                  lsl=c.lsl, usl=c.usl, practical_share=share)
        a.result = a.phased.result
    if options.versus:
        target = options.target if options.target is not None else c.target
        a.regression = regress_on_setting(
            values, side.numbers(a.column, options.versus), setting=options.versus,
            subgroup_size=c.subgroup_size, starts=starts, degree=options.degree,
            at=options.at, target=target)

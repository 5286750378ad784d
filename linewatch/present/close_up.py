"""The close-up's figures: the box plot of recent readings and the trend of the last plotted
points. Computed (with numpy) where the detail is read, in a worker thread or the collector, so
the screen only draws them."""

from __future__ import annotations

from collections.abc import Sequence

from linewatch.engine.summary import describe, trend
from linewatch.present.view import BoxFigures, CharacteristicView, CloseUpFigures, TrendFigures

TREND_WINDOW = 30  # plotted points in the trend fit
BOX_VALUES = 100  # recent values in the box plot


def box_figures(values: Sequence[float]) -> BoxFigures | None:
    """Quartiles, Tukey's 1.5·IQR whiskers and the outliers of `values` (the engine's
    `describe`); None when there is nothing finite to draw."""
    fig = describe(list(values))
    if fig.q1 is None or fig.q3 is None or fig.median is None or fig.whisker_low is None \
            or fig.whisker_high is None:
        return None
    return BoxFigures(fig.points, fig.q1, fig.median, fig.q3, fig.whisker_low, fig.whisker_high,
                      tuple(sorted(v for _, v in fig.outliers)), fig.stdev)


def trend_figures(values: Sequence[float], lsl: float | None, usl: float | None) -> TrendFigures:
    """The least-squares trend of `values` and, when significant, the points to a spec limit."""
    fit = trend(list(values), lsl, usl)
    return TrendFigures(len(values), fit.slope, fit.r2, fit.adj_r2, fit.p_value,
                        fit.points_to_spec)


def close_up_figures(cv: CharacteristicView) -> CloseUpFigures:
    """The figures of one characteristic's detail. The spec limits bound single parts, so the
    box plot shows individual readings; without them (a source that keeps none) it falls back to
    the plotted points and says so."""
    loc = cv.location
    if cv.recent_values:
        values, what = cv.recent_values, "readings"
    else:
        values = loc.values if loc else []
        what = "readings" if cv.subgroup_size <= 1 else f"subgroup means (n={cv.subgroup_size})"
    shown = values[-BOX_VALUES:]
    recent = loc.values[-TREND_WINDOW:] if loc else []
    return CloseUpFigures(box_figures(shown), what, len(shown),
                          trend_figures(recent, cv.lsl, cv.usl))


def with_figures(cv: CharacteristicView | None) -> CharacteristicView | None:
    """`cv` with its close-up figures filled in (None stays None)."""
    if cv is not None:
        cv.figures = close_up_figures(cv)
    return cv

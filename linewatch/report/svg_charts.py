"""A small control chart as inline SVG for the HTML report: the plotted points, CL and control
limits per phase (step lines), spec limits on individuals charts, and the points inside an alarm
drawn as larger hollow squares so they stand out in grey print too."""

from __future__ import annotations

import html
from collections.abc import Callable

from linewatch.domain.safe_text import visible
from linewatch.present.scales import fraction_of, padded_span
from linewatch.report.build import ChartTrace, num


def escape(text: str) -> str:
    """Text for HTML and SVG (the report's one escape): control characters shown as the
    terminal shows them (`\\x1b`, see safe_text.py), then HTML-escaped, so neither a browser
    nor a terminal that prints the file obeys anything from the data, a file name or a note."""
    return html.escape(visible(text))


WIDTH, HEIGHT = 680, 180
LEFT, RIGHT, TOP, BOTTOM = 8, 86, 10, 22


def _steps(xs: list[float], ys: list[float | None], y_of: Callable[[float], float]) -> list[str]:
    """Horizontal segments per run of equal values (a new phase starts a new segment)."""
    paths: list[str] = []
    start = 0
    for k in range(1, len(xs) + 1):
        if k == len(xs) or ys[k] != ys[start]:
            level = ys[start]
            if level is not None:
                x0 = xs[start] - (0 if start == 0 else (xs[start] - xs[start - 1]) / 2)
                x1 = xs[k - 1] + (0 if k == len(xs) else (xs[k] - xs[k - 1]) / 2)
                y = y_of(level)
                paths.append(f"M{x0:.1f},{y:.1f}H{x1:.1f}")
            start = k
    return paths


LABEL_GAP = 11.0  # px between label baselines on the right edge
DOT_LIMIT = 1200  # beyond this many points: no dots, and the line becomes a per-pixel envelope


def _envelope(xs: list[float], values: list[float], y_of: Callable[[float], float]) -> str:
    """Polyline points visiting the lowest and highest value of every pixel column in turn."""
    columns: dict[int, tuple[float, float]] = {}
    for x, v in zip(xs, values, strict=True):
        col = round(x)
        lo, hi = columns.get(col, (v, v))
        columns[col] = (min(lo, v), max(hi, v))
    out = []
    for col in sorted(columns):
        lo, hi = columns[col]
        out.append(f"{col},{y_of(lo):.1f} {col},{y_of(hi):.1f}")
    return " ".join(out)


def _place_labels(labels: list[tuple[float, str, str]], x: float) -> list[str]:
    """Right-edge labels at their lines' heights, pushed apart so none overlap."""
    placed: list[tuple[float, str, str]] = []
    for y, text, cls in sorted(labels):
        if placed and y - placed[-1][0] < LABEL_GAP:
            y = placed[-1][0] + LABEL_GAP
        placed.append((y, text, cls))
    overflow = placed[-1][0] - (HEIGHT - BOTTOM + 4) if placed else 0.0
    if overflow > 0:  # too low: shift the whole stack up
        placed = [(y - overflow, t, c) for y, t, c in placed]
    return [
        f'<text x="{x}" y="{y + 3.5:.1f}" class="{cls}">{escape(text)}</text>'
        for y, text, cls in placed
    ]


def control_chart_svg(
    trace: ChartTrace, lsl: float | None = None, usl: float | None = None, title: str = ""
) -> str:
    """SVG markup of one location chart ('' when there are no points)."""
    if not trace.values:
        return ""
    specs = [v for v in (lsl, usl) if v is not None] if trace.chart == "individuals" else []
    lims = [v for v in (*trace.center, *trace.ucl, *trace.lcl) if v is not None]
    everything = [*trace.values, *lims, *specs]
    lo, hi = padded_span(everything, 0.06)
    plot_w, plot_h = WIDTH - LEFT - RIGHT, HEIGHT - TOP - BOTTOM
    count = len(trace.values)

    def x_of(k: int) -> float:
        return LEFT + (plot_w * (k + 0.5) / count)

    def y_of(v: float) -> float:
        return TOP + plot_h * (1.0 - fraction_of(v, lo, hi))

    xs = [x_of(k) for k in range(count)]
    labels: list[tuple[float, str, str]] = []  # (y, text, css class), placed apart at the end
    parts = [
        f'<svg xmlns="http://www.w3.org/2000/svg" viewBox="0 0 {WIDTH} {HEIGHT}" '
        f'class="chart" role="img" aria-label="{escape(title)}">',
        f'<rect x="{LEFT}" y="{TOP}" width="{plot_w}" height="{plot_h}" class="frame"/>',
    ]
    for name, ys, cls in (
        ("UCL", trace.ucl, "limit"), ("CL", trace.center, "center"), ("LCL", trace.lcl, "limit")
    ):
        paths = _steps(xs, ys, y_of)
        if paths:
            parts.append(f'<path d="{"".join(paths)}" class="{cls}"/>')
            last = next((v for v in reversed(ys) if v is not None), None)
            if last is not None:
                labels.append((y_of(last), f"{name} {num(last, 5)}", "label"))
    for name, v in (("USL", usl), ("LSL", lsl)):
        if v is not None and specs:
            y = y_of(v)
            parts.append(f'<path d="M{LEFT},{y:.1f}H{LEFT + plot_w}" class="spec"/>')
            labels.append((y, f"{name} {num(v, 5)}", "label spec-label"))
    parts.extend(_place_labels(labels, LEFT + plot_w + 4))
    if count <= DOT_LIMIT:
        line = " ".join(f"{x:.1f},{y_of(v):.1f}" for x, v in zip(xs, trace.values, strict=True))
        parts.append(f'<polyline points="{line}" class="trace"/>')
    else:  # a long shift: one low-high stroke per pixel column keeps the file small
        parts.append(f'<polyline points="{_envelope(xs, trace.values, y_of)}" class="trace"/>')
    radius = 2.2 if count <= 150 else 1.4
    marked: set[tuple[int, int]] = set()
    for x, v, i in zip(xs, trace.values, trace.indices, strict=True):
        y = y_of(v)
        if i in trace.flagged:
            spot = (round(x), round(y))
            if count > DOT_LIMIT and spot in marked:
                continue
            marked.add(spot)
            parts.append(
                f'<rect x="{x - 3.5:.1f}" y="{y - 3.5:.1f}" width="7" height="7" class="flag">'
                f"<title>point {i}: {escape(num(v))} (in an alarm)</title></rect>"
            )
        elif count <= DOT_LIMIT:
            parts.append(f'<circle cx="{x:.1f}" cy="{y:.1f}" r="{radius}" class="dot"/>')
    parts.append(
        f'<text x="{LEFT}" y="{HEIGHT - 6}" class="label">point {trace.indices[0]}</text>'
        f'<text x="{LEFT + plot_w}" y="{HEIGHT - 6}" class="label" text-anchor="end">'
        f"point {trace.indices[-1]}</text>"
    )
    parts.append("</svg>")
    return "".join(parts)

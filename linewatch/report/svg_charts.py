"""A small control chart as inline SVG for the HTML report: the plotted points, CL and control
limits per phase (step lines), spec limits on individuals charts, and the points inside an alarm
drawn as larger hollow squares so they stand out in grey print too."""

from __future__ import annotations

import html
from collections.abc import Callable, Mapping, Sequence

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


def _place_labels(labels: list[tuple[float, str, str]], x: float,
                  bottom: float = HEIGHT - BOTTOM + 4) -> list[str]:
    """Right-edge labels at their lines' heights, pushed apart so none overlap and none
    lower than `bottom`."""
    placed: list[tuple[float, str, str]] = []
    for y, text, cls in sorted(labels):
        if placed and y - placed[-1][0] < LABEL_GAP:
            y = placed[-1][0] + LABEL_GAP
        placed.append((y, text, cls))
    overflow = placed[-1][0] - bottom if placed else 0.0
    if overflow > 0:  # too low: shift the whole stack up
        placed = [(y - overflow, t, c) for y, t, c in placed]
    return [
        f'<text x="{x}" y="{y + 3.5:.1f}" class="{cls}">{escape(text)}</text>'
        for y, text, cls in placed
    ]


def control_chart_svg(
    trace: ChartTrace, lsl: float | None = None, usl: float | None = None, title: str = "",
    *, zones: bool = False, separators: Sequence[tuple[int, str]] = (),
    marks: Mapping[int, str] | None = None, specs_on_means: bool = False,
) -> str:
    """SVG markup of one chart ('' when there are no points). Options of the analysis page:
    `zones` shades ±1σ and ±2σ about the centre (σ = a third of UCL − CL, per point);
    `separators` draws a vertical line and a label where each phase starts (position in the
    trace); `marks` writes a rule letter above each signalling point (by plotted index);
    `specs_on_means` draws the spec limits on a chart of subgroup means too."""
    if not trace.values:
        return ""
    wants_specs = trace.chart == "individuals" or specs_on_means
    specs = [v for v in (lsl, usl) if v is not None] if wants_specs else []
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
    if zones:
        parts.extend(_zones(xs, trace, y_of))
    for pos, text in separators:
        if 0 < pos < count:
            x = (xs[pos - 1] + xs[pos]) / 2
            parts.append(f'<path d="M{x:.1f},{TOP}V{TOP + plot_h}" class="separator"/>'
                         f'<text x="{x + 3:.1f}" y="{TOP + 9}" class="label">'
                         f"{escape(text)}</text>")
        elif pos == 0:
            parts.append(f'<text x="{LEFT + 3}" y="{TOP + 9}" class="label">{escape(text)}</text>')
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
            what = "in an alarm" if marks is None else f"signal {marks.get(i, '')}"
            parts.append(
                f'<rect x="{x - 3.5:.1f}" y="{y - 3.5:.1f}" width="7" height="7" class="flag">'
                f"<title>point {i}: {escape(num(v))} ({escape(what)})</title></rect>"
            )
            if marks is not None and marks.get(i):
                above = y - 6 if y - 6 > TOP + 8 else y + 13
                parts.append(f'<text x="{x:.1f}" y="{above:.1f}" class="mark" '
                             f'text-anchor="middle">{escape(marks[i])}</text>')
        elif count <= DOT_LIMIT:
            parts.append(f'<circle cx="{x:.1f}" cy="{y:.1f}" r="{radius}" class="dot"/>')
    parts.append(
        f'<text x="{LEFT}" y="{HEIGHT - 6}" class="label">point {trace.indices[0]}</text>'
        f'<text x="{LEFT + plot_w}" y="{HEIGHT - 6}" class="label" text-anchor="end">'
        f"point {trace.indices[-1]}</text>"
    )
    parts.append("</svg>")
    return "".join(parts)


def _zones(xs: list[float], trace: ChartTrace, y_of: Callable[[float], float]) -> list[str]:
    """Bands from CL ± 1σ to CL ± 2σ (light) and beyond 2σ to the limits (lighter still are
    left white), per run of equal limits, so the zones step with the phases."""
    out: list[str] = []
    start = 0
    n = len(xs)
    for k in range(1, n + 1):
        if k == n or (trace.center[k], trace.ucl[k]) != (trace.center[start], trace.ucl[start]):
            c, u = trace.center[start], trace.ucl[start]
            if c is not None and u is not None and u > c:
                sigma = (u - c) / 3.0
                x0 = xs[start] - (0 if start == 0 else (xs[start] - xs[start - 1]) / 2)
                x1 = xs[k - 1] + (0 if k == n else (xs[k] - xs[k - 1]) / 2)
                for lo, hi, cls in ((c + sigma, c + 2 * sigma, "zone1"),
                                    (c - 2 * sigma, c - sigma, "zone1"),
                                    (c - sigma, c + sigma, "zone0")):
                    y_top, y_bottom = y_of(hi), y_of(lo)
                    out.append(f'<rect x="{x0:.1f}" y="{y_top:.1f}" width="{x1 - x0:.1f}" '
                               f'height="{max(y_bottom - y_top, 0):.1f}" class="{cls}"/>')
            start = k
    return out


def box_plots_svg(
    boxes: Sequence[tuple[str, float, float, float, float, float, Sequence[float]]],
    lsl: float | None = None, usl: float | None = None, title: str = "",
) -> str:
    """Box plots side by side, one per (label, whisker low, Q1, median, Q3, whisker high,
    outliers), against the spec limits; outliers as hollow circles."""
    if not boxes:
        return ""
    width, height = WIDTH, 200
    left, right, top, bottom = 8, 86, 10, 26
    plot_w, plot_h = width - left - right, height - top - bottom
    everything = [v for b in boxes for v in (b[1], b[5], *b[6])]
    everything += [v for v in (lsl, usl) if v is not None]
    lo, hi = padded_span(everything, 0.08)

    def y_of(v: float) -> float:
        return top + plot_h * (1.0 - fraction_of(v, lo, hi))

    parts = [f'<svg xmlns="http://www.w3.org/2000/svg" viewBox="0 0 {width} {height}" '
             f'class="chart" role="img" aria-label="{escape(title)}">',
             f'<rect x="{left}" y="{top}" width="{plot_w}" height="{plot_h}" class="frame"/>']
    labels: list[tuple[float, str, str]] = []
    for name, v in (("USL", usl), ("LSL", lsl)):
        if v is not None:
            y = y_of(v)
            parts.append(f'<path d="M{left},{y:.1f}H{left + plot_w}" class="spec"/>')
            labels.append((y, f"{name} {num(v, 5)}", "label spec-label"))
    slot = plot_w / len(boxes)
    box_w = min(60.0, slot * 0.5)
    for k, (label, w_lo, q1, med, q3, w_hi, outliers) in enumerate(boxes):
        cx = left + slot * (k + 0.5)
        x0 = cx - box_w / 2
        parts.append(
            f'<path d="M{cx:.1f},{y_of(w_hi):.1f}V{y_of(q3):.1f}M{cx:.1f},{y_of(q1):.1f}'
            f'V{y_of(w_lo):.1f}M{cx - box_w / 4:.1f},{y_of(w_hi):.1f}H{cx + box_w / 4:.1f}'
            f'M{cx - box_w / 4:.1f},{y_of(w_lo):.1f}H{cx + box_w / 4:.1f}" class="whisker"/>'
            f'<rect x="{x0:.1f}" y="{y_of(q3):.1f}" width="{box_w:.1f}" '
            f'height="{max(y_of(q1) - y_of(q3), 0.5):.1f}" class="box"/>'
            f'<path d="M{x0:.1f},{y_of(med):.1f}H{x0 + box_w:.1f}" class="median"/>')
        for v in outliers:
            parts.append(f'<circle cx="{cx:.1f}" cy="{y_of(v):.1f}" r="3" class="outlier">'
                         f"<title>{escape(num(v))} (outlier)</title></circle>")
        parts.append(f'<text x="{cx:.1f}" y="{height - 8}" class="label" '
                     f'text-anchor="middle">{escape(label)}</text>')
    parts.extend(_place_labels(labels, left + plot_w + 4, top + plot_h + 4))
    parts.append("</svg>")
    return "".join(parts)


def scatter_fit_svg(
    xs: Sequence[float], ys: Sequence[float],
    line: tuple[Sequence[float], Sequence[float], Sequence[float], Sequence[float]],
    box_lines: Sequence[str], x_name: str, y_name: str, title: str = "",
    lsl: float | None = None, usl: float | None = None, target: float | None = None,
) -> str:
    """Points (setting, value), the fitted curve with its 95% confidence band (line = grid xs,
    fitted, lower, upper), spec limits and target, and a framed box of `box_lines`."""
    if not xs:
        return ""
    width, height = WIDTH, 260
    left, right, top, bottom = 52, 86, 10, 34
    plot_w, plot_h = width - left - right, height - top - bottom
    gx, fit_y, band_lo, band_hi = (list(v) for v in line)
    x_lo, x_hi = padded_span([*xs, *gx], 0.04)
    marks = [v for v in (lsl, usl, target) if v is not None]
    y_lo, y_hi = padded_span([*ys, *band_lo, *band_hi, *marks], 0.06)

    def px(v: float) -> float:
        return left + plot_w * fraction_of(v, x_lo, x_hi)

    def py(v: float) -> float:
        return top + plot_h * (1.0 - fraction_of(v, y_lo, y_hi))

    parts = [f'<svg xmlns="http://www.w3.org/2000/svg" viewBox="0 0 {width} {height}" '
             f'class="chart" role="img" aria-label="{escape(title)}">',
             f'<rect x="{left}" y="{top}" width="{plot_w}" height="{plot_h}" class="frame"/>']
    if gx:
        upper = " ".join(f"{px(x):.1f},{py(v):.1f}" for x, v in zip(gx, band_hi, strict=True))
        lower = " ".join(f"{px(x):.1f},{py(v):.1f}"
                         for x, v in zip(reversed(gx), reversed(band_lo), strict=True))
        parts.append(f'<polygon points="{upper} {lower}" class="band"/>')
    labels: list[tuple[float, str, str]] = []
    for name, v, cls in (("USL", usl, "spec"), ("LSL", lsl, "spec"), ("target", target,
                                                                      "target")):
        if v is not None:
            y = py(v)
            parts.append(f'<path d="M{left},{y:.1f}H{left + plot_w}" class="{cls}"/>')
            labels.append((y, f"{name} {num(v, 5)}",
                           "label spec-label" if cls == "spec" else "label"))
    for x, y in zip(xs, ys, strict=True):
        parts.append(f'<circle cx="{px(x):.1f}" cy="{py(y):.1f}" r="2" class="dot"/>')
    if gx:
        path = " ".join(f"{px(x):.1f},{py(v):.1f}" for x, v in zip(gx, fit_y, strict=True))
        parts.append(f'<polyline points="{path}" class="fit"/>')
    parts.extend(_place_labels(labels, left + plot_w + 4, top + plot_h + 4))
    for k, v in enumerate((x_lo, (x_lo + x_hi) / 2, x_hi)):
        anchor = ("start", "middle", "end")[k]
        parts.append(f'<text x="{px(v):.1f}" y="{top + plot_h + 12}" class="label" '
                     f'text-anchor="{anchor}">{escape(num(v, 4))}</text>')
    for v in (y_lo, (y_lo + y_hi) / 2, y_hi):
        parts.append(f'<text x="{left - 3}" y="{py(v) + 3:.1f}" class="label" '
                     f'text-anchor="end">{escape(num(v, 5))}</text>')
    parts.append(f'<text x="{left + plot_w / 2:.1f}" y="{height - 4}" class="label" '
                 f'text-anchor="middle">{escape(x_name)}</text>')
    if box_lines:
        bw = max(len(t) for t in box_lines) * 6.4 + 14
        bh = 13 * len(box_lines) + 8
        parts.append(f'<rect x="{left + 6}" y="{top + 6}" width="{bw:.0f}" height="{bh}" '
                     'class="fitbox"/>')
        for k, t in enumerate(box_lines):
            parts.append(f'<text x="{left + 12}" y="{top + 19 + 13 * k}" class="boxtext">'
                         f"{escape(t)}</text>")
    parts.append("</svg>")
    return "".join(parts)

"""The text of `check`'s investigation: the phase table, the comparison sentences and the
regression on a setting, laid out for an 80-column terminal (plain text, no colour).

Phase labels and column names come from the logs: each goes through `visible`."""

from __future__ import annotations

import textwrap
from typing import TYPE_CHECKING

from linewatch.domain.safe_text import visible

if TYPE_CHECKING:
    from linewatch.cli.commands.check import Analysis
    from linewatch.engine.phases import PhasedHistory
    from linewatch.engine.setting_regression import SettingRegression

WIDTH = 80
INDENT = "   "


def g(x: float | None, digits: int = 5) -> str:
    """A figure with `digits` significant digits ('—' when missing)."""
    if x is None:
        return "—"
    return f"{x:.{digits}g}"


def span(pair: tuple[float, float] | None, digits: int = 5) -> str:
    return "—" if pair is None else f"{g(pair[0], digits)} … {g(pair[1], digits)}"


def p_text(p: float | None) -> str:
    if p is None:
        return "—"
    return "< 0.001" if p < 0.001 else f"{p:.3f}"


def _wrap(text: str, indent: str = INDENT) -> list[str]:
    return textwrap.wrap(text, WIDTH, initial_indent=indent, subsequent_indent=indent + "  ")


def limits_words(ph: PhasedHistory) -> str:
    return ("each phase its own Phase I limits" if ph.mode == "per-phase"
            else "every phase judged against the first phase's limits")


def phase_lines(a: Analysis) -> list[str]:
    """The phase table (location, then limits and capability) and the comparisons."""
    ph = a.phased
    if ph is None:
        return []
    out = [f"{INDENT}phases: {len(ph.phases)} ({limits_words(ph)})"]
    out.append(f"{INDENT}{'ph':>2} {'phase':<14} {'from':>6} {'N':>5} {'mean':>9} {'SD':>7} "
               f"{'95% CI of mean':>19} {'sig':>4}")
    for p in ph.phases:
        d = p.description
        label = visible(p.label)
        label = label if len(label) <= 14 else label[:13] + "…"
        out.append(f"{INDENT}{p.number:>2} {label:<14} {p.first_point:>6} {d.points:>5} "
                   f"{g(d.mean, 6):>9} {g(d.stdev, 2):>7} {span(d.ci95, 5):>19} "
                   f"{p.signals:>4}")
    out.append(f"{INDENT}{'ph':>2} {'CL':>8} {'UCL':>8} {'LCL':>8} {'Cpk':>5} "
               f"{'Cpk 95% CI':>11} {'Ppk':>5} {'Q1':>8} {'Q3':>8} {'out':>3}")
    for p in ph.phases:
        d, cap = p.description, p.capability
        if p.limits is not None:
            loc = p.limits.location
            lims = f"{g(loc.center, 6):>8} {g(loc.ucl, 6):>8} {g(loc.lcl, 6):>8}"
        else:
            lims = f"{'no limits':>26}"
        ci = "—" if cap.cpk_ci95 is None else f"{g(cap.cpk_ci95[0], 3)}…{g(cap.cpk_ci95[1], 3)}"
        out.append(f"{INDENT}{p.number:>2} {lims} {g(cap.cpk, 3):>5} {ci:>11} "
                   f"{g(cap.ppk, 3):>5} {g(d.q1, 6):>8} {g(d.q3, 6):>8} {len(d.outliers):>3}")
    for p in ph.phases:
        if p.problem:
            out += _wrap(f"phase {p.number}: no limits of its own: {visible(p.problem)}")
    out += comparison_lines(a)
    return out


def comparison_lines(a: Analysis) -> list[str]:
    from linewatch.engine.phase_compare import sentence, spread_sentence

    ph = a.phased
    if ph is None or not ph.comparisons:
        return []
    unit = visible(a.config.unit)
    out = [f"{INDENT}comparisons (95% intervals; Welch for means, F and Brown–Forsythe "
           "for SDs):"]
    for c in ph.comparisons:
        size = []
        if c.share_of_tolerance is not None:
            size.append(f"{100 * c.share_of_tolerance:+.1f}% of the tolerance")
        if c.in_sigma is not None:
            size.append(f"{c.in_sigma:+.2f} σ")
        text = visible(sentence(c, unit=unit))
        out += _wrap(f"- {text} " + (f"Size: {', '.join(size)}. " if size else "")
                     + spread_sentence(c))
    share = f"{100 * ph.comparisons[0].practical_share:.0f}%"
    out += _wrap(f"(\"large enough to matter\": at least {share} of the tolerance — our "
                 "convention, not a standard; set practical_share or --practical-share)")
    return out


def regression_lines(r: SettingRegression, name: str, unit: str = "") -> list[str]:
    """The fit on the setting, the prediction at --at and the setting for the target."""
    setting = visible(r.setting)
    left = f"; {r.left_out} without a readable {setting}" if r.left_out else ""
    out = [f"{INDENT}regression on {setting} ({r.of}, n {r.points.shape[1]}{left}):"]
    f = r.fit
    if f is None:
        return out + _wrap(visible(r.problem), INDENT + "  ")
    out.append(f"{INDENT}  {f.equation(lambda v: g(v, 5), x=setting, y=visible(name))}")
    names = ("intercept", "slope", "x²")
    for k, b in enumerate(f.coefficients):
        out.append(f"{INDENT}  {names[k]:<9} {g(b, 5):>11}  95% {span(f.ci95[k], 4)}")
    what = "slope" if f.degree == 1 else "x² term"
    out.append(f"{INDENT}  R² {g(f.r2, 3)}  adjusted R² {g(f.adj_r2, 3)}  residual SD "
               f"{g(f.residual_sd, 3)}  p of the {what} {p_text(f.p_value)}")
    tried = f"settings tried {g(f.x_range[0])} … {g(f.x_range[1])}"
    if r.prediction is not None:
        p = r.prediction
        out += _wrap(f"at {setting} {g(p.at)}: mean {g(p.mean, 6)} {unit} (95% CI "
                     f"{span(p.mean_ci95, 6)}); one new value 95% within "
                     f"{span(p.prediction95, 6)}" + _outside(p.at, f), INDENT + "  ")
    if r.inverse is not None:
        inv = r.inverse
        if inv.setting is None or inv.interval is None:
            out += _wrap(f"target {g(inv.target)}: {inv.reason}", INDENT + "  ")
        else:
            out += _wrap(f"target {g(inv.target)}: {setting} {g(inv.setting)} puts the mean on "
                         f"it (95% {span(inv.interval)}, Fieller)" + _outside(inv.setting, f),
                         INDENT + "  ")
    out.append(f"{INDENT}  ({tried})")
    return out


def _outside(x: float, f: object) -> str:
    lo, hi = getattr(f, "x_range", (x, x))
    return "" if lo <= x <= hi else " — outside the settings tried: an extrapolation"


def investigation_lines(a: Analysis) -> list[str]:
    """Everything the investigation adds to one characteristic's block."""
    out = phase_lines(a)
    if a.regression is not None:
        out += regression_lines(a.regression, a.config.name, visible(a.config.unit))
    return out

"""The wording and tables the analysis page shows in both its forms (HTML and Markdown):
the phase table, the comparison table, the regression's box and sentences. Plain strings;
each form escapes them its own way."""

from __future__ import annotations

from linewatch.engine.setting_regression import SettingRegression
from linewatch.report.analysis_model import CharacteristicAnalysis

CAUTION = ("linewatch is an advisory monitoring aid, not a safety system or interlock: the "
           "plant's control plan and qualified quality staff decide what is done.")


def g(x: float | None, digits: int = 5) -> str:
    return "—" if x is None else f"{x:.{digits}g}"


def span(pair: tuple[float, float] | None, digits: int = 5) -> str:
    return "—" if pair is None else f"{g(pair[0], digits)} … {g(pair[1], digits)}"


def p_text(p: float | None) -> str:
    if p is None:
        return "—"
    return "< 0.001" if p < 0.001 else f"{p:.3f}"


def phase_rows(c: CharacteristicAnalysis) -> tuple[list[str], list[list[str]]]:
    """Header and rows of the phase table: where each phase lies and how it sits."""
    header = ["phase", "from point", "N", "mean", "SD", "95% CI of mean", "Q1 / median / Q3",
              "outliers"]
    rows = []
    assert c.phased is not None
    for p in c.phased.phases:
        d = p.description
        rows.append([
            f"{p.number}: {p.label}", str(p.first_point), str(d.points), g(d.mean, 6),
            g(d.stdev, 3), span(d.ci95, 6),
            f"{g(d.q1, 5)} / {g(d.median, 5)} / {g(d.q3, 5)}", str(len(d.outliers)),
        ])
    return header, rows


def phase_limit_rows(c: CharacteristicAnalysis) -> tuple[list[str], list[list[str]]]:
    """Header and rows of each phase's limits, capability and signals."""
    header = ["phase", "CL", "UCL", "LCL", "Cp (95% CI)", "Cpk (95% CI)", "Ppk", "ppm out",
              "signals"]
    rows = []
    assert c.phased is not None
    for p in c.phased.phases:
        cap, lim = p.capability, p.limits
        carried = " (phase 1's)" if p.carried else ""
        rows.append([
            f"{p.number}: {p.label}",
            (g(lim.location.center, 6) + carried) if lim else "no limits",
            g(lim.location.ucl, 6) if lim else "", g(lim.location.lcl, 6) if lim else "",
            f"{g(cap.cp, 3)} ({span(cap.cp_ci95, 3)})",
            f"{g(cap.cpk, 3)} ({span(cap.cpk_ci95, 3)})", g(cap.ppk, 3),
            "—" if cap.ppm_out is None else f"{cap.ppm_out:.0f}",
            ", ".join(f"{k} ×{v}" for k, v in sorted(p.signals_by_rule.items())) or "none",
        ])
    return header, rows


def comparison_rows(c: CharacteristicAnalysis) -> tuple[list[str], list[list[str]]]:
    """Header and rows of the comparison table."""
    header = ["compared", "mean moved by (95% CI)", "p, Welch", "of tolerance", "in σ",
              "SD ratio (95% CI)", "p, Brown–Forsythe", "verdict"]
    rows = []
    assert c.phased is not None
    for m in c.phased.comparisons:
        rows.append([
            f"{m.b.split(' (')[0]} vs {m.a.split(' (')[0]}",
            f"{g(m.difference, 4)} ({span(m.difference_ci95, 4)})", p_text(m.p_mean),
            "—" if m.share_of_tolerance is None else f"{100 * m.share_of_tolerance:+.1f}%",
            "—" if m.in_sigma is None else f"{m.in_sigma:+.2f}",
            f"{g(m.sd_ratio, 3)} ({span(m.sd_ratio_ci95, 3)})", p_text(m.p_spread), m.verdict,
        ])
    return header, rows


def threshold_note(c: CharacteristicAnalysis) -> str:
    if c.phased is None or not c.phased.comparisons:
        return ""
    share = 100 * c.phased.comparisons[0].practical_share
    return (f"\"Large enough to matter\" means a change of the mean of at least {share:.0f}% of "
            "the tolerance (USL − LSL). That threshold is linewatch's convention, not a "
            "standard: set practical_share in the config or --practical-share.")


def setting_words(r: SettingRegression) -> str:
    return r.setting


def fit_box_lines(c: CharacteristicAnalysis, r: SettingRegression) -> list[str]:
    """The box on the regression plot: equation, R², adjusted R², residual SD, n, p."""
    f = r.fit
    if f is None:
        return []
    what = "slope" if f.degree == 1 else "x² term"
    return [f.equation(lambda v: g(v, 5), x=r.setting, y=c.name),
            f"R² = {f.r2:.3f}   adjusted R² = {g(f.adj_r2, 3)}",
            f"residual SD = {g(f.residual_sd, 3)}   n = {f.n}   p ({what}) {p_text(f.p_value)}"]


def regression_sentences(c: CharacteristicAnalysis, r: SettingRegression) -> list[str]:
    """The coefficients, the prediction and the setting for the target, in words."""
    f = r.fit
    out = []
    if r.left_out:
        out.append(f"{r.left_out} readings had no readable {r.setting} and are left out.")
    if f is None:
        return [*out, r.problem]
    names = ("intercept", "slope", "quadratic term")
    out.append("; ".join(f"{names[k]} {g(b)} (95% {span(f.ci95[k], 4)})"
                         for k, b in enumerate(f.coefficients)) + f"; fitted on {f.n} {r.of}, "
               f"settings tried {g(f.x_range[0])} to {g(f.x_range[1])}.")
    unit = f" {c.unit}" if c.unit else ""
    lo, hi = f.x_range
    if r.prediction is not None:
        p = r.prediction
        far = "" if lo <= p.at <= hi else " (outside the settings tried: an extrapolation)"
        out.append(f"At {r.setting} {g(p.at)}{far}: the mean is {g(p.mean, 6)}{unit} (95% "
                   f"confidence interval {span(p.mean_ci95, 6)}); one new reading falls within "
                   f"{span(p.prediction95, 6)} with 95% probability.")
    if r.inverse is not None:
        inv = r.inverse
        if inv.setting is None or inv.interval is None:
            out.append(f"Target {g(inv.target)}{unit}: {inv.reason}.")
        else:
            far = "" if lo <= inv.setting <= hi else (
                " — outside the settings tried, so an extrapolation")
            out.append(f"Target {g(inv.target)}{unit}: {r.setting} {g(inv.setting)} puts the "
                       f"mean on it (95% interval {span(inv.interval)}, Fieller's method){far}.")
    return out

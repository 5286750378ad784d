"""The per-phase figures of one characteristic as a Rich table."""

from __future__ import annotations

from rich.table import Table

from linewatch.figures import fmt_ppm
from linewatch.ui import palette
from linewatch.ui.formatting import fmt_fixed, fmt_scaled, fmt_value
from linewatch.view import PhaseStats


def phase_table(phases: list[PhaseStats]) -> Table:
    """N, mean, SD, 95% CI of the mean, Cp, Cpk with its 95% interval and ppm out of spec."""
    table = Table(box=None, pad_edge=False, header_style="bold", expand=False, padding=(0, 1, 0, 0))
    for name in ("ph", "from", "N", "mean", "SD", "mean 95% CI", "Cp", "Cpk", "Cpk 95% CI",
                 "ppm"):
        table.add_column(name, justify="right", no_wrap=True)
    for p in phases:
        # mean and interval to the decimals the spread needs (2 significant digits of the SD)
        sd = p.stdev
        ci = f"{fmt_scaled(p.ci95[0], sd)}..{fmt_scaled(p.ci95[1], sd)}" if p.ci95 else "-"
        cpk_ci = f"{fmt_fixed(p.cpk_ci95[0])}..{fmt_fixed(p.cpk_ci95[1])}" if p.cpk_ci95 else "-"
        ppm = fmt_ppm(p.ppm_out, "-")
        table.add_row(
            str(p.phase), str(p.start_index), str(p.n), fmt_scaled(p.mean, sd),
            fmt_value(p.stdev, 3), ci, fmt_fixed(p.cp),
            f"[{palette.cpk_style(p.cpk)}]{fmt_fixed(p.cpk)}[/]", cpk_ci, ppm,
        )
    return table

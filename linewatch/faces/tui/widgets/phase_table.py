"""The per-phase figures of one characteristic as two Rich tables: the location figures, then
capability with each index beside the spread it is computed from."""

from __future__ import annotations

from rich.console import Group
from rich.table import Table
from rich.text import Text

from linewatch.faces.tui import palette
from linewatch.faces.tui.formatting import fmt_fixed, fmt_scaled, fmt_value
from linewatch.present.figures import fmt_ppm
from linewatch.present.view import PhaseStats


def _table(names: tuple[str, ...]) -> Table:
    table = Table(box=None, pad_edge=False, header_style="bold", expand=False, padding=(0, 1, 0, 0))
    for name in names:
        table.add_column(name, justify="right", no_wrap=True)
    return table


def phase_table(phases: list[PhaseStats]) -> Group:
    """N, mean, SD and the 95% CI of the mean; then Cp, Cpk and its 95% interval (σ within,
    the chart's) beside Pp, Ppk and ppm out of spec (the overall SD), so a Cpk of 1.31 with
    1,030 ppm does not read as a contradiction: the ppm goes with the Ppk next to it."""
    location = _table(("ph", "from", "N", "mean", "SD", "mean 95% CI"))
    capability = _table(("ph", "Cp", "Cpk", "Cpk 95% CI", "Pp", "Ppk", "ppm"))
    for p in phases:
        # mean and interval to the decimals the spread needs (2 significant digits of the SD)
        sd = p.stdev
        ci = f"{fmt_scaled(p.ci95[0], sd)}..{fmt_scaled(p.ci95[1], sd)}" if p.ci95 else "-"
        location.add_row(str(p.phase), str(p.start_index), str(p.n), fmt_scaled(p.mean, sd),
                         fmt_value(p.stdev, 3), ci)
        cpk_ci = f"{fmt_fixed(p.cpk_ci95[0])}..{fmt_fixed(p.cpk_ci95[1])}" if p.cpk_ci95 else "-"
        capability.add_row(
            str(p.phase), fmt_fixed(p.cp), Text(fmt_fixed(p.cpk), palette.cpk_style(p.cpk)),
            cpk_ci, fmt_fixed(p.pp), Text(fmt_fixed(p.ppk), palette.cpk_style(p.ppk)),
            fmt_ppm(p.ppm_out, "-"),
        )
    legend = Text("Cp, Cpk: σ within (the chart's); Pp, Ppk and ppm: the overall SD",
                  palette.LABEL)
    return Group(location, capability, legend)

"""Whether a characteristic's subgroup and attribute settings fit together.

One check for both sources of settings: the config reader names the key of the first problem
(`ConfigError`), the command line's overrides the characteristic. Each problem says what to do.
"""

from __future__ import annotations

from linewatch.config.model import CharacteristicConfig

PROPORTION_CHARTS = ("p", "np", "laney-p")


def chart_problem(c: CharacteristicConfig) -> tuple[str, str] | None:
    """(config key, problem) of the first setting that does not fit the others, or None."""
    if c.is_attribute and c.sigma is not None:
        return ("sigma", "an attribute chart's spread follows from its centre: give the known "
                "proportion or rate as center (--center) without sigma")
    if c.subgroup_by is not None and c.subgroup_window is not None:
        return ("subgroup_window", "subgroup_by and subgroup_window exclude each other: "
                "subgroups are by sample id or by clock window (--subgroup-by, "
                "--subgroup-window)")
    if c.sizes_vary and c.subgroup_size != 1:
        key = "subgroup_by" if c.subgroup_by is not None else "subgroup_window"
        return (key, f"{key} and subgroup_size exclude each other: give one of "
                "subgroup_size, subgroup_by, subgroup_window")
    if c.result_column is None and c.subgroup_size > 25:
        return ("subgroup_size", f"must be between 1 and 25 for measured values or counts, got "
                f"{c.subgroup_size} (more parts per subgroup: pass/fail results)")
    if c.count_column is not None and c.result_column is not None:
        return ("result_column", "count_column and result_column exclude each other: a row "
                "holds counts (--count) or one part's result (--result)")
    if c.size_column is not None and c.count_column is None:
        return ("size_column", "the units inspected (size_column, --size) go with the counts "
                "they were found in (count_column, --count)")
    if c.chart is not None and not c.is_attribute:
        return ("chart", f"{_a(c.chart)} {c.chart} chart needs counts (count_column, "
                "--count) or pass/fail results (result_column, --result); measured values "
                "are charted as X̄ or individuals")
    if c.result_column is not None:
        if c.chart is not None and c.chart not in PROPORTION_CHARTS:
            return ("chart", f"pass/fail results give proportions: p, np or laney-p, not "
                    f"{c.chart} (c and u chart defect counts: count_column, --count)")
        if c.subgroup_size == 1 and not c.sizes_vary:
            return ("result_column", "one result per part needs subgroups: subgroup_size of "
                    "2 or more, subgroup_by or subgroup_window (--subgroup-size, "
                    "--subgroup-by, --subgroup-window)")
    if c.count_column is not None and c.size_column is None and c.chart not in (None, "c"):
        return ("chart", f"{_a(c.chart)} {c.chart} chart needs the units inspected per row "
                "(size_column, --size); counts without sizes are charted as c")
    for key, values, what in (("fail_values", c.fail_values, "a failed part"),
                              ("pass_values", c.pass_values, "a good part")):
        if not values:
            return (key, f"needs at least one value that means {what}")
        if any(not v.strip() for v in values):
            return (key, "an empty text cannot be a result")
    fails = {v.strip().casefold() for v in c.fail_values}
    both = [v for v in c.pass_values if v.strip().casefold() in fails]
    if both:
        return ("pass_values", f"{both[0]!r} is both a pass and a fail value")
    return None


def _a(word: str) -> str:
    """The article before a chart's name ("an np chart", "a p chart")."""
    return "an" if word[:1] in "aeinu" and word != "u" else "a"

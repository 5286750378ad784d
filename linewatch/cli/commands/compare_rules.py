"""`linewatch check --compare-rules SET[;SET...]`: the detection-power table of several rule
sets side by side, so an engineer can weigh detection against false alarms before choosing."""

from __future__ import annotations

import sys

from linewatch.cli.options import CheckOptions
from linewatch.config.model import CharacteristicConfig
from linewatch.config.selection import apply_overrides, chart_setup
from linewatch.domain import exit_codes
from linewatch.domain.errors import LinewatchError, RuleListError


def rule_sets(text: str) -> list[list[str]]:
    """The rule lists of `SET;SET;...` (each a comma-separated list of ids and set names)."""
    from linewatch.engine.rulebook import parse_rule_list

    sets = [part.strip() for part in text.split(";") if part.strip()]
    if not sets:
        raise LinewatchError("--compare-rules needs at least one rule set")
    out = []
    for part in sets:
        try:
            out.append(parse_rule_list(part))
        except RuleListError as exc:
            raise LinewatchError(f"--compare-rules {part!r}: {exc}") from None
    return out


def run(options: CheckOptions) -> int:
    from linewatch.present.power_table import power_table, rule_set_name
    from linewatch.present.power_view import comparison_lines

    assert options.compare_rules is not None
    tables = []
    for ids in rule_sets(options.compare_rules):
        # the chart options given (subgroup size, detector parameters) apply to every set
        c = apply_overrides(CharacteristicConfig(name="compared", column="compared", rules=ids),
                            options.chart)
        c.rules = ids
        setup = chart_setup(c, None)
        tables.append(power_table(rule_set_name(setup), setup.rules, setup.detectors,
                                  setup.subgroup_size))
    sys.stdout.write("\n".join(comparison_lines(tables)) + "\n")
    return exit_codes.OK

"""The closed sets of words a config file and the command line accept, one Literal type each
(the tuples of their values validate the config and are the parser's `choices`).

Kept apart from the model so the argument parser can offer the same choices without importing
the model (which pulls in numpy through the engine's defaults): `--help` stays fast.
"""

from __future__ import annotations

from typing import Literal, get_args

Layout = Literal["wide", "long", "jsonl"]
"""How a log holds its values: a column per characteristic, name/value rows, or JSON lines."""

Dispersion = Literal["range", "stdev"]
"""The dispersion chart of subgroups: ranges or standard deviations."""

Delimiter = Literal["auto", ",", ";", "\t", "|"]
"""The field separator of a delimited log; auto: sniffed from its first lines."""

DecimalMark = Literal[".", ","]
"""The decimal mark of numbers in a log."""

RecordFormat = Literal["text", "jsonl"]
"""What `check`, `watch` and `alarms list` print: text for people or one JSON record a line."""

CheckFormat = Literal["text", "jsonl", "html", "markdown"]
"""What `check` writes: text, JSON lines, or the analysis page as HTML or Markdown."""

PhaseLimits = Literal["per-phase", "first"]
"""The limits of each phase in `check`: its own Phase I limits, or the first phase's."""

ReportFormat = Literal["markdown", "html", "csv"]
"""The shift report: Markdown, one HTML file with charts, or CSV."""

ExportFormat = Literal["csv", "jsonl"]
"""The audit trail written out: CSV or JSON lines."""

AttributeChart = Literal["p", "np", "c", "u", "laney-p", "laney-u"]
"""The chart of attribute data: proportion, number nonconforming, defects, defects per unit,
and Laney's p′ and u′ (the engine's chart names, `domain.records.ATTRIBUTE_CHARTS`)."""

LAYOUTS: tuple[Layout, ...] = get_args(Layout)
DISPERSIONS: tuple[Dispersion, ...] = get_args(Dispersion)
DELIMITERS: tuple[Delimiter, ...] = get_args(Delimiter)
DECIMAL_MARKS: tuple[DecimalMark, ...] = get_args(DecimalMark)
RECORD_FORMATS: tuple[RecordFormat, ...] = get_args(RecordFormat)
CHECK_FORMATS: tuple[CheckFormat, ...] = get_args(CheckFormat)
PHASE_LIMITS: tuple[PhaseLimits, ...] = get_args(PhaseLimits)
REPORT_FORMATS: tuple[ReportFormat, ...] = get_args(ReportFormat)
EXPORT_FORMATS: tuple[ExportFormat, ...] = get_args(ExportFormat)
ATTRIBUTE_CHART_NAMES: tuple[AttributeChart, ...] = get_args(AttributeChart)

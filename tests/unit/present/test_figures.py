"""Figures written for people: ppm in plain digits."""

from __future__ import annotations

import pytest

from linewatch.present.figures import fmt_ppm


@pytest.mark.parametrize(("value", "shown"), [
    (18550.3, "18,550"),  # was 1.855e+04
    (1.077e-15, "< 0.001"),  # was 1.077e-15
    (1030.4, "1,030"),
    (123.4, "123"),
    (99.96, "100"),
    (12.345, "12.3"),
    (1.5, "1.50"),
    (0.04567, "0.0457"),
    (0.001, "0.00100"),
    (0.0, "< 0.001"),  # an underflowed normal tail
    (1e6, "1,000,000"),
])
def test_ppm_is_plain_digits_with_sensible_rounding(value: float, shown: str) -> None:
    assert fmt_ppm(value) == shown
    assert "e" not in fmt_ppm(value)


def test_missing_ppm_shows_the_callers_mark() -> None:
    assert fmt_ppm(None) == ""
    assert fmt_ppm(float("nan"), "-") == "-"


def test_the_phase_table_shows_a_tiny_tail_as_below_a_thousandth() -> None:
    from rich.console import Console

    from linewatch.faces.tui.widgets.phase_table import phase_table
    from linewatch.present.view import PhaseStats

    console = Console(width=200, color_system=None, file=None)
    with console.capture() as cap:
        console.print(phase_table([PhaseStats(1, 0, 50, 12.0, 0.01, (11.99, 12.01), 1.7, 1.6,
                                              (1.4, 1.8), 1.077e-15)]))
    assert "< 0.001" in cap.get() and "e-15" not in cap.get()


def test_the_reports_write_ppm_with_the_same_function() -> None:
    from linewatch.report.build import ppm

    assert ppm(18550.3) == "18,550" and ppm(1.077e-15) == "< 0.001" and ppm(None) == ""


@pytest.mark.parametrize(("setting", "lsl", "usl", "sigma", "decimals"), [
    (None, 11.95, 12.05, 0.012, 3),  # ±0.05 mm: 12.012, not 12.01
    (None, 495.0, 515.0, 2.6, 1),
    (None, 1.45, 1.55, None, 3),
    (None, None, 1.5, 0.12, 2),  # one-sided: from σ
    (None, None, None, None, None),
    (2, 11.95, 12.05, 0.012, 2),  # the config's `decimals` wins
])
def test_one_function_decides_the_decimals(setting, lsl, usl, sigma, decimals) -> None:
    from linewatch.present.figures import reading_decimals

    assert reading_decimals(setting, lsl, usl, sigma) == decimals


def test_a_reading_is_written_with_its_decimals() -> None:
    from linewatch.present.figures import fmt_reading

    assert fmt_reading(12.0123, 3) == "12.012"
    assert fmt_reading(12.0, 3) == "12.000"
    assert fmt_reading(12.0123, None) == "12.01"
    assert fmt_reading(None, 3) == "-"


def test_the_phase_table_puts_ppm_beside_pp_and_ppk_and_says_which_sigma() -> None:
    from rich.console import Console

    from linewatch.faces.tui.widgets.phase_table import phase_table
    from linewatch.present.view import PhaseStats

    console = Console(width=80, color_system=None, file=None)
    with console.capture() as cap:
        console.print(phase_table([PhaseStats(1, 0, 50, 12.0, 0.01, (11.99, 12.01), 1.45, 1.31,
                                              (1.1, 1.5), 1030.0, 1.10, 0.99)]))
    lines = cap.get().splitlines()
    header = next(line for line in lines if "ppm" in line).split()
    assert header[-3:] == ["Pp", "Ppk", "ppm"]  # the ppm sits with the overall-SD indices
    row = lines[lines.index(next(line for line in lines if "ppm" in line)) + 1].split()
    assert row[-3:] == ["1.10", "0.99", "1,030"]
    assert any("σ within" in line and "overall SD" in line for line in lines)


@pytest.mark.parametrize(("values", "decimals"), [
    ([1.501, 1.49, 1.5], 3),  # the wall station writes 3 decimals
    ([500.4, 499.0], 1),
    ([12.0, 13.0], 0),
    ([], None),
])
def test_the_gauges_resolution_is_read_from_its_values(values, decimals) -> None:
    from linewatch.present.figures import resolution_decimals

    assert resolution_decimals(values) == decimals


def test_no_more_decimals_than_the_gauge_writes() -> None:
    from linewatch.present.figures import reading_decimals

    # the tolerance 1.46..1.54 alone asks for 4 decimals; the gauge writes 3 (1.5010 -> 1.501)
    assert reading_decimals(None, 1.46, 1.54, 0.01) == 4
    assert reading_decimals(None, 1.46, 1.54, 0.01, [1.501, 1.499]) == 3
    assert reading_decimals(None, 496.0, 505.0, 1.2, [500.4, 499.9]) == 1
    assert reading_decimals(None, None, None, None, [500.4]) == 1
    assert reading_decimals(2, 1.46, 1.54, 0.01, [1.501]) == 2  # the config still wins

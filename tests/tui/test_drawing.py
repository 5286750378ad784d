"""The character drawings: control chart, spec-margin gauge, sparkline cell and box plot put each
mark where its value says (geometry checked against the values, not against earlier output)."""

from __future__ import annotations

from hypothesis import given, settings
from hypothesis import strategies as st
from rich.console import Console

from linewatch.domain.durations import format_age
from linewatch.faces.tui.glyphs import ASCII, UNICODE, Glyphs
from linewatch.faces.tui.widgets.box_plot import draw_box_plot
from linewatch.faces.tui.widgets.control_chart import LABEL_WIDTH, draw_control_chart
from linewatch.faces.tui.widgets.margin_gauge import gauge_bar, margin_gauge
from linewatch.faces.tui.widgets.spark_cell import SparkCell
from linewatch.present import view
from linewatch.present.close_up import box_figures
from linewatch.present.mark_points import mark_chart, point_mark, point_marks


def lines_of(text: object, width: int = 200) -> list[str]:
    console = Console(width=width, color_system=None, file=None)
    with console.capture() as cap:
        console.print(text, crop=False, soft_wrap=True)
    return cap.get().rstrip("\n").split("\n")


def chart(values: list[float], rules: list[str] | None = None,
          phase_starts: list[int] | None = None) -> view.ChartView:
    return mark_chart(view.ChartView(
        "individuals", values, list(range(len(values))), rules or [""] * len(values),
        center=0.0, ucl=3.0, lcl=-3.0, sigma=1.0, phase_starts=phase_starts or [0]))


def row_with(lines: list[str], label: str) -> int:
    return next(i for i, line in enumerate(lines) if label in line)


def test_points_sit_on_the_right_side_of_the_limits_and_carry_their_pattern_mark() -> None:
    values = [0.0] * 9 + [4.0] + [-1.5]
    rules = [""] * 9 + ["we1", ""]
    lines = lines_of(draw_control_chart(chart(values, rules), 40 + LABEL_WIDTH, 15, UNICODE))
    ucl, cl, lcl = row_with(lines, "UCL 3"), row_with(lines, "CL 0"), row_with(lines, "LCL -3")
    assert ucl < cl < lcl
    signal_row = next(i for i, line in enumerate(lines) if line[:40].count("B") == 1)
    assert signal_row < ucl  # 4.0 is above the UCL, marked as beyond a limit
    low_row = next(i for i, line in enumerate(lines) if "•" in line[:40] and i > cl
                   and i != cl)
    assert cl < low_row < lcl  # −1.5 lies between the centre line and the LCL


def test_zones_at_one_and_two_sigma_are_drawn_between_the_limits() -> None:
    lines = lines_of(draw_control_chart(chart([0.0, 0.5, -0.5]), 30 + LABEL_WIDTH, 25, UNICODE))
    ucl, cl, lcl = row_with(lines, "UCL"), row_with(lines, " CL "), row_with(lines, "LCL")
    zone_rows = [i for i, line in enumerate(lines) if line.count("·") >= 5]
    assert len(zone_rows) == 4
    assert all(ucl < r < lcl and r != cl for r in zone_rows)


def test_a_phase_start_draws_a_vertical_separator() -> None:
    values = [0.0] * 20
    lines = lines_of(draw_control_chart(chart(values, phase_starts=[0, 12]), 20 + LABEL_WIDTH,
                                        9, ASCII))
    columns = {line.index("|") for line in lines if "|" in line[:20]}
    assert columns == {12}
    assert all(line[12] in "|o" for line in lines)


def test_far_spec_limits_are_named_instead_of_squashing_the_chart() -> None:
    lines = lines_of(draw_control_chart(chart([0.0, 1.0]), 30 + LABEL_WIDTH, 9, UNICODE,
                                        lsl=-40.0, usl=2.5))
    assert any("USL 2.5" in line for line in lines)  # near: drawn as a line
    assert any("LSLv -40" in line for line in lines)  # far: named at the edge
    assert row_with(lines, "UCL") < row_with(lines, "USL 2.5") < row_with(lines, " CL ")


def test_the_cursor_marks_its_column() -> None:
    lines = lines_of(draw_control_chart(chart([0.0] * 10), 10 + LABEL_WIDTH, 7, ASCII, cursor=4))
    assert lines[0][4] == "v"


def test_gauge_puts_the_mean_and_band_between_the_brackets() -> None:
    bar = gauge_bar(10.0, 1.0, 0.0, 20.0, 41, UNICODE).plain
    assert bar.index("[") < bar.index("=") < bar.index("■") < bar.rindex("=") < bar.index("]")
    middle = (bar.index("[") + bar.index("]")) / 2
    assert abs(bar.index("■") - middle) <= 1


def test_gauge_band_crosses_the_bracket_when_the_process_spreads_past_a_limit() -> None:
    # mean 18, σ 1: the band reaches 21, beyond USL 20, so band cells lie right of the bracket.
    bar = gauge_bar(18.0, 1.0, 0.0, 20.0, 41, ASCII).plain
    assert bar.rindex("=") > bar.index("]") or bar.index("]") == len(bar.rstrip()) - 1
    assert bar.index("#") > bar.index("[")


def test_margin_gauge_shows_margin_cpk_and_lower_bound() -> None:
    cv = view.CharacteristicView("od", lsl=0.0, usl=20.0, recent_mean=10.0, recent_sigma=1.0,
                                 margin_sigma=10.0, cpk=3.33, cpk_lower95=2.9)
    text = margin_gauge(cv, 30, UNICODE, wide=True).plain
    assert "10.0σ" in text and "Cpk 3.33" in text and ">2.90" in text and "good" in text


def test_spark_cell_marks_sit_under_their_points_and_the_newest_is_rightmost() -> None:
    values = [1.0, 2.0, 3.0, 9.0, 2.0]
    rules = ["", "", "", "n5", ""]
    cell = SparkCell(values, point_marks(rules), 8, ASCII)
    marks = cell.markers().plain
    assert len(marks) == 8
    assert marks.index("Z") == 8 - 5 + 3  # right-aligned: three pads, then the 4th point
    bars = lines_of(cell)[0]
    assert len(bars) == 8
    assert bars[:3] == "   " and bars[6] == ASCII.spark_bars[-1]  # 9.0 is the tallest bar
    assert bars.isascii()


def test_spark_cell_keeps_only_the_newest_points_that_fit() -> None:
    cell = SparkCell([float(i) for i in range(50)], point_marks([""] * 49 + ["we2"]), 10,
                     UNICODE)
    assert cell.values == [float(i) for i in range(40, 50)]
    assert cell.markers().plain == " " * 9 + "Z"


def test_box_plot_marks_outliers_and_spec_brackets() -> None:
    values = [10.0, 10.2, 9.9, 10.1, 10.0, 9.8, 10.3, 14.0]
    first = draw_box_plot(box_figures(values), 9.0, 15.0, 60, ASCII).plain.split("\n")[0]
    # the box around 10 sits left of the outlier at 14; 9 and 15 are the brackets
    assert first.index("[") < first.index("M") < first.index("o") < first.index("]")
    assert first.rindex("|") < first.index("o")
    left, right = first.index("["), first.index("]")
    assert abs((first.index("o") - left) / (right - left) - (14 - 9) / (15 - 9)) < 0.05


def test_small_text_helpers() -> None:
    assert [format_age(s) for s in (None, 4.9, 37, 61, 7300, 90000)] == [
        "-", "<10s", "30s", "1m", "2h", "1d"]
    # the kinds of pattern as the rules are published (Western Electric 1956, Nelson 1984):
    # we2 and n5 are "2 of 3 beyond 2σ" (zone), n2 is "9 in a row on one side", n1 beyond 3σ;
    # a point with several rules shows the most urgent kind
    assert [point_mark(r) for r in ("", "we2", "n5,n6", "n2", "n2,n1", "n3", "n4", "n7", "n8",
                                   "spec")] == ["", "Z", "Z", "S", "B", "T", "A", "H", "M", "?"]


def line_rows(lines: list[str], cols: range, glyph: str) -> set[int]:
    """Rows whose cells in `cols` are all `glyph` (a limit line drawn across those columns)."""
    return {i for i, line in enumerate(lines) if all(line[c] == glyph for c in cols)}


def test_each_phase_is_drawn_against_its_own_limits_with_a_separator_between() -> None:
    # phase 1 (points 0-9) around 0 with σ 1; phase 2 (points 10-19) around 10 with σ 1
    values = [0.0] * 10 + [10.0] * 10
    two = view.ChartView("individuals", values, list(range(20)), [""] * 20,
                         center=10.0, ucl=13.0, lcl=7.0, sigma=1.0, phase_starts=[10],
                         phase_limits=[(0, 0.0, 3.0, -3.0, 1.0), (10, 10.0, 13.0, 7.0, 1.0)])
    lines = lines_of(draw_control_chart(two, 20 + LABEL_WIDTH, 40, ASCII))
    old_rows = line_rows(lines, range(1, 9), "-")  # columns of the first phase
    new_rows = line_rows(lines, range(11, 20), "-")  # columns of the second phase
    # each phase: UCL and LCL lines; its CL row is covered by its own points
    assert len(old_rows) == 2 and len(new_rows) == 2
    # the labels name the newest phase
    assert {row_with(lines, "UCL 13"), row_with(lines, "LCL 7")} == new_rows
    new_cl = row_with(lines, "CL 10")
    assert set(lines[new_cl][10:20]) == {"o"}
    # the old phase's band (values -3..3) lies below the new one (7..13), the old points on
    # the old centre line halfway between the old UCL and LCL rows
    assert min(old_rows) > max(new_rows)
    old_cl = sum(old_rows) // 2
    assert set(lines[old_cl][0:10]) == {"o"}
    assert "o" not in lines[old_cl][11:20] and "o" not in lines[new_cl][0:10]
    # the separator stands at the first point of the second phase, nowhere else
    columns = {line.index("|") for line in lines if "|" in line[:20]}
    assert columns == {10}


def test_a_chart_without_a_phase_list_draws_its_current_limits_across() -> None:
    lines = lines_of(draw_control_chart(chart([0.0] * 20), 20 + LABEL_WIDTH, 15, ASCII))
    assert line_rows(lines, range(1, 20), "-") == {row_with(lines, "UCL 3"),
                                                  row_with(lines, "LCL -3")}


def test_a_far_lower_spec_limit_is_named_at_the_bottom_edge_not_inside_the_band() -> None:
    lines = lines_of(draw_control_chart(chart([0.0, 1.0]), 30 + LABEL_WIDTH, 9, UNICODE,
                                        lsl=-40.0, usl=40.0))
    lcl = row_with(lines, "LCL -3")
    lsl = row_with(lines, "LSLv -40")
    usl = row_with(lines, "USL^ 40")
    # at the edge row of its side, beyond every limit drawn: never inside the control band
    assert lsl == len(lines) - 1 and lcl < lsl
    assert usl == 0 and row_with(lines, "UCL 3") > usl


@settings(max_examples=60, deadline=None)
@given(st.lists(st.floats(-1e300, 1e300, allow_nan=False), min_size=2, max_size=40),
       st.sampled_from([ASCII, UNICODE]))
def test_spark_cell_bars_are_textuals_sparkline(values: list[float], glyphs: Glyphs) -> None:
    """The bars are drawn as Textual's one-line sparkline draws the points' places between the
    lowest and the highest (the reference: textual.renderables.sparkline), glyph and colour."""
    import io

    from rich.color import Color
    from rich.console import Console
    from textual.renderables.sparkline import Sparkline

    from linewatch.faces.tui import palette
    from linewatch.present.scales import fraction_of

    class Bars(Sparkline[float]):
        BARS = glyphs.spark_bars

    lo, hi = min(values), max(values)
    reference = Bars([fraction_of(v, lo, hi) for v in values], width=len(values), height=1,
                     min_color=Color.parse(palette.SPARK_LOW),
                     max_color=Color.parse(palette.SPARK_HIGH))
    console = Console(file=io.StringIO(), color_system="truecolor", width=400)
    want = [(seg.text, seg.style.color if seg.style else None)
            for seg in console.render(reference, console.options.update(width=len(values)))
            if seg.text != "\n"]
    text = SparkCell(values, [""] * len(values), len(values), glyphs).to_text()
    bars = text.split("\n")[0]
    got = [(bars.plain[i], bars.get_style_at_offset(console, i).color)
           for i in range(len(bars.plain))]
    assert got == want

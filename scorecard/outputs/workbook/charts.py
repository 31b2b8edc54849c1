"""Native spreadsheet charts over ranges of the workbook's own tables.

Charts read their numbers from cells, so a reader can trace every bar to a table row. Goods are
drawn in a dark cool colour and bads in a light warm one, and lines of bads are dashed, so the
series stay apart in black and white; every series carries its name in the legend.
"""

from __future__ import annotations

import math
from typing import NamedTuple

from openpyxl.chart import BarChart, LineChart, Reference, Series
from openpyxl.chart.text import RichText, Text
from openpyxl.chart.title import Title
from openpyxl.drawing.text import (
    CharacterProperties,
    Paragraph,
    ParagraphProperties,
    RegularTextRun,
)
from openpyxl.utils import get_column_letter
from openpyxl.worksheet.worksheet import Worksheet

from scorecard.outputs.workbook import style

WIDTH_CM, HEIGHT_CM, MAX_WIDTH_CM = 14.0, 8.0, 20.0
ASPECT = 0.55                       # height over width
ROW_CM = 0.53                       # a row of the default height (15 points)
CHARACTER_CM = 0.19                 # a unit of column width (one character of the default font)
DEFAULT_COLUMN_WIDTH = 8.43         # what spreadsheet programs show for a column left unset
# A4 landscape inside the margins that tables.set_print_layout sets.
PRINT_WIDTH_CM, PRINT_HEIGHT_CM = 27.0, 17.5
# A chart of the default height covers about this many rows.
ROWS_PER_CHART = 17
TITLE_SIZE, AXIS_TITLE_SIZE = 1000, 800   # hundredths of a point


class Grid(NamedTuple):
    """Size of charts laid out in a grid under a table, and how many grid rows a page holds."""

    width_cm: float
    height_cm: float
    rows_per_chart: int
    chart_rows_per_page: int


def chart_grid(table_width_cm: float, across: int = 2) -> Grid:
    """Charts ``across`` side by side as wide as the table above them, and whole on a page.

    Printing fits the sheet to the page width, so a wide table shrinks the page; the charts are
    sized to the table and the number of chart rows per page follows from the same scale.

    Examples
    --------
    >>> chart_grid(42.0)
    Grid(width_cm=20.0, height_cm=11.0, rows_per_chart=22, chart_rows_per_page=2)
    """
    width = min(MAX_WIDTH_CM, max(WIDTH_CM, (table_width_cm - 0.5) / across))
    height = round(width * ASPECT, 2)
    rows = math.ceil(height / ROW_CM) + 1
    scale = min(1.0, PRINT_WIDTH_CM / max(table_width_cm, across * (width + 0.5)))
    # Three rows go to the repeated header and the space around it.
    page_rows = PRINT_HEIGHT_CM / scale / ROW_CM - 3
    return Grid(width, height, rows, max(1, int(page_rows // rows)))


def table_width_cm(ws: Worksheet, n_columns: int, start_col: int = 1) -> float:
    """Printed width of ``n_columns`` columns from ``start_col``."""
    total = 0.0
    for col in range(start_col, start_col + n_columns):
        letter = get_column_letter(col)
        width = ws.column_dimensions[letter].width if letter in ws.column_dimensions else None
        total += (width or DEFAULT_COLUMN_WIDTH) * CHARACTER_CM
    return total


class Plotted(NamedTuple):
    """One series: the column of values, its legend word, colour and dash style."""

    column: int
    title: str
    colour: str
    dash: str | None = None


def column_ref(ws: Worksheet, column: int, first_row: int, last_row: int) -> Reference:
    return Reference(ws, min_col=column, max_col=column, min_row=first_row, max_row=last_row)


def text_title(text: str, size: int = TITLE_SIZE) -> Title:
    """A chart or axis title in a modest bold size, so the plot keeps most of the frame."""
    font = CharacterProperties(sz=size, b=True)
    paragraph = Paragraph(pPr=ParagraphProperties(defRPr=font), r=[RegularTextRun(rPr=font, t=text)])
    return Title(tx=Text(rich=RichText(p=[paragraph])), overlay=False)


def _finish(chart, title: str, x_title: str | None, y_title: str, y_format: str) -> None:
    chart.title = text_title(title)
    chart.width, chart.height = WIDTH_CM, HEIGHT_CM
    if x_title is not None:
        chart.x_axis.title = text_title(x_title, AXIS_TITLE_SIZE)
    chart.y_axis.title = text_title(y_title, AXIS_TITLE_SIZE)
    chart.y_axis.number_format = y_format
    chart.y_axis.majorGridlines = None
    # openpyxl marks axes as deleted unless told otherwise; readers then draw no axes.
    chart.x_axis.delete = False
    chart.y_axis.delete = False
    chart.legend.position = "b"
    # Filtering the table hides rows; the chart should still show every attribute.
    chart.visible_cells_only = False


def bad_rate_and_woe_chart(ws: Worksheet, title: str, first_row: int, last_row: int, *,
                           label_col: int, bad_rate_col: int, woe_col: int, ordered_rows: int,
                           apart_col: int | None, joined: bool = True) -> BarChart:
    """Bars of the bad rate (left axis) and the weight of evidence as points (right axis).

    The first ``ordered_rows`` bins are plotted from ``woe_col``: joined by a line when they are
    ordered ranges of values, as bare points when they are groups of levels, which have no
    order. The bins after them (missing, sentinel values, unseen levels) stand apart from any
    order, so they come from ``apart_col``, a column that holds their weight of evidence and is
    blank elsewhere (and blank for a bin without development rows, which has no weight of
    evidence to show); they are drawn as separate points with a marker of their own.
    """
    bars = BarChart()
    bars.type = "col"
    bars.gapWidth = 60
    rate = Series(column_ref(ws, bad_rate_col, first_row, last_row), title="Bad rate")
    rate.graphicalProperties.solidFill = style.BAD_LINE
    rate.graphicalProperties.line.solidFill = style.BAD_LINE
    bars.series.append(rate)
    bars.set_categories(column_ref(ws, label_col, first_row, last_row))
    _finish(bars, title, None, "Bad rate (bars)", "0%")

    line = LineChart()
    word = "ranges" if joined else "levels"
    ordered = Series(column_ref(ws, woe_col, first_row, first_row + ordered_rows - 1),
                     title=f"Weight of evidence ({word})")
    _woe_points(ordered, "circle", joined)
    line.series.append(ordered)
    if apart_col is not None:
        apart = Series(column_ref(ws, apart_col, first_row, last_row),
                       title="Weight of evidence (missing, sentinel)")
        _woe_points(apart, "diamond", joined=False)
        line.series.append(apart)
    line.y_axis.axId = 200
    line.y_axis.title = text_title("Weight of evidence", AXIS_TITLE_SIZE)
    line.y_axis.number_format = "0.0"
    line.y_axis.majorGridlines = None
    line.y_axis.crosses = "max"
    line.y_axis.delete = False
    bars += line
    # A blank cell is no point at all, never a point at 0.
    bars.display_blanks = "gap"
    return bars


def _woe_points(series: Series, symbol: str, joined: bool) -> None:
    series.smooth = False
    series.marker.symbol = symbol
    series.marker.size = 7
    series.marker.graphicalProperties.solidFill = style.GOOD_LINE
    series.marker.graphicalProperties.line.solidFill = style.GOOD_LINE
    if joined:
        series.graphicalProperties.line.solidFill = style.GOOD_LINE
        series.graphicalProperties.line.width = 28575
    else:
        series.graphicalProperties.line.noFill = True


def bar_chart(ws: Worksheet, title: str, first_row: int, last_row: int, *, label_col: int,
              series: list[Plotted], x_title: str, y_title: str, y_format: str = "0%") -> BarChart:
    """Side-by-side bars of several columns against one column of labels."""
    chart = BarChart()
    chart.type = "col"
    chart.gapWidth = 40
    for spec in series:
        s = Series(column_ref(ws, spec.column, first_row, last_row), title=spec.title)
        s.graphicalProperties.solidFill = spec.colour
        s.graphicalProperties.line.solidFill = spec.colour
        chart.series.append(s)
    chart.set_categories(column_ref(ws, label_col, first_row, last_row))
    _finish(chart, title, x_title, y_title, y_format)
    return chart


def line_chart(ws: Worksheet, title: str, first_row: int, last_row: int, *, label_col: int,
               series: list[Plotted], x_title: str, y_title: str, y_format: str = "0%",
               y_max: float | None = None) -> LineChart:
    """Lines of several columns against one column of labels, dashed where asked."""
    chart = LineChart()
    if y_max is not None:
        chart.y_axis.scaling.min, chart.y_axis.scaling.max = 0, y_max
    for spec in series:
        s = Series(column_ref(ws, spec.column, first_row, last_row), title=spec.title)
        s.graphicalProperties.line.solidFill = spec.colour
        s.graphicalProperties.line.width = 22225
        if spec.dash is not None:
            s.graphicalProperties.line.dashStyle = spec.dash
        s.smooth = False
        chart.series.append(s)
    chart.set_categories(column_ref(ws, label_col, first_row, last_row))
    _finish(chart, title, x_title, y_title, y_format)
    return chart


def column_after(ws: Worksheet, start_col: int, width_cm: float) -> int:
    """The first column to the right of a chart of ``width_cm`` anchored at ``start_col``."""
    covered, col = 0.0, start_col
    while covered < width_cm:
        letter = get_column_letter(col)
        width = ws.column_dimensions[letter].width if letter in ws.column_dimensions else None
        covered += (width or DEFAULT_COLUMN_WIDTH) * CHARACTER_CM
        col += 1
    return col


def scatter_line_chart(ws: Worksheet, title: str, first_row: int, last_row: int, *, x_col: int,
                       y_col: int, series_title: str, x_title: str, y_title: str,
                       x_format: str = "0%", y_format: str = "0%"):
    """One line of ``y_col`` against ``x_col`` on value axes (a trade-off curve)."""
    from openpyxl.chart import ScatterChart
    chart = ScatterChart()
    chart.style = 13
    s = Series(column_ref(ws, y_col, first_row, last_row),
               column_ref(ws, x_col, first_row, last_row), title=series_title)
    s.graphicalProperties.line.solidFill = style.BAD_LINE
    s.graphicalProperties.line.width = 22225
    s.marker.symbol = "none"
    s.smooth = False
    chart.series.append(s)
    _finish(chart, title, x_title, y_title, y_format)
    chart.x_axis.number_format = x_format
    chart.x_axis.majorGridlines = None
    if x_format.endswith("%"):
        chart.x_axis.scaling.min, chart.x_axis.scaling.max = 0, 1
    return chart

"""The Risk grades sheet: score ranges with their PDs, when the config asks for grades."""

from __future__ import annotations

from openpyxl.utils import get_column_letter
from openpyxl.worksheet.worksheet import Worksheet

from scorecard.outputs.workbook import charts, style
from scorecard.outputs.workbook.sheets import column_of, note
from scorecard.outputs.workbook.tables import finish_table_sheet, write_table

TITLE = "Risk grades"
FORMATS = {"Grade": style.INTEGER, "Lowest score": style.INTEGER,
           "Highest score": style.INTEGER, "Rows": style.COUNT, "Share of rows": style.PERCENT,
           "Goods": style.COUNT, "Bads": style.COUNT, "Predicted PD": "0.00%",
           "Observed bad rate": "0.00%", "Lower bound (95%)": "0.00%",
           "Upper bound (95%)": "0.00%", "Calibrated PD": "0.00%"}


def write_grades_sheet(ws: Worksheet, result) -> None:
    grades = result.grades()
    table = grades.table
    if grades.shift is None:
        table = table.drop(columns="Calibrated PD")
    header, last = write_table(ws, table, formats={k: v for k, v in FORMATS.items()
                                                   if k in table.columns})
    finish_table_sheet(ws, header, last, len(table.columns))
    sample = result.gains_sample
    row = note(ws, last + 2, f"Sample: {sample}. Grade 1 is the lowest risk. Predicted PD: the "
                             "mean of the scaling's bad probability over the grade's rows; a "
                             "worse grade never has a lower PD.")
    row = note(ws, row, "Observed bad rate with a 95% Wilson score interval for a binomial "
                        "proportion.")
    for text in getattr(result, "notes", ()):
        row = note(ws, row, text)
    if grades.shift is not None:
        row = note(ws, row, f"Calibrated to a long-run average bad rate of "
                            f"{grades.long_run_bad_rate:.2%}: the intercept moves by "
                            f"{grades.shift:+.4f} in log-odds of bad ({grades.shift_points:+.1f} "
                            "score points), so that the calibrated PDs average to that rate over "
                            "the rows.")
    series = [charts.Plotted(column_of(table, "Predicted PD"), "Predicted PD", style.GOOD_LINE),
              charts.Plotted(column_of(table, "Observed bad rate"), "Observed bad rate",
                             style.BAD_LINE)]
    if grades.shift is not None:
        series.append(charts.Plotted(column_of(table, "Calibrated PD"), "Calibrated PD",
                                     style.NEUTRAL_LINE))
    chart = charts.bar_chart(ws, f"Probability of default by grade ({sample})", header + 1, last,
                             label_col=column_of(table, "Grade"), series=series,
                             x_title="Grade (1 = lowest risk)", y_title="Probability",
                             y_format="0%")
    ws.add_chart(chart, f"{get_column_letter(1)}{row + 1}")

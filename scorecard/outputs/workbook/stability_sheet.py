"""The Stability sheet: how far later samples moved from the development sample.

Row 1 heads one summary line per index (the score's and each characteristic's) for every
comparison. Below it, each comparison has its score-band table with a chart of baseline against
current shares, then one table per characteristic. Status is written as a word, so the tint
behind it is never the only sign.
"""

from __future__ import annotations

import pandas as pd
from openpyxl.utils import get_column_letter
from openpyxl.worksheet.pagebreak import Break
from openpyxl.worksheet.worksheet import Worksheet

from scorecard.outputs.workbook import charts, style
from scorecard.outputs.workbook.sheets import note
from scorecard.outputs.workbook.tables import (
    finish_table_sheet,
    safe_value,
    write_table,
)

SUMMARY_COLUMNS = ["Baseline", "Current", "Measure", "Stability index", "Status",
                   "Critical value (95%)", "Beyond chance", "Points shift"]
DETAIL_FORMATS = {"Points": style.INTEGER, "Baseline rows": style.COUNT,
                  "Current rows": style.COUNT, "Baseline share": style.PERCENT,
                  "Current share": style.PERCENT, "Contribution": style.WOE}
STATUS_FILLS = {"watch": style.HIGHER_RISK_FILL, "shift": style.HIGHER_RISK_FILL}
# Width of a chart that openpyxl draws at its default size, and the gap before it, in cm.
CHART_CM = 15.5


def summary_frame(comparisons) -> pd.DataFrame:
    """One row per index: the score's first, then each characteristic's, per comparison."""
    rows = []
    for comparison in comparisons:
        for result in (comparison.score, *comparison.characteristics):
            rows.append({
                "Baseline": comparison.baseline, "Current": comparison.current,
                "Measure": "score" if result is comparison.score else result.name,
                "Stability index": result.index, "Status": result.status,
                "Critical value (95%)": result.critical_value,
                "Beyond chance": "yes" if result.beyond_chance else "no",
                "Points shift": result.points_shift,
            })
    return pd.DataFrame(rows, columns=SUMMARY_COLUMNS)


def write_stability(ws: Worksheet, comparisons, *, watch: float, shift: float) -> None:
    """Fill the sheet from a build's ``result.stability`` comparisons."""
    summary = summary_frame(comparisons)
    header, last = write_table(ws, summary, formats={
        "Stability index": style.WOE, "Critical value (95%)": style.WOE,
        "Points shift": "+0.00;-0.00;0.00"})
    status_col = SUMMARY_COLUMNS.index("Status") + 1
    for row in range(header + 1, last + 1):
        fill = STATUS_FILLS.get(ws.cell(row, status_col).value)
        if fill is not None:
            ws.cell(row, status_col).fill = fill
    finish_table_sheet(ws, header, last, len(summary.columns), more_tables=bool(comparisons))
    row = note(ws, last + 2, f"Status by the index: below {watch:g} stable, from {watch:g} "
                             f"watch, from {shift:g} shift. Beyond chance: the index exceeds "
                             f"what two samples of these sizes from one population show 95% "
                             f"of the time. Points shift: change of the mean score that the "
                             f"characteristic's movement causes.")
    if not comparisons:
        note(ws, row + 1, "No holdout or out-of-time sample: nothing to compare with.")
        return
    row += 1
    blocks: list[tuple[int, int, int]] = []
    for comparison in comparisons:
        row = _comparison(ws, comparison, row + 1, blocks)
    _page_breaks(ws, blocks)


def _page_breaks(ws: Worksheet, blocks) -> None:
    """Each comparison starts a page; a table that would cross the page foot starts the next.

    Printing fits the sheet to the page width, so the rows a page holds follow from the widest
    of the tables and the score-band table with its chart. Every table then keeps its own
    title and headings in print.
    """
    width = max(charts.table_width_cm(ws, ws.max_column),
                charts.table_width_cm(ws, blocks[0][2]) + CHART_CM)
    scale = min(1.0, charts.PRINT_WIDTH_CM / width)
    # Less the repeated header row, and two rows for the taller table headers.
    page_rows = charts.PRINT_HEIGHT_CM * 0.97 / scale / charts.ROW_CM - 3
    top = None
    for first, last, starts_page in blocks:
        if starts_page or (last - top + 1) > page_rows:
            ws.row_breaks.append(Break(id=first - 1))
            top = first


def _comparison(ws: Worksheet, comparison, row: int, blocks: list) -> int:
    """The detail of one comparison from ``row``; returns the last row used.

    Appends to ``blocks`` each table's first and last row, and for the score-band table (which
    starts the page) the number of its columns.
    """
    pair = f"{comparison.baseline} (baseline) vs {comparison.current} (current)"
    ws.cell(row, 1, safe_value(pair)).font = style.TITLE_FONT
    score = comparison.score
    table = score.table
    header, last = write_table(
        ws, table, start_row=row + 1, formats=_formats(table),
        title=f"Score by band: index {score.index:.4f}, {score.status}")
    end = note(ws, last + 1, table.attrs.get("note", ""))
    chart_col = len(table.columns) + 2
    columns = list(table.columns)
    chart = charts.bar_chart(
        ws, f"Share of rows by score band: {comparison.baseline} vs {comparison.current}",
        header + 1, last, label_col=columns.index("Band") + 1,
        series=[charts.Plotted(columns.index("Baseline share") + 1,
                            f"{comparison.baseline} (baseline)", style.BASELINE_FILL),
                charts.Plotted(columns.index("Current share") + 1,
                            f"{comparison.current} (current)", style.CURRENT_FILL)],
        x_title="Score band", y_title="Share of rows")
    ws.add_chart(chart, f"{get_column_letter(chart_col)}{row + 1}")
    first = row
    row = max(end, row + 1 + charts.ROWS_PER_CHART)
    blocks.append((first, row, len(columns)))
    for result in comparison.characteristics:
        first = row + 1
        _, last = write_table(
            ws, result.table, start_row=row + 1, formats=_formats(result.table),
            title=f"{result.name}: index {result.index:.4f}, {result.status} "
                  f"({comparison.current} vs {comparison.baseline})")
        row = note(ws, last + 1, result.table.attrs.get("note", ""))
        blocks.append((first, row, 0))
    return row


def _formats(table: pd.DataFrame) -> dict:
    return {k: v for k, v in DETAIL_FORMATS.items() if k in table.columns}

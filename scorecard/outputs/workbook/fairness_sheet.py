"""The Fairness sheet of the workbook: the caution, the findings in words, then the tables."""

from __future__ import annotations

from openpyxl.worksheet.pagebreak import Break
from openpyxl.worksheet.worksheet import Worksheet

from scorecard.evaluation.fairness import FairnessReport
from scorecard.outputs.cautions import CAUTION as _GENERAL
from scorecard.outputs.cautions import SCREEN
from scorecard.outputs.workbook import style
from scorecard.outputs.workbook.tables import safe_value, set_print_layout, write_table

CAUTION = f"{_GENERAL} {SCREEN}"
NO_FINDINGS = ("No characteristic reaches the proxy limit and no group falls below four-fifths "
               "of the most favoured group's approval rate at these cut-offs.")
# The caution spans the width of the widest table, so it reads as one paragraph above them.
_CAUTION_COLUMNS = 8


GROUP_TABLES = 2           # index of the first table by group


def write_fairness_sheet(ws: Worksheet, report: FairnessReport) -> int:
    """Write the fair-lending check into ``ws``.

    The sheet opens with the caution, then the findings (each flag as a sentence, so that
    nothing rests on colour), the notes on method, and four tables: association with the
    protected columns, the cut-off scores, approval rates by group, and bad rate and average
    score by group.

    Parameters
    ----------
    ws : Worksheet
    report : FairnessReport

    Returns
    -------
    int
        The last row written.

    Examples
    --------
    >>> import pandas as pd
    >>> from openpyxl import Workbook
    >>> empty = pd.DataFrame()
    >>> report = FairnessReport(pd.DataFrame({"Characteristic": ["x"], "Cramér's V": [0.2]}),
    ...                         empty, empty, empty, "holdout", ("x may stand in for age",), ())
    >>> ws = Workbook().active
    >>> last = write_fairness_sheet(ws, report)
    >>> ws["A2"].value.startswith("A scorecard is a statistical aid")
    True
    """
    ws.cell(1, 1, "Fairness check").font = style.TITLE_FONT
    _caution(ws, 2)
    row = _lines(ws, 4, "Findings", report.flags or (NO_FINDINGS,), style.BOLD)
    row = _lines(ws, row + 1, "How the figures were made", report.notes, style.NOTE_FONT)
    sample = report.sample
    tables = (
        (report.proxies, "Association of protected columns with the scorecard's bins "
                         "(development sample)",
         {"Mutual information (bits)": style.WOE, "Cramér's V": style.MEASURE}),
        (report.cutoffs, f"Cut-off scores ({sample} sample)",
         {"Target approval share": style.PERCENT, "Achieved approval share": style.PERCENT}),
        (report.impact, f"Approval rate by group at each cut-off ({sample} sample)",
         {"Rows": style.COUNT, "Approval rate": style.PERCENT,
          "Ratio to most favoured": style.MEASURE}),
        (report.risk, "Bad rate and average score by group (sample in each row)",
         {"Rows": style.COUNT, "Goods": style.COUNT, "Bads": style.COUNT,
          "Bad rate": style.PERCENT, "Predicted bad rate": style.PERCENT,
          "Average score": "0.0"}),
    )
    for k, (frame, title, formats) in enumerate(tables):
        if k == GROUP_TABLES:
            # The tables by group are the long ones: they start a printed page with their
            # headings rather than run on from the first page without them.
            ws.row_breaks.append(Break(id=row))
        used = {name: f for name, f in formats.items() if name in frame.columns}
        _, row = write_table(ws, frame, start_row=row + 1, formats=used, title=title)
        row += 1
    set_print_layout(ws)
    return row - 1


def _caution(ws: Worksheet, row: int) -> None:
    cell = ws.cell(row, 1, CAUTION)
    cell.font = style.BOLD
    cell.alignment = style.WRAP
    ws.merge_cells(start_row=row, start_column=1, end_row=row, end_column=_CAUTION_COLUMNS)
    ws.row_dimensions[row].height = 48


def _lines(ws: Worksheet, row: int, heading: str, lines, font) -> int:
    """A heading and one line of text per entry; returns the next free row."""
    ws.cell(row, 1, heading).font = style.HEADING_FONT
    for i, text in enumerate(lines, start=row + 1):
        # Findings quote column names and group labels from the data: keep them plain text.
        ws.cell(i, 1, safe_value(text)).font = font
    return row + 1 + len(lines)

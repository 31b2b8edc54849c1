"""The monitoring workbook of ``scorecard monitor``: one row per period, one column per index.

Sheets, in order: Periods (the period-by-index table with its statuses, then the caution and
line charts of the score's stability index and the Gini over the periods), Characteristic
stability (characteristic by period: the index, then its status in words), and By segment
under a segmented model (each segment's development row and periods: rows, own score index,
Gini and KS). A status is always
written as a word; its fill only repeats it.
"""

from __future__ import annotations

import pandas as pd
from openpyxl import Workbook
from openpyxl.styles import Alignment, PatternFill
from openpyxl.worksheet.worksheet import Worksheet

from scorecard.evaluation.monitoring import Monitoring
from scorecard.outputs.atomic import save_book
from scorecard.outputs.cautions import CAUTION
from scorecard.outputs.workbook import style
from scorecard.outputs.workbook.charts import Plotted, line_chart
from scorecard.outputs.workbook.tables import finish_table_sheet, set_print_layout, write_table

SHEETS = ("Periods", "Characteristic stability")
SEGMENTS_SHEET = "By segment"      # after the others, under a segmented model
INDEX = "0.0000"
SCORE = "0.0"
# Watch takes the light warm tint of higher risk; shift a deeper one of the same hue.
STATUS_FILLS = {"watch": style.HIGHER_RISK_FILL, "shift": PatternFill("solid", fgColor="E3A76B")}

_FORMATS = {"Rows": style.COUNT, "Refused": style.COUNT, "Mean score": SCORE,
            "Score PSI": INDEX, "Critical value": INDEX, "Approval rate": style.PERCENT,
            "Expected bad rate": "0.00%", "Bad rate": "0.00%", "Predicted bad rate": "0.00%",
            "Gini": style.MEASURE, "Gini low": style.MEASURE, "Gini high": style.MEASURE,
            "KS": style.MEASURE, "KS low": style.MEASURE, "KS high": style.MEASURE}


def write_monitoring_workbook(result: Monitoring, path) -> None:
    """Write the monitoring workbook to ``path`` (.xlsx), whole or not at all.

    Examples
    --------
    >>> import tempfile, pathlib
    >>> from openpyxl import load_workbook
    >>> from scorecard.evaluation.monitoring import monitor
    >>> from scorecard.card.scorecard import (Bin, Characteristic, Development, Scorecard,
    ...                                       RANGE, MISSING)
    >>> from scorecard.card.points import scaling
    >>> b = (Bin("< 1", RANGE, 60, 40, -0.4, 10, upper=1.0),
    ...      Bin(">= 1", RANGE, 90, 10, 1.0, 30, lower=1.0), Bin("missing", MISSING, 0, 0, 0.0, 20))
    >>> char = Characteristic("x", "numeric", b, 1.0, "R01", "x is low", cuts=(1.0,))
    >>> dev = Development(200, "rows", (60.0,) + (0.0,) * 19 + (90.0,), (40.0,) + (0.0,) * 19 + (10.0,))
    >>> folder = pathlib.Path(tempfile.mkdtemp())
    >>> _ = (folder / "card.json").write_text(Scorecard("demo", scaling(600, 50, 20), 0.5,
    ...                                                 (char,), development=dev).to_json())
    >>> _ = (folder / "a.csv").write_text("x,on\\n0.5,2026-01-03\\n2,2026-01-09\\n3,2026-02-01\\n")
    >>> write_monitoring_workbook(monitor(folder / "card.json", folder / "a.csv", "on"),
    ...                           folder / "monitor.xlsx")
    >>> load_workbook(folder / "monitor.xlsx").sheetnames
    ['Periods', 'Characteristic stability']
    """
    book = Workbook()
    periods = book.active
    periods.title = SHEETS[0]
    _write_periods(periods, result)
    _write_characteristics(book.create_sheet(SHEETS[1]), result)
    if result.periods[0].segments:
        _write_segments(book.create_sheet(SEGMENTS_SHEET), result)
    save_book(book, path)


def _colour_statuses(ws: Worksheet, column: int, first_row: int, last_row: int) -> None:
    for row in range(first_row, last_row + 1):
        cell = ws.cell(row, column)
        fill = STATUS_FILLS.get(cell.value)
        if fill is not None:
            cell.fill = fill


def _write_periods(ws: Worksheet, result: Monitoring) -> None:
    table = result.table()
    header, last = write_table(ws, table, formats=_FORMATS)
    columns = list(table.columns)
    _colour_statuses(ws, columns.index("Score status") + 1, header + 1, last)
    for name in ("Characteristics at watch", "Characteristics at shift"):
        status = "watch" if name.endswith("watch") else "shift"
        col = columns.index(name) + 1
        for row in range(header + 1, last + 1):
            if ws.cell(row, col).value:
                ws.cell(row, col).fill = STATUS_FILLS[status]
    finish_table_sheet(ws, header, last, len(columns))
    notes = [
        CAUTION,
        f"Each period of {result.period_column} (by {result.every}) is compared with "
        f"{result.baseline}, as 'scorecard compare' compares two files: the score's stability "
        "index over score bands cut at the baseline's deciles, each characteristic's over its "
        f"attributes. Status: stable below {result.watch:g}, watch from {result.watch:g}, "
        f"shift from {result.shift:g}; the critical value is the 95th percentile of the index "
        "for an unchanged population of these sizes.",
        ("Approval rate: rows scoring at or above "
         f"{result.cutoff} over every row read (refused rows count as declined)."
         if result.cutoff is not None else "Approval rate: give --cutoff to show it."),
        f"Bad rate, Gini and KS only where at least {result.min_bads} goods and "
        f"{result.min_bads} bads have an outcome; predicted bad rate of the same rows from "
        "their scores. Gini interval: DeLong's variance; KS interval: bootstrap of the score "
        "histograms. The development row's Gini and KS are the build's holdout figures.",
    ]
    row = last + 2
    for text in notes:
        cell = ws.cell(row, 1, text)
        cell.alignment = Alignment(wrap_text=True, vertical="top")
        cell.font = style.BOLD if text is CAUTION else style.NOTE_FONT
        ws.merge_cells(start_row=row, start_column=1, end_row=row, end_column=10)
        ws.row_dimensions[row].height = 45
        row += 1
    first, end = header + 2, last   # periods only: the development row has no index
    if end >= first:
        psi = line_chart(ws, "Score stability index by period", first, end,
                         label_col=1, series=[Plotted(columns.index("Score PSI") + 1,
                                                      "Score PSI", style.CURRENT_FILL),
                                              Plotted(columns.index("Critical value") + 1,
                                                      "Critical value", style.NEUTRAL_LINE,
                                                      "dash")],
                         x_title="Period", y_title="Index", y_format="0.00")
        ws.add_chart(psi, ws.cell(row + 1, 1).coordinate)
        gini = line_chart(ws, "Gini by period (rows with an outcome)", first, end,
                          label_col=1, series=[Plotted(columns.index("Gini") + 1, "Gini",
                                                       style.GOOD_LINE),
                                               Plotted(columns.index("Gini low") + 1,
                                                       "Lower bound", style.NEUTRAL_LINE, "dash"),
                                               Plotted(columns.index("Gini high") + 1,
                                                       "Upper bound", style.NEUTRAL_LINE, "dash")],
                          x_title="Period", y_title="Gini", y_format="0.00")
        ws.add_chart(gini, ws.cell(row + 1, 9).coordinate)


def _write_characteristics(ws: Worksheet, result: Monitoring) -> None:
    names = [r.name for r in result.periods[0].characteristics]
    labels = [p.period for p in result.periods]
    index = pd.DataFrame({"Characteristic": names,
                          **{label: [r.index for r in p.characteristics]
                             for label, p in zip(labels, result.periods)}})
    header, last = write_table(ws, index, formats={label: INDEX for label in labels})
    status = pd.DataFrame({"Characteristic": names,
                           **{label: [r.status for r in p.characteristics]
                              for label, p in zip(labels, result.periods)}})
    s_header, s_last = write_table(ws, status, start_row=last + 3,
                                   title="Status of each characteristic's stability index")
    for j, p in enumerate(result.periods, start=2):
        for i, r in enumerate(p.characteristics):
            fill = STATUS_FILLS.get(r.status)
            if fill is not None:
                ws.cell(header + 1 + i, j).fill = fill
        _colour_statuses(ws, j, s_header + 1, s_last)
    finish_table_sheet(ws, header, last, len(index.columns))
    set_print_layout(ws, repeat_rows=f"{header}:{header}")


def segments_frame(result: Monitoring) -> pd.DataFrame:
    """Segment by period: each segment's development row, then its periods."""
    records = []
    for name, dev in result.development.get("segments", {}).items():
        records.append({"Segment": name, "Period": "development", "Rows": dev["rows"],
                        "Refused": None, "Mean score": dev["mean_score"], "Score PSI": None,
                        "Score status": "", "Critical value": None, "Gini": dev["gini"],
                        "Gini low": None, "Gini high": None, "KS": dev["ks"], "KS low": None,
                        "KS high": None})
        for p in result.periods:
            part = p.segments[name]
            s, o = part.score, part.outcomes
            records.append({
                "Segment": name, "Period": p.period, "Rows": part.rows,
                "Refused": part.rejected, "Mean score": part.mean_score,
                "Score PSI": None if s is None else s.index,
                "Score status": "not assessed" if s is None else s.status,
                "Critical value": None if s is None else s.critical_value,
                **{k: None if o is None else getattr(o, f) for k, f in (
                    ("Gini", "gini"), ("Gini low", "gini_low"), ("Gini high", "gini_high"),
                    ("KS", "ks"), ("KS low", "ks_low"), ("KS high", "ks_high"))}})
    return pd.DataFrame.from_records(records)


def _write_segments(ws: Worksheet, result: Monitoring) -> None:
    table = segments_frame(result)
    header, last = write_table(ws, table, formats={k: v for k, v in _FORMATS.items()
                                                   if k in table.columns})
    _colour_statuses(ws, list(table.columns).index("Score status") + 1, header + 1, last)
    finish_table_sheet(ws, header, last, len(table.columns))
    notes = [
        "Each segment's rows alone, scored by its own card; the Periods sheet pools every "
        "segment (one scale).",
        "Score PSI: against the segment's own baseline (its card's development counts, or its "
        "rows of the baseline file), over bands cut at that baseline's deciles.",
        f"Gini and KS only where the segment has at least {result.min_bads} goods and "
        f"{result.min_bads} bads in the period; the development rows show each card's holdout "
        "figures."]
    for row, text in enumerate(notes, start=last + 2):
        ws.cell(row, 1, text).font = style.NOTE_FONT

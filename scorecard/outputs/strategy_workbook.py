"""The workbook of ``scorecard strategy``: cut-offs, the chosen one, and the swap set.

Sheets, in order: Summary (the caution, the decision in sentences, the swap set, how the figures
were made), Cut-offs (the table with the trade-off curve and profit by cut-off as native
charts), and Swap set when an incumbent was given. Every finding is written in words.
"""

from __future__ import annotations

import math

import pandas as pd
from openpyxl import Workbook
from openpyxl.styles import Alignment
from openpyxl.utils import get_column_letter
from openpyxl.worksheet.worksheet import Worksheet

from scorecard.evaluation.strategy import Strategy
from scorecard.outputs.atomic import save_book
from scorecard.outputs.cautions import CAUTION
from scorecard.outputs.workbook import charts, style
from scorecard.outputs.workbook.tables import (
    finish_table_sheet,
    safe_value,
    set_print_layout,
    write_lines,
    write_table,
)

SHEETS = ("Summary", "Cut-offs", "Swap set")
_CAUTION_COLUMNS = 6
PROFIT = "#,##0.0;-#,##0.0"
CUTOFF_FORMATS = {"Cut-off score": style.INTEGER, "Approved": style.COUNT,
                  "Declined": style.COUNT, "Approval rate": style.PERCENT,
                  "Bad rate of the approved": "0.00%", "Bad rate of the declined": "0.00%",
                  "Approved goods": style.COUNT, "Approved bads": style.COUNT, "Profit": PROFIT}
SWAP_FORMATS = {"Rows": style.COUNT, "Share of rows": style.PERCENT, "Goods": style.COUNT,
                "Bads": style.COUNT, "Other outcome": style.COUNT, "Bad rate": "0.00%"}
_CELL_NAMES = {"kept_in": ("Kept in", "approved by both"),
               "kept_out": ("Kept out", "declined by both"),
               "swapped_in": ("Swapped in", "approved by the new scorecard only"),
               "swapped_out": ("Swapped out", "approved by the incumbent only")}


def write_strategy_workbook(result: Strategy, path) -> None:
    """Write the strategy workbook to ``path`` (.xlsx), whole or not at all.

    Examples
    --------
    >>> import tempfile, pathlib
    >>> from openpyxl import load_workbook
    >>> from scorecard.evaluation.strategy import strategy
    >>> from scorecard.card.scorecard import Bin, Characteristic, Scorecard, RANGE, MISSING
    >>> from scorecard.card.points import scaling
    >>> b = (Bin("< 1", RANGE, 60, 40, -0.4, 10, upper=1.0),
    ...      Bin(">= 1", RANGE, 90, 10, 1.0, 30, lower=1.0), Bin("missing", MISSING, 0, 0, 0.0, 20))
    >>> char = Characteristic("x", "numeric", b, 1.0, "R01", "x is low", cuts=(1.0,))
    >>> folder = pathlib.Path(tempfile.mkdtemp())
    >>> _ = (folder / "card.json").write_text(Scorecard("demo", scaling(600, 50, 20), 0.5,
    ...                                                 (char,)).to_json())
    >>> _ = (folder / "a.csv").write_text("x\\n0.5\\n2\\n0.2\\n3\\n")
    >>> write_strategy_workbook(strategy(folder / "card.json", folder / "a.csv"), folder / "s.xlsx")
    >>> load_workbook(folder / "s.xlsx").sheetnames
    ['Summary', 'Cut-offs']
    """
    book = Workbook()
    summary = book.active
    summary.title = SHEETS[0]
    _write_summary(summary, result)
    _write_cutoffs(book.create_sheet(SHEETS[1]), result)
    if result.swap is not None:
        _write_swap_sheet(book.create_sheet(SHEETS[2]), result)
    book.properties.creator = "scorecard"
    save_book(book, path)


def cutoffs_frame(result: Strategy) -> pd.DataFrame:
    """The listed cut-offs with plain headings and a note on the chosen and target rows."""
    grid = result.grid
    notes = {}
    for name, label in (("profit_maximum", "profit maximum"), ("bad_rate", "target bad rate"),
                        ("approval", "target approval")):
        score = result.targets.get(name)
        if score is not None:
            notes[score] = label if score not in notes else f"{label}; {notes[score]}"
    chosen = result.chosen.score
    notes[chosen] = "chosen" + (f" ({notes[chosen]})" if chosen in notes else "")
    return pd.DataFrame({
        "Cut-off score": grid["score"], "Approved": grid["approved"],
        "Declined": grid["declined"], "Approval rate": grid["approval_rate"],
        "Bad rate of the approved": grid["approved_bad_rate"],
        "Bad rate of the declined": grid["declined_bad_rate"],
        "Approved goods": grid["approved_goods"], "Approved bads": grid["approved_bads"],
        "Profit": grid["profit"], "Note": [notes.get(int(s), "") for s in grid["score"]],
    })


def swap_frame(result: Strategy) -> pd.DataFrame:
    return swap_set_frame(result.swap.table, _CELL_NAMES)


def swap_set_frame(table: pd.DataFrame, cell_names: dict) -> pd.DataFrame:
    """The four cells of a swap table under the names and meanings of ``cell_names``."""
    return pd.DataFrame({
        "Swap set": [cell_names[c][0] for c in table["cell"]],
        "Meaning": [cell_names[c][1] for c in table["cell"]],
        "Rows": table["rows"], "Share of rows": table["rows"] / table["rows"].sum(),
        "Goods": table["goods"], "Bads": table["bads"], "Other outcome": table["other_outcome"],
        "Bad rate": table["bad_rate"]})




def _pct(value) -> str:
    return "not defined (no goods or bads)" if value is None or math.isnan(value) \
        else f"{value:.2%}"


def _decision(result: Strategy) -> list[str]:
    word = "" if result.bad_rates == "observed" else "expected "
    c = result.at(result.chosen.score)
    out = [f"Chosen cut-off: {c['score']} ({result.chosen.rule}). Applications scoring "
           f"{c['score']} or more are approved.",
           f"It approves {c['approval_rate']:.1%} of the applications ({c['approved']:,.0f} of "
           f"{result.rows:,}); the {word}bad rate of the approved is "
           f"{_pct(c['approved_bad_rate'])}, of the declined {_pct(c['declined_bad_rate'])}.",
           f"Profit at the cut-off: {c['profit']:,.1f} (a gain of {result.gain_per_good:g} per "
           f"good approved, a loss of {result.loss_per_bad:g} per bad approved)."]
    labels = (("approval", f"Target approval rate {result.target_approval or 0:.1%}"),
              ("bad_rate", f"Target bad rate {result.target_bad_rate or 0:.2%}"),
              ("profit_maximum", "Profit maximum"))
    for name, label in labels:
        given = {"approval": result.target_approval, "bad_rate": result.target_bad_rate}
        if name in given and given[name] is None:
            continue
        score = result.targets.get(name)
        if score is None:
            out.append(f"{label}: no cut-off meets it.")
            continue
        r = result.at(score)
        out.append(f"{label}: cut-off {score}, approving {r['approval_rate']:.1%}, {word}bad "
                   f"rate of the approved {_pct(r['approved_bad_rate'])}, profit "
                   f"{r['profit']:,.1f}.")
    refer = result.refer
    if refer is not None:
        out.append(f"Refer band: scores {refer['from']} to {refer['to']} go to manual review "
                   f"instead of a decline: {refer['count']:,.0f} applications "
                   f"({refer['share']:.1%}), {word}bad rate {_pct(refer['bad_rate'])}.")
    return out


def _swap_sentences(result: Strategy) -> list[str]:
    s = result.swap
    how = (f"a score, {s.direction}, cut at {s.cutoff:g} so that it approves "
           f"{s.approval_rate:.1%}, the nearest it comes to the new scorecard's rate"
           if s.kind == "score" else f"a decision column that {s.direction} "
                                     f"({s.approval_rate:.1%} approved)")
    out = [f"Incumbent: column {s.column}, {how}."]
    if s.missing:
        out.append(f"{s.missing:,} rows have no incumbent value; the incumbent counts them as "
                   "declined.")
    t = s.table.set_index("cell")
    word = "" if result.bad_rates == "observed" else "expected "
    out.append(f"The new scorecard newly approves {t.loc['swapped_in', 'rows']:,.0f} "
               f"applications ({word}bad rate {_pct(t.loc['swapped_in', 'bad_rate'])}) and newly "
               f"declines {t.loc['swapped_out', 'rows']:,.0f} ({word}bad rate "
               f"{_pct(t.loc['swapped_out', 'bad_rate'])}).")
    if result.bad_rates == "expected":
        out.append("Without outcomes, the swap set's bad rates are the new scorecard's own "
                   "expectations, which favour it by construction; judge the swap on outcomes.")
    return out


def _method(result: Strategy) -> list[str]:
    out = ["Every application in the file is scored once; each cut-off's figures are sums of "
           "the counts at each score. An application is approved when its score is at or above "
           "the cut-off.",
           "Approval rate: approved applications over all applications, including those whose "
           "outcome is neither good nor bad, and those the scorecard refuses (always declined).",
           "Bad rate: bads over goods and bads. Profit: goods approved x gain per good - bads "
           "approved x loss per bad.",
           "Chosen cut-off: the highest meeting a target approval rate when one is given; else "
           "the lowest meeting a target bad rate; else the cut-off of largest profit (the "
           "highest of equal ones).",
           "The gain and loss default to 1 and 5: placeholders for the lender's own figures."]
    if result.bad_rates == "expected":
        out.append("The file has no outcome column: goods and bads at each score are the rows "
                   "times the scorecard's probability of good and of bad at that score.")
    return out


def _write_summary(ws: Worksheet, result: Strategy) -> None:
    ws.cell(1, 1, "Cut-off strategy").font = style.TITLE_FONT
    caution = ws.cell(2, 1, CAUTION)
    caution.font = style.BOLD
    caution.alignment = Alignment(wrap_text=True, vertical="top")
    ws.merge_cells(start_row=2, start_column=1, end_row=2, end_column=_CAUTION_COLUMNS)
    ws.row_dimensions[2].height = 60
    files = [f"Model: {result.model}", f"Applications: {result.data} ({result.rows:,} rows"
             + (f", {result.refused:,} refused by the scorecard" if result.refused else "")
             + (f", {result.left_out:,} with an outcome neither good nor bad"
                if result.left_out else "") + ")",
             "Bad rates: " + ("observed in the file's outcome column"
                              if result.bad_rates == "observed"
                              else "expected, from the scorecard's probabilities")]
    row = write_lines(ws, 4, "What was examined", files)
    row = write_lines(ws, row + 1, "Decision", _decision(result), style.BOLD)
    if result.swap is not None:
        row = write_lines(ws, row + 1, "Swap set", _swap_sentences(result))
        _, row = write_table(ws, swap_frame(result), start_row=row + 1,
                             title=f"Swap set at cut-off {result.chosen.score}",
                             formats=SWAP_FORMATS)
    write_lines(ws, row + 2, "How the figures were made", _method(result), style.NOTE_FONT)
    for col in range(1, _CAUTION_COLUMNS + 1):
        letter = get_column_letter(col)
        ws.column_dimensions[letter].width = max(ws.column_dimensions[letter].width or 0, 14)
    set_print_layout(ws)


def _write_cutoffs(ws: Worksheet, result: Strategy) -> None:
    frame = cutoffs_frame(result)
    header, last = write_table(ws, frame, formats=CUTOFF_FORMATS)
    finish_table_sheet(ws, header, last, len(frame.columns))
    chosen_row = header + 1 + int((frame["Cut-off score"] == result.chosen.score).idxmax())
    for col in range(1, len(frame.columns) + 1):
        ws.cell(chosen_row, col).font = style.BOLD
    ws.cell(last + 2, 1, safe_value(
        f"Every {result.step} points, with the chosen and target cut-offs added. Applications "
        "scoring at or above the cut-off are approved."
        + ("" if result.bad_rates == "observed" else " Bad rates are expected ones."))
    ).font = style.NOTE_FONT
    columns = list(frame.columns)

    def col(name):
        return columns.index(name) + 1

    word = "Bad rate" if result.bad_rates == "observed" else "Expected bad rate"
    trade = charts.scatter_line_chart(
        ws, "Approval rate against the bad rate of the approved", header + 1, last,
        x_col=col("Approval rate"), y_col=col("Bad rate of the approved"),
        series_title=f"{word} of the approved", x_title="Approval rate",
        y_title=f"{word} of the approved", y_format="0.0%")
    profit = charts.line_chart(
        ws, "Profit by cut-off", header + 1, last, label_col=col("Cut-off score"),
        series=[charts.Plotted(col("Profit"), "Profit", style.GOOD_LINE)],
        x_title="Cut-off score", y_title="Profit", y_format="#,##0")
    anchor = get_column_letter(len(columns) + 2)
    for chart in (trade, profit):
        chart.width, chart.height = 16.0, 9.0
    ws.add_chart(trade, f"{anchor}2")
    ws.add_chart(profit, f"{anchor}{4 + math.ceil(9.0 / charts.ROW_CM)}")


def _write_swap_sheet(ws: Worksheet, result: Strategy) -> None:
    frame = swap_frame(result)
    header, last = write_table(ws, frame, formats=SWAP_FORMATS)
    finish_table_sheet(ws, header, last, len(frame.columns))
    row = last + 2
    for text in _swap_sentences(result):
        ws.cell(row, 1, safe_value(text)).font = style.NOTE_FONT
        row += 1
    # The same counts as a cross table: the new scorecard down, the incumbent across.
    t = result.swap.table.set_index("cell")["rows"]
    cross = pd.DataFrame({
        "New scorecard": ["approves", "declines", "total"],
        "Incumbent approves": [t["kept_in"], t["swapped_out"], t["kept_in"] + t["swapped_out"]],
        "Incumbent declines": [t["swapped_in"], t["kept_out"], t["swapped_in"] + t["kept_out"]],
        "Total": [t["kept_in"] + t["swapped_in"], t["swapped_out"] + t["kept_out"], t.sum()]})
    write_table(ws, cross, start_row=row + 1, title="Rows by decision",
                formats={c: style.COUNT for c in cross.columns[1:]})

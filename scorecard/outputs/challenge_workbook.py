"""The validator's workbook of ``scorecard challenge``: does the challenger beat the champion?

Sheets, in order: Summary (the caution, the files compared by name, both cards' measures on
the same rows, DeLong's paired test of the AUC difference and its verdict in words, the rows
compared and left out), Swap set (the cells at the approval rate), and By segment when either
card is segmented. The numbers are those of the JSON, cell for cell.
"""

from __future__ import annotations

import pandas as pd
from openpyxl import Workbook
from openpyxl.styles import Alignment
from openpyxl.utils import get_column_letter
from openpyxl.worksheet.worksheet import Worksheet

from scorecard.evaluation.challenge import DEFAULT_APPROVAL_RATE, Challenge, verdict
from scorecard.outputs.atomic import save_book
from scorecard.outputs.cautions import CAUTION
from scorecard.outputs.strategy_workbook import SWAP_FORMATS, swap_set_frame
from scorecard.outputs.workbook import style
from scorecard.outputs.workbook.tables import (
    finish_table_sheet,
    safe_value,
    set_print_layout,
    write_lines,
    write_table,
)

SHEETS = ("Summary", "Swap set", "By segment")
P_VALUE = "0.0000"
SIGNED = "+0.0000;-0.0000;0.0000"
_CAUTION_COLUMNS = 6
MEASURE_FORMATS = {"AUC": style.WOE, "Gini": style.WOE, "KS": style.WOE}
DIFFERENCE_FORMATS = {"AUC difference": SIGNED, "95% interval from": SIGNED,
                      "95% interval to": SIGNED, "DeLong p-value": P_VALUE}
_CELL_NAMES = {"kept_in": ("Kept in", "approved by both cards"),
               "kept_out": ("Kept out", "declined by both cards"),
               "swapped_in": ("Swapped in", "approved by the challenger only"),
               "swapped_out": ("Swapped out", "approved by the champion only")}


def write_challenge_workbook(result: Challenge, path) -> None:
    """Write the challenge's workbook to ``path`` (.xlsx), whole or not at all.

    Examples
    --------
    >>> import tempfile, pathlib
    >>> from openpyxl import load_workbook
    >>> from scorecard.evaluation.challenge import challenge
    >>> from scorecard.card.scorecard import Bin, Characteristic, Scorecard, RANGE, MISSING
    >>> from scorecard.card.points import scaling
    >>> b = (Bin("< 1", RANGE, 60, 40, -0.4, 10, upper=1.0),
    ...      Bin(">= 1", RANGE, 90, 10, 1.0, 30, lower=1.0), Bin("missing", MISSING, 0, 0, 0.0, 20))
    >>> card = Scorecard("demo", scaling(600, 50, 20), 0.5,
    ...                  (Characteristic("x", "numeric", b, 1.0, "R01", "x is low", cuts=(1.0,)),),
    ...                  {"column": "y", "bad": ["b"], "good": ["g"]})
    >>> folder = pathlib.Path(tempfile.mkdtemp())
    >>> _ = (folder / "card.json").write_text(card.to_json())
    >>> _ = (folder / "a.csv").write_text("x,y\\n0.5,b\\n2,g\\n0.2,g\\n3,g\\n0.1,b\\n")
    >>> result = challenge(folder / "card.json", folder / "card.json", folder / "a.csv")
    >>> write_challenge_workbook(result, folder / "c.xlsx")
    >>> load_workbook(folder / "c.xlsx").sheetnames
    ['Summary', 'Swap set']
    """
    book = Workbook()
    summary = book.active
    summary.title = SHEETS[0]
    _write_summary(summary, result)
    _write_table_sheet(book.create_sheet(SHEETS[1]), swap_frame(result), SWAP_FORMATS,
                       _swap_notes(result))
    if result.segments:
        _write_table_sheet(book.create_sheet(SHEETS[2]), segments_frame(result),
                           {**DIFFERENCE_FORMATS, "Rows": style.COUNT,
                            **{f"{card} {m}": style.WOE for card in ("Champion", "Challenger")
                               for m in ("AUC", "Gini", "KS")}},
                           ["Each segment's rows alone; the Summary's measures pool every "
                            "segment. A segment with fewer than two goods or two bads is left "
                            "out of this table."])
    book.properties.creator = "scorecard"
    save_book(book, path)


def measures_frame(result: Challenge) -> pd.DataFrame:
    """Both cards' AUC, Gini and KS on the same rows, one card a row."""
    cards = (("Champion", result.champion), ("Challenger", result.challenger))
    return pd.DataFrame({"Card": [name for name, _ in cards],
                         "AUC": [d.auc for _, d in cards], "Gini": [d.gini for _, d in cards],
                         "KS": [d.ks for _, d in cards]})


def difference_frame(result: Challenge) -> pd.DataFrame:
    """The paired AUC difference (challenger minus champion), its interval, p-value, verdict."""
    d = result.difference
    return pd.DataFrame({"AUC difference": [d.difference], "95% interval from": [d.ci_low],
                         "95% interval to": [d.ci_high], "DeLong p-value": [d.p_value],
                         "Verdict": [verdict(d)]})


def swap_frame(result: Challenge) -> pd.DataFrame:
    """The swap set: the challenger as the new card, the champion as the incumbent."""
    return swap_set_frame(result.swap, _CELL_NAMES)


def segments_frame(result: Challenge) -> pd.DataFrame:
    """Per segment: rows, both cards' measures and the paired test on that segment's rows."""
    records = []
    for name, (a, b, d, rows) in result.segments.items():
        records.append({"Segment": name, "Rows": rows,
                        "Champion AUC": a.auc, "Challenger AUC": b.auc,
                        "Champion Gini": a.gini, "Challenger Gini": b.gini,
                        "Champion KS": a.ks, "Challenger KS": b.ks,
                        "AUC difference": d.difference, "95% interval from": d.ci_low,
                        "95% interval to": d.ci_high, "DeLong p-value": d.p_value,
                        "Verdict": verdict(d)})
    return pd.DataFrame.from_records(records)




def _swap_notes(result: Challenge) -> list[str]:
    t = result.swap.set_index("cell")
    return [f"Each card cut at its own score nearest {result.approval_rate:.0%} approved: the "
            f"champion at {result.cutoffs['champion']:g}, the challenger at "
            f"{result.cutoffs['challenger']:g}; a row scoring at or above the cut is approved.",
            f"The challenger newly approves {t.loc['swapped_in', 'rows']:,.0f} rows and newly "
            f"declines {t.loc['swapped_out', 'rows']:,.0f}; compare their bad rates.",
            f"The approval rate is the one given with --approval-rate, else "
            f"{DEFAULT_APPROVAL_RATE:.0%}, a placeholder for the lender's own."]


def _method() -> list[str]:
    return ["Both cards score the same rows once each; only rows that both cards score and "
            "whose outcome is good or bad are compared.",
            "AUC, Gini (2 AUC - 1) and KS come from each card's counts of goods and bads per "
            "score.",
            "The AUC difference is the challenger's AUC minus the champion's. Its 95% interval "
            "and two-sided p-value follow DeLong, DeLong and Clarke-Pearson (1988), which "
            "allows for both cards ranking the same applicants.",
            "The verdict rests on the interval: a card ranks better only when the interval "
            "excludes zero."]


def _write_summary(ws: Worksheet, result: Challenge) -> None:
    ws.cell(1, 1, "Champion against challenger").font = style.TITLE_FONT
    caution = ws.cell(2, 1, CAUTION)
    caution.font = style.BOLD
    caution.alignment = Alignment(wrap_text=True, vertical="top")
    ws.merge_cells(start_row=2, start_column=1, end_row=2, end_column=_CAUTION_COLUMNS)
    ws.row_dimensions[2].height = 60
    rows = [*(f"{role.capitalize()}: {name}" for role, name in result.files.items()),
            f"Rows compared: {result.rows:,}",
            f"Rows left out: {result.left_out:,} (refused by either card, or an outcome neither "
            "good nor bad)",
            f"Swap set at {result.approval_rate:.0%} approved: champion cut at "
            f"{result.cutoffs['champion']:g}, challenger cut at "
            f"{result.cutoffs['challenger']:g} (sheet {SHEETS[1]})"]
    row = write_lines(ws, 4, "What was compared", rows)
    _, row = write_table(ws, measures_frame(result), start_row=row + 1,
                         title="Both cards on the same rows", formats=MEASURE_FORMATS)
    _, row = write_table(ws, difference_frame(result), start_row=row + 2,
                         title="Paired AUC difference (challenger minus champion)",
                         formats=DIFFERENCE_FORMATS)
    d = result.difference
    row = write_lines(ws, row + 2, "Verdict",
                 [f"{verdict(d).capitalize()}: the AUC difference is {d.difference:+.4f}, "
                  f"95% interval {d.ci_low:+.4f} to {d.ci_high:+.4f}."], style.BOLD)
    write_lines(ws, row + 1, "How the figures were made", _method(), style.NOTE_FONT)
    for col in range(1, _CAUTION_COLUMNS + 1):
        letter = get_column_letter(col)
        ws.column_dimensions[letter].width = max(ws.column_dimensions[letter].width or 0, 14)
    set_print_layout(ws)


def _write_table_sheet(ws: Worksheet, frame: pd.DataFrame, formats: dict, notes) -> None:
    header, last = write_table(ws, frame, formats=formats)
    finish_table_sheet(ws, header, last, len(frame.columns))
    for i, text in enumerate(notes, start=last + 2):
        ws.cell(i, 1, safe_value(text)).font = style.NOTE_FONT

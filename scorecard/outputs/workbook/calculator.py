"""The Calculator sheet: pick one attribute per characteristic and read the score.

The points come from the Points sheet by formula, so the sheet stays right if someone edits a
point there. Lookups use ``EXACT`` inside ``SUMPRODUCT``: unlike ``MATCH`` it neither treats
``*`` and ``?`` in a label as wildcards nor ignores case, and both Excel and LibreOffice
evaluate it without array entry. Drop-down lists read a named cell range on the Points sheet,
because attribute labels may contain commas that an inline list would split.
"""

from __future__ import annotations

import re

from openpyxl.workbook.defined_name import DefinedName
from openpyxl.worksheet.datavalidation import DataValidation
from openpyxl.worksheet.worksheet import Worksheet

from scorecard.card import frames as card_frames
from scorecard.outputs.workbook import style
from scorecard.outputs.workbook.tables import MAX_WIDTH, safe_value, set_print_layout

POINTS_SHEET = "Points"
ATTRIBUTE_COLUMN, POINTS_COLUMN = "B", "C"
HEADERS = ["Characteristic", "Attribute (choose from the list)", "Points", "Check"]
MAX_NAME = 200


def defined_name(prefix: str, text: str, taken: set) -> str:
    """A workbook name made of ``prefix`` and ``text``, safe for any spreadsheet program.

    Only letters, digits and underscores are kept; the prefix keeps the name from looking
    like a cell reference; a number is appended when the name (case ignored) is taken.

    Examples
    --------
    >>> taken = set()
    >>> defined_name("attributes", "late payments (12m)", taken)
    'attributes_late_payments__12m_'
    >>> defined_name("attributes", "late-payments (12m)", taken)
    'attributes_late_payments__12m__2'
    """
    base = f"{prefix}_{re.sub(r'[^A-Za-z0-9_]', '_', text)}"[:MAX_NAME]
    name, k = base, 1
    while name.lower() in taken:
        k += 1
        name = f"{base}_{k}"
    taken.add(name.lower())
    return name


def default_attribute(char) -> int:
    """Index of the attribute with the most development rows (the first of equals)."""
    counts = [b.count for b in char.bins]
    return counts.index(max(counts))


def write_calculator(ws: Worksheet, card, points_header: int) -> None:
    """Fill the calculator; ``points_header`` is the header row of the Points sheet's table."""
    wb = ws.parent
    taken: set = set()
    for col, text in enumerate(HEADERS, start=1):
        cell = ws.cell(1, col, text)
        cell.font, cell.fill, cell.border = style.HEADER_FONT, style.HEADER_FILL, style.HEADER_BORDER
        cell.alignment = style.HEADER_RIGHT if text == "Points" else style.HEADER_LEFT
    first = points_header + 1
    for row, char in enumerate(card.characteristics, start=2):
        last = first + len(char.bins) - 1
        attributes = defined_name("attributes", char.name, taken)
        points = defined_name("points", char.name, taken)
        wb.defined_names[attributes] = DefinedName(
            attributes, attr_text=f"{POINTS_SHEET}!${ATTRIBUTE_COLUMN}${first}:${ATTRIBUTE_COLUMN}${last}")
        wb.defined_names[points] = DefinedName(
            points, attr_text=f"{POINTS_SHEET}!${POINTS_COLUMN}${first}:${POINTS_COLUMN}${last}")
        _characteristic_row(ws, row, char, attributes, points, first - 1)
        first = last + 1
    labels = _totals(ws, len(card.characteristics) + 1, card.scaling)
    names = [c.name for c in card.characteristics]
    choices = [label for c in card.characteristics for label in card_frames.attribute_labels(c)]
    ws.column_dimensions["A"].width = min(MAX_WIDTH, max(map(len, names + labels)) + 2)
    # Room for the drop-down arrow beside the longest attribute.
    ws.column_dimensions["B"].width = min(MAX_WIDTH, max(map(len, choices + [HEADERS[1]])) + 4)
    ws.column_dimensions["C"].width = 12
    ws.column_dimensions["D"].width = 30
    ws.freeze_panes = "A2"
    set_print_layout(ws, repeat_rows="1:1")


def _characteristic_row(ws, row, char, attributes, points, offset) -> None:
    labels = card_frames.attribute_labels(char)
    ws.cell(row, 1, safe_value(char.name)).alignment = style.TEXT
    choice = ws.cell(row, 2, safe_value(labels[default_attribute(char)]))
    choice.fill, choice.alignment = style.INPUT_FILL, style.TEXT
    match = f"SUMPRODUCT(EXACT({attributes},B{row})*1)=1"
    position = f"SUMPRODUCT(EXACT({attributes},B{row})*(ROW({attributes})-{offset}))"
    ws.cell(row, 3, f"=IF({match},INDEX({points},{position}),NA())").number_format = style.INTEGER
    ws.cell(row, 4, f'=IF({match},"ok","choose one of its attributes")').alignment = style.TEXT
    rule = DataValidation(type="list", formula1=f"={attributes}", allow_blank=False,
                          showErrorMessage=True, errorTitle="Not an attribute",
                          error="Choose one of the attributes in the list.")
    ws.add_data_validation(rule)
    rule.add(choice)


def _totals(ws, last_char_row: int, scaling) -> list[str]:
    """Total score, odds and bad probability, and the scaling they are computed from.

    Returns the labels written in column A.
    """
    total, odds, probability = last_char_row + 2, last_char_row + 3, last_char_row + 4
    base, base_odds, pdo, factor, offset = range(last_char_row + 7, last_char_row + 12)
    rows = [
        (total, "Total score", f"=SUM(C2:C{last_char_row})", style.INTEGER),
        (odds, "Good:bad odds", f"=EXP((C{total}-C{offset})/C{factor})", "#,##0.00"),
        (probability, "Bad probability", f"=1/(1+C{odds})", "0.00%"),
        (base, "Base score", scaling.base_score, "0.##"),
        (base_odds, "Good:bad odds at the base score", scaling.base_odds, "0.##"),
        (pdo, "Points to double the odds", scaling.pdo, "0.##"),
        (factor, "Factor = points to double the odds / LN(2)", f"=C{pdo}/LN(2)", style.WOE),
        (offset, "Offset = base score - factor x LN(odds)", f"=C{base}-C{factor}*LN(C{base_odds})",
         style.WOE),
    ]
    for row, label, value, number_format in rows:
        ws.cell(row, 1, label).font = style.BOLD
        cell = ws.cell(row, 3, value)
        cell.number_format = number_format
        if row in (total, odds, probability):
            cell.font = style.BOLD
    ws.cell(base - 1, 1, "Scaling").font = style.HEADING_FONT
    ws.cell(offset + 2, 1, "Choose an attribute in column B from its list; the points come from "
                           "the Points sheet. A check other than 'ok' means the choice is not "
                           "an attribute of that characteristic.").font = style.NOTE_FONT
    return [label for _, label, _, _ in rows]

"""The Calculator sheet: a value or an attribute per characteristic, and the score.

A numeric characteristic takes the raw value (its attribute is found by formula from the
rules table under the calculator, see ``calculator_values``); a categorical one takes an
attribute chosen from a list.

The points come from the Points sheet by formula, so the sheet stays right if someone edits a
point there. Lookups use ``EXACT`` inside ``SUMPRODUCT``: unlike ``MATCH`` it neither treats
``*`` and ``?`` in a label as wildcards nor ignores case, and both Excel and LibreOffice
evaluate it without array entry. Drop-down lists read a named cell range on the Points sheet,
because attribute labels may contain commas that an inline list would split.
"""

from __future__ import annotations

import re

import pandas as pd
from openpyxl.utils import quote_sheetname
from openpyxl.workbook.defined_name import DefinedName
from openpyxl.worksheet.datavalidation import DataValidation
from openpyxl.worksheet.worksheet import Worksheet

from scorecard.card import frames as card_frames
from scorecard.card.scoring import REFUSED_PREFIX, bin_codes
from scorecard.outputs.workbook import style
from scorecard.outputs.workbook.calculator_values import write_value_rules
from scorecard.outputs.workbook.tables import (
    FIRST_ROW_HEIGHT,
    MAX_WIDTH,
    header_height,
    safe_value,
    set_print_layout,
)

POINTS_SHEET = "Points"
ATTRIBUTE_COLUMN, POINTS_COLUMN = "B", "C"
HEADERS = ["Characteristic", "Value or attribute", "Attribute", "Points", "Check"]
DRIVEN_HEADERS = ["Characteristic", "Value (from the Calculator)", "Attribute", "Points", "Check"]
MAX_NAME = 200
HOW = ("For a numeric characteristic type its value in column B (leave the cell empty for a "
       "missing value); the table on the right finds its attribute. For a categorical one "
       "choose an attribute from the list. The points come from the Points sheet; a check "
       "other than 'ok' means the entry has no attribute, or one the card refuses to score "
       "(then there is no total, as scorecard score gives none).")
DRIVEN_HOW = ("This card's calculator reads the values typed on the Calculator sheet (type them "
              "there): a numeric value or a categorical level in column B finds its attribute "
              "by the table on the right; the points come from this card's Points sheet.")


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


def typical_value(char, index: int) -> float | None:
    """A number that the product's scoring puts in bin ``index`` of a numeric characteristic.

    None for the missing bin (an empty cell) or when no simple candidate lands there.

    Examples
    --------
    >>> from scorecard.card.scorecard import Bin, Characteristic, RANGE
    >>> bins = (Bin("< 1", RANGE, 60, 40, -0.4, 10, upper=1.0),
    ...         Bin(">= 1", RANGE, 90, 10, 1.0, 30, lower=1.0))
    >>> c = Characteristic("x", "numeric", bins, 1.0, "R01", "x", cuts=(1.0,),
    ...                    development_range=(0.0, 4.0))
    >>> typical_value(c, 0), typical_value(c, 1)
    (0.0, 1.0)
    """
    b = char.bins[index]
    low = char.development_range[0] if char.development_range else None
    candidates = [b.value, b.lower, low, None if b.upper is None else b.upper - 1]
    if char.development_range:
        candidates.append(char.development_range[1] + 1)
    for value in candidates:
        if value is not None:
            codes, _ = bin_codes(char, pd.Series([float(value)]))
            if codes[0] == index:
                return float(value)
    return None


def write_headers(ws: Worksheet, headers=HEADERS) -> None:
    """The calculator's header row (row 1) and the height of its first entry row."""
    for col, text in enumerate(headers, start=1):
        cell = ws.cell(1, col, text)
        cell.font, cell.fill, cell.border = style.HEADER_FONT, style.HEADER_FILL, style.HEADER_BORDER
        cell.alignment = style.HEADER_RIGHT if text == "Points" else style.HEADER_LEFT
    ws.row_dimensions[1].height = header_height(1)
    ws.row_dimensions[2].height = FIRST_ROW_HEIGHT


def write_calculator(ws: Worksheet, card, points_header: int, *, points_sheet=POINTS_SHEET,
                     taken: set | None = None, inputs: dict | None = None) -> None:
    """Fill the calculator; ``points_header`` is the header row of the Points sheet's table.

    ``points_sheet`` names the sheet of the card's points and ``taken`` the workbook names in
    use (a segmented workbook holds one calculator per card). With ``inputs`` (characteristic
    name -> a cell of another sheet, ``"Calculator!$B$3"``) the sheet takes no entries of its
    own: it reads each raw value there, a categorical characteristic's level included, as the
    segmented workbook's Calculator drives its cards' calculators.
    """
    wb = ws.parent
    taken = set() if taken is None else taken
    write_headers(ws, HEADERS if inputs is None else DRIVEN_HEADERS)
    k = len(card.characteristics)
    labels = write_totals(ws, k + 1, card.scaling, None if inputs is None else DRIVEN_HOW)
    value_formulas = write_value_rules(ws, card,
                                       lambda prefix, c: defined_name(prefix, c.name, taken),
                                       levels=inputs is not None)
    sheet = quote_sheetname(points_sheet)
    first = points_header + 1
    for row, char in enumerate(card.characteristics, start=2):
        last = first + len(char.bins) - 1
        attributes = defined_name("attributes", char.name, taken)
        points = defined_name("points", char.name, taken)
        wb.defined_names[attributes] = DefinedName(
            attributes, attr_text=f"{sheet}!${ATTRIBUTE_COLUMN}${first}:${ATTRIBUTE_COLUMN}${last}")
        wb.defined_names[points] = DefinedName(
            points, attr_text=f"{sheet}!${POINTS_COLUMN}${first}:${POINTS_COLUMN}${last}")
        if inputs is None:
            _characteristic_row(ws, row, char, attributes, points, first - 1,
                                value_formulas.get(char.name))
        else:
            _driven_row(ws, row, char, attributes, points, first - 1,
                        value_formulas[char.name], inputs[char.name])
        first = last + 1
    names = [c.name for c in card.characteristics]
    choices = [label for c in card.characteristics for label in card_frames.attribute_labels(c)]
    ws.column_dimensions["A"].width = min(MAX_WIDTH, max(map(len, names + labels)) + 2)
    # Room for the drop-down arrow beside the longest attribute.
    ws.column_dimensions["B"].width = min(MAX_WIDTH, max(map(len, choices + ["Value or"])) + 4)
    ws.column_dimensions["C"].width = min(MAX_WIDTH, max(map(len, choices + ["Attribute"])) + 3)
    ws.column_dimensions["D"].width = 12
    ws.column_dimensions["E"].width = 34
    ws.freeze_panes = "A2"
    set_print_layout(ws, repeat_rows="1:1")


def _characteristic_row(ws, row, char, attributes, points, offset, value_formula) -> None:
    labels = card_frames.attribute_labels(char)
    ws.cell(row, 1, safe_value(char.name)).alignment = style.TEXT
    chosen = default_attribute(char)
    entry = ws.cell(row, 2)
    entry.fill = style.INPUT_FILL
    if value_formula is not None:
        entry.value = typical_value(char, chosen)
        ws.cell(row, 3, "=" + value_formula(f"B{row}")).alignment = style.TEXT
        rule = DataValidation(type="decimal", operator="between", formula1="-1E+307",
                              formula2="1E+307", allow_blank=True, showErrorMessage=True,
                              errorTitle="Not a number",
                              error="Type a number, or leave the cell empty for a missing value.")
        wrong = f'IF(ISBLANK(B{row}),"empty, and it has no missing attribute","type a number")'
    else:
        entry.value, entry.alignment = safe_value(labels[chosen]), style.TEXT
        found = f"SUMPRODUCT(EXACT({attributes},B{row})*1)=1"
        ws.cell(row, 3, f"=IF({found},B{row},NA())").alignment = style.TEXT
        rule = DataValidation(type="list", formula1=f"={attributes}", allow_blank=False,
                              showErrorMessage=True, errorTitle="Not an attribute",
                              error="Choose one of the attributes in the list.")
        wrong = '"choose one of its attributes"'
    _points_and_check(ws, row, char, attributes, points, offset, wrong)
    ws.add_data_validation(rule)
    rule.add(entry)


def _driven_row(ws, row, char, attributes, points, offset, value_formula, source) -> None:
    """A characteristic row whose raw value is read from ``source`` (another sheet's cell)."""
    ws.cell(row, 1, safe_value(char.name)).alignment = style.TEXT
    ws.cell(row, 2, f'=IF(ISBLANK({source}),"",{source})').alignment = style.TEXT
    ws.cell(row, 3, "=" + value_formula(source)).alignment = style.TEXT
    other = "type a number" if char.kind == "numeric" else "a level this card has no attribute for"
    wrong = f'IF(ISBLANK({source}),"empty, and it has no missing attribute","{other}")'
    _points_and_check(ws, row, char, attributes, points, offset, wrong)


def formula_text(value) -> str:
    """A string literal of a formula.

    Examples
    --------
    >>> print(formula_text('5" tyres'))
    "5"" tyres"
    """
    return '"' + str(value).replace('"', '""') + '"'


def _points_and_check(ws, row, char, attributes, points, offset, wrong) -> None:
    """Columns D and E: the attribute's points from the Points sheet, and the check.

    An attribute the card refuses (a bin whose scoring rule is ``reject``) gives no points and
    so no total, as ``scorecard score`` leaves the row's score empty, and its check says so.
    """
    position = f"SUMPRODUCT(EXACT({attributes},C{row})*(ROW({attributes})-{offset}))"
    lookup = f"INDEX({points},{position})"
    check = '"ok"'
    refused = [label for label, b in zip(card_frames.attribute_labels(char), char.bins)
               if b.rejected]
    if refused:
        test = "OR(" + ",".join(f"EXACT(C{row},{formula_text(label)})" for label in refused) + ")"
        lookup = f"IF({test},NA(),{lookup})"
        check = (f'IF({test},{formula_text(f"refused: the card gives no score ({REFUSED_PREFIX}{char.name})")},'
                 f'"ok")')
    ws.cell(row, 4, f"=IF(ISERROR(C{row}),NA(),{lookup})").number_format = style.INTEGER
    ws.cell(row, 5, f"=IF(ISERROR(C{row}),{wrong},{check})").alignment = style.TEXT


def write_totals(ws, last_char_row: int, scaling, how: str | None = None) -> list[str]:
    """Total score, odds and bad probability, and the scaling they are computed from.

    Returns the labels written in column A.
    """
    total, odds, probability = last_char_row + 2, last_char_row + 3, last_char_row + 4
    base, base_odds, pdo, factor, offset = range(last_char_row + 7, last_char_row + 12)
    rows = [
        (total, "Total score", f"=SUM(D2:D{last_char_row})", style.INTEGER),
        (odds, "Good:bad odds", f"=EXP((D{total}-D{offset})/D{factor})", "#,##0.00"),
        (probability, "Bad probability", f"=1/(1+D{odds})", "0.00%"),
        (base, "Base score", scaling.base_score, "0.##"),
        (base_odds, "Good:bad odds at the base score", scaling.base_odds, "0.##"),
        (pdo, "Points to double the odds", scaling.pdo, "0.##"),
        (factor, "Factor = points to double the odds / LN(2)", f"=D{pdo}/LN(2)", style.WOE),
        (offset, "Offset = base score - factor x LN(odds)", f"=D{base}-D{factor}*LN(D{base_odds})",
         style.WOE),
    ]
    for row, label, value, number_format in rows:
        ws.cell(row, 1, label).font = style.BOLD
        cell = ws.cell(row, 4, value)
        cell.number_format = number_format
        if row in (total, odds, probability):
            cell.font = style.BOLD
    ws.cell(base - 1, 1, "Scaling").font = style.HEADING_FONT
    how = ws.cell(offset + 2, 1, how or HOW)
    how.font, how.alignment = style.NOTE_FONT, style.WRAP
    # The rules table fills the columns to the right, so the note wraps within the calculator,
    # over three rows of their own height: a taller row would open a gap in that table.
    ws.merge_cells(start_row=offset + 2, start_column=1, end_row=offset + 4, end_column=5)
    return [label for _, label, _, _ in rows]

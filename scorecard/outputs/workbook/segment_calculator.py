"""The Calculator of a segmented workbook: the segment value and the raw values typed once,
the card chosen by formula.

Row 2 takes the value of the segment column; the table on the right (the segments' levels, or
their ranges of a numeric column, ``lower <= value < upper`` as ``SegmentRule.codes``) finds
its segment, or ``#N/A`` where no segment takes it, as ``scorecard score`` refuses such a row.
Each characteristic any card uses follows with its raw value: a number, or a level of a
categorical characteristic (the cards group levels differently, so the level is typed, not an
attribute). Each card has its own calculator sheet, ``Calculator (<segment>)``, the single
card's calculator reading these entries (:func:`~scorecard.outputs.workbook.calculator.
write_calculator` with ``inputs``); this sheet shows the chosen card's attribute, points and
check for each characteristic, and the total, odds and bad probability of its score. A
characteristic the chosen card does not use shows no points.
"""

from __future__ import annotations

from openpyxl.utils import get_column_letter, quote_sheetname
from openpyxl.worksheet.datavalidation import DataValidation
from openpyxl.worksheet.worksheet import Worksheet

from scorecard.card import frames as card_frames
from scorecard.outputs.workbook import style
from scorecard.outputs.workbook.calculator import (
    default_attribute,
    defined_name,
    formula_text,
    typical_value,
    write_headers,
    write_totals,
)
from scorecard.outputs.workbook.calculator_values import name_range
from scorecard.outputs.workbook.tables import MAX_WIDTH, safe_value, set_print_layout

SHEET = "Calculator"
HEADERS = ["Characteristic", "Value", "Attribute", "Points", "Check"]
RULE_HEADERS = ["Segment", "A typed value falls here when", "From", "To"]
FIRST_COLUMN = 7
SEGMENT_ROW = 2
HOW = ("Type the value of the segment column in row 2, then each characteristic's raw value: "
       "a number (leave the cell empty for a missing value) or a categorical level as the data "
       "holds it. The table on the right finds the segment; the segment's card (its own "
       "Calculator sheet) finds each attribute and its points. A characteristic the card does "
       "not use shows no points; a check other than 'ok' means the card gives no score.")


def input_cells(model) -> dict:
    """Characteristic name -> the absolute reference of its entry on this sheet."""
    return {c.name: f"{quote_sheetname(SHEET)}!$B${SEGMENT_ROW + 1 + i}"
            for i, c in enumerate(model.characteristics)}


def card_rows(card) -> dict:
    """Characteristic name -> its row on the card's own calculator sheet."""
    return {c.name: 2 + i for i, c in enumerate(card.characteristics)}


def write_segment_calculator(ws: Worksheet, model, sheets: dict, taken: set) -> None:
    """Fill the segmented workbook's Calculator; ``sheets`` maps each segment to the title of
    its card's calculator sheet, ``taken`` holds the workbook names in use."""
    write_headers(ws, HEADERS)
    rule = model.rule
    found = _segment_rules(ws, rule, taken)
    ws.cell(SEGMENT_ROW, 1, safe_value(f"{rule.column} (segment)")).font = style.BOLD
    entry = ws.cell(SEGMENT_ROW, 2, safe_value(_default_segment_value(rule)))
    entry.fill, entry.alignment = style.INPUT_FILL, style.TEXT
    ws.cell(SEGMENT_ROW, 3, f"=IF(ISBLANK(B{SEGMENT_ROW}),NA(),{found})").alignment = style.TEXT
    ws.cell(SEGMENT_ROW, 5, f'=IF(ISERROR(C{SEGMENT_ROW}),IF(ISBLANK(B{SEGMENT_ROW}),'
                            f'"empty: no segment takes a missing value",'
                            f'"no segment takes this value"),"ok")').alignment = style.TEXT
    chosen = model.cards[0]
    for row, char in enumerate(model.characteristics, start=SEGMENT_ROW + 1):
        ws.cell(row, 1, safe_value(char.name)).alignment = style.TEXT
        own = next((c for c in chosen.characteristics if c.name == char.name), char)
        cell = ws.cell(row, 2, safe_value(_default_value(own)))
        cell.fill, cell.alignment = style.INPUT_FILL, style.TEXT
        if char.kind == "numeric":
            rule_ = DataValidation(type="decimal", operator="between", formula1="-1E+307",
                                   formula2="1E+307", allow_blank=True, showErrorMessage=True,
                                   errorTitle="Not a number",
                                   error="Type a number, or leave the cell empty for a missing "
                                         "value.")
            ws.add_data_validation(rule_)
            rule_.add(cell)
        for col, absent in ((3, '""'), (4, '""'), (5, '"not used by this segment\'s card"')):
            ws.cell(row, col, "=" + _by_segment(model, sheets, char.name, col, absent))
        ws.cell(row, 3).alignment = style.TEXT
        ws.cell(row, 4).number_format = style.INTEGER
        ws.cell(row, 5).alignment = style.TEXT
    last = SEGMENT_ROW + len(model.characteristics)
    labels = write_totals(ws, last, model.scaling, HOW)
    ws.cell(last + 2, 1).value = "Total score (the segment's card)"
    names = [c.name for c in model.characteristics] + labels + [f"{rule.column} (segment)"]
    choices = [label for card in model.cards for c in card.characteristics
               for label in card_frames.attribute_labels(c)]
    ws.column_dimensions["A"].width = min(MAX_WIDTH, max(map(len, names)) + 2)
    ws.column_dimensions["B"].width = 18
    ws.column_dimensions["C"].width = min(MAX_WIDTH, max(map(len, choices + ["Attribute"])) + 3)
    ws.column_dimensions["D"].width = 12
    ws.column_dimensions["E"].width = 40
    ws.freeze_panes = "A2"
    set_print_layout(ws, repeat_rows="1:1")


def _by_segment(model, sheets: dict, name: str, col: int, absent: str) -> str:
    """Formula text: column ``col`` of the chosen segment's card calculator for ``name``."""
    letter = get_column_letter(col)
    out = "NA()"
    for segment, card in reversed(list(model.segments.items())):
        rows = card_rows(card)
        value = (f"{quote_sheetname(sheets[segment])}!{letter}{rows[name]}"
                 if name in rows else absent)
        out = f"IF(EXACT($C${SEGMENT_ROW},{formula_text(segment)}),{value},{out})"
    if col == 5:
        return f'IF(ISERROR($C${SEGMENT_ROW}),"no segment",{out})'
    return f"IF(ISERROR($C${SEGMENT_ROW}),NA(),{out})"


def _segment_rules(ws: Worksheet, rule, taken: set) -> str:
    """Write the segments' table on the right; the formula text of row 2's segment name."""
    for col, text in enumerate(RULE_HEADERS, start=FIRST_COLUMN):
        cell = ws.cell(1, col, text)
        cell.font, cell.fill, cell.border = style.HEADER_FONT, style.HEADER_FILL, style.HEADER_BORDER
        cell.alignment = style.HEADER_RIGHT if text in ("From", "To") else style.HEADER_LEFT
    segment_col, from_col = (get_column_letter(FIRST_COLUMN + k) for k in (0, 2))
    row = 2
    if rule.cuts is None:
        for name, group in zip(rule.names, rule.groups):
            for level in group:
                _rule_row(ws, row, name, "value = From (a level)", level, None)
                row += 1
        levels = name_range(ws, defined_name("segment_levels", rule.column, taken), from_col, 2, row - 1)
        owner = name_range(ws, defined_name("segment_of_level", rule.column, taken), segment_col, 2,
                      row - 1)
        hits = f"SUMPRODUCT(EXACT({levels},B{SEGMENT_ROW})*1)"
        at = f"SUMPRODUCT(EXACT({levels},B{SEGMENT_ROW})*(ROW({levels})-1))"
        formula = f"IF({hits}=1,INDEX({owner},{at}),NA())"
    else:
        for index, name in enumerate(rule.names):
            low, high = rule.bounds(index)
            words = ("any number" if low is None and high is None else
                     "value < To" if low is None else
                     "value >= From" if high is None else "From <= value < To")
            _rule_row(ws, row, name, words, low, high)
            row += 1
        cuts = name_range(ws, defined_name("segment_cuts", rule.column, taken), from_col, 3, row - 1)
        names = name_range(ws, defined_name("segment_names", rule.column, taken), segment_col, 2,
                      row - 1)
        formula = (f"IF(ISNUMBER(B{SEGMENT_ROW}),INDEX({names},IFERROR(MATCH(B{SEGMENT_ROW},"
                   f"{cuts},1),0)+1),NA())")
    for k, width in enumerate((20, 34, 14, 14)):
        ws.column_dimensions[get_column_letter(FIRST_COLUMN + k)].width = width
    ws.column_dimensions[get_column_letter(FIRST_COLUMN - 1)].width = 3
    return formula


def _rule_row(ws, row, name, words, low, high) -> None:
    ws.cell(row, FIRST_COLUMN, safe_value(name)).alignment = style.TEXT
    ws.cell(row, FIRST_COLUMN + 1, words).alignment = style.TEXT
    ws.cell(row, FIRST_COLUMN + 2, safe_value(low)).alignment = \
        style.TEXT if isinstance(low, str) else style.LEFT
    ws.cell(row, FIRST_COLUMN + 3, safe_value(high))


def _default_segment_value(rule):
    if rule.cuts is None:
        return rule.groups[0][0]
    return rule.cuts[0] - 1


def _default_value(char):
    """The raw value of the characteristic's most common attribute: a typical number, or the
    first level of that attribute (empty for the missing attribute)."""
    chosen = default_attribute(char)
    if char.kind == "numeric":
        return typical_value(char, chosen)
    levels = char.bins[chosen].levels
    return levels[0] if levels else None

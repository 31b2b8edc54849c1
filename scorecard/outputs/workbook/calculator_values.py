"""How the Calculator finds, by formula, the attribute of a typed numeric value.

Each numeric characteristic's rules are written as rows of a small table under the calculator,
so a reviewer can read them and the formulas refer to them:

- its ranges, whose lower bounds (the cuts) form the cut table: ``MATCH(value, cuts, 1)`` counts
  the cuts at or below the value, which is the product's own rule (a range holds its lower
  bound, ``lower <= value < upper``, as in ``card.scoring.bin_codes``);
- its sentinel values, found by an exact ``MATCH``;
- the missing attribute, for an empty cell;
- the out-of-range attribute, when the scorecard has one, for a value outside the development
  range.

The tests run in the order of ``card.scoring.bin_codes``: an empty cell, a sentinel, out of
range, then the ranges. Text that is not a number gives ``#N/A``.

A segment's calculator in a segmented workbook takes raw values for its categorical
characteristics too (the segments' cards group levels differently, so one typed level serves
them all): each level is then a row of the table, found by an exact, case-sensitive match
(``EXACT``); an empty cell finds the missing attribute and a level the card never saw its
unseen attribute, as ``bin_codes`` places them, and ``#N/A`` where the card has no such
attribute (``scorecard score`` refuses the file then).
"""

from __future__ import annotations

from openpyxl.utils import get_column_letter, quote_sheetname
from openpyxl.workbook.defined_name import DefinedName
from openpyxl.worksheet.worksheet import Worksheet

from scorecard.card import frames as card_frames
from scorecard.card.scorecard import LEVELS, MISSING, OUT_OF_RANGE, RANGE, SENTINEL, UNSEEN
from scorecard.outputs.workbook import style
from scorecard.outputs.workbook.tables import safe_value

HEADERS = ["Characteristic", "Attribute", "A typed value falls here when", "From", "To"]
# The table stands to the right of the calculator with its header in row 1, the row printed
# on every page, so each printed page of it carries its own headings.
FIRST_COLUMN = 7
ATTRIBUTE_COLUMN, FROM_COLUMN, TO_COLUMN = (get_column_letter(FIRST_COLUMN + k) for k in (1, 3, 4))


def write_value_rules(ws: Worksheet, card, name_of, levels: bool = False) -> dict:
    """Write the rules table, its header in row 1 from column ``FIRST_COLUMN``.

    ``name_of(prefix, characteristic)`` returns a fresh workbook name. Returns, per numeric
    characteristic (and per categorical one when ``levels``: typed levels), a function from an
    input cell (``"B2"``) to the formula (without ``=``) of the attribute that cell's value
    falls in.
    """
    header = 1
    for col, text in enumerate(HEADERS, start=FIRST_COLUMN):
        cell = ws.cell(header, col, text)
        cell.font, cell.fill, cell.border = style.HEADER_FONT, style.HEADER_FILL, style.HEADER_BORDER
        cell.alignment = style.HEADER_RIGHT if text in ("From", "To") else style.HEADER_LEFT
    row, formulas = header + 1, {}
    for char in card.characteristics:
        if char.kind == "numeric":
            row, formulas[char.name] = _rules_of(ws, char, row, name_of)
        elif levels:
            row, formulas[char.name] = _levels_of(ws, char, row, name_of)
    for k, text in enumerate(HEADERS):
        longest = max([len(str(ws.cell(r, FIRST_COLUMN + k).value or "")) for r in range(2, row)]
                      + [len(text) if k < 3 else 8])
        ws.column_dimensions[get_column_letter(FIRST_COLUMN + k)].width = min(60, longest + 3)
    # A narrow gap between the calculator and the table.
    ws.column_dimensions[get_column_letter(FIRST_COLUMN - 1)].width = 3
    return formulas


def _rules_of(ws, char, row, name_of):
    labels = card_frames.attribute_labels(char)
    placed = {}                                    # bin kind -> rows, in the order of the bins
    # The cut table holds the scorecard's own cuts, the numbers its scoring compares with.
    ranges = [i for i, b in enumerate(char.bins) if b.kind == RANGE]
    cut_of = dict(zip(ranges[1:], char.cuts)) if len(char.cuts) == len(ranges) - 1 else {}
    for i, (label, b) in enumerate(zip(labels, char.bins)):
        rule, low, high = _rule(char, b)
        if i in cut_of:
            low = cut_of[i]
        if rule is None:
            continue
        first = FIRST_COLUMN
        ws.cell(row, first, safe_value(char.name)).alignment = style.TEXT
        ws.cell(row, first + 1, safe_value(label)).alignment = style.TEXT
        ws.cell(row, first + 2, rule).alignment = style.TEXT
        ws.cell(row, first + 3, low)
        ws.cell(row, first + 4, high)
        placed.setdefault(b.kind, []).append(row)
        row += 1
    ranges = placed.get(RANGE, [])
    attribute = _range_attribute(ws, char, ranges, name_of)
    if OUT_OF_RANGE in placed:
        r = placed[OUT_OF_RANGE][0]
        attribute = (f"IF(OR({{cell}}<${FROM_COLUMN}${r},{{cell}}>${TO_COLUMN}${r}),"
                     f"${ATTRIBUTE_COLUMN}${r},{attribute})")
    if SENTINEL in placed:
        rows = placed[SENTINEL]
        values = name_range(ws, name_of("sentinels", char), FROM_COLUMN, rows[0], rows[-1])
        named = name_range(ws, name_of("sentinel_attributes", char), ATTRIBUTE_COLUMN,
                      rows[0], rows[-1])
        attribute = f"IFERROR(INDEX({named},MATCH({{cell}},{values},0)),{attribute})"
    missing = (f"${ATTRIBUTE_COLUMN}${placed[MISSING][0]}" if MISSING in placed else "NA()")
    template = f"IF(ISBLANK({{cell}}),{missing},IF(ISNUMBER({{cell}}),{attribute},NA()))"
    return row, lambda cell: template.replace("{cell}", cell)


def _levels_of(ws, char, row, name_of):
    """Rows of a categorical characteristic's levels; the formula of a typed level's attribute."""
    labels = card_frames.attribute_labels(char)
    first, special = row, {}
    for label, b in zip(labels, char.bins):
        for level in b.levels:
            ws.cell(row, FIRST_COLUMN, safe_value(char.name)).alignment = style.TEXT
            ws.cell(row, FIRST_COLUMN + 1, safe_value(label)).alignment = style.TEXT
            ws.cell(row, FIRST_COLUMN + 2, "value = From (a level)").alignment = style.TEXT
            ws.cell(row, FIRST_COLUMN + 3, safe_value(level)).alignment = style.TEXT
            row += 1
    last = row - 1
    for label, b in zip(labels, char.bins):
        if b.kind in (MISSING, UNSEEN):
            ws.cell(row, FIRST_COLUMN, safe_value(char.name)).alignment = style.TEXT
            ws.cell(row, FIRST_COLUMN + 1, safe_value(label)).alignment = style.TEXT
            ws.cell(row, FIRST_COLUMN + 2, "the cell is empty" if b.kind == MISSING
                    else "any other level (not seen in development)").alignment = style.TEXT
            special[b.kind] = f"${ATTRIBUTE_COLUMN}${row}"
            row += 1
    missing, unseen = special.get(MISSING, "NA()"), special.get(UNSEEN, "NA()")
    if last < first:
        found = unseen
    else:
        values = name_range(ws, name_of("levels", char), FROM_COLUMN, first, last)
        named = name_range(ws, name_of("level_attributes", char), ATTRIBUTE_COLUMN, first, last)
        hits = f"SUMPRODUCT(EXACT({values},{{cell}})*1)"
        at = f"SUMPRODUCT(EXACT({values},{{cell}})*(ROW({values})-{first - 1}))"
        found = f"IF({hits}=1,INDEX({named},{at}),{unseen})"
    template = f"IF(ISBLANK({{cell}}),{missing},{found})"
    return row, lambda cell: template.replace("{cell}", cell)


def _range_attribute(ws, char, rows, name_of) -> str:
    """Formula text of the range attribute of ``{cell}``: the cut table looked up by MATCH."""
    if len(rows) == 1:
        return f"${ATTRIBUTE_COLUMN}${rows[0]}"
    cuts = name_range(ws, name_of("cuts", char), FROM_COLUMN, rows[1], rows[-1])
    ranges = name_range(ws, name_of("ranges", char), ATTRIBUTE_COLUMN, rows[0], rows[-1])
    # Below the first cut MATCH finds nothing: the first range.
    return f"INDEX({ranges},IFERROR(MATCH({{cell}},{cuts},1),0)+1)"


def name_range(ws, name: str, column: str, first: int, last: int) -> str:
    """Name the cells from ``first`` to ``last`` of ``column`` of ``ws``; returns ``name``."""
    ws.parent.defined_names[name] = DefinedName(
        name, attr_text=f"{quote_sheetname(ws.title)}!${column}${first}:${column}${last}")
    return name


def _rule(char, b) -> tuple[str | None, float | None, float | None]:
    """The words of a bin's rule and its bounds, or (None, ...) for a bin no value reaches."""
    if b.kind == RANGE:
        if b.lower is None and b.upper is None:
            return "any other number", None, None
        if b.lower is None:
            return "value < To", None, b.upper
        if b.upper is None:
            return "value >= From", b.lower, None
        return "From <= value < To", b.lower, b.upper
    if b.kind == SENTINEL:
        return "value = From (a sentinel)", b.value, None
    if b.kind == MISSING:
        return "the cell is empty", None, None
    if b.kind == OUT_OF_RANGE and char.development_range is not None:
        low, high = char.development_range
        return "value < From or value > To (outside development)", low, high
    return None, None, None

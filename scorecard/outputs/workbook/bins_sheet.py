"""The Bins sheet: every binned characteristic's bins, each with its chart beside its rows.

A reviewer reads a characteristic's rows and its chart together, so the chart sits to the
right of those rows rather than in a gallery under the whole table. A block of rows is made at
least as tall as a legible chart, and a printed page holds whole blocks only, so a chart never
lands on another page than its rows.
"""

from __future__ import annotations

from typing import NamedTuple

from openpyxl.styles import Alignment
from openpyxl.utils import get_column_letter
from openpyxl.worksheet.pagebreak import Break
from openpyxl.worksheet.worksheet import Worksheet

from scorecard.build import frames
from scorecard.card.scorecard import LEVELS, RANGE
from scorecard.outputs.workbook import charts, style
from scorecard.outputs.workbook.sheets import (
    BIN_FORMATS,
    column_of,
    note,
    separate_groups,
    tint_by_sign,
)
from scorecard.outputs.workbook.tables import (
    finish_table_sheet,
    header_height,
    safe_value,
    wrapped_lines,
    write_table,
)

POINTS_PER_CM = 72 / 2.54
# The table prints at about half size, so a chart is drawn large to stay legible beside it.
CHART_WIDTH_CM, MIN_CHART_HEIGHT_CM = 14.0, 8.0
GAP_CM = 0.3                 # white space under each chart, so neighbouring charts do not touch
NOTE_WIDTH = 26              # the Note column wraps at this width instead of widening the page
# Numeric columns whose headers wrap onto two lines rather than widen the printed table.
NARROW = {"Share of rows": 10, "Weight of evidence": 12, "IV contribution": 13}
# Room a page keeps for the print scale being estimated from column widths, not measured.
PAGE_SAFETY = 0.97
APART_HEADER = "Weight of evidence, bins plotted apart (chart data)"


class Block(NamedTuple):
    """One characteristic's rows in the table and what its chart draws."""

    name: str
    first_row: int
    last_row: int           # last row of the characteristic
    chart_last_row: int     # last row with development rows (trailing empty bins are not drawn)
    ordered_rows: int       # leading range bins (numeric) or groups of levels (categorical)
    joined: bool            # the ordered bins are ranges of values, so a line joins them
    apart: bool             # some bin after the ordered ones has development rows


def write_bins(ws: Worksheet, result) -> None:
    frame = frames.bins_frame(result.reports)
    header, last = write_table(ws, frame, formats=BIN_FORMATS)
    tint_by_sign(ws, column_of(frame, "Weight of evidence"), header + 1, last)
    separate_groups(ws, frame, header)
    finish_table_sheet(ws, header, last, len(frame.columns))
    blocks = chart_blocks(frame, header)
    note_col = column_of(frame, "Note")
    apart_col = len(frame.columns) + 1
    _apart_column(ws, frame, header, apart_col, blocks)
    chart_col = apart_col + 2
    ws.column_dimensions[get_column_letter(apart_col + 1)].width = 2
    _wrap_notes(ws, note_col, header + 1, last)
    _narrow_columns(ws, frame, header)
    _size_blocks(ws, frame, blocks, note_col)
    _page_breaks(ws, blocks, header, charts.table_width_cm(ws, len(frame.columns)))
    for block in blocks:
        _block_chart(ws, frame, block, apart_col, chart_col)
    row = note(ws, last + 2, "Counts, bad rates and weights of evidence are from the development "
                             "sample. Positive weight of evidence (+, blue) means lower risk than "
                             "average; negative (-, sand) higher. Points are blank for "
                             "characteristics not in the model.")
    prior = result.config.binning.prior_rows
    if prior > 0:
        row = note(ws, row, f"Each weight of evidence is shrunk toward 0 (average risk) as if its "
                            f"bin held {prior:g} more rows at the development sample's bad rate "
                            "(a beta prior), so a small bin keeps only the evidence its size "
                            "supports; the bad rate column is the bin's own.")
    note(ws, row, "Beside each characteristic: bad rate by attribute (bars, left axis) and weight "
                  "of evidence (right axis): a line through the value ranges, separate diamonds "
                  "for missing and sentinel values; a bin without development rows is not drawn.")


def chart_blocks(frame, header: int) -> list[Block]:
    """The characteristics in the order of the table, with the rows their charts draw."""
    names = frame["Characteristic"].tolist()
    kinds = frame["Kind"].tolist()
    filled = (frame["Rows"] > 0).tolist()
    blocks, start = [], 0
    for name in dict.fromkeys(names):
        count = names.count(name)
        mine = range(start, start + count)
        used = [i for i in mine if filled[i]] or [start]
        ordered = 0
        while ordered < count and kinds[start + ordered] in (RANGE, LEVELS):
            ordered += 1
        blocks.append(Block(name, header + 1 + start, header + count + start,
                            header + 1 + used[-1], max(ordered, 1),
                            kinds[start] == RANGE,
                            any(filled[i] for i in mine[ordered:used[-1] - start + 1])))
        start += count
    return blocks


def _apart_column(ws, frame, header, col, blocks) -> None:
    """The weight of evidence of the bins drawn apart, blank for the rest; a hidden column."""
    ws.cell(header, col, APART_HEADER).font = style.NOTE_FONT
    woe = frame["Weight of evidence"].tolist()
    rows = frame["Rows"].tolist()
    for block in blocks:
        for row in range(block.first_row + block.ordered_rows, block.last_row + 1):
            i = row - header - 1
            if rows[i] > 0:
                ws.cell(row, col, safe_value(woe[i])).number_format = style.SIGNED_WOE
    ws.column_dimensions[get_column_letter(col)].hidden = True


def _wrap_notes(ws, col, first, last) -> None:
    letter = get_column_letter(col)
    ws.column_dimensions[letter].width = min(ws.column_dimensions[letter].width, NOTE_WIDTH)
    wrap = Alignment(wrap_text=True, vertical="center", horizontal="left", indent=1)
    for row in range(first, last + 1):
        if ws.cell(row, col).value:
            ws.cell(row, col).alignment = wrap


def _narrow_columns(ws, frame, header) -> None:
    for name, width in NARROW.items():
        ws.column_dimensions[get_column_letter(column_of(frame, name))].width = width
    lines = max(wrapped_lines(str(name), ws.column_dimensions[get_column_letter(j)].width)
                for j, name in enumerate(frame.columns, start=1))
    ws.row_dimensions[header].height = header_height(lines)


def _size_blocks(ws, frame, blocks, note_col) -> None:
    """Rows of a block share the height that makes the block as tall as a legible chart.

    Spreadsheet programs do not grow a row for text written by another program, so a row also
    gets the lines its wrapped note needs. Cells are centred in their taller rows.
    """
    notes = frame["Note"].tolist()
    width = ws.column_dimensions[get_column_letter(note_col)].width
    minimum = (MIN_CHART_HEIGHT_CM + GAP_CM) * POINTS_PER_CM
    first_table_row = blocks[0].first_row if blocks else 0
    # One alignment per kind of cell, not one per cell: the workbook keeps one copy of each
    # style anyway, and making and hashing thousands of equal objects is most of this sheet's time.
    centred = {}
    for block in blocks:
        count = block.last_row - block.first_row + 1
        height = max(style.LINE_POINTS + 3, minimum / count)
        for row in range(block.first_row, block.last_row + 1):
            text = notes[row - first_table_row] or ""
            lines = wrapped_lines(str(text), width) if text else 1
            ws.row_dimensions[row].height = round(max(height, style.LINE_POINTS * lines + 3), 1)
            for col in range(1, note_col):
                cell = ws.cell(row, col)
                alignment = cell.alignment
                key = (alignment.horizontal, alignment.indent)
                if key not in centred:
                    centred[key] = Alignment(horizontal=key[0], indent=key[1], vertical="center")
                cell.alignment = centred[key]


def _block_height(ws, block) -> float:
    """Height of a block in points."""
    return sum(ws.row_dimensions[r].height for r in range(block.first_row, block.last_row + 1))


def _page_breaks(ws, blocks, header, table_width_cm) -> None:
    """A break before each block that would cross the foot of the printed page."""
    width = table_width_cm + 0.4 + CHART_WIDTH_CM + 0.5
    scale = min(1.0, charts.PRINT_WIDTH_CM / width)
    page = charts.PRINT_HEIGHT_CM * PAGE_SAFETY / scale * POINTS_PER_CM
    page -= header_height(2)                      # the header row repeated on every page
    used = 0.0
    for block in blocks:
        height = _block_height(ws, block)
        if used and used + height > page:
            ws.row_breaks.append(Break(id=block.first_row - 1))
            used = 0.0
        used += height


def _block_chart(ws, frame, block, apart_col, chart_col) -> None:
    chart = charts.bad_rate_and_woe_chart(
        ws, block.name, block.first_row, block.chart_last_row,
        label_col=column_of(frame, "Attribute"), bad_rate_col=column_of(frame, "Bad rate"),
        woe_col=column_of(frame, "Weight of evidence"),
        ordered_rows=min(block.ordered_rows, block.chart_last_row - block.first_row + 1),
        apart_col=apart_col if block.apart else None, joined=block.joined)
    chart.width = CHART_WIDTH_CM
    chart.height = _block_height(ws, block) / POINTS_PER_CM - GAP_CM
    ws.add_chart(chart, f"{get_column_letter(chart_col)}{block.first_row}")

"""Tables written into worksheets: safe cell values, one header row, fitted widths.

Every text that comes from data (labels, levels, names) is written as a string cell, never as
a formula: a category level such as ``=HYPERLINK(...)`` must stay the text it is.
"""

from __future__ import annotations

import datetime
import math
import numbers
import re

import numpy as np
import pandas as pd
from openpyxl.cell.cell import ERROR_CODES
from openpyxl.cell.rich_text import CellRichText
from openpyxl.utils import get_column_letter
from openpyxl.worksheet.page import PageMargins
from openpyxl.worksheet.worksheet import Worksheet

from scorecard.outputs.workbook import style

MAX_CELL_TEXT = 32767
MIN_WIDTH, MAX_WIDTH = 8, 60
FIRST_ROW_HEIGHT = style.LINE_POINTS + 4
# Rows of a table that surely fit on the first printed page, under a title and notes.
ROWS_ON_A_PAGE = 30
# Characters that the file format cannot hold in a cell (control characters but tab and newline).
_ILLEGAL = re.compile(r"[\000-\010\013\014\016-\037]")
# Leading characters that some spreadsheet programs read as the start of a formula.
_FORMULA_START = ("=", "+", "-", "@")


def safe_value(value):
    """A value that openpyxl writes as a number, date, boolean, empty cell or plain text.

    Text that a spreadsheet program could take for a formula or an error code is wrapped so that
    openpyxl writes it as a string cell; characters the file format cannot hold are dropped.
    Missing and non-finite numbers become empty cells.

    Parameters
    ----------
    value : object
        A cell value from data: text, a number (Python or numpy), a date, a boolean or None.

    Returns
    -------
    object
        ``None``, ``bool``, ``int``, ``float``, ``datetime``, ``str`` or a one-part rich text.

    Examples
    --------
    >>> safe_value(np.float64(0.25)), safe_value(float("nan")), safe_value("renter")
    (0.25, None, 'renter')
    >>> str(safe_value('=HYPERLINK("http://x","y")'))
    '=HYPERLINK("http://x","y")'
    """
    if value is None or value is pd.NaT or value is pd.NA:
        return None
    if isinstance(value, (bool, np.bool_)):
        return bool(value)
    if isinstance(value, numbers.Integral):
        return int(value)
    if isinstance(value, numbers.Real):
        number = float(value)
        return number if math.isfinite(number) else None
    if isinstance(value, (datetime.date, datetime.time)):
        return _naive(value)
    if isinstance(value, np.datetime64):
        return None if np.isnat(value) else pd.Timestamp(value).to_pydatetime()
    text = _ILLEGAL.sub("", str(value))[:MAX_CELL_TEXT]
    if text.startswith(_FORMULA_START) or text in ERROR_CODES:
        return CellRichText([text])
    return text


def _naive(value):
    if isinstance(value, pd.Timestamp):
        value = value.to_pydatetime()
    if isinstance(value, (datetime.datetime, datetime.time)) and value.tzinfo is not None:
        value = value.replace(tzinfo=None)
    return value


def write_table(ws: Worksheet, frame: pd.DataFrame, *, start_row: int = 1, start_col: int = 1,
                formats: dict | None = None, title: str | None = None) -> tuple[int, int]:
    """Write ``frame`` as a header row and one row per record.

    Parameters
    ----------
    ws : Worksheet
    frame : DataFrame
        Columns in the order they should appear; the column names are the headers.
    start_row, start_col : int
        Top-left cell (1-based) of the title if given, else of the header.
    formats : dict, optional
        Column name -> number format, e.g. ``{"Bad rate": "0.0%", "Rows": "#,##0"}``.
    title : str, optional
        A bold line written above the header.

    Returns
    -------
    (header_row, last_row) : tuple of int
        ``last_row`` equals ``header_row`` when the frame has no rows.

    Examples
    --------
    >>> from openpyxl import Workbook
    >>> ws = Workbook().active
    >>> write_table(ws, pd.DataFrame({"Attribute": ["+1+1"], "Bad rate": [0.1]}),
    ...             formats={"Bad rate": "0.0%"})
    (1, 2)
    >>> ws["A2"].data_type, ws["B2"].number_format
    ('s', '0.0%')
    """
    formats = dict(formats or {})
    unknown = sorted(set(formats) - set(frame.columns))
    if unknown:
        raise ValueError(f"formats name columns the table lacks: {', '.join(map(str, unknown))}")
    header_row = start_row
    if title is not None:
        ws.cell(start_row, start_col, safe_value(title)).font = style.HEADING_FONT
        header_row += 1
    header_lines = 1
    for j, name in enumerate(frame.columns):
        col = start_col + j
        numeric = pd.api.types.is_numeric_dtype(frame[name].dtype)
        cell = ws.cell(header_row, col, safe_value(name))
        cell.font, cell.fill, cell.border = style.HEADER_FONT, style.HEADER_FILL, style.HEADER_BORDER
        cell.alignment = style.HEADER_RIGHT if numeric else style.HEADER_LEFT
        fmt = formats.get(name)
        values = [safe_value(v) for v in frame[name].tolist()]
        for i, value in enumerate(values, start=header_row + 1):
            cell = ws.cell(i, col, value)
            if fmt is not None and value is not None:
                cell.number_format = fmt
            elif isinstance(value, (str, CellRichText)):
                cell.alignment = style.TEXT
        width = _fit_width(ws, col, str(name), values, fmt)
        header_lines = max(header_lines, wrapped_lines(str(name), width))
    # Spreadsheet programs do not grow a row for wrapped text written by another program.
    ws.row_dimensions[header_row].height = header_height(header_lines)
    if len(frame):
        # Room between the dark header band and the first row's text, which sits at the
        # bottom of its cell.
        ws.row_dimensions[header_row + 1].height = FIRST_ROW_HEIGHT
    return header_row, header_row + len(frame)


def header_height(lines: int) -> float:
    """Height in points of a header row of ``lines`` wrapped lines, with its padding."""
    return style.LINE_POINTS * lines + style.HEADER_PADDING


def wrapped_lines(text: str, width: float) -> int:
    """Lines that ``text`` takes when wrapped at word boundaries in a column ``width`` wide."""
    lines, used = 1, 0
    for word in text.split():
        if used and used + 1 + len(word) > width - 1:
            lines, used = lines + 1, len(word)
        else:
            used += len(word) + (1 if used else 0)
    return lines


def _fit_width(ws: Worksheet, col: int, header: str, values: list, fmt: str | None) -> float:
    """Widen the column to its longest entry, never narrowing it; returns the new width."""
    longest = max((_shown_length(v, fmt) for v in values), default=0)
    header_length = max((len(word) for word in header.split()), default=0)
    width = min(MAX_WIDTH, max(MIN_WIDTH, longest + 2, header_length + 2, min(len(header), 18) + 2))
    letter = get_column_letter(col)
    # Reading an unset column would create it with openpyxl's default width, so check first.
    current = ws.column_dimensions[letter].width if letter in ws.column_dimensions else 0
    ws.column_dimensions[letter].width = max(current or 0, width)
    return ws.column_dimensions[letter].width


def _shown_length(value, fmt: str | None) -> int:
    if value is None:
        return 0
    if isinstance(value, float) and fmt is None:
        return len(f"{value:.6g}")
    if isinstance(value, (int, float)) and not isinstance(value, bool):
        return len(f"{value:,.0f}") + (fmt.count("0") if fmt and "." in fmt else 0) + 1
    # Text cells carry an indent of about two characters.
    return max((len(line) for line in str(value).splitlines()), default=0) + 2


def finish_table_sheet(ws: Worksheet, header_row: int, last_row: int, n_columns: int,
                       *, start_col: int = 1, more_tables: bool = False) -> None:
    """Make a table sheet readable: frozen header, filter, landscape print fitted to width.

    The header row is printed on every page, unless ``more_tables`` follow the table and it
    fits on the first page: its header would then head pages of other tables.

    Examples
    --------
    >>> from openpyxl import Workbook
    >>> ws = Workbook().active
    >>> rows = write_table(ws, pd.DataFrame({"Score": [500, 510]}))
    >>> finish_table_sheet(ws, *rows, 1)
    >>> ws.freeze_panes, ws.auto_filter.ref
    ('A2', 'A1:A3')
    """
    first = get_column_letter(start_col)
    last = get_column_letter(start_col + max(n_columns, 1) - 1)
    ws.freeze_panes = ws.cell(header_row + 1, start_col).coordinate
    ws.auto_filter.ref = f"{first}{header_row}:{last}{max(last_row, header_row)}"
    repeat = not more_tables or last_row - header_row > ROWS_ON_A_PAGE
    set_print_layout(ws, repeat_rows=f"{header_row}:{header_row}" if repeat else None)


def set_print_layout(ws: Worksheet, *, repeat_rows: str | None = None) -> None:
    """Landscape, fitted to one page wide, with ``repeat_rows`` (e.g. ``"1:1"``) on every page."""
    ws.page_setup.orientation = "landscape"
    ws.page_setup.paperSize = ws.PAPERSIZE_A4
    ws.page_setup.fitToWidth = 1
    ws.page_setup.fitToHeight = 0
    ws.sheet_properties.pageSetUpPr.fitToPage = True
    ws.print_options.gridLines = False
    ws.page_margins = PageMargins(left=0.5, right=0.5, top=0.6, bottom=0.6, header=0.3, footer=0.3)
    if repeat_rows is not None:
        ws.print_title_rows = repeat_rows


def write_lines(ws: Worksheet, row: int, heading: str, lines, font=None) -> int:
    """A heading and one line of text per entry in column A; returns the row after the last."""
    ws.cell(row, 1, heading).font = style.HEADING_FONT
    for i, text in enumerate(lines, start=row + 1):
        cell = ws.cell(i, 1, safe_value(text))
        if font is not None:
            cell.font = font
    return row + 1 + len(lines)

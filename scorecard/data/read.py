"""Reading application files into frames: CSV, Parquet, statistical datasets, spreadsheets.

A config's source may also be a database query: :func:`read_source` reads either kind.

CSV (plain or compressed) is read with pyarrow's multithreaded reader, text columns
dictionary-encoded so that they arrive as integer codes; Parquet files and folders of them are
read with pyarrow too; the other kinds come through :mod:`scorecard.data.formats`. Everything
after the read works on numpy arrays.
"""

from __future__ import annotations

import codecs
import re
from pathlib import Path

import numpy as np
import pandas as pd
import pyarrow as pa
import pyarrow.compute as pc
import pyarrow.csv as pacsv
import pyarrow.dataset as pads
import pyarrow.parquet as pq

from scorecard.config.sources import is_query
from scorecard.data.formats import (
    KNOWN,
    csv_source,
    data_format,
    is_tab_separated,
    read_spreadsheet,
    read_statistical,
)
from scorecard.errors import InputError, first_line


def read_table(path, columns=None, encoding="utf-8", delimiter=",", sheet=None,
               decimal=".") -> pa.Table:
    """Read a data file (any kind :func:`scorecard.data.formats.data_format` knows) into Arrow.

    Files are only ever opened for reading. A CSV whose text does not decode, or whose rows do
    not all have the header's number of fields, raises InputError naming the row.

    Examples
    --------
    >>> import tempfile, pathlib
    >>> path = pathlib.Path(tempfile.mkdtemp()) / "rows.csv"
    >>> _ = path.write_text("age;outcome\\n31;repaid\\n")
    >>> read_table(path, delimiter=";").column_names
    ['age', 'outcome']
    """
    path = Path(path)
    if not path.exists():
        raise InputError(f"{path}: data file not found")
    kind = data_format(path)
    try:
        if path.is_dir():
            table = pads.dataset(path, format="parquet").to_table(columns=columns)
            if not table.column_names:
                raise InputError(f"{path}: the folder holds no Parquet files")
            return table
        if kind == "parquet":
            return pq.read_table(path, columns=columns)
        if kind in ("csv", "zip"):
            return _read_csv(path, columns, encoding, delimiter, decimal)
        if kind == "statistical":
            return read_statistical(path, columns, encoding)
        if kind == "spreadsheet":
            return read_spreadsheet(path, columns, sheet)
    except pa.ArrowInvalid as exc:
        if kind in ("csv", "zip") and "CSV parse error" in str(exc):
            raise InputError(_parse_error(path, encoding, delimiter, exc)) from None
        raise InputError(f"{path}: cannot read the data: {first_line(exc)}") from None
    except (pa.ArrowKeyError, OSError) as exc:
        raise InputError(f"{path}: cannot read the data: {first_line(exc)}") from None
    except UnicodeDecodeError as exc:
        raise InputError(f"{path}: the text is not valid {encoding} ({exc.reason}); "
                         f"{_ENCODING_HINT}") from None
    raise InputError(f"{path}: unknown data format {path.suffix!r} (expected {KNOWN})")


def _csv_options(path: Path, encoding: str, delimiter: str, threads: bool = True):
    read = pacsv.ReadOptions(encoding=encoding, block_size=1 << 24, use_threads=threads)
    parse = pacsv.ParseOptions(delimiter="\t" if is_tab_separated(path) else delimiter)
    return read, parse


def _read_csv(path: Path, columns, encoding: str, delimiter: str, decimal: str = "."
              ) -> pa.Table:
    if path.stat().st_size == 0:
        raise InputError(f"{path}: the file is empty")
    try:
        codec = codecs.lookup(encoding).name
    except LookupError:
        raise InputError(f"{path}: {encoding!r} is not a known text encoding") from None
    if codec.startswith("utf-8"):
        _refuse_nul_bytes(path)
    read, parse = _csv_options(path, encoding, delimiter)
    convert = pacsv.ConvertOptions(strings_can_be_null=True, auto_dict_encode=True,
                                   auto_dict_max_cardinality=1 << 16, include_columns=columns,
                                   decimal_point=decimal)
    table = pacsv.read_csv(csv_source(path), read_options=read, parse_options=parse,
                           convert_options=convert)
    _check_text(path, table, encoding)
    _check_delimiter(path, table, parse.delimiter)
    return table


def _refuse_nul_bytes(path: Path) -> None:
    # UTF-8 text never holds NUL bytes; UTF-16 text and spreadsheet files do, and would otherwise
    # surface as a confusing count of fields. Compressed text is looked at decompressed.
    source = csv_source(path)
    with (pa.input_stream(source, compression="detect") if isinstance(source, str)
          else source) as file:
        head = file.read(1 << 16)
    if b"\x00" in head:
        raise InputError(f"{path}: the file holds NUL bytes, so it is not UTF-8 text: if it is "
                         "UTF-16, give data.encoding: utf-16; a spreadsheet must be saved as CSV")


def _parse_error(path: Path, encoding: str, delimiter: str, exc: Exception) -> str:
    """The parse error with its data row, found by a second, single-threaded read."""
    found = []

    def note(row):
        found.append(row)
        return "skip"

    read, parse = _csv_options(path, encoding, delimiter, threads=False)
    parse.invalid_row_handler = note
    try:
        pacsv.read_csv(csv_source(path), read_options=read, parse_options=parse)
    except pa.ArrowInvalid:
        pass
    if found and found[0].number is not None:
        # The reader counts the header as row 1; messages count data rows from 1.
        bad = found[0]
        return (f"{path}: row {bad.number - 1}: expected {bad.expected_columns} fields as in the "
                f"header, found {bad.actual_columns}")
    return f"{path}: cannot read the data: {first_line(exc)}"


_ENCODING_HINT = "give the file's encoding as data.encoding (for example latin-1 or cp1252)"


def _check_text(path: Path, table: pa.Table, encoding: str) -> None:
    # The CSV reader keeps text that does not decode as raw bytes instead of failing: in the
    # header they fail only when the names are read, in a column they would silently become
    # levels like b'caf\xe9'.
    try:
        names = table.column_names
    except UnicodeDecodeError:
        raise InputError(f"{path}: the header is not valid {encoding} text; "
                         f"{_ENCODING_HINT}") from None
    for index, name in enumerate(names):
        column = table.column(index)
        kind = column.type.value_type if pa.types.is_dictionary(column.type) else column.type
        if pa.types.is_binary(kind) or pa.types.is_large_binary(kind):
            row = _first_undecodable_row(column)
            where = "" if row is None else f" row {row + 1}:"
            raise InputError(f"{path}: column {name}:{where} the text is not valid {encoding}; "
                             f"{_ENCODING_HINT}")


def _first_undecodable_row(column: pa.ChunkedArray) -> int | None:
    """Position of the first value that is not UTF-8, or None if no single value is to blame."""
    start = 0
    for chunk in column.chunks:
        if pa.types.is_dictionary(chunk.type):
            entry = _first_undecodable(chunk.dictionary)
            at = -1 if entry is None else pc.index(chunk.indices, entry).as_py()
        else:
            found = _first_undecodable(chunk)
            at = -1 if found is None else found
        if at >= 0:
            return start + at
        start += len(chunk)
    return None


def _first_undecodable(values: pa.Array) -> int | None:
    """Index of the first binary value that is not UTF-8, decoding all bytes at once."""
    offsets_type = np.int64 if pa.types.is_large_binary(values.type) else np.int32
    buffers = values.buffers()
    offsets = np.frombuffer(buffers[1], dtype=offsets_type)[values.offset:
                                                            values.offset + len(values) + 1]
    data = buffers[2].to_pybytes()[offsets[0]:offsets[-1]] if buffers[2] else b""
    try:
        data.decode("utf-8")
    except UnicodeDecodeError as exc:
        return int(np.searchsorted(offsets, offsets[0] + exc.start, side="right")) - 1
    return None


def _check_delimiter(path: Path, table: pa.Table, delimiter: str) -> None:
    if table.num_columns != 1:
        return
    header = table.column_names[0]
    other = next((d for d in (";", "\t", "|", ",") if d != delimiter and d in header), None)
    if other is not None:
        raise InputError(f"{path}: the file reads as a single column {header[:40]!r}; its fields "
                         f"seem to be separated by {other!r}: give that as data.delimiter")



def read_frame(path, columns=None, encoding="utf-8", delimiter=",", sheet=None,
               decimal=".") -> pd.DataFrame:
    """Read a data file into pandas; text columns come back as categoricals.

    Parameters
    ----------
    path : path
        A CSV file (.csv, .txt, .tsv; also compressed .gz, .bz2, .zst, or alone in a .zip), a
        Parquet file (.parquet, .pq) or a folder of Parquet files, a statistical-package dataset
        (.sas7bdat, .xpt) or an .xlsx workbook.
    columns : list of str, optional
        Read only these columns.
    encoding : str, default "utf-8"
        Text encoding of a CSV file.
    delimiter : str, default ","
        Field separator of a CSV file (a .tsv file is always tab-separated).
    sheet : str or int, optional
        The sheet of an .xlsx workbook, by name or position (default: the first).
    decimal : str, default "."
        Decimal mark of the numbers in a CSV file ("." or ",").

    Returns
    -------
    pandas.DataFrame
        One row per data row, in file order, with a default integer index (row ``i`` of the
        file is label ``i``; messages about a row count from 1).

    Raises
    ------
    InputError
        The file is missing, empty, has a header but no rows, repeats a column name, or cannot
        be read or decoded; the message names the file and, where it can, the column and row.

    Examples
    --------
    >>> import tempfile, pathlib
    >>> path = pathlib.Path(tempfile.mkdtemp()) / "rows.csv"
    >>> _ = path.write_text("age,outcome\\n31,repaid\\n45,defaulted\\n")
    >>> frame = read_frame(path)
    >>> frame["age"].tolist(), column_kind(frame["outcome"])
    ([31, 45], 'categorical')
    """
    return table_frame(read_table(path, columns, encoding, delimiter, sheet, decimal), path)


def read_source(source, columns=None, encoding="utf-8", delimiter=",", sheet=None,
                decimal=".") -> pd.DataFrame:
    """Read a config's source into pandas: a data file (see :func:`read_frame`) or the rows of
    a database query (a :class:`scorecard.config.sources.DatabaseQuery`, read in chunks by
    :mod:`scorecard.data.database`; the file settings do not apply to it).

    Examples
    --------
    >>> import tempfile, pathlib
    >>> path = pathlib.Path(tempfile.mkdtemp()) / "rows.csv"
    >>> _ = path.write_text("age,outcome\\n31,repaid\\n")
    >>> read_source(path)["age"].tolist()
    [31]
    """
    if not is_query(source):
        return read_frame(source, columns, encoding, delimiter, sheet, decimal)
    from scorecard.data.database import read_query
    frame = table_frame(read_query(source), f"{source.key}.query")
    if columns is not None:
        missing = [c for c in columns if c not in frame.columns]
        if missing:
            raise InputError(f"{source.key}.query: column {missing[0]}: not in the rows returned")
        frame = frame[list(columns)]
    return frame


def table_frame(table: pa.Table, where) -> pd.DataFrame:
    """An Arrow table of rows as pandas, text as categoricals; ``where`` names the data in
    messages. Refuses a repeated column name and a table without rows."""
    names = table.column_names
    if len(set(names)) != len(names):
        dup = next(n for n in names if names.count(n) > 1)
        raise InputError(f"{where}: column {dup}: the name appears more than once")
    if table.num_rows == 0:
        raise InputError(f"{where}: the data has column names but no rows")
    table = pa.table({n: _dictionary_text(table.column(n)) for n in names})
    return table.to_pandas(split_blocks=True, self_destruct=True, date_as_object=False)


def _dictionary_text(column: pa.ChunkedArray) -> pa.ChunkedArray:
    """Text as dictionary-encoded Arrow, so pandas receives integer codes, not strings."""
    kind = column.type
    if pa.types.is_dictionary(kind):
        return column.unify_dictionaries() if column.num_chunks > 1 else column
    if pa.types.is_string(kind) or pa.types.is_large_string(kind):
        return column.dictionary_encode()
    return column


def column_kind(series: pd.Series) -> str:
    """'numeric', 'categorical' or 'date', from the column's type."""
    dtype = series.dtype
    if pd.api.types.is_datetime64_any_dtype(dtype):
        return "date"
    if isinstance(dtype, pd.CategoricalDtype):
        return "categorical"
    if pd.api.types.is_bool_dtype(dtype) or pd.api.types.is_numeric_dtype(dtype):
        return "numeric"
    return "categorical"


# A whole number, or one with a decimal comma (and no other mark): how numbers look in files
# written where the comma is the decimal mark.
_COMMA_NUMBER = re.compile(r"[+-]?\d+(,\d+)?")


def decimal_comma_column(series: pd.Series) -> str | None:
    """A value of a text column whose values are all numbers written with a decimal comma
    (at least one of them with the comma), else None.

    Examples
    --------
    >>> decimal_comma_column(pd.Series(["3060,5", "12", None], dtype="category"))
    '3060,5'
    >>> decimal_comma_column(pd.Series(["owner", "12,5"], dtype="category")) is None
    True
    """
    if not isinstance(series.dtype, pd.CategoricalDtype):
        return None
    levels = [str(v) for v in series.cat.categories]
    if not levels or not all(_COMMA_NUMBER.fullmatch(v) for v in levels):
        return None
    return next((v for v in levels if "," in v), None)


_DELIMITERS = (",", ";", "\t", "|")
_POINT_NUMBER = re.compile(r"[+-]?\d*\.\d+")
_COMMA_DECIMAL = re.compile(r"[+-]?\d+,\d+")


def sniff_csv(path, encoding: str = "utf-8") -> tuple[str, str]:
    """The field separator and decimal mark a CSV file seems to use, from its first lines.

    The separator is the one that splits every line into the same number of fields, the most;
    the decimal mark is a comma when numbers with a comma are found and none with a point.

    Examples
    --------
    >>> import tempfile, pathlib
    >>> path = pathlib.Path(tempfile.mkdtemp()) / "rows.csv"
    >>> _ = path.write_text("age;income;outcome\\n31;1520,5;repaid\\n45;980,0;defaulted\\n")
    >>> sniff_csv(path)
    (';', ',')
    """
    import csv

    path = Path(path)
    if data_format(path) not in ("csv", "zip") or not path.is_file():
        return ",", "."
    source = csv_source(path)
    try:
        with (pa.input_stream(source, compression="detect") if isinstance(source, str)
              else source) as file:
            head = file.read(1 << 16)
    except (OSError, pa.ArrowException):
        return ",", "."
    text = head.decode(encoding, errors="replace")
    lines = text.splitlines()[:200]
    if len(text) >= 1 << 16 and len(lines) > 1:
        lines = lines[:-1]          # the last line may be cut short
    if is_tab_separated(path):
        delimiter = "\t"
    else:
        def fields(d):
            counts = {len(row) for row in csv.reader(lines, delimiter=d)}
            return max(counts) if len(counts) == 1 else 0
        delimiter = max(_DELIMITERS, key=lambda d: (fields(d), -_DELIMITERS.index(d)))
        delimiter = delimiter if fields(delimiter) > 1 else ","
    values = [v.strip() for row in csv.reader(lines[1:], delimiter=delimiter) for v in row]
    comma = any(_COMMA_DECIMAL.fullmatch(v) for v in values)
    point = any(_POINT_NUMBER.fullmatch(v) for v in values)
    return delimiter, "," if comma and not point else "."

"""Which kind of file a data path is, and readers for the kinds that are not plain CSV or Parquet.

A modeller's sample arrives as CSV (plain, compressed with gzip, bzip2 or zstandard, or the one
CSV inside a zip archive), Parquet (a file or a folder of files), a statistical-package dataset
(SAS ``.sas7bdat`` or transport ``.xpt``) or a spreadsheet sheet (``.xlsx``). CSV of every kind
goes through pyarrow's CSV reader (see :mod:`scorecard.data.read`); the others are read here in
chunks and handed on as Arrow tables or record batches, so everything after the read is the same.
"""

from __future__ import annotations

import zipfile
from collections.abc import Iterator
from pathlib import Path

import pyarrow as pa

from scorecard.errors import InputError, first_line

PARQUET_SUFFIXES = (".parquet", ".pq")
CSV_SUFFIXES = (".csv", ".txt", ".tsv")
# Compression that pyarrow's CSV reader undoes by itself, judged by the last suffix.
COMPRESSED_SUFFIXES = (".gz", ".bz2", ".zst")
STATISTICAL_SUFFIXES = (".sas7bdat", ".xpt")
SPREADSHEET_SUFFIXES = (".xlsx",)
STATISTICAL_CHUNK_ROWS = 100_000
_IBM_TINY = 16.0 ** -65

KNOWN = ("a CSV file (.csv, .tsv or .txt, also .gz, .bz2 or .zst compressed, or one CSV in a "
         ".zip), a Parquet file or folder, a .sas7bdat or .xpt dataset, or an .xlsx sheet")


def data_format(path: Path) -> str:
    """The kind of a data path: 'parquet', 'csv', 'zip', 'statistical' or 'spreadsheet'.

    Examples
    --------
    >>> data_format(Path("leases.csv.gz")), data_format(Path("leases.sas7bdat"))
    ('csv', 'statistical')
    """
    if path.is_dir():
        return "parquet"
    suffixes = [s.lower() for s in path.suffixes]
    last = suffixes[-1] if suffixes else ""
    if last in COMPRESSED_SUFFIXES and len(suffixes) >= 2 and suffixes[-2] in CSV_SUFFIXES:
        return "csv"
    for kind, known in (("parquet", PARQUET_SUFFIXES), ("csv", CSV_SUFFIXES),
                        ("zip", (".zip",)), ("statistical", STATISTICAL_SUFFIXES),
                        ("spreadsheet", SPREADSHEET_SUFFIXES)):
        if last in known:
            return kind
    raise InputError(f"{path}: unknown data format {path.suffix!r} (expected {KNOWN})")


def is_tab_separated(path: Path) -> bool:
    """A ``.tsv`` file, compressed or not, is always tab-separated."""
    suffixes = [s.lower() for s in path.suffixes]
    if suffixes and suffixes[-1] in COMPRESSED_SUFFIXES:
        suffixes = suffixes[:-1]
    return bool(suffixes) and suffixes[-1] == ".tsv"


def zip_member(path: Path) -> str:
    """The name of the one CSV file inside a zip archive; InputError when there is not exactly one."""
    try:
        with zipfile.ZipFile(path) as archive:
            names = [n for n in archive.namelist()
                     if not n.endswith("/") and Path(n).suffix.lower() in CSV_SUFFIXES]
    except (zipfile.BadZipFile, OSError) as exc:
        raise InputError(f"{path}: cannot open the zip archive: {exc}") from None
    if len(names) != 1:
        found = ", ".join(names[:3]) or "none"
        raise InputError(f"{path}: a zip archive must hold exactly one CSV file, found "
                         f"{len(names)} ({found})")
    return names[0]


def open_zip_member(path: Path) -> pa.PythonFile:
    """A readable stream of the archive's one CSV file, for pyarrow's CSV reader."""
    archive = zipfile.ZipFile(path)
    return pa.PythonFile(archive.open(zip_member(path)), mode="r")


def csv_source(path: Path):
    """What pyarrow's CSV reader reads for ``path``: the path itself (it undoes gzip, bzip2 and
    zstandard by the suffix), or a stream of the one CSV inside a zip archive."""
    return open_zip_member(path) if data_format(path) == "zip" else str(path)


def statistical_batches(path: Path, encoding: str,
                        chunk_rows: int = STATISTICAL_CHUNK_ROWS) -> Iterator[pa.RecordBatch]:
    """Record batches of a SAS or transport dataset, read by pandas in chunks of ``chunk_rows``."""
    import pandas as pd
    form = "xport" if path.suffix.lower() == ".xpt" else "sas7bdat"
    try:
        reader = pd.read_sas(path, format=form, encoding=encoding, chunksize=chunk_rows)
        with reader:
            for chunk in reader:
                # A SAS text value that is missing reads as blank; elsewhere blank is missing.
                for name in chunk.columns[chunk.dtypes.map(_is_text).to_numpy(bool)]:
                    chunk[name] = chunk[name].mask(chunk[name].str.strip() == "")
                if form == "xport":
                    # pandas decodes the IBM float zero (all bits clear) as 16**-65, the
                    # smallest IBM magnitude; no credit datum is that small, so it is zero.
                    numbers = chunk.select_dtypes("number").columns
                    chunk[numbers] = chunk[numbers].mask(chunk[numbers].abs() == _IBM_TINY, 0.0)
                yield pa.RecordBatch.from_pandas(chunk, preserve_index=False)
    except (ValueError, OSError, UnicodeDecodeError, EOFError, IndexError, KeyError) as exc:
        raise InputError(f"{path}: cannot read the {form} dataset: {first_line(exc)}") from None


def _is_text(dtype) -> bool:
    import pandas as pd
    return dtype == object or isinstance(dtype, pd.StringDtype)


def read_statistical(path: Path, columns, encoding: str) -> pa.Table:
    """A SAS or transport dataset as one Arrow table (text columns as strings)."""
    batches = list(statistical_batches(path, encoding))
    if not batches:
        raise InputError(f"{path}: the dataset holds no rows")
    table = pa.Table.from_batches(batches)
    return _select(path, table, columns)


def read_spreadsheet(path: Path, columns, sheet=None) -> pa.Table:
    """One sheet of an .xlsx workbook (the first when ``sheet`` is None) as an Arrow table.

    The header is the sheet's first row. The fast calamine reader is used where it is installed,
    openpyxl otherwise; both only read.
    """
    import pandas as pd
    try:
        import python_calamine  # noqa: F401
        engine = "calamine"
    except ImportError:
        engine = "openpyxl"
    try:
        frame = pd.read_excel(path, sheet_name=0 if sheet is None else sheet, engine=engine)
    except ValueError as exc:
        where = f"sheet {sheet!r}" if sheet is not None else "the first sheet"
        raise InputError(f"{path}: cannot read {where}: {exc}") from None
    except Exception as exc:   # noqa: BLE001 - each spreadsheet reader raises its own types
        raise InputError(f"{path}: cannot read the workbook: {first_line(exc)}") from None
    frame.columns = [str(c) for c in frame.columns]
    for name in frame.columns:
        if frame[name].dtype == object:
            # Cells of one column may mix numbers and text; text is what they all can be.
            frame[name] = frame[name].map(lambda v: v if v is None or isinstance(v, str)
                                          or v != v else str(v))
    return _select(path, pa.Table.from_pandas(frame, preserve_index=False), columns)



def _select(path: Path, table: pa.Table, columns) -> pa.Table:
    if columns is None:
        return table
    missing = [c for c in columns if c not in table.column_names]
    if missing:
        raise InputError(f"{path}: column {missing[0]}: not in the data")
    return table.select(list(columns))

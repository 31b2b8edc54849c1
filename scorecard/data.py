"""Reading application files, coding the outcome and drawing the samples.

CSV is read with pyarrow's multithreaded reader, text columns dictionary-encoded so that they
arrive as integer codes; Parquet files and folders of them are read with pyarrow too. Everything
after the read works on numpy arrays.
"""

from __future__ import annotations

from pathlib import Path
from typing import NamedTuple

import numpy as np
import pandas as pd
import pyarrow as pa
import pyarrow.csv as pacsv
import pyarrow.dataset as pads
import pyarrow.parquet as pq

from .errors import InputError

PARQUET_SUFFIXES = (".parquet", ".pq")
CSV_SUFFIXES = (".csv", ".txt", ".tsv")

GOOD, BAD, OTHER = 0, 1, -1
DEVELOPMENT, HOLDOUT, OUT_OF_TIME, EXCLUDED = 0, 1, 2, -1
SAMPLE_NAMES = {DEVELOPMENT: "development", HOLDOUT: "holdout", OUT_OF_TIME: "out of time"}


def read_table(path, columns=None, encoding="utf-8", delimiter=",") -> pa.Table:
    """Read a CSV file, a Parquet file or a folder of Parquet files into an Arrow table."""
    path = Path(path)
    if not path.exists():
        raise InputError(f"{path}: data file not found")
    try:
        if path.is_dir():
            return pads.dataset(path, format="parquet").to_table(columns=columns)
        suffix = path.suffix.lower()
        if suffix in PARQUET_SUFFIXES:
            return pq.read_table(path, columns=columns)
        if suffix in CSV_SUFFIXES:
            return _read_csv(path, columns, encoding, delimiter)
    except (pa.ArrowInvalid, pa.ArrowKeyError, OSError, UnicodeDecodeError) as exc:
        raise InputError(f"{path}: cannot read the data: {_first_line(exc)}") from None
    raise InputError(f"{path}: unknown data format {path.suffix!r} "
                     "(expected .csv, .parquet or a folder of Parquet files)")


def _read_csv(path: Path, columns, encoding: str, delimiter: str) -> pa.Table:
    if path.stat().st_size == 0:
        raise InputError(f"{path}: the file is empty")
    read = pacsv.ReadOptions(encoding=encoding, block_size=1 << 24)
    parse = pacsv.ParseOptions(delimiter="\t" if path.suffix.lower() == ".tsv" else delimiter)
    convert = pacsv.ConvertOptions(strings_can_be_null=True, auto_dict_encode=True,
                                   auto_dict_max_cardinality=1 << 16, include_columns=columns)
    return pacsv.read_csv(path, read_options=read, parse_options=parse, convert_options=convert)


def _first_line(exc: Exception) -> str:
    return (str(exc).strip().splitlines() or [exc.__class__.__name__])[0]


def read_frame(path, columns=None, encoding="utf-8", delimiter=",") -> pd.DataFrame:
    """Read a data file into pandas; text columns come back as categoricals."""
    table = read_table(path, columns, encoding, delimiter)
    names = table.column_names
    if len(set(names)) != len(names):
        dup = next(n for n in names if names.count(n) > 1)
        raise InputError(f"{path}: column {dup}: the name appears more than once")
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


class Outcome(NamedTuple):
    """The outcome of every row, coded: 1 bad, 0 good, -1 neither (left out)."""

    label: np.ndarray      # int8
    weight: np.ndarray     # float64
    goods: float
    bads: float
    left_out: int          # rows whose outcome is neither bad nor good (including missing)


def _matches(labels: list[str], values) -> np.ndarray:
    wanted = {str(v).lower() if isinstance(v, bool) else str(v) for v in values}
    return np.array([(lv.lower() if lv.lower() in ("true", "false") else lv) in wanted
                     for lv in labels], dtype=bool)


def code_outcome(series: pd.Series, bad, good, weight: pd.Series | None = None,
                 weight_name: str = "weight") -> Outcome:
    """Code the outcome column by the ``bad`` and ``good`` value lists.

    Examples
    --------
    >>> o = code_outcome(pd.Series(["repaid", "defaulted", "open", None]), ["defaulted"], ["repaid"])
    >>> o.label.tolist(), o.goods, o.bads, o.left_out
    ([0, 1, -1, -1], 1.0, 1.0, 2)
    """
    from .scoring import level_labels
    cat = series if isinstance(series.dtype, pd.CategoricalDtype) else series.astype("category")
    labels = level_labels(cat.cat.categories)
    lookup = np.where(_matches(labels, bad), BAD, np.where(_matches(labels, good), GOOD, OTHER))
    codes = cat.cat.codes.to_numpy()
    label = np.where(codes < 0, OTHER, lookup[codes] if len(lookup) else OTHER).astype(np.int8)
    w = np.ones(len(series)) if weight is None else _weights(weight, weight_name)
    w = np.where(label == OTHER, 0.0, w)
    return Outcome(label, w, float(w[label == GOOD].sum()), float(w[label == BAD].sum()),
                   int((label == OTHER).sum()))


def _weights(series: pd.Series, name: str) -> np.ndarray:
    if not pd.api.types.is_numeric_dtype(series.dtype) or pd.api.types.is_bool_dtype(series.dtype):
        raise InputError(f"column {name}: weights must be numbers")
    w = series.to_numpy(dtype=np.float64, na_value=np.nan)
    bad = ~np.isfinite(w) | (w < 0)
    if bad.any():
        row = int(np.flatnonzero(bad)[0])
        raise InputError(f"column {name}: row {row + 1}: weight {w[row]} is not a finite "
                         "non-negative number")
    return w


def parse_dates(series: pd.Series, name: str) -> np.ndarray:
    """The column as datetime64; InputError naming the first value that does not parse."""
    if pd.api.types.is_datetime64_any_dtype(series.dtype):
        return series.to_numpy(dtype="datetime64[ns]")
    text = series.astype("string")
    parsed = pd.to_datetime(text, errors="coerce", format="mixed")
    bad = parsed.isna() & text.notna()
    if bad.any():
        row = int(np.flatnonzero(bad.to_numpy())[0])
        raise InputError(f"column {name}: row {row + 1}: {text.iloc[row]!r} is not a date")
    return parsed.to_numpy(dtype="datetime64[ns]")


def assign_samples(label: np.ndarray, holdout: float | None, seed: int,
                   out_of_time: np.ndarray | None = None) -> np.ndarray:
    """Sample of every row: development, holdout (stratified, seeded) or out of time.

    Rows whose outcome is neither good nor bad are EXCLUDED. Within each outcome class the
    holdout takes ``round(holdout * n)`` rows chosen by a seeded permutation, so the holdout's
    bad rate equals the development sample's up to one row.

    Examples
    --------
    >>> s = assign_samples(np.array([0] * 10 + [1] * 10, dtype=np.int8), 0.3, 1)
    >>> [int((s[:10] == HOLDOUT).sum()), int((s[10:] == HOLDOUT).sum())]
    [3, 3]
    """
    sample = np.where(label == OTHER, EXCLUDED, DEVELOPMENT).astype(np.int8)
    if out_of_time is not None:
        sample[(sample == DEVELOPMENT) & out_of_time] = OUT_OF_TIME
    if holdout:
        rng = np.random.default_rng(seed)
        for cls in (GOOD, BAD):
            rows = np.flatnonzero((sample == DEVELOPMENT) & (label == cls))
            take = rng.permutation(len(rows))[: int(round(holdout * len(rows)))]
            sample[rows[take]] = HOLDOUT
    return sample

"""Arrow arrays as numpy arrays and back, reading their buffers: no pandas on the way.

pyarrow's own conversions (``pa.array``, ``Array.to_numpy`` of an array with nulls) import
pandas whenever it is installed, which costs a fresh ``scorecard score`` process more than
scoring a thousand rows. Numbers, booleans and dictionary-encoded levels cover what the readers
of scoring produce; for any other type the readers return None and the caller takes the pandas
route, paying for it only then.
"""

from __future__ import annotations

import numpy as np
import pyarrow as pa


def is_arrow(column) -> bool:
    """Whether ``column`` is an Arrow array (pyarrow need not be imported to ask)."""
    return type(column).__module__.startswith("pyarrow")


def _bits(buffer, offset: int, length: int) -> np.ndarray:
    """``length`` bits of a bitmap buffer from bit ``offset``, as booleans."""
    bits = np.unpackbits(np.frombuffer(buffer, dtype=np.uint8), bitorder="little")
    return bits[offset:offset + length].astype(bool)


def present(array: pa.Array) -> np.ndarray | None:
    """True where ``array`` holds a value; None when it holds one in every row."""
    if array.null_count == 0:
        return None
    if pa.types.is_null(array.type):
        return np.zeros(len(array), dtype=bool)
    return _bits(array.buffers()[0], array.offset, len(array))


def _numpy_type(kind: pa.DataType):
    if pa.types.is_integer(kind):
        return np.dtype(f"{'u' if pa.types.is_unsigned_integer(kind) else ''}int{kind.bit_width}")
    if pa.types.is_floating(kind):
        return np.dtype(f"float{kind.bit_width}")
    return None


def _raw(array: pa.Array) -> np.ndarray | None:
    """The values of a number or boolean array as stored (a missing row holds any value)."""
    kind, n = array.type, len(array)
    if n == 0:
        return np.zeros(0)
    if pa.types.is_boolean(kind):
        return _bits(array.buffers()[1], array.offset, n)
    if _numpy_type(kind) is None:
        return None
    raw = np.frombuffer(array.buffers()[1], dtype=_numpy_type(kind), count=array.offset + n)
    return raw[array.offset:]


def float_values(array) -> np.ndarray | None:
    """Numbers, booleans or nulls as float64 with NaN for a missing value; None for another
    type (text, dates, decimals, a chunked array)."""
    if not isinstance(array, pa.Array):
        return None
    if pa.types.is_null(array.type):
        return np.full(len(array), np.nan)
    raw = _raw(array)
    if raw is None:
        return None
    x = raw.astype(np.float64)
    valid = present(array)
    if valid is not None:
        x[~valid] = np.nan
    return x


def level_values(array) -> tuple[list, np.ndarray] | None:
    """The distinct values of ``array`` and each row's index among them (-1: missing; a NaN
    counts as missing); None for a type without a fast route.

    Dictionary-encoded arrays (what the CSV and Parquet readers of scoring give for levels)
    are read as they are; text, numbers and booleans are dictionary-encoded first.
    """
    if not isinstance(array, pa.Array):
        return None
    if not pa.types.is_dictionary(array.type):
        kind = array.type
        if not (pa.types.is_string(kind) or pa.types.is_large_string(kind) or
                pa.types.is_boolean(kind) or _numpy_type(kind) is not None):
            return None
        array = array.dictionary_encode()
    values = array.dictionary.to_pylist()
    codes = _raw(array.indices).astype(np.intp)
    valid = present(array.indices)
    if valid is not None:
        codes[~valid] = -1
    absent = [i for i, v in enumerate(values) if v is None or v != v]   # v != v: NaN
    if absent:
        to_code = np.arange(len(values) + 1)
        to_code[absent] = -1
        to_code[-1] = -1                 # a code of -1 (missing) picks this last entry
        codes = to_code[codes]
    return values, codes


def numbers(values: np.ndarray, missing: np.ndarray | None = None) -> pa.Array:
    """An Arrow array of int32, int64 or float64 ``values``, null where ``missing``."""
    values = np.ascontiguousarray(values)
    kind = {np.dtype(np.int32): pa.int32(), np.dtype(np.int64): pa.int64(),
            np.dtype(np.float64): pa.float64()}[values.dtype]
    validity, nulls = None, 0
    if missing is not None and missing.any():
        validity = pa.py_buffer(np.packbits(~missing, bitorder="little"))
        nulls = int(missing.sum())
    return pa.Array.from_buffers(kind, len(values), [validity, pa.py_buffer(values)],
                                 null_count=nulls)


def strings(texts) -> pa.Array:
    """An Arrow string array of a few texts (labels of a dictionary)."""
    data = [str(t).encode("utf-8") for t in texts]
    offsets = np.zeros(len(data) + 1, dtype=np.int32)
    offsets[1:] = np.cumsum([len(d) for d in data], dtype=np.int64)
    return pa.Array.from_buffers(pa.string(), len(data),
                                 [None, pa.py_buffer(offsets), pa.py_buffer(b"".join(data))])


def labelled(index: np.ndarray, labels, missing: np.ndarray | None = None) -> pa.Array:
    """A dictionary-encoded text column: ``labels[index]`` per row, null where the index is
    negative or ``missing``."""
    gone = index < 0 if missing is None else (index < 0) | missing
    return pa.DictionaryArray.from_arrays(numbers(index.astype(np.int32), gone), strings(labels))

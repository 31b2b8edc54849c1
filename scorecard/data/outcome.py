"""Coding the outcome column: bad, good, or left out; and the weight of each row."""

from __future__ import annotations

from typing import NamedTuple

import numpy as np
import pandas as pd

from scorecard.data.coding import level_labels
from scorecard.errors import InputError

GOOD, BAD, OTHER = 0, 1, -1


class Outcome(NamedTuple):
    """The outcome of every row, coded: 1 bad, 0 good, -1 neither (left out)."""

    label: np.ndarray      # int8
    weight: np.ndarray     # float64
    goods: float
    bads: float
    left_out: int          # rows whose outcome is neither bad nor good (including missing)


_YES_WORDS, _NO_WORDS = ("true", "yes", "on"), ("false", "no", "off")


def _outcome_key(text: str) -> str:
    """Outcome text as matched: the YAML words for yes and no stand for one value each."""
    low = text.lower()
    return "true" if low in _YES_WORDS else "false" if low in _NO_WORDS else text


def _matches(labels: list[str], values) -> np.ndarray:
    # The config reads ``yes`` as true and ``1.0`` as a float; a column holding the text "yes"
    # or the integer 1 means the same outcome.
    wanted = {_outcome_key(str(v).lower() if isinstance(v, bool) else level_labels([v])[0])
              for v in values}
    return np.array([_outcome_key(lv) in wanted for lv in labels], dtype=bool)


def code_outcome(series: pd.Series, bad, good, weight: pd.Series | None = None,
                 weight_name: str = "weight") -> Outcome:
    """Code the outcome column by the ``bad`` and ``good`` value lists.

    Examples
    --------
    >>> o = code_outcome(pd.Series(["repaid", "defaulted", "open", None]), ["defaulted"], ["repaid"])
    >>> o.label.tolist(), o.goods, o.bads, o.left_out
    ([0, 1, -1, -1], 1.0, 1.0, 2)
    """
    cat = series if isinstance(series.dtype, pd.CategoricalDtype) else series.astype("category")
    labels = level_labels(cat.cat.categories)
    lookup = np.where(_matches(labels, bad), BAD, np.where(_matches(labels, good), GOOD, OTHER))
    codes = cat.cat.codes.to_numpy()
    label = np.where(codes < 0, OTHER, lookup[codes] if len(lookup) else OTHER).astype(np.int8)
    w = np.ones(len(series)) if weight is None else _weights(weight, weight_name)
    w = np.where(label == OTHER, 0.0, w)
    return Outcome(label, w, float(w[label == GOOD].sum()), float(w[label == BAD].sum()),
                   int((label == OTHER).sum()))


def row_number(series: pd.Series, position: int) -> int:
    """Data row (from 1) of a position in ``series``.

    A chunk of a frame read by :func:`read_frame` keeps the frame's integer index, so the label
    says where the row is in the whole file, not just in the chunk.
    """
    label = series.index[position]
    return int(label) + 1 if isinstance(label, (int, np.integer)) else position + 1


def row_weights(series: pd.Series, name: str) -> np.ndarray:
    """The weight column as floats; InputError naming the first missing or negative weight.

    Examples
    --------
    >>> row_weights(pd.Series([1, 2.5]), "w").tolist()
    [1.0, 2.5]
    """
    return _weights(series, name)


def _weights(series: pd.Series, name: str) -> np.ndarray:
    if not pd.api.types.is_numeric_dtype(series.dtype) or pd.api.types.is_bool_dtype(series.dtype):
        raise InputError(f"column {name}: weights must be numbers, found {series.dtype} values")
    w = series.to_numpy(dtype=np.float64, na_value=np.nan)
    bad = ~np.isfinite(w) | (w < 0)
    if bad.any():
        at = int(np.flatnonzero(bad)[0])
        what = "is missing" if np.isnan(w[at]) else f"{w[at]:g} is not a finite non-negative number"
        raise InputError(f"column {name}: row {row_number(series, at)}: the weight {what}")
    return w

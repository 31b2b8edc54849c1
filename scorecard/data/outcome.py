"""Coding the outcome column: bad, good, or left out; and the weight of each row."""

from __future__ import annotations

from typing import NamedTuple

import numpy as np

from scorecard.data.coding import level_codes, level_labels, row_number
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


def matching_levels(labels: list[str], values) -> np.ndarray:
    """Which levels ``labels`` a list of values names (an outcome list, an exclusion rule).

    Text matches exactly as written: ``'Yes'`` is not ``yes``, ``true`` or ``on``. A number
    matches the level that reads as it (``1.0`` finds ``1``). An unquoted yes/no word, which
    YAML reads as true or false, is the config's way of saying "any spelling": it matches
    every yes word (true, yes, on) or no word (false, no, off) in any case.
    """
    exact = {level_labels([v])[0] for v in values if not isinstance(v, bool)}
    words = set()
    for v in values:
        if isinstance(v, bool):
            words.update(_YES_WORDS if v else _NO_WORDS)
    return np.array([lv in exact or lv.lower() in words for lv in labels], dtype=bool)


def code_outcome(series, bad, good, weight=None,
                 weight_name: str = "weight") -> Outcome:
    """Code the outcome column by the ``bad`` and ``good`` value lists.

    Examples
    --------
    >>> import pandas as pd
    >>> o = code_outcome(pd.Series(["repaid", "defaulted", "open", None]), ["defaulted"], ["repaid"])
    >>> o.label.tolist(), o.goods, o.bads, o.left_out
    ([0, 1, -1, -1], 1.0, 1.0, 2)
    """
    labels, codes = level_codes(series)
    lookup = np.where(matching_levels(labels, bad), BAD,
                      np.where(matching_levels(labels, good), GOOD, OTHER))
    label = np.where(codes < 0, OTHER, lookup[codes] if len(lookup) else OTHER).astype(np.int8)
    w = np.ones(len(series)) if weight is None else _weights(weight, weight_name)
    w = np.where(label == OTHER, 0.0, w)
    return Outcome(label, w, float(w[label == GOOD].sum()), float(w[label == BAD].sum()),
                   int((label == OTHER).sum()))


def row_weights(series, name: str) -> np.ndarray:
    """The weight column as floats; InputError naming the first missing or negative weight.

    Examples
    --------
    >>> import pandas as pd
    >>> row_weights(pd.Series([1, 2.5]), "w").tolist()
    [1.0, 2.5]
    """
    return _weights(series, name)


def _weights(series, name: str) -> np.ndarray:
    import pandas as pd
    if not pd.api.types.is_numeric_dtype(series.dtype) or pd.api.types.is_bool_dtype(series.dtype):
        raise InputError(f"column {name}: weights must be numbers, found {series.dtype} values")
    w = series.to_numpy(dtype=np.float64, na_value=np.nan)
    bad = ~np.isfinite(w) | (w < 0)
    if bad.any():
        at = int(np.flatnonzero(bad)[0])
        what = "is missing" if np.isnan(w[at]) else f"{w[at]:g} is not a finite non-negative number"
        raise InputError(f"column {name}: row {row_number(series, at)}: the weight {what}")
    return w

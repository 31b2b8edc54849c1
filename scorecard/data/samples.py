"""The samples a build draws once over the whole file: development, holdout, out of time."""

from __future__ import annotations

import numpy as np
import pandas as pd

from scorecard.data.outcome import BAD, GOOD, OTHER, row_number
from scorecard.errors import InputError

DEVELOPMENT, HOLDOUT, OUT_OF_TIME, EXCLUDED = 0, 1, 2, -1
SAMPLE_NAMES = {DEVELOPMENT: "development", HOLDOUT: "holdout", OUT_OF_TIME: "out of time"}


def parse_dates(series: pd.Series, name: str) -> np.ndarray:
    """The column as datetime64; InputError naming the first value that does not parse.

    Examples
    --------
    >>> np.datetime_as_string(parse_dates(pd.Series(["2025-07-01", None]), "decided_on"), "D")
    array(['2025-07-01', 'NaT'], dtype='<U28')
    """
    if pd.api.types.is_datetime64_any_dtype(series.dtype):
        return series.to_numpy(dtype="datetime64[ns]")
    text = series.astype("string")
    parsed = pd.to_datetime(text, errors="coerce", format="mixed")
    bad = parsed.isna() & text.notna()
    if bad.any():
        at = int(np.flatnonzero(bad.to_numpy())[0])
        raise InputError(f"column {name}: row {row_number(series, at)}: {text.iloc[at]!r} "
                         "is not a date")
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
